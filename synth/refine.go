package synth

import (
	"errors"
	"fmt"
	"math"

	"locusmith/internal/lti"
)

// Evaluation is a candidate controller's behaviour as refinement judges it.
type Evaluation struct {
	Stable bool
	// Margins computes the loop's margins; refinement calls it only for
	// candidates whose time response is good enough to matter, as the
	// frequency sweep costs more than the step.
	Margins func() lti.Margins
	// Step returns the step-response summary for the i-th setpoint weight
	// asked for (0 ≤ i < NumSteps); summaries are computed on demand.
	Step     func(i int) lti.StepInfo
	NumSteps int
}

// LinearSteps returns the Step function of an Evaluation for responses
// linear in the setpoint weight: y(b) = y0 + b·(y1 − y0) with final value
// dc0 + b·(dc1 − dc0), sampled at step h. Each summary is computed once,
// when first asked for.
func LinearSteps(y0, y1 []float64, h, dc0, dc1, band float64, bs []float64) func(int) lti.StepInfo {
	memo := make([]*lti.StepInfo, len(bs))
	var y []float64
	return func(i int) lti.StepInfo {
		if memo[i] == nil {
			if y == nil {
				y = make([]float64, len(y0))
			}
			b := bs[i]
			for k := range y {
				y[k] = y0[k] + b*(y1[k]-y0[k])
			}
			st := lti.StepMetrics(y, h, dc0+b*(dc1-dc0), band)
			memo[i] = &st
		}
		return *memo[i]
	}
}

// Evaluator measures a controller for several setpoint weights at once; the
// setpoint response is linear in the weight b, so one simulation serves all.
// The continuous evaluator is ContinuousEvaluator; the discrete package
// supplies one that judges the sampled loop.
type Evaluator func(c Controller, bs []float64) (Evaluation, error)

// ContinuousEvaluator judges candidates by the full-order continuous loop.
func ContinuousEvaluator(p Problem) Evaluator {
	return func(c Controller, bs []float64) (Evaluation, error) {
		var e Evaluation
		cl, err := newClosedLoop(p, c)
		if err != nil {
			return e, err
		}
		poles, err := cl.char.Roots()
		if err != nil {
			return e, err
		}
		if e.Stable = allStable(poles); !e.Stable {
			return e, nil
		}
		e.Margins = func() lti.Margins { return loopMargins(p, c) }
		h, n := stepGrid(p.Spec.SettlingTime, poles)
		c0, c1 := c, c
		c0.B, c1.B = 0, 1
		n0 := lti.PolyMul(lti.PolyMul(cl.g.Num, c0.Setpoint().Num), cl.h.Den).Trim()
		n1 := lti.PolyMul(lti.PolyMul(cl.g.Num, c1.Setpoint().Num), cl.h.Den).Trim()
		ys, err := stepResponses(cl.char, []lti.Poly{n0, n1}, h, n)
		if err != nil {
			return e, err
		}
		dc0, dc1 := evalRatio(n0, cl.char, 0), evalRatio(n1, cl.char, 0)
		e.Step, e.NumSteps = LinearSteps(ys[0], ys[1], h, dc0, dc1, p.Spec.Band, bs), len(bs)
		return e, nil
	}
}

// Violation scores how far a response misses the spec: the sum of the
// relative excesses of overshoot and settling time and the relative
// shortfalls of the margins; 0 when the spec is met, +Inf when unstable.
func Violation(s Spec, stable bool, m lti.Margins, st lti.StepInfo) float64 {
	return timeViolation(s, stable, st) + marginViolation(s, m)
}

// timeViolation is the time-domain part of Violation.
func timeViolation(s Spec, stable bool, st lti.StepInfo) float64 {
	if !stable || math.IsNaN(st.Overshoot) || math.IsNaN(st.Settling) {
		return math.Inf(1)
	}
	v := math.Max(0, st.Overshoot/s.Overshoot-1) + math.Max(0, st.Settling/s.SettlingTime-1)
	if !st.Settled {
		v += 1
	}
	return v
}

