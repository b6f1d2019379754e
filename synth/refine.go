package synth

import (
	"errors"
	"fmt"
	"math"

	"locusmith/internal/lti"
)

// Evaluation is a candidate controller's behaviour as refinement judges it.
type Evaluation struct {
	Stable  bool
	Margins lti.Margins
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
		e.Margins = loopMargins(p, c)
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
	if !stable || math.IsNaN(st.Overshoot) {
		return math.Inf(1)
	}
	v := math.Max(0, st.Overshoot/s.Overshoot-1) + math.Max(0, st.Settling/s.SettlingTime-1)
	if !st.Settled {
		v += 1
	}
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
	bs := make([]float64, 11)
	for i := range bs {
		bs[i] = 1 - float64(i)/10
	}
	return bs
}

// judge places and evaluates the target, choosing the best weight b: the
// smallest violation, then the shortest settling, then the larger b.
func judge(p Problem, eval Evaluator, t Target, bs []float64) (candidate, error) {
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
		v := Violation(p.Spec, e.Stable, e.Margins, st)
		better := v < c.violation || v == c.violation && st.Settling < c.step.Settling
		if i == 0 || better {
			c.violation, c.step = v, st
			c.ctrl.B = bs[i]
		}
	}
	if len(e.Steps) == 0 {
		c.ctrl.B = bs[0]
	}
	return c, nil
}

// refine searches the target (ζ, σ) and the setpoint weight b for the design
// that meets the spec with the least high-frequency controller gain. For
// each ζ on a grid it scans σ upward from well below the textbook value
// (the gain grows with σ) and, at the first σ that meets the spec, narrows
// the boundary by bisection. It returns the best feasible candidate, or the
// closest one (least violation) and false.
func refine(p Problem, eval Evaluator) (candidate, bool, error) {
	bs := setpointWeights(p)
	z0 := ZetaFromOvershoot(p.Spec.Overshoot)
	zetas := []float64{z0}
	for z := 0.3; z < 0.96; z += 0.05 {
		zetas = append(zetas, math.Round(z*100)/100)
	}
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
	var firstErr error
	for _, z := range zetas {
		if p.Ctrl.Form == FormP {
			c, err := judge(p, eval, NewTarget(z, 1), bs)
			if err == nil {
				consider(c)
			} else if firstErr == nil {
				firstErr = err
			}
			continue
		}
		s0 := SigmaFromSettling(z, p.Spec.Band, p.Spec.SettlingTime)
		prevF := 0.0
		for k := 0; k < 18; k++ {
			f := 0.4 * math.Pow(1.2, float64(k))
			c, err := judge(p, eval, NewTarget(z, f*s0), bs)
			if err != nil {
				var inf *InfeasibleError
				if !errors.As(err, &inf) {
					return candidate{}, false, err
				}
				prevF = f
				continue
			}
			consider(c)
			if c.violation > 0 {
				prevF = f
				continue
			}
			// Bisect (geometrically) between the last miss and this hit.
			lo, hi := prevF, f
			if lo == 0 {
				break
			}
			for i := 0; i < 6; i++ {
				m := math.Sqrt(lo * hi)
				cm, err := judge(p, eval, NewTarget(z, m*s0), bs)
				if err == nil {
					consider(cm)
				}
				if err == nil && cm.violation == 0 {
					hi = m
				} else {
					lo = m
				}
			}
			break
		}
	}
	if haveBest {
		return best, true, nil
	}
	if haveClosest {
		return closest, false, nil
	}
	if firstErr != nil {
		return candidate{}, false, firstErr
	}
	return candidate{}, false, fmt.Errorf("no %s design places a stable closed loop anywhere on the search grid", p.Ctrl.Form)
}
