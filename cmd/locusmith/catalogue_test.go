package main

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// badInput is one kind of bad input of the catalogue: the file, the key
// the message must name (after "FILE: ") and the allowed range or rule
// it must state.
type badInput struct {
	name    string
	content string
	key     string // "" for a problem of the whole file
	allowed string
}

// addTo inserts lines after the header of the table [section] of the
// valid airframe (or at the top for "").
func addTo(t *testing.T, section, lines string) string {
	t.Helper()
	if section == "" {
		return lines + "\n" + valid
	}
	h := "[" + section + "]\n"
	if strings.Count(valid, h) != 1 {
		t.Fatalf("addTo: no table [%s] in the valid airframe", section)
	}
	return strings.Replace(valid, h, h+lines+"\n", 1)
}

// withTable appends a table to the valid airframe.
func withTable(section, lines string) string {
	return valid + "\n[" + section + "]\n" + lines + "\n"
}

// manyAxes returns the valid airframe with n axes (copies of roll).
func manyAxes(n int) string {
	var b strings.Builder
	b.WriteString("airframe = \"testcraft\"\nloop_hz = 1000.0\n")
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "[axes.a%d.plant]\neffectiveness = 2400.0\nmotor_tau = 0.03\n[axes.a%d.spec]\nsettling_time = 0.15\novershoot = 0.1\n", i, i)
	}
	return b.String()
}

// manyKeys returns the valid airframe with n unknown top-level keys.
func manyKeys(n int) string {
	var b strings.Builder
	for i := 0; i < n; i++ {
		fmt.Fprintf(&b, "k%d = 1\n", i)
	}
	return b.String() + valid
}

