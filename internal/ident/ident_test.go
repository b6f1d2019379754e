package ident

import (
	"bytes"
	"encoding/xml"
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"locusmith/internal/lti"
)

// TestStepFormula checks the simulation against the closed-form step
// response of the model (inverse Laplace transform, any control text, from
// memory): for G(s) = K/(s(τs+1))·e^(−sθ),
//
//	y(t) = K·(t' − τ(1 − e^(−t'/τ))),  t' = t − θ > 0,  y = 0 before.
//
// A step is constant between samples, so the ZOH simulation is exact at
// the sampling instants; the tolerance is rounding (1e-12 of the peak).
func TestStepFormula(t *testing.T) {
	const T, K, tau = 0.001, 2600.0, 0.025
	for _, theta := range []float64{0, 0.0004, 0.001, 0.0023, 0.0099} {
		pad := int(theta/T) + 2
		u := append(make([]float64, pad), ones(400)...)
		y := simulateTruth(u, T, K, tau, theta, 0)[pad:]
		peak := y[len(y)-1]
		for k, got := range y {
			tp := float64(k)*T - theta
			want := 0.0
			if tp > 0 {
				want = K * (tp - tau*(1-math.Exp(-tp/tau)))
			}
			if math.Abs(got-want) > 1e-12*peak {
				t.Fatalf("θ = %g, k = %d: %.15g, formula %.15g", theta, k, got, want)
			}
		}
	}
}

// TestSensorStepFormula does the same with the gyro lowpass in cascade,
// against the partial-fraction expansion of K/(s(τs+1)(s/ω+1)) (from
// memory): y(t) = K·(t − τ − 1/ω + (τ²ω e^(−t/τ) − e^(−ωt)/ω)/(τω − 1)).
func TestSensorStepFormula(t *testing.T) {
	const T, K, tau, hz = 0.002, 60.0, 0.08, 8.0
	w := 2 * math.Pi * hz
	u := ones(300)
	y := simulateTruth(u, T, K, tau, 0, hz)
	peak := y[len(y)-1]
	for k, got := range y {
		tt := float64(k) * T
		want := K * (tt - tau - 1/w + (tau*tau*w*math.Exp(-tt/tau)-math.Exp(-w*tt)/w)/(tau*w-1))
		if math.Abs(got-want) > 1e-9*peak {
			t.Fatalf("k = %d: %.15g, formula %.15g", k, got, want)
		}
	}
}

// TestAgainstLTIZOHDelay cross-checks the unrolled kernels against
// lti.ZOHDelay's shift-register realization of the same model (a
// different construction of the same modified z-transform).
func TestAgainstLTIZOHDelay(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	u := excitation(rng, 3000, 0.001, 0.3)
	for _, c := range []shape{{0.025, 0.0023, 0}, {0.06, 0.004, 0}, {0.04, 0.0043, 2 * math.Pi * 12}, {0.03, 0, 2 * math.Pi * 50}} {
		ss := c.continuous()
		d, err := lti.ZOHDelay(ss, 0.001, c.delay)
		if err != nil {
			t.Fatal(err)
		}
		// lti.ZOHDelay starts its delay line at zero; the kernel repeats
		// u[0]. Lead with zeros so both see the same history.
		in := append(make([]float64, 20), u...)
		want := d.Simulate(in)
		m, err := c.discretize(0.001)
		if err != nil {
			t.Fatal(err)
		}
		got := make([]float64, len(in))
		m.forced(got, in)
		for k := range got {
			if math.Abs(got[k]-want[k]) > 1e-12*(1+math.Abs(want[k])) {
				t.Fatalf("%+v k=%d: %.15g vs lti %.15g", c, k, got[k], want[k])
			}
		}
	}
}

