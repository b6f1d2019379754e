package airframe

import (
	"errors"
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"locusmith/internal/lti"
)

func mustParse(t *testing.T, src string) *File {
	t.Helper()
	f, err := Parse("x.toml", []byte(src))
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	return f
}

// TestDefaults checks every default on the minimal file against the values
// the README states ("The airframe file"; the reason for each is beside it
// in defaults.go).
func TestDefaults(t *testing.T) {
	f := mustParse(t, minimal)
	if f.Airframe != "testbird" || f.Description != "" || f.Path != "x.toml" {
		t.Errorf("header: %q %q %q", f.Airframe, f.Description, f.Path)
	}
	// compute_delay 1 (command applied at the next tick), float32 with no
	// full scales.
	if want := (Loop{Hz: 1000, ComputeDelay: 1}); f.Loop != want {
		t.Errorf("Loop = %+v, want %+v", f.Loop, want)
	}
	if want := (Numeric{Type: Float32}); f.Numeric != want {
		t.Errorf("Numeric = %+v, want %+v", f.Numeric, want)
	}
	want := []Axis{{
		Name: "roll",
		// Hand formula: effectiveness/motor_tau = 2000/0.025 = 80000,
		// poles 0 and −1/0.025 = −40.
		Plant:  Plant{Model: lti.ZPK{Gain: 80000, Poles: []complex128{0, -40}}, Delay: 0},
		Sensor: lti.ZPK{Gain: 1}, // ideal
		Spec: Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.1,
			MinPhaseMargin: 0, MinGainMargin: 0,
			MaxSensitivity:      1.7,  // between Åström-Hägglund's 1.4 and 2.0
			MaxSteadyError:      0.02, // the settling band
			HoldRate:            0,    // no input_full_scale: not asked
			DisturbanceStep:     0.1,  // 0.1·max(|−1|, |1|)
			DisturbanceRecovery: 0,    // not checked
			MaxNoiseGain:        0,    // the design's default
		},
		Ctrl: Control{
			Form:                FormPID,
			Refine:              true,
			ThirdPole:           5,
			LeadZero:            0,   // not a lead
			DerivativeLowpassHz: 125, // loop_hz/8 = 1000/8
			DerivativeOnError:   false,
			SetpointWeight:      1,
			SetpointWeightSet:   false,
			OutputLimit:         [2]float64{-1, 1},
			IntegratorLimit:     1, // max(|−1|, |1|)
			AntiWindup:          "backcalc",
			TrackingTime:        0,
			Discretize:          "tustin",
		},
		// ±10 % gain (battery sag, payload; common practice), nominal
		// lag and delay.
		Envelope: Envelope{GainScale: [2]float64{0.9, 1.1}, LagScale: [2]float64{1, 1}, DelayAdd: [2]float64{0, 0}},
	}}
	// Tolerance: 2000/0.025 and 1/0.025 are one correctly rounded division
	// each, so they may differ from the exact 80000 and 40 by half an ulp;
	// 1e-15 relative covers that and nothing else.
	if d := cmp.Diff(want, f.Axes, cmp.Comparer(func(a, b float64) bool { return relClose(a, b, 1e-15) })); d != "" {
		t.Errorf("defaults (-want +got):\n%s", d)
	}
}

func relClose(a, b, tol float64) bool {
	if a == b {
		return true
	}
	return math.Abs(a-b) <= tol*math.Max(math.Abs(a), math.Abs(b))
}

