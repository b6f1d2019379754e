package airframe

import (
	"errors"
	"strings"
	"testing"
)

// minimal is the smallest valid airframe file; the malformed cases are
// edits of it, so that each case carries exactly the problem it names.
const minimal = `airframe = "testbird"
loop_hz = 1000

[axes.roll.plant]
effectiveness = 2000.0
motor_tau = 0.025

[axes.roll.spec]
settling_time = 0.15
overshoot = 0.1
`

type malformedCase struct {
	name string
	src  string
	// want are substrings of the error text: the key path, the value as
	// written (where there is one) and what is allowed; a "\n" at the end
	// matches the end of a message. Every line must also start with the
	// file path; that is checked for all cases.
	want []string
	// count, when > 0, is the exact number of problems expected.
	count int
}

// edit replaces old by new in minimal; it fails the test when old is not
// there, so that a case cannot silently test the valid file.
func edit(tb testing.TB, old, new string) string {
	tb.Helper()
	if !strings.Contains(minimal, old) {
		tb.Fatalf("edit: %q not in minimal", old)
	}
	return strings.Replace(minimal, old, new, 1)
}

func withControl(lines string) string { return minimal + "\n[axes.roll.control]\n" + lines + "\n" }
func withSensor(lines string) string  { return minimal + "\n[axes.roll.sensor]\n" + lines + "\n" }
func withNumeric(lines string) string { return minimal + "\n[numeric]\n" + lines + "\n" }
func withEnvelope(lines string) string {
	return minimal + "\n[axes.roll.envelope]\n" + lines + "\n"
}

// withSpec adds lines to the spec table of minimal.
func withSpec(tb testing.TB, lines string) string {
	return edit(tb, "overshoot = 0.1\n", "overshoot = 0.1\n"+lines+"\n")
}

// zpkPlant replaces the physical plant of minimal by the given zpk lines.
func zpkPlant(tb testing.TB, lines string) string {
	return edit(tb, "effectiveness = 2000.0\nmotor_tau = 0.025\n", lines+"\n")
}