// TestARXNoiseFree checks the equation-error stage on noise-free data with
// a whole-sample delay, where the ARX equation of the ZOH table is exact:
// it must find the delay and a = e^(−T/τ), i.e. τ, to rounding.
func TestARXNoiseFree(t *testing.T) {
	const T = 0.001
	rng := rand.New(rand.NewPCG(8, 9))
	u := excitation(rng, 5000, T, 0.3)
	for _, c := range []struct {
		tau float64
		d   int
	}{{0.025, 2}, {0.06, 5}, {0.01, 0}} {
		y := simulateTruth(u, T, 900, c.tau, float64(c.d)*T, 0)
		p := &data{T: T, u: u, y: y}
		g := arx(p, []segment{{start: 0, end: len(u)}}, 20)
		if !g.ok || g.d != c.d || math.Abs(g.tau/c.tau-1) > 1e-6 {
			t.Errorf("τ %g, d %d: ARX gives τ %g, d %d (ok %v)", c.tau, c.d, g.tau, g.d, g.ok)
		}
	}
}

// TestResample checks the resampling by hand: timestamps 0, 1.2, 1.9, 3.1
// and 4 ms with commands 1..5 on a 1 ms grid. Each grid value is the
// command's average over [k, k+1) ms: 1; 0.2·1 + 0.7·2 + 0.1·3 = 1.9; 3;
// 0.1·3 + 0.9·4 = 3.9; 5 (the last sample holds). The rate is linear in
// time, so its linear interpolation is exact: 3 + k.
func TestResample(t *testing.T) {
	tm := []float64{0, 0.0012, 0.0019, 0.0031, 0.004}
	u := []float64{1, 2, 3, 4, 5}
	y := make([]float64, len(tm))
	for i := range tm {
		y[i] = 3 + 1000*tm[i]
	}
	p := &data{}
	resample(p, tm, u, y, u, 0.001)
	wantU := []float64{1, 1.9, 3, 3.9, 5}
	if len(p.t) != 5 {
		t.Fatalf("%d grid points, want 5", len(p.t))
	}
	for k := range p.t {
		if math.Abs(p.t[k]-float64(k)*0.001) > 1e-15 || math.Abs(p.u[k]-wantU[k]) > 1e-12 || math.Abs(p.y[k]-(3+float64(k))) > 1e-12 {
			t.Errorf("k=%d: t %g u %g y %g; want %g %g %g", k, p.t[k], p.u[k], p.y[k], float64(k)*0.001, wantU[k], 3+float64(k))
		}
		// The excitation, given here as the command itself, is averaged
		// the same way (the hand-worked wantU).
		if math.Abs(p.r[k]-wantU[k]) > 1e-12 {
			t.Errorf("k=%d: excitation %g, want %g", k, p.r[k], wantU[k])
		}
	}
}

// TestSaturationDetection checks the auto rule on hand-made commands.
func TestSaturationDetection(t *testing.T) {
	const L = 0.5
	count := func(u []float64) int {
		n := 0
		for _, b := range saturated(u, Saturation{}) {
			if b {
				n++
			}
		}
		return n
	}
	plateau := func(v float64, n int) []float64 {
		s := make([]float64, n)
		for i := range s {
			s[i] = v
		}
		return s
	}
	mid := []float64{0.1, -0.2, 0.3, 0}
	cat := func(parts ...[]float64) []float64 {
		var out []float64
		for _, p := range parts {
			out = append(out, p...)
		}
		return out
	}
	cases := []struct {
		name string
		u    []float64
		want int
	}{
		{"two plateaus at the max", cat(mid, plateau(L, 6), mid, plateau(L, 8), mid, plateau(-0.3, 9)), 14},
		{"one plateau each way (a big doublet)", cat(mid, plateau(L, 6), plateau(-L, 6), mid), 0},
		{"runs too short", cat(mid, plateau(L, 4), mid, plateau(L, 4), mid), 0},
		{"max and min repeated", cat(mid, plateau(L, 5), mid, plateau(-L, 7), mid, plateau(L, 5), plateau(-L, 5)), 22},
	}
	for _, c := range cases {
		if got := count(c.u); got != c.want {
			t.Errorf("%s: %d samples flagged, want %d", c.name, got, c.want)
		}
	}
	lim := saturated([]float64{-0.6, -0.5, 0, 0.49, 0.5}, Saturation{Mode: SatLimits, Lo: -0.5, Hi: 0.5})
	if want := []bool{true, true, false, false, true}; !equalBools(lim, want) {
		t.Errorf("limits: %v, want %v", lim, want)
	}
}

