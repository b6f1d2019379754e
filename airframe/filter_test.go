package airframe

import (
	"errors"
	"math"
	"slices"
	"strings"
	"testing"

	"locusmith/internal/lti"
)

// withFilters appends [[axes.roll.filter]] tables to minimal (loop_hz
// 1000, Nyquist 500 Hz).
func withFilters(tables ...string) string {
	s := minimal
	for _, t := range tables {
		s += "\n[[axes.roll.filter]]\n" + t + "\n"
	}
	return s
}

func TestFilterParse(t *testing.T) {
	src := withFilters(
		"kind = \"notch\"\nhz = 118.0\nwidth_hz = 30",
		"kind = \"lowpass\"\nat = \"feedback\"\nhz = 180.0",
		"kind = \"lowpass\"\nhz = 250\norder = 1",
		"kind = \"notch\"\nhz = 60.0\nwidth_hz = 10.0\ndepth_db = 20.0",
	)
	f, err := Parse("x.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	got := f.Axes[0].Filters
	want := []Filter{
		{Kind: FilterNotch, At: "feedback", Hz: 118, WidthHz: 30},
		// The default damping is 1/√2, the Butterworth section (Oppenheim
		// & Schafer; from memory).
		{Kind: FilterLowpass, At: "feedback", Hz: 180, Order: 2, Damping: 1 / math.Sqrt2},
		{Kind: FilterLowpass, At: "feedback", Hz: 250, Order: 1},
		{Kind: FilterNotch, At: "feedback", Hz: 60, WidthHz: 10, DepthDB: 20},
	}
	if len(got) != len(want) {
		t.Fatalf("%d filters, want %d: %+v", len(got), len(want), got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("filter %d = %+v, want %+v", i, got[i], want[i])
		}
	}
	// An axis without a list has none.
	f0, err := Parse("x.toml", []byte(minimal))
	if err != nil || f0.Axes[0].Filters != nil {
		t.Fatalf("no list: %v, %+v", err, f0.Axes[0].Filters)
	}
	// The list is part of the canonical input: a changed filter value
	// changes the hash the generated code carries.
	g, err := Parse("x.toml", []byte(strings.Replace(src, "hz = 118.0", "hz = 119.0", 1)))
	if err != nil {
		t.Fatal(err)
	}
	if f.CanonicalSHA256() == g.CanonicalSHA256() || f.CanonicalSHA256() == f0.CanonicalSHA256() {
		t.Error("the canonical hash does not see the filter list")
	}
}

// TestFilterContinuous checks the continuous counterparts moved into the
// sensor: the poles and zeros of each section, gains multiplied.
// TestFilterFixedPoint: q15 and q31 take a filter chain as the float
// types do (once refused: the fixed-point code had no proved bounds for
// it), the same filters with the same defaults.
func TestFilterFixedPoint(t *testing.T) {
	src := withFilters("kind = \"notch\"\nhz = 118.0\nwidth_hz = 30", "kind = \"lowpass\"\nhz = 180.0")
	want, err := Parse("x.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	for _, nt := range []string{"q15", "q31"} {
		f, err := Parse("x.toml", []byte(src+"\n[numeric]\ntype = \""+nt+"\"\ninput_full_scale = 10.0\noutput_full_scale = 1.0\n"))
		if err != nil {
			t.Fatalf("%s: %v", nt, err)
		}
		if string(f.Numeric.Type) != nt || len(f.Axes[0].Filters) != 2 {
			t.Fatalf("%s: numeric %q, %d filters", nt, f.Numeric.Type, len(f.Axes[0].Filters))
		}
		for i, x := range f.Axes[0].Filters {
			if x != want.Axes[0].Filters[i] {
				t.Errorf("%s: filter %d = %+v, want %+v", nt, i, x, want.Axes[0].Filters[i])
			}
		}
	}
}

func TestFilterContinuous(t *testing.T) {
	f, err := Parse("x.toml", []byte(withFilters("kind = \"notch\"\nhz = 100\nwidth_hz = 20", "kind = \"lowpass\"\nhz = 200\norder = 1")))
	if err != nil {
		t.Fatal(err)
	}
	a := f.Axes[0].Continuous()
	if a.Filters != nil || len(a.Sensor.Poles) != 3 || len(a.Sensor.Zeros) != 2 {
		t.Fatalf("continuous sensor %+v, filters %+v", a.Sensor, a.Filters)
	}
	// At DC the notch passes 1 and the lowpass 1 (unit DC gains by
	// construction of both; the handbook forms of NotchZPK/LowpassZPK).
	if g := real(a.Sensor.Eval(0)); math.Abs(g-1) > 1e-12 {
		t.Errorf("H(0) = %g, want 1", g)
	}
	// At the notch's centre the full notch passes nothing.
	if g := a.Sensor.Eval(complex(0, 2*math.Pi*100)); math.Hypot(real(g), imag(g)) > 1e-9 {
		t.Errorf("|H(j·2π·100)| = %g, want 0", g)
	}
}

// TestFilterAuto checks hz = "auto": each auto notch on the next lightly
// damped mode (most lightly damped first), the width 0.4·f or 1.5 times
// the band lag_scale moves the mode over, three digits; a given width is
// kept. The modes: ζ = 0.048 at 250.3 rad/s (39.84 Hz) and ζ = 0.1 at
// 100 rad/s, by hand: ζ = −re/|p|, f = |p|/2π.
func TestFilterAuto(t *testing.T) {
	src := strings.Replace(withFilters("kind = \"notch\"\nhz = \"auto\"", "kind = \"notch\"\nhz = \"auto\"\nwidth_hz = 3.0"),
		"effectiveness = 2000.0\nmotor_tau = 0.025\n", "gain = 5e13\npoles = [0.0, -40.0, [-12.0, 250.0], [-10.0, 99.498743710662]]\n", 1)
	src += "\n[axes.roll.envelope]\nlag_scale = [0.8, 1.0]\n"
	f, err := Parse("x.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	fs := f.Axes[0].Filters
	f1 := math.Hypot(12, 250) / (2 * math.Pi) // 39.83 Hz
	// lag_scale 0.8 moves the mode to f/0.8: band f/0.8 − f = 0.25·f,
	// times 1.5 = 0.375·f < 0.4·f, so 0.4·f.
	if len(fs) != 2 || !fs[0].AutoHz || fs[0].Hz != Round3(f1) || fs[0].WidthHz != Round3(0.4*f1) {
		t.Fatalf("first auto notch %+v, want %g Hz, width %g", fs, Round3(f1), Round3(0.4*f1))
	}
	if f2 := 100 / (2 * math.Pi); fs[1].Hz != Round3(f2) || fs[1].WidthHz != 3 {
		t.Errorf("second auto notch %+v, want %g Hz, width 3", fs[1], Round3(f2))
	}
	// A wider lag_scale widens the notch: [0.5, 1] moves the mode over
	// f..2f, 1.5·f, capped at 0.9·f.
	g, err := Parse("x.toml", []byte(strings.Replace(src, "lag_scale = [0.8, 1.0]", "lag_scale = [0.5, 1.0]", 1)))
	if err != nil {
		t.Fatal(err)
	}
	if w := g.Axes[0].Filters[0].WidthHz; w != Round3(0.9*f1) {
		t.Errorf("width %g with lag_scale [0.5, 1], want %g", w, Round3(0.9*f1))
	}
}

// hz = "auto" on a lowpass: the section waits at the top of the range
// the design chooses from (0.45 · loop_hz, three digits), with the goal
// the file gives, or "noise" when the spec bounds the noise gain and
// "margin" when it does not.
func TestAutoLowpassParse(t *testing.T) {
	for _, c := range []struct {
		name, table, spec, goal string
	}{
		{"default without a noise bound", "kind = \"lowpass\"\nhz = \"auto\"", "", GoalMargin},
		{"default with a noise bound", "kind = \"lowpass\"\nhz = \"auto\"\norder = 1", "max_noise_gain = 0.5\n", GoalNoise},
		{"margin asked with a noise bound", "kind = \"lowpass\"\nhz = \"auto\"\ngoal = \"margin\"", "max_noise_gain = 0.5\n", GoalMargin},
	} {
		src := strings.Replace(withFilters(c.table), "[axes.roll.spec]\n", "[axes.roll.spec]\n"+c.spec, 1)
		f, err := Parse("x.toml", []byte(src))
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		a := f.Axes[0]
		i := a.AutoLowpassIndex()
		if i != 0 {
			t.Fatalf("%s: AutoLowpassIndex %d, want 0", c.name, i)
		}
		got := a.Filters[i]
		if !got.AutoHz || got.Goal != c.goal || got.Hz != 450 {
			t.Errorf("%s: %+v, want auto at 450 Hz with goal %q", c.name, got, c.goal)
		}
	}
	f, err := Parse("x.toml", []byte(withFilters("kind = \"lowpass\"\nhz = 100.0")))
	if err != nil {
		t.Fatal(err)
	}
	if i := f.Axes[0].AutoLowpassIndex(); i != -1 {
		t.Errorf("a lowpass with its cutoff given: AutoLowpassIndex %d, want -1", i)
	}
}

func TestFilterMalformed(t *testing.T) {
	cases := []struct {
		name, src, want string
	}{
		{"kind missing", withFilters("hz = 100.0"), `axes.roll.filter[0].kind: required: "lowpass" or "notch"`},
		{"kind unknown", withFilters("kind = \"bandpass\"\nhz = 100.0"), `axes.roll.filter[0].kind = "bandpass": must be one of "lowpass", "notch"`},
		{"hz missing", withFilters("kind = \"lowpass\""), `axes.roll.filter[0].hz: required: a number > 0 and below Nyquist (loop_hz/2 = 500) (Hz)`},
		{"hz at Nyquist", withFilters("kind = \"lowpass\"\nhz = 500.0"), `axes.roll.filter[0].hz = 500.0: must be > 0 and below Nyquist (loop_hz/2 = 500) (Hz)`},
		{"hz negative", withFilters("kind = \"lowpass\"\nhz = -5.0"), `axes.roll.filter[0].hz = -5.0: must be > 0 and below Nyquist`},
		{"hz nan", withFilters("kind = \"lowpass\"\nhz = nan"), `axes.roll.filter[0].hz = nan: must be a finite number > 0`},
		{"hz tiny", withFilters("kind = \"lowpass\"\nhz = 1e-12"), `axes.roll.filter[0].hz = 1e-12: the filter's frequency 2π·hz: magnitude`},
		{"hz auto without a mode", withFilters("kind = \"notch\"\nhz = \"auto\"\nwidth_hz = 10.0"), `axes.roll.filter[0].hz = "auto": no lightly damped mode of the plant or sensor (a pole pair with damping below 0.2) below 0.9 × Nyquist (450 Hz) to centre the notch on: give the centre in Hz`},
		{"two auto lowpasses", withFilters("kind = \"lowpass\"\nhz = \"auto\"", "kind = \"lowpass\"\nhz = \"auto\""), `axes.roll.filter[1].hz = "auto": one lowpass per axis may have hz = "auto" (the design chooses one cutoff): give this one's cutoff in Hz, a number > 0 and below Nyquist (loop_hz/2 = 500) (Hz)`},
		{"goal noise without a bound", withFilters("kind = \"lowpass\"\nhz = \"auto\"\ngoal = \"noise\""), `axes.roll.filter[0].goal = "noise": "noise" chooses the highest cutoff whose design meets spec.max_noise_gain, and the spec gives none`},
		{"goal unknown", withFilters("kind = \"lowpass\"\nhz = \"auto\"\ngoal = \"fast\""), `axes.roll.filter[0].goal = "fast": must be one of "noise", "margin"`},
		{"goal with a cutoff", withFilters("kind = \"lowpass\"\nhz = 100.0\ngoal = \"margin\""), `axes.roll.filter[0].goal = "margin": only for kind = "lowpass" with hz = "auto"`},
		{"goal on a notch", withFilters("kind = \"notch\"\nhz = 100.0\nwidth_hz = 10.0\ngoal = \"margin\""), `axes.roll.filter[0].goal = "margin": only for kind = "lowpass" with hz = "auto"`},
		{"hz auto twice", strings.Replace(withFilters("kind = \"notch\"\nhz = \"auto\"", "kind = \"notch\"\nhz = \"auto\""), "effectiveness = 2000.0\nmotor_tau = 0.025\n", "gain = 5e9\npoles = [0.0, -40.0, [-12.0, 250.0]]\n", 1), `axes.roll.filter[1].hz = "auto": no lightly damped mode left (1 taken by the notches before)`},
		{"hz string", withFilters("kind = \"notch\"\nhz = \"fast\"\nwidth_hz = 10.0"), `axes.roll.filter[0].hz = "fast": must be a number > 0 and below Nyquist (loop_hz/2 = 500) (Hz), not a string`},
		{"width missing", withFilters("kind = \"notch\"\nhz = 100.0"), `axes.roll.filter[0].width_hz: required: a number > 0 and below hz = 100`},
		{"width zero", withFilters("kind = \"notch\"\nhz = 100.0\nwidth_hz = 0.0"), `axes.roll.filter[0].width_hz = 0.0: must be > 0 and below hz = 100`},
		{"width above centre", withFilters("kind = \"notch\"\nhz = 100.0\nwidth_hz = 120.0"), `axes.roll.filter[0].width_hz = 120.0: must be > 0 and below hz = 100`},
		{"band beyond Nyquist", withFilters("kind = \"notch\"\nhz = 450.0\nwidth_hz = 120.0"), `axes.roll.filter[0].width_hz = 120.0: the band hz ± width_hz/2 = [390, 510] Hz must lie below Nyquist (loop_hz/2 = 500 Hz)`},
		{"width on a lowpass", withFilters("kind = \"lowpass\"\nhz = 100.0\nwidth_hz = 10.0"), `axes.roll.filter[0].width_hz = 10.0: only for kind = "notch" (kind is "lowpass")`},
		{"depth zero", withFilters("kind = \"notch\"\nhz = 100.0\nwidth_hz = 10.0\ndepth_db = 0.0"), `axes.roll.filter[0].depth_db = 0.0: must be in (0, 120] (dB, the attenuation at the centre; omit the key for a full notch)`},
		{"depth on a lowpass", withFilters("kind = \"lowpass\"\nhz = 100.0\ndepth_db = 10.0"), `axes.roll.filter[0].depth_db = 10.0: only for kind = "notch"`},
		{"order 3", withFilters("kind = \"lowpass\"\nhz = 100.0\norder = 3"), `axes.roll.filter[0].order = 3: must be an integer in 1..2 (the lowpass's order)`},
		{"order on a notch", withFilters("kind = \"notch\"\nhz = 100.0\nwidth_hz = 10.0\norder = 2"), `axes.roll.filter[0].order = 2: only for kind = "lowpass" (kind is "notch")`},
		{"damping order 1", withFilters("kind = \"lowpass\"\nhz = 100.0\norder = 1\ndamping = 0.5"), `axes.roll.filter[0].damping = 0.5: only for kind = "lowpass" with order = 2`},
		{"damping small", withFilters("kind = \"lowpass\"\nhz = 100.0\ndamping = 0.01"), `axes.roll.filter[0].damping = 0.01: must be in [0.1, 2] (ζ; 0.7071 is the Butterworth section)`},
		// Derivative filters: only where there is a derivative, with a
		// frequency in Hz, and no first-order lowpass (which is
		// control.derivative_lowpass_hz).
		{"at derivative on a pi", withFilters("kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0") + "\n[axes.roll.control]\nform = \"pi\"\n", `axes.roll.filter[0].at = "derivative": only for forms with a derivative ("pd", "pid"; form is "pi")`},
		{"at derivative on a lead", withFilters("kind = \"notch\"\nat = \"derivative\"\nhz = 100.0\nwidth_hz = 20.0") + "\n[axes.roll.control]\nform = \"lead\"\nlead_zero = -10.0\n", `axes.roll.filter[0].at = "derivative": only for forms with a derivative ("pd", "pid"; form is "lead")`},
		{"derivative lowpass order 1", withFilters("kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0\norder = 1"), `axes.roll.filter[0].order = 1: a first-order lowpass on the derivative is control.derivative_lowpass_hz, which the derivative always has: set that key, or use order = 2`},
		{"derivative hz auto", withFilters("kind = \"lowpass\"\nat = \"derivative\"\nhz = \"auto\""), `axes.roll.filter[0].hz = "auto": "auto" is for filters at = "feedback"`},
		{"derivative notch hz auto", withFilters("kind = \"notch\"\nat = \"derivative\"\nhz = \"auto\""), `axes.roll.filter[0].hz = "auto": "auto" is for filters at = "feedback"`},
		{"derivative notch beyond Nyquist", withFilters("kind = \"notch\"\nat = \"derivative\"\nhz = 600.0\nwidth_hz = 20.0"), `axes.roll.filter[0].hz = 600.0: must be > 0 and below Nyquist (loop_hz/2 = 500)`},
		{"too many with derivative", withFilters("kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0", "kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0"), `axes.roll.filter: 5 filters: at most 4 per axis`},
		{"at elsewhere", withFilters("kind = \"lowpass\"\nat = \"output\"\nhz = 100.0"), `axes.roll.filter[0].at = "output": must be one of "feedback", "derivative"`},
		{"unknown key", withFilters("kind = \"lowpass\"\nhz = 100.0\nq = 2.0"), `axes.roll.filter[0].q = 2.0: unknown key; allowed in [axes.roll.filter[0]]: kind, at, hz, width_hz, depth_db, order, damping, goal`},
		{"second filter", withFilters("kind = \"lowpass\"\nhz = 100.0", "kind = \"notch\"\nhz = 80.0"), `axes.roll.filter[1].width_hz: required`},
		{"too many", withFilters("kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0", "kind = \"lowpass\"\nhz = 100.0"), `axes.roll.filter: 5 filters: at most 4 per axis`},
		{"not an array", minimal + "\n[axes.roll.filter]\nkind = \"lowpass\"\nhz = 100.0\n", `axes.roll.filter: must be an array of tables [[axes.roll.filter]] (kind, at, hz, ...), not a table`},
		{"array of numbers", strings.Replace(minimal, "[axes.roll.spec]", "[axes.roll]\nfilter = [1, 2]\n\n[axes.roll.spec]", 1), `axes.roll.filter[0] = 1: must be a table (kind, at, hz, ...), not an integer`},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Parse("x.toml", []byte(tc.src))
			var errs *Errors
			if !errors.As(err, &errs) {
				t.Fatalf("error %v is not *Errors", err)
			}
			if !strings.Contains(err.Error(), "x.toml: "+tc.want) {
				t.Errorf("error does not say %q; got:\n%s", tc.want, err)
			}
		})
	}
}

