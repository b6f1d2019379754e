package lti

import (
	"errors"
	"math"
	"math/cmplx"
	"testing"
)

// TestTFSSMatchesScipy: TF.SS is the scipy.signal.tf2ss controllable
// canonical form (scipy 1.10 via testdata/gen_ref.py).
func TestTFSSMatchesScipy(t *testing.T) {
	for _, c := range zohCases {
		s, err := TF{Num: c.num, Den: c.den}.SS()
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		checkVec(t, c.name+" A", s.A, c.A, 1e-15, 1e-15)
		checkVec(t, c.name+" B", s.B, c.B, 0, 0)
		checkVec(t, c.name+" C", s.C, c.C, 1e-15, 1e-15)
		if !near(s.D, c.D, 1e-15, 0) {
			t.Errorf("%s D = %v want %v", c.name, s.D, c.D)
		}
	}
}

// TestZOHScipy: ZOH vs scipy.signal.cont2discrete(method='zoh') and the step
// response vs scipy.signal.dlsim. scipy uses scipy.linalg.expm (Padé 13 with
// scaling and squaring), gonum's mat.Exp the same algorithm family; agreement
// is to a few ulps of the largest entry.
func TestZOHScipy(t *testing.T) {
	for _, c := range zohCases {
		d, err := ZOH(SS{N: len(c.B), A: c.A, B: c.B, C: c.C, D: c.D}, c.T)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		checkVec(t, c.name+" Ad", d.A, c.Ad, 1e-13, 1e-15)
		checkVec(t, c.name+" Bd", d.B, c.Bd, 1e-13, 1e-16)
		checkVec(t, c.name+" Cd", d.C, c.Cd, 0, 0)
		if d.D != c.Dd || d.T != c.T {
			t.Errorf("%s: D/T %v %v", c.name, d.D, d.T)
		}
		checkVec(t, c.name+" step", d.Step(len(c.step)), c.step, 1e-11, 1e-13)
		checkVec(t, c.name+" simulate", d.Simulate(ones(len(c.step))), c.step, 1e-11, 1e-13)
	}
}

func ones(n int) []float64 {
	u := make([]float64, n)
	for i := range u {
		u[i] = 1
	}
	return u
}

// TestZOHFirstOrderClosedForm: ZOH of a/(s+a) is (1−e^{−aT})/(z−e^{−aT})
// (Franklin, Powell & Workman, Digital Control of Dynamic Systems, table of
// ZOH equivalents; from memory, and immediate from Γ = ∫_0^T e^{−aη}dη·a).
func TestZOHFirstOrderClosedForm(t *testing.T) {
	for _, tc := range []struct{ a, T float64 }{{2, 0.1}, {0.1, 1}, {50, 0.001}, {1e-6, 0.01}} {
		s, _ := TF{Num: Poly{tc.a}, Den: Poly{tc.a, 1}}.SS()
		d, err := ZOH(s, tc.T)
		if err != nil {
			t.Fatal(err)
		}
		e := math.Exp(-tc.a * tc.T)
		// Realization: x' = −a x + u, y = a x; Γ = (1−e)/a.
		if !near(d.A[0], e, 1e-15, 0) || !near(d.B[0]*d.C[0], -math.Expm1(-tc.a*tc.T), 1e-13, 0) {
			t.Errorf("a=%v T=%v: Φ=%v ΓC=%v want %v %v", tc.a, tc.T, d.A[0], d.B[0]*d.C[0], e, 1-e)
		}
		z := complex(0.3, 0.8)
		want := complex(-math.Expm1(-tc.a*tc.T), 0) / (z - complex(e, 0))
		if got := d.Eval(z); !nearC(got, want, 1e-12, 0) {
			t.Errorf("Eval %v want %v", got, want)
		}
		p, _ := d.Poles()
		if len(p) != 1 || !near(real(p[0]), e, 1e-15, 0) {
			t.Errorf("poles %v", p)
		}
	}
}

