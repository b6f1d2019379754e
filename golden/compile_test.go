package golden

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"locusmith/emit"
)

// goldenSources reads the golden files of one example and variant: the
// compile tests build exactly what is committed (TestGolden holds them
// equal to what the generator makes).
func goldenSources(t *testing.T, p string, v variant) []emit.Source {
	t.Helper()
	dir := filepath.Join("testdata", exampleName(p), v.dir())
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatalf("%v (go test ./golden -update creates the golden files)", err)
	}
	var srcs []emit.Source
	for _, e := range es {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		srcs = append(srcs, emit.Source{Name: e.Name(), Data: b})
	}
	return srcs
}

// usageTU is a translation unit that includes the header and calls every
// function, so that a header-only build instantiates all of them.
func usageTU(t *testing.T, srcs []emit.Source, fn string) emit.Source {
	t.Helper()
	h := headerOf(srcs)
	text := string(sourceNamed(srcs, h).Data)
	prefixes := regexp.MustCompile(`(?m)^\} ([a-z0-9_]+)_state;$`).FindAllStringSubmatch(text, -1)
	if len(prefixes) == 0 {
		t.Fatalf("%s declares no state type", h)
	}
	typ := regexp.MustCompile(`(?m)^(?:static inline )?(\w+) [a-z0-9_]+_step\(`).FindStringSubmatch(text)
	if typ == nil {
		t.Fatalf("%s declares no step function", h)
	}
	var b strings.Builder
	fmt.Fprintf(&b, "#include \"%s\"\n\n%s %s(%s r, %s y);\n%s %s(%s r, %s y)\n{\n\t%s u = r;\n", h, typ[1], fn, typ[1], typ[1], typ[1], fn, typ[1], typ[1], typ[1])
	for _, m := range prefixes {
		p := m[1]
		fmt.Fprintf(&b, "\t{\n\t\t%s_state s;\n\t\t%s_reset(&s, u, y);\n\t\tu = %s_step(&s, r, y);\n\t\t%s_applied(&s, u);\n\t}\n", p, p, p, p)
	}
	b.WriteString("\treturn u;\n}\n")
	return emit.Source{Name: fn + ".c", Data: []byte(b.String())}
}

func sourceNamed(srcs []emit.Source, name string) emit.Source {
	for _, s := range srcs {
		if s.Name == name {
			return s
		}
	}
	return emit.Source{}
}

// cProgram returns the sources of the program the compile tests build
// for one example and C variant, and the names of its C files in order:
// srcs (the generated header, controller and vector program), and two
// translation units that include the header and call every function.
// TestCompileGoldenC builds it from the golden files and TestCVectors from
// the generator's: the two are the same bytes while TestGolden passes, and
// buildC then builds each program once for both.
func cProgram(t *testing.T, srcs []emit.Source) ([]emit.Source, []string) {
	t.Helper()
	prog := append(append([]emit.Source{}, srcs...), usageTU(t, srcs, "use_one"), usageTU(t, srcs, "use_two"))
	var files []string
	for _, s := range prog {
		if strings.HasSuffix(s.Name, ".c") {
			files = append(files, s.Name)
		}
	}
	sort.Strings(files)
	return prog, files
}

// cLevel is a host compiler and an optimization level.
type cLevel struct{ cc, opt string }

// cLevels are the builds of every generated C program: each host compiler
// at -O0 and -O2 (some warnings need the optimizer's analysis, and the two
// compilers warn differently). With -short only the first compiler at
// -O2: the other levels are a sweep over compilers that the full suite
// runs.
func cLevels(ccs []string) []cLevel {
	var ls []cLevel
	for _, cc := range ccs {
		for _, opt := range []string{"-O0", "-O2"} {
			if testing.Short() && (cc != ccs[0] || opt != "-O2") {
				continue
			}
			ls = append(ls, cLevel{cc, opt})
		}
	}
	return ls
}

