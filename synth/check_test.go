package synth

import (
	"math"
	"testing"

	"locusmith/airframe"
)

// TestCheckText: a failed check reads as the value against its limit in
// its unit, naming the plant where it is worst.
func TestCheckText(t *testing.T) {
	for _, c := range []struct {
		ck   Check
		want string
	}{
		{Check{Name: "saturated_recovery", Value: math.Inf(1), Limit: 13.5, Upper: true, Worst: airframe.Nominal()},
			"recovery from the saturating step never > 13.5 s (sampled loop)"},
		{Check{Name: "saturated_recovery", Value: 0.5, Limit: 0.45, Upper: true},
			"recovery from the saturating step 0.5 s > 0.45 s (sampled loop)"},
		{Check{Name: "overshoot", Value: 0.125, Limit: 0.1, Upper: true, Worst: airframe.Corner{GainScale: 1.1, LagScale: 1}},
			"overshoot 12.5 % > 10 % (sampled loop, gain ×1.1)"},
		{Check{Name: "hold_rate", Value: 22, Limit: 48, Worst: airframe.Nominal()},
			"holdable rate 22 rad/s < 48 rad/s (sampled loop)"},
		// A margin read off an unstable loop meets its limit and fails
		// with the loop (SpecChecks): the margins of an unstable loop
		// mean nothing (common practice), and "128.1° < 52.16°" would
		// read as a contradiction.
		{Check{Name: "phase_margin", Value: 128.1, Limit: 52.16},
			"phase margin 128.1°, but the loop is unstable (sampled loop)"},
		{Check{Name: "quantized_gain_margin", Value: 10.26, Limit: 8.765, Worst: airframe.Corner{GainScale: 0.9, LagScale: 1}},
			"quantized_gain_margin 10.26 dB, but the loop is unstable (sampled loop, gain ×0.9)"},
		{Check{Name: "phase_margin", Value: 40, Limit: 52.16},
			"phase margin 40° < 52.16° (sampled loop)"},
	} {
		if got := c.ck.String(); got != c.want {
			t.Errorf("%s: %q, want %q", c.ck.Name, got, c.want)
		}
	}
}