// TestFormDefaults checks the form-dependent defaults: keys that do not
// apply to a form stay zero, and the integrator limit follows the output
// limit.
func TestFormDefaults(t *testing.T) {
	cases := []struct {
		control string
		want    func(c Control) bool
		desc    string
	}{
		{`form = "pi"` + "\noutput_limit = [-0.3, 0.5]",
			func(c Control) bool {
				return c.IntegratorLimit == 0.5 && c.ThirdPole == 0 && c.DerivativeLowpassHz == 0 && c.OutputLimit == [2]float64{-0.3, 0.5}
			}, "pi: integrator limit max(0.3, 0.5) = 0.5, no third pole, no derivative filter"},
		{`form = "pd"`,
			func(c Control) bool {
				return c.IntegratorLimit == 0 && c.ThirdPole == 0 && c.DerivativeLowpassHz == 125
			}, "pd: derivative filter 1000/8, no integrator limit"},
		{`form = "p"`,
			func(c Control) bool {
				return c.IntegratorLimit == 0 && c.ThirdPole == 0 && c.DerivativeLowpassHz == 0 && c.LeadZero == 0
			}, "p: nothing form-specific"},
		{`form = "lead"` + "\nlead_zero = -30",
			func(c Control) bool {
				return c.LeadZero == -30 && c.IntegratorLimit == 0 && c.ThirdPole == 0 && c.DerivativeLowpassHz == 0
			}, "lead: lead_zero only"},
		{"setpoint_weight = 0.5\nderivative_on = \"error\"\nrefine = false\nthird_pole = 8\nintegrator_limit = 0.25\nantiwindup = \"clamp\"\ndiscretize = \"backward\"\nderivative_lowpass_hz = 499.9",
			func(c Control) bool {
				return c.SetpointWeight == 0.5 && c.SetpointWeightSet && c.DerivativeOnError && !c.Refine &&
					c.ThirdPole == 8 && c.IntegratorLimit == 0.25 && c.AntiWindup == "clamp" &&
					c.Discretize == "backward" && c.DerivativeLowpassHz == 499.9
			}, "every key given"},
		{"setpoint_weight = 1.0",
			func(c Control) bool { return c.SetpointWeight == 1 && c.SetpointWeightSet },
			"setpoint_weight given as 1 is marked as set"},
		{"setpoint_weight = 0",
			func(c Control) bool { return c.SetpointWeight == 0 && c.SetpointWeightSet },
			"setpoint_weight 0 (integer) is allowed"},
		{"output_limit = [0, 1]",
			func(c Control) bool { return c.OutputLimit == [2]float64{0, 1} && c.IntegratorLimit == 1 },
			"a limit may be 0: low ≤ 0 ≤ high"},
		{"antiwindup = \"backcalc\"\ntracking_time = 0.02",
			func(c Control) bool { return c.TrackingTime == 0.02 },
			"tracking_time with backcalc"},
	}
	for _, tc := range cases {
		f := mustParse(t, withControl(tc.control))
		if c := f.Axes[0].Ctrl; !tc.want(c) {
			t.Errorf("%s: got %+v", tc.desc, c)
		}
	}
}

// TestIntegersAsFloats: TOML keeps 1000 and 1000.0 apart; the file format
// does not.
func TestIntegersAsFloats(t *testing.T) {
	a := mustParse(t, minimal)
	b := mustParse(t, strings.NewReplacer("loop_hz = 1000", "loop_hz = 1000.0",
		"effectiveness = 2000.0", "effectiveness = 2000").Replace(minimal))
	if d := cmp.Diff(a.Axes, b.Axes); d != "" || a.Loop != b.Loop {
		t.Errorf("integer and float spellings differ: %s %+v %+v", d, a.Loop, b.Loop)
	}
}

