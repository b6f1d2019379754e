package golden

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
	"locusmith/emit/review"
	"locusmith/synth"
)

// TestFixedDFilterHeaderAndJSON: the forms airframe's axes with
// derivative filters in q15 and q31 meet their spec with every proof
// (overflow, limit_cycle, the quantized loop), their generated C lists
// each derivative section in the state (direct form I, its formats), the
// step and the reset, and the header gives each one's formats and bounds
// and the D term's rounding; the JSON report lists the filters with
// "at": "derivative" after the feedback chain, the sections' coefficient
// rows D1_B0 … and the rows of their range table. (The vectors of these
// axes run in TestFormsMatrix and on the Cortex-M4F in the firmware
// tests; their step cost in TestStepCost.)
func TestFixedDFilterHeaderAndJSON(t *testing.T) {
	for _, nt := range []string{"q15", "q31"} {
		a := formsDesign(t, nt)
		seen := 0
		for _, x := range a.Axes {
			if x.Name != "pid_dfilt" && x.Name != "pd_dfilt" {
				continue
			}
			seen++
			d := x.Design
			if d == nil || !d.OK() {
				t.Fatalf("%s %s: not designed or unmet", nt, x.Name)
			}
			if len(d.Num.Fixed.DSections) != len(d.Problem.Ctrl.DerivativeFilters) || d.Num.DFilterNoiseLSB <= 0 {
				t.Errorf("%s %s: %d derivative sections, rounding bound %g", nt, x.Name, len(d.Num.Fixed.DSections), d.Num.DFilterNoiseLSB)
			}
			for _, want := range []string{"overflow", "limit_cycle", "quantized_stable", "quantized_overshoot", "quantized_settling_time"} {
				found := false
				for _, c := range d.Checks {
					found = found || c.Name == want && c.OK
				}
				if !found {
					t.Errorf("%s %s: check %s missing or failing", nt, x.Name, want)
				}
			}
		}
		if seen != 2 {
			t.Fatalf("%s: %d axes with derivative filters in the forms airframe, want pid_dfilt and pd_dfilt", nt, seen)
		}
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		ctrl, _ := cFiles(srcs)
		text := func(name string) string {
			return strings.Join(strings.Fields(strings.ReplaceAll(string(sourceNamed(srcs, name).Data), "\n//", " ")), " ")
		}
		h, c := text(headerOf(srcs)), text(ctrl[0])
		for _, want := range []string{
			"d1x1, d1x2; // derivative filter 1 (lowpass 80 Hz, order 2, damping 0.7071): direct form I, last inputs,",
			"d2y1, d2y2; // derivative filter 2: last outputs,",
			"d1x1, d1x2; // derivative filter 1 (notch 200 Hz, -3 dB width 50 Hz): direct form I",
			"derivative filters in direct form I on the D term", "1. coefficients Q1.", "2. coefficients Q1.", "the D term's rounding error <=",
			"FORMS_PID_DFILT_D2_A2", "FORMS_PD_DFILT_D1_B0", "the derivative filters start at rest at 0",
		} {
			if !strings.Contains(h, want) {
				t.Errorf("%s: header: %q missing", nt, want)
			}
		}
		for _, want := range []string{"s->d1x1 = 0; // derivative filter 1 at rest", "s->d2y2 = 0;", "// Derivative filter 2: notch 150 Hz, -3 dB width 40 Hz, depth 12 dB.", "s->d2y1 = f;"} {
			if !strings.Contains(c, want) {
				t.Errorf("%s: code: %q missing", nt, want)
			}
		}
		js, err := json.Marshal(review.JSON([]*discrete.Airframe{a}))
		if err != nil {
			t.Fatal(err)
		}
		for _, want := range []string{`"at":"derivative"`, `"name":"D1_B0"`, `"name":"D2_A2"`, `"name":"derivative filter 2 output y (states y1, y2)"`, `"name":"derivative filter 1 sum B0·x + B1·x1"`} {
			if !strings.Contains(string(js), want) {
				t.Errorf("%s: JSON: %q missing", nt, want)
			}
		}
		// The D term's proved rounding bound: the header's figure, in
		// the JSON too (the bound itself is held to 256-bit math/big in
		// discrete's TestFixedDFilterRounding).
		var table strings.Builder
		if err := review.WriteTable(&table, a); err != nil {
			t.Fatal(err)
		}
		judged := 0
		for _, x := range review.JSON([]*discrete.Airframe{a}).Airframes[0].Axes {
			if !strings.Contains(x.Axis, "dfilt") {
				continue
			}
			judged++
			v := x.Numeric.DerivativeFilterNoiseLSB
			if v == nil || !(*v > 0) {
				t.Errorf("%s %s: derivative_filter_noise_lsb %v, want the proved bound", nt, x.Axis, v)
				continue
			}
			if want := fmt.Sprintf("the D term's rounding error <= %.3g", *v); !strings.Contains(h, want) {
				t.Errorf("%s %s: JSON's derivative_filter_noise_lsb %g is not the header's (%q missing)", nt, x.Axis, *v, want)
			}
			// The text table and the review give it too.
			if want := "derivative filters: rounding in the D term at most " + synth.G4(*v) + " output LSB"; !strings.Contains(table.String(), want) {
				t.Errorf("%s %s: the table lacks %q", nt, x.Axis, want)
			}
		}
		if judged != 2 {
			t.Errorf("%s: the JSON has %d axes with derivative filters, want 2", nt, judged)
		}
		files, err := review.Build(a)
		if err != nil {
			t.Fatal(err)
		}
		if md := string(files[0].Data); !strings.Contains(md, "the derivative filters' rounding in the D term is at most") {
			t.Errorf("%s: the review does not give the derivative filters' rounding bound", nt)
		}
	}
}

