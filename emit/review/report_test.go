package review

import (
	"bytes"
	"encoding/json"
	"math"
	"math/big"
	"math/rand/v2"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/fleet"
	"locusmith/internal/version"
	"locusmith/synth"
)

// TestRoundSigMatchesBig: roundSig is rounding to SignificantDigits
// significant digits, checked against math/big, whose Text('e', n)
// correctly rounds the exact binary value (Go standard library, math/big).
func TestRoundSigMatchesBig(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 20000; i++ {
		x := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(40)-20))
		if i%7 == 0 {
			// Values on a tie of the 10th digit in decimal, which binary
			// cannot hold exactly: the exact value decides the direction.
			x = float64(rng.IntN(1e9)) + 0.5
		}
		want, _ := strconv.ParseFloat(new(big.Float).SetFloat64(x).Text('e', SignificantDigits-1), 64)
		if got := roundSig(x); got != want {
			t.Fatalf("roundSig(%v) = %v, math/big says %v", x, got, want)
		}
	}
	if got := roundSig(math.Copysign(0, -1)); math.Signbit(got) {
		t.Errorf("roundSig(−0) = −0, want 0 (−0 would print as -0)")
	}
}

// TestRoundSigOfMatchesBig: roundSigOf(x, s) keeps the digits of x down to
// the 10th significant digit of s, checked against math/big's correctly
// rounded fixed-point text.
func TestRoundSigOfMatchesBig(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for i := 0; i < 20000; i++ {
		s := math.Pow(10, float64(rng.IntN(12)-6)) * (1 + 8*rng.Float64())
		x := (rng.Float64() - 0.5) * s * math.Pow(10, -float64(rng.IntN(14)))
		exp := int(math.Floor(math.Log10(s)))
		if math.Abs(s) >= math.Pow(10, float64(exp+1))*(1-5e-11) {
			continue // s rounds up to the next decade at 10 digits; skip the boundary
		}
		prec := SignificantDigits - 1 - exp
		if prec < 0 {
			continue
		}
		want, _ := strconv.ParseFloat(new(big.Float).SetFloat64(x).Text('f', prec), 64)
		if want == 0 {
			want = 0 // −0
		}
		if got := roundSigOf(x, s); got != want {
			t.Fatalf("roundSigOf(%v, %v) = %v, math/big says %v", x, s, got, want)
		}
	}
}

func TestJSONNumbersOmitNonFinite(t *testing.T) {
	for _, x := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
		if jsonNum(x) != nil || jsonFrac(x) != nil || jsonPair(complex(x, 0)) != nil {
			t.Errorf("%v: want nil (omitted), got a number", x)
		}
	}
	// Residue of floating point reads as 0: an overshoot of 2e-16 of the
	// step, the imaginary part 1e-15 of a real pole at −3, a z pole at the
	// origin computed as −7e−17.
	if v := jsonFrac(2e-16); *v != 0 {
		t.Errorf("jsonFrac(2e-16) = %v, want 0", *v)
	}
	if p := jsonPair(complex(-3, 1e-15)); p[0] != -3 || p[1] != 0 || math.Signbit(p[1]) {
		t.Errorf("jsonPair(−3+1e−15j) = %v, want [−3, 0]", p)
	}
	if p := jsonPair(complex(-7e-17, 0)); p[0] != 0 || math.Signbit(p[0]) {
		t.Errorf("jsonPair(−7e−17) = %v, want [0, 0]", p)
	}
	// A genuine small pole keeps its digits down to 1e-9.
	if p := jsonPair(complex(-0.00312345, 0)); p[0] != -0.00312345 {
		t.Errorf("jsonPair(−0.00312345) = %v", p)
	}
	ps := jsonPairs([]complex128{complex(-1, -2), complex(-5, 0), complex(-1, 2), complex(0, 0)})
	want := [][]float64{{0, 0}, {-1, 2}, {-1, -2}, {-5, 0}}
	for i := range want {
		if ps[i][0] != want[i][0] || ps[i][1] != want[i][1] {
			t.Fatalf("jsonPairs order = %v, want %v", ps, want)
		}
	}
}