// TestPhysicalPlant checks the physical form against the hand formula
// G(s) = effectiveness/(s·(motor_tau·s + 1)), both as gain and poles and
// as a frequency response.
func TestPhysicalPlant(t *testing.T) {
	const eff, tau, delay = 2600.0, 0.025, 0.002
	f := mustParse(t, edit(t, "effectiveness = 2000.0\nmotor_tau = 0.025\n",
		"effectiveness = 2600.0\nmotor_tau = 0.025\ndelay = 0.002\n"))
	pl := f.Axes[0].Plant
	// Hand: 2600/0.025 = 104000, 1/0.025 = 40. Tolerance: one rounded
	// division each (see TestDefaults).
	if !relClose(pl.Model.Gain, 104000, 1e-15) {
		t.Errorf("gain %v, want 104000", pl.Model.Gain)
	}
	if len(pl.Model.Poles) != 2 || pl.Model.Poles[0] != 0 || !relClose(real(pl.Model.Poles[1]), -40, 1e-15) || imag(pl.Model.Poles[1]) != 0 {
		t.Errorf("poles %v, want [0, -40]", pl.Model.Poles)
	}
	if len(pl.Model.Zeros) != 0 {
		t.Errorf("zeros %v, want none", pl.Model.Zeros)
	}
	if pl.Delay != delay {
		t.Errorf("delay %v, want %v", pl.Delay, delay)
	}
	// The response of the decoded zpk against the formula as written, at
	// frequencies around the motor corner 1/tau = 40 rad/s. Tolerance: a
	// handful of complex multiplications and a division, each a few ulp;
	// 1e-13 relative leaves room for that and would catch a wrong pole or
	// gain at the 1e-3 level by ten orders of magnitude.
	for _, w := range []float64{0.1, 1, 10, 40, 100, 1000} {
		s := complex(0, w)
		formula := complex(eff, 0) / (s * (complex(tau, 0)*s + 1))
		zpk := complex(pl.Model.Gain, 0) / ((s - pl.Model.Poles[0]) * (s - pl.Model.Poles[1]))
		if cmplx.Abs(zpk-formula) > 1e-13*cmplx.Abs(formula) {
			t.Errorf("G(j%g): zpk %v, formula %v", w, zpk, formula)
		}
	}
}

// TestLowpassSensor checks lowpass_hz against the first-order lowpass
// H(s) = ωc/(s + ωc), ωc = 2π·f: unit DC gain and |H(jωc)| = 1/√2 (−3 dB
// at the corner; any signals handbook).
func TestLowpassSensor(t *testing.T) {
	f := mustParse(t, withSensor("lowpass_hz = 90.0"))
	h := f.Axes[0].Sensor
	// 2π·90 = 180π = 565.48667764616278292… (Python's decimal module at 40
	// digits with π to 50 digits, /usr/bin/python3 3.11), rounded to
	// float64.
	const wc = 565.4866776461628
	// Tolerance: the decoder computes float64(2π)·90, two roundings of
	// half an ulp each (≈1.1e-16 relative); 1e-15 allows them.
	if !relClose(h.Gain, wc, 1e-15) || len(h.Poles) != 1 || !relClose(real(h.Poles[0]), -wc, 1e-15) || imag(h.Poles[0]) != 0 || len(h.Zeros) != 0 {
		t.Fatalf("sensor %+v, want gain %v, pole %v", h, wc, -wc)
	}
	eval := func(s complex128) complex128 { return complex(h.Gain, 0) / (s - h.Poles[0]) }
	// Tolerance 1e-15: gain/pole of equal magnitudes, one division.
	if dc := eval(0); !relClose(real(dc), 1, 1e-15) || imag(dc) != 0 {
		t.Errorf("DC gain %v, want 1", dc)
	}
	if m := cmplx.Abs(eval(complex(0, wc))); !relClose(m, 1/math.Sqrt2, 1e-15) {
		t.Errorf("|H(jωc)| = %v, want 1/√2", m)
	}
}

// TestSensorZPK: a zpk sensor is taken as written, pairs expanded.
func TestSensorZPK(t *testing.T) {
	f := mustParse(t, withSensor("gain = 250000.0\npoles = [[-300.0, 400.0]]"))
	want := lti.ZPK{Gain: 250000, Poles: []complex128{complex(-300, 400), complex(-300, -400)}}
	if d := cmp.Diff(want, f.Axes[0].Sensor); d != "" {
		t.Errorf("sensor (-want +got):\n%s", d)
	}
	// A pure gain is a sensor too (a scale error, within the steady-state
	// tolerance of 2 %: 1/0.99 − 1 = 1.01 %).
	f = mustParse(t, withSensor("gain = 0.99"))
	if d := cmp.Diff(lti.ZPK{Gain: 0.99}, f.Axes[0].Sensor); d != "" {
		t.Errorf("gain-only sensor (-want +got):\n%s", d)
	}
}

