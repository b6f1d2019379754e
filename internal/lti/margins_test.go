package lti

import (
	"math"
	"math/cmplx"
	"testing"
)

func loopOf(num, den Poly, tau float64) func(float64) complex128 {
	tf := TF{Num: num, Den: den}
	return func(w float64) complex128 {
		return tf.Eval(complex(0, w)) * cmplx.Exp(complex(0, -w*tau))
	}
}

// TestMarginsReference: K/(s(s+1)(s+2)) against Routh–Hurwitz (phase
// crossover √2, GM = 20log10(6/K)) and numpy.roots of |L(jω)|² = 1 for the
// PM; delay, type-2 and conditionally-stable loops against an independent
// scipy.optimize.brentq computation (testdata/gen_ref.py).
func TestMarginsReference(t *testing.T) {
	for _, c := range marginCases {
		m := LoopMargins(loopOf(c.num, c.den, c.tau), 1e-3, 1e3, 400)
		// Crossings are refined to 1e-11 in ln ω (reference: brentq to 1e-14).
		if !near(m.GainDB, c.gmDB, 0, 1e-9) || !near(m.PhaseCrossover, c.wp, 1e-10, 0) {
			t.Errorf("%s: GM %.12g dB at %.12g, want %.12g at %.12g", c.name, m.GainDB, m.PhaseCrossover, c.gmDB, c.wp)
		}
		if !near(m.PhaseDeg, c.pmDeg, 0, 1e-8) || !near(m.Crossover, c.wc, 1e-10, 0) {
			t.Errorf("%s: PM %.12g° at %.12g, want %.12g at %.12g", c.name, m.PhaseDeg, m.Crossover, c.pmDeg, c.wc)
		}
		if dm := c.pmDeg * math.Pi / 180 / c.wc; !near(m.DelayMargin, dm, 1e-9, 0) {
			t.Errorf("%s: DM %v want %v", c.name, m.DelayMargin, dm)
		}
	}
}

// TestMarginsRouth: K/(s(s+1)(s+2)) closed forms (Routh: marginal at K = 6,
// ω = √2), checked to the bisection accuracy.
func TestMarginsRouth(t *testing.T) {
	for _, K := range []float64{0.5, 1, 2, 4, 6, 10} {
		m := LoopMargins(loopOf(Poly{K}, Poly{0, 2, 3, 1}, 0), 1e-2, 1e2, 200)
		if !near(m.PhaseCrossover, math.Sqrt2, 1e-10, 0) {
			t.Errorf("K=%v wp=%.15g", K, m.PhaseCrossover)
		}
		if want := 20 * math.Log10(6/K); !near(m.GainDB, want, 0, 1e-9) {
			t.Errorf("K=%v GM=%.15g want %.15g", K, m.GainDB, want)
		}
		if K > 6 && !(m.PhaseDeg < 0) {
			t.Errorf("K=%v unstable loop PM %v", K, m.PhaseDeg)
		}
		if len(m.GainCrossovers) != 1 || len(m.PhaseCrossovers) != 1 {
			t.Errorf("K=%v crossings %v %v", K, m.GainCrossovers, m.PhaseCrossovers)
		}
	}
}

func TestMarginsNoCrossings(t *testing.T) {
	// 0.5/(s+1): |L| < 1 everywhere, phase never reaches −180°.
	m := LoopMargins(loopOf(Poly{0.5}, Poly{1, 1}, 0), 1e-3, 1e3, 100)
	if !math.IsInf(m.GainDB, 1) || !math.IsNaN(m.PhaseCrossover) || !math.IsInf(m.PhaseDeg, 1) ||
		!math.IsNaN(m.Crossover) || !math.IsInf(m.DelayMargin, 1) {
		t.Errorf("%+v", m)
	}
	// Invalid ranges.
	for _, r := range [][2]float64{{0, 1}, {1, 1}, {2, 1}, {math.NaN(), 1}, {1, math.Inf(1)}} {
		m := LoopMargins(loopOf(Poly{1}, Poly{1, 1}, 0), r[0], r[1], 100)
		if !math.IsNaN(m.GainDB) || !math.IsNaN(m.PhaseDeg) {
			t.Errorf("range %v: %+v", r, m)
		}
	}
	// L that is NaN everywhere / nil must not panic.
	_ = LoopMargins(func(float64) complex128 { return cmplx.NaN() }, 1e-3, 1e3, 50)
	_ = LoopMargins(nil, 1e-3, 1e3, 50)
	_ = LoopMargins(loopOf(Poly{1}, Poly{1, 1}, 0), 1e-3, 1e3, 0)
}

