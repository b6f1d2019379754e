package synth

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// PadeOrder is the order of the Padé approximant that stands in for the
// transport delay where a rational model is needed (closed-loop poles and
// the continuous step response). The (4,4) approximant's phase error is
// below 1e-6 rad for ωτ ≤ 1 (its error term is of order (ωτ)^9, Franklin,
// Powell & Emami-Naeini, from memory); margins and the placement use the
// exact e^(−sτ).
const PadeOrder = 4

// closedLoop holds the rational closed loop from setpoint to true rate,
// T(s) = G·F / (1 + C·G·H) = Ng·Nf·Dh / (Dc·Dg·Dh + Nc·Ng·Nh).
type closedLoop struct {
	g, h, c, f lti.TF
	char       lti.Poly // characteristic polynomial
	num        lti.Poly // numerator of T
}

func newClosedLoop(p airframe.Axis, c Controller) (closedLoop, error) {
	g, err := p.Plant.Model.TF()
	if err != nil {
		return closedLoop{}, fmt.Errorf("plant: %w", err)
	}
	if p.Plant.Delay > 0 {
		g = g.Series(lti.Pade(p.Plant.Delay, PadeOrder))
	}
	h, err := p.Sensor.TF()
	if err != nil {
		return closedLoop{}, fmt.Errorf("sensor: %w", err)
	}
	cl := closedLoop{g: g, h: h, c: c.TF(), f: c.Setpoint()}
	cl.char = lti.PolyAdd(lti.PolyMul(lti.PolyMul(cl.c.Den, g.Den), h.Den), lti.PolyMul(lti.PolyMul(cl.c.Num, g.Num), h.Num)).Trim()
	cl.num = lti.PolyMul(lti.PolyMul(g.Num, cl.f.Num), h.Den).Trim()
	return cl, nil
}

// Verification is the full-order behaviour of a continuous design.
type Verification struct {
	Stable bool
	// Poles are all closed-loop poles (with the delay by its Padé
	// approximant), sorted by descending real part.
	Poles []complex128
	// Zeros are the zeros of setpoint → true rate that come from the
	// controller, the plant and the sensor (the approximant's are left out).
	Zeros []complex128
	// TargetResidual is |1 + C(s*)·L(s*)| with the exact delay: zero when
	// the target is a closed-loop pole.
	TargetResidual float64
	// Dominance is Re(next pole)/Re(dominant pole): how much faster the
	// slowest of the other poles is than the designed pair.
	Dominance float64
	Step      lti.StepInfo
	// SteadyStateError is 1 − T(0): the true-rate error left after a unit
	// setpoint step.
	SteadyStateError float64
	Margins          lti.Margins
	// H and Y are the sampled step response: Y[k] at t = k·H.
	H float64
	Y []float64
	// Warnings are dominance and approximation notes.
	Warnings []string
}

// stepGrid chooses the simulation step and length for a closed loop. The
// ZOH-stepped simulation is exact at the samples whatever the step, so the
// step only sets how finely the peak and the settling instant are resolved:
// h = Ts/200 resolves both to 0.5 % of the spec settling time. The horizon is
// at least 3·Ts and 10 time constants of the slowest closed-loop pole (its
// mode has then decayed to e^−10 ≈ 4.5e−5 of its amplitude), capped at
// 100·Ts; at most maxSteps samples (the step grows beyond that).
func stepGrid(ts float64, poles []complex128) (h float64, n int) {
	const maxSteps = 20000
	slow := math.Inf(1)
	for _, r := range poles {
		if a := -real(r); a > 0 && a < slow {
			slow = a
		}
	}
	end := 3 * ts
	if !math.IsInf(slow, 1) {
		end = math.Max(end, math.Min(10/slow, 100*ts))
	}
	h = ts / 200
	n = int(math.Ceil(end/h)) + 1
	if n > maxSteps {
		n = maxSteps
		h = end / float64(n-1)
	}
	return h, n
}