// TestZPKPairs: a pair [re, im] is the conjugates re ± j·im, in list order.
func TestZPKPairs(t *testing.T) {
	f := mustParse(t, zpkPlant(t, "gain = 2600.0\npoles = [0.0, -40.0, [-60.0, 80.0]]\nzeros = [[-5, 1]]\ndelay = 0"))
	want := lti.ZPK{
		Gain:  2600,
		Poles: []complex128{0, -40, complex(-60, 80), complex(-60, -80)},
		Zeros: []complex128{complex(-5, 1), complex(-5, -1)},
	}
	if d := cmp.Diff(want, f.Axes[0].Plant.Model); d != "" {
		t.Errorf("model (-want +got):\n%s", d)
	}
	// zeros = [] and no zeros decode alike; a pure gain plant is proper.
	a := mustParse(t, zpkPlant(t, "gain = 5.0\npoles = []\nzeros = []"))
	b := mustParse(t, zpkPlant(t, "gain = 5.0\npoles = []"))
	if d := cmp.Diff(a.Axes, b.Axes); d != "" || a.Axes[0].Plant.Model.Zeros != nil {
		t.Errorf("empty zeros differ from absent zeros: %s", d)
	}
	// Equal numbers of zeros and poles (biproper) are allowed.
	mustParse(t, zpkPlant(t, "gain = 5.0\npoles = [[-1, 1]]\nzeros = [-2, -3]"))
}

// TestAxesSorted: File.Axes is in name order whatever the file order.
func TestAxesSorted(t *testing.T) {
	var b strings.Builder
	b.WriteString("airframe = \"testbird\"\nloop_hz = 1000\n")
	for _, name := range []string{"yaw", "roll", "pitch", "aux2", "aux10"} {
		b.WriteString("[axes." + name + ".plant]\neffectiveness = 100.0\nmotor_tau = 0.03\n")
		b.WriteString("[axes." + name + ".spec]\nsettling_time = 0.2\novershoot = 0.1\n")
	}
	f := mustParse(t, b.String())
	var got []string
	for _, p := range f.Axes {
		got = append(got, p.Name)
	}
	if d := cmp.Diff([]string{"aux10", "aux2", "pitch", "roll", "yaw"}, got); d != "" {
		t.Errorf("axis order (-want +got):\n%s", d)
	}
}

// TestFileFields checks Path, SHA256, Raw, and the BOM.
func TestFileFields(t *testing.T) {
	f := mustParse(t, minimal)
	// From GNU coreutils sha256sum 9.1 on the bytes of minimal.
	const sum = "8a0d727eeda2b9fdb72a6efc9401a19ccb95384e1fa9bae1a168d946d028abdc"
	if f.SHA256 != sum {
		t.Errorf("SHA256 %s, want %s", f.SHA256, sum)
	}
	if f.Raw["airframe"] != "testbird" || f.Raw["loop_hz"] != int64(1000) {
		t.Errorf("Raw top level: %v", f.Raw)
	}
	if _, ok := f.Raw["axes"].(map[string]any)["roll"]; !ok {
		t.Errorf("Raw lacks axes.roll: %v", f.Raw)
	}
	// A UTF-8 byte order mark is accepted; the hash is of the raw bytes.
	g := mustParse(t, "\uFEFF"+minimal)
	if d := cmp.Diff(f.Axes, g.Axes); d != "" || g.SHA256 == f.SHA256 {
		t.Errorf("BOM: %s, hashes %s %s", d, f.SHA256, g.SHA256)
	}
	// The description is kept as written, escaping is the emitter's job.
	h := mustParse(t, `description = "demo data: \"*/ <x>\\n"`+"\n"+minimal)
	if h.Description != `demo data: "*/ <x>\n` {
		t.Errorf("description %q", h.Description)
	}
}

