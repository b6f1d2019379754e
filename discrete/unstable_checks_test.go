package discrete

import (
	"math"
	"testing"

	"locusmith/airframe"
)

// TestChecksSkipUnstablePlants: when the loop is unstable at a plant of
// the envelope, the stable check fails there, and the other checks judge
// the stable plants only, so that their text never contradicts itself
// ("phase margin 64° < 40°" marked failed). Here the gain envelope reaches
// ×10, beyond the loop's gain margin (17.6 dB, ×7.6, in the report of the
// same axis), so the high corner is unstable (the Nyquist criterion: a
// gain beyond the gain margin destabilizes; handbook).
func TestChecksSkipUnstablePlants(t *testing.T) {
	src := `airframe = "wide_gain"
description = "demo data: invented quadrotor roll with a gain range beyond its gain margin; not a real vehicle"
loop_hz = 1000.0

[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002

[axes.roll.sensor]
lowpass_hz = 100.0

[axes.roll.spec]
settling_time = 0.3
overshoot = 0.10
min_phase_margin = 30.0

[axes.roll.envelope]
gain_scale = [1.0, 10.0]

[axes.roll.control]
form = "pi"
refine = false
output_limit = [-0.5, 0.5]
`
	f, err := airframe.Parse("wide.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	d, err := DesignAxis(f.Axes[0], f.Loop, f.Numeric)
	if err != nil {
		t.Fatal(err)
	}
	var sawUnstable bool
	for _, c := range d.Checks {
		if c.Name == "stable" {
			sawUnstable = !c.OK
			if c.OK {
				t.Fatalf("the loop is stable at every plant (%s): the case no longer tests an unstable corner", c)
			}
			continue
		}
		if math.IsNaN(c.Value) {
			continue
		}
		met := c.Upper && c.Value <= c.Limit || !c.Upper && c.Value >= c.Limit
		if c.Name == "noise_gain" {
			continue
		}
		if met != c.OK {
			t.Errorf("%s: value %g against limit %g says %v, the check says %v (%s)", c.Name, c.Value, c.Limit, met, c.OK, c)
		}
		for _, e := range d.Envelope {
			if e.Corner == c.Worst && !e.Stable {
				t.Errorf("%s: worst at %+v, where the loop is unstable", c.Name, c.Worst)
			}
		}
	}
	if !sawUnstable {
		t.Fatal("no stable check")
	}
}
