package golden

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/emit"
)

// compliantPath is the golden airframe with a feedback filter chain (demo
// data: an invented axis with a lightly damped frame mode, a notch on it
// and a gyro lowpass). The examples are generated in fixed point too;
// this airframe has its own float variants, and compliant_fixed.toml its
// fixed-point ones.
const compliantPath = "testdata/compliant.toml"

// filterVariants are the float variants of the filter airframe: its own
// float32 with vectors in C and Go, float64 in C and Go, and the
// header-only C.
func filterVariants() []variant {
	return []variant{
		{name: "file", lang: emit.LangC, vectors: true},
		{name: "file", lang: emit.LangGo, vectors: true},
		{name: "float64", lang: emit.LangC, numeric: airframe.Float64, vectors: true},
		{name: "float64", lang: emit.LangGo, numeric: airframe.Float64, vectors: true},
		{name: "header-only", lang: emit.LangC, headerOnly: true, vectors: true},
	}
}

// TestFilterGolden compares the filter airframe's generated code with
// testdata/compliant/ byte for byte (-update rewrites it), checks that
// every section is in the step, the state and the reset, that the design
// meets its spec, and that fixed point takes the chain too.
func TestFilterGolden(t *testing.T) {
	a := design(t, compliantPath, "")
	if !a.OK() {
		t.Fatalf("the compliant airframe does not meet its spec: %v", a.Unmet())
	}
	// A line break inside a comment, with the next line's marker.
	commentBreak := regexp.MustCompile(`\n[ \t]*//[ \t]*`)
	for _, v := range filterVariants() {
		t.Run(v.dir(), func(t *testing.T) {
			srcs := generate(t, compliantPath, v)
			main := string(sourceNamed(srcs, mainFileOf(srcs, v)).Data)
			// The header's comments wrap anywhere: read them as one line.
			main = commentBreak.ReplaceAllString(main, " ")
			for _, want := range []string{"f1s1", "f1s2", "f2s1", "f2s2", "notch 40 Hz (auto), -3 dB width 16 Hz", "lowpass 200 Hz, order 2", "at the crossover"} {
				if !strings.Contains(main, want) {
					t.Errorf("%s: %q missing", v.dir(), want)
				}
			}
			dir := filepath.Join("testdata", "compliant", v.dir())
			if *update {
				if err := os.RemoveAll(dir); err != nil {
					t.Fatal(err)
				}
				if err := os.MkdirAll(dir, 0o755); err != nil {
					t.Fatal(err)
				}
				for _, s := range srcs {
					if err := os.WriteFile(filepath.Join(dir, s.Name), s.Data, 0o644); err != nil {
						t.Fatal(err)
					}
				}
				return
			}
			es, err := os.ReadDir(dir)
			if err != nil {
				t.Fatalf("%v (run go test ./golden -update to create the golden files)", err)
			}
			if len(es) != len(srcs) {
				t.Errorf("%s holds %d files, the generator makes %d", dir, len(es), len(srcs))
			}
			for _, s := range srcs {
				want, err := os.ReadFile(filepath.Join(dir, s.Name))
				if err != nil {
					t.Errorf("%v", err)
					continue
				}
				if !bytes.Equal(want, s.Data) {
					t.Errorf("%s/%s differs from the golden file (go test ./golden -update rewrites it):\n%s", dir, s.Name, firstDiff(string(want), string(s.Data)))
				}
			}
		})
	}
	// Fixed point with filters: the decoder takes the file, and the
	// generator runs the chain in the integer code (the fixed-point
	// airframe's own tests are in fixedfilters_test.go).
	src, err := os.ReadFile(compliantPath)
	if err != nil {
		t.Fatal(err)
	}
	q := strings.Replace(string(src), `type = "float32"`, "type = \"q15\"\ninput_full_scale = 20.0\noutput_full_scale = 1.0", 1)
	if f, err := airframe.Parse("q.toml", []byte(q)); err != nil || len(f.Axes[0].Filters) != 2 {
		t.Errorf("q15 with filters: %v", err)
	}
	if srcs, _, err := emit.GenerateCode(design(t, compliantPath, airframe.Q15), emit.CodeOptions{Lang: emit.LangC, AllowUnmet: true}); err != nil || !strings.Contains(string(srcs[0].Data), "f2y2") {
		t.Errorf("q15 design with filters: %v", err)
	}
}

// mainFileOf names the file with the design summary: the C header or the
// Go file.
func mainFileOf(srcs []emit.Source, v variant) string {
	if v.lang == emit.LangGo {
		for _, s := range srcs {
			if !strings.HasSuffix(s.Name, "_test.go") {
				return s.Name
			}
		}
	}
	return headerOf(srcs)
}

// TestFilterVectors builds and runs the filter airframe's vector programs:
// C (source and header-only, float32 and float64) with every host
// compiler, and Go with go test; each must match the reference model bit
// for bit.
func TestFilterVectors(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	gocmd := goTool(t)
	gos := map[string][]emit.Source{}
	for _, v := range filterVariants() {
		srcs := generate(t, compliantPath, v)
		if v.lang == emit.LangGo {
			gos[strings.ReplaceAll(v.dir(), "-", "")] = srcs
			continue
		}
		ctrl, vec := cFiles(srcs)
		files := append(vec, ctrl...)
		for _, cc := range ccs {
			t.Run(v.dir()+"/"+filepath.Base(cc), func(t *testing.T) {
				t.Parallel()
				dir := buildC(t, cc, append(append([]string{}, strictC...), "-O2"), srcs, files)
				if out := run(t, dir, filepath.Join(dir, "prog")); !strings.Contains(out, "pitch: ") || !strings.Contains(out, "vectors match") {
					t.Errorf("%s: %s", filepath.Base(cc), out)
				}
			})
		}
	}
	t.Run("go", func(t *testing.T) {
		t.Parallel()
		goModule(t, gocmd, "generated.example/compliant", gos, true)
	})
}