// marginViolation is the margin part of Violation.
func marginViolation(s Spec, m lti.Margins) float64 {
	v := 0.0
	if s.MinPhaseMargin > 0 {
		v += math.Max(0, (s.MinPhaseMargin-m.PhaseDeg)/s.MinPhaseMargin)
	}
	if s.MinGainMargin > 0 {
		v += math.Max(0, (s.MinGainMargin-m.GainDB)/s.MinGainMargin)
	}
	if math.IsNaN(v) {
		return math.Inf(1)
	}
	return v
}

// candidate is one point of the refinement search.
type candidate struct {
	target    Target
	ctrl      Controller
	eval      Evaluation
	step      lti.StepInfo
	violation float64
	gain      float64
}

// setpointWeights returns the weights refinement may choose from.
func setpointWeights(p Problem) []float64 {
	if p.Ctrl.SetpointWeightSet {
		return []float64{p.Ctrl.SetpointWeight}
	}
	if !p.Ctrl.Form.HasIntegral() {
		// Without an integral term, b < 1 changes the final value.
		return []float64{1}
	}
	// The response is linear in b, so a fine grid costs only the metrics.
	bs := make([]float64, 21)
	for i := range bs {
		bs[i] = 1 - float64(i)/20
	}
	return bs
}

// searcher evaluates candidates for refinement, caching each target's
// evaluation (for every setpoint weight at once) so that the second pass,
// which admits b < 1, reuses the first pass's simulations.
type searcher struct {
	p     Problem
	eval  Evaluator
	bs    []float64 // all weights, bs[0] = 1
	cache map[Target]*cached
}

type cached struct {
	t       Target
	ctrl    Controller
	e       Evaluation
	err     error
	margins *lti.Margins
}

func (sr *searcher) lookup(t Target) *cached {
	if c, ok := sr.cache[t]; ok {
		return c
	}
	c := &cached{t: t}
	if sr.p.Ctrl.Form == FormP {
		c.ctrl, c.t, c.err = PlaceP(sr.p, t.Zeta)
	} else {
		c.ctrl, c.err = Place(sr.p, t)
	}
	if c.err == nil {
		c.e, c.err = sr.eval(c.ctrl, sr.bs)
	}
	sr.cache[t] = c
	return c
}

// judge places and evaluates the target, choosing the best weight b among
// the first nb: the smallest violation, then the shortest settling, then
// the larger b. The margins are computed only when the time response could
// make the candidate the best or the closest so far (bound: violations
// only add).
func (sr *searcher) judge(t Target, nb int, bound float64) (candidate, error) {
	ce := sr.lookup(t)
	if ce.err != nil {
		return candidate{}, ce.err
	}
	e := ce.e
	c := candidate{target: ce.t, ctrl: ce.ctrl, eval: e, violation: math.Inf(1), gain: ce.ctrl.HighFrequencyGain()}
	c.ctrl.B = sr.bs[0]
	for i := 0; i < e.NumSteps && i < nb; i++ {
		st := e.Step(i)
		v := timeViolation(sr.p.Spec, e.Stable, st)
		better := v < c.violation || v == c.violation && st.Settling < c.step.Settling
		if i == 0 || better {
			c.violation, c.step = v, st
			c.ctrl.B = sr.bs[i]
		}
	}
	if e.Stable && e.Margins != nil && c.violation <= bound {
		if ce.margins == nil {
			m := e.Margins()
			ce.margins = &m
		}
		c.violation += marginViolation(sr.p.Spec, *ce.margins)
	} else {
		c.violation = math.Inf(1)
	}
	return c, nil
}