// stepResponses returns the step responses of the closed loop for
// numerators nums over the common denominator den, sharing one ZOH
// (stepSystem).
func stepResponses(den lti.Poly, nums []lti.Poly, h float64, n int) ([][]float64, error) {
	d, cs, ds, err := stepSystem(den, nums, h)
	if err != nil {
		return nil, err
	}
	out := make([][]float64, len(nums))
	for i := range nums {
		d.C, d.D = cs[i], ds[i]
		out[i] = make([]float64, n)
		d.StepInto(out[i])
	}
	return out, nil
}

// stepSystem returns the ZOH at step h of the closed loop with denominator
// den, one realization for all the numerators nums, and each numerator's
// output row and feedthrough.
//
// The polynomials of a closed loop span many decades (a 9th-order loop with
// poles from 10 to 3000 rad/s has coefficients from 1e-17 to 1e8), which
// overflows a companion realization. Time is therefore scaled first:
// with s = ω0·ŝ and ω0 = |d0/dn|^(1/n), the geometric mean of the pole
// magnitudes, the coefficients become d_i·ω0^i, all of order one, and the
// step response of T(ω0·ŝ) at t̂ = ω0·t equals that of T(s) at t.
func stepSystem(den lti.Poly, nums []lti.Poly, h float64) (lti.Disc, [][]float64, []float64, error) {
	den = den.Trim()
	w0 := 1.0
	if deg := len(den) - 1; deg > 0 && den[0] != 0 {
		w0 = lti.Pow(math.Abs(den[0]/den[deg]), 1/float64(deg))
	}
	scale := func(p lti.Poly) lti.Poly {
		q := make(lti.Poly, len(p))
		f := 1.0
		for i, c := range p {
			q[i] = c * f
			f *= w0
		}
		return q
	}
	den = scale(den)
	h *= w0
	var base lti.Disc
	var baseSS lti.SS
	cs, ds := make([][]float64, len(nums)), make([]float64, len(nums))
	for i, num := range nums {
		ss, err := lti.TF{Num: scale(num), Den: den}.SS()
		if err != nil {
			return lti.Disc{}, nil, nil, err
		}
		if i == 0 {
			if base, err = lti.ZOH(ss, h); err != nil {
				return lti.Disc{}, nil, nil, err
			}
			baseSS = ss
		} else if !slices.Equal(ss.A, baseSS.A) || !slices.Equal(ss.B, baseSS.B) {
			return lti.Disc{}, nil, nil, fmt.Errorf("step responses: numerator %d has another realization", i)
		}
		// The ZOH keeps C and D: each numerator's output reads the shared
		// state.
		cs[i], ds[i] = ss.C, ss.D
	}
	return base, cs, ds, nil
}

// Verify computes the full-order closed-loop behaviour of controller c on
// problem p, designed for target t.
func Verify(p airframe.Axis, c Controller, t Target) (Verification, error) {
	return verify(p, c, t, true)
}

func verify(p airframe.Axis, c Controller, t Target, margins bool) (Verification, error) {
	var v Verification
	cl, err := newClosedLoop(p, c)
	if err != nil {
		return v, err
	}
	v.Poles, err = cl.char.Roots()
	if err != nil {
		return v, fmt.Errorf("closed-loop poles: %w", err)
	}
	v.Stable = allStable(v.Poles)
	v.TargetResidual = lti.Abs(1 + lti.Mul(c.Eval(t.Pole), p.OpenLoop(t.Pole)))
	v.Zeros = clZeros(p, c)
	if margins {
		v.Margins = loopMargins(p, c)
	} else {
		v.Margins = lti.UnknownMargins()
	}
	dc := evalRatio(cl.num, cl.char, 0)
	v.SteadyStateError = 1 - dc
	v.Dominance, v.Warnings = dominance(v.Poles, v.Zeros, t)
	if !v.Stable {
		v.Step = lti.StepInfo{Final: math.NaN(), Overshoot: math.Inf(1), Settling: math.Inf(1), Rise: math.NaN()}
		return v, nil
	}
	var n int
	v.H, n = stepGrid(p.Spec.SettlingTime, v.Poles)
	ys, err := stepResponses(cl.char, []lti.Poly{cl.num}, v.H, n)
	if err != nil {
		return v, fmt.Errorf("step response: %w", err)
	}
	v.Y = ys[0]
	v.Step = lti.StepMetrics(v.Y, v.H, dc, p.Spec.Band)
	return v, nil
}