// firstOrderDelayClosedForm: for G = a/(s+a), x' = −a x + a u with input
// delay τ = d·T + f, Åström & Wittenmark (Computer-Controlled Systems;
// from memory, and re-derived by integrating a·e^{−aη}),
// "first-order system with time delay" example):
//
//	Φ = e^{−aT}, Γ0 = 1 − e^{−a(T−f)}, Γ1 = e^{−a(T−f)} − e^{−aT}.
func TestZOHDelayFirstOrderClosedForm(t *testing.T) {
	const a, T = 3.0, 0.1
	s := SS{N: 1, A: []float64{-a}, B: []float64{a}, C: []float64{1}}
	for _, tau := range []float64{0, 0.03, 0.1, 0.17, 0.25, 0.3, 0.999999} {
		d, err := ZOHDelay(s, T, tau)
		if err != nil {
			t.Fatal(err)
		}
		nd := int(math.Floor(tau/T + 1e-12))
		f := tau - float64(nd)*T
		if f < 1e-12 {
			f = 0
		}
		wantN := 1 + nd
		if f > 0 {
			wantN++
		}
		if d.N != wantN {
			t.Fatalf("tau=%v: N=%d want %d", tau, d.N, wantN)
		}
		g0 := 1 - math.Exp(-a*(T-f))
		g1 := math.Exp(-a*(T-f)) - math.Exp(-a*T)
		if !near(d.A[0], math.Exp(-a*T), 1e-15, 0) {
			t.Errorf("tau=%v Φ=%v", tau, d.A[0])
		}
		gotG0 := d.B[0]
		if nd > 0 {
			gotG0 = d.A[nd] // column of w_d = u[k−d]
		}
		if !near(gotG0, g0, 1e-13, 1e-16) {
			t.Errorf("tau=%v Γ0=%v want %v", tau, gotG0, g0)
		}
		if f > 0 && !near(d.A[nd+1], g1, 1e-13, 1e-16) {
			t.Errorf("tau=%v Γ1=%v want %v", tau, d.A[nd+1], g1)
		}
		// Step response at the samples equals the continuous delayed step
		// 1 − e^{−a(kT−τ)} for kT ≥ τ (exact, the step is piecewise constant).
		y := d.Step(40)
		for k, v := range y {
			tk := float64(k)*T - tau
			want := 0.0
			if tk >= -1e-12 {
				want = -math.Expm1(-a * math.Max(tk, 0))
			}
			if !near(v, want, 1e-12, 1e-14) {
				t.Errorf("tau=%v y[%d]=%.16g want %.16g", tau, k, v, want)
			}
		}
	}
}

// secondOrderStep is Ogata's closed-form unit-step response of
// ωn²/(s²+2ζωn s+ωn²), 0<ζ<1 (Modern Control Engineering, §5-3):
// y = 1 − e^{−ζωn t}/√(1−ζ²)·sin(ωd t + acos ζ).
func secondOrderStep(wn, z, t float64) float64 {
	if t < 0 {
		return 0
	}
	wd := wn * math.Sqrt(1-z*z)
	return 1 - math.Exp(-z*wn*t)/math.Sqrt(1-z*z)*math.Sin(wd*t+math.Acos(z))
}

// TestZOHDelaySecondOrder: delayed step of an underdamped system vs Ogata's
// closed form shifted by τ, for several fractional and whole delays.
func TestZOHDelaySecondOrder(t *testing.T) {
	wn, z := 8.0, 0.3
	s, _ := TF{Num: Poly{wn * wn}, Den: Poly{wn * wn, 2 * z * wn, 1}}.SS()
	const T = 0.01
	for _, tau := range []float64{0, 0.004, 0.01, 0.0237, 0.05} {
		d, err := ZOHDelay(s, T, tau)
		if err != nil {
			t.Fatal(err)
		}
		y := d.Step(300)
		for k, v := range y {
			want := secondOrderStep(wn, z, float64(k)*T-tau)
			if !near(v, want, 1e-11, 1e-12) {
				t.Fatalf("tau=%v y[%d]=%.16g want %.16g", tau, k, v, want)
			}
		}
	}
}

// TestZOHDelayLsim: arbitrary input sequences through ZOHDelay vs
// scipy.signal.lsim(interp=False) of the continuous system on a sub-grid
// T/q aligned with the delay (exact for piecewise-constant input).
func TestZOHDelayLsim(t *testing.T) {
	for _, c := range delayCases {
		s, err := TF{Num: c.num, Den: c.den}.SS()
		if err != nil {
			t.Fatal(err)
		}
		d, err := ZOHDelay(s, c.T, c.tau)
		if err != nil {
			t.Fatal(err)
		}
		checkVec(t, c.name, d.Simulate(c.u), c.y, 1e-12, 1e-13)
	}
}

