package golden

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"strings"
	"sync"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
)

// The generated C in the builds firmware projects use: the compiler's
// default mode and the GNU modes, where GCC and Clang contract a*b + c
// into a fused multiply-add unless the source forbids it (README,
// "Compiler settings for bit-exact floats").

// formsDesign designs the forms airframe (every controller structure) in
// numeric type nt, once per test binary (designs).
func formsDesign(t testing.TB, nt string) *discrete.Airframe {
	t.Helper()
	a, err := designs.get("forms|"+nt, func() (*discrete.Airframe, error) {
		f, err := airframe.Parse("forms.toml", []byte(formsAirframe(nt)))
		if err != nil {
			return nil, err
		}
		a := discrete.DesignAirframe(f)
		for _, x := range a.Axes {
			if x.Err != nil {
				return nil, fmt.Errorf("%s: axis %s: %v", nt, x.Name, x.Err)
			}
		}
		return a, nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return a
}

// formsSources generates the forms airframe in C.
func formsSources(t testing.TB, nt string, headerOnly bool) []emit.Source {
	t.Helper()
	srcs, _, err := emit.GenerateCode(formsDesign(t, nt), emit.CodeOptions{Lang: emit.LangC, HeaderOnly: headerOnly, Vectors: true, AllowUnmet: true})
	if err != nil {
		t.Fatal(err)
	}
	return srcs
}

// Fused multiply-add mnemonics as objdump prints them: x86 FMA3
// (vfmadd132ss and relatives), ARM VFPv4 (vfma.f32, vfms, vfnma, vfnms;
// not the chained vmla family, which rounds the product: see armArith),
// AArch64 (fmadd, fmsub, fnmadd, fnmsub and the vector fmla/fmls).
var fusedInsn = regexp.MustCompile(`(?m)^\s+[0-9a-f]+:\s+(?:[0-9a-f]{2,8} ?)+\s+(vfn?m(add|sub)[0-9a-z]*|vfn?m[as]|fn?m(add|sub)|fml[as])[.\s]`)

// countFused returns the fused multiply-add instructions of the objects'
// disassembly.
func countFused(t *testing.T, dir, objdump string, objs ...string) int {
	t.Helper()
	n := 0
	for _, o := range objs {
		n += len(fusedInsn.FindAllString(run(t, dir, objdump, "-d", o), -1))
	}
	return n
}

// fwTarget is a compiler for one target of the flags matrix: how to
// compile a translation unit to an object (cc and flags, without -std),
// the disassembler, and how to link and run the vector program (nil:
// count only).
type fwTarget struct {
	name    string
	cc      string
	flags   []string
	objdump string
	// link links the objects of the controller and the vector program
	// into dir/prog and returns the command that runs it.
	link func(t *testing.T, dir string, objs []string, srcs []emit.Source) []string
}

// hostHasFMA reports whether the host CPU executes x86 FMA3 instructions
// (a program built with -mfma would stop with SIGILL otherwise).
func hostHasFMA() bool {
	if runtime.GOARCH != "amd64" {
		return false
	}
	b, err := os.ReadFile("/proc/cpuinfo")
	return err == nil && regexp.MustCompile(`(?m)^flags\s*:.*\bfma\b`).Match(b)
}

// fwTargets lists the targets of the flags matrix that are installed:
// gcc and clang for the host with FMA enabled (-mfma on x86-64, so that
// there is something to contract), arm-none-eabi-gcc and clang for the
// Cortex-M4F and arm-none-eabi-gcc for the Cortex-M7 with double-precision
// FPU (run under qemu-arm with the emitted stub), and clang for AArch64
// (disassembly only: no AArch64 C library here).
func fwTargets(t *testing.T) []fwTarget {
	t.Helper()
	var ts []fwTarget
	hostFlags := []string{}
	if runtime.GOARCH == "amd64" {
		hostFlags = append(hostFlags, "-mfma")
	}
	objdump, _ := exec.LookPath("objdump")
	hostLink := func(cc string) func(*testing.T, string, []string, []emit.Source) []string {
		return func(t *testing.T, dir string, objs []string, _ []emit.Source) []string {
			run(t, dir, cc, append(append(append([]string{}, hostFlags...), "-o", "prog"), objs...)...)
			if runtime.GOARCH == "amd64" && !hostHasFMA() {
				return nil // built, but this CPU cannot run FMA instructions
			}
			return []string{filepath.Join(dir, "prog")}
		}
	}
	for _, c := range []string{"gcc", "clang"} {
		if p, err := exec.LookPath(c); err == nil && objdump != "" {
			ts = append(ts, fwTarget{name: "host-" + c, cc: p, flags: hostFlags, objdump: objdump, link: hostLink(p)})
		}
	}
	armcc, _ := exec.LookPath("arm-none-eabi-gcc")
	armdump, _ := exec.LookPath("arm-none-eabi-objdump")
	qemu, _ := exec.LookPath("qemu-arm")
	if armcc != "" && armdump != "" {
		// The objects are linked with newlib and the qemu-arm stub that
		// --vectors emits (compiled by arm-none-eabi-gcc, whose newlib
		// headers it includes).
		armLink := func(cpu []string) func(*testing.T, string, []string, []emit.Source) []string {
			return func(t *testing.T, dir string, objs []string, srcs []emit.Source) []string {
				stub := qemuStub(srcs)
				run(t, dir, armcc, append(append([]string{}, cpu...), "-O2", "-c", "-o", "stub.o", stub)...)
				run(t, dir, armcc, append(append(append([]string{}, cpu...), "--specs=nosys.specs", "-nostartfiles", "-Wl,--no-warn-rwx-segments", "-o", "prog", "stub.o"), objs...)...)
				if qemu == "" {
					return nil
				}
				return []string{qemu, filepath.Join(dir, "prog")}
			}
		}
		ts = append(ts, fwTarget{name: "arm-none-eabi-gcc-m4f", cc: armcc, flags: m4f, objdump: armdump, link: armLink(m4f)})
		// The Cortex-M7 with its double-precision FPU, where GCC uses the
		// chained multiply-accumulates (VMLA.F64), which round the
		// product: the float64 vectors show that they give the model's
		// bits.
		ts = append(ts, fwTarget{name: "arm-none-eabi-gcc-m7", cc: armcc, flags: m7dp, objdump: armdump, link: armLink(m7dp)})
		if clang, err := exec.LookPath("clang"); err == nil {
			// Clang for the same core, with newlib's headers and its
			// enum size (short enums, the arm-none-eabi default).
			flags := append([]string{"--target=arm-none-eabi", "--sysroot=" + armSysroot(t, armcc), "-fshort-enums"}, m4f...)
			ts = append(ts, fwTarget{name: "clang-m4f", cc: clang, flags: flags, objdump: armdump, link: armLink(m4f)})
		}
	}
	if clang, err := exec.LookPath("clang"); err == nil {
		if dump, err := exec.LookPath("llvm-objdump"); err == nil {
			ts = append(ts, fwTarget{name: "clang-aarch64", cc: clang, flags: []string{"--target=aarch64-linux-gnu", "-ffreestanding"}, objdump: dump})
		}
	}
	if len(ts) == 0 {
		t.Skip("no C compiler with a disassembler found; .ci/run installs them")
	}
	return ts
}

// armSysroot is the directory of arm-none-eabi-gcc's newlib (the parent
// of its include directory).
func armSysroot(t *testing.T, armcc string) string {
	t.Helper()
	out, err := exec.Command(armcc, "-print-sysroot").Output()
	if s := strings.TrimSpace(string(out)); err == nil && s != "" {
		return s
	}
	return "/usr/lib/arm-none-eabi"
}

// fwModes returns the language modes of the matrix for target ft: ISO C99,
// GNU C11 and the compiler's default (GNU C17 for GCC 12 and Clang 14).
// GNU C11 is left out where the default is GNU C17 and the generated code
// does not read __STDC_VERSION__: C17 corrects defects of C11 and adds
// nothing (GCC's manual, "Language Standards Supported by GCC": the same
// as C11 but for the corrections, which -std=c11 applies too, and the
// value of __STDC_VERSION__), so the two modes compile the same code the
// same way; with the forms airframe the objects of the two disassemble
// identically on every target of the matrix (GCC 12.2, Clang 14.0,
// arm-none-eabi-gcc 12.2). The ISO mode stays: it is the one where the
// compilers do not contract on their own. A compiler whose default is
// another mode (GCC 15's GNU C23) gets all three.
func fwModes(t *testing.T, ft fwTarget, srcs []emit.Source) []string {
	t.Helper()
	for _, s := range srcs {
		if bytes.Contains(s.Data, []byte("__STDC_VERSION__")) {
			return []string{"-std=c99", "-std=gnu11", ""}
		}
	}
	if defaultIsGNU17(t, ft) {
		return []string{"-std=c99", ""}
	}
	return []string{"-std=c99", "-std=gnu11", ""}
}

// defaultModes caches defaultIsGNU17 by compiler and flags.
var defaultModes sync.Map

// defaultIsGNU17 reports whether target ft compiles GNU C17 when no -std
// is given: its predefined macros (-dM -E) say __STDC_VERSION__ 201710L
// and no __STRICT_ANSI__.
func defaultIsGNU17(t *testing.T, ft fwTarget) bool {
	t.Helper()
	key := ft.cc + "\x00" + strings.Join(ft.flags, "\x00")
	if v, ok := defaultModes.Load(key); ok {
		return v.(bool)
	}
	out := run(t, t.TempDir(), ft.cc, append(append([]string{}, ft.flags...), "-dM", "-E", "-x", "c", os.DevNull)...)
	gnu17 := regexp.MustCompile(`(?m)^#define __STDC_VERSION__ 201710L$`).MatchString(out) &&
		!regexp.MustCompile(`(?m)^#define __STRICT_ANSI__\b`).MatchString(out)
	defaultModes.Store(key, gnu17)
	return gnu17
}

// fwWarnings are strictC without its -std.
func fwWarnings() []string {
	var w []string
	for _, f := range strictC {
		if !strings.HasPrefix(f, "-std=") {
			w = append(w, f)
		}
	}
	return w
}

// fwBuild compiles the controller and the vector program of srcs with
// target ft in mode, counts the fused multiply-adds in the objects that
// hold the controller's arithmetic (the source file, or the vector
// program that instantiates the header-only functions), links, runs the
// program and returns its output ("" when it cannot run here) and the
// count.
func fwBuild(t *testing.T, ft fwTarget, mode string, srcs []emit.Source) (string, int) {
	t.Helper()
	dir := writeSources(t, srcs)
	ctrl, vec := cFiles(srcs)
	if len(vec) != 1 {
		t.Fatalf("vector programs: %v", vec)
	}
	tus := append(append([]string{}, vec...), ctrl...)
	if ft.link == nil {
		// Disassembly only (no C library for the target): the controller,
		// or a unit that instantiates the header-only functions.
		tus = ctrl
		if len(ctrl) == 0 {
			u := usageTU(t, srcs, "use_one")
			if err := os.WriteFile(filepath.Join(dir, u.Name), u.Data, 0o644); err != nil {
				t.Fatal(err)
			}
			tus = []string{u.Name}
		}
	}
	var objs, arith []string
	for _, c := range tus {
		o := strings.TrimSuffix(c, ".c") + ".o"
		args := append(append(append([]string{}, ft.flags...), fwWarnings()...), "-O2")
		if mode != "" {
			args = append(args, mode)
		}
		run(t, dir, ft.cc, append(args, "-c", "-o", o, c)...)
		objs = append(objs, o)
		if len(ctrl) == 0 || c != vec[0] {
			arith = append(arith, o)
		}
	}
	fused := countFused(t, dir, ft.objdump, arith...)
	if ft.link == nil {
		return "", fused
	}
	cmd := ft.link(t, dir, objs, srcs)
	if cmd == nil {
		return "", fused
	}
	out, err := runErr(dir, cmd[0], cmd[1:]...)
	if err != nil {
		return out + "\n(exit: " + err.Error() + ")", fused
	}
	return out, fused
}

// TestVectorsUnderFirmwareFlags builds the vector program of every
// controller structure (the forms airframe), float32 and float64, as a
// header and source and header-only, with every installed compiler and
// target in ISO C99, GNU C11 and the default mode, without
// -ffp-contract: the objects must hold no fused multiply-add, and every
// vector must match bit for bit (natively, or under qemu-arm for the
// Cortex-M4F). Before the generated code turned contraction off, GCC's
// GNU modes on the M4F (vfma.f32) and x86-64 with FMA, and Clang in every
// mode on x86-64 and AArch64, fused products and the vectors failed;
// TestContractionIsCaught shows that this test sees it.
//
// With -short: the compiler's default mode only (a GNU mode: GNU C17
// here), float32, header and source.
func TestVectorsUnderFirmwareFlags(t *testing.T) {
	if testing.Short() {
		t.Log("-short: the default mode, float32, header and source only")
	}
	t.Parallel()
	targets := fwTargets(t)
	for _, nt := range []string{"float32", "float64"} {
		for _, ho := range []bool{false, true} {
			if testing.Short() && (nt != "float32" || ho) {
				continue
			}
			srcs := formsSources(t, nt, ho)
			naxes := len(formsDesign(t, nt).Axes)
			for _, ft := range targets {
				for _, mode := range fwModes(t, ft, srcs) {
					if testing.Short() && mode != "" {
						continue
					}
					m := strings.TrimPrefix(mode, "-std=")
					if m == "" {
						m = "default"
					}
					t.Run(fmt.Sprintf("%s/header-only=%v/%s/%s", nt, ho, ft.name, m), func(t *testing.T) {
						t.Parallel()
						out, fused := fwBuild(t, ft, mode, srcs)
						if fused != 0 {
							t.Errorf("%d fused multiply-add instructions in the controller's objects", fused)
						}
						if out == "" {
							t.Logf("%s: built and disassembled; not run here", ft.name)
							return
						}
						if n := strings.Count(out, "vectors match"); n != naxes {
							t.Errorf("%d of %d axes match:\n%s", n, naxes, out)
						}
					})
				}
			}
		}
	}
}

// unprotected returns srcs with the pragmas that turn contraction off
// removed: the generated code as it was before it protected itself.
func unprotected(t *testing.T, srcs []emit.Source) []emit.Source {
	t.Helper()
	re := regexp.MustCompile(`(?m)^#pragma (clang fp contract\(off\)|GCC optimize\("fp-contract=off"\))$`)
	out := append([]emit.Source{}, srcs...)
	n := 0
	for i, s := range out {
		n += len(re.FindAll(s.Data, -1))
		out[i].Data = re.ReplaceAll(s.Data, nil)
	}
	if n == 0 {
		t.Fatal("no contraction pragma found in the generated source")
	}
	return out
}

// TestContractionIsCaught is the control of TestVectorsUnderFirmwareFlags:
// the same float32 program with the contraction pragmas removed must show
// fused multiply-adds in the disassembly and, where it runs, fail its
// vectors (the model rounds every product; a fused product differs in the
// last bit often enough over the excitation): GCC in GNU C11 for the
// Cortex-M4F and for x86-64 with FMA, Clang in ISO C99 for x86-64 with FMA
// and for AArch64 (Clang contracts within an expression in every mode).
func TestContractionIsCaught(t *testing.T) {
	t.Parallel()
	srcs := unprotected(t, formsSources(t, "float32", false))
	modes := map[string]string{"arm-none-eabi-gcc-m4f": "-std=gnu11", "clang-aarch64": "-std=c99"}
	if runtime.GOARCH == "amd64" {
		modes["host-gcc"], modes["host-clang"] = "-std=gnu11", "-std=c99"
	}
	seen := 0
	for _, ft := range fwTargets(t) {
		mode, ok := modes[ft.name]
		if !ok {
			continue
		}
		seen++
		t.Run(ft.name, func(t *testing.T) {
			t.Parallel()
			out, fused := fwBuild(t, ft, mode, srcs)
			if fused == 0 {
				t.Errorf("no fused multiply-add without the pragmas: the count cannot see contraction")
			}
			if out != "" && !strings.Contains(out, "the model") {
				t.Errorf("the vectors passed with contracted arithmetic:\n%s", out)
			}
			t.Logf("%d fused instructions; vector program: %s", fused, firstLine(out))
		})
	}
	if seen == 0 {
		t.Skip("none of arm-none-eabi-gcc, an x86-64 gcc or clang, clang for AArch64 is installed")
	}
}

func firstLine(s string) string {
	l, _, _ := strings.Cut(s, "\n")
	return l
}

// TestFloatSettingsStopTheBuild: the options that the source cannot undo
// stop the build with the #error that says why: -ffast-math and
// -ffinite-math-only (GCC and Clang), and x87 arithmetic
// (FLT_EVAL_METHOD 2: Clang for i386 without SSE, freestanding so that no
// i386 C library is needed), in the source file and in the header-only
// variant.
func TestFloatSettingsStopTheBuild(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	cases := []struct {
		flags []string
		msg   string
		clang bool // Clang only
	}{
		{[]string{"-ffast-math"}, "-ffast-math or -ffinite-math-only", false},
		{[]string{"-ffinite-math-only"}, "-ffast-math or -ffinite-math-only", false},
		{[]string{"--target=i386-unknown-linux-gnu", "-mno-sse", "-ffreestanding"}, "FLT_EVAL_METHOD is not 0", true},
	}
	for _, ho := range []bool{false, true} {
		srcs := formsSources(t, "float32", ho)
		ctrl, _ := cFiles(srcs)
		if len(ctrl) == 0 {
			// A unit that includes the header-only header, and no C
			// library header (there is no i386 C library here).
			srcs = append(srcs, usageTU(t, srcs, "use_one"))
			ctrl = []string{"use_one.c"}
		}
		tu := ctrl[0]
		dir := writeSources(t, srcs)
		for _, cc := range ccs {
			for _, c := range cases {
				if c.clang && !strings.Contains(filepath.Base(cc), "clang") {
					continue
				}
				args := append(append([]string{"-std=c99", "-c", "-o", "x.o"}, c.flags...), tu)
				out, err := runErr(dir, cc, args...)
				if err == nil || !strings.Contains(out, c.msg) {
					t.Errorf("%s %v on %s: err %v, output lacks %q:\n%s", filepath.Base(cc), c.flags, tu, err, c.msg, out)
				}
			}
		}
	}
}

// TestStampStopsMixedBuild: a source file and a header of two runs (the
// airframe's description edited in between, which changes the header's
// summary and so its content) must not compile together: the #error of
// the stamp check says so. The vector program checks the stamp too. The
// files of one run compile (TestCompileGoldenC builds them all).
func TestStampStopsMixedBuild(t *testing.T) {
	t.Parallel()
	cc := hostCompilers(t)[0]
	gen := func(desc string) []emit.Source {
		text := strings.Replace(formsAirframe("float32"), "one axis per controller structure", desc, 1)
		f, err := airframe.Parse("forms.toml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		g := *formsDesign(t, "float32")
		g.File = f // the same designs: only the header's text differs
		srcs, _, err := emit.GenerateCode(&g, emit.CodeOptions{Lang: emit.LangC, Vectors: true, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		return srcs
	}
	a, b := gen("first run"), gen("second run")
	mixed := append([]emit.Source{}, a...)
	for i, s := range mixed {
		if strings.HasSuffix(s.Name, ".h") {
			mixed[i] = sourceNamed(b, s.Name)
		}
	}
	dir := writeSources(t, mixed)
	ctrl, vec := cFiles(mixed)
	for _, c := range append(ctrl, vec...) {
		out, err := runErr(dir, cc, "-std=c99", "-c", "-o", "x.o", c)
		if err == nil || !strings.Contains(out, "is not the header this file was generated with") {
			t.Errorf("%s with the header of another run: err %v\n%s", c, err, out)
		}
	}
	// The header's stamp is not that of the header and this source (the
	// sources of the two runs differ in their input hash line), and the
	// source and the vector program name another header.
	if errs := emit.CheckStamps(mixed); len(errs) != 3 {
		t.Errorf("CheckStamps of the mixed files: %v, want the header, the source and the vector program", errs)
	}
	if errs := emit.CheckStamps(a); len(errs) != 0 {
		t.Errorf("CheckStamps of one run: %v", errs)
	}
}

// readmeRecipe returns the shell block of README.md that checks the
// generated code on the target: the fenced sh block holding
// "--vectors".
func readmeRecipe(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile("../README.md")
	if err != nil {
		t.Fatal(err)
	}
	blocks := regexp.MustCompile("(?ms)^```sh\n(.*?)^```").FindAllSubmatch(b, -1)
	for _, m := range blocks {
		if bytes.Contains(m[1], []byte("--vectors")) && bytes.Contains(m[1], []byte("qemu-arm")) {
			return string(m[1])
		}
	}
	t.Fatal("README.md has no sh block with the --vectors recipe and qemu-arm")
	return ""
}

// TestREADMEVectorRecipe runs the README's on-target vector recipe as
// written (README, "CI: is the committed code up to date?"): the locusmith
// command, the board build with semihosting (linked, not run: there is no
// board here) and the qemu-arm build and run with the stub that --vectors
// emits, in a directory holding airframes/sandpiper.toml (the quadrotor
// example) and the CLI as locusmith on the PATH. Every command must
// succeed, and the run must report that every axis matches.
func TestREADMEVectorRecipe(t *testing.T) {
	if testing.Short() {
		t.Skip("cross-architecture build and run; skipped with -short")
	}
	t.Parallel()
	tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	tool(t, "qemu-arm", "qemu-user")
	sh := tool(t, "sh", "a POSIX shell")
	recipe := readmeRecipe(t)
	for _, must := range []string{"locusmith emit", "--specs=rdimon.specs", "qemu-arm"} {
		if !strings.Contains(recipe, must) {
			t.Fatalf("the README recipe lacks %q:\n%s", must, recipe)
		}
	}
	cli := buildCLI(t, "")
	dir := t.TempDir()
	src, err := os.ReadFile("../examples/quadrotor.toml")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(dir, "airframes"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "airframes", "sandpiper.toml"), src, 0o644); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "bin")
	if err := os.Mkdir(bin, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(cli, filepath.Join(bin, "locusmith")); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(sh, "-e", "-x", "-c", recipe)
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "PATH="+bin+string(os.PathListSeparator)+os.Getenv("PATH"))
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("the README recipe failed: %v\n%s", err, out)
	}
	a := design(t, "../examples/quadrotor.toml", "")
	if n := strings.Count(string(out), "vectors match"); n != len(a.Axes) {
		t.Errorf("%d of %d axes matched:\n%s", n, len(a.Axes), out)
	}
	for _, f := range []string{"vec.elf", "vec-qemu.elf"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("the recipe did not build %s: %v", f, err)
		}
	}
}
