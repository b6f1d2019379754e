package synth

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// denseMs is a brute-force reference of the sensitivity peak of c over the
// plants of l, independent of the search's grid: |1/(1 + C·P)| on 2000
// points a decade over the grid's span, the largest sample refined by a
// ternary search between its neighbours (the peak of a smooth function).
func denseMs(l Loops, c Controller) float64 {
	g := l.Grid()
	lo, hi := math.Log(g[0]), math.Log(g[len(g)-1])
	n := int(2000*(hi-lo)/math.Ln10) + 1
	ctrl := l.CtrlAt(c)
	best := 0.0
	for i := 0; i < l.Primary(); i++ {
		s := func(t float64) float64 {
			w := math.Exp(t)
			return 1 / cmplx.Abs(1+ctrl(w)*l.OpenAt(i, w))
		}
		bk, bv := 0, -1.0
		for k := 0; k < n; k++ {
			if v := s(lo + (hi-lo)*float64(k)/float64(n-1)); v > bv {
				bk, bv = k, v
			}
		}
		a, b := lo+(hi-lo)*float64(max(bk-1, 0))/float64(n-1), lo+(hi-lo)*float64(min(bk+1, n-1))/float64(n-1)
		for it := 0; it < 100; it++ {
			m1, m2 := a+(b-a)/3, b-(b-a)/3
			if s(m1) < s(m2) {
				a = m1
			} else {
				b = m2
			}
		}
		best = math.Max(best, math.Max(bv, s((a+b)/2)))
	}
	return best
}

// TestMsExactAgainstDenseSweep: the line's Ms bound between grid points
// (msExact) against the brute-force peak of denseMs, on every shape of the
// coarse grid of every form, on plants with and without delay, with a
// lightly damped resonance, over an envelope of plant gains. At the bound
// the peak lies within [Ms·(1 − 2e-6), Ms] (msExact aims 1e-6 inside;
// the reference's sweep and refinement agree with it to far better than
// the 1e-6 left), where the grid's bound alone exceeds Ms on some shapes
// (which shows the check can fail).
func TestMsExactAgainstDenseSweep(t *testing.T) {
	type tc struct {
		name string
		p    airframe.Axis
	}
	var cases []tc
	for _, form := range airframe.Forms() {
		for _, delay := range []float64{0, 0.002} {
			p := demoProblem(form, delay)
			p.Spec.MaxSensitivity = 1.6
			p.Envelope = airframe.Envelope{GainScale: [2]float64{0.8, 1.25}, LagScale: [2]float64{1, 1}}
			cases = append(cases, tc{fmt.Sprintf("%s delay %g", form, delay), p})
		}
	}
	p := demoProblem(airframe.FormPID, 0.001)
	p.Plant.Model.Poles = append(p.Plant.Model.Poles, complex(-15, 300), complex(-15, -300))
	p.Plant.Model.Gain *= 300 * 300
	p.Spec.MaxSensitivity = 1.4
	cases = append(cases, tc{"pid resonance", p})

	gridOver, lines := 0, 0
	for _, c := range cases {
		l := ContinuousLoops(c.p)
		tg, err := TargetFromSpec(c.p.Spec)
		if err != nil {
			t.Fatal(err)
		}
		g0 := 1 / lti.Abs(c.p.OpenLoop(complex(0, tg.OmegaN)))
		sr := newSearcher(c.p, l, g0, tg.OmegaN)
		ms := c.p.Spec.MaxSensitivity
		for _, u := range sr.gridPoints() {
			th := sr.theta(u)
			sr.basis(th)
			lo, xg, ok := sr.msBound()
			if !ok || lo > 0 || math.IsInf(xg, 1) || !(xg > 0) {
				// Lines that start above 0: TestMsInterval.
				continue
			}
			x := sr.msExact(0, xg)
			lines++
			if x == 0 {
				// Shut between grid points: x = 0 itself exceeds Ms (less the
				// 1e-6 msExact keeps inside it).
				if got := denseMs(l, sr.fam.ctrl(th, 0)); !(got > ms*(1-msInside)) {
					t.Errorf("%s, shape %v: shut by Ms, but Ms at x = 0 is %.10g", c.name, th, got)
				}
				continue
			}
			if got := denseMs(l, sr.fam.ctrl(th, x)); got > ms || got < ms*(1-2e-6) {
				t.Errorf("%s, shape %v: Ms at the line's bound %.10g is %.10g, want within [%.10g, %.10g]", c.name, th, x, got, ms*(1-2e-6), ms)
			}
			if denseMs(l, sr.fam.ctrl(th, xg)) > ms*(1+1e-6) {
				gridOver++
			}
		}
	}
	if lines < 50 || gridOver == 0 {
		t.Errorf("%d lines bounded by Ms, %d where the grid's bound alone exceeds Ms: the check has no teeth", lines, gridOver)
	}
	t.Logf("%d lines; the grid's bound alone exceeds Ms by more than 1e-6 on %d", lines, gridOver)
}