func equalBools(a, b []bool) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// fitQuick identifies the model from a log synthesized with the model's
// own simulation (for checks of the reporting, not of accuracy).
func fitQuick(t *testing.T, u []float64, T, K, tau, delay, lph, snr float64, opt Options) *Result {
	t.Helper()
	y := simulateTruth(u, T, K, tau, delay, lph)
	l := synthLog(rand.New(rand.NewPCG(21, 22)), u, y, T, 0.5, snr)
	r, err := Identify(l, opt)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// TestTOMLSection decodes the printed section with go-toml and checks that
// it holds exactly the airframe keys with the identified values (to the
// printed digits), and that the comments carry the evidence.
func TestTOMLSection(t *testing.T) {
	const T = 0.001
	u := excitation(rand.New(rand.NewPCG(1, 1)), 20000, T, 0.3)
	r := fitQuick(t, u, T, 300, 0.04, 0.0043, 12, 30, Options{Holdout: 0.25, Sensor: true})
	out := r.TOML("pitch", "log.csv")
	var doc struct {
		Axes map[string]struct {
			Plant  map[string]float64 `toml:"plant"`
			Sensor map[string]float64 `toml:"sensor"`
		} `toml:"axes"`
	}
	if err := toml.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("not TOML: %v\n%s", err, out)
	}
	ax, ok := doc.Axes["pitch"]
	if !ok || len(doc.Axes) != 1 || len(ax.Plant) != 3 || len(ax.Sensor) != 1 {
		t.Fatalf("unexpected tables: %+v\n%s", doc, out)
	}
	check := func(key string, got float64, p Param) {
		if rel := math.Abs(got/p.Value - 1); rel > 1e-3 || (p.RelHalfWidth() < 0.01 && rel > 1e-4) {
			t.Errorf("%s = %g printed, identified %g", key, got, p.Value)
		}
	}
	check("effectiveness", ax.Plant["effectiveness"], r.Effectiveness)
	check("motor_tau", ax.Plant["motor_tau"], r.MotorTau)
	check("delay", ax.Plant["delay"], r.Delay)
	check("lowpass_hz", ax.Sensor["lowpass_hz"], *r.LowpassHz)
	for _, want := range []string{"normalized RMS error", "VAF", "95 % confidence intervals", "held out", "lowpass_hz", "propellers off"} {
		if !strings.Contains(out, want) {
			t.Errorf("comments lack %q", want)
		}
	}
	for _, line := range strings.Split(strings.TrimSpace(out), "\n") {
		if line != "" && !strings.HasPrefix(line, "#") && !strings.HasPrefix(line, "[") && !strings.Contains(line, " = ") {
			t.Errorf("stray line %q", line)
		}
	}
}

// TestTOMLFloat checks the number format: always a TOML float.
func TestTOMLFloat(t *testing.T) {
	for _, c := range []struct {
		v      float64
		digits int
		want   string
	}{{2600, 5, "2600.0"}, {0.025013, 5, "0.025013"}, {0.0023012, 4, "0.002301"}, {0, 4, "0.0"}, {1.5e-5, 3, "1.5e-05"}, {3.2e7, 3, "3.2e+07"}} {
		if got := tomlFloat(c.v, c.digits); got != c.want {
			t.Errorf("tomlFloat(%g, %d) = %q, want %q", c.v, c.digits, got, c.want)
		}
	}
}