// design parses an inline airframe and designs it.
func designInline(t *testing.T, src string) *discrete.Airframe {
	t.Helper()
	f, err := airframe.Parse("inline.toml", []byte(src))
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	return discrete.DesignAirframe(f)
}

const twoAxes = `airframe = "testcraft"
description = "demo data: report test"
loop_hz = 1000.0

[axes.a_pid.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002
[axes.a_pid.sensor]
lowpass_hz = 100.0
[axes.a_pid.spec]
settling_time = 0.15
overshoot = 0.10
[axes.a_pid.control]
form = "pid"
output_limit = [-0.5, 0.5]

[axes.b_lead.plant]
effectiveness = 150.0
motor_tau = 0.02
[axes.b_lead.spec]
settling_time = 0.25
overshoot = 0.08
[axes.b_lead.control]
form = "lead"
lead_zero = -40.0

[axes.c_pi.plant]
gain = 100.0
poles = [-10.0]
[axes.c_pi.spec]
settling_time = 0.2
overshoot = 0.05
[axes.c_pi.control]
form = "pi"
`

// TestReportFields: each form reports the fields that apply to it and no
// others; a margin that does not exist is omitted, not invented.
func TestReportFields(t *testing.T) {
	a := sharedInline(t, twoAxes)
	r := JSON([]*discrete.Airframe{a})
	if r.Version != version.Version || len(r.Airframes) != 1 {
		t.Fatalf("report header: %+v", r)
	}
	ar := r.Airframes[0]
	if ar.File != "inline.toml" || ar.Airframe != "testcraft" || *ar.LoopHz != 1000 || len(ar.Axes) != 3 {
		t.Fatalf("airframe fields: %+v", ar)
	}
	byName := map[string]AxisReport{}
	for _, x := range ar.Axes {
		if x.Error != "" {
			t.Fatalf("axis %s: %s", x.Axis, x.Error)
		}
		byName[x.Axis] = x
	}
	pid, lead, pi := byName["a_pid"].Continuous, byName["b_lead"].Continuous, byName["c_pi"].Continuous
	if pid.Kp == nil || pid.Ki == nil || pid.Kd == nil || pid.DerivativeTau == nil || pid.SetpointWeight == nil {
		t.Errorf("pid: a parallel gain is missing: %+v", pid)
	}
	// Tf = 1/(2π·f) with the default f = loop_hz/8 = 125 Hz (README, "[axes.NAME.control]").
	if got, want := *pid.DerivativeTau, 1/(2*math.Pi*125); math.Abs(got-want) > 1e-9*want {
		t.Errorf("pid derivative_tau = %v, want %v", got, want)
	}
	if lead.Kp != nil || lead.Ki != nil || lead.Kd != nil || lead.DerivativeTau != nil || lead.SetpointWeight != nil {
		t.Errorf("lead: parallel gains must be omitted: %+v", lead)
	}
	if lead.Series == nil || len(lead.Series.Zeros) != 1 || lead.Series.Zeros[0][0] != -40 || len(lead.Series.Poles) != 1 {
		t.Errorf("lead: series = %+v, want the zero at −40 and one pole", lead.Series)
	}
	if pi.Kd != nil || pi.DerivativeTau != nil || pi.Ki == nil {
		t.Errorf("pi: kd/derivative_tau must be omitted, ki present: %+v", pi)
	}
	// PI on K/(s + 10) without delay or sensor: the loop's phase lies
	// between −90° and −180° and never crosses −180°, so there is no
	// continuous gain margin (Franklin, Powell & Emami-Naeini, margins
	// from the Bode plot; from memory).
	if pi.GainMarginDB != nil {
		t.Errorf("pi on a first-order plant: continuous gain margin %v, want omitted (+Inf)", *pi.GainMarginDB)
	}
	// The series form of a PI is Kp(s + Ki/Kp)/s.
	if s := pi.Series; s == nil || len(s.Poles) != 1 || s.Poles[0][0] != 0 || math.Abs(s.Zeros[0][0] + *pi.Ki / *pi.Kp) > 1e-8*math.Abs(s.Zeros[0][0]) || *s.Gain != *pi.Kp {
		t.Errorf("pi series %+v does not match kp %v, ki %v", pi.Series, *pi.Kp, *pi.Ki)
	}
	for name, x := range byName {
		if x.Discrete == nil || x.Discrete.Method != "tustin" || x.Target == nil || len(x.Checks) == 0 {
			t.Errorf("axis %s: discrete, target or checks missing: %+v", name, x)
		}
	}
	// The default numeric type is float32: a coefficient table without
	// fixed-point fields, and the loop with quantized coefficients.
	for name, x := range byName {
		n, ok := x.Numeric, x.Numeric != nil
		if !ok || n.Type != "float32" || len(n.Coefficients) == 0 || n.Quantized == nil || n.Ranges != nil || n.WordBits != 0 {
			t.Errorf("axis %s: numeric section %+v, want float32 coefficients and the quantized loop", name, x.Numeric)
			continue
		}
		for _, c := range n.Coefficients {
			if c.Format != "float32" || c.FracBits != nil || c.Raw != nil {
				t.Errorf("axis %s: coefficient %+v: fixed-point fields on a float32 coefficient", name, c)
			}
		}
	}
	if s := byName["a_pid"].Discrete.Saturated; s == nil || s.AntiWindup != "backcalc" || s.IntegratorPeak == nil || s.OvershootNoAntiWindup == nil {
		t.Errorf("pid saturated section incomplete: %+v", s)
	}
	if s := byName["b_lead"].Discrete.Saturated; s != nil && (s.AntiWindup != "" || s.IntegratorPeak != nil || s.OvershootNoAntiWindup != nil) {
		t.Errorf("lead has no integrator: anti-windup fields must be omitted: %+v", s)
	}
}

