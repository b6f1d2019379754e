package golden

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
)

// fixedFilterPath is the golden airframe with a feedback filter chain in
// fixed point (demo data: the compliant frame of compliant.toml, a notch
// on its 40 Hz mode and a gyro lowpass, in q15; generated in q31 too).
const fixedFilterPath = "testdata/compliant_fixed.toml"

// fixedFilterVariants are its variants: q15 (the file's) with vectors in
// C, Go and header-only C, and q31 with vectors in C and Go.
func fixedFilterVariants() []variant {
	return []variant{
		{name: "file", lang: emit.LangC, vectors: true},
		{name: "file", lang: emit.LangGo, vectors: true},
		{name: "header-only", lang: emit.LangC, headerOnly: true, vectors: true},
		{name: "q31", lang: emit.LangC, numeric: airframe.Q31, vectors: true},
		{name: "q31", lang: emit.LangGo, numeric: airframe.Q31, vectors: true},
	}
}

// TestFixedFilterGolden compares the fixed-point filter airframe's
// generated code with testdata/compliant_fixed/ byte for byte (-update
// rewrites it), and checks that both arithmetics meet the spec with every
// proof (overflow, limit cycle, the quantized loop), that every section
// is in the state, the step and the reset, and that the header gives each
// filter's formats and bounds.
func TestFixedFilterGolden(t *testing.T) {
	for _, nt := range []airframe.NumericType{"", airframe.Q31} {
		a := design(t, fixedFilterPath, nt)
		if !a.OK() {
			t.Fatalf("%s: the airframe does not meet its spec: %v", nt, a.Unmet())
		}
		d := a.Axes[0].Design
		if len(d.Num.Fixed.Sections) != 2 || d.Num.FilterNoiseLSB >= 0.5 {
			t.Fatalf("%s: %d sections, rounding bound %g LSB", nt, len(d.Num.Fixed.Sections), d.Num.FilterNoiseLSB)
		}
		for _, want := range []string{"overflow", "filter_rounding", "limit_cycle", "quantized_stable", "quantized_overshoot", "quantized_settling_time"} {
			found := false
			for _, c := range d.Checks {
				found = found || c.Name == want && c.OK
			}
			if !found {
				t.Errorf("%s: check %s missing or failing", nt, want)
			}
		}
	}
	for _, v := range fixedFilterVariants() {
		t.Run(v.dir(), func(t *testing.T) {
			srcs := generate(t, fixedFilterPath, v)
			// The comments as running text (their lines joined).
			main := strings.Join(strings.Fields(strings.ReplaceAll(string(sourceNamed(srcs, mainFileOf(srcs, v)).Data), "\n//", " ")), " ")
			for _, want := range []string{"f1x1, f1x2", "f1y1, f1y2", "f2x1, f2x2", "f2y1, f2y2", "notch 40 Hz (auto), -3 dB width 16 Hz", "lowpass 200 Hz, order 2",
				"filter chain in direct form I", "1. coefficients Q1.", "2. coefficients Q0.", "below half an LSB", "F1_B0", "F2_A2", "the feedback filters start at rest at measured"} {
				if !strings.Contains(main, want) {
					t.Errorf("%s: %q missing", v.dir(), want)
				}
			}
			dir := filepath.Join("testdata", "compliant_fixed", v.dir())
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

// TestFixedFilterVectors builds and runs the vector programs of the
// fixed-point filter airframe, q15 and q31: C (source and header-only)
// with every host compiler under the strict flags and, but with -short,
// for the Cortex-M4F (arm-none-eabi-gcc and Clang) under qemu-arm; and Go
// with go test. Every command must match the integer reference model bit
// for bit.
func TestFixedFilterVectors(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	gocmd := goTool(t)
	gos := map[string][]emit.Source{}
	for _, v := range fixedFilterVariants() {
		srcs := generate(t, fixedFilterPath, v)
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
		if testing.Short() {
			continue
		}
		// The Cortex-M4F, a 32-bit core where the 64-bit accumulators of
		// q31 are library calls and shifts of register pairs, under
		// qemu-arm; ISO C99 only (integer code: the language modes and
		// the float contraction the firmware matrix covers change
		// nothing here).
		for _, ft := range fwTargets(t) {
			if !strings.HasSuffix(ft.name, "-m4f") {
				continue
			}
			t.Run(fmt.Sprintf("%s/%s", v.dir(), ft.name), func(t *testing.T) {
				t.Parallel()
				out, _ := fwBuild(t, ft, "-std=c99", srcs)
				if out == "" {
					t.Skipf("%s: built; qemu-arm not found to run it", ft.name)
				}
				if !strings.Contains(out, "pitch: ") || !strings.Contains(out, "vectors match") {
					t.Errorf("%s: %s", ft.name, out)
				}
			})
		}
	}
	t.Run("go", func(t *testing.T) {
		t.Parallel()
		goModule(t, gocmd, "generated.example/compliantfixed", gos, true)
	})
}

// TestFixedFilterStepCost counts the generated _step of the fixed-point
// filter airframe, q15 and q31, built with arm-none-eabi-gcc -std=c99 -O2
// for the Cortex-M4F as TestStepCost counts the forms airframe: every
// instruction, the arithmetic ones and the cycles of the longest path (M4
// model), and checks that the step divides nowhere and has a longest
// path. The figures are in the README.
func TestFixedFilterStepCost(t *testing.T) {
	if testing.Short() {
		t.Skip("cross build; skipped with -short")
	}
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	objdump := tool(t, "arm-none-eabi-objdump", "binutils-arm-none-eabi")
	for _, nt := range []airframe.NumericType{airframe.Q15, airframe.Q31} {
		a := design(t, fixedFilterPath, map[airframe.NumericType]airframe.NumericType{airframe.Q15: "", airframe.Q31: airframe.Q31}[nt])
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		ctrl, _ := cFiles(srcs)
		dir := writeSources(t, srcs)
		run(t, dir, cc, append(append(append([]string{}, strictC...), m4f...), "-O2", "-c", "-o", "x.o", ctrl[0])...)
		sz, ok := stepSizes(run(t, dir, objdump, "-d", "x.o"))["compliant_fixed_pitch_step"]
		if !ok {
			t.Fatal("compliant_fixed_pitch_step not found in the listing")
		}
		x := a.Axes[0].Design
		ops := emit.StepOps(x.Coeffs, x.Plant.Sections...)
		if sz.div > 0 || sz.cycles <= 0 || sz.arith < ops/2 {
			t.Errorf("%s: %+v for %d operations", nt, sz, ops)
		}
		t.Logf("%s, Cortex-M4F: %d instructions, %d arithmetic, %d cycles on the longest path, %d operations of the equations", nt, sz.all, sz.arith, sz.cycles, ops)
	}
}

// TestFixedFilterCLI: the airframe designs through the command line with
// exit status 0, and q15 with a notch too narrow for its coefficients
// (its poles round onto the unit circle) exits 1 with an overflow that
// names the section; in q31 the same notch is proved.
func TestFixedFilterCLI(t *testing.T) {
	src, err := os.ReadFile(fixedFilterPath)
	if err != nil {
		t.Fatal(err)
	}
	f, err := airframe.Parse("x.toml", src)
	if err != nil {
		t.Fatalf("q15 with filters: %v", err)
	}
	if a := discrete.DesignAirframe(f); !a.OK() {
		t.Fatalf("unmet: %v", a.Unmet())
	}
	narrow := strings.Replace(string(src), "kind = \"notch\"\nhz = \"auto\"", "kind = \"notch\"\nhz = 100.0\nwidth_hz = 0.001", 1)
	for _, tc := range []struct {
		nt   string
		code int
	}{{"q15", 1}, {"q31", 0}} {
		dir := t.TempDir()
		p := filepath.Join(dir, "narrow.toml")
		if err := os.WriteFile(p, []byte(strings.Replace(narrow, `type = "q15"`, `type = "`+tc.nt+`"`, 1)), 0o644); err != nil {
			t.Fatal(err)
		}
		out, code, err := runCLI(dir, "", buildCLI(t, ""), "design", p)
		if err != nil {
			t.Fatal(err)
		}
		if code != tc.code {
			t.Errorf("%s: exit %d, want %d\n%s", tc.nt, code, tc.code, out)
		}
		if tc.code == 1 && !strings.Contains(out, "overflow: filter 1 (notch 100 Hz, -3 dB width 0.001 Hz) is not stable with its q15 coefficients") {
			t.Errorf("%s: the overflow is not named:\n%s", tc.nt, out)
		}
	}
}

// TestFilterCodeAcrossArchitectures extends TestCrossArchDeterminism to
// the filter chains: the compliant airframe in float64 (whose code
// carries the sections' coefficients to the last bit: lti's design of
// them must not fuse a multiply-add on arm64, which it once did in A2 of
// the lowpass) and the fixed-point airframe in q31 (the formats chosen
// from the ℓ1 bounds, the raw coefficients, the vectors of the integer
// model): emit --vectors on the host and on arm64 under qemu-aarch64
// must write the same bytes. The JSON report is not compared: the
// accuracy run's float64 reference loop, through a lightly damped plant,
// carries the matrix exponential's last-bit differences up to a few q31
// LSB (DEVELOPERS.md, "Golden files"). Skips when qemu-aarch64 is
// missing.
func TestFilterCodeAcrossArchitectures(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs the designs under an emulator; skipped with -short")
	}
	emu := ""
	if runtime.GOARCH != "arm64" {
		p, err := exec.LookPath("qemu-aarch64")
		if err != nil {
			p, err = exec.LookPath("qemu-aarch64-static")
		}
		if err != nil {
			t.Skip("qemu-aarch64 not found: install qemu-user (.ci/run does) to compare amd64 and arm64 output")
		}
		emu = p
	}
	host, arm := buildCLI(t, ""), buildCLI(t, "arm64")
	work := t.TempDir()
	for _, in := range []struct{ path, from, to string }{
		{compliantPath, "type = \"float32\"", "type = \"float64\""},
		{fixedFilterPath, "type = \"q15\"", "type = \"q31\""},
	} {
		src, err := os.ReadFile(in.path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Contains(src, []byte(in.from)) {
			t.Fatalf("%s has no %s", in.path, in.from)
		}
		if err := os.WriteFile(filepath.Join(work, filepath.Base(in.path)), bytes.Replace(src, []byte(in.from), []byte(in.to), 1), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	outs := map[string]map[string][]byte{}
	for _, who := range []struct{ name, emu, bin string }{{"host", "", host}, {"arm64", emu, arm}} {
		o := filepath.Join(work, "out-"+who.name)
		if err := os.Mkdir(o, 0o755); err != nil {
			t.Fatal(err)
		}
		args := []string{"emit", "-o", o, "--vectors", "--allow-unmet", filepath.Base(compliantPath), filepath.Base(fixedFilterPath)}
		if out, code, err := runCLI(work, who.emu, who.bin, args...); err != nil || code != 0 {
			t.Fatalf("%s: exit %d, %v\n%s", who.name, code, err, out)
		}
		outs[who.name] = snapshot(t, o)
	}
	if len(outs["host"]) != 8 || len(outs["arm64"]) != len(outs["host"]) {
		t.Fatalf("host wrote %d files, arm64 %d", len(outs["host"]), len(outs["arm64"]))
	}
	for name, want := range outs["host"] {
		if got := outs["arm64"][name]; !bytes.Equal(got, want) {
			t.Errorf("%s differs on arm64:\n%s", name, firstDiff(string(want), string(got)))
		}
	}
}