// TestPoorExcitationWarns checks that a flat cost direction is reported:
// a slow sine alone (0.3 Hz) carries almost no information on a 2.3 ms
// delay or a 25 ms lag (their effect is a phase of a few tenths of a
// degree), so their intervals are wide and the fit must say so.
func TestPoorExcitationWarns(t *testing.T) {
	const T = 0.001
	u := make([]float64, 20000)
	for k := range u {
		u[k] = 0.2 * math.Sin(2*math.Pi*0.3*float64(k)*T)
	}
	r := fitQuick(t, u, T, 2600, 0.025, 0.0023, 0, 20, DefaultOptions())
	w := strings.Join(r.Warnings, "\n")
	if !strings.Contains(w, "poorly identifiable") {
		t.Errorf("no poor-identifiability warning; warnings %q; %s", r.Warnings, summary(r))
	}
	if !strings.Contains(r.TOML("roll", "x"), "# WARNING:") {
		t.Error("warnings missing from the TOML comments")
	}
}

// TestSensorSymmetry checks the claim behind the convention for the two
// lags: K/(s(τs+1)(s/ω+1)) is symmetric in τ and 1/ω (the product of the
// two first-order factors commutes), so swapping them leaves the fitted
// cost unchanged to rounding; canonical must then report the slower lag as
// the motor's. And a fit of data made with the slower lag in the sensor
// reports it as motor_tau.
func TestSensorSymmetry(t *testing.T) {
	const T = 0.001
	u := excitation(rand.New(rand.NewPCG(2, 2)), 30000, T, 0.3)
	tauM, tauS := 0.008, 0.04
	y := simulateTruth(u, T, 300, tauM, 0.003, 1/(2*math.Pi*tauS))
	l := synthLog(rand.New(rand.NewPCG(21, 22)), u, y, T, 0.5, 30)
	p, err := prepare(l, Saturation{}, 0)
	if err != nil {
		t.Fatal(err)
	}
	f := &fitter{T: T, u: p.u, y: p.y, segs: p.segs, burn: 10, sensor: true, maxDelay: 0.1, w: newWorkspace(len(p.t)), sf: make([]segFit, len(p.segs))}
	z := []float64{math.Log(tauM), 3, -math.Log(tauS)}
	before := f.eval(z, nil)
	f.canonical(z)
	if sh := f.shape(z); math.Abs(sh.tau/tauS-1) > 1e-12 || math.Abs(1/sh.omegaS/tauM-1) > 1e-12 {
		t.Fatalf("canonical: τ %g, 1/ωs %g; want %g, %g", sh.tau, 1/sh.omegaS, tauS, tauM)
	}
	if after := f.eval(z, nil); math.Abs(after/before-1) > 1e-9 {
		t.Errorf("cost %v before the swap, %v after: the model is not symmetric", before, after)
	}
	r, err := Identify(l, Options{Holdout: 0.25, Sensor: true})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.MotorTau.Value/tauS-1) > 0.05 || math.Abs(r.LowpassHz.Value*2*math.Pi*tauM-1) > 0.05 {
		t.Errorf("motor_tau %g (want %g), lowpass_hz %g (want %g)", r.MotorTau.Value, tauS, r.LowpassHz.Value, 1/(2*math.Pi*tauM))
	}
}

// TestWriteSVG checks that the plot is well-formed SVG with both panels'
// labels and a bounded size for a long log.
func TestWriteSVG(t *testing.T) {
	const T = 0.001
	u := excitation(rand.New(rand.NewPCG(5, 5)), 60000, T, 0.3)
	r := fitQuick(t, u, T, 2600, 0.025, 0.0023, 0, 20, DefaultOptions())
	var b bytes.Buffer
	if err := r.WriteSVG(&b, "log.csv: roll"); err != nil {
		t.Fatal(err)
	}
	dec := xml.NewDecoder(bytes.NewReader(b.Bytes()))
	for {
		_, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("not well-formed XML: %v", err)
		}
	}
	s := b.String()
	for _, want := range []string{"<svg", "measured", "model (fitted part)", "model (held out)", "residual", "time (s)"} {
		if !strings.Contains(s, want) {
			t.Errorf("SVG lacks %q", want)
		}
	}
	// 60000 samples reduce to ~2·plotBuckets points per trace: well under
	// 2 MB, where the raw samples would be ~10 MB.
	if b.Len() > 2<<20 {
		t.Errorf("SVG is %d bytes", b.Len())
	}
}