// TestCompileGoldenC builds every golden C file with the host compilers
// and the strict flags, at -O0 and -O2, linked into the vector program
// with two more translation units that include the header (cProgram). The
// header-only variant is thus included from three translation units
// linked together, which fails if a function had external linkage. A
// variant whose golden files have no vector program gets the generated
// one, whose main the link needs, and its qemu-arm stub, as --vectors
// writes them. The header must compile as C++ too.
//
// With -short only each example's own arithmetic (the file variant) is
// built, by the first host compiler at -O2, and not as C++: the rest is a
// sweep over arithmetics, compilers, levels and languages, which the full
// suite runs (and TestFormsMatrix runs every arithmetic, header-only
// included, with every controller structure in -short too).
func TestCompileGoldenC(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	for _, p := range examplePaths(t) {
		for _, v := range variants() {
			if v.lang != emit.LangC || testing.Short() && v.name != "file" {
				continue
			}
			t.Run(exampleName(p)+"/"+v.dir(), func(t *testing.T) {
				t.Parallel()
				srcs := goldenSources(t, p, v)
				if _, vec := cFiles(srcs); len(vec) == 0 {
					v.vectors = true
					gen := generate(t, p, v)
					_, vec := cFiles(gen)
					if len(vec) != 1 || qemuStub(gen) == "" {
						t.Fatalf("vector programs: %v, qemu-arm stub %q", vec, qemuStub(gen))
					}
					// With the stub too: the program is then the one
					// TestCVectors builds from the generator's files,
					// built once for both.
					srcs = append(srcs, sourceNamed(gen, vec[0]), sourceNamed(gen, qemuStub(gen)))
				}
				prog, files := cProgram(t, srcs)
				for _, l := range cLevels(ccs) {
					buildC(t, l.cc, append(append([]string{}, strictC...), l.opt), prog, files)
				}
				if testing.Short() {
					return
				}
				// C++ code includes the header too (extern "C" for the
				// prototypes; the header-only functions as C++).
				dir := writeSources(t, prog)
				for _, cxx := range []string{"g++", "clang++"} {
					if p, err := exec.LookPath(cxx); err == nil {
						run(t, dir, p, "-x", "c++", "-std=c++11", "-Wall", "-Wextra", "-Werror", "-c", "-o", "use_one_cxx.o", "use_one.c")
					}
				}
			})
		}
	}
}

// TestCVectors builds the test-vector program of every example × C
// variant with the host compilers (-O0 and -O2, strict flags, ISO C99 so
// no floating-point contraction) and runs it: every output must equal the
// reference model's bit for bit. A corrupted vector must make the program
// fail, or the check could not fail. With -short: each example's own
// arithmetic (float and fixed-point vectors both), by the first host
// compiler at -O2, as TestCompileGoldenC has it.
func TestCVectors(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	for _, p := range examplePaths(t) {
		for _, v := range variants() {
			if v.lang != emit.LangC || testing.Short() && v.name != "file" {
				continue
			}
			t.Run(exampleName(p)+"/"+v.dir(), func(t *testing.T) {
				t.Parallel()
				v.vectors = true
				srcs := generate(t, p, v)
				_, vec := cFiles(srcs)
				if len(vec) != 1 {
					t.Fatalf("vector programs: %v", vec)
				}
				prog, files := cProgram(t, srcs)
				for _, l := range cLevels(ccs) {
					dir := buildC(t, l.cc, append(append([]string{}, strictC...), l.opt), prog, files)
					out := run(t, dir, filepath.Join(dir, "prog"))
					if !strings.Contains(out, "vectors match") {
						t.Errorf("%s %s: vector program printed %q", filepath.Base(l.cc), l.opt, out)
					}
				}
				// One flipped expectation must be caught.
				bad := append([]emit.Source{}, prog...)
				for i, s := range bad {
					if s.Name == vec[0] {
						bad[i].Data = corruptVector(t, s.Data)
					}
				}
				dir := buildC(t, ccs[0], append(append([]string{}, strictC...), "-O2"), bad, files)
				if out, err := runErr(dir, filepath.Join(dir, "prog")); err == nil {
					t.Errorf("vector program with a corrupted expectation exited 0: %s", out)
				}
			})
		}
	}
}

// corruptVector changes the expected value of the 40th step vector of the
// first table by one unit in its last place (or one LSB).
func corruptVector(t *testing.T, src []byte) []byte {
	t.Helper()
	re := regexp.MustCompile(`(?m)^\t\{ 0, [^,]+, [^,]+, (?:UINT64_C\()?(0x[0-9a-f]+|-?[0-9]+)`)
	locs := re.FindAllSubmatchIndex(src, 40)
	if len(locs) < 40 {
		t.Fatalf("fewer than 40 step vectors")
	}
	l := locs[39]
	val := string(src[l[2]:l[3]])
	var repl string
	if strings.HasPrefix(val, "0x") {
		last := val[len(val)-1]
		nl := byte('1')
		if last == '1' {
			nl = '0'
		}
		repl = val[:len(val)-1] + string(nl)
	} else if val == "0" {
		repl = "1"
	} else {
		repl = "0"
	}
	out := append([]byte{}, src[:l[2]]...)
	out = append(out, repl...)
	return append(out, src[l[3]:]...)
}

