package discrete

import (
	"fmt"
	"math"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// Design is the design of one axis at the loop rate.
type Design struct {
	Problem airframe.Axis
	Loop    airframe.Loop
	Numeric airframe.Numeric
	// Cont is the continuous design (refined against the sampled loop).
	Cont   *synth.Design
	Coeffs Coeffs
	Plant  Plant
	Verif  Verification
	// Checks are the spec checks on the sampled loop, plus sampling.
	Checks   []synth.Check
	Warnings []string
	// Num is the numeric realization in airframe.Numeric's type: coefficient
	// table, fixed-point formats and proved ranges, the integer model, and
	// the verification with quantized coefficients (see RealizeNumeric).
	Num *Realization
}

// OK reports whether every check passed.
func (d *Design) OK() bool {
	for _, c := range d.Checks {
		if !c.OK {
			return false
		}
	}
	return true
}

// Evaluator returns a refinement evaluator that judges candidates by the
// sampled loop: the controller as discretized at the loop rate, the ZOH
// plant, the compute delay.
func Evaluator(p airframe.Axis, pl Plant, d int) synth.Evaluator {
	return func(c synth.Controller) (synth.Evaluation, error) {
		var e synth.Evaluation
		wc := math.NaN()
		if Method(p.Ctrl.Discretize) == TustinPrewarp {
			wc = synth.Crossover(p, c)
		}
		k, _, err := Realize(c, p.Ctrl, pl.T, wc)
		if err != nil {
			return e, err
		}
		// Stability by the Schur–Cohn test on the characteristic
		// polynomial; eigenvalues only where it cannot be formed.
		if ch := characteristic(pl, k, d); ch != nil {
			e.Stable = schurStable(ch)
		} else {
			ps, err := newClosedLoop(pl, linearize(k), d).poles()
			if err != nil {
				return e, err
			}
			e.Stable = stabilityMargin(ps) > 0
		}
		if !e.Stable {
			return e, nil
		}
		lo, _ := spanOf(p)
		e.Margins = func() lti.Margins { return loopMargins(pl, k, d, lo) }
		k0, k1 := k, k
		k0.KpB, k1.KpB = 0, k.Kp
		c0, c1 := linearize(k0), linearize(k1)
		e.N, e.H = horizon(p.Spec.SettlingTime, pl.T, nil, 4), pl.T
		e.Final0, e.Final1 = newClosedLoop(pl, c0, d).dcGains(setpointInput(pl, c1, d))
		e.Respond = newPairStepper(pl, c0, c1, d).run
		return e, nil
	}
}

// Sampling rules of thumb (Åström & Wittenmark, Computer-Controlled
// Systems, choice of sampling period, from memory): ωc·T between about
// 0.15 and 0.5, and 4 to 10 samples per closed-loop rise time. locusmith
// warns beyond the lenient ends of both ranges.
const (
	MaxCrossoverTimesT = 0.5
	MinSamplesPerRise  = 4
)

// DesignAxis designs one axis for the loop rate: the continuous design,
// refined so that the sampled loop meets the spec, then discretized and
// verified at the samples.
func DesignAxis(p airframe.Axis, loop airframe.Loop, num airframe.Numeric) (*Design, error) {
	if !(loop.Hz > 0) || math.IsInf(loop.Hz, 0) {
		return nil, fmt.Errorf("axis %s: loop rate %g Hz: must be finite and > 0", p.Name, loop.Hz)
	}
	T := 1 / loop.Hz
	pl, err := NewPlant(p, T)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	cd, err := synth.DesignAxis(p, Evaluator(p, pl, loop.ComputeDelay))
	if err != nil {
		return nil, err
	}
	d := &Design{Problem: p, Loop: loop, Numeric: num, Cont: cd, Plant: pl}
	k, warns, err := Realize(cd.Ctrl, p.Ctrl, T, cd.Verif.Margins.Crossover)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	d.Coeffs = k
	d.Warnings = append(append(d.Warnings, cd.Warnings...), warns...)
	maxStep := math.Inf(1)
	if num.InputFullScale > 0 {
		maxStep = num.InputFullScale
	}
	d.Verif, err = verify(p, pl, k, loop.ComputeDelay, maxStep)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	v := d.Verif
	d.Checks = synth.SpecChecks(p.Spec, v.Stable, 0, v.Step.Overshoot, v.Step.Settling, v.Margins.PhaseDeg, v.Margins.GainDB)
	d.Checks[0] = synth.Check{Name: "stable", Limit: 1, Value: 1 - v.StabilityMargin, Upper: true, OK: v.Stable}
	d.Checks = append(d.Checks, d.samplingCheck())
	d.integratorReach()
	// airframe.Numeric realization (numeric.go): its checks and warnings join the
	// design's; bad numeric settings come back as an *InputError.
	if d.Num, err = RealizeNumeric(d); err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	d.Checks = append(d.Checks, d.Num.Checks...)
	d.Warnings = append(d.Warnings, d.Num.Warnings...)
	return d, nil
}

// samplingCheck fails when the target, the crossover or the derivative
// filter is at or beyond Nyquist, and warns when the rate is low.
func (d *Design) samplingCheck() synth.Check {
	T := 1 / d.Loop.Hz
	ny := math.Pi / T
	worst := d.Cont.Target.OmegaN
	what := "target ωn"
	if wc := d.Cont.Verif.Margins.Crossover; wc > worst {
		worst, what = wc, "crossover"
	}
	if d.Problem.Ctrl.Form.HasDerivative() {
		if wf := 2 * math.Pi * d.Problem.Ctrl.DerivativeLowpassHz; wf > worst {
			worst, what = wf, "derivative filter"
		}
	}
	c := synth.Check{Name: "sampling", Limit: 1, Value: worst / ny, Upper: true, OK: worst < ny}
	if !c.OK {
		d.Warnings = append(d.Warnings, fmt.Sprintf("%s %.4g rad/s is at or beyond Nyquist π/T = %.4g rad/s: raise loop_hz or slow the design", what, worst, ny))
	}
	if wc := d.Cont.Verif.Margins.Crossover; wc*T > MaxCrossoverTimesT {
		d.Warnings = append(d.Warnings, fmt.Sprintf("ωc·T = %.3g > %.2g: the loop rate is low for this crossover (rule of thumb 0.15–0.5)", wc*T, MaxCrossoverTimesT))
	}
	if r := d.Cont.Verif.Step.Rise; r > 0 && r/T < MinSamplesPerRise {
		d.Warnings = append(d.Warnings, fmt.Sprintf("%.1f samples per closed-loop rise time < %d: the loop rate is low for this design", r/T, MinSamplesPerRise))
	}
	return c
}

// integratorReach warns when the integrator limit caps the setpoints the
// loop can hold (see reachLimit).
func (d *Design) integratorReach() {
	c := d.Cont.Ctrl
	rmax := reachLimit(d.Problem, d.Coeffs)
	if math.IsInf(rmax, 1) {
		return
	}
	fs := d.Numeric.InputFullScale
	switch {
	case fs > 0 && rmax < fs:
		d.Warnings = append(d.Warnings, fmt.Sprintf("integrator_limit %.4g holds steady setpoints up to |r| = %.4g only, below input_full_scale %.4g (setpoint weight b = %.3g)", d.Coeffs.IL, rmax, fs, c.B))
	case fs == 0 && c.B < 1:
		d.Warnings = append(d.Warnings, fmt.Sprintf("with setpoint weight b = %.3g the integrator carries (1 − b)·Kp·r at steady state: integrator_limit %.4g holds setpoints up to |r| = %.4g", c.B, d.Coeffs.IL, rmax))
	}
}

// reachLimit returns the largest setpoint the loop can hold at steady state
// with the integrator clamped to IL: there the integrator carries
// s = (1/G(0) + Kp − KpB)·r (with H(0) = 1; 1/G(0) = 0 for a plant that
// integrates), so |r| ≤ IL/|1/G(0) + Kp − KpB|. +Inf when unbounded or
// without an integrator.
func reachLimit(p airframe.Axis, k Coeffs) float64 {
	if !k.Form.HasIntegral() {
		return math.Inf(1)
	}
	inv := 0.0
	if g0 := real(p.Plant.Model.Eval(0)); !math.IsInf(g0, 0) && !math.IsNaN(g0) && g0 != 0 {
		inv = 1 / g0
	}
	need := math.Abs(inv + k.Kp - k.KpB)
	if need == 0 {
		return math.Inf(1)
	}
	return k.IL / need
}

// DropTraces releases the simulated responses of the design, keeping the
// last sample of each (the end value the reports quote for a response
// that did not settle). A batch that only needs figures calls it so that
// memory does not grow with the samples of every axis.
func (d *Design) DropTraces() {
	last := func(y []float64) []float64 {
		if len(y) == 0 {
			return nil
		}
		return []float64{y[len(y)-1]}
	}
	v := &d.Verif
	v.Y, v.U = last(v.Y), last(v.U)
	s := &v.Saturated
	s.Y, s.YNone, s.U, s.UNone = last(s.Y), last(s.YNone), last(s.U), last(s.UNone)
	if d.Cont != nil {
		d.Cont.Verif.Y = last(d.Cont.Verif.Y)
		if d.Cont.Textbook != nil {
			d.Cont.Textbook.Verif.Y = last(d.Cont.Textbook.Verif.Y)
		}
	}
	if d.Num != nil && d.Num.Quantized != nil {
		q := d.Num.Quantized
		q.Y, q.U = last(q.Y), last(q.U)
		q.Saturated.Y, q.Saturated.YNone, q.Saturated.U, q.Saturated.UNone = last(q.Saturated.Y), last(q.Saturated.YNone), last(q.Saturated.U), last(q.Saturated.UNone)
	}
}