func malformedCases(tb testing.TB) []malformedCase {
	long33 := strings.Repeat("a", 33)
	return []malformedCase{
		// Unknown keys, listing the allowed ones.
		{name: "unknown top key", src: "colour = \"red\"\n" + minimal,
			want: []string{`colour = "red": unknown key; allowed at the top level: airframe, description, loop_hz, compute_delay, numeric, axes`}, count: 1},
		{name: "unknown spec key", src: edit(tb, "overshoot = 0.1", "overshoot = 0.1\novershot = 0.2"),
			want: []string{`axes.roll.spec.overshot = 0.2: unknown key; allowed in [axes.roll.spec]: settling_time, settling_band, overshoot, min_phase_margin, min_gain_margin, max_sensitivity, max_steady_error, hold_rate, disturbance_step, disturbance_recovery, max_noise_gain` + "\n"}, count: 1},
		{name: "unknown table", src: minimal + "\n[axes.roll.gyro]\nlowpass_hz = 90.0\n",
			want: []string{`axes.roll.gyro: unknown key; allowed in [axes.roll]: plant, sensor, spec, control, envelope, filter` + "\n"}, count: 1},
		{name: "unknown envelope key", src: withEnvelope("gain = [0.9, 1.1]"),
			want: []string{`axes.roll.envelope.gain = [0.9, 1.1]: unknown key; allowed in [axes.roll.envelope]: gain_scale, lag_scale, delay_add` + "\n"}, count: 1},
		{name: "unknown control key", src: withControl("kp = 0.1"),
			want: []string{`axes.roll.control.kp = 0.1: unknown key; allowed in [axes.roll.control]: form, refine`}, count: 1},

		// Wrong types.
		{name: "loop_hz string", src: edit(tb, "loop_hz = 1000", `loop_hz = "1000"`),
			want: []string{`loop_hz = "1000": must be a number > 0 and ≤ 1000000 (Hz), not a string`}, count: 1},
		{name: "airframe integer", src: edit(tb, `airframe = "testbird"`, `airframe = 7`),
			want: []string{`airframe = 7: must be a string`}, count: 1},
		{name: "description integer", src: "description = 5\n" + minimal,
			want: []string{`description = 5: must be a string (free text), not an integer`}, count: 1},
		{name: "refine string", src: withControl(`refine = "yes"`),
			want: []string{`axes.roll.control.refine = "yes": must be true or false, not a string`}, count: 1},
		{name: "plant not a table", src: edit(tb, "[axes.roll.plant]\neffectiveness = 2000.0\nmotor_tau = 0.025\n", "[axes.roll]\nplant = 3\n"),
			want: []string{`axes.roll.plant = 3: must be a table`}, count: 1},
		{name: "axis not a table", src: "airframe = \"testbird\"\nloop_hz = 1000\naxes = { roll = 3 }\n",
			want: []string{`axes.roll = 3: must be a table [axes.NAME] with plant and spec, not an integer`}, count: 1},
		{name: "poles string", src: zpkPlant(tb, "gain = 1.0\npoles = \"abc\""),
			want: []string{`axes.roll.plant.poles = "abc": must be an array of real numbers and pairs [re, im], not a string`}, count: 1},
		{name: "settling_time date", src: edit(tb, "settling_time = 0.15", "settling_time = 1979-05-27"),
			want: []string{`axes.roll.spec.settling_time = 1979-05-27: must be a number > 0 (s), not a date/time`}, count: 1},
		{name: "compute_delay float", src: "compute_delay = 1.5\n" + minimal,
			want: []string{`compute_delay = 1.5: must be an integer in 0..4 (samples), not a float`}, count: 1},

		// Missing required keys.
		{name: "missing settling_time", src: edit(tb, "settling_time = 0.15\n", ""),
			want: []string{`x.toml: axes.roll.spec.settling_time: required: a number > 0 (s)`}, count: 1},
		{name: "missing airframe", src: edit(tb, "airframe = \"testbird\"\n", ""),
			want: []string{`x.toml: airframe: required: a string (the airframe name, [a-z][a-z0-9_]{0,31})`}, count: 1},
		{name: "missing loop_hz", src: edit(tb, "loop_hz = 1000\n", ""),
			want: []string{`x.toml: loop_hz: required: a number > 0 and ≤ 1000000 (Hz)`}, count: 1},
		{name: "missing plant and spec", src: "airframe = \"testbird\"\nloop_hz = 1000\n[axes.roll.control]\nform = \"pi\"\n",
			want: []string{`axes.roll.plant: required: a table`, `axes.roll.spec: required: a table`}, count: 2},
		{name: "missing motor_tau", src: edit(tb, "motor_tau = 0.025\n", ""),
			want: []string{`axes.roll.plant.motor_tau: required: a number > 0 (s)`}, count: 1},
		{name: "empty plant", src: edit(tb, "effectiveness = 2000.0\nmotor_tau = 0.025\n", ""),
			want: []string{`axes.roll.plant: required: either gain and poles (zpk form) or effectiveness and motor_tau (physical form)`}, count: 1},
		{name: "zpk without poles", src: zpkPlant(tb, "gain = 100.0"),
			want: []string{`axes.roll.plant.poles: required`}, count: 1},

		// Non-finite numbers.
		{name: "overshoot nan", src: edit(tb, "overshoot = 0.1", "overshoot = nan"),
			want: []string{`axes.roll.spec.overshoot = nan: must be a finite number in (0, 1)`}, count: 1},
		{name: "loop_hz inf", src: edit(tb, "loop_hz = 1000", "loop_hz = inf"),
			want: []string{`loop_hz = inf: must be a finite number > 0 and ≤ 1000000 (Hz)`}, count: 1},
		{name: "gain -inf", src: zpkPlant(tb, "gain = -inf\npoles = [0.0, -40.0]"),
			want: []string{`axes.roll.plant.gain = -inf: must be a finite number ≠ 0`}, count: 1},
		{name: "pole nan", src: zpkPlant(tb, "gain = 1.0\npoles = [0.0, nan]"),
			want: []string{`axes.roll.plant.poles[1] = nan: must be a finite number`}, count: 1},
		{name: "pair inf", src: zpkPlant(tb, "gain = 1.0\npoles = [[-1.0, inf]]"),
			want: []string{`axes.roll.plant.poles[0] = [-1.0, inf]: a pair [re, im] must hold finite numbers`}, count: 1},

		// Ranges.
		{name: "motor_tau zero", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.0"),
			want: []string{`axes.roll.plant.motor_tau = 0.0: must be > 0 (s)`}, count: 1},
		{name: "motor_tau negative", src: edit(tb, "motor_tau = 0.025", "motor_tau = -0.02"),
			want: []string{`axes.roll.plant.motor_tau = -0.02: must be > 0 (s)`}, count: 1},
		{name: "effectiveness zero", src: edit(tb, "effectiveness = 2000.0", "effectiveness = 0"),
			want: []string{`axes.roll.plant.effectiveness = 0: must be > 0 (rad/s² per unit command)`}, count: 1},
		{name: "loop_hz zero", src: edit(tb, "loop_hz = 1000", "loop_hz = 0"),
			want: []string{`loop_hz = 0: must be > 0 and ≤ 1000000 (Hz)`}, count: 1},
		{name: "loop_hz negative", src: edit(tb, "loop_hz = 1000", "loop_hz = -1000.0"),
			want: []string{`loop_hz = -1000.0: must be > 0 and ≤ 1000000 (Hz)`}, count: 1},
		{name: "loop_hz huge", src: edit(tb, "loop_hz = 1000", "loop_hz = 2e6"),
			want: []string{`loop_hz = 2e+06: must be > 0 and ≤ 1000000 (Hz)`}, count: 1},
		{name: "overshoot above 1", src: edit(tb, "overshoot = 0.1", "overshoot = 1.4"),
			want: []string{`x.toml: axes.roll.spec.overshoot = 1.4: must be in (0, 1)`}, count: 1},
		{name: "overshoot zero", src: edit(tb, "overshoot = 0.1", "overshoot = 0"),
			want: []string{`axes.roll.spec.overshoot = 0: must be in (0, 1)`}, count: 1},
		{name: "overshoot one", src: edit(tb, "overshoot = 0.1", "overshoot = 1.0"),
			want: []string{`axes.roll.spec.overshoot = 1.0: must be in (0, 1)`}, count: 1},
		{name: "settling_time zero", src: edit(tb, "settling_time = 0.15", "settling_time = 0.0"),
			want: []string{`axes.roll.spec.settling_time = 0.0: must be > 0 (s)`}, count: 1},
		{name: "settling_time negative", src: edit(tb, "settling_time = 0.15", "settling_time = -0.1"),
			want: []string{`axes.roll.spec.settling_time = -0.1: must be > 0 (s)`}, count: 1},
		{name: "settling_band too wide", src: edit(tb, "overshoot = 0.1", "overshoot = 0.1\nsettling_band = 0.3"),
			want: []string{`axes.roll.spec.settling_band = 0.3: must be in (0, 0.2]`}, count: 1},
		{name: "phase margin 90", src: edit(tb, "overshoot = 0.1", "overshoot = 0.1\nmin_phase_margin = 90"),
			want: []string{`axes.roll.spec.min_phase_margin = 90: must be in [0, 90) (deg)`}, count: 1},
		{name: "gain margin negative", src: edit(tb, "overshoot = 0.1", "overshoot = 0.1\nmin_gain_margin = -6.0"),
			want: []string{`axes.roll.spec.min_gain_margin = -6.0: must be ≥ 0 (dB)`}, count: 1},
		{name: "delay too long", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = 0.6"),
			want: []string{`axes.roll.plant.delay = 0.6: must be in [0, 0.5] (s)`}, count: 1},
		{name: "delay negative", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = -0.001"),
			want: []string{`axes.roll.plant.delay = -0.001: must be in [0, 0.5] (s)`}, count: 1},
		{name: "gain zero", src: zpkPlant(tb, "gain = 0.0\npoles = [0.0]"),
			want: []string{`axes.roll.plant.gain = 0.0: must be ≠ 0`}, count: 1},

		// Identifiers.
		{name: "airframe uppercase", src: edit(tb, `"testbird"`, `"TestBird"`),
			want: []string{`airframe = "TestBird": must match [a-z][a-z0-9_]{0,31}`}, count: 1},
		{name: "airframe leading digit", src: edit(tb, `"testbird"`, `"9lives"`),
			want: []string{`airframe = "9lives": must match [a-z][a-z0-9_]{0,31}`}, count: 1},
		{name: "airframe 33 chars", src: edit(tb, `"testbird"`, `"`+long33+`"`),
			want: []string{`airframe = "` + long33 + `": must match`}, count: 1},
		{name: "airframe path", src: edit(tb, `"testbird"`, `"../x"`),
			want: []string{`airframe = "../x": must match [a-z][a-z0-9_]{0,31}`}, count: 1},
		{name: "airframe empty", src: edit(tb, `"testbird"`, `""`),
			want: []string{`airframe = "": must match`}, count: 1},
		{name: "airframe C keyword", src: edit(tb, `"testbird"`, `"int"`),
			want: []string{`airframe = "int": "int" is a C keyword`}, count: 1},
		{name: "airframe Go keyword", src: edit(tb, `"testbird"`, `"func"`),
			want: []string{`airframe = "func": "func" is a Go keyword`}, count: 1},
		{name: "airframe Go predeclared", src: edit(tb, `"testbird"`, `"len"`),
			want: []string{`airframe = "len": "len" is a Go predeclared identifier`}, count: 1},
		{name: "axis uppercase", src: strings.ReplaceAll(minimal, "axes.roll.", "axes.Roll."),
			want: []string{`x.toml: axes.Roll: axis name must match [a-z][a-z0-9_]{0,31}`}, count: 1},
		{name: "axis path", src: strings.ReplaceAll(minimal, "axes.roll.", `axes."../x".`),
			want: []string{`x.toml: axes."../x": axis name must match`}, count: 1},
		{name: "axis C keyword", src: strings.ReplaceAll(minimal, "axes.roll.", `axes.while.`),
			want: []string{`x.toml: axes.while: axis name "while" is a C keyword`}, count: 1},

		// Enumerations.
		{name: "unknown form", src: withControl(`form = "pdq"`),
			want: []string{`axes.roll.control.form = "pdq": must be one of "p", "pi", "pd", "pid", "lead"`}, count: 1},
		{name: "unknown numeric type", src: withNumeric(`type = "int8"`),
			want: []string{`numeric.type = "int8": must be one of "float32", "float64", "q15", "q31"`}, count: 1},
		{name: "unknown discretize", src: withControl(`discretize = "zoh"`),
			want: []string{`axes.roll.control.discretize = "zoh": must be one of "tustin", "tustin_prewarp", "backward", "forward"`}, count: 1},
		{name: "unknown antiwindup", src: withControl(`antiwindup = "freeze"`),
			want: []string{`axes.roll.control.antiwindup = "freeze": must be one of "none", "clamp", "backcalc"`}, count: 1},
		{name: "unknown derivative_on", src: withControl(`derivative_on = "setpoint"`),
			want: []string{`axes.roll.control.derivative_on = "setpoint": must be one of "measurement", "error"`}, count: 1},

		// Plant forms.
		{name: "both plant forms", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ngain = 80000.0\npoles = [0.0, -40.0]"),
			want: []string{`axes.roll.plant: both the zpk form (gain, poles) and the physical form (effectiveness, motor_tau) are given: use one`}, count: 1},
		{name: "improper plant", src: zpkPlant(tb, "gain = 1.0\npoles = [-1.0]\nzeros = [-2.0, -3.0]"),
			want: []string{`axes.roll.plant.zeros = [-2.0, -3.0]: improper: 2 zeros but 1 pole (a pair counts as 2)`}, count: 1},
		{name: "improper by pair", src: zpkPlant(tb, "gain = 1.0\npoles = [0.0]\nzeros = [[-5.0, 2.0]]"),
			want: []string{`axes.roll.plant.zeros = [[-5.0, 2.0]]: improper: 2 zeros but 1 pole`}, count: 1},

		// Malformed complex pairs.
		{name: "pair of one", src: zpkPlant(tb, "gain = 1.0\npoles = [0.0, [1.0]]"),
			want: []string{`axes.roll.plant.poles[1] = [1.0]: a pair must have 2 elements [re, im] (meaning re ± j·im), not 1`}, count: 1},
		{name: "pair of three", src: zpkPlant(tb, "gain = 1.0\npoles = [[1, 2, 3]]"),
			want: []string{`axes.roll.plant.poles[0] = [1, 2, 3]: a pair must have 2 elements`}, count: 1},
		{name: "pair with string", src: zpkPlant(tb, "gain = 1.0\npoles = [0.0, [\"a\", 1]]"),
			want: []string{`axes.roll.plant.poles[1] = ["a", 1]: a pair [re, im] must hold two numbers`}, count: 1},
		{name: "pair with zero im", src: zpkPlant(tb, "gain = 1.0\npoles = [[-3.0, 0]]"),
			want: []string{`axes.roll.plant.poles[0] = [-3.0, 0]: im = 0 is a real root: use a real number (-3.0)`}, count: 1},
		{name: "pair with negative im", src: zpkPlant(tb, "gain = 1.0\npoles = [[-3.0, -4.0]]"),
			want: []string{`axes.roll.plant.poles[0] = [-3.0, -4.0]: im must be > 0`}, count: 1},
		{name: "root string", src: zpkPlant(tb, "gain = 1.0\npoles = [0.0, \"s\"]"),
			want: []string{`axes.roll.plant.poles[1] = "s": must be a real number or a pair [re, im], not a string`}, count: 1},

		// Sensor.
		{name: "sensor both forms", src: withSensor("lowpass_hz = 90.0\ngain = 1.0"),
			want: []string{`axes.roll.sensor: both lowpass_hz and the zpk form (gain) are given: use one`}, count: 1},
		{name: "sensor lowpass zero", src: withSensor("lowpass_hz = 0.0"),
			want: []string{`axes.roll.sensor.lowpass_hz = 0.0: must be > 0 (Hz)`}, count: 1},
		{name: "sensor unstable pole", src: withSensor("gain = 500.0\npoles = [[0.5, 3.0], -500.0]"),
			want: []string{`axes.roll.sensor.poles[0] = [0.5, 3.0]: sensor poles must be stable (real part < 0)`}, count: 1},
		{name: "sensor integrator", src: withSensor("gain = 1.0\npoles = [0.0]"),
			want: []string{`axes.roll.sensor.poles[0] = 0.0: sensor poles must be stable`}, count: 1},
		{name: "sensor empty", src: withSensor(""),
			want: []string{`axes.roll.sensor: empty table`}, count: 1},

		// Control.
		{name: "inverted limits", src: withControl("output_limit = [1.0, -1.0]"),
			want: []string{`axes.roll.control.output_limit = [1.0, -1.0]: must be [low, high] with finite low < high and low ≤ 0 ≤ high`}, count: 1},
		{name: "zero-width limits", src: withControl("output_limit = [0.0, 0.0]"),
			want: []string{`axes.roll.control.output_limit = [0.0, 0.0]: must be [low, high] with finite low < high`}, count: 1},
		{name: "limits exclude zero", src: withControl("output_limit = [0.2, 0.8]"),
			want: []string{`axes.roll.control.output_limit = [0.2, 0.8]: must be [low, high]`}, count: 1},
		{name: "limits below zero", src: withControl("output_limit = [-0.8, -0.2]"),
			want: []string{`axes.roll.control.output_limit = [-0.8, -0.2]: must be [low, high]`}, count: 1},
		{name: "limits one element", src: withControl("output_limit = [1.0]"),
			want: []string{`axes.roll.control.output_limit = [1.0]: must be an array [low, high]`}, count: 1},
		{name: "limits nan", src: withControl("output_limit = [nan, 1.0]"),
			want: []string{`axes.roll.control.output_limit = [nan, 1.0]: must be [low, high] with finite`}, count: 1},
		{name: "compute_delay negative", src: "compute_delay = -1\n" + minimal,
			want: []string{`compute_delay = -1: must be an integer in 0..4 (samples)`}, count: 1},
		{name: "compute_delay 5", src: "compute_delay = 5\n" + minimal,
			want: []string{`compute_delay = 5: must be an integer in 0..4 (samples)`}, count: 1},
		{name: "tracking_time negative", src: withControl("tracking_time = -0.1"),
			want: []string{`axes.roll.control.tracking_time = -0.1: must be ≥ 0 (s; 0 picks the rule of thumb)`}, count: 1},
		{name: "tracking_time without backcalc", src: withControl("antiwindup = \"clamp\"\ntracking_time = 0.1"),
			want: []string{`axes.roll.control.tracking_time = 0.1: only for antiwindup = "backcalc" (antiwindup is "clamp")`}, count: 1},
		{name: "integrator_limit zero", src: withControl("integrator_limit = 0.0"),
			want: []string{`axes.roll.control.integrator_limit = 0.0: must be > 0 (command units)`}, count: 1},
		{name: "integrator_limit negative", src: withControl("integrator_limit = -0.5"),
			want: []string{`axes.roll.control.integrator_limit = -0.5: must be > 0`}, count: 1},
		{name: "integrator_limit on pd", src: withControl("form = \"pd\"\nintegrator_limit = 0.5"),
			want: []string{`axes.roll.control.integrator_limit = 0.5: only for forms with an integral ("pi", "pid") (form is "pd")`}, count: 1},
		{name: "derivative lowpass zero", src: withControl("derivative_lowpass_hz = 0.0"),
			want: []string{`axes.roll.control.derivative_lowpass_hz = 0.0: must be > 0 and below Nyquist (loop_hz/2 = 500) (Hz)`}, count: 1},
		{name: "derivative lowpass negative", src: withControl("derivative_lowpass_hz = -10"),
			want: []string{`axes.roll.control.derivative_lowpass_hz = -10: must be > 0 and below Nyquist`}, count: 1},
		{name: "derivative lowpass at Nyquist", src: withControl("derivative_lowpass_hz = 500.0"),
			want: []string{`axes.roll.control.derivative_lowpass_hz = 500.0: must be > 0 and below Nyquist (loop_hz/2 = 500) (Hz)`}, count: 1},
		{name: "derivative lowpass above Nyquist", src: withControl("derivative_lowpass_hz = 600"),
			want: []string{`axes.roll.control.derivative_lowpass_hz = 600: must be > 0 and below Nyquist (loop_hz/2 = 500)`}, count: 1},
		{name: "derivative lowpass on pi", src: withControl("form = \"pi\"\nderivative_lowpass_hz = 100.0"),
			want: []string{`axes.roll.control.derivative_lowpass_hz = 100.0: only for forms with a derivative ("pd", "pid") (form is "pi")`}, count: 1},
		{name: "third_pole one", src: withControl("third_pole = 1.0"),
			want: []string{`axes.roll.control.third_pole = 1.0: must be > 1 (multiple of the target's real part)`}, count: 1},
		{name: "third_pole on pi", src: withControl("form = \"pi\"\nthird_pole = 4.0"),
			want: []string{`axes.roll.control.third_pole = 4.0: only for form = "pid" (form is "pi")`}, count: 1},
		{name: "lead_zero on pid", src: withControl("lead_zero = -30.0"),
			want: []string{`axes.roll.control.lead_zero = -30.0: only for form = "lead" (form is "pid")`}, count: 1},
		{name: "lead without lead_zero", src: withControl("form = \"lead\""),
			want: []string{`axes.roll.control.lead_zero: required: a number < 0 (rad/s)`}, count: 1},
		{name: "lead_zero positive", src: withControl("form = \"lead\"\nlead_zero = 30.0"),
			want: []string{`axes.roll.control.lead_zero = 30.0: must be < 0 (rad/s)`}, count: 1},
		{name: "setpoint_weight above 1", src: withControl("setpoint_weight = 1.5"),
			want: []string{`axes.roll.control.setpoint_weight = 1.5: must be in [0, 1]`}, count: 1},
		{name: "setpoint_weight on lead", src: withControl("form = \"lead\"\nlead_zero = -30.0\nsetpoint_weight = 0.5"),
			want: []string{`axes.roll.control.setpoint_weight = 0.5: only for forms "p", "pi", "pd", "pid" (form is "lead")`}, count: 1},

		// Numeric.
		{name: "q15 without full scales", src: withNumeric(`type = "q15"`),
			want: []string{`numeric.input_full_scale: required for type = "q15"`, `numeric.output_full_scale: required for type = "q15"`}, count: 2},
		{name: "full scale negative", src: withNumeric("type = \"q31\"\ninput_full_scale = -1.0\noutput_full_scale = 1.0"),
			want: []string{`numeric.input_full_scale = -1.0: must be > 0`}, count: 1},

		// Spec: the robustness, steady-state and disturbance keys.
		{name: "max_sensitivity one", src: withSpec(tb, "max_sensitivity = 1.0"),
			want: []string{`axes.roll.spec.max_sensitivity = 1.0: must be in (1, 4] (Ms = max |1/(1 + L)|; usually 1.2 to 2)`}, count: 1},
		{name: "max_sensitivity above 4", src: withSpec(tb, "max_sensitivity = 4.5"),
			want: []string{`axes.roll.spec.max_sensitivity = 4.5: must be in (1, 4]`}, count: 1},
		{name: "max_sensitivity string", src: withSpec(tb, `max_sensitivity = "1.7"`),
			want: []string{`axes.roll.spec.max_sensitivity = "1.7": must be a number in (1, 4] (Ms = max |1/(1 + L)|; usually 1.2 to 2), not a string`}, count: 1},
		{name: "max_sensitivity nan", src: withSpec(tb, "max_sensitivity = nan"),
			want: []string{`axes.roll.spec.max_sensitivity = nan: must be a finite number in (1, 4]`}, count: 1},
		{name: "max_steady_error zero", src: withSpec(tb, "max_steady_error = 0"),
			want: []string{`axes.roll.spec.max_steady_error = 0: must be in (0, 1) (fraction of the setpoint)`}, count: 1},
		{name: "max_steady_error one", src: withSpec(tb, "max_steady_error = 1.0"),
			want: []string{`axes.roll.spec.max_steady_error = 1.0: must be in (0, 1) (fraction of the setpoint)`}, count: 1},
		{name: "hold_rate zero", src: withSpec(tb, "hold_rate = 0.0"),
			want: []string{`axes.roll.spec.hold_rate = 0.0: must be > 0 (rad/s)`}, count: 1},
		{name: "hold_rate negative", src: withSpec(tb, "hold_rate = -3"),
			want: []string{`axes.roll.spec.hold_rate = -3: must be > 0 (rad/s)`}, count: 1},
		{name: "hold_rate inf", src: withSpec(tb, "hold_rate = inf"),
			want: []string{`axes.roll.spec.hold_rate = inf: must be a finite number > 0 (rad/s)`}, count: 1},
		{name: "hold_rate above full scale", src: withSpec(tb, "hold_rate = 12.0") + "\n[numeric]\ninput_full_scale = 10.0\n",
			want: []string{`axes.roll.spec.hold_rate = 12.0: must be ≤ numeric.input_full_scale = 10 (rad/s): the setpoint cannot exceed what the numeric type represents`}, count: 1},
		{name: "hold_rate above q15 full scale", src: withSpec(tb, "hold_rate = 10.5") + "\n[numeric]\ntype = \"q15\"\ninput_full_scale = 10\noutput_full_scale = 1\n",
			want: []string{`axes.roll.spec.hold_rate = 10.5: must be ≤ numeric.input_full_scale = 10 (rad/s)`}, count: 1},
		// An invalid full scale is reported once, not again at hold_rate.
		{name: "hold_rate with bad full scale", src: withSpec(tb, "hold_rate = 12.0") + "\n[numeric]\ninput_full_scale = -10.0\n",
			want: []string{`numeric.input_full_scale = -10.0: must be > 0`}, count: 1},
		{name: "disturbance_step zero", src: withSpec(tb, "disturbance_step = 0"),
			want: []string{`axes.roll.spec.disturbance_step = 0: must be > 0 and ≤ 1, the larger |control.output_limit| (command units at the plant input; a larger load the actuator cannot cancel)`}, count: 1},
		{name: "disturbance_step above limit", src: withSpec(tb, "disturbance_step = 1.5"),
			want: []string{`axes.roll.spec.disturbance_step = 1.5: must be > 0 and ≤ 1, the larger |control.output_limit|`}, count: 1},
		{name: "disturbance_step above given limit", src: withSpec(tb, "disturbance_step = 0.35") + "\n[axes.roll.control]\noutput_limit = [-0.3, 0.25]\n",
			want: []string{`axes.roll.spec.disturbance_step = 0.35: must be > 0 and ≤ 0.3, the larger |control.output_limit|`}, count: 1},
		{name: "disturbance_step string", src: withSpec(tb, `disturbance_step = "10%"`),
			want: []string{`axes.roll.spec.disturbance_step = "10%": must be a number > 0 and ≤ 1, the larger |control.output_limit|`, `not a string`}, count: 1},
		// An invalid output limit is reported once, not again at the step.
		{name: "disturbance_step with bad limit", src: withSpec(tb, "disturbance_step = 5.0") + "\n[axes.roll.control]\noutput_limit = [1.0, -1.0]\n",
			want: []string{`axes.roll.control.output_limit = [1.0, -1.0]: must be [low, high]`}, count: 1},
		{name: "disturbance_recovery zero", src: withSpec(tb, "disturbance_recovery = 0"),
			want: []string{`axes.roll.spec.disturbance_recovery = 0: must be > 0 (s; omit the key for no check)`}, count: 1},
		{name: "disturbance_recovery negative", src: withSpec(tb, "disturbance_recovery = -0.1"),
			want: []string{`axes.roll.spec.disturbance_recovery = -0.1: must be > 0 (s; omit the key for no check)`}, count: 1},
		{name: "max_noise_gain zero", src: withSpec(tb, "max_noise_gain = 0.0"),
			want: []string{`axes.roll.spec.max_noise_gain = 0.0: must be > 0 (command units per rad/s; omit the key for the design's default)`}, count: 1},
		{name: "max_noise_gain boolean", src: withSpec(tb, "max_noise_gain = true"),
			want: []string{`axes.roll.spec.max_noise_gain = true: must be a number > 0 (command units per rad/s; omit the key for the design's default), not a boolean`}, count: 1},

		// Envelope.
		{name: "envelope not a table", src: minimal + "\n[axes.roll]\nenvelope = 3\n",
			want: []string{`axes.roll.envelope = 3: must be a table (gain_scale, lag_scale, delay_add), not an integer`}, count: 1},
		{name: "gain_scale inverted", src: withEnvelope("gain_scale = [1.1, 0.9]"),
			want: []string{`axes.roll.envelope.gain_scale = [1.1, 0.9]: low > high: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the plant's gain)`}, count: 1},
		{name: "gain_scale low zero", src: withEnvelope("gain_scale = [0, 1.1]"),
			want: []string{`axes.roll.envelope.gain_scale = [0, 1.1]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the plant's gain)`}, count: 1},
		{name: "gain_scale high above 10", src: withEnvelope("gain_scale = [0.9, 110]"),
			want: []string{`axes.roll.envelope.gain_scale = [0.9, 110]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "gain_scale above nominal", src: withEnvelope("gain_scale = [1.05, 1.2]"),
			want: []string{`axes.roll.envelope.gain_scale = [1.05, 1.2]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "gain_scale below nominal", src: withEnvelope("gain_scale = [0.8, 0.95]"),
			want: []string{`axes.roll.envelope.gain_scale = [0.8, 0.95]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "gain_scale number", src: withEnvelope("gain_scale = 1.1"),
			want: []string{`axes.roll.envelope.gain_scale = 1.1: must be an array [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the plant's gain), not a float`}, count: 1},
		{name: "gain_scale one element", src: withEnvelope("gain_scale = [0.9]"),
			want: []string{`axes.roll.envelope.gain_scale = [0.9]: must be an array of 2 numbers [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the plant's gain), not 1 element`}, count: 1},
		{name: "gain_scale string element", src: withEnvelope(`gain_scale = [0.9, "1.1"]`),
			want: []string{`axes.roll.envelope.gain_scale = [0.9, "1.1"]: must be two numbers [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "gain_scale nan", src: withEnvelope("gain_scale = [nan, 1.1]"),
			want: []string{`axes.roll.envelope.gain_scale = [nan, 1.1]: must be two finite numbers [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "lag_scale inf", src: withEnvelope("lag_scale = [1, inf]"),
			want: []string{`axes.roll.envelope.lag_scale = [1, inf]: must be two finite numbers [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the time constant of every non-zero plant pole)`}, count: 1},
		{name: "lag_scale negative", src: withEnvelope("lag_scale = [-0.5, 1.5]"),
			want: []string{`axes.roll.envelope.lag_scale = [-0.5, 1.5]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10 (factors on the time constant of every non-zero plant pole)`}, count: 1},
		{name: "lag_scale high above 10", src: withEnvelope("lag_scale = [0.5, 20.0]"),
			want: []string{`axes.roll.envelope.lag_scale = [0.5, 20.0]: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "lag_scale inverted", src: withEnvelope("lag_scale = [1.5, 0.5]"),
			want: []string{`axes.roll.envelope.lag_scale = [1.5, 0.5]: low > high: must be [low, high] with 0.1 ≤ low ≤ 1 ≤ high ≤ 10`}, count: 1},
		{name: "delay_add low positive", src: withEnvelope("delay_add = [0.001, 0.002]"),
			want: []string{`axes.roll.envelope.delay_add = [0.001, 0.002]: must be [low, high] with low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ 0.5 (s; plant.delay is 0)`}, count: 1},
		{name: "delay_add below zero delay", src: withEnvelope("delay_add = [-0.001, 0.0]"),
			want: []string{`axes.roll.envelope.delay_add = [-0.001, 0.0]: must be [low, high] with low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ 0.5 (s; plant.delay is 0)`}, count: 1},
		{name: "delay_add below plant delay", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = 0.002") + "\n[axes.roll.envelope]\ndelay_add = [-0.003, 0.001]\n",
			want: []string{`axes.roll.envelope.delay_add = [-0.003, 0.001]: must be [low, high] with low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ 0.5 (s; plant.delay is 0.002)`}, count: 1},
		{name: "delay_add beyond max delay", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = 0.002") + "\n[axes.roll.envelope]\ndelay_add = [0, 0.499]\n",
			want: []string{`axes.roll.envelope.delay_add = [0, 0.499]: must be [low, high] with low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ 0.5 (s; plant.delay is 0.002)`}, count: 1},
		{name: "delay_add high negative", src: withEnvelope("delay_add = [-0.002, -0.001]"),
			want: []string{`axes.roll.envelope.delay_add = [-0.002, -0.001]: must be [low, high] with low ≤ 0 ≤ high`}, count: 1},
		{name: "delay_add inverted", src: withEnvelope("delay_add = [0.001, -0.001]"),
			want: []string{`axes.roll.envelope.delay_add = [0.001, -0.001]: low > high: must be [low, high] with low ≤ 0 ≤ high`}, count: 1},
		{name: "delay_add string", src: withEnvelope(`delay_add = "2 ms"`),
			want: []string{`axes.roll.envelope.delay_add = "2 ms": must be an array [low, high] with low ≤ 0 ≤ high`, `not a string`}, count: 1},
		// An invalid plant delay is reported once; the added delay is then
		// only held to ±0.5 s.
		{name: "delay_add with bad plant delay", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = -1.0") + "\n[axes.roll.envelope]\ndelay_add = [-0.001, 0.001]\n",
			want: []string{`axes.roll.plant.delay = -1.0: must be in [0, 0.5] (s)`}, count: 1},
		{name: "delay_add huge with bad plant delay", src: edit(tb, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = -1.0") + "\n[axes.roll.envelope]\ndelay_add = [0, 0.6]\n",
			want: []string{`axes.roll.plant.delay = -1.0: must be in [0, 0.5] (s)`,
				`axes.roll.envelope.delay_add = [0, 0.6]: must be [low, high] with -0.5 ≤ low ≤ 0 ≤ high ≤ 0.5 (s, added to plant.delay)`}, count: 2},

		// Whole-file problems.
		{name: "empty axes", src: "airframe = \"testbird\"\nloop_hz = 1000\n[axes]\n",
			want: []string{`x.toml: axes: at least one axis required`}, count: 1},
		{name: "no axes", src: "airframe = \"testbird\"\nloop_hz = 1000\n",
			want: []string{`x.toml: axes: required: a table`}, count: 1},
		{name: "empty file", src: "",
			want: []string{`x.toml: empty file`}, count: 1},
		{name: "blank file", src: " \n\t\n",
			want: []string{`x.toml: empty file`}, count: 1},
		{name: "comments only", src: "# nothing here\n",
			want: []string{`x.toml: airframe: required`, `x.toml: axes: required`, `x.toml: loop_hz: required`}, count: 3},
		{name: "binary NUL", src: "\x7fELF\x02\x01\x01\x00\x00\x00",
			want: []string{`x.toml: line 1, column 8: not a text file (NUL byte)`}, count: 1},
		{name: "invalid UTF-8", src: "airframe = \"ok\"\nloop_hz = 1000 # \xff\xfe\n",
			want: []string{`x.toml: line 2, column 18: not a text file (invalid UTF-8)`}, count: 1},
		{name: "syntax error", src: "airframe = \"testbird\"\nloop_hz = = 1000\n",
			want: []string{`x.toml: line 2, column 11: TOML syntax error:`}, count: 1},
		{name: "duplicate key", src: "loop_hz = 500\n" + minimal,
			want: []string{`x.toml: line 3, column 1: TOML syntax error: key loop_hz is already defined`}, count: 1},

		// Several problems in one file: all of them, sorted by key path.
		{name: "many problems", src: "airframe = \"Bad Name\"\nloop_hz = -5\ncompute_delay = 9\n" +
			"[axes.roll.plant]\nmotor_tau = 0\neffectiveness = nan\n[axes.roll.spec]\novershoot = 2\n" +
			"[axes.roll.control]\nform = \"pdq\"\noutput_limit = [1, -1]\n",
			want: []string{
				`airframe = "Bad Name": must match`,
				`axes.roll.control.form = "pdq": must be one of`,
				`axes.roll.control.output_limit = [1, -1]: must be [low, high]`,
				`axes.roll.plant.effectiveness = nan: must be a finite number > 0`,
				`axes.roll.plant.motor_tau = 0: must be > 0 (s)`,
				`axes.roll.spec.overshoot = 2: must be in (0, 1)`,
				`axes.roll.spec.settling_time: required`,
				`compute_delay = 9: must be an integer in 0..4`,
				`loop_hz = -5: must be > 0`,
			}, count: 9},
	}
}

func TestMalformed(t *testing.T) {
	cases := malformedCases(t)
	if len(cases) < 25 {
		t.Fatalf("only %d malformed cases", len(cases))
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			f, err := Parse("x.toml", []byte(tc.src))
			if err == nil {
				t.Fatalf("no error; got %+v", f)
			}
			if f != nil {
				t.Errorf("got a File together with an error")
			}
			var errs *Errors
			if !errors.As(err, &errs) {
				t.Fatalf("error %T is not *Errors: %v", err, err)
			}
			msg := err.Error()
			// Every line ends in "\n" here, so that a want ending in "\n"
			// pins the end of its message (a complete list of keys).
			for _, w := range tc.want {
				if !strings.Contains(msg+"\n", w) {
					t.Errorf("error does not mention %q; got:\n%s", w, msg)
				}
			}
			if tc.count > 0 && len(errs.List) != tc.count {
				t.Errorf("%d problems, want %d:\n%s", len(errs.List), tc.count, msg)
			}
			for _, line := range strings.Split(msg, "\n") {
				if !strings.HasPrefix(line, "x.toml: ") {
					t.Errorf("line does not start with the file path: %q", line)
				}
			}
			for _, fe := range errs.List {
				if fe.Path != "x.toml" || fe.Msg == "" {
					t.Errorf("incomplete FieldError %+v", fe)
				}
			}
		})
	}
}

// TestMalformedOrder checks that the problems of the "many problems" case
// come sorted by key path, in the order its want list gives.
func TestMalformedOrder(t *testing.T) {
	for _, tc := range malformedCases(t) {
		if tc.name != "many problems" {
			continue
		}
		_, err := Parse("x.toml", []byte(tc.src))
		var errs *Errors
		if !errors.As(err, &errs) {
			t.Fatalf("want *Errors, got %v", err)
		}
		if len(errs.List) != len(tc.want) {
			t.Fatalf("%d problems, want %d:\n%v", len(errs.List), len(tc.want), err)
		}
		for i, fe := range errs.List {
			if !strings.Contains(fe.Error(), tc.want[i]) {
				t.Errorf("problem %d is %q, want one mentioning %q", i, fe.Error(), tc.want[i])
			}
		}
		return
	}
	t.Fatal("case not found")
}

// TestMessageFormat pins the exact text of the message kinds.
func TestMessageFormat(t *testing.T) {
	cases := []struct{ src, want string }{
		// The example of the README, "The airframe file".
		{edit(t, "overshoot = 0.1", "overshoot = 1.4"), "examples/x.toml: axes.roll.spec.overshoot = 1.4: must be in (0, 1)"},
		{edit(t, "settling_time = 0.15\n", ""), "examples/x.toml: axes.roll.spec.settling_time: required: a number > 0 (s)"},
		{"a = = 1\n", "examples/x.toml: line 1, column 5: TOML syntax error: unexpected character U+003D '=' at start of value"},
	}
	for _, tc := range cases {
		_, err := Parse("examples/x.toml", []byte(tc.src))
		if err == nil || err.Error() != tc.want {
			t.Errorf("got  %v\nwant %s", err, tc.want)
		}
	}
}

func TestErrorsUnwrap(t *testing.T) {
	_, err := Parse("x.toml", []byte(edit(t, "overshoot = 0.1", "overshoot = 1.4")))
	var fe *FieldError
	if !errors.As(err, &fe) {
		t.Fatalf("errors.As(*FieldError) failed on %v", err)
	}
	want := FieldError{Path: "x.toml", Key: "axes.roll.spec.overshoot", Value: "1.4", Msg: "must be in (0, 1)"}
	if *fe != want {
		t.Errorf("got %+v, want %+v", *fe, want)
	}
}

func TestCompareKeys(t *testing.T) {
	// Digit runs compare by value; '.' and '[' sort before name characters.
	ordered := []string{"", "axes", "axes.roll", "axes.roll.plant.poles[2]", "axes.roll.plant.poles[10]", "axes.roll_b", "loop_hz"}
	for i := 0; i+1 < len(ordered); i++ {
		if c := compareKeys(ordered[i], ordered[i+1]); c >= 0 {
			t.Errorf("compareKeys(%q, %q) = %d, want < 0", ordered[i], ordered[i+1], c)
		}
		if c := compareKeys(ordered[i+1], ordered[i]); c <= 0 {
			t.Errorf("compareKeys(%q, %q) = %d, want > 0", ordered[i+1], ordered[i], c)
		}
	}
	if c := compareKeys("a[3]", "a[3]"); c != 0 {
		t.Errorf("equal keys compare %d", c)
	}
}