// denseNoise is a brute-force reference of the noise gain of c over the
// plants of l: the lowest gain crossover over the plants found on 2000
// points a decade and bisected, then the largest |C| from there up on the
// same points.
func denseNoise(l Loops, c Controller) float64 {
	g := l.Grid()
	lo, hi := math.Log(g[0]), math.Log(g[len(g)-1])
	n := int(2000*(hi-lo)/math.Ln10) + 1
	at := func(k int) float64 { return math.Exp(lo + (hi-lo)*float64(k)/float64(n-1)) }
	ctrl := l.CtrlAt(c)
	wc := math.Inf(1)
	for i := 0; i < l.Primary(); i++ {
		m := func(w float64) float64 { return cmplx.Abs(ctrl(w)*l.OpenAt(i, w)) - 1 }
		for k := 1; k < n && at(k-1) < wc; k++ {
			if (m(at(k-1)) >= 0) != (m(at(k)) >= 0) {
				a, b := at(k-1), at(k)
				for it := 0; it < 60; it++ {
					if mid := math.Sqrt(a * b); (m(mid) >= 0) == (m(a) >= 0) {
						a = mid
					} else {
						b = mid
					}
				}
				wc = math.Min(wc, a)
				break
			}
		}
	}
	if math.IsInf(wc, 1) {
		wc = g[0]
	}
	v := cmplx.Abs(ctrl(wc))
	for k := 0; k < n; k++ {
		if w := at(k); w > wc {
			v = math.Max(v, cmplx.Abs(ctrl(w)))
		}
	}
	return v
}

// demoSearcher returns the searcher of demoProblem's form and delay over
// a plant gain envelope of [0.8, 1.25], and its loops.
func demoSearcher(t *testing.T, form airframe.Form, delay float64) (*searcher, Loops) {
	t.Helper()
	p := demoProblem(form, delay)
	p.Envelope = airframe.Envelope{GainScale: [2]float64{0.8, 1.25}, LagScale: [2]float64{1, 1}}
	l := ContinuousLoops(p)
	tg, err := TargetFromSpec(p.Spec)
	if err != nil {
		t.Fatal(err)
	}
	return newSearcher(p, l, 1/lti.Abs(p.OpenLoop(complex(0, tg.OmegaN))), tg.OmegaN), l
}

// TestNoiseFromCrossover: the search's noise gain (noiseAt, |C| from the
// lowest gain crossover up, C interpolated at the crossover between its
// grid points) against the brute-force denseNoise, on the PI and PID
// lines of the coarse grid at a third of their frequency checks' top:
// within 0.5 % (the chord between grid points 6 % apart), where |C| at the
// grid point below the crossover, which the search took before, is more
// than 1 % high on some lines (a PI's |C| falls with frequency).
func TestNoiseFromCrossover(t *testing.T) {
	lines, high, worst := 0, 0, 0.0
	for _, form := range []airframe.Form{airframe.FormPI, airframe.FormPID} {
		for _, delay := range []float64{0, 0.002} {
			sr, l := demoSearcher(t, form, delay)
			for _, u := range sr.gridPoints() {
				pt := sr.screen(u)
				if !(pt.xf > 0) {
					continue
				}
				x := pt.xf / 3
				sr.basis(pt.th)
				got := sr.noiseAt(x)
				want := denseNoise(l, sr.fam.ctrl(pt.th, x))
				lines++
				worst = math.Max(worst, math.Abs(got/want-1))
				if math.Abs(got/want-1) > 5e-3 {
					t.Errorf("%s delay %g, shape %v, x %g: noise gain %.6g, dense sweep %.6g", form, delay, pt.th, x, got, want)
				}
				// The grid point below the crossover.
				c := sr.lbuf
				kc := crossing{k: len(sr.grid)}
				for i := range sr.open {
					kc = firstCrossover(c, sr.open[i], kc)
				}
				if kc.k < len(c) && lti.Abs(c[kc.k]) > want*1.01 {
					high++
				}
			}
		}
	}
	if lines < 40 || high == 0 {
		t.Errorf("%d lines, %d where the grid point below the crossover is more than 1 %% high: the check has no teeth", lines, high)
	}
	t.Logf("%d lines, largest difference %.2g; the grid point below the crossover is more than 1 %% high on %d", lines, worst, high)
}