// TestReportJSONText: encoded, the report has no NaN/Inf, only numbers
// with at most SignificantDigits significant digits, and is the same on
// every run.
func TestReportJSONText(t *testing.T) {
	enc := func(a *discrete.Airframe) []byte {
		var b bytes.Buffer
		e := json.NewEncoder(&b)
		e.SetIndent("", "  ")
		if err := e.Encode(JSON([]*discrete.Airframe{a})); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	a, b := enc(sharedInline(t, twoAxes)), enc(designInline(t, twoAxes))
	if !bytes.Equal(a, b) {
		t.Fatal("two reports of the same input differ")
	}
	s := string(a)
	if strings.Contains(s, "NaN") || strings.Contains(s, "Inf") {
		t.Fatal("report contains NaN or Inf")
	}
	var walk func(v any)
	walk = func(v any) {
		switch x := v.(type) {
		case map[string]any:
			for _, e := range x {
				walk(e)
			}
		case []any:
			for _, e := range x {
				walk(e)
			}
		case json.Number:
			digits := strings.TrimLeft(strings.ReplaceAll(strings.Split(strings.ToLower(string(x)), "e")[0], ".", ""), "-0")
			if len(digits) > SignificantDigits {
				t.Errorf("number %s has %d significant digits, more than %d", x, len(digits), SignificantDigits)
			}
		}
	}
	d := json.NewDecoder(bytes.NewReader(a))
	d.UseNumber()
	var v any
	if err := d.Decode(&v); err != nil {
		t.Fatal(err)
	}
	walk(v)
}

// infeasibleYaw is a PI whose textbook target needs a negative integral
// gain, placed without refinement.
const infeasibleYaw = `airframe = "testcraft"
description = "demo data: infeasible axis"
loop_hz = 1000.0

[axes.yaw.plant]
effectiveness = 300.0
motor_tau = 0.035
delay = 0.002
[axes.yaw.sensor]
lowpass_hz = 100.0
[axes.yaw.spec]
settling_time = 0.25
overshoot = 0.10
[axes.yaw.control]
form = "pi"
refine = false
`

func TestReportInfeasibleAxis(t *testing.T) {
	a := designInline(t, infeasibleYaw)
	if len(a.Axes) != 1 || !discrete.Infeasible(a.Axes[0].Err) {
		t.Fatalf("want one infeasible axis, got %+v", a.Axes)
	}
	r := JSON([]*discrete.Airframe{a})
	x := r.Airframes[0].Axes[0]
	if x.OK || !strings.Contains(x.Error, "pi cannot place the target pole") || x.Continuous != nil || x.Discrete != nil || x.Form != "pi" {
		t.Fatalf("infeasible axis: %+v", x)
	}
	if r.Airframes[0].OK {
		t.Error("airframe ok with a failed axis")
	}
	if u := a.Unmet(); len(u) != 1 || !strings.HasPrefix(u[0], "axis yaw: ") {
		t.Errorf("Unmet = %q, want one line naming axis yaw", u)
	}
	var b bytes.Buffer
	if err := WriteTable(&b, a); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "axis yaw  form pi  FAIL") || !strings.Contains(b.String(), "cannot design: ") {
		t.Errorf("table does not show the failure:\n%s", b.String())
	}
}