// TestFixedDFilterCLI: an axis whose derivative notch is too narrow for
// q15 coefficients (its poles round onto the unit circle) exits 1 with
// an overflow that names the derivative filter; in q31 the same notch is
// proved and the design exits 0.
func TestFixedDFilterCLI(t *testing.T) {
	const src = `airframe = "dnotch"
description = "demo data: an invented axis with a derivative notch narrower than q15 resolves"
loop_hz = 1000.0
compute_delay = 1

[numeric]
type = "q15"
input_full_scale = 20.0
output_full_scale = 0.5

[axes.pitch.plant]
effectiveness = 2400.0
motor_tau = 0.03

[axes.pitch.sensor]
lowpass_hz = 100.0

[axes.pitch.spec]
settling_time = 0.15
overshoot = 0.10

[axes.pitch.control]
form = "pid"
antiwindup = "none"
derivative_lowpass_hz = 125.0
output_limit = [-0.5, 0.5]

[[axes.pitch.filter]]
kind = "notch"
at = "derivative"
hz = 100.0
width_hz = 0.001
`
	bin := buildCLI(t, "")
	for _, tc := range []struct {
		nt   string
		code int
	}{{"q15", 1}, {"q31", 0}} {
		dir := t.TempDir()
		p := filepath.Join(dir, "dnotch.toml")
		if err := os.WriteFile(p, []byte(strings.Replace(src, `type = "q15"`, `type = "`+tc.nt+`"`, 1)), 0o644); err != nil {
			t.Fatal(err)
		}
		out, code, err := runCLI(dir, "", bin, "design", p)
		if err != nil {
			t.Fatal(err)
		}
		if code != tc.code {
			t.Errorf("%s: exit %d, want %d\n%s", tc.nt, code, tc.code, out)
		}
		if tc.code == 1 && !strings.Contains(out, "overflow: derivative filter 1 (notch 100 Hz, -3 dB width 0.001 Hz) is not stable with its q15 coefficients") {
			t.Errorf("%s: the overflow is not named:\n%s", tc.nt, out)
		}
	}
}

// TestFixedDFilterMiddleFormat: derivative filters where a middle
// section's output format lies below the format of the sum (a lightly
// damped lowpass at 480 Hz before one at 10 Hz; demo data). Only the last
// section's output reaches the sum (the reference model shifts it from
// its own format), so the generator takes such a chain; it used to refuse
// it ("format shifts") although design passed it. The C program's vectors
// match the model bit for bit, in q15 and q31.
func TestFixedDFilterMiddleFormat(t *testing.T) {
	t.Parallel()
	cc := hostCompilers(t)[0]
	for _, nt := range []string{"q15", "q31"} {
		src := `airframe = "dfmid"
description = "demo data: invented axis whose derivative filters change format mid-chain; not a real vehicle"
loop_hz = 1000.0

[numeric]
type = "` + nt + `"
input_full_scale = 64.0
output_full_scale = 1.0

[axes.roll.plant]
effectiveness = 2000.0
motor_tau = 0.03
delay = 0.002

[axes.roll.sensor]
lowpass_hz = 100.0

[axes.roll.spec]
settling_time = 0.25
overshoot = 0.10

[axes.roll.control]
form = "pid"
antiwindup = "clamp"
output_limit = [-0.5, 0.5]

[[axes.roll.filter]]
kind = "lowpass"
at = "derivative"
hz = 480
damping = 0.1

[[axes.roll.filter]]
kind = "lowpass"
at = "derivative"
hz = 10
`
		f, err := airframe.Parse("dfmid.toml", []byte(src))
		if err != nil {
			t.Fatal(err)
		}
		a := discrete.DesignAirframe(f)
		d := a.Axes[0].Design
		if d == nil || !d.OK() {
			t.Fatalf("%s: not designed or unmet: %v", nt, a.Axes[0].Err)
		}
		fx := d.Num.Fixed
		if len(fx.DSections) != 2 || fx.DSections[0].F >= fx.FU {
			t.Fatalf("%s: the case does not test a middle section below the sum's format: %+v, FU %d", nt, fx.DSections, fx.FU)
		}
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, Vectors: true})
		if err != nil {
			t.Fatalf("%s: %v", nt, err)
		}
		ctrl, vec := cFiles(srcs)
		dir := buildC(t, cc, append(append([]string{}, strictC...), "-O2"), srcs, append(vec, ctrl...))
		if out := run(t, dir, filepath.Join(dir, "prog")); !strings.Contains(out, "vectors match") {
			t.Errorf("%s: %s", nt, out)
		}
	}
}