// TestMarginsLongDelay: a large delay makes the phase wrap many times
// between grid points of a coarse scan; the adaptive unwrapping must still
// find the first phase crossover, which for 1/(s+1)·e^{−sτ}·K is where
// atan(ω) + ωτ = π.
func TestMarginsLongDelay(t *testing.T) {
	const K, tau = 1.3, 2.0 // stable: K < √(1+ω1²) at the first phase crossover ω1
	m := LoopMargins(loopOf(Poly{K}, Poly{1, 1}, tau), 1e-2, 1e2, 20)
	// Reference by bisection on atan(ω)+ωτ−π (monotone).
	lo, hi := 0.1, 3.0
	for i := 0; i < 200; i++ {
		mid := (lo + hi) / 2
		if math.Atan(mid)+mid*tau < math.Pi {
			lo = mid
		} else {
			hi = mid
		}
	}
	wp := (lo + hi) / 2
	gm := -20 * math.Log10(K/math.Hypot(1, wp))
	if !near(m.PhaseCrossover, wp, 1e-9, 0) || !near(m.GainDB, gm, 0, 1e-9) {
		t.Errorf("GM %v at %v, want %v at %v (all %v)", m.GainDB, m.PhaseCrossover, gm, wp, m.PhaseCrossovers)
	}
	// Gain crossover √(K²−1); PM = 180 − atan(ωc) − ωcτ (deg), wrapped.
	wc := math.Sqrt(K*K - 1)
	pm := 180 - (math.Atan(wc)+wc*tau)*180/math.Pi
	pm -= 360 * math.Ceil((pm-180)/360)
	if !near(m.Crossover, wc, 1e-9, 0) || !near(m.PhaseDeg, pm, 0, 1e-7) {
		t.Errorf("PM %v at %v, want %v at %v", m.PhaseDeg, m.Crossover, pm, wc)
	}
	// Phase crossovers are at atan(ω)+ωτ = π(2k+1): several in range, ascending.
	if len(m.PhaseCrossovers) < 10 {
		t.Errorf("only %d phase crossovers", len(m.PhaseCrossovers))
	}
	for i := 1; i < len(m.PhaseCrossovers); i++ {
		if !(m.PhaseCrossovers[i] > m.PhaseCrossovers[i-1]) {
			t.Fatalf("not ascending %v", m.PhaseCrossovers)
		}
	}
}

// TestMarginsDiscrete: the same machinery on a discrete loop evaluated at
// z = e^{jωT}: ZOH of K/(s(s+1)(s+2)) at T = 0.1 — the margins must be
// consistent with the frequency function at the reported points, and
// smaller than the continuous ones (the ZOH adds ≈ ωT/2 of lag).
func TestMarginsDiscrete(t *testing.T) {
	const K, T = 2.0, 0.1
	s, _ := TF{Num: Poly{K}, Den: Poly{0, 2, 3, 1}}.SS()
	d, err := ZOH(s, T)
	if err != nil {
		t.Fatal(err)
	}
	L := func(w float64) complex128 { return d.Eval(cmplx.Exp(complex(0, w*T))) }
	m := LoopMargins(L, 1e-3, math.Pi/T, 500)
	cont := LoopMargins(loopOf(Poly{K}, Poly{0, 2, 3, 1}, 0), 1e-3, math.Pi/T, 500)
	if !(m.GainDB < cont.GainDB && m.PhaseDeg < cont.PhaseDeg) {
		t.Errorf("discrete %+v vs continuous %+v", m, cont)
	}
	if v := L(m.Crossover); !near(cmplx.Abs(v), 1, 1e-9, 0) {
		t.Errorf("|L(wc)| = %v", cmplx.Abs(v))
	}
	if v := L(m.PhaseCrossover); !(math.Abs(imag(v)) < 1e-9*cmplx.Abs(v) && real(v) < 0) {
		t.Errorf("L(wp) = %v not on the negative real axis", v)
	}
	// ZOH ≈ e^{−sT/2}: PM drops by about ωc·T/2.
	if drop := cont.PhaseDeg - m.PhaseDeg; math.Abs(drop-cont.Crossover*T/2*180/math.Pi) > 0.5 {
		t.Errorf("PM drop %v° vs ωcT/2 = %v°", drop, cont.Crossover*T/2*180/math.Pi)
	}
}