func TestWriteTable(t *testing.T) {
	a := sharedInline(t, twoAxes)
	var b1, b2 bytes.Buffer
	if err := WriteTable(&b1, a); err != nil {
		t.Fatal(err)
	}
	if err := WriteTable(&b2, designInline(t, twoAxes)); err != nil {
		t.Fatal(err)
	}
	if b1.String() != b2.String() {
		t.Fatal("table not deterministic")
	}
	s := b1.String()
	for _, want := range []string{"airframe testcraft", "axis a_pid  form pid", "axis b_lead  form lead", "series     C(s) = ", "metric", "continuous", "discrete", "closed-loop poles, z:",
		"sensitivity peak Ms", "compl. sens. peak Mt", "noise gain", "load step: peak", "load step: IAE", "load step: recovery",
		"envelope   gain ×[0.9, 1.1], lag ×[1, 1], delay +[0, 0] s: 5 plants verified", "worst over envelope"} {
		if !strings.Contains(s, want) {
			t.Errorf("table lacks %q:\n%s", want, s)
		}
	}
	// The pid has an integrator: its holdable rate has a row; the lead
	// has none.
	axes := strings.Split(s, "\naxis ")
	if !strings.Contains(axes[1], "  hold rate ") || strings.Contains(axes[2], "  hold rate ") {
		t.Errorf("hold rate row: want it for a_pid only:\n%s", s)
	}
	// The envelope block (from its intervals to the next section) stays
	// within 100 columns.
	inBlock := false
	for _, line := range strings.Split(s, "\n") {
		switch {
		case strings.HasPrefix(line, "  envelope   "):
			inBlock = true
		case strings.HasPrefix(line, "  saturated step") || strings.HasPrefix(line, "  numeric ") || strings.HasPrefix(line, "axis "):
			inBlock = false
		}
		if inBlock && utf8.RuneCountInString(line) > 100 {
			t.Errorf("envelope block wider than 100 columns: %q", line)
		}
	}
	// Each check of the envelope names the plant where it is worst.
	for _, x := range a.Axes {
		for _, c := range x.Design.Checks {
			if c.Name != "overshoot" {
				continue
			}
			want := regexp.MustCompile(`\n  overshoot +[0-9.]+ % +≤ [0-9.]+ % +(pass|FAIL) +` + regexp.QuoteMeta(synth.CornerText(c.Worst)) + `\n`)
			if !want.MatchString(s) {
				t.Errorf("axis %s: no worst-plant row for overshoot at %s:\n%s", x.Name, synth.CornerText(c.Worst), s)
			}
		}
	}
	for _, bad := range []string{"NaN", "%!", "+Inf"} {
		if strings.Contains(s, bad) {
			t.Errorf("table contains %q:\n%s", bad, s)
		}
	}
	for _, line := range strings.Split(s, "\n") {
		if strings.TrimRight(line, " ") != line {
			t.Errorf("trailing blanks: %q", line)
		}
	}
}

// Dropping traces keeps every figure of the JSON report.
func TestDropTracesKeepsFigures(t *testing.T) {
	srcs, err := fleet.Make(3)
	if err != nil {
		t.Fatal(err)
	}
	var files []*airframe.File
	for _, src := range srcs {
		f, err := airframe.Parse("fleet/"+src.Name, src.Data)
		if err != nil {
			t.Fatal(err)
		}
		files = append(files, f)
	}
	encode := func(as []*discrete.Airframe) []byte {
		b, err := json.Marshal(JSON(as))
		if err != nil {
			t.Fatal(err)
		}
		return b
	}
	full := encode(discrete.DesignAll(files, discrete.BatchOptions{Jobs: 2, KeepTraces: true}))
	lean := encode(discrete.DesignAll(files, discrete.BatchOptions{Jobs: 2}))
	if !bytes.Equal(full, lean) {
		t.Error("the report changes when the traces are dropped")
	}
}

