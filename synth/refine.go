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
	// Steps holds one step-response summary per setpoint weight asked for.
	Steps []lti.StepInfo
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
		y := make([]float64, n)
		for _, b := range bs {
			for k := range y {
				y[k] = ys[0][k] + b*(ys[1][k]-ys[0][k])
			}
			e.Steps = append(e.Steps, lti.StepMetrics(y, h, dc0+b*(dc1-dc0), p.Spec.Band))
		}
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

// judge places and evaluates the target, choosing the best weight b: the
// smallest violation, then the shortest settling, then the larger b. The
// margins are computed only when the time response could make the
// candidate the best or the closest so far (bound: violations only add).
func judge(p Problem, eval Evaluator, t Target, bs []float64, bound float64) (candidate, error) {
	var c candidate
	var ctrl Controller
	var err error
	if p.Ctrl.Form == FormP {
		ctrl, t, err = PlaceP(p, t.Zeta)
	} else {
		ctrl, err = Place(p, t)
	}
	if err != nil {
		return c, err
	}
	e, err := eval(ctrl, bs)
	if err != nil {
		return c, err
	}
	c = candidate{target: t, ctrl: ctrl, eval: e, violation: math.Inf(1), gain: ctrl.HighFrequencyGain()}
	for i, st := range e.Steps {
		v := timeViolation(p.Spec, e.Stable, st)
		better := v < c.violation || v == c.violation && st.Settling < c.step.Settling
		if i == 0 || better {
			c.violation, c.step = v, st
			c.ctrl.B = bs[i]
		}
	}
	if len(e.Steps) == 0 {
		c.ctrl.B = bs[0]
	}
	if e.Stable && e.Margins != nil && c.violation <= bound {
		c.violation += marginViolation(p.Spec, e.Margins())
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
	bs := setpointWeights(p)
	if len(bs) > 1 {
		c, ok, err := refineWith(p, eval, []float64{1})
		if err != nil || ok {
			return c, ok, err
		}
	}
	return refineWith(p, eval, bs)
}

// refineWith is refine for the given setpoint weights.
func refineWith(p Problem, eval Evaluator, bs []float64) (candidate, bool, error) {
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
		c, err := judge(p, eval, t, bs, bound())
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
