package synth

import (
	"math"
	"math/rand/v2"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// TestWeightedSettle checks weightedSettle bit for bit against lti.Settle
// of the response written out (the search's former way), on damped
// oscillations of both signs and on records with NaN, ±Inf, a last sample
// outside the band, no sample outside, one sample and none.
func TestWeightedSettle(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	same := func(a, b float64) bool {
		return math.Float64bits(a) == math.Float64bits(b) || (math.IsNaN(a) && math.IsNaN(b))
	}
	check := func(name string, y0, y1 []float64, b, h, final, band float64) {
		t.Helper()
		yb := make([]float64, len(y0))
		for k := range yb {
			yb[k] = y0[k] + b*(y1[k]-y0[k])
		}
		want := lti.Settle(yb, h, final, band)
		got := weightedSettle(y0, y1, b, h, final, band)
		if !same(got.Final, want.Final) || !same(got.Peak, want.Peak) || !same(got.PeakTime, want.PeakTime) ||
			!same(got.Overshoot, want.Overshoot) || !same(got.Settling, want.Settling) || !same(got.Rise, want.Rise) ||
			got.Settled != want.Settled {
			t.Errorf("%s (b = %g, final = %g): got %+v, want %+v", name, b, final, got, want)
		}
	}
	weights := []float64{0, 1, 0.375, 0.025, 0.975, 0.6, 0.5, 0.25, 0.125, 0.8, 0.9}
	for trial := 0; trial < 400; trial++ {
		n := 1 + rng.IntN(600)
		zeta, wn, h := 0.05+0.9*rng.Float64(), 5+100*rng.Float64(), 0.001
		sign := 1.0
		if trial%5 == 0 {
			sign = -1
		}
		y0, y1 := make([]float64, n), make([]float64, n)
		for k := range y0 {
			tk := float64(k) * h
			wd := wn * math.Sqrt(1-zeta*zeta)
			env := math.Exp(-zeta * wn * tk)
			y0[k] = sign * (1 - env*math.Cos(wd*tk))
			y1[k] = sign * (1 - env*(math.Cos(wd*tk)-2*math.Sin(wd*tk)))
		}
		switch trial % 8 {
		case 1:
			y0[rng.IntN(n)] = math.NaN()
		case 2:
			y1[rng.IntN(n)] = math.Inf(1)
		case 3:
			y0[n-1] += 0.5 // last sample outside
		case 4:
			for k := range y0 { // inside from the start
				y0[k], y1[k] = sign, sign*(1+1e-4)
			}
		case 5:
			y0[rng.IntN(n)] = math.Inf(-1)
		}
		final := sign * (1 + 0.01*(rng.Float64()-0.5))
		for _, b := range weights {
			check("oscillation", y0, y1, b, h, final, 0.02)
		}
		// All weights at once, against one at a time (checked above).
		finals := make([]float64, len(weights))
		for j, b := range weights {
			finals[j] = final * (1 + 0.1*b)
		}
		got := make([]lti.StepInfo, len(weights))
		weightedSettles(y0, y1, weights, finals, h, 0.02, got)
		for j, b := range weights {
			want := weightedSettle(y0, y1, b, h, finals[j], 0.02)
			if !same(got[j].Peak, want.Peak) || !same(got[j].PeakTime, want.PeakTime) || !same(got[j].Overshoot, want.Overshoot) ||
				!same(got[j].Settling, want.Settling) || got[j].Settled != want.Settled || !same(got[j].Final, want.Final) {
				t.Errorf("weightedSettles b = %g: got %+v, want %+v", b, got[j], want)
			}
		}
		check("final zero", y0, y1, 0.5, h, 0, 0.02)
		check("final NaN", y0, y1, 0.5, h, math.NaN(), 0.02)
		check("wide band", y0, y1, 0.5, h, final, 0.3)
	}
	check("empty", nil, nil, 0.5, 0.001, 1, 0.02)
}

// TestTimeMet checks timeMet against timeViolation(…) == 0 on figures at,
// near and far from their bounds, and on NaN, Inf and zero.
func TestTimeMet(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	specs := []airframe.Spec{{Overshoot: 0.1, SettlingTime: 0.15}, {Overshoot: 0.05, SettlingTime: 0.08},
		{Overshoot: 0.1234567890123, SettlingTime: 1.0000000000007}}
	near := func(lim float64) float64 {
		switch rng.IntN(6) {
		case 0:
			return lim * (1 + 1e-8*(2*rng.Float64()-1))
		case 1:
			return lim * (1 + 1e-10*(2*rng.Float64()-1))
		case 2:
			return math.Nextafter(lim, math.Inf(2*rng.IntN(2)-1))
		case 3:
			return lim * 2 * rng.Float64()
		case 4:
			return []float64{0, math.Inf(1), math.NaN(), lim}[rng.IntN(4)]
		}
		return lim * (1 + 3e-8*(2*rng.Float64()-1))
	}
	for i := 0; i < 200000; i++ {
		s := specs[i%len(specs)]
		st := lti.StepInfo{Overshoot: near(s.Overshoot), Settling: near(s.SettlingTime), Settled: rng.IntN(8) > 0}
		if got, want := timeMet(s, st), timeViolation(s, true, st) == 0; got != want {
			t.Fatalf("%+v under %+v: timeMet %v, timeViolation says %v", st, s, got, want)
		}
	}
}

// TestSureWindow: every weight the sure window holds (newSureWindow) meets
// the time spec by the exact step summary (weightedSettle and timeMet, the
// former checked against lti.Settle above), so fastTimeChecks may skip
// the summary for it. On random damped responses of both weights, with
// final values that move with b, admitted ranges of b narrower than
// [0, 1], settling limits that fall between samples and on them, records
// too short to call a response settled, non-finite samples, an
// overshoot or band too small for the window's margins (1e-10), and final
// values of a billion that nearly cancel at the admitted weight; every
// weight by 0.001 is tried. The samples go through addBoth, as in the
// search. The test also asks that the window hold some weights and that
// a weight it leaves out can still pass (the window is sufficient, not
// exact), so that it shows both sides.
func TestSureWindow(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	held, left := 0, 0
	for trial := range 400 {
		n := 200 + rng.IntN(800)
		h := 0.001
		zeta, wn := 0.3+0.6*rng.Float64(), 20+80*rng.Float64()
		wd := wn * math.Sqrt(1-zeta*zeta)
		f0, f1 := 1.0, 1.0
		if trial%3 == 0 {
			f0, f1 = 0.8+0.2*rng.Float64(), 1.0 // a plant without integral action
		}
		a1 := 3 * rng.Float64()
		y0, y1 := make([]float64, n), make([]float64, n)
		for k := range y0 {
			tk := float64(k) * h
			env := math.Exp(-zeta * wn * tk)
			y0[k] = f0 * (1 - env*(math.Cos(wd*tk)+0.3*math.Sin(wd*tk)))
			y1[k] = f1 * (1 - env*(math.Cos(wd*tk)-a1*math.Sin(wd*tk)))
		}
		ts := (2 + 6*rng.Float64()) / (zeta * wn)
		if trial%4 == 0 {
			ts = h * math.Round(ts/h) // on a sample
		}
		s := airframe.Spec{SettlingTime: ts, Overshoot: 0.02 + 0.2*rng.Float64(), Band: 0.02}
		switch trial % 10 {
		case 5:
			s.Overshoot = 1e-10
		case 6:
			s.Band = 1e-10
		case 7:
			y0[rng.IntN(n)] = math.NaN()
		case 8:
			y1[rng.IntN(n)] = math.Inf(-1)
		}
		bmin, bmax := 0.0, 1.0
		if trial%2 == 1 {
			bmin, bmax = 0.3*rng.Float64(), 0.7+0.3*rng.Float64()
		}
		e := Evaluation{N: n, H: h, Final0: f0, Final1: f1}
		w := newWeightWindow(&e, s, bmin, bmax)
		sure := newSureWindow(&e, s, bmin, bmax)
		for k := range n {
			if w.ok {
				w.addBoth(&sure, k, y0[k], y1[k])
			}
		}
		for i := 0; i <= 1000; i++ {
			b := float64(i) / 1000
			if b < bmin || b > bmax {
				continue
			}
			f := f0 + float64(b*(f1-f0))
			st := weightedSettle(y0, y1, b, h, f, s.Band)
			met := timeMet(s, st)
			in := w.ok && sure.surely(b)
			switch {
			case in && !met:
				t.Fatalf("trial %d: b = %g is in the sure window [%g, %g] but misses the spec: %+v", trial, b, sure.lo, sure.hi, st)
			case in:
				held++
			case met:
				left++
			}
		}
	}
	if held == 0 || left == 0 {
		t.Errorf("the window held %d passing weights and left out %d: want both", held, left)
	}
	t.Logf("%d passing weights held by the window, %d passing ones left to the summary", held, left)

	// An overshoot limit below 1e-6, where rounding 1 + os·(1 − 1e-6)
	// would use up the margin: newSureWindow holds no weight then, and a
	// response with one sample at the window's own top, whose overshoot
	// is computed above the limit, is left to the summary.
	const n = 400
	s := airframe.Spec{SettlingTime: 0.1, Overshoot: 1.00002e-10, Band: 0.02}
	y := make([]float64, n)
	for k := range y {
		y[k] = 1
	}
	y[10] = 1 + float64(s.Overshoot*(1-1e-6))
	e := Evaluation{N: n, H: 0.001, Final0: 1, Final1: 1}
	w, sure := newWeightWindow(&e, s, 0, 1), newSureWindow(&e, s, 0, 1)
	for k := range n {
		w.addBoth(&sure, k, y[k], y[k])
	}
	st := weightedSettle(y, y, 1, e.H, 1, s.Band)
	if timeMet(s, st) {
		t.Fatalf("overshoot limit 1.00002e-10: the trap's response meets the spec (overshoot %g); the case tests nothing", st.Overshoot)
	}
	if sure.surely(1) {
		t.Errorf("overshoot limit 1.00002e-10: the sure window holds b = 1, whose overshoot %g misses it", st.Overshoot)
	}

	// Final values of a billion in magnitude that nearly cancel at the
	// admitted weight (F(0.5) = 1): the constant products of the window's
	// inequalities round by far more than its margin, and a sample at the
	// top of the window misses the overshoot limit.
	e = Evaluation{N: n, H: 0.001, Final0: 1e9, Final1: 2 - 1e9}
	s = airframe.Spec{SettlingTime: 0.1, Overshoot: 0.02, Band: 0.02}
	y0, y1 := make([]float64, n), make([]float64, n)
	for k := range y0 {
		y0[k], y1[k] = 0, 2
	}
	misses := 0
	for range 2000 {
		// A spike at the overshoot limit, from 5e-8 below it to 1.5e-7
		// above: the ulp of 1e9 is 1.2e-7, the window's margin 2e-8.
		y1[10] = 2*(1+s.Overshoot) + float64(4e-7*(rng.Float64()-0.25))
		w, sure = newWeightWindow(&e, s, 0.5, 0.5), newSureWindow(&e, s, 0.5, 0.5)
		for k := range n {
			w.addBoth(&sure, k, y0[k], y1[k])
		}
		if !timeMet(s, weightedSettle(y0, y1, 0.5, e.H, 1, s.Band)) {
			misses++
			if sure.surely(0.5) {
				t.Fatalf("final values ±1e9: the sure window holds b = 0.5, whose spike %.17g misses the spec", y1[10])
			}
		}
	}
	if misses == 0 {
		t.Errorf("final values ±1e9: no spike missed the spec; the case tests nothing")
	}
}
