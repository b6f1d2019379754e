package discrete

import (
	"math"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// TestTightened: the limits mend searches again under, by hand (the rule
// of tightened: each failed limit moved past the exact figure by as much
// again, and a little more; for a bound of the form x ≤ L failed at v,
// L·(L/v)·(1 − 1e-3), for a margin x ≥ L failed at v, L + (L − v) + 0.05),
// and the noise bound in force given as the file's.
func TestTightened(t *testing.T) {
	var q airframe.Axis
	q.Spec.MaxSensitivity, q.Spec.MinPhaseMargin, q.Spec.MinGainMargin = 1.7, 45, 6
	fail := func(name string, limit, value float64) synth.Check {
		return synth.Check{Name: name, Limit: limit, Value: value}
	}
	for _, tc := range []struct {
		name              string
		cs                []synth.Check
		nb                float64
		ok                bool
		ms, pm, gm, noise float64
	}{
		{"none fails", []synth.Check{{Name: "noise_gain", Limit: 2, Value: 1, OK: true}}, 2, false, 1.7, 45, 6, 2},
		// By hand: 734.84² = 539 989.8256, / 735.91 = 733.771 555 76,
		// × 0.999 = 733.037 784 21 (a random pi of our own).
		{"noise", []synth.Check{fail("noise_gain", 734.84, 735.91)}, 734.84, true, 1.7, 45, 6, 733.03778421},
		{"noise without a bound", []synth.Check{fail("noise_gain", 1, 2)}, math.Inf(1), false, 1.7, 45, 6, math.Inf(1)},
		// By hand: 1.7² / 1.71 = 1.690 058 480, × 0.999 = 1.688 368 421;
		// 45 + 0.1 + 0.05 and 6 + 0.05 + 0.05.
		{"ms and margins", []synth.Check{fail("max_sensitivity", 1.7, 1.71), fail("phase_margin", 45, 44.9), fail("gain_margin", 6, 5.95)}, 3, true,
			1.688368421, 45.15, 6.1, 3},
		{"noise and ms", []synth.Check{fail("noise_gain", 734.84, 735.91), fail("max_sensitivity", 1.7, 1.71)}, 734.84, true,
			1.688368421, 45, 6, 733.03778421},
		{"a check not tightened", []synth.Check{fail("overshoot", 0.1, 0.2)}, 3, false, 1.7, 45, 6, 3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, ok := tightened(q, tc.cs, tc.nb)
			s := got.Spec
			// The hand figures carry nine or ten significant digits.
			close := func(a, b float64) bool { return a == b || math.Abs(a-b) <= 1e-9*math.Abs(b) }
			if ok != tc.ok || !close(s.MaxSensitivity, tc.ms) || !close(s.MinPhaseMargin, tc.pm) || !close(s.MinGainMargin, tc.gm) || !close(s.MaxNoiseGain, tc.noise) {
				t.Errorf("got ok %v Ms %.10g PM %.10g GM %.10g noise %.10g; want %v %.10g %.10g %.10g %.10g",
					ok, s.MaxSensitivity, s.MinPhaseMargin, s.MinGainMargin, s.MaxNoiseGain, tc.ok, tc.ms, tc.pm, tc.gm, tc.noise)
			}
		})
	}
}
