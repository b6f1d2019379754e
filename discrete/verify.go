package discrete

import (
	"fmt"
	"math"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Verification is the behaviour of the sampled loop.
type Verification struct {
	Stable bool
	// Poles are the closed-loop poles in z, sorted by descending real part.
	Poles []complex128
	// StabilityMargin is 1 − max|z|: the smallest distance of a pole to the
	// unit circle (negative when unstable).
	StabilityMargin  float64
	Step             lti.StepInfo
	SteadyStateError float64
	Margins          lti.Margins
	// Y and U are the true rate and the command at the samples, t = k·T,
	// for a unit setpoint step.
	Y, U      []float64
	Saturated Saturated
}

// Saturated is the large-step response with the nonlinear controller, with
// the configured anti-windup and with none, side by side.
type Saturated struct {
	// Amplitude is the setpoint step, chosen so that the linear loop would
	// need twice the output limit: 2·Hi/LinearPeakCommand (see
	// LimitedByReach).
	Amplitude         float64
	LinearPeakCommand float64 // peak |u| of the linear loop for a unit step
	AntiWindup        AntiWindup
	// Overshoot and Recovery (the settling time of the large step) with the
	// configured anti-windup; the None fields without.
	Overshoot, Recovery         float64
	Settled                     bool
	OvershootNone, RecoveryNone float64
	SettledNone                 bool
	IntegratorPeak              float64 // largest |integrator state| with anti-windup
	// LimitedByReach is set when the step was reduced to 90 % of the
	// largest setpoint the integrator limit can hold.
	LimitedByReach bool
	// LimitedByFullScale is set when the step was reduced to the input
	// full scale of the numeric realization.
	LimitedByFullScale bool
	// Reached says the command with anti-windup touched an output limit:
	// false when the reductions above left a step the linear loop follows
	// within the limits, so there is no windup to show.
	Reached            bool
	Y, YNone, U, UNone []float64
}

// horizon returns the number of samples to simulate a step: at least
// 3·Ts and 10 time constants of the slowest pole (σ = −ln|z|/T, its mode
// then down to e^−10 ≈ 4.5e−5), capped at maxTs·Ts and 200 000 samples
// (20 000 in refinement).
// Verification uses maxTs = 100; refinement 4, since a candidate must be
// inside the band from Ts on, which 3·Ts of record inside shows for the
// decaying modes of a stable loop, and the chosen design is verified
// again on the long horizon.
func horizon(ts, T float64, poles []complex128, maxTs float64) int {
	slow := math.Inf(1)
	for _, z := range poles {
		if a := lti.Abs(z); a > 0 && a < 1 {
			if s := -lti.Log(a) / T; s < slow {
				slow = s
			}
		}
	}
	end := 3 * ts
	if poles == nil {
		end = maxTs * ts // unknown poles: the cap
	} else if !math.IsInf(slow, 1) {
		end = math.Max(end, math.Min(10/slow, maxTs*ts))
	}
	n := int(math.Ceil(end/T)) + 1
	limit := 200000
	if maxTs < 100 {
		limit = 20000
	}
	return min(max(n, 16), limit)
}

func stabilityMargin(ps []complex128) float64 {
	m := 0.0
	for _, z := range ps {
		m = math.Max(m, lti.Abs(z))
	}
	return 1 - m
}

// Verify analyses the sampled loop of coefficients k on plant pl with
// compute delay d against the problem's spec.
func Verify(p airframe.Axis, pl Plant, k Coeffs, d int) (Verification, error) {
	return verify(p, pl, k, d, math.Inf(1))
}

// verify is Verify with the saturated step kept within maxStep, the largest
// setpoint the numeric realization represents (input_full_scale); a
// maxStep of 0 leaves the saturated step out (Saturated is zero), for the
// re-verification with quantized coefficients, which reports the linear
// figures alone.
func verify(p airframe.Axis, pl Plant, k Coeffs, d int, maxStep float64) (Verification, error) {
	var v Verification
	c := linearize(k)
	L := newClosedLoop(pl, c, d)
	ps, err := L.poles()
	if err != nil {
		return v, fmt.Errorf("discrete closed-loop poles: %w", err)
	}
	v.Poles = ps
	v.StabilityMargin = stabilityMargin(ps)
	v.Stable = v.StabilityMargin > 0
	lo, _ := spanOf(p)
	v.Margins = loopMargins(pl, k, d, lo)
	if !v.Stable {
		v.Step = lti.StepInfo{Final: math.NaN(), Overshoot: math.Inf(1), Settling: math.Inf(1), Rise: math.NaN()}
		return v, nil
	}
	n := horizon(p.Spec.SettlingTime, pl.T, ps, 100)
	v.Y, v.U = make([]float64, n), make([]float64, n)
	simulate(pl, c, d, v.Y, v.U)
	dc, _ := finalValues(pl, c, c)
	v.SteadyStateError = 1 - dc
	v.Step = lti.StepMetrics(v.Y, pl.T, dc, p.Spec.Band)
	if maxStep > 0 {
		v.Saturated = saturated(p, pl, k, d, v.U, dc, n, maxStep)
	}
	return v, nil
}

// spanOf returns the frequency span of the problem's corners (the plant's
// and the sensor's poles and zeros, and 4/Ts), widened by two decades: the
// margin sweeps start there, where the phase is within about 0.6° of its
// low-frequency asymptote.
func spanOf(p airframe.Axis) (lo, hi float64) {
	lo, hi = math.Inf(1), 0.0
	for _, rs := range [][]complex128{p.Plant.Model.Poles, p.Plant.Model.Zeros, p.Sensor.Poles, p.Sensor.Zeros} {
		for _, r := range rs {
			if a := lti.Abs(r); a > 0 {
				lo, hi = math.Min(lo, a), math.Max(hi, a)
			}
		}
	}
	w := 4 / p.Spec.SettlingTime
	lo, hi = math.Min(lo, w), math.Max(hi, w)
	return lo / 100, hi * 100
}

// saturated simulates a setpoint step that would need twice the output
// limit in the linear loop, with the nonlinear reference model, with the
// configured anti-windup and with none.
func saturated(p airframe.Axis, pl Plant, k Coeffs, d int, ulin []float64, dc float64, n int, maxStep float64) Saturated {
	peak := 0.0
	for _, u := range ulin {
		peak = math.Max(peak, math.Abs(u))
	}
	s := Saturated{LinearPeakCommand: peak, AntiWindup: k.AntiWindup}
	if !(peak > 0) {
		return s
	}
	limit := k.Hi
	s.Amplitude = 2 * limit / peak
	// A setpoint the integrator limit cannot hold never settles, with or
	// without anti-windup; such a step says nothing about windup, so it
	// is reduced to 90 % of the reach.
	if rmax := reachLimit(p, k); s.Amplitude > 0.9*rmax {
		s.Amplitude, s.LimitedByReach = 0.9*rmax, true
	}
	// Nor can a setpoint exceed the input full scale of the realization.
	if s.Amplitude > maxStep {
		s.Amplitude, s.LimitedByFullScale = maxStep, true
	}
	s.Y, s.U, s.IntegratorPeak = simulateNonlinear(pl, k, d, s.Amplitude, n)
	s.Reached = reached(s.U, k.Lo, k.Hi)
	none := k
	none.AntiWindup = AWNone
	s.YNone, s.UNone, _ = simulateNonlinear(pl, none, d, s.Amplitude, n)
	final := s.Amplitude * dc
	m := lti.StepMetrics(s.Y, pl.T, final, p.Spec.Band)
	mn := lti.StepMetrics(s.YNone, pl.T, final, p.Spec.Band)
	s.Overshoot, s.Recovery, s.Settled = m.Overshoot, m.Settling, m.Settled
	s.OvershootNone, s.RecoveryNone, s.SettledNone = mn.Overshoot, mn.Settling, mn.Settled
	return s
}

// simulateNonlinear runs the reference model (float64) against the sampled
// plant for a setpoint step of amplitude a, and returns the true rate, the
// command and the largest |integrator state|. The model runs the plant's
// filter chain itself, on the measured rate before the chain.
func simulateNonlinear(pl Plant, k Coeffs, d int, a float64, n int) (y, u []float64, ipeak float64) {
	prm := ParamsOf[float64](k)
	prm.Sections = SectionsOf[float64](pl.Sections)
	var st State[float64]
	y, u = pl.Unfiltered().Run(d, n, func(ym float64) float64 {
		cmd := Step(&prm, &st, a, ym)
		ipeak = math.Max(ipeak, math.Abs(st.S))
		return cmd
	})
	return y, u, ipeak
}

// Run closes the loop of the sampled plant with any controller: at each of
// n samples, step gets the measured rate and returns the command, which
// reaches the plant d (compute delay) plus Delay samples later. It returns
// the true rate and the command at the samples, the plant starting at
// rest.
func (pl Plant) Run(d, n int, step func(measured float64) float64) (y, u []float64) {
	x := make([]float64, 2*pl.N)
	xc, xn := x[:pl.N], x[pl.N:]
	d += pl.Delay
	q := make([]float64, d+1) // q[0] newest
	y, u = make([]float64, n), make([]float64, n)
	for i := 0; i < n; i++ {
		var ym, yt float64
		for j := 0; j < pl.N; j++ {
			ym += float64(pl.Cm[j] * xc[j])
			yt += float64(pl.Cy[j] * xc[j])
		}
		y[i] = yt
		cmd := step(ym)
		u[i] = cmd
		copy(q[1:], q[:d])
		q[0] = cmd
		ua := q[d]
		for r := 0; r < pl.N; r++ {
			acc := float64(pl.B[r] * ua)
			row := pl.A[r*pl.N : (r+1)*pl.N]
			for j, av := range row {
				acc += float64(av * xc[j])
			}
			xn[r] = acc
		}
		xc, xn = xn, xc
	}
	return y, u
}