// refine searches the target (ζ, σ) and the setpoint weight b for the design
// that meets the spec with the least high-frequency controller gain.
//
// For each ζ of a coarse grid (0.3 to 0.9 by 0.1, and the spec's own ζ) it
// scans σ upward by factors of 1.5 from 0.4× the textbook value of that ζ
// (the gain grows with σ) and, at the first σ that meets the spec, narrows
// the boundary by five bisections (to 1.3 % in σ). The best ζ is then
// refined by ±0.05 and ±0.025. It returns the best feasible candidate, or
// the closest one (least violation) and false. The search is bounded: at
// most about 150 evaluations.
//
// The setpoint weight b = 1 is tried first, and b < 1 only when no design
// with b = 1 meets the spec: with b < 1 the integrator must carry
// (1 − b)·Kp·r at steady state, which the integrator limit caps.
func refine(p Problem, eval Evaluator) (candidate, bool, error) {
	sr := &searcher{p: p, eval: eval, bs: setpointWeights(p), cache: map[Target]*cached{}}
	if len(sr.bs) > 1 {
		c, ok, err := sr.refineWith(1)
		if err != nil || ok {
			return c, ok, err
		}
	}
	return sr.refineWith(len(sr.bs))
}

// refineWith is refine with the first nb setpoint weights admitted.
func (sr *searcher) refineWith(nb int) (candidate, bool, error) {
	p := sr.p
	var best, closest candidate
	haveBest, haveClosest := false, false
	consider := func(c candidate) {
		if !haveClosest || c.violation < closest.violation {
			closest, haveClosest = c, true
		}
		if c.violation == 0 && (!haveBest || c.gain < best.gain) {
			best, haveBest = c, true
		}
	}
	bound := func() float64 {
		if haveClosest {
			return closest.violation
		}
		return math.Inf(1)
	}
	var firstErr error
	try := func(t Target) (candidate, bool, error) {
		c, err := sr.judge(t, nb, bound())
		if err != nil {
			var inf *InfeasibleError
			if errors.As(err, &inf) {
				if firstErr == nil {
					firstErr = err
				}
				return c, false, nil
			}
			return c, false, err
		}
		consider(c)
		return c, true, nil
	}
	// scan searches σ at damping z and returns the least feasible gain.
	scan := func(z float64) error {
		if p.Ctrl.Form == FormP {
			_, _, err := try(NewTarget(z, 1))
			return err
		}
		s0 := SigmaFromSettling(z, p.Spec.Band, p.Spec.SettlingTime)
		prevF := 0.0
		for k := 0; k < 9; k++ {
			f := 0.4 * math.Pow(1.5, float64(k))
			c, ok, err := try(NewTarget(z, f*s0))
			if err != nil {
				return err
			}
			if !ok || c.violation > 0 {
				prevF = f
				continue
			}
			lo, hi := prevF, f
			if lo == 0 {
				return nil
			}
			for i := 0; i < 5; i++ {
				m := math.Sqrt(lo * hi)
				cm, ok, err := try(NewTarget(z, m*s0))
				if err != nil {
					return err
				}
				if ok && cm.violation == 0 {
					hi = m
				} else {
					lo = m
				}
			}
			return nil
		}
		return nil
	}
	zetas := []float64{ZetaFromOvershoot(p.Spec.Overshoot)}
	for z := 3; z <= 9; z++ {
		zetas = append(zetas, float64(z)/10)
	}
	for _, z := range zetas {
		if err := scan(z); err != nil {
			return candidate{}, false, err
		}
	}
	for _, dz := range []float64{0.05, 0.025} {
		ref := closest
		if haveBest {
			ref = best
		}
		if !haveClosest {
			break
		}
		for _, z := range []float64{ref.target.Zeta - dz, ref.target.Zeta + dz} {
			if z < 0.2 || z > 0.97 {
				continue
			}
			if err := scan(z); err != nil {
				return candidate{}, false, err
			}
		}
	}
	if haveBest {
		return best, true, nil
	}
	if haveClosest && !math.IsInf(closest.violation, 1) {
		return closest, false, nil
	}
	if firstErr != nil {
		return candidate{}, false, firstErr
	}
	return candidate{}, false, fmt.Errorf("no %s design places a stable closed loop anywhere on the search grid", p.Ctrl.Form)
}