func TestZOHErrors(t *testing.T) {
	s := SS{N: 1, A: []float64{-1}, B: []float64{1}, C: []float64{1}}
	for _, T := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, err := ZOH(s, T); !errors.Is(err, ErrBadPeriod) {
			t.Errorf("T=%v: %v", T, err)
		}
		if _, err := ZOHDelay(s, T, 0.1); !errors.Is(err, ErrBadPeriod) {
			t.Errorf("delay T=%v: %v", T, err)
		}
	}
	for _, tau := range []float64{-0.1, math.NaN(), math.Inf(1)} {
		if _, err := ZOHDelay(s, 0.1, tau); !errors.Is(err, ErrBadDelay) {
			t.Errorf("tau=%v: %v", tau, err)
		}
	}
	if _, err := ZOH(SS{N: 2, A: []float64{1}}, 0.1); !errors.Is(err, ErrBadDims) {
		t.Errorf("dims: %v", err)
	}
	if _, err := ZOH(SS{N: 1, A: []float64{math.NaN()}, B: []float64{1}, C: []float64{1}}, 0.1); !errors.Is(err, ErrNonFinite) {
		t.Errorf("NaN: %v", err)
	}
	// Static gain: N = 0 works and delays become a pure shift register.
	d, err := ZOHDelay(SS{D: 2}, 0.1, 0.2)
	if err != nil || d.N != 2 {
		t.Fatalf("static delay: %+v %v", d, err)
	}
	checkVec(t, "pure delay", d.Simulate([]float64{1, 2, 3, 4}), []float64{0, 0, 2, 4}, 0, 0)
}

func TestTFSSErrors(t *testing.T) {
	if _, err := (TF{Num: Poly{1, 1, 1}, Den: Poly{1, 1}}).SS(); !errors.Is(err, ErrImproper) {
		t.Errorf("improper: %v", err)
	}
	if _, err := (TF{Num: Poly{1}, Den: Poly{0}}).SS(); !errors.Is(err, ErrZeroPoly) {
		t.Errorf("zero den: %v", err)
	}
	if _, err := (TF{Num: Poly{math.NaN()}, Den: Poly{1, 1}}).SS(); !errors.Is(err, ErrNonFinite) {
		t.Errorf("NaN: %v", err)
	}
	s, err := TF{Num: Poly{3}, Den: Poly{2}}.SS()
	if err != nil || s.N != 0 || s.D != 1.5 {
		t.Errorf("static: %+v %v", s, err)
	}
	s, err = TF{Num: Poly{}, Den: Poly{1, 1}}.SS()
	if err != nil || s.N != 1 || s.C[0] != 0 || s.D != 0 {
		t.Errorf("zero num: %+v %v", s, err)
	}
}

// TestStepSecondOrder: Disc.Step of ZOH(ωn²/(s²+2ζωn s+ωn²)) equals Ogata's
// closed form at the samples, and StepMetrics recovers peak time π/ωd and
// overshoot exp(−ζπ/√(1−ζ²)) (Ogata §5-3) to within the sampling resolution.
func TestStepSecondOrder(t *testing.T) {
	for _, z := range []float64{0.1, 0.3, 0.5, 0.7} {
		wn := 5.0
		s, _ := TF{Num: Poly{wn * wn}, Den: Poly{wn * wn, 2 * z * wn, 1}}.SS()
		const h = 1e-3
		d, err := ZOH(s, h)
		if err != nil {
			t.Fatal(err)
		}
		y := d.Step(12000)
		for k := 0; k < len(y); k += 97 {
			if want := secondOrderStep(wn, z, float64(k)*h); !near(y[k], want, 1e-10, 1e-12) {
				t.Fatalf("ζ=%v y[%d]=%v want %v", z, k, y[k], want)
			}
		}
		si := StepMetrics(y, h, 1, 0.02)
		wd := wn * math.Sqrt(1-z*z)
		tp := math.Pi / wd
		os := math.Exp(-z * math.Pi / math.Sqrt(1-z*z))
		if math.Abs(si.PeakTime-tp) > h {
			t.Errorf("ζ=%v peak time %v want %v", z, si.PeakTime, tp)
		}
		// Sampling within h of the peak changes the value by O((ωd h)²).
		if math.Abs(si.Overshoot-os) > 1e-5 {
			t.Errorf("ζ=%v overshoot %v want %v", z, si.Overshoot, os)
		}
		if !si.Settled || si.Final != 1 {
			t.Errorf("ζ=%v not settled: %+v", z, si)
		}
		// Settling: the envelope bound 4/(ζωn) (2 %, Ogata) is an upper estimate.
		if si.Settling <= 0 || si.Settling > 4/(z*wn)*1.1 {
			t.Errorf("ζ=%v settling %v vs envelope %v", z, si.Settling, 4/(z*wn))
		}
		// The exact settling time: y(Ts) is on the band edge.
		if e := math.Abs(secondOrderStep(wn, z, si.Settling) - 1); math.Abs(e-0.02) > 1e-4 {
			t.Errorf("ζ=%v |y(Ts)−1| = %v, want 0.02", z, e)
		}
	}
}