func evalRatio(num, den lti.Poly, x float64) float64 {
	return num.At(x) / den.At(x)
}

// clZeros returns the zeros of setpoint → true rate that the controller's
// setpoint path, the plant and the sensor's poles put there.
func clZeros(p airframe.Axis, c Controller) []complex128 {
	var zs []complex128
	if f, err := c.Setpoint().Num.Trim().Roots(); err == nil {
		zs = append(zs, f...)
	}
	zs = append(zs, p.Plant.Model.Zeros...)
	zs = append(zs, p.Sensor.Poles...)
	lti.SortRoots(zs)
	return zs
}

// loopMargins returns the margins of C·G·H with the exact delay.
func loopMargins(p airframe.Axis, c Controller) lti.Margins {
	lo, hi, n := marginSpan(p, c)
	return lti.LoopMarginsFalling(func(w float64) complex128 {
		s := complex(0, w)
		return lti.Mul(c.Eval(s), p.OpenLoop(s))
	}, lo, hi, n, fallingAbove(p, c))
}

// fallingAbove returns a frequency above which |C·G·H(jω)| does not
// increase (+Inf when there is none to be had): with the loop's zeros z
// and poles p, d ln|L|/d ln ω = Σ_z f(z) − Σ_p f(p), where
// f(r) = ω(ω − Im r)/|jω − r|². For |r| ≤ ω/K each f lies within
// [(1 − 1/K)/((1 + 1/K)² + 1/K²), (1 + 1/K)/(1 − 1/K)²], so the slope is
// at most zero once nz times the upper bound is at most np times the
// lower: the least such K (from 2 up) times the largest |r| is the
// frequency. The delay has unit magnitude.
func fallingAbove(p airframe.Axis, c Controller) float64 {
	cz, err := c.Series()
	if err != nil {
		return math.Inf(1)
	}
	nz := len(p.Plant.Model.Zeros) + len(p.Sensor.Zeros) + len(cz.Zeros)
	np := len(p.Plant.Model.Poles) + len(p.Sensor.Poles) + len(cz.Poles)
	rmax := 0.0
	for _, rs := range [][]complex128{p.Plant.Model.Zeros, p.Plant.Model.Poles, p.Sensor.Zeros, p.Sensor.Poles, cz.Zeros, cz.Poles} {
		for _, r := range rs {
			rmax = math.Max(rmax, lti.Abs(r))
		}
	}
	if np <= nz || math.IsNaN(rmax) || math.IsInf(rmax, 0) {
		return math.Inf(1)
	}
	for K := 2.0; K <= 1e4; K *= 1.25 {
		e := 1 / K
		up, lo := (1+e)/((1-e)*(1-e)), (1-e)/(float64((1+e)*(1+e))+float64(e*e))
		if float64(nz)*up <= float64(np)*lo {
			return K * rmax
		}
	}
	return math.Inf(1)
}

// marginSpan is the frequency range and grid of the margin sweep: two
// decades beyond the loop's and the controller's dynamics either side,
// 24 points per decade.
func marginSpan(p airframe.Axis, c Controller) (lo, hi float64, n int) {
	lo, hi = frequencySpan(p)
	if c.Form.HasIntegral() && c.Kp > 0 {
		lo = math.Min(lo, c.Ki/c.Kp/100)
	}
	if c.Form.HasDerivative() && c.Tf > 0 {
		hi = math.Max(hi, 100/c.Tf)
	}
	if c.Form == airframe.FormLead {
		lo = math.Min(lo, math.Min(-c.Zero, -c.Pole)/100)
		hi = math.Max(hi, math.Max(-c.Zero, -c.Pole)*100)
	}
	return lo, hi, int(math.Ceil(24*lti.Log10(hi/lo))) + 1
}

// DominanceRatio is the usual threshold for treating a pole pair as
// dominant: the other poles at least five times farther into the left half
// plane (Nise, airframe.Control Systems Engineering, the rule of thumb for
// second-order approximation, from memory).
const DominanceRatio = 5