// forbiddenARM are the run-time helper symbols that must not appear in
// controller objects: double-precision soft float (__aeabi_d*), single
// precision soft float on the M4F (__aeabi_f*, which would mean the FPU
// is not used), 64-bit division (__aeabi_ldivmod, __aeabi_uldivmod), and
// any other division helper (__aeabi_idiv*, __aeabi_uidiv*: the
// fixed-point code must not divide). Names from the ARM run-time ABI
// (RTABI, "the standard compiler helper function library", from memory).
var forbiddenARM = regexp.MustCompile(`__aeabi_(d[a-z0-9]*|f[a-z0-9]*|ldivmod|uldivmod|idiv[a-z0-9]*|uidiv[a-z0-9]*|l2d|l2f|ul2d|ul2f|i2d|ui2d|i2f|ui2f)$|^(__aeabi_|__)?(div|mod)[sdt]i3$`)

// armObject compiles the controller of srcs (and a usage unit for the
// header-only variant) for a Cortex-M target and returns the object file
// paths.
func armObjects(t *testing.T, cc string, flags []string, srcs []emit.Source) (string, []string) {
	t.Helper()
	ctrl, _ := cFiles(srcs)
	if len(ctrl) == 0 {
		srcs = append(srcs, usageTU(t, srcs, "use_one"))
		ctrl = []string{"use_one.c"}
	}
	dir := writeSources(t, srcs)
	var objs []string
	for _, c := range ctrl {
		o := strings.TrimSuffix(c, ".c") + ".o"
		args := append(append(append([]string{}, strictC...), flags...), "-O2", "-c", "-o", o, c)
		run(t, dir, cc, args...)
		objs = append(objs, o)
	}
	return dir, objs
}

// TestARMNoHelpers builds the float32 code for the Cortex-M4F and the q15
// code for the Cortex-M0 and checks with arm-none-eabi-nm -u that the
// objects call no soft-float, double or division helper.
func TestARMNoHelpers(t *testing.T) {
	if testing.Short() {
		t.Skip("cross-architecture build and run; skipped with -short")
	}
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	nm := tool(t, "arm-none-eabi-nm", "binutils-arm-none-eabi")
	cases := []struct {
		target string
		flags  []string
		vs     []variant
	}{
		{"cortex-m4f", m4f, []variant{{name: "float32", lang: emit.LangC}, {name: "header-only", lang: emit.LangC}}},
		{"cortex-m0", m0, []variant{{name: "q15", lang: emit.LangC}}},
	}
	for _, p := range examplePaths(t) {
		for _, c := range cases {
			for _, v := range c.vs {
				if v.name == "header-only" && design(t, p, "").File.Numeric.Type != "float32" {
					continue // the M4F build is for float32 code
				}
				t.Run(exampleName(p)+"/"+c.target+"/"+v.dir(), func(t *testing.T) {
					t.Parallel()
					dir, objs := armObjects(t, cc, c.flags, goldenSources(t, p, v))
					for _, o := range objs {
						out := run(t, dir, nm, "-u", o)
						for _, sym := range strings.Fields(out) {
							if sym == "U" {
								continue
							}
							if forbiddenARM.MatchString(sym) {
								t.Errorf("%s %s needs %s", c.target, o, sym)
							} else {
								t.Errorf("%s %s calls %s: generated code makes no library calls", c.target, o, sym)
							}
						}
					}
				})
			}
		}
	}
}

