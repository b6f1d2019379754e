package golden

import (
	"crypto/sha256"
	"errors"
	"fmt"
	"go/parser"
	"go/token"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"sort"
	"strings"
	"testing"

	"locusmith/emit"
)

// goTool returns the go command of the toolchain running the tests, or
// skips.
func goTool(t testing.TB) string {
	t.Helper()
	p, err := goCommand()
	if err != nil {
		t.Skip(err)
	}
	return p
}

// goCommand returns the go command of the toolchain running the tests.
func goCommand() (string, error) {
	p := filepath.Join(runtime.GOROOT(), "bin", "go")
	if _, err := os.Stat(p); err != nil {
		if p, err = exec.LookPath("go"); err != nil {
			return "", errors.New("go command not found")
		}
	}
	return p, nil
}

// goModule writes pkgs (sources by directory) as the packages of one
// module and runs go vet (with vet) and go test on all of them: one go
// command for every package, which builds them in parallel, rather than a
// module and two go commands each. Every package must have tests, and each
// must pass; a failure names the package, whose path ends in its
// directory. A package whose files are byte for byte those of another
// (an example's own arithmetic generated again as that arithmetic's
// variant) is built and tested once, under the first directory name.
func goModule(t *testing.T, gocmd, module string, pkgs map[string][]emit.Source, vet bool) {
	t.Helper()
	root := t.TempDir()
	if err := os.WriteFile(filepath.Join(root, "go.mod"), []byte("module "+module+"\n\ngo 1.21\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	var all []string
	for d := range pkgs {
		all = append(all, d)
	}
	sort.Strings(all)
	var dirs []string
	seen := map[string]string{}
	for _, d := range all {
		srcs := pkgs[d]
		key := sourcesKey(srcs)
		if first, ok := seen[key]; ok {
			t.Logf("%s: the same files as %s, tested there", d, first)
			continue
		}
		seen[key] = d
		dirs = append(dirs, d)
		if err := os.MkdirAll(filepath.Join(root, d), 0o755); err != nil {
			t.Fatal(err)
		}
		for _, s := range srcs {
			if err := os.WriteFile(filepath.Join(root, d, s.Name), s.Data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	if vet {
		if out, err := runGo(root, gocmd, "vet", "./..."); err != nil {
			t.Fatalf("go vet: %v\n%s", err, out)
		}
	}
	out, err := runGo(root, gocmd, "test", "-count=1", "./...")
	if err != nil {
		t.Fatalf("go test: %v\n%s", err, out)
	}
	for _, d := range dirs {
		if !regexp.MustCompile(`(?m)^ok\s+` + regexp.QuoteMeta(module+"/"+d) + `\s`).MatchString(out) {
			t.Errorf("go test did not pass the tests of %s:\n%s", d, out)
		}
	}
}

// TestGoCode builds the generated Go of every example × variant, vets it
// and runs its vector test (bit for bit against the reference model) and
// its allocation test (Step allocates nothing), each variant a package of
// one module (goModule). The controller file itself must import nothing:
// no fmt, no reflect, no math (float and integer arithmetic only).
//
// With -short only each example's own arithmetic is built: the others are
// a sweep over arithmetics, which TestFormsMatrix runs with every
// controller structure in -short too.
func TestGoCode(t *testing.T) {
	t.Parallel()
	gocmd := goTool(t)
	pkgs := map[string][]emit.Source{}
	for _, p := range examplePaths(t) {
		for _, v := range variants() {
			if v.lang != emit.LangGo || testing.Short() && v.name != "file" {
				continue
			}
			name := exampleName(p) + "/" + v.dir()
			v.vectors = true
			srcs := generate(t, p, v)
			for _, s := range srcs {
				if strings.HasSuffix(s.Name, "_test.go") {
					continue
				}
				f, err := parser.ParseFile(token.NewFileSet(), s.Name, s.Data, parser.ImportsOnly)
				if err != nil {
					t.Fatalf("%s %s: %v", name, s.Name, err)
				}
				if len(f.Imports) != 0 {
					t.Errorf("%s %s imports %d packages, want none", name, s.Name, len(f.Imports))
				}
			}
			pkgs[name] = srcs
		}
	}
	goModule(t, gocmd, "generated.example/rate", pkgs, true)
}

// sourcesKey identifies a set of sources by their names and bytes.
func sourcesKey(srcs []emit.Source) string {
	sorted := append([]emit.Source(nil), srcs...)
	sort.Slice(sorted, func(i, j int) bool { return sorted[i].Name < sorted[j].Name })
	h := sha256.New()
	for _, s := range sorted {
		fmt.Fprintf(h, "%q %d\n", s.Name, len(s.Data))
		h.Write(s.Data)
	}
	return string(h.Sum(nil))
}
