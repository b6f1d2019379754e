package golden

import (
	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
	"locusmith/internal/version"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

// variant is one way of generating an example.
type variant struct {
	name       string
	lang       emit.Lang
	numeric    airframe.NumericType // "" keeps the file's
	headerOnly bool
	vectors    bool
}

// variants lists, for both languages, the file's own arithmetic (with the
// test vectors), float32, q15 and q31, and for C the header-only form.
func variants() []variant {
	var vs []variant
	for _, l := range []emit.Lang{emit.LangC, emit.LangGo} {
		vs = append(vs,
			variant{name: "file", lang: l, vectors: true},
			variant{name: "float32", lang: l, numeric: airframe.Float32},
			variant{name: "q15", lang: l, numeric: airframe.Q15},
			variant{name: "q31", lang: l, numeric: airframe.Q31},
		)
	}
	vs = append(vs, variant{name: "header-only", lang: emit.LangC, headerOnly: true})
	return vs
}

func (v variant) dir() string { return string(v.lang) + "-" + v.name }

func (v variant) options() emit.CodeOptions {
	return emit.CodeOptions{Lang: v.lang, HeaderOnly: v.headerOnly, Vectors: v.vectors}
}

// examplePaths returns the example airframes, relative to this package
// (the path lands in the generated header, so it is the same on every
// machine).
func examplePaths(t testing.TB) []string {
	t.Helper()
	ps, err := filepath.Glob("../examples/*.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(ps) == 0 {
		t.Fatal("no examples in ../examples")
	}
	sort.Strings(ps)
	return ps
}

func exampleName(p string) string { return strings.TrimSuffix(filepath.Base(p), ".toml") }

// fixedFullScale gives the full scales used when a float example is
// generated as fixed point: input twice the largest saturating step of any
// axis (rounded up to a power of two, as a firmware would pick a sensor
// range), output the largest |output limit|.
func fixedFullScale(f *airframe.File, a *discrete.Airframe) (in, out float64) {
	in, out = 1, 0
	for _, x := range a.Axes {
		if x.Design == nil {
			continue
		}
		for in < 2*x.Design.Verif.Saturated.Amplitude {
			in *= 2
		}
		out = max(out, -x.Design.Coeffs.Lo, x.Design.Coeffs.Hi)
	}
	if out == 0 {
		out = 1
	}
	return in, out
}

// designCache keeps the designs of one test binary: designing is the slow
// part, and every variant of an example with the same arithmetic shares
// one. Each key is designed once, by the first test that asks; the lock
// covers the map only, so tests that want other designs do not wait for
// this one (parallel tests would otherwise make their designs one at a
// time). The designs are shared: read them, do not change them.
type designCache struct {
	mu sync.Mutex
	m  map[string]*designEntry
}

// designEntry is one design of the cache, made once.
type designEntry struct {
	once sync.Once
	a    *discrete.Airframe
	err  error
}

var designs = designCache{m: map[string]*designEntry{}}

// get returns the design under key, made by build on the first call.
// build returns an error rather than failing a test: the test that happens to
// make a design must not leave the others a half-made entry.
func (c *designCache) get(key string, build func() (*discrete.Airframe, error)) (*discrete.Airframe, error) {
	c.mu.Lock()
	e, ok := c.m[key]
	if !ok {
		e = &designEntry{}
		c.m[key] = e
	}
	c.mu.Unlock()
	e.once.Do(func() { e.a, e.err = build() })
	return e.a, e.err
}

// design loads example p and designs it with numeric type nt ("" keeps
// the file's).
func design(t testing.TB, p string, nt airframe.NumericType) *discrete.Airframe {
	t.Helper()
	a, err := designOf(p, nt)
	if err != nil {
		t.Fatal(err)
	}
	return a
}

// designOf is design without a test: the file's own arithmetic is designed
// once and serves nt when nt is the file's type, and gives the full
// scales of a fixed-point nt when the file has none.
func designOf(p string, nt airframe.NumericType) (*discrete.Airframe, error) {
	return designs.get(p+"|"+string(nt), func() (*discrete.Airframe, error) {
		f, err := loadAirframe(p)
		if err != nil {
			return nil, err
		}
		if nt == "" {
			return discrete.DesignAirframe(f), nil
		}
		own, err := designOf(p, "")
		if err != nil || nt == f.Numeric.Type {
			return own, err
		}
		g := *f
		g.Numeric.Type = nt
		if nt.IsFixed() && (g.Numeric.InputFullScale == 0 || g.Numeric.OutputFullScale == 0) {
			g.Numeric.InputFullScale, g.Numeric.OutputFullScale = fixedFullScale(f, own)
		}
		return discrete.DesignAirframe(&g), nil
	})
}

// generate renders example p in variant v. Unmet checks are allowed (and
// then marked in the header): the golden files show what the generator
// does with every example, and the compile tests need the code.
func generate(t testing.TB, p string, v variant) []emit.Source {
	t.Helper()
	a := design(t, p, v.numeric)
	o := v.options()
	o.AllowUnmet = true
	srcs, _, err := emit.GenerateCode(a, o)
	if err != nil {
		t.Fatalf("%s %s: %v", p, v.dir(), err)
	}
	return srcs
}

// TestGolden compares every example × variant with testdata/ byte for
// byte (-update rewrites them).
func TestGolden(t *testing.T) {
	for _, p := range examplePaths(t) {
		for _, v := range variants() {
			t.Run(exampleName(p)+"/"+v.dir(), func(t *testing.T) {
				srcs := generate(t, p, v)
				dir := filepath.Join("testdata", exampleName(p), v.dir())
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
	}
}

// firstDiff shows the first differing line.
func firstDiff(a, b string) string {
	al, bl := strings.Split(a, "\n"), strings.Split(b, "\n")
	for i := 0; i < len(al) && i < len(bl); i++ {
		if al[i] != bl[i] {
			return fmt.Sprintf("line %d:\n- %s\n+ %s", i+1, al[i], bl[i])
		}
	}
	return fmt.Sprintf("lengths %d and %d lines", len(al), len(bl))
}

// TestGeneratedHeader checks the contract of the first lines of every
// generated file (README, "What is generated"): the generated-code line,
// the canonical input hash, and the design summary with the cautions in
// one file per airframe (the C header, the Go file), which the other
// files name instead of repeating it.
func TestGeneratedHeader(t *testing.T) {
	summary := []string{"propellers off", "tethered", "qualified", "Sampled loop: overshoot", "phase margin", "Target: zeta"}
	for _, p := range examplePaths(t) {
		f, err := loadAirframe(p)
		if err != nil {
			t.Fatal(err)
		}
		for _, v := range variants() {
			main := f.Airframe + "_rate.h"
			if v.lang == emit.LangGo {
				main = f.Airframe + "rate.go"
			}
			for _, s := range generate(t, p, v) {
				text := string(s.Data)
				first, _, _ := strings.Cut(text, "\n")
				want := fmt.Sprintf("// Code generated by locusmith %s from examples/%s.toml; DO NOT EDIT.", version.Version, exampleName(p))
				if first != want {
					t.Errorf("%s: first line %q, want %q", s.Name, first, want)
				}
				if !strings.Contains(text, "\n// Input SHA-256: "+f.CanonicalSHA256()+"\n") {
					t.Errorf("%s %s: no line with the canonical input hash %s", v.dir(), s.Name, f.CanonicalSHA256())
				}
				for _, must := range summary {
					if has := strings.Contains(text, must); has != (s.Name == main) {
						t.Errorf("%s %s: contains %q: %v; the summary is in %s only", v.dir(), s.Name, must, has, main)
					}
				}
				if s.Name != main && !strings.Contains(strings.ReplaceAll(text, "\n// ", " "), "are in "+main+".") {
					t.Errorf("%s %s: does not name %s, which holds the summary", v.dir(), s.Name, main)
				}
				for i := 0; i < len(text); i++ {
					if c := text[i]; (c < 0x20 && c != '\n' && c != '\t') || c >= 0x7f {
						t.Fatalf("%s %s: byte %#x at %d: generated code is printable ASCII", v.dir(), s.Name, c, i)
					}
				}
				if strings.Contains(text, "/work/") || strings.Contains(text, "/home/") || strings.Contains(text, "/tmp/") {
					t.Errorf("%s %s: holds an absolute path", v.dir(), s.Name)
				}
			}
		}
	}
}