// One mistake, one message: a goal beside a refused hz = "auto", and
// goal = "noise" beside a max_noise_gain that is itself wrong, add no
// second error that contradicts the file.
func TestFilterErrorsDoNotPileUp(t *testing.T) {
	for _, tc := range []struct{ name, src, want, not string }{
		{"goal beside a second auto lowpass",
			withFilters("kind = \"lowpass\"\nhz = \"auto\"", "kind = \"lowpass\"\nhz = \"auto\"\ngoal = \"margin\""),
			`axes.roll.filter[1].hz = "auto": one lowpass per axis`, `filter[1].goal`},
		{"goal beside an auto derivative lowpass",
			withFilters("kind = \"lowpass\"\nat = \"derivative\"\nhz = \"auto\"\ngoal = \"margin\""),
			`axes.roll.filter[0].hz = "auto": "auto" is for filters at = "feedback"`, `filter[0].goal`},
		{"goal noise beside a bad bound",
			strings.Replace(withFilters("kind = \"lowpass\"\nhz = \"auto\"\ngoal = \"noise\""), "[axes.roll.spec]", "[axes.roll.spec]\nmax_noise_gain = -1.0", 1),
			`axes.roll.spec.max_noise_gain = -1.0: must be > 0`, `the spec gives none`},
	} {
		_, err := Parse("x.toml", []byte(tc.src))
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want %q", tc.name, err, tc.want)
			continue
		}
		if strings.Contains(err.Error(), tc.not) {
			t.Errorf("%s: a second message contradicts the file (%q):\n%s", tc.name, tc.not, err)
		}
	}
}