// TestForbiddenPatternCatchesHelpers checks the symbol pattern itself on
// code that does need the helpers, so that TestARMNoHelpers can fail.
func TestForbiddenPatternCatchesHelpers(t *testing.T) {
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	nm := tool(t, "arm-none-eabi-nm", "binutils-arm-none-eabi")
	src := emit.Source{Name: "h.c", Data: []byte(`#include <stdint.h>
double d(double a, double b);
double d(double a, double b) { return a * b; }
int64_t q(int64_t a, int64_t b);
int64_t q(int64_t a, int64_t b) { return a / b; }
int32_t i(int32_t a, int32_t b);
int32_t i(int32_t a, int32_t b) { return a / b; }
float f(float a, float b);
float f(float a, float b) { return a * b; }
`)}
	dir := writeSources(t, []emit.Source{src})
	run(t, dir, cc, append(append([]string{}, m0...), "-O2", "-c", "-o", "h.o", "h.c")...)
	out := run(t, dir, nm, "-u", "h.o")
	n := 0
	for _, sym := range strings.Fields(out) {
		if forbiddenARM.MatchString(sym) {
			n++
		}
	}
	if n < 4 {
		t.Errorf("pattern found %d helpers in %q, want 4 (double mul, 64-bit div, 32-bit div, float mul)", n, out)
	}
}

// TestARMVectors runs the vector programs on the ARM instruction set:
// the float32 code built for the Cortex-M4F (its FPU instructions are
// those of ARMv7 VFPv4, which qemu-arm executes) and the q15 code built
// for the Cortex-M0, each under qemu-arm with the start-up stub that
// --vectors emits beside the program and newlib (nosys.specs). Bit-exact
// results there show that the cross compiler's code rounds like the
// reference model; a corrupted expectation must make the program exit 1
// under qemu-arm (the stub passes the status on).
func TestARMVectors(t *testing.T) {
	if testing.Short() {
		t.Skip("cross-architecture build and run; skipped with -short")
	}
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	qemu := tool(t, "qemu-arm", "qemu-user")
	cases := []struct {
		target string
		flags  []string
		v      variant
	}{
		{"cortex-m4f", m4f, variant{name: "float32", lang: emit.LangC, numeric: "float32"}},
		{"cortex-m0", m0, variant{name: "q15", lang: emit.LangC, numeric: "q15"}},
	}
	for _, p := range examplePaths(t) {
		for _, c := range cases {
			t.Run(exampleName(p)+"/"+c.target, func(t *testing.T) {
				t.Parallel()
				v := c.v
				v.vectors = true
				srcs := generate(t, p, v)
				ctrl, vec := cFiles(srcs)
				stub := qemuStub(srcs)
				if stub == "" {
					t.Fatal("--vectors emitted no qemu-arm stub")
				}
				build := func(srcs []emit.Source) string {
					dir := writeSources(t, srcs)
					args := append(append(append([]string{}, strictC...), c.flags...), "-O2", "--specs=nosys.specs", "-nostartfiles",
						"-Wl,--no-warn-rwx-segments", "-o", "vectors.elf", vec[0], stub)
					run(t, dir, cc, append(args, ctrl...)...)
					return dir
				}
				dir := build(srcs)
				out, err := runErr(dir, qemu, filepath.Join(dir, "vectors.elf"))
				if err != nil {
					t.Fatalf("vector program under qemu-arm: %v\n%s", err, out)
				}
				if strings.Count(out, "vectors match") != len(design(t, p, v.numeric).Axes) {
					t.Errorf("vector program printed %q", out)
				}
				bad := append([]emit.Source{}, srcs...)
				for i, s := range bad {
					if s.Name == vec[0] {
						bad[i].Data = corruptVector(t, s.Data)
					}
				}
				dir = build(bad)
				if out, err := runErr(dir, qemu, filepath.Join(dir, "vectors.elf")); err == nil {
					t.Errorf("vector program with a corrupted expectation exited 0 under qemu-arm: %s", out)
				}
			})
		}
	}
}

// TestFusedDetection checks that the listing parse sees a fused
// multiply-add where GNU C contracts one (-std=gnu99), so that the check
// above can fail.
func TestFusedDetection(t *testing.T) {
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	objdump := tool(t, "arm-none-eabi-objdump", "binutils-arm-none-eabi")
	src := emit.Source{Name: "f.c", Data: []byte("float x_step(float a, float b, float c);\nfloat x_step(float a, float b, float c) { return a * b + c; }\n")}
	dir := writeSources(t, []emit.Source{src})
	run(t, dir, cc, append(append([]string{}, m4f...), "-std=gnu99", "-O2", "-c", "-o", "f.o", "f.c")...)
	sz := stepSizes(run(t, dir, objdump, "-d", "f.o"))["x_step"]
	if sz.fused != 1 || sz.arith != 1 {
		t.Errorf("parse of a*b + c under -std=gnu99: %+v, want one fused arithmetic instruction", sz)
	}
}