func TestStepIntoNoAlloc(t *testing.T) {
	d := sixState(t)
	y := make([]float64, 1000)
	if n := testing.AllocsPerRun(20, func() { d.StepInto(y) }); n != 0 {
		t.Errorf("StepInto allocates %v", n)
	}
	u := ones(1000)
	if n := testing.AllocsPerRun(20, func() { d.SimulateInto(y, u) }); n != 0 {
		t.Errorf("SimulateInto allocates %v", n)
	}
	checkVec(t, "StepInto vs Simulate", d.Step(1000), d.Simulate(u), 1e-15, 1e-15)
}

// sixState is a 6-state rate loop–like plant: sensor lag, actuator 2nd
// order, rigid body with a lightly damped mode, ZOH at 1 kHz.
func sixState(tb testing.TB) Disc {
	z := ZPK{Gain: 4e5, Zeros: []complex128{-20}, Poles: []complex128{
		-1, -60, complex(-15, 80), complex(-15, -80), complex(-3, 30), complex(-3, -30)}}
	tf, err := z.TF()
	if err != nil {
		tb.Fatal(err)
	}
	s, err := tf.SS()
	if err != nil {
		tb.Fatal(err)
	}
	d, err := ZOH(s, 1e-3)
	if err != nil {
		tb.Fatal(err)
	}
	return d
}

func BenchmarkStep6x1000(b *testing.B) {
	d := sixState(b)
	y := make([]float64, 1000)
	b.ReportAllocs()
	for b.Loop() {
		d.StepInto(y)
	}
}

// TestEvalConsistency: TF, ZPK, SS and the discrete realization evaluate the
// same function; TF.Eval vs scipy.signal.freqresp.
func TestEvalConsistency(t *testing.T) {
	for _, c := range freqCases {
		tf := TF{Num: c.num, Den: c.den}
		s, err := tf.SS()
		if err != nil {
			t.Fatal(err)
		}
		for i, w := range c.w {
			jw := complex(0, w)
			if got := tf.Eval(jw); !nearC(got, c.h[i], 1e-13, 0) {
				t.Errorf("TF.Eval(j%v) = %v, scipy %v", w, got, c.h[i])
			}
			if got := s.Eval(jw); !nearC(got, c.h[i], 1e-12, 0) {
				t.Errorf("SS.Eval(j%v) = %v, scipy %v", w, got, c.h[i])
			}
		}
		zr, _ := c.num.Roots()
		pr, _ := c.den.Roots()
		zpk := ZPK{Gain: c.num[c.num.Deg()] / c.den[c.den.Deg()], Zeros: zr, Poles: pr}
		for i, w := range c.w {
			if got := zpk.Eval(complex(0, w)); !nearC(got, c.h[i], 1e-11, 0) {
				t.Errorf("ZPK.Eval(j%v) = %v, scipy %v", w, got, c.h[i])
			}
		}
		back, err := zpk.TF()
		if err != nil {
			t.Fatal(err)
		}
		n := tf.Normalize()
		checkVec(t, "ZPK.TF num", back.Num, n.Num, 1e-12, 1e-14)
		checkVec(t, "ZPK.TF den", back.Den, n.Den, 1e-12, 1e-14)
	}
	// Disc.Eval of a ZOH model: compare with the z-transform of its own
	// impulse response, Σ h[k] z^{−k}, at |z| = 2 (fast convergence).
	d := sixState(t)
	imp := d.Simulate(append([]float64{1}, make([]float64, 4000)...))
	z := complex(2*math.Cos(0.7), 2*math.Sin(0.7))
	var sum complex128
	zk := complex(1, 0)
	for _, h := range imp {
		sum += complex(h, 0) * zk
		zk /= z
	}
	if got := d.Eval(z); !nearC(got, sum, 1e-12, 1e-15) {
		t.Errorf("Disc.Eval %v vs Σh z^-k %v", got, sum)
	}
	if got := (Disc{N: 1, A: []float64{0.5}, B: []float64{1}, C: []float64{1}}).Eval(0.5); !cmplx.IsInf(got) {
		t.Errorf("Eval at pole = %v", got)
	}
}