func badInputCatalogue(t *testing.T) []badInput {
	plantZPK := func(lines string) string {
		return edit(t, "effectiveness = 2400.0\nmotor_tau = 0.03\n", lines+"\n")
	}
	const lead = "form = \"lead\"\nlead_zero = -30.0"
	return []badInput{
		// Top level.
		{"loop_hz string", edit(t, "loop_hz = 1000.0", `loop_hz = "fast"`), "loop_hz", "must be a number > 0 and ≤ 1000000 (Hz), not a string"},
		{"loop_hz zero", edit(t, "loop_hz = 1000.0", "loop_hz = 0.0"), "loop_hz", "must be > 0 and ≤ 1000000 (Hz)"},
		{"loop_hz too fast", edit(t, "loop_hz = 1000.0", "loop_hz = 2e6"), "loop_hz", "must be > 0 and ≤ 1000000 (Hz)"},
		{"loop_hz nan", edit(t, "loop_hz = 1000.0", "loop_hz = nan"), "loop_hz", "must be a finite number > 0 and ≤ 1000000 (Hz)"},
		{"loop_hz missing", edit(t, "loop_hz = 1000.0\n", ""), "loop_hz", "required: a number > 0 and ≤ 1000000 (Hz)"},
		{"compute_delay 5", edit(t, "compute_delay = 1", "compute_delay = 5"), "compute_delay", "must be an integer in 0..4 (samples)"},
		{"compute_delay float", edit(t, "compute_delay = 1", "compute_delay = 1.5"), "compute_delay", "must be an integer in 0..4 (samples), not a float"},
		{"airframe uppercase", edit(t, `airframe = "testcraft"`, `airframe = "TestCraft"`), "airframe", "must match [a-z][a-z0-9_]{0,31}"},
		{"airframe keyword", edit(t, `airframe = "testcraft"`, `airframe = "static"`), "airframe", `"static" is a C keyword`},
		{"airframe missing", edit(t, "airframe = \"testcraft\"\n", ""), "airframe", "required: a string (the airframe name, [a-z][a-z0-9_]{0,31})"},
		{"description escape", edit(t, `description = "demo data: test airframe"`, `description = "demo data: \u001b[31mred"`), "description", "U+001B, a control character; free text may hold no control characters but tab and line breaks"},
		{"description bidi", edit(t, `description = "demo data: test airframe"`, `description = "demo data: `+"\u202e"+`evil"`), "description", "U+202E, a bidirectional control"},
		{"description integer", edit(t, `description = "demo data: test airframe"`, `description = 5`), "description", "must be a string (free text), not an integer"},
		{"unknown top key", addTo(t, "", "loop_rate = 3"), "loop_rate", "unknown key; allowed at the top level: airframe, description, loop_hz, compute_delay, numeric, axes"},

		// [numeric].
		{"numeric type", edit(t, `type = "float32"`, `type = "float16"`), "numeric.type", `must be one of "float32", "float64", "q15", "q31"`},
		{"q15 without full scales", edit(t, `type = "float32"`, `type = "q15"`), "numeric.input_full_scale", `required for type = "q15": a number > 0`},
		{"full scale negative", addTo(t, "numeric", "input_full_scale = -1.0"), "numeric.input_full_scale", "must be > 0 (rate units"},
		{"numeric not a table", strings.Replace(valid, "[numeric]\ntype = \"float32\"\n", "numeric = 3\n", 1), "numeric", "must be a table (type, input_full_scale, output_full_scale), not an integer"},

		// [axes].
		{"no axis", "airframe = \"x\"\nloop_hz = 100.0\n[axes]\n", "axes", "at least one axis required"},
		{"too many axes", manyAxes(65), "axes", "65 axes: at most 64 per file"},
		{"axis name uppercase", strings.ReplaceAll(valid, "axes.roll.", "axes.Roll."), "axes.Roll", "axis name must match [a-z][a-z0-9_]{0,31}"},
		{"axis name keyword", strings.ReplaceAll(valid, "axes.roll.", "axes.while."), "axes.while", `axis name "while" is a C keyword`},

		// [axes.NAME.plant].
		{"motor_tau zero", edit(t, "motor_tau = 0.03", "motor_tau = 0.0"), "axes.roll.plant.motor_tau", "must be > 0 (s)"},
		{"effectiveness negative", edit(t, "effectiveness = 2400.0", "effectiveness = -2400.0"), "axes.roll.plant.effectiveness", "must be > 0 (rad/s² per unit command)"},
		{"delay too long", edit(t, "delay = 0.002", "delay = 0.6"), "axes.roll.plant.delay", "must be in [0, 0.5] (s)"},
		{"delay a rounding", edit(t, "delay = 0.002", "delay = 1e-12"), "axes.roll.plant.delay", "a delay below 1e-09 s is no delay at any loop rate (loop_hz ≤ 1e+06): write 0"},
		{"both plant forms", edit(t, "motor_tau = 0.03\n", "motor_tau = 0.03\ngain = 5.0\npoles = [0.0]\n"), "axes.roll.plant", "both the zpk form (gain, poles) and the physical form (effectiveness, motor_tau) are given: use one"},
		{"improper plant", plantZPK("gain = 5.0\npoles = [-1.0]\nzeros = [-2.0, -3.0]"), "axes.roll.plant.zeros", "improper: 2 zeros but 1 pole (a pair counts as 2); at most as many zeros as poles"},
		{"pair of three", plantZPK("gain = 5.0\npoles = [0.0, [-1.0, 2.0, 3.0]]"), "axes.roll.plant.poles[1]", "a pair must have 2 elements [re, im] (meaning re ± j·im)"},
		{"pair negative im", plantZPK("gain = 5.0\npoles = [0.0, [-1.0, -2.0]]"), "axes.roll.plant.poles[1]", "im must be > 0"},
		{"pole nan", plantZPK("gain = 5.0\npoles = [0.0, nan]"), "axes.roll.plant.poles[1]", "must be a finite number"},
		{"plant order", plantZPK("gain = 5.0\npoles = [0.0, -1.0, -2.0, -3.0, -4.0, -5.0, -6.0, -7.0, -8.0, -9.0, -10.0, -11.0, [-12.0, 1.0]]"), "axes.roll.plant.poles", "14 poles (a pair counts as 2): at most 12"},
		{"pole beyond 1e9", plantZPK("gain = 5.0e12\npoles = [0.0, -1.0e12]"), "axes.roll.plant.poles[1]", "beyond 1e+09 rad/s, no dynamics of a rate loop"},
		{"pole a rounding", plantZPK("gain = 5.0\npoles = [0.0, -1.0e-12]"), "axes.roll.plant.poles[1]", "below 1e-09 rad/s: an integrator, write it as 0"},
		{"motor_tau tiny", edit(t, "motor_tau = 0.03", "motor_tau = 1e-12"), "axes.roll.plant.motor_tau", "the motor's pole −1/motor_tau: magnitude 1e+12 rad/s is beyond 1e+09 rad/s"},
		{"effectiveness tiny", edit(t, "effectiveness = 2400.0", "effectiveness = 1e-30"), "axes.roll.plant.effectiveness", "the design's arithmetic and the generated code hold gain scales in [1e-12, 1e+12]"},
		{"effectiveness huge", edit(t, "effectiveness = 2400.0", "effectiveness = 1e30"), "axes.roll.plant.effectiveness", "hold gain scales in [1e-12, 1e+12]: check the units (rad/s² per unit command)"},
		{"zpk gain tiny", plantZPK("gain = 1e-300\npoles = [0.0, -33.0]"), "axes.roll.plant.gain", "hold gain scales in [1e-12, 1e+12]"},
		{"zpk gain zero", plantZPK("gain = 0.0\npoles = [0.0, -33.0]"), "axes.roll.plant.gain", "must be ≠ 0"},

		// Delay samples and horizons.
		{"delay samples", edit(t, "delay = 0.002", "delay = 0.3"), "axes.roll.plant.delay", "the sampled loop would carry 301 samples of delay (compute_delay 1 + (plant.delay 0.3 s) · loop_hz 1000), more than the 256 that bound the design's cost: at this loop rate and compute delay the delay may be at most 0.255 s"},
		{"delay samples with the envelope", withTable("axes.roll.envelope", "delay_add = [0, 0.3]"), "axes.roll.plant.delay", "(compute_delay 1 + (plant.delay 0.002 s + envelope.delay_add high end 0.3 s) · loop_hz 1000), more than the 256"},
		{"delay samples at 1 MHz", edit(t, "loop_hz = 1000.0", "loop_hz = 1e6"), "axes.roll.plant.delay", "the sampled loop would carry 2001 samples of delay"},
		{"settling horizon", edit(t, "settling_time = 0.15", "settling_time = 30.0"), "axes.roll.spec.settling_time", "the design simulates 8 · settling_time · loop_hz = 2.4e+05 samples of every response, more than the 20000 that bound its cost: at loop_hz 1000, settling_time may be at most 2.5 s"},
		{"recovery horizon", addTo(t, "axes.roll.spec", "disturbance_recovery = 10.0"), "axes.roll.spec.disturbance_recovery", "8 · disturbance_recovery · loop_hz = 8e+04 samples"},
		{"settling in a sample", edit(t, "settling_time = 0.15", "settling_time = 1e-9"), "axes.roll.spec.settling_time", "shorter than 2 samples at loop_hz 1000 (0.002 s): a sampled loop cannot settle faster than it samples"},

		// [axes.NAME.sensor].
		{"sensor lowpass zero", edit(t, "lowpass_hz = 100.0", "lowpass_hz = 0.0"), "axes.roll.sensor.lowpass_hz", "must be > 0 (Hz)"},
		{"sensor lowpass 1e12", edit(t, "lowpass_hz = 100.0", "lowpass_hz = 1e12"), "axes.roll.sensor.lowpass_hz", "the lowpass pole −2π·lowpass_hz: magnitude"},
		{"sensor both forms", edit(t, "lowpass_hz = 100.0", "lowpass_hz = 100.0\ngain = 1.0"), "axes.roll.sensor", "both lowpass_hz and the zpk form (gain) are given: use one"},
		{"sensor unstable", edit(t, "lowpass_hz = 100.0", "gain = 500.0\npoles = [[0.5, 3.0], -500.0]"), "axes.roll.sensor.poles[0]", "sensor poles must be stable (real part < 0)"},
		{"sensor empty", edit(t, "lowpass_hz = 100.0\n", ""), "axes.roll.sensor", "empty table: give lowpass_hz or gain/poles/zeros"},
		{"sensor in deg/s", edit(t, "lowpass_hz = 100.0", "gain = 57.2958"), "axes.roll.sensor.gain", "57.3 is the factor between deg/s and rad/s"},
		{"sensor without DC", edit(t, "lowpass_hz = 100.0", "gain = 100.0\npoles = [-100.0]\nzeros = [0.0]"), "axes.roll.sensor.gain", "it does not measure a steady rate at all"},
		{"sensor negative", edit(t, "lowpass_hz = 100.0", "gain = -1.0"), "axes.roll.sensor.gain", "is negative: the loop would push the rate away from the setpoint"},
		{"sensor scale", edit(t, "lowpass_hz = 100.0", "gain = 0.9"), "axes.roll.sensor.gain", "DC gain 1 within max_steady_error"},
		{"sensor order", edit(t, "lowpass_hz = 100.0", "gain = 1.0e14\npoles = [-100.0, -100.0, -100.0, -100.0, -100.0, -100.0, -100.0]"), "axes.roll.sensor.poles", "7 poles (a pair counts as 2): at most 6"},

		// [axes.NAME.spec].
		{"overshoot above 1", edit(t, "overshoot = 0.10", "overshoot = 1.4"), "axes.roll.spec.overshoot", "must be in (0, 1)"},
		{"overshoot nan", edit(t, "overshoot = 0.10", "overshoot = nan"), "axes.roll.spec.overshoot", "must be a finite number in (0, 1)"},
		{"settling zero", edit(t, "settling_time = 0.15", "settling_time = 0.0"), "axes.roll.spec.settling_time", "must be > 0 (s)"},
		{"settling missing", edit(t, "settling_time = 0.15\n", ""), "axes.roll.spec.settling_time", "required: a number > 0 (s)"},
		{"settling_band", addTo(t, "axes.roll.spec", "settling_band = 0.3"), "axes.roll.spec.settling_band", "must be in (0, 0.2]"},
		{"phase margin 90", edit(t, "min_phase_margin = 40.0", "min_phase_margin = 90.0"), "axes.roll.spec.min_phase_margin", "must be in [0, 90) (deg)"},
		{"gain margin negative", addTo(t, "axes.roll.spec", "min_gain_margin = -6.0"), "axes.roll.spec.min_gain_margin", "must be ≥ 0 (dB)"},
		{"max_sensitivity 1", addTo(t, "axes.roll.spec", "max_sensitivity = 1.0"), "axes.roll.spec.max_sensitivity", "must be in (1, 4] (Ms = max |1/(1 + L)|; usually 1.2 to 2)"},
		{"max_steady_error 1", addTo(t, "axes.roll.spec", "max_steady_error = 1.0"), "axes.roll.spec.max_steady_error", "must be in (0, 1) (fraction of the setpoint)"},
		{"hold_rate zero", addTo(t, "axes.roll.spec", "hold_rate = 0.0"), "axes.roll.spec.hold_rate", "must be > 0 (rad/s)"},
		{"hold_rate above full scale", strings.Replace(addTo(t, "axes.roll.spec", "hold_rate = 12.0"), "type = \"float32\"", "type = \"float32\"\ninput_full_scale = 10.0", 1), "axes.roll.spec.hold_rate", "must be ≤ numeric.input_full_scale = 10 (rad/s)"},
		{"disturbance_step above limit", addTo(t, "axes.roll.spec", "disturbance_step = 0.6"), "axes.roll.spec.disturbance_step", "must be > 0 and ≤ 0.5, the larger |control.output_limit|"},
		{"disturbance_recovery zero", addTo(t, "axes.roll.spec", "disturbance_recovery = 0.0"), "axes.roll.spec.disturbance_recovery", "must be > 0 (s; omit the key for no check)"},
		{"max_noise_gain zero", addTo(t, "axes.roll.spec", "max_noise_gain = 0.0"), "axes.roll.spec.max_noise_gain", "must be > 0 (command units per rad/s; omit the key for the design's default)"},
		{"unknown spec key", addTo(t, "axes.roll.spec", "rise_time = 0.01"), "axes.roll.spec.rise_time", "unknown key; allowed in [axes.roll.spec]: settling_time, settling_band, overshoot"},

		// [axes.NAME.control].
		{"unknown form", edit(t, `form = "pid"`, `form = "pidf"`), "axes.roll.control.form", `must be one of "p", "pi", "pd", "pid", "lead"`},
		{"limits inverted", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [0.5, -0.5]"), "axes.roll.control.output_limit", "must be [low, high] with finite low < high and low ≤ 0 ≤ high"},
		{"limits one element", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [0.5]"), "axes.roll.control.output_limit", "must be an array [low, high] with finite low < high"},
		{"limit below float32", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [-1e-46, 1e-46]"), "axes.roll.control.output_limit", `numeric.type = "float32" cannot hold -1e-46: it would become 0`},
		{"limit beyond float32", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [-1e39, 1e39]"), "axes.roll.control.output_limit", `numeric.type = "float32" cannot hold -1e+39: it would become infinite in the generated code; a nonzero value must have a magnitude in [1.1754943508222875e-38, 3.4028234663852886e+38]`},
		{"integrator_limit beyond float32", addTo(t, "axes.roll.control", "integrator_limit = 1e39"), "axes.roll.control.integrator_limit", `numeric.type = "float32" cannot hold 1e+39`},
		{"integrator_limit subnormal", addTo(t, "axes.roll.control", "integrator_limit = 1e-40"), "axes.roll.control.integrator_limit", "(or a subnormal that many FPUs flush to 0)"},
		{"integrator_limit zero", addTo(t, "axes.roll.control", "integrator_limit = 0.0"), "axes.roll.control.integrator_limit", "must be > 0 (command units)"},
		{"integrator_limit on pd", edit(t, `form = "pid"`, "form = \"pd\"\nintegrator_limit = 0.5"), "axes.roll.control.integrator_limit", `only for forms with an integral ("pi", "pid") (form is "pd")`},
		{"derivative filter above Nyquist", addTo(t, "axes.roll.control", "derivative_lowpass_hz = 600.0"), "axes.roll.control.derivative_lowpass_hz", "must be > 0 and below Nyquist (loop_hz/2 = 500) (Hz)"},
		{"derivative filter a rounding", addTo(t, "axes.roll.control", "derivative_lowpass_hz = 1e-12"), "axes.roll.control.derivative_lowpass_hz", "the filter's pole −2π·derivative_lowpass_hz: magnitude"},
		{"third_pole one", addTo(t, "axes.roll.control", "third_pole = 1.0"), "axes.roll.control.third_pole", "must be > 1 (multiple of the target's real part)"},
		{"lead without zero", edit(t, `form = "pid"`, `form = "lead"`), "axes.roll.control.lead_zero", "required: a number < 0 (rad/s)"},
		{"lead_zero positive", edit(t, `form = "pid"`, "form = \"lead\"\nlead_zero = 30.0"), "axes.roll.control.lead_zero", "must be < 0 (rad/s)"},
		{"lead_zero beyond 1e9", edit(t, `form = "pid"`, "form = \"lead\"\nlead_zero = -1e12"), "axes.roll.control.lead_zero", "beyond 1e+09 rad/s"},
		{"setpoint_weight", addTo(t, "axes.roll.control", "setpoint_weight = 1.5"), "axes.roll.control.setpoint_weight", "must be in [0, 1]"},
		{"setpoint_weight on lead", edit(t, `form = "pid"`, lead+"\nsetpoint_weight = 0.5"), "axes.roll.control.setpoint_weight", `only for forms "p", "pi", "pd", "pid" (form is "lead")`},
		{"tracking_time negative", addTo(t, "axes.roll.control", "tracking_time = -0.1"), "axes.roll.control.tracking_time", "must be ≥ 0 (s; 0 picks the rule of thumb)"},
		{"tracking_time without backcalc", addTo(t, "axes.roll.control", "antiwindup = \"clamp\"\ntracking_time = 0.1"), "axes.roll.control.tracking_time", `only for antiwindup = "backcalc" (antiwindup is "clamp")`},
		{"unknown antiwindup", addTo(t, "axes.roll.control", `antiwindup = "reset"`), "axes.roll.control.antiwindup", `must be one of "none", "clamp", "backcalc"`},
		{"unknown discretize", addTo(t, "axes.roll.control", `discretize = "matched"`), "axes.roll.control.discretize", `must be one of "tustin", "tustin_prewarp", "backward", "forward"`},
		{"unknown derivative_on", addTo(t, "axes.roll.control", `derivative_on = "setpoint"`), "axes.roll.control.derivative_on", `must be one of "measurement", "error"`},
		{"refine string", addTo(t, "axes.roll.control", `refine = "yes"`), "axes.roll.control.refine", "must be true or false, not a string"},

		// [axes.NAME.envelope].
		{"gain_scale low", withTable("axes.roll.envelope", "gain_scale = [0.05, 1.1]"), "axes.roll.envelope.gain_scale", "must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the plant's gain)"},
		{"lag_scale high", withTable("axes.roll.envelope", "lag_scale = [1, 20]"), "axes.roll.envelope.lag_scale", "0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the time constant of every non-zero plant pole)"},
		{"delay_add low positive", withTable("axes.roll.envelope", "delay_add = [0.001, 0.002]"), "axes.roll.envelope.delay_add", "must be [low, high] with low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ 0.5 (s; plant.delay is 0.002)"},
		{"delay_add to a rounding", withTable("axes.roll.envelope", "delay_add = [-0.001999999999, 0]"), "axes.roll.envelope.delay_add", "a delay below 1e-09 s is no delay at any loop rate"},
		{"envelope not a table", strings.Replace(valid, "[axes.roll.control]", "[axes.roll]\nenvelope = 3\n[axes.roll.control]", 1), "axes.roll.envelope", "must be a table (gain_scale, lag_scale, delay_add), not an integer"},

		// [[axes.NAME.filter]].
		{"filter hz above Nyquist", withTable("[axes.roll.filter]", "kind = \"lowpass\"\nhz = 600.0"), "axes.roll.filter[0].hz", "must be > 0 and below Nyquist (loop_hz/2 = 500) (Hz)"},
		{"filter notch without width", withTable("[axes.roll.filter]", "kind = \"notch\"\nhz = 120.0"), "axes.roll.filter[0].width_hz", "required: a number > 0 and below hz = 120"},
		{"filter notch band", withTable("[axes.roll.filter]", "kind = \"notch\"\nhz = 450.0\nwidth_hz = 150.0"), "axes.roll.filter[0].width_hz", "the band hz ± width_hz/2 = [375, 525] Hz must lie below Nyquist"},
		{"filter order 4", withTable("[axes.roll.filter]", "kind = \"lowpass\"\nhz = 100.0\norder = 4"), "axes.roll.filter[0].order", "must be an integer in 1..2"},
		{"filter hz auto", withTable("[axes.roll.filter]", "kind = \"notch\"\nhz = \"auto\"\nwidth_hz = 20.0"), "axes.roll.filter[0].hz", "no lightly damped mode of the plant or sensor (a pole pair with damping below 0.2)"},
		{"first-order lowpass on the derivative", withTable("[axes.roll.filter]", "kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0\norder = 1"), "axes.roll.filter[0].order", "control.derivative_lowpass_hz"},
		{"automatic filter on the derivative", withTable("[axes.roll.filter]", "kind = \"lowpass\"\nat = \"derivative\"\nhz = \"auto\""), "axes.roll.filter[0].hz", `"auto" is for filters at = "feedback"`},

		// The whole file.
		{"too many keys", manyKeys(6000), "", "keys and table headers, more than the 5184 an airframe file may have"},
		{"too many problems", manyKeys(150), "", "and 50 more problems, not listed: only the first 100 problems of a file are reported"},
		{"syntax error", "airframe = \"x\nloop_hz = ", "", "TOML syntax error"},
		{"empty file", "", "", "empty file: airframe, loop_hz and at least one [axes.NAME] table are required"},
		{"binary", "\x7fELF\x02\x01\x01\x00\x00\x00", "", "not a text file (NUL byte); an airframe file is UTF-8 TOML"},
		{"invalid UTF-8", "airframe = \"\xff\xfe\"\n", "", "not a text file (invalid UTF-8); an airframe file is UTF-8 TOML"},
	}
}

// TestBadInputCatalogue runs every kind of bad input of the catalogue
// through design and emit: exit status 2, a message that names the file
// and the key and says what is allowed, nothing on stdout, and nothing
// written (at least 80 kinds).
func TestBadInputCatalogue(t *testing.T) {
	cases := badInputCatalogue(t)
	keyed := 0
	for _, c := range cases {
		if c.key != "" {
			keyed++
		}
	}
	if keyed < 80 {
		t.Fatalf("the catalogue has %d kinds of bad input that name a key; the issue asks for at least 80", keyed)
	}
	dir := t.TempDir()
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p := writeFile(t, dir, fmt.Sprintf("case%03d.toml", i), tc.content)
			code, out, errs := runCLI(t, "design", p)
			if code != exitUsage {
				t.Fatalf("design: exit %d, want 2\nstdout:\n%s\nstderr:\n%s", code, out, errs)
			}
			named := p + ": "
			if tc.key != "" {
				named += tc.key
			}
			if !strings.Contains(errs, named) {
				t.Errorf("stderr does not name %q:\n%s", named, errs)
			}
			if !strings.Contains(errs, tc.allowed) {
				t.Errorf("stderr does not say what is allowed, %q:\n%s", tc.allowed, errs)
			}
			if out != "" {
				t.Errorf("stdout not empty:\n%s", out)
			}
			gen := filepath.Join(dir, fmt.Sprintf("gen%03d", i))
			if err := os.Mkdir(gen, 0o755); err != nil {
				t.Fatal(err)
			}
			code, out, errs = runCLI(t, "emit", "-o", gen, p)
			if code != exitUsage || !strings.Contains(errs, named) || !strings.Contains(errs, "nothing written") {
				t.Errorf("emit: exit %d, stderr:\n%s\nwant 2, naming %q, and nothing written", code, errs, named)
			}
			if es, _ := os.ReadDir(gen); len(es) != 0 || out != "" {
				t.Errorf("emit wrote %d files, stdout %q", len(es), out)
			}
		})
	}
}