// TestDerivativeFilterParse: filters at = "derivative" go to the
// control's list, in file order, the feedback ones to the axis's chain;
// the continuous counterparts multiply.
func TestDerivativeFilterParse(t *testing.T) {
	src := withFilters(
		"kind = \"lowpass\"\nat = \"derivative\"\nhz = 80.0",
		"kind = \"notch\"\nhz = 118.0\nwidth_hz = 30",
		"kind = \"notch\"\nat = \"derivative\"\nhz = 150.0\nwidth_hz = 40.0\ndepth_db = 12.0",
	)
	f, err := Parse("x.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	a := f.Axes[0]
	if want := []Filter{{Kind: FilterNotch, At: "feedback", Hz: 118, WidthHz: 30}}; !slices.Equal(a.Filters, want) {
		t.Errorf("feedback filters %+v, want %+v", a.Filters, want)
	}
	want := []Filter{
		{Kind: FilterLowpass, At: "derivative", Hz: 80, Order: 2, Damping: 1 / math.Sqrt2},
		{Kind: FilterNotch, At: "derivative", Hz: 150, WidthHz: 40, DepthDB: 12},
	}
	if !slices.Equal(a.Ctrl.DerivativeFilters, want) {
		t.Errorf("derivative filters %+v, want %+v", a.Ctrl.DerivativeFilters, want)
	}
	z, err := a.Ctrl.DerivativeZPK()
	if err != nil || len(z.Poles) != 4 || len(z.Zeros) != 2 {
		t.Fatalf("derivative ZPK %+v, %v: want 4 poles and 2 zeros", z, err)
	}
	// At s = 0 the product of unit-DC-gain sections is 1; at the notch's
	// centre a partial notch of 12 dB leaves 10^(−12/20) (the definition
	// of depth_db), times the lowpass's gain there, 1/√(1 + (f/fc)⁴) for
	// a Butterworth second-order section (textbook, from memory).
	if g := z.Eval(0); lti.Abs(g-1) > 1e-12 {
		t.Errorf("DC gain %v, want 1", g)
	}
	w := 2 * math.Pi * 150
	wantMag := math.Pow(10, -12.0/20) / math.Sqrt(1+math.Pow(150.0/80, 4))
	if g := lti.Abs(z.Eval(complex(0, w))); math.Abs(g-wantMag) > 1e-9 {
		t.Errorf("|H(j2π·150)| = %v, want %v", g, wantMag)
	}
	// A pd takes them too; the list may hold only derivative filters.
	g, err := Parse("x.toml", []byte(withFilters("kind = \"notch\"\nat = \"derivative\"\nhz = 150.0\nwidth_hz = 40.0")+"\n[axes.roll.control]\nform = \"pd\"\n"))
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Axes[0].Ctrl.DerivativeFilters) != 1 || g.Axes[0].Filters != nil {
		t.Errorf("pd: %+v, %+v", g.Axes[0].Ctrl.DerivativeFilters, g.Axes[0].Filters)
	}
	// Every numeric type takes them: q15 and q31 run them in direct form
	// I with proved bounds (discrete.FixedSection).
	for _, nt := range []string{"q15", "q31"} {
		q := strings.Replace(withFilters("kind = \"lowpass\"\nat = \"derivative\"\nhz = 100.0"), "loop_hz = 1000\n",
			"loop_hz = 1000\n[numeric]\ntype = \""+nt+"\"\ninput_full_scale = 20.0\noutput_full_scale = 1.0\n", 1)
		g, err := Parse("x.toml", []byte(q))
		if err != nil {
			t.Fatalf("%s: %v", nt, err)
		}
		if len(g.Axes[0].Ctrl.DerivativeFilters) != 1 || string(g.Numeric.Type) != nt {
			t.Errorf("%s: %+v, numeric %q", nt, g.Axes[0].Ctrl.DerivativeFilters, g.Numeric.Type)
		}
	}
}