func TestTFOps(t *testing.T) {
	g := TF{Num: Poly{2}, Den: Poly{0, 1, 1}} // 2/(s(s+1))
	h := TF{Num: Poly{1}, Den: Poly{1}}
	cl := g.Feedback(h) // 2/(s²+s+2)
	checkVec(t, "cl num", cl.Num, []float64{2}, 0, 0)
	checkVec(t, "cl den", cl.Den, []float64{2, 1, 1}, 0, 0)
	if cl.DC() != 1 {
		t.Errorf("cl DC %v", cl.DC())
	}
	if !math.IsInf(g.DC(), 1) || !math.IsInf(g.Series(TF{Num: Poly{-1}, Den: Poly{1}}).DC(), -1) {
		t.Errorf("integrator DC %v", g.DC())
	}
	if !math.IsNaN((TF{Num: Poly{0, 1}, Den: Poly{0, 1}}).DC()) || !math.IsNaN((TF{}).DC()) {
		t.Error("0/0 DC not NaN")
	}
	sr := g.Series(TF{Num: Poly{1, 1}, Den: Poly{3, 1}})
	s := complex(0.2, 1.3)
	if !nearC(sr.Eval(s), g.Eval(s)*(1+s)/(3+s), 1e-15, 0) {
		t.Error("Series")
	}
	nz := TF{Num: Poly{2, 4, 0}, Den: Poly{4, 2, 0}}.Normalize()
	checkVec(t, "norm num", nz.Num, []float64{1, 2}, 0, 0)
	checkVec(t, "norm den", nz.Den, []float64{2, 1}, 0, 0)
	if z := (TF{Num: Poly{1}, Den: Poly{}}).Normalize(); len(z.Den) != 0 {
		t.Error("zero den normalize")
	}
}

// TestPade: vs scipy.interpolate.pade of the Taylor series of e^{−τx}
// (scipy solves an ill-conditioned Toeplitz system, rcond down to 1e-19 for
// n = 6, so its coefficients are only good to ~1e-11 relative), and the
// closed forms (Franklin, Powell & Emami-Naeini, Feedback Control of Dynamic
// Systems, Padé approximant of a delay; from memory, and re-derived from the
// c_k formula): (1,1) = (1−sτ/2)/(1+sτ/2),
// (2,2) = (1−sτ/2+s²τ²/12)/(1+sτ/2+s²τ²/12).
func TestPade(t *testing.T) {
	for _, c := range padeCases {
		p := Pade(c.tau, c.n)
		checkVec(t, "pade num", p.Num, c.num, 1e-10, 1e-15)
		checkVec(t, "pade den", p.Den, c.den, 1e-10, 1e-15)
	}
	for _, tau := range []float64{0.01, 0.3, 2} {
		checkVec(t, "(1,1) num", Pade(tau, 1).Num, []float64{1, -tau / 2}, 1e-15, 0)
		checkVec(t, "(1,1) den", Pade(tau, 1).Den, []float64{1, tau / 2}, 1e-15, 0)
		checkVec(t, "(2,2) num", Pade(tau, 2).Num, []float64{1, -tau / 2, tau * tau / 12}, 1e-15, 0)
		checkVec(t, "(2,2) den", Pade(tau, 2).Den, []float64{1, tau / 2, tau * tau / 12}, 1e-15, 0)
		// All-pass: |P(jω)| = 1, phase ≈ −ωτ at low frequency.
		p := Pade(tau, 4)
		w := 0.5 / tau
		v := p.Eval(complex(0, w))
		if !near(cmplx.Abs(v), 1, 1e-14, 0) || !near(cmplx.Phase(v), -w*tau, 1e-9, 0) {
			t.Errorf("Pade(%v,4)(j%v) = %v", tau, w, v)
		}
	}
	if p := Pade(0, 3); p.Num.Deg() != 0 || p.Eval(1i) != 1 {
		t.Errorf("Pade(0) = %+v", p)
	}
}

