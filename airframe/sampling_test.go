package airframe

import (
	"strings"
	"testing"
)

// TestSamplingNorm: the plant and sensor must sample accurately at
// loop_hz, ‖[A B]·T‖₁ ≤ maxSampledNorm (values that
// passed validation made the design fail with "lti: non-finite value"
// naming no key). The bounds are worked by hand from the realization
// (lti.ZPK.CascadeSS, lti.Series): for effectiveness e, motor_tau τ and a
// lowpass gyro of ωc, the state matrix is
//
//	[[0, 0, 0], [1, −1/τ, 0], [0, g·e/τ, −ωc]],  B = [1, 0, 0],
//
// g the high end of gain_scale (1.1 by default), so the largest column
// sum is 1/τ + 1.1·e/τ and e may be at most (1e8/T − 1/τ)·τ/1.1:
// (1e11 − 40)·0.025/1.1 = 2.273e9 at 1 kHz with τ = 0.025 s. Without a
// sensor the plant's gain stays at the output, outside the matrix.
func TestSamplingNorm(t *testing.T) {
	gyro := func(eff string) string {
		s := strings.Replace(minimal, "effectiveness = 2000.0", "effectiveness = "+eff, 1)
		return strings.Replace(s, "[axes.roll.spec]", "[axes.roll.sensor]\nlowpass_hz = 100.0\n\n[axes.roll.spec]", 1)
	}
	slow := func(poles string) string {
		s := strings.Replace(minimal, "loop_hz = 1000", "loop_hz = 1", 1)
		s = strings.Replace(s, "settling_time = 0.15", "settling_time = 2.5", 1)
		return strings.Replace(s, "effectiveness = 2000.0\nmotor_tau = 0.025", "gain = 3.2e8\npoles = "+poles, 1)
	}
	cases := []struct {
		name, src, want string // want "" for valid
	}{
		{"gyro, below the bound", gyro("2.27e9"), ""},
		{"gyro, above the bound", gyro("2.28e9"), "x.toml: axes.roll.plant.effectiveness = 2.28e+09: the plant and sensor sampled at loop_hz 1000 reach a matrix norm ‖[A B]·T‖₁ of 1.003e+08, above the 1e+08 within which the design samples them accurately (the sensor's state carries the plant's output, so the norm grows with the gain; from about 1e12 the sampling fails): at this loop rate and sensor effectiveness may be at most 2.273e+09 rad/s² per unit command"},
		{"ideal sensor, far above", strings.Replace(minimal, "effectiveness = 2000.0", "effectiveness = 1e11", 1), ""},
		// |p|·T = 2e8 at 1 Hz, however small the gain.
		{"a root far beyond the loop rate", slow("[0.0, -2e8]"), "x.toml: axes.roll.plant.poles[1] = -2e+08: a root of magnitude 2e+08 rad/s sampled at loop_hz 1: the matrix the design samples the plant and sensor with reaches a norm ‖[A B]·T‖₁ of 2e+08, above the 1e+08 within which it samples them accurately; a root may be at most 1e+08 times loop_hz (about 1e+08 rad/s here)"},
		{"a root within", slow("[0.0, -9e7]"), ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := parseErr(t, c.src)
			switch {
			case c.want == "" && got != "":
				t.Errorf("valid file refused:\n%s", got)
			case c.want != "" && !strings.Contains(got, c.want):
				t.Errorf("error\n%s\nlacks\n%s", got, c.want)
			}
		})
	}
}
