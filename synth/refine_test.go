package synth

import (
	"math"
	"math/rand/v2"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// arrayEvaluation serves fixed responses as an Evaluation.
func arrayEvaluation(y0, y1 []float64, h, f0, f1 float64) Evaluation {
	k := 0
	return Evaluation{Stable: true, N: len(y0), H: h, Final0: f0, Final1: f1,
		Respond: func(a, b []float64) {
			copy(a, y0[k:])
			copy(b, y1[k:])
			k += len(a)
		}}
}

// secondOrder is the unit step of ωn²/(s² + 2ζωn s + ωn²) plus a·(the
// impulse response scaled by 1/ωn), a closed-loop zero's effect, at t = k·h.
func secondOrder(zeta, wn, a, h float64, n int) []float64 {
	y := make([]float64, n)
	wd := wn * math.Sqrt(1-zeta*zeta)
	for k := range y {
		t := float64(k) * h
		e := math.Exp(-zeta * wn * t)
		step := 1 - e*(math.Cos(wd*t)+zeta*wn/wd*math.Sin(wd*t))
		imp := wn / wd * e * math.Sin(wd*t)
		y[k] = step + a*imp
	}
	return y
}

// The weight window is a necessary condition: every weight whose exact
// step summary (lti.Settle) is within the violation bound is admitted. And
// it does filter: with β = 0, over the random cases, it rejects most
// weights.
func TestWeightWindowNecessary(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	spec := airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08}
	const h, n = 0.001, 600
	admitted, rejected := 0, 0
	for trial := 0; trial < 300; trial++ {
		z0, z1 := 0.3+0.65*r.Float64(), 0.3+0.65*r.Float64()
		w0, w1 := 20+40*r.Float64(), 20+40*r.Float64()
		y0 := secondOrder(z0, w0, 0, h, n)
		y1 := secondOrder(z1, w1, 2*r.Float64(), h, n)
		f0, f1 := 1.0, 1.0
		if trial%3 == 0 { // final value depending on b (no integral action)
			f1 = 0.8 + 0.4*r.Float64()
			for k := range y1 {
				y1[k] *= f1
			}
		}
		e := arrayEvaluation(y0, y1, h, f0, f1)
		for _, beta := range []float64{0, 0.01, 0.2, 1.5, math.Inf(1)} {
			w := newWeightWindow(&e, spec, 0, 1, beta)
			for k := range y0 {
				w.add(k, y0[k], y1[k])
			}
			if !w.ok {
				t.Fatalf("trial %d: window does not apply", trial)
			}
			buf := make([]float64, n)
			for i := 0; i <= 100; i++ {
				b := float64(i) / 100
				for k := range buf {
					buf[k] = y0[k] + b*(y1[k]-y0[k])
				}
				st := lti.Settle(buf, h, f0+b*(f1-f0), spec.Band)
				v := timeViolation(spec, true, st)
				if v <= beta && !w.admits(b) {
					t.Fatalf("trial %d β %g: b = %g has violation %g but the window [%g, %g] rejects it", trial, beta, b, v, w.lo, w.hi)
				}
				if beta == 0 && w.admits(b) {
					admitted++
				} else if beta == 0 {
					rejected++
				}
			}
		}
	}
	if rejected < admitted {
		t.Errorf("the window rejected %d weights and admitted %d: it hardly filters", rejected, admitted)
	}
}

// judge takes the largest admitted weight that meets the time spec (the
// exact summaries of every larger weight miss it), or reports none.
func TestJudgeTakesLargestFeasibleWeight(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	p := demoProblem(airframe.FormPID, 0)
	p.Spec.MinPhaseMargin, p.Spec.MinGainMargin = 0, 0
	const h, n = 0.001, 600
	found := 0
	for trial := 0; trial < 200; trial++ {
		y0 := secondOrder(0.5+0.45*r.Float64(), 15+30*r.Float64(), 0, h, n)
		y1 := secondOrder(0.3+0.6*r.Float64(), 20+40*r.Float64(), 3*r.Float64(), h, n)
		sr := &searcher{p: p, bs: setpointWeights(p), cache: map[Target]*cached{}}
		e := arrayEvaluation(y0, y1, h, 1, 1)
		sr.eval = func(Controller) (Evaluation, error) { return e, nil }
		ce := sr.place(NewTarget(0.8, 20))
		c, err := sr.judge(ce, sr.bs, 0, true)
		if err != nil {
			t.Fatal(err)
		}
		buf := make([]float64, n)
		feasible := func(b float64) bool {
			for k := range buf {
				buf[k] = y0[k] + b*(y1[k]-y0[k])
			}
			return timeViolation(p.Spec, true, lti.Settle(buf, h, 1, p.Spec.Band)) == 0
		}
		for _, b := range sr.bs {
			if c.violation == 0 && b <= c.ctrl.B {
				if b == c.ctrl.B && !feasible(b) {
					t.Fatalf("trial %d: chosen b = %g misses the spec", trial, b)
				}
				break
			}
			if feasible(b) {
				t.Fatalf("trial %d: b = %g meets the spec but judge chose b = %g (violation %g)", trial, b, c.ctrl.B, c.violation)
			}
		}
		if c.violation == 0 {
			found++
		}
	}
	if found == 0 || found == 200 {
		t.Errorf("%d of 200 trials feasible: the cases do not exercise both outcomes", found)
	}
}

// A response cut short under a tight bound gives its record back; judged
// again under a looser bound, the candidate is simulated afresh and judged
// as if the first judgment had not happened.
func TestJudgeResimulatesAFreedRecord(t *testing.T) {
	p := demoProblem(airframe.FormPID, 0)
	p.Spec.MinPhaseMargin, p.Spec.MinGainMargin = 0, 0
	const h, n = 0.001, 600
	// Overshoots about 44 %: beyond the spec for every weight.
	y := secondOrder(0.25, 30, 0, h, n)
	evals := 0
	newSearcher := func() *searcher {
		sr := &searcher{p: p, bs: setpointWeights(p), cache: map[Target]*cached{}}
		sr.eval = func(Controller) (Evaluation, error) {
			evals++
			e := arrayEvaluation(y, y, h, 1, 1)
			e.Margins = func() lti.Margins { return lti.Margins{GainDB: 20, PhaseDeg: 60} }
			return e, nil
		}
		return sr
	}
	sr := newSearcher()
	ce := sr.place(NewTarget(0.8, 20))
	c0, err := sr.judge(ce, sr.bs, 0, false)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(c0.violation, 1) || !ce.freed || len(sr.free) != 2 {
		t.Fatalf("bound 0: violation %g, freed %v, %d free records; want +Inf, a freed record pair", c0.violation, ce.freed, len(sr.free))
	}
	got, err := sr.judge(ce, sr.bs, math.Inf(1), false)
	if err != nil {
		t.Fatal(err)
	}
	fresh := newSearcher()
	want, err := fresh.judge(fresh.place(NewTarget(0.8, 20)), fresh.bs, math.Inf(1), false)
	if err != nil {
		t.Fatal(err)
	}
	if evals != 3 || got.violation != want.violation || got.ctrl.B != want.ctrl.B || math.IsInf(got.violation, 1) {
		t.Errorf("after the freed record: %d evaluations (want 3), violation %g b %g; fresh %g b %g",
			evals, got.violation, got.ctrl.B, want.violation, want.ctrl.B)
	}
}
