package discrete

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// autoAxis is an invented axis with a second-order gyro lowpass of
// hz = "auto": the demo quadrotor's yaw model under a PI (pi) or its roll
// model under a PID, with the spec lines and the filter's goal line given.
func autoAxis(t *testing.T, pid bool, spec, goal string) (airframe.Axis, airframe.Loop, airframe.Numeric) {
	t.Helper()
	plant, form, settle := "effectiveness = 300.0\nmotor_tau = 0.035", "pi", 0.3
	if pid {
		plant, form, settle = "effectiveness = 2400.0\nmotor_tau = 0.03", "pid", 0.15
	}
	src := fmt.Sprintf(`airframe = "autolp"
description = "demo data: invented axis for the automatic lowpass"
loop_hz = 1000.0
compute_delay = 1

[axes.yaw.plant]
%s
delay = 0.002

[axes.yaw.sensor]
lowpass_hz = 100.0

[axes.yaw.spec]
settling_time = %g
overshoot = 0.10
min_phase_margin = 40.0
min_gain_margin = 6.0
%s
[axes.yaw.control]
form = %q
output_limit = [-0.5, 0.5]

[[axes.yaw.filter]]
kind = "lowpass"
hz = "auto"
%s`, plant, settle, spec, form, goal)
	f, err := airframe.Parse("autolp.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	return f.Axes[0], f.Loop, f.Numeric
}

// The cutoffs tried: from 0.45 · loop_hz down to three times the target
// ωn in Hz, sixteen a decade (each step 10^(1/16) = 1.155 to within the
// three-digit rounding), decreasing.
func TestAutoCutoffs(t *testing.T) {
	p, loop, _ := autoAxis(t, false, "", "")
	cs := autoCutoffs(p, p.Filters[0].Hz)
	if cs[0] != 0.45*loop.Hz {
		t.Errorf("top %g, want %g", cs[0], 0.45*loop.Hz)
	}
	tg, err := synth.TargetFromSpec(p.Spec)
	if err != nil {
		t.Fatal(err)
	}
	lo := 3 * tg.OmegaN / (2 * math.Pi)
	if last := cs[len(cs)-1]; last < lo || last > lo*math.Pow(10, 1.0/16)*1.01 {
		t.Errorf("bottom %g, want within a step above %g", last, lo)
	}
	for i := 1; i < len(cs); i++ {
		r := cs[i-1] / cs[i]
		if math.Abs(r-math.Pow(10, 1.0/16)) > 0.01 {
			t.Errorf("cutoffs %g, %g: ratio %g, want 10^(1/16)", cs[i-1], cs[i], r)
		}
		if s := fmt.Sprint(cs[i]); len(strings.Trim(strings.Replace(s, ".", "", 1), "0")) > 3 {
			t.Errorf("cutoff %s has more than three digits", s)
		}
	}
}

// The choice against a brute force of our own: every cutoff of the list
// designed; the design takes the highest passing one (goal "noise") or
// the bottom of the passing run (goal "margin"), with a note that names
// it and the check the next cutoff beyond misses.
func TestAutoLowpassMatchesBruteForce(t *testing.T) {
	if testing.Short() {
		t.Skip("-short leaves the brute force (about fifty designs) to the full run")
	}
	t.Parallel()
	for _, c := range []struct {
		pid              bool
		spec, goal, want string
	}{
		// A PID's noise gain |C·F| grows above the crossover, so a lower
		// cutoff buys a tighter noise bound; a PI's is about Kp there,
		// which a lowpass above the crossover barely changes.
		{true, "max_noise_gain = 0.15\n", `goal = "noise"`, "highest"},
		{false, "", `goal = "margin"`, "lowest"},
	} {
		p, loop, num := autoAxis(t, c.pid, c.spec, c.goal)
		cs := autoCutoffs(p, p.Filters[0].Hz)
		var pass []int
		for k, hz := range cs {
			q := p
			q.Filters = slices.Clone(p.Filters)
			q.Filters[0].Hz = hz
			d, err := designAxisOnly(q, loop, num)
			if err != nil {
				t.Fatal(err)
			}
			if d.OK() {
				pass = append(pass, k)
			}
		}
		if len(pass) == 0 || len(pass) == len(cs) {
			t.Fatalf("%s: %d of %d cutoffs pass: the case does not test an edge", c.goal, len(pass), len(cs))
		}
		// The highest passing cutoff; the lowest of the run of passing
		// cutoffs that begins there (the passing set can have islands
		// below it, where a settling time dips under its limit again:
		// the PID case passes at 19 of its 26 cutoffs besides 7 to 15).
		want := cs[pass[0]]
		if c.want == "lowest" {
			run := 0
			for run+1 < len(pass) && pass[run+1] == pass[run]+1 {
				run++
			}
			if run != len(pass)-1 {
				t.Fatalf("%s: the passing cutoffs %v are not one run: the bisection's answer is not the brute force's", c.goal, pass)
			}
			want = cs[pass[run]]
		}
		d, err := DesignAxis(p, loop, num)
		if err != nil {
			t.Fatal(err)
		}
		if got := d.Problem.Filters[0].Hz; got != want || !d.OK() {
			t.Errorf("%s: chose %g Hz (ok %v), the brute force %g Hz (passing %v of %v)", c.goal, got, d.OK(), want, pass, cs)
		}
		note := fmt.Sprintf("%g Hz, the %s cutoff of", want, c.want)
		if !slices.ContainsFunc(d.Warnings, func(w string) bool { return strings.Contains(w, note) && strings.Contains(w, "misses") }) {
			t.Errorf("%s: no note %q with what the next cutoff misses in %q", c.goal, note, d.Warnings)
		}
	}
}

// A noise bound no cutoff meets: the design at the top of the range,
// failing, with a note. (At 0.08 and 0.05 the search finds designs at
// some cutoffs since its budget for a small feasible set grew; 0.02 is
// well below them.)
func TestAutoLowpassNonePasses(t *testing.T) {
	t.Parallel()
	p, loop, num := autoAxis(t, true, "max_noise_gain = 0.02\n", "")
	d, err := DesignAxis(p, loop, num)
	if err != nil {
		t.Fatal(err)
	}
	if d.OK() || d.Problem.Filters[0].Hz != 450 {
		t.Errorf("ok %v at %g Hz, want a failing design at 450 Hz", d.OK(), d.Problem.Filters[0].Hz)
	}
	if !slices.ContainsFunc(d.Warnings, func(w string) bool { return strings.Contains(w, "no cutoff of") }) {
		t.Errorf("no note that no cutoff passes in %q", d.Warnings)
	}
}