// TestReportRobustFields: the sampled loop's sensitivity peaks, noise
// gain, holdable rate and load step are the nominal plant's; the envelope
// lists every plant of the final verification, the nominal one first; and
// every check names its worst plant.
func TestReportRobustFields(t *testing.T) {
	a := sharedInline(t, twoAxes)
	r := JSON([]*discrete.Airframe{a})
	for i, x := range r.Airframes[0].Axes {
		d := a.Axes[i].Design
		n := d.Envelope[0]
		dr := x.Discrete
		if dr.MaxSensitivity == nil || *dr.MaxSensitivity != roundSig(n.Ms) || dr.MaxComplementary == nil || *dr.MaxComplementary != roundSig(n.Mt) {
			t.Errorf("%s: max_sensitivity/max_complementary %v/%v, want the nominal plant's %v/%v", x.Axis, dr.MaxSensitivity, dr.MaxComplementary, n.Ms, n.Mt)
		}
		if dr.NoiseGain == nil || *dr.NoiseGain != roundSig(d.NoiseGain) {
			t.Errorf("%s: noise_gain %v, want %v", x.Axis, dr.NoiseGain, d.NoiseGain)
		}
		if ds := dr.Disturbance; ds == nil || *ds.Step != roundSig(d.Problem.Spec.DisturbanceStep) || *ds.Peak != roundSig(n.Disturbance.Peak) || *ds.IAE != roundSig(n.Disturbance.IAE) {
			t.Errorf("%s: disturbance %+v, want the nominal plant's %+v", x.Axis, dr.Disturbance, n.Disturbance)
		}
		// The holdable rate with an integrator and a plant that
		// integrates (1/G(0) = 0): the integrator carries (Kp − b·Kp)·r at
		// steady state, so |r| ≤ IL/|Kp − KpB| (README, setpoint_weight);
		// unbounded, and omitted, at b = 1 and without an integrator.
		k := d.Coeffs
		switch {
		case !k.Form.HasIntegral() || k.Kp == k.KpB:
			if dr.HoldRate != nil {
				t.Errorf("%s: hold_rate %v, want omitted (unbounded)", x.Axis, *dr.HoldRate)
			}
		case x.Axis == "a_pid":
			if want := k.IL / math.Abs(k.Kp-k.KpB); dr.HoldRate == nil || math.Abs(*dr.HoldRate-want) > 1e-9*want {
				t.Errorf("%s: hold_rate %v, want IL/|Kp − KpB| = %v", x.Axis, dr.HoldRate, want)
			}
		}
		e := x.Envelope
		if e == nil || len(e.Corners) != len(d.Envelope) {
			t.Fatalf("%s: envelope %+v, want %d plants", x.Axis, e, len(d.Envelope))
		}
		// The default envelope: gain ×[0.9, 1.1], nothing else (README,
		// "[axes.NAME.envelope]").
		if !slices.Equal(e.GainScale, []float64{0.9, 1.1}) || !slices.Equal(e.LagScale, []float64{1, 1}) || !slices.Equal(e.DelayAdd, []float64{0, 0}) {
			t.Errorf("%s: intervals %v %v %v, want the defaults", x.Axis, e.GainScale, e.LagScale, e.DelayAdd)
		}
		if c := e.Corners[0]; *c.GainScale != 1 || *c.LagScale != 1 || *c.DelayAdd != 0 || !c.Stable || *c.MaxSensitivity != *dr.MaxSensitivity {
			t.Errorf("%s: corners[0] %+v is not the nominal plant", x.Axis, c)
		}
		for j, ck := range x.Checks {
			w, want := ck.Worst, d.Checks[j].Worst
			if want == (airframe.Corner{}) {
				want = airframe.Nominal()
			}
			if w == nil || *w.GainScale != want.GainScale || *w.LagScale != want.LagScale || *w.DelayAdd != want.DelayAdd {
				t.Errorf("%s: check %s worst %+v, want %+v", x.Axis, ck.Name, w, want)
			}
		}
	}
}