// TestKernelsMatchGeneric: the unrolled kernels are bit-identical to the
// generic loops for every N they cover (and one above).
func TestKernelsMatchGeneric(t *testing.T) {
	for n := 0; n <= maxKernelN+1; n++ {
		A := make([]float64, n*n)
		B := make([]float64, n)
		C := make([]float64, n)
		for i := range A {
			A[i] = 0.3 * math.Sin(float64(7*i+n))
		}
		for i := 0; i < n; i++ {
			A[i*n+i] += 0.5
			B[i] = math.Cos(float64(i + 1))
			C[i] = math.Sin(float64(3*i + 2))
		}
		d := Disc{N: n, A: A, B: B, C: C, D: 0.25, T: 1}
		u := make([]float64, 50)
		for i := range u {
			u[i] = math.Sin(float64(i) * 0.37)
		}
		g1, g2 := make([]float64, 50), make([]float64, 50)
		stepGeneric(n, A, B, C, d.D, g1)
		d.StepInto(g2)
		for k := range g1 {
			if g1[k] != g2[k] {
				t.Fatalf("N=%d step[%d]: %v vs %v", n, k, g2[k], g1[k])
			}
		}
		simGeneric(n, A, B, C, d.D, g1, u)
		d.SimulateInto(g2, u)
		for k := range g1 {
			if g1[k] != g2[k] {
				t.Fatalf("N=%d sim[%d]: %v vs %v", n, k, g2[k], g1[k])
			}
		}
	}
}

func TestEvalNoAlloc(t *testing.T) {
	d := sixState(t)
	z := complex(0.9, 0.1)
	if n := testing.AllocsPerRun(20, func() { _ = d.Eval(z) }); n != 0 {
		t.Errorf("Disc.Eval allocates %v", n)
	}
}

func BenchmarkDiscEval6(b *testing.B) {
	d := sixState(b)
	z := cmplx.Exp(0.3i)
	b.ReportAllocs()
	for b.Loop() {
		_ = d.Eval(z)
	}
}

// StepPair is the reference step loop (stepGeneric, which StepInto's
// kernels are tested against, and those against SciPy) for each of its two
// outputs, bit for bit, however the record is cut into calls.
func TestStepPairMatchesStepLoop(t *testing.T) {
	for _, n := range []int{1, 3, 6} {
		d := Disc{N: n, A: make([]float64, n*n), B: make([]float64, n), C: make([]float64, n), T: 1}
		c0, c1 := make([]float64, n), make([]float64, n)
		for i := range n {
			for j := range n {
				d.A[i*n+j] = 0.1 * math.Sin(float64(3*i+j+1))
			}
			d.A[i*n+i] += 0.6
			d.B[i], c0[i], c1[i] = math.Cos(float64(i)), float64(i+1)/3, -math.Sin(float64(i+2))
		}
		const m = 200
		w0, w1 := make([]float64, m), make([]float64, m)
		stepGeneric(n, d.A, d.B, c0, 0.25, w0)
		stepGeneric(n, d.A, d.B, c1, -0.5, w1)
		g0, g1 := make([]float64, m), make([]float64, m)
		sp := d.NewStepPair(c0, c1, 0.25, -0.5)
		for i, cut := 0, 1; i < m; cut = 2*cut + 1 {
			j := min(i+cut, m)
			sp.Run(g0[i:j], g1[i:j])
			i = j
		}
		for k := range m {
			if g0[k] != w0[k] || g1[k] != w1[k] {
				t.Fatalf("n=%d sample %d: (%g, %g), reference (%g, %g)", n, k, g0[k], g1[k], w0[k], w1[k])
			}
		}
	}
}