// dominance finds the closed-loop pole pair nearest the target and reports
// how much faster the other poles are, with warnings when the second-order
// approximation is weak.
func dominance(poles, zeros []complex128, t Target) (float64, []string) {
	if len(poles) == 0 {
		return math.Inf(1), nil
	}
	best := 0
	for i, r := range poles {
		if lti.Abs(r-t.Pole) < lti.Abs(poles[best]-t.Pole) {
			best = i
		}
	}
	dom := poles[best]
	next := math.Inf(1)
	var nextPole complex128
	for _, r := range poles {
		if r == dom || r == cmplx.Conj(dom) {
			continue
		}
		if rat := real(r) / real(dom); rat < next {
			next, nextPole = rat, r
		}
	}
	var warns []string
	if !math.IsInf(next, 1) && next < DominanceRatio {
		warns = append(warns, fmt.Sprintf("closed-loop pole %s is only %.2f× as far left as the dominant pair %s (rule of thumb: ≥ %d×); the second-order approximation is weak",
			fmtComplex(nextPole), next, fmtComplex(dom), DominanceRatio))
	}
	for _, z := range zeros {
		if real(z) < 0 && real(z)/real(dom) < DominanceRatio {
			warns = append(warns, fmt.Sprintf("closed-loop zero %s is within %d× of the dominant pair's real part; expect more overshoot than the second-order target", fmtComplex(z), DominanceRatio))
			break
		}
	}
	return next, warns
}

// LoopMargins returns the gain, phase and delay margins of the continuous
// loop C·G·H with the exact transport delay.
func LoopMargins(p airframe.Axis, c Controller) lti.Margins { return loopMargins(p, c) }

// Crossover returns the gain crossover of the continuous loop, the
// frequency LoopMargins reports as Margins.Crossover, from the magnitude
// alone (the delay leaves it unchanged) when the loop crosses 0 dB once; a
// loop that crosses several times needs the phase margins to choose, and
// gets the full LoopMargins. NaN when the loop never crosses.
func Crossover(p airframe.Axis, c Controller) float64 {
	lo, hi, n := marginSpan(p, c)
	ws := lti.GainCrossovers(loopMag2(p, c), lo, hi, n)
	switch len(ws) {
	case 0:
		return math.NaN()
	case 1:
		return ws[0]
	}
	return loopMargins(p, c).Crossover
}

// loopMag2 returns ω ↦ |C(jω)·G(jω)·H(jω)|², the squared loop gain (the
// delay has unit magnitude), in real arithmetic: a pole or zero r gives
// |jω − r|² = (ω − Im r)² + (Re r)², and the controller's real and
// imaginary parts have closed forms, Kd·jω/(1 + jωTf) =
// Kd·(ω²Tf + jω)/(1 + ω²Tf²) and Ki/(jω) = −jKi/ω. About a tenth of the
// cost of the complex evaluation.
func loopMag2(p airframe.Axis, c Controller) func(w float64) float64 {
	g2 := p.Plant.Model.Gain * p.Plant.Model.Gain * p.Sensor.Gain * p.Sensor.Gain
	var zs, ps []complex128
	zs = append(append(zs, p.Plant.Model.Zeros...), p.Sensor.Zeros...)
	ps = append(append(ps, p.Plant.Model.Poles...), p.Sensor.Poles...)
	return func(w float64) float64 {
		num, den := g2, 1.0
		for _, r := range zs {
			d := w - imag(r)
			num *= float64(d*d) + float64(real(r)*real(r))
		}
		for _, r := range ps {
			d := w - imag(r)
			den *= float64(d*d) + float64(real(r)*real(r))
		}
		var c2 float64
		switch c.Form {
		case airframe.FormLead:
			c2 = c.K * c.K * (float64(w*w) + float64(c.Zero*c.Zero)) / (float64(w*w) + float64(c.Pole*c.Pole))
		default:
			re, im := c.Kp, 0.0
			if c.Form.HasIntegral() {
				im -= c.Ki / w
			}
			if c.Form.HasDerivative() {
				q := 1 + float64(w*w*c.Tf*c.Tf)
				re += c.Kd * w * w * c.Tf / q
				im += c.Kd * w / q
			}
			c2 = float64(re*re) + float64(im*im)
		}
		return c2 * num / den
	}
}