// TestReportRobustOmitsNonFinite: an unbounded holdable rate, a load step
// that is never recovered, a non-finite IAE and an unstable plant of the
// envelope leave their fields out rather than print NaN or Inf; a check
// that names no plant reports the nominal one.
func TestReportRobustOmitsNonFinite(t *testing.T) {
	a := designInline(t, twoAxes)
	d := a.Axes[0].Design
	n := &d.Envelope[0]
	n.HoldRate = math.Inf(1)
	n.Disturbance.Recovery = math.Inf(1)
	n.Disturbance.IAE = math.NaN()
	u := &d.Envelope[1]
	u.Stable = false
	u.Step.Overshoot, u.Step.Settling, u.Ms = math.Inf(1), math.Inf(1), math.NaN()
	u.Margins.GainDB = math.Inf(1)
	d.Checks = append(d.Checks, synth.Check{Name: "extra", Limit: 1, Value: math.NaN()},
		synth.Check{Name: "moved", Limit: 1, Value: 0.5, OK: true, Worst: airframe.Corner{GainScale: 0.9, LagScale: 2, DelayAdd: 0.001}})
	x := JSON([]*discrete.Airframe{a}).Airframes[0].Axes[0]
	dr := x.Discrete
	if dr.HoldRate != nil || dr.Disturbance == nil || dr.Disturbance.RecoveryTime != nil || dr.Disturbance.IAE != nil || dr.Disturbance.Peak == nil {
		t.Errorf("non-finite figures not omitted: hold_rate %v, disturbance %+v", dr.HoldRate, dr.Disturbance)
	}
	c := x.Envelope.Corners[1]
	if c.Stable || c.Overshoot != nil || c.SettlingTime != nil || c.MaxSensitivity != nil || c.GainMarginDB != nil || c.GainScale == nil {
		t.Errorf("unstable plant: %+v, want no step figures, no Ms, no gain margin, the plant kept", c)
	}
	last := x.Checks[len(x.Checks)-2:]
	if w := last[0].Worst; last[0].Value != nil || *w.GainScale != 1 || *w.LagScale != 1 || *w.DelayAdd != 0 {
		t.Errorf("check without a plant: %+v (worst %+v), want no value and the nominal plant", last[0], w)
	}
	if w := last[1].Worst; *w.GainScale != 0.9 || *w.LagScale != 2 || *w.DelayAdd != 0.001 {
		t.Errorf("worst plant %+v, want gain 0.9, lag 2, delay 0.001", w)
	}
	b, err := json.Marshal(x)
	if err != nil {
		t.Fatal(err)
	}
	if s := string(b); strings.Contains(s, "NaN") || strings.Contains(s, "Inf") {
		t.Errorf("NaN or Inf in the report: %s", s)
	}
	// The nominal loop unstable: no sensitivity peaks, no load step.
	n.Stable = false
	if dr := JSON([]*discrete.Airframe{a}).Airframes[0].Axes[0].Discrete; dr.MaxSensitivity != nil || dr.MaxComplementary != nil || dr.Disturbance != nil || dr.NoiseGain == nil {
		t.Errorf("unstable nominal loop: %+v, want no Ms, Mt or disturbance, the noise gain kept", dr)
	}
}