// TestMsInterval: a line whose start x = 0 exceeds Ms but whose gain
// brings Ms down (the integral's phase turns the Nyquist curve away from
// −1 near its closest approach) has its admissible interval [lo, hi]
// above 0; msBound, loExact and msExact against a brute-force bisection
// of denseMs along the line. The plant is an integrating one with a slow
// motor and a long delay (a random campaign airframe of our own, made
// continuous), the shapes pids around one whose Ms falls from 1.5899 at
// Ki = 0 to 1.5861 at Ki = 8; each shape's Ms bound lies 40 % of the way
// down from its peak at Ki = 0 to its peak at Ki = 4. The start lies
// where the peak meets Ms·(1 − msInside) (to 1e-4 in x: the peak falls by
// only about 5e-4 a unit of Ki), the peak at the start and at the end lies
// within [Ms·(1 − 2e-6), Ms], every x below the start exceeds Ms and
// every x between the ends meets it. Some lines' grids do not see the
// start above 0 and are left out; 10 of the 25 must be judged.
func TestMsInterval(t *testing.T) {
	p := demoProblem(airframe.FormPID, 0.0035)
	tau := 0.07918
	p.Plant.Model = lti.ZPK{Gain: 590.7 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}
	p.Sensor = lti.ZPK{Gain: 2 * math.Pi * 356.1, Poles: []complex128{complex(-2*math.Pi*356.1, 0)}}
	p.Envelope = airframe.Envelope{GainScale: [2]float64{1, 1}, LagScale: [2]float64{1, 1}}
	l := ContinuousLoops(p)
	sr := newSearcher(p, l, 0.365, 51.4)
	peak := func(th []float64, x float64) float64 { return denseMs(l, sr.fam.ctrl(th, x)) }
	lines, gridLow := 0, 0
	for _, n := range []float64{7.0, 7.3, 7.61, 7.9, 8.2} {
		for _, rho := range []float64{15, 17, 19, 21, 23} {
			th := []float64{n, rho}
			m0, m4 := peak(th, 0), peak(th, 4)
			if !(m4 < m0) {
				continue
			}
			ms := m0 - 0.4*(m0-m4)
			sr.p.Spec.MaxSensitivity = ms
			inside := ms * (1 - msInside)
			sr.basis(th)
			lo, hi, ok := sr.msBound()
			if !ok || !(lo > 0) || math.IsInf(hi, 1) {
				// The grid does not see the start above 0 (the peak at
				// x = 0 lies between its points): msExact shuts the line
				// (TestMsExactAgainstDenseSweep).
				continue
			}
			xl := snapUp(sr.loExact(lo))
			xh := sr.msExact(xl, hi)
			if !(xh > xl) {
				t.Errorf("shape %v, Ms %.10g: interval [%g, %g] empty", th, ms, xl, xh)
				continue
			}
			lines++
			if peak(th, lo) > ms*(1+1e-6) {
				gridLow++
			}
			// The brute-force start: bisection of peak − Ms·(1 − msInside)
			// between 0 (above) and the end (below).
			a, b := 0.0, xh
			for it := 0; it < 80; it++ {
				if m := 0.5 * (a + b); peak(th, m) > inside {
					a = m
				} else {
					b = m
				}
			}
			if math.Abs(xl/b-1) > 1e-4 {
				t.Errorf("shape %v, Ms %.10g: start %.10g, brute force %.10g", th, ms, xl, b)
			}
			for _, x := range []float64{xl, xh} {
				if got := peak(th, x); got > ms || got < ms*(1-2e-6) {
					t.Errorf("shape %v: Ms at %.10g (of [%.10g, %.10g]) is %.10g, want within [%.10g, %.10g]", th, x, xl, xh, got, ms*(1-2e-6), ms)
				}
			}
			for i := 1; i < 20; i++ {
				if x := xl * float64(i) / 20; !(peak(th, x) > inside) {
					t.Errorf("shape %v: Ms at %.10g below the start %.10g is %.10g, within the bound", th, x, xl, peak(th, x))
				}
				if x := xl + (xh-xl)*float64(i)/20; peak(th, x) > ms {
					t.Errorf("shape %v: Ms at %.10g inside [%.10g, %.10g] is %.10g", th, x, xl, xh, peak(th, x))
				}
			}
		}
	}
	if lines < 10 || gridLow == 0 {
		t.Errorf("%d lines start above 0, the grid's start alone exceeds Ms on %d: the check has no teeth", lines, gridLow)
	}
	t.Logf("%d lines start above 0; the grid's start alone exceeds Ms by more than 1e-6 on %d", lines, gridLow)
}

// TestChainEnd: the least x ≥ 0 in no gap, by hand.
func TestChainEnd(t *testing.T) {
	inf := math.Inf(1)
	for _, c := range []struct {
		gaps []gap
		want float64
	}{
		{nil, 0},
		{[]gap{{1, 2}, {inf, inf}}, 0},
		{[]gap{{-1, 0}}, 0},
		{[]gap{{-1, 2}}, 2},
		{[]gap{{0, 2}}, 2},
		{[]gap{{3, 5}, {-1, 2}, {2, 4}}, 5},
		{[]gap{{3, 5}, {-1, 2}, {2.5, 4}}, 2},
		{[]gap{{-1, 2}, {1, 3}, {3, 6}, {7, 8}}, 6},
		{[]gap{{math.Inf(-1), inf}}, inf},
	} {
		var scratch []gap
		if got := chainEnd(c.gaps, &scratch); got != c.want {
			t.Errorf("chainEnd(%v) = %g, want %g", c.gaps, got, c.want)
		}
	}
}