// TestMarginsConditional: conditionally stable 400(s+1)²/(s³(s+10)(s+20)):
// the phase starts at −270°, rises above −180° and falls back. Two phase
// crossovers; the reported GM is the one with the smallest |dB| (here the
// low-frequency, negative one: reducing the gain by ≈9 dB destabilises).
func TestMarginsConditional(t *testing.T) {
	num := PolyMul(Poly{400}, Poly{1, 2, 1})
	den := PolyMul(Poly{0, 0, 0, 1}, PolyMul(Poly{10, 1}, Poly{20, 1}))
	m := LoopMargins(loopOf(num, den, 0), 1e-3, 1e3, 300)
	if len(m.PhaseCrossovers) != 2 {
		t.Fatalf("phase crossovers %v", m.PhaseCrossovers)
	}
	L := loopOf(num, den, 0)
	g0 := -20 * math.Log10(cmplx.Abs(L(m.PhaseCrossovers[0])))
	g1 := -20 * math.Log10(cmplx.Abs(L(m.PhaseCrossovers[1])))
	if !(g0 < 0 && g1 > 0) {
		t.Errorf("expected negative then positive GM: %v %v", g0, g1)
	}
	want := g0
	if math.Abs(g1) < math.Abs(g0) {
		want = g1
	}
	if m.GainDB != want {
		t.Errorf("GM %v, want smallest |.| of %v, %v", m.GainDB, g0, g1)
	}
}

// TestGainCrossovers: K/s crosses 0 dB at ω = K, and K/(s(s+1)) where
// ω⁴ + ω² − K² = 0, ω² = (√(1 + 4K²) − 1)/2 (the closed form of
// |L(jω)| = 1, a textbook exercise); a lightly damped resonance that
// pokes above 0 dB gives three crossings, the same three LoopMargins
// finds. The delay is left out of the magnitude.
func TestGainCrossovers(t *testing.T) {
	mag := func(num, den Poly) func(float64) float64 {
		tf := TF{Num: num, Den: den}
		return func(w float64) float64 { v := cmplx.Abs(tf.Eval(complex(0, w))); return v * v }
	}
	for _, K := range []float64{0.01, 0.5, 3, 700} {
		if got := GainCrossovers(mag(Poly{K}, Poly{0, 1}), 1e-4, 1e5, 217); len(got) != 1 || math.Abs(got[0]-K) > 1e-10*K {
			t.Errorf("K/s, K = %g: crossovers %v, want [%g]", K, got, K)
		}
		want := math.Sqrt((math.Sqrt(1+4*K*K) - 1) / 2)
		if got := GainCrossovers(mag(Poly{K}, Poly{0, 1, 1}), 1e-4, 1e5, 217); len(got) != 1 || math.Abs(got[0]-want) > 1e-10*want {
			t.Errorf("K/(s(s+1)), K = %g: crossovers %v, want [%.12g]", K, got, want)
		}
	}
	// 100/(s(s² + 0.2·s + 100)): |L| ≈ 1/ω below the resonance crosses at
	// ≈ 1; at ωn = 10 with ζ = 0.01 it peaks at 1/(10·2ζ) = 5, crossing just
	// below and just above 10.
	num, den := Poly{100}, Poly{0, 100, 0.2, 1}
	got := GainCrossovers(mag(num, den), 1e-2, 1e3, 121)
	m := LoopMargins(loopOf(num, den, 0.01), 1e-2, 1e3, 121)
	if len(got) != 3 || len(m.GainCrossovers) != 3 {
		t.Fatalf("crossovers %v, LoopMargins %v: want three each", got, m.GainCrossovers)
	}
	for i := range got {
		if math.Abs(got[i]-m.GainCrossovers[i]) > 1e-10*got[i] {
			t.Errorf("crossing %d: %.12g, LoopMargins %.12g", i, got[i], m.GainCrossovers[i])
		}
		if v := cmplx.Abs(TF{Num: num, Den: den}.Eval(complex(0, got[i]))); math.Abs(v-1) > 1e-9 {
			t.Errorf("|L| at crossing %d = %.12g, want 1", i, v)
		}
	}
	if GainCrossovers(nil, 1, 10, 10) != nil || GainCrossovers(mag(Poly{1}, Poly{0, 1}), 0, 10, 10) != nil {
		t.Error("invalid input: want nil")
	}
}