// The words the table, the page and the error messages name a plant and
// a check's value with.
func TestCornerAndCheckText(t *testing.T) {
	for c, want := range map[airframe.Corner]string{
		airframe.Nominal():                               "nominal plant",
		{GainScale: 0.9, LagScale: 1}:                    "gain ×0.9",
		{GainScale: 1, LagScale: 2, DelayAdd: -0.001}:    "lag ×2, delay -0.001 s",
		{GainScale: 1.1, LagScale: 0.8, DelayAdd: 0.002}: "gain ×1.1, lag ×0.8, delay +0.002 s",
	} {
		if got := synth.CornerText(c); got != want {
			t.Errorf("CornerText(%+v) = %q, want %q", c, got, want)
		}
	}
	for _, c := range []struct {
		name string
		v    float64
		want string
	}{
		{"steady_error", 0.015, "1.5 %"},
		{"steady_error", 3e-16, "0 %"},
		{"hold_rate", 12, "12 rad/s"},
		{"hold_rate", math.Inf(1), "unbounded"}, // as the metric table says
		{"disturbance_recovery", 0.25, "0.25 s"},
		{"max_sensitivity", 1.7, "1.7"},
		{"noise_gain", 0.6513, "0.6513"},
	} {
		if got := synth.CheckValue(c.name, c.v); got != c.want {
			t.Errorf("CheckValue(%s, %v) = %q, want %q", c.name, c.v, got, c.want)
		}
	}
	for _, c := range []struct {
		x    float64
		ok   bool
		want string
	}{
		{0.9866, true, "|z| 0.9866"},
		{0.99998896, true, "|z| 0.99999"}, // not "1" beside a pass
		{1.0000004, false, "|z| 1.0000004"},
		{1, false, "|z| 1"},
		{math.NaN(), true, "all |z| < 1"}, // the winding-number verdict
		{math.NaN(), false, "a pole |z| ≥ 1"},
	} {
		if got := tabRadius(c.x, c.ok); got != c.want {
			t.Errorf("tabRadius(%v, %v) = %q, want %q", c.x, c.ok, got, c.want)
		}
	}
	unstable := synth.Check{Name: "stable", Limit: 1, Value: math.NaN(), Worst: airframe.Corner{GainScale: 0.9, LagScale: 1}}
	if got, want := unstable.String(), "sampled loop unstable: a closed-loop pole on or outside the unit circle (gain ×0.9)"; got != want {
		t.Errorf("stable check without a radius: %q, want %q", got, want)
	}
	ck := synth.Check{Name: "settling_time", Limit: 0.15, Value: 0.1553, Upper: true, Worst: airframe.Corner{GainScale: 0.8, LagScale: 1.5}}
	if got, want := ck.String(), "settling time 0.1553 s > 0.15 s (sampled loop, gain ×0.8, lag ×1.5)"; got != want {
		t.Errorf("Check.String() = %q, want %q", got, want)
	}
	ck.Worst = airframe.Nominal()
	if got, want := ck.String(), "settling time 0.1553 s > 0.15 s (sampled loop)"; got != want {
		t.Errorf("Check.String() at the nominal plant = %q, want %q", got, want)
	}
}

// The phase budget at the crossover against the handbook forms of each
// term: a first-order lowpass at fc lags atan(ω/(2π·fc)), the derivative
// filter atan(ω·Tf), the zero-order hold ω·T/2 and a delay τ lags ω·τ
// (Franklin, Powell & Workman, Digital Control of Dynamic Systems, from
// memory), each in degrees.
func TestPhaseBudget(t *testing.T) {
	a := sharedDesign(t, "../../examples/quadrotor.toml")
	d := a.Axes[0].Design
	const sensorHz = 100 // the example's first axis, lowpass_hz
	rows, total := phaseBudget(d)
	wc, T := d.Verif.Margins.Crossover, d.Plant.T
	deg := 180 / math.Pi
	want := map[string]float64{
		"gyro filter ∠H(jωc)": -math.Atan(wc/(2*math.Pi*sensorHz)) * deg,
		"derivative filter":   -math.Atan(wc*d.Cont.Ctrl.Tf) * deg,
		"zero-order hold":     -wc * T / 2 * deg,
		"compute delay":       -wc * T * float64(a.File.Loop.ComputeDelay) * deg,
		"transport delay":     -wc * a.File.Axes[0].Plant.Delay * deg,
	}
	if len(rows) != len(want) {
		t.Fatalf("%d rows, want %d: %+v", len(rows), len(want), rows)
	}
	for _, r := range rows {
		w, ok := want[r.Name]
		if !ok {
			t.Errorf("unexpected row %q", r.Name)
			continue
		}
		if r.Value != degs(w) {
			t.Errorf("%s: %s, want %s", r.Name, r.Value, degs(w))
		}
	}
	if !strings.Contains(total, "phase margin left is "+degs(d.Verif.Margins.PhaseDeg)) {
		t.Errorf("total: %q", total)
	}
}
