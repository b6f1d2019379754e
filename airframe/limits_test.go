package airframe

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
)

// parseErr parses src and returns the error text ("" when it is valid).
func parseErr(t *testing.T, src string) string {
	t.Helper()
	_, err := Parse("x.toml", []byte(src))
	if err == nil {
		return ""
	}
	var errs *Errors
	if !errors.As(err, &errs) {
		t.Fatalf("error %T is not *Errors: %v", err, err)
	}
	return err.Error()
}

// TestDelaySampleLimit: the delay the sampled loop carries,
// compute_delay + ⌈(plant.delay + delay_add high end)·loop_hz⌉ samples,
// is at most MaxDelaySamples; exactly at it the file is valid, one
// sample more is an error naming the key, the count and the longest
// delay allowed. The counts are worked by hand from
// the formula.
func TestDelaySampleLimit(t *testing.T) {
	with := func(hz float64, cd int, delay string, add string) string {
		s := strings.Replace(minimal, "loop_hz = 1000", fmt.Sprintf("loop_hz = %g\ncompute_delay = %d", hz, cd), 1)
		// A settling time within the horizon bound at every rate here.
		s = strings.Replace(s, "settling_time = 0.15", "settling_time = 0.002", 1)
		s = strings.Replace(s, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = "+delay, 1)
		if add != "" {
			s += "\n[axes.roll.envelope]\ndelay_add = " + add + "\n"
		}
		return s
	}
	cases := []struct {
		name string
		src  string
		want string // "" for valid
	}{
		// 1 + 0.255·1000 = 256.
		{"at the limit", with(1000, 1, "0.255", ""), ""},
		// 1 + 0.256·1000 = 257.
		{"one sample over", with(1000, 1, "0.256", ""), "axes.roll.plant.delay = 0.256: the sampled loop would carry 257 samples of delay (compute_delay 1 + (plant.delay 0.256 s) · loop_hz 1000), more than the 256 that bound the design's cost: at this loop rate and compute delay the delay may be at most 0.255 s"},
		// 4 + (0.2 + 0.052)·1000 = 256.
		{"envelope at the limit", with(1000, 4, "0.2", "[0, 0.052]"), ""},
		// 4 + (0.2 + 0.053)·1000 = 257: the plant's delay is named.
		{"envelope over", with(1000, 4, "0.2", "[0, 0.053]"), "axes.roll.plant.delay = 0.2: the sampled loop would carry 257 samples of delay (compute_delay 4 + (plant.delay 0.2 s + envelope.delay_add high end 0.053 s) · loop_hz 1000)"},
		// 0 + 0.000255·1e6 = 255; a fraction of a sample counts whole.
		{"1 MHz", with(1e6, 0, "0.000255", ""), ""},
		{"1 MHz and a fraction", with(1e6, 0, "0.0002565", ""), "carry 257 samples"},
		// 8 kHz, the fastest common flight controller loop: 31 ms.
		{"8 kHz", with(8000, 1, "0.031875", ""), ""},
	}
	for _, tc := range cases {
		got := parseErr(t, tc.src)
		switch {
		case tc.want == "" && got != "":
			t.Errorf("%s: %s", tc.name, got)
		case tc.want != "" && !strings.Contains(got, tc.want):
			t.Errorf("%s: got %q, want it to contain %q", tc.name, got, tc.want)
		}
	}
}

// TestHorizonLimit: 8 · settling_time · loop_hz (and 8 ·
// disturbance_recovery · loop_hz) samples are at most MaxHorizonSamples,
// and the settling time spans at least 2 samples.
func TestHorizonLimit(t *testing.T) {
	atLimit := float64(MaxHorizonSamples) / 8 / 1000 // s at 1 kHz
	cases := []struct {
		name, src, want string
	}{
		{"at the limit", edit(t, "settling_time = 0.15", fmt.Sprintf("settling_time = %g", atLimit)), ""},
		{"over", edit(t, "settling_time = 0.15", fmt.Sprintf("settling_time = %g", atLimit*1.001)),
			fmt.Sprintf("more than the %d that bound its cost: at loop_hz 1000, settling_time may be at most %s s", MaxHorizonSamples, fmtLimit(atLimit))},
		{"recovery at the limit", withSpec(t, fmt.Sprintf("disturbance_recovery = %g", atLimit)), ""},
		{"recovery over", withSpec(t, fmt.Sprintf("disturbance_recovery = %g", 2*atLimit)), "axes.roll.spec.disturbance_recovery = "},
		{"two samples", edit(t, "settling_time = 0.15", "settling_time = 0.002"), ""},
		{"under two samples", edit(t, "settling_time = 0.15", "settling_time = 0.0019"), "shorter than 2 samples at loop_hz 1000 (0.002 s)"},
	}
	for _, tc := range cases {
		got := parseErr(t, tc.src)
		switch {
		case tc.want == "" && got != "":
			t.Errorf("%s: %s", tc.name, got)
		case tc.want != "" && !strings.Contains(got, tc.want):
			t.Errorf("%s: got %q, want it to contain %q", tc.name, got, tc.want)
		}
	}
}

// TestFloat32Limits: what a float32 constant holds (IEEE 754 binary32:
// smallest normal 2^−126 = 1.1754944e−38, largest 3.4028235e+38, the
// values of C's FLT_MIN and FLT_MAX) bounds the output and integrator
// limits of a float32 controller, and only of one.
func TestFloat32Limits(t *testing.T) {
	if lo, hi := float64(minNormalFloat32), float64(maxFloat32); lo != float64(float32(1.17549435e-38)) || hi != float64(float32(3.40282347e+38)) {
		t.Fatalf("float32 range %g..%g, want FLT_MIN 1.17549435e-38 and FLT_MAX 3.40282347e+38 (C11 5.2.4.2.2)", float64(minNormalFloat32), float64(maxFloat32))
	}
	f32 := func(lines string) string { return withControl(lines) }
	f64 := func(lines string) string { return withControl(lines) + "\n[numeric]\ntype = \"float64\"\n" }
	cases := []struct {
		name, src, want string
	}{
		{"smallest normal", f32("output_limit = [-1.1754944e-38, 1.1754944e-38]"), ""},
		{"below it", f32("output_limit = [-1e-46, 1e-46]"), `axes.roll.control.output_limit = [-1e-46, 1e-46]: numeric.type = "float32" cannot hold -1e-46: it would become 0`},
		{"subnormal", f32("output_limit = [0.0, 1e-40]"), "cannot hold 1e-40"},
		{"largest", f32("output_limit = [-3.4e38, 3.4e38]"), ""},
		{"beyond", f32("output_limit = [-1.0, 3.5e38]"), "cannot hold 3.5e+38: it would become infinite"},
		{"default integrator limit beyond", f32("output_limit = [-1e39, 1]"), "axes.roll.control.output_limit = [-1e+39, 1]: numeric.type"},
		{"integrator limit beyond", f32("integrator_limit = 1e39"), "axes.roll.control.integrator_limit = 1e+39: numeric.type = \"float32\" cannot hold 1e+39"},
		{"integrator limit tiny", f32("integrator_limit = 1e-39"), "axes.roll.control.integrator_limit = 1e-39"},
		{"float64 holds them", f64("output_limit = [-1e-46, 1e-46]"), ""},
	}
	for _, tc := range cases {
		got := parseErr(t, tc.src)
		switch {
		case tc.want == "" && strings.Contains(got, "float32"):
			t.Errorf("%s: %s", tc.name, got)
		case tc.want != "" && !strings.Contains(got, tc.want):
			t.Errorf("%s: got %q, want it to contain %q", tc.name, got, tc.want)
		}
	}
}

// TestGainScale: 1/|G·H| near the spec's bandwidth ω = 4/settling_time
// must lie in [1e-12, 1e12]. For the minimal plant,
// G(jω) = e/(jω(τjω + 1)) with e = 2000, τ = 0.025 and settling 0.15 s,
// ω = 26.67 rad/s: |G| at ω/2 = 13.33 is 2000/(13.33·√(1 + 0.333²)) =
// 142.3 (by hand), the largest of ω/2, ω and 2ω; so the scale is
// 1/142.3 = 7.0e-3, and it crosses 1e12 at e = 2000·7.0e-3/1e12 =
// 1.4e-11 and 1e-12 at e = 2000·7.0e-3/1e-12 = 1.4e13.
func TestGainScale(t *testing.T) {
	cases := []struct {
		eff  string
		want string
	}{
		{"2000.0", ""},
		{"1.5e-11", ""},
		{"1.3e-11", "so the controller would need gains near 1e12 command units per rad/s"},
		{"1.3e13", ""},
		{"1.5e13", "near 1e-12 command units"},
	}
	for _, tc := range cases {
		got := parseErr(t, edit(t, "effectiveness = 2000.0", "effectiveness = "+tc.eff))
		switch {
		case tc.want == "" && got != "":
			t.Errorf("effectiveness %s: %s", tc.eff, got)
		case tc.want != "" && !strings.Contains(got, tc.want):
			t.Errorf("effectiveness %s: got %q, want it to contain %q", tc.eff, got, tc.want)
		}
	}
	// The scale of the worked example, from log10Mag.
	a := mustParse(t, minimal).Axes[0]
	w := 4 / 0.15
	if got, want := log10Mag(a.Plant.Model, complex(0, w/2)), math.Log10(2000/(w/2*math.Hypot(1, 0.025*w/2))); math.Abs(got-want) > 1e-12 {
		t.Errorf("log10 |G(jω/2)| = %v, want %v", got, want)
	}
}

// TestSensorDCGain: the loop regulates the measured rate, so a sensor
// whose DC gain H(0) differs from 1 by more than max_steady_error leaves
// the true rate at setpoint/H(0); such a sensor is an error naming
// sensor.gain. H(0) = gain·Π(−z)/Π(−p), worked by
// hand: gain 500 with a pole at −500 is 1; with −400 it is 1.25.
func TestSensorDCGain(t *testing.T) {
	cases := []struct {
		name, sensor, spec, want string
	}{
		{"lowpass", "lowpass_hz = 90.0", "", ""},
		{"unit zpk", "gain = 500.0\npoles = [-500.0]", "", ""},
		{"1.25", "gain = 500.0\npoles = [-400.0]", "", "the sensor's DC gain H(0) = 1.25: the loop holds the measured rate at the setpoint, so the true rate settles at setpoint/1.25, a steady-state error of 20 % against spec.max_steady_error 2 %"},
		{"1.25 within a loose spec", "gain = 500.0\npoles = [-400.0]", "max_steady_error = 0.25", ""},
		{"deg/s for rad/s", "gain = 57.29578", "", "57.3 is the factor between deg/s and rad/s"},
		{"rad/s for deg/s", "gain = 0.01745329", "", "0.01745 is the factor between deg/s and rad/s"},
		{"a zero at 0", "gain = 500.0\npoles = [-500.0]\nzeros = [0.0]", "", "it does not measure a steady rate at all"},
		{"inverted", "gain = -500.0\npoles = [-500.0]", "", "H(0) = -1 is negative"},
		{"a zero", "gain = 2.0\npoles = [-500.0]\nzeros = [-250.0]", "", ""},
	}
	for _, tc := range cases {
		src := withSensor(tc.sensor)
		if tc.spec != "" {
			src = strings.Replace(src, "overshoot = 0.1\n", "overshoot = 0.1\n"+tc.spec+"\n", 1)
		}
		got := parseErr(t, src)
		switch {
		case tc.want == "" && got != "":
			t.Errorf("%s: %s", tc.name, got)
		case tc.want != "" && (!strings.Contains(got, tc.want) || !strings.Contains(got, "axes.roll.sensor.gain")):
			t.Errorf("%s: got %q, want it to name axes.roll.sensor.gain and contain %q", tc.name, got, tc.want)
		}
	}
}

// TestKeyCountBound: countKeys bounds the keys of a file from above (every
// key and table header counted, strings and comments skipped), so that a
// valid file is never refused, and a file of many keys is refused before
// the TOML decoder's quadratic key check runs.
func TestKeyCountBound(t *testing.T) {
	cases := []struct {
		src  string
		want int
	}{
		{"a = 1\nb = 2\n", 2},
		{"[t]\nx = 1\n[[u]]\ny = 2\n", 4},
		{"a = \"x = y\" # c = d\n", 1},
		{"a = '''\nb = 1\n'''\n", 1},
		{"a = \"\"\"\n[b]\nc = \"\\\"\"\"\n", 1},
		{"a = [\n  [1, 2],\n  [3, 4],\n]\n", 1},
		{"a = { b = 1, c = { d = 2 } }\n", 4},
		{"  [ t . u ]  # x = y\nv = 1\n", 2},
		{"[\"a]=\"]\nb = 1\n", 2},
	}
	for _, tc := range cases {
		if got := countKeys([]byte(tc.src)); got != tc.want {
			t.Errorf("countKeys(%q) = %d, want %d", tc.src, got, tc.want)
		}
	}
	// Every example and test file is far below the bound.
	if n := countKeys([]byte(minimal)); n > 20 {
		t.Errorf("minimal has %d keys", n)
	}
	var b strings.Builder
	for i := 0; i <= MaxKeys; i++ {
		fmt.Fprintf(&b, "k%d = 1\n", i)
	}
	got := parseErr(t, b.String())
	if want := fmt.Sprintf("x.toml: %d keys and table headers, more than the %d an airframe file may have", MaxKeys+1, MaxKeys); got != want+fmt.Sprintf(" (at most %d axes of at most %d keys each)", MaxAxes, maxKeysPerAxis) {
		t.Errorf("got %q, want %q…", got, want)
	}
}

// TestErrorCap: beyond MaxErrors problems a file's errors are counted, not
// listed.
func TestErrorCap(t *testing.T) {
	var b strings.Builder
	for i := 0; i < MaxErrors+7; i++ {
		fmt.Fprintf(&b, "k%03d = 1\n", i)
	}
	_, err := Parse("x.toml", []byte(b.String()+minimal))
	var errs *Errors
	if !errors.As(err, &errs) {
		t.Fatalf("want *Errors, got %v", err)
	}
	if len(errs.List) != MaxErrors+1 {
		t.Errorf("%d lines, want %d problems and a count", len(errs.List), MaxErrors)
	}
	if last := errs.List[len(errs.List)-1].Error(); last != "x.toml: and 7 more problems, not listed: only the first 100 problems of a file are reported" {
		t.Errorf("last line %q", last)
	}
}

// TestSafeText: a file name or text with a control or bidirectional
// character is shown quoted, escapes visible; plain text as it is.
func TestSafeText(t *testing.T) {
	cases := []struct{ in, want string }{
		{"examples/quadrotor.toml", "examples/quadrotor.toml"},
		{"dir with space/ü.toml", "dir with space/ü.toml"},
		{"evil\x1b[2J.toml", `"evil\x1b[2J.toml"`},
		{"a\u202eb.toml", `"a\u202eb.toml"`},
		{"line\nbreak.toml", `"line\nbreak.toml"`},
		{"", ""},
	}
	for _, tc := range cases {
		if got := SafeText(tc.in); got != tc.want {
			t.Errorf("SafeText(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
	_, err := Parse("evil\x1b[2J.toml", []byte("x = 1\n"))
	if err == nil || strings.ContainsRune(err.Error(), 0x1b) {
		t.Errorf("an escape in the file name reached the message: %q", err)
	}
}