// LoopMarginsFalling gives the margins of the whole sweep when |L| falls
// above wf, also when the only phase crossover lies far above wf (a lag
// 1/(s + 1) with a 10 ms delay crosses −180° near 157 rad/s, where
// GM ≈ 43.9 dB, while wf = 2) and for the conditionally stable loop whose
// reported margin is the negative one; and it evaluates fewer points.
func TestLoopMarginsFalling(t *testing.T) {
	for _, c := range []struct {
		name     string
		num, den Poly
		tau, wf  float64
	}{
		{"lag with delay", Poly{1}, Poly{1, 1}, 0.01, 2},
		{"conditional", PolyMul(Poly{400}, Poly{1, 2, 1}), PolyMul(Poly{0, 0, 0, 1}, PolyMul(Poly{10, 1}, Poly{20, 1})), 0.001, 100},
		{"K/(s(s+1)(s+2)) with delay", Poly{2}, Poly{0, 2, 3, 1}, 0.05, 10},
	} {
		L := loopOf(c.num, c.den, c.tau)
		calls := 0
		counted := func(w float64) complex128 { calls++; return L(w) }
		full := LoopMargins(counted, 1e-3, 1e5, 300)
		nFull := calls
		calls = 0
		got := LoopMarginsFalling(counted, 1e-3, 1e5, 300, c.wf)
		same := func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }
		if !same(got.GainDB, full.GainDB) || !same(got.PhaseDeg, full.PhaseDeg) || !same(got.Crossover, full.Crossover) ||
			!same(got.PhaseCrossover, full.PhaseCrossover) || !same(got.DelayMargin, full.DelayMargin) {
			t.Errorf("%s: GM %v at %v, PM %v at %v, DM %v; full sweep GM %v at %v, PM %v at %v, DM %v", c.name,
				got.GainDB, got.PhaseCrossover, got.PhaseDeg, got.Crossover, got.DelayMargin,
				full.GainDB, full.PhaseCrossover, full.PhaseDeg, full.Crossover, full.DelayMargin)
		}
		if math.IsInf(full.GainDB, 0) {
			t.Errorf("%s: no phase crossover: the case does not test the stop", c.name)
		}
		if calls >= nFull {
			t.Errorf("%s: %d evaluations, the full sweep %d: nothing saved", c.name, calls, nFull)
		}
	}
	if m := LoopMarginsFalling(loopOf(Poly{1}, Poly{1, 1}, 0.01), 1e-3, 1e5, 300, 2); math.Abs(m.GainDB-43.9) > 0.1 {
		t.Errorf("lag with delay: GM %.3f dB, want ≈ 43.9", m.GainDB)
	}
}
