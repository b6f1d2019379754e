package golden

import (
	"go/build"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

const module = "locusmith"

// layers is the dependency rule of the repository: a package may import
// only packages of a lower layer (its own layer is not allowed either, so
// emit and emit/review, both renderers, cannot import each other). The
// pipeline reads from the bottom up:
//
//	5  cmd/locusmith                 wires the verbs; nothing numeric
//	4  emit, emit/review             render: code; reports, table, compare
//	3  discrete                      the sampled loop; design of a file, a batch
//	2  synth                         continuous placement and search
//	1  airframe, internal/ident      the input: file format, logs
//	0  internal/lti, templates, ...  leaves
//
// golden (the tests of the whole) and the generator programs are outside
// the pipeline. A new package must be added here, which makes its place in
// the pipeline a decision.
func layers() map[string]int {
	return map[string]int{
		"internal/lti":                    0,
		"internal/version":                0,
		"internal/pyref":                  0,
		"internal/lti/internal/kernelgen": 0,
		"discrete/internal/pairgen":       0,
		"templates":                       0,
		"examples":                        0,
		"internal/fleet":                  1,
		"airframe":                        1,
		"internal/ident":                  1,
		"synth":                           2,
		"discrete":                        3,
		"emit":                            4,
		"emit/review":                     4,
		"cmd/locusmith":                   5,
		// Outside the pipeline: programs that regenerate sources, and the
		// whole-repository tests.
		"internal/lti/internal/kernelgen/gen": 6,
		"discrete/internal/pairgen/gen":       6,
		"golden":                              7,
	}
}

// imports lists the project packages that the package in dir imports,
// with its tests or without.
func imports(t *testing.T, dir string, tests bool) []string {
	t.Helper()
	p, err := build.ImportDir(dir, 0)
	if err != nil {
		t.Fatalf("%s: %v", dir, err)
	}
	all := slices.Clone(p.Imports)
	if tests {
		all = append(append(all, p.TestImports...), p.XTestImports...)
	}
	var out []string
	for _, imp := range all {
		if rel, ok := strings.CutPrefix(imp, module+"/"); ok {
			out = append(out, rel)
		}
	}
	slices.Sort(out)
	return slices.Compact(out)
}

// TestImportRule enforces layers on every package of the repository: the
// code may import only lower layers, and tests too, except that a package
// of layer 0 may use the leaves (examples, the SciPy bridge) in its tests.
func TestImportRule(t *testing.T) {
	rank := layers()
	seen := 0
	err := filepath.WalkDir("..", func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if !d.IsDir() {
			return nil
		}
		name := d.Name()
		if path != ".." && (strings.HasPrefix(name, ".") || name == "testdata") {
			return filepath.SkipDir
		}
		goFiles, _ := filepath.Glob(filepath.Join(path, "*.go"))
		if len(goFiles) == 0 {
			return nil
		}
		rel := filepath.ToSlash(strings.TrimPrefix(path, "../"))
		r, ok := rank[rel]
		if !ok {
			t.Errorf("package %s is not in the dependency rule (golden/layout_test.go): decide its layer", rel)
			return nil
		}
		seen++
		for _, withTests := range []bool{false, true} {
			for _, imp := range imports(t, path, withTests) {
				ri, known := rank[imp]
				switch {
				case imp == rel:
					// An external test package imports its own package.
				case !known:
					t.Errorf("%s imports %s, which the dependency rule does not know", rel, imp)
				case ri >= r && !(withTests && ri == 0):
					what := "code"
					if withTests {
						what = "tests"
					}
					t.Errorf("%s (layer %d) imports %s (layer %d) in its %s: imports point down the pipeline only", rel, r, imp, ri, what)
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if seen < 15 {
		t.Errorf("found %d packages; the walk missed the repository", seen)
	}
}

// The rule rejects what it is meant to: a renderer importing its sibling,
// a stage importing a later one.
func TestImportRuleCatches(t *testing.T) {
	dir := t.TempDir()
	src := "package review\n\nimport _ \"locusmith/emit\"\n"
	if err := os.WriteFile(filepath.Join(dir, "x.go"), []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	got := imports(t, dir, false)
	rank := layers()
	if len(got) != 1 || rank[got[0]] < rank["emit/review"] {
		t.Errorf("imports of a file importing emit from review: %v; the rule would not catch it", got)
	}
}
