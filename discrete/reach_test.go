package discrete

import (
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
)

// TestReachVerified: when no design of the form passes, the settling time
// the verdict says the form reaches is one that a design the tool
// verified at every plant of the envelope has, the design it reports as
// the closest (when that misses only the settling time): the figure is
// the worst settling over the envelope in the reported checks, to the
// four digits printed. (Before, the figure came from two plants of the
// search's guide, and read 0.17 s where the envelope showed 0.50 s.) The
// checks themselves are verified against SciPy in scipy_envelope_test.go.
func TestReachVerified(t *testing.T) {
	for _, c := range []struct{ name, form, settle string }{
		{"pi_fast", "pi", "0.15"},
		{"p_fast", "p", "0.12"},
		{"pid_fast", "pid", "0.05"},
	} {
		t.Run(c.name, func(t *testing.T) {
			src := `airframe = "reach_probe"
description = "demo data: invented quadrotor roll with a settling time out of reach; not a real vehicle"
loop_hz = 1000.0

[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002

[axes.roll.sensor]
lowpass_hz = 100.0

[axes.roll.spec]
settling_time = ` + c.settle + `
overshoot = 0.10
min_phase_margin = 40.0

[axes.roll.control]
form = "` + c.form + `"
output_limit = [-0.5, 0.5]
`
			f, err := airframe.Parse("reach.toml", []byte(src))
			if err != nil {
				t.Fatal(err)
			}
			d, err := DesignAxis(f.Axes[0], f.Loop, f.Numeric)
			if err != nil {
				t.Fatal(err)
			}
			if d.Cont.Met {
				t.Fatalf("%s met settling %s s: the case no longer tests an infeasible spec", c.form, c.settle)
			}
			re := regexp.MustCompile(`, ` + c.form + ` reaches settling ([0-9.e+-]+) s`)
			var reach string
			for _, w := range d.Warnings {
				if m := re.FindStringSubmatch(w); m != nil {
					reach = m[1]
				}
			}
			if reach == "" {
				t.Fatalf("no reach figure: %s", strings.Join(d.Warnings, "; "))
			}
			for _, ch := range d.Checks {
				if ch.Name != "settling_time" {
					continue
				}
				got := strconv.FormatFloat(ch.Value, 'g', 4, 64)
				if got != reach {
					t.Errorf("the verdict says %s reaches settling %s s; the reported design's worst settling over the envelope is %s s (%s)", c.form, reach, got, ch)
				}
				return
			}
			t.Fatal("no settling_time check")
		})
	}
}