// TestNumeric checks [numeric].
func TestNumeric(t *testing.T) {
	cases := []struct {
		src  string
		want Numeric
	}{
		{`type = "float64"`, Numeric{Type: Float64}},
		{"type = \"float32\"\ninput_full_scale = 2000\n", Numeric{Type: Float32, InputFullScale: 2000}},
		{"type = \"q15\"\ninput_full_scale = 2000.0\noutput_full_scale = 1", Numeric{Type: Q15, InputFullScale: 2000, OutputFullScale: 1}},
		{"type = \"q31\"\ninput_full_scale = 10.0\noutput_full_scale = 0.5", Numeric{Type: Q31, InputFullScale: 10, OutputFullScale: 0.5}},
		{"", Numeric{Type: Float32}},
	}
	for _, tc := range cases {
		f := mustParse(t, withNumeric(tc.src))
		if f.Numeric != tc.want {
			t.Errorf("%q: %+v, want %+v", tc.src, f.Numeric, tc.want)
		}
	}
}

// TestDemoFiles parses the demo files that become examples/.
func TestDemoFiles(t *testing.T) {
	quad, err := loadFile(filepath.Join("testdata", "valid_quad.toml"))
	if err != nil {
		t.Fatalf("valid_quad: %v", err)
	}
	if quad.Airframe != "sandpiper" || !strings.HasPrefix(quad.Description, "demo data: ") ||
		quad.Loop != (Loop{Hz: 1000, ComputeDelay: 1}) || quad.Numeric.Type != Float32 {
		t.Errorf("valid_quad header: %+v", quad)
	}
	var names []string
	for _, p := range quad.Axes {
		names = append(names, p.Name+":"+string(p.Ctrl.Form))
	}
	if d := cmp.Diff([]string{"pitch:pid", "roll:pid", "yaw:pi"}, names); d != "" {
		t.Errorf("valid_quad axes (-want +got):\n%s", d)
	}
	// Roll: 2400/0.03 = 80000 and −1/0.03 (hand); tolerance as TestDefaults.
	roll := quad.Axes[1].Plant.Model
	if !relClose(roll.Gain, 80000, 1e-15) || !relClose(real(roll.Poles[1]), -1/0.03, 1e-15) {
		t.Errorf("roll plant %+v", roll)
	}

	gimbal, err := loadFile(filepath.Join("testdata", "valid_gimbal.toml"))
	if err != nil {
		t.Fatalf("valid_gimbal: %v", err)
	}
	if gimbal.Numeric != (Numeric{Type: Q15, InputFullScale: 10, OutputFullScale: 1}) ||
		gimbal.Loop.Hz != 2000 || len(gimbal.Axes) != 1 || gimbal.Axes[0].Name != "pitch" ||
		!strings.HasPrefix(gimbal.Description, "demo data: ") {
		t.Errorf("valid_gimbal: %+v", gimbal)
	}
	// The file's comment: gain = 8000·(300² + 400²) = 8000·250000 = 2e9.
	if g := gimbal.Axes[0].Plant.Model.Gain; g != 8000*(300*300+400*400) {
		t.Errorf("gimbal gain %v", g)
	}
}

func TestTooLarge(t *testing.T) {
	big := minimal + "# " + strings.Repeat("x", MaxFileBytes) + "\n"
	_, err := Parse("x.toml", []byte(big))
	if err == nil || !strings.Contains(err.Error(), "x.toml: file is") {
		t.Errorf("got %v", err)
	}
}

