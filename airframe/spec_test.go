package airframe

import (
	"testing"
)

// TestSpecKeys checks the accepted values of the robustness, steady-state
// and disturbance keys of [axes.NAME.spec], and the defaults that follow
// other keys (the rejected values are in malformed_test.go).
func TestSpecKeys(t *testing.T) {
	cases := []struct {
		desc string
		src  string
		want func(s Spec) bool
	}{
		{"max_steady_error follows settling_band",
			withSpec(t, "settling_band = 0.05"),
			func(s Spec) bool { return s.Band == 0.05 && s.MaxSteadyError == 0.05 }},
		{"max_steady_error given",
			withSpec(t, "settling_band = 0.05\nmax_steady_error = 0.001"),
			func(s Spec) bool { return s.MaxSteadyError == 0.001 }},
		{"max_sensitivity at the upper bound 4, as an integer",
			withSpec(t, "max_sensitivity = 4"),
			func(s Spec) bool { return s.MaxSensitivity == 4 }},
		{"max_sensitivity just above 1",
			withSpec(t, "max_sensitivity = 1.0001"),
			func(s Spec) bool { return s.MaxSensitivity == 1.0001 }},
		{"hold_rate defaults to input_full_scale",
			withNumeric("input_full_scale = 10.0"),
			func(s Spec) bool { return s.HoldRate == 10 }},
		{"hold_rate defaults to the q15 input_full_scale",
			withNumeric("type = \"q15\"\ninput_full_scale = 7.5\noutput_full_scale = 1"),
			func(s Spec) bool { return s.HoldRate == 7.5 }},
		{"hold_rate equal to input_full_scale",
			withSpec(t, "hold_rate = 10") + "\n[numeric]\ninput_full_scale = 10.0\n",
			func(s Spec) bool { return s.HoldRate == 10 }},
		{"hold_rate below input_full_scale",
			withSpec(t, "hold_rate = 4.0") + "\n[numeric]\ninput_full_scale = 10.0\n",
			func(s Spec) bool { return s.HoldRate == 4 }},
		{"hold_rate without a full scale is not bounded",
			withSpec(t, "hold_rate = 500.0"),
			func(s Spec) bool { return s.HoldRate == 500 }},
		// Hand: 0.1 · max(|−0.2|, |0.8|) = 0.08; one rounded product, so
		// the tolerance is 1e-15 relative (half an ulp is 1.1e-16).
		{"disturbance_step follows output_limit",
			withControl("output_limit = [-0.2, 0.8]"),
			func(s Spec) bool { return relClose(s.DisturbanceStep, 0.08, 1e-15) }},
		{"disturbance_step at the larger |output_limit|",
			withSpec(t, "disturbance_step = 0.3") + "\n[axes.roll.control]\noutput_limit = [-0.3, 0.25]\n",
			func(s Spec) bool { return s.DisturbanceStep == 0.3 }},
		{"disturbance_step at the default limit 1, as an integer",
			withSpec(t, "disturbance_step = 1"),
			func(s Spec) bool { return s.DisturbanceStep == 1 }},
		{"every key given",
			withSpec(t, "max_sensitivity = 1.4\nmax_steady_error = 0.01\nhold_rate = 6.0\n"+
				"disturbance_step = 0.2\ndisturbance_recovery = 0.3\nmax_noise_gain = 0.05"),
			func(s Spec) bool {
				return s == Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.1,
					MaxSensitivity: 1.4, MaxSteadyError: 0.01, HoldRate: 6,
					DisturbanceStep: 0.2, DisturbanceRecovery: 0.3, MaxNoiseGain: 0.05}
			}},
	}
	for _, tc := range cases {
		f := mustParse(t, tc.src)
		if s := f.Axes[0].Spec; !tc.want(s) {
			t.Errorf("%s: got %+v", tc.desc, s)
		}
	}
}