// TestReservedWords spot-checks the lists of names.go against the language
// definitions (C99 6.4.1, C11 6.4.1, the Go spec's Keywords and
// Predeclared identifiers), and that ordinary axis names pass.
func TestReservedWords(t *testing.T) {
	for _, w := range []string{
		// C99 keywords.
		"auto", "break", "case", "char", "const", "continue", "default", "do", "double",
		"else", "enum", "extern", "float", "for", "goto", "if", "inline", "int", "long",
		"register", "restrict", "return", "short", "signed", "sizeof", "static", "struct",
		"switch", "typedef", "union", "unsigned", "void", "volatile", "while",
		// Go keywords.
		"break", "case", "chan", "const", "continue", "default", "defer", "else",
		"fallthrough", "for", "func", "go", "goto", "if", "import", "interface", "map",
		"package", "range", "return", "select", "struct", "switch", "type", "var",
		// Go predeclared identifiers.
		"any", "bool", "byte", "comparable", "complex64", "complex128", "error", "float32",
		"float64", "int", "int8", "int16", "int32", "int64", "rune", "string", "uint",
		"uint8", "uint16", "uint32", "uint64", "uintptr", "true", "false", "iota", "nil",
		"append", "cap", "clear", "close", "complex", "copy", "delete", "imag", "len",
		"make", "max", "min", "new", "panic", "print", "println", "real", "recover",
	} {
		if Reserved(w) == "" || CheckName(w) == "" {
			t.Errorf("%q not rejected", w)
		}
	}
	for _, w := range []string{"roll", "pitch", "yaw", "a", "x1", "gimbal_cam", strings.Repeat("z", 32), "integer", "format"} {
		if msg := CheckName(w); msg != "" {
			t.Errorf("%q rejected: %s", w, msg)
		}
	}
}

// FuzzParse: on any input Parse returns exactly one of a *File and an
// *Errors, never panics, and a File it returns satisfies the contract.
func FuzzParse(f *testing.F) {
	for _, tc := range malformedCases(f) {
		f.Add([]byte(tc.src))
	}
	f.Add([]byte(minimal))
	f.Add([]byte(withControl("form = \"lead\"\nlead_zero = -30")))
	f.Add([]byte(withSensor("gain = 1.0\npoles = [[-1, 2]]")))
	f.Add([]byte(withEnvelope("gain_scale = [0.8, 1.25]\nlag_scale = [0.7, 1.5]\ndelay_add = [0, 0.003]")))
	f.Add([]byte(withNumeric("input_full_scale = 10.0") + "\n[axes.roll.control]\noutput_limit = [-0.4, 0.6]\n"))
	f.Add([]byte(withFilters("kind = \"notch\"\nhz = 118.0\nwidth_hz = 30.0\ndepth_db = 20.0", "kind = \"lowpass\"\nhz = 180.0\norder = 2\ndamping = 0.6")))
	for _, name := range []string{"valid_quad.toml", "valid_gimbal.toml"} {
		data, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		file, err := Parse("fuzz.toml", data)
		if (file == nil) == (err == nil) {
			t.Fatalf("file %v, err %v: want exactly one", file, err)
		}
		if err != nil {
			var errs *Errors
			if !errors.As(err, &errs) || len(errs.List) == 0 {
				t.Fatalf("error %T %v is not a non-empty *Errors", err, err)
			}
			for _, line := range strings.Split(err.Error(), "\n") {
				if !strings.HasPrefix(line, "fuzz.toml: ") {
					t.Fatalf("line without the path: %q", line)
				}
			}
			return
		}
		checkFile(t, file)
	})
}

// checkFile checks the invariants of a valid File.
func checkFile(t *testing.T, f *File) {
	t.Helper()
	if CheckName(f.Airframe) != "" || len(f.Axes) == 0 || len(f.SHA256) != 64 || f.Raw == nil {
		t.Fatalf("bad header %q %d %q", f.Airframe, len(f.Axes), f.SHA256)
	}
	if !(f.Loop.Hz > 0 && f.Loop.Hz <= maxLoopHz) || f.Loop.ComputeDelay < 0 || f.Loop.ComputeDelay > maxComputeDelay {
		t.Fatalf("bad loop %+v", f.Loop)
	}
	if f.Numeric.Type.IsFixed() && !(f.Numeric.InputFullScale > 0 && f.Numeric.OutputFullScale > 0) {
		t.Fatalf("fixed point without full scales: %+v", f.Numeric)
	}
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	for i, p := range f.Axes {
		if i > 0 && f.Axes[i-1].Name >= p.Name {
			t.Fatalf("axes not sorted: %q then %q", f.Axes[i-1].Name, p.Name)
		}
		if CheckName(p.Name) != "" {
			t.Fatalf("bad axis name %q", p.Name)
		}
		for _, z := range []lti.ZPK{p.Plant.Model, p.Sensor} {
			if z.Gain == 0 || !finite(z.Gain) || len(z.Zeros) > len(z.Poles) {
				t.Fatalf("axis %s: bad model %+v", p.Name, z)
			}
			for _, r := range append(append([]complex128{}, z.Poles...), z.Zeros...) {
				if !finite(real(r)) || !finite(imag(r)) {
					t.Fatalf("axis %s: root %v", p.Name, r)
				}
			}
		}
		for _, r := range p.Sensor.Poles {
			if real(r) >= 0 {
				t.Fatalf("axis %s: unstable sensor pole %v", p.Name, r)
			}
		}
		c := p.Ctrl
		s := p.Spec
		if !(s.SettlingTime > 0 && s.Overshoot > 0 && s.Overshoot < 1 && s.Band > 0 && s.Band <= maxSettlingBand) || !finite(s.SettlingTime) {
			t.Fatalf("axis %s: bad spec %+v", p.Name, s)
		}
		if !(p.Plant.Delay >= 0 && p.Plant.Delay <= maxDelay) {
			t.Fatalf("axis %s: bad delay %v", p.Name, p.Plant.Delay)
		}
		lo, hi := c.OutputLimit[0], c.OutputLimit[1]
		if !(lo < hi && lo <= 0 && hi >= 0) || !finite(lo) || !finite(hi) {
			t.Fatalf("axis %s: bad limits %v", p.Name, c.OutputLimit)
		}
		if c.Form.HasDerivative() && !(c.DerivativeLowpassHz > 0 && c.DerivativeLowpassHz < f.Loop.Hz/2) {
			t.Fatalf("axis %s: bad derivative filter %v", p.Name, c.DerivativeLowpassHz)
		}
		if c.Form.HasIntegral() && !(c.IntegratorLimit > 0) {
			t.Fatalf("axis %s: bad integrator limit %v", p.Name, c.IntegratorLimit)
		}
		if c.Form == FormLead && !(c.LeadZero < 0) {
			t.Fatalf("axis %s: bad lead zero %v", p.Name, c.LeadZero)
		}
		if c.Form == FormPID && !(c.ThirdPole > 1) {
			t.Fatalf("axis %s: bad third pole %v", p.Name, c.ThirdPole)
		}
		if !(s.MaxSensitivity > 1 && s.MaxSensitivity <= maxSensitivityBound) ||
			!(s.MaxSteadyError > 0 && s.MaxSteadyError < 1) ||
			!(s.HoldRate >= 0) || !finite(s.HoldRate) ||
			(f.Numeric.InputFullScale > 0 && s.HoldRate > f.Numeric.InputFullScale) ||
			!(s.DisturbanceStep > 0 && s.DisturbanceStep <= maxCommand(c.OutputLimit)) ||
			!(s.DisturbanceRecovery >= 0) || !finite(s.DisturbanceRecovery) ||
			!(s.MaxNoiseGain >= 0) || !finite(s.MaxNoiseGain) {
			t.Fatalf("axis %s: bad spec %+v", p.Name, s)
		}
		e := p.Envelope
		for _, r := range [][2]float64{e.GainScale, e.LagScale} {
			if !(r[0] > 0 && r[0] <= 1 && r[1] >= 1 && r[1] <= maxEnvelopeScale) {
				t.Fatalf("axis %s: bad envelope %+v", p.Name, e)
			}
		}
		if !(e.DelayAdd[0] <= 0 && e.DelayAdd[1] >= 0) {
			t.Fatalf("axis %s: bad envelope %+v", p.Name, e)
		}
		// Every corner is a plant the file allows: delay within [0, maxDelay].
		for _, k := range e.Corners() {
			if d := p.At(k).Plant.Delay; !(d >= 0 && d <= maxDelay) {
				t.Fatalf("axis %s: corner %+v has delay %v", p.Name, k, d)
			}
		}
	}
}

// loadFile reads and parses the airframe file at path.
func loadFile(path string) (*File, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return Parse(path, data)
}
