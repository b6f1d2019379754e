package emit

import (
	"fmt"
	"math"
	"strconv"

	"locusmith/discrete"
)

// vecModel is a reference model under the standard excitation: it rounds
// each input to its sample type, runs the model and records a vector.
// Values cross this interface in the axis's units (rate, command).
type vecModel interface {
	reset(output, measured float64, why string)
	step(setpoint, measured float64) float64
	applied(applied float64)
	// inputLimit is the largest |setpoint| or |measurement| the type
	// carries (the input full scale of fixed point; +Inf for float).
	inputLimit() float64
	// nonFinite says whether the type has NaN and infinities (float),
	// which the excitation then feeds in; faults records a check of the
	// model's fault count (float only).
	nonFinite() bool
	faults(why string)
}

// The standard excitation, in segments of n samples (n = the spec's
// settling time in samples, kept within [vecMinSeg, vecMaxSeg]):
//
//  1. reset(0, 0), then a setpoint step small enough for the linear range;
//  2. a step to −big and 3. to +big, both saturating: big needs twice the
//     output limit in the linear loop (as discrete.Saturated), so
//     anti-windup acts;
//  4. a chirp of amplitude small over 2n samples, from slow to about a
//     sixth of the loop rate;
//  5. a saturating step with a simulated motor mixer that clips the
//     command to 60 % of the limits and reports it through _applied;
//     for float types, halfway through it, non-finite inputs: NaN and
//     infinite setpoints and measurements (each must hold the command
//     and leave the state alone), a NaN applied command, and a check of
//     the fault count;
//  6. a bumpless reset from the last applied command and measurement, the
//     setpoint held at that measurement for n/2 samples (the usual
//     engagement: hold the current rate), then a step to zero;
//  7. for float types, a reset with a NaN output (taken as 0, one fault),
//     a few samples at rest, and a check of the fault count.
//
// The measurement is not a plant model (the vectors test arithmetic, not
// the design): it follows the setpoint through a first-order lag of time
// constant Ts/4 plus a small pseudo-random noise, so that the derivative
// and the integrator see varied inputs. Every operation is an IEEE
// addition, multiplication or division rounded on its own (explicit
// float64 conversions, so no fused multiply-add on any CPU), and the noise
// is an integer xorshift: the vectors are the same bits on every machine.
const (
	vecMinSeg = 40
	vecMaxSeg = 150
)

// excite drives m with the standard excitation for design d.
func excite(d *discrete.Design, m vecModel) error {
	k := d.Coeffs
	T := 1 / d.Loop.Hz
	ts := d.Problem.Spec.SettlingTime
	if !(T > 0) || !(ts > 0) || math.IsInf(ts, 0) {
		return fmt.Errorf("loop period %g s, settling time %g s: must be finite and > 0", T, ts)
	}
	n := int(math.Min(math.Max(math.Ceil(ts/T), vecMinSeg), vecMaxSeg))
	lim := math.Min(math.Abs(k.Lo), math.Abs(k.Hi))
	if !(lim > 0) {
		lim = math.Max(math.Abs(k.Lo), math.Abs(k.Hi))
	}
	top := math.Max(math.Abs(k.Lo), math.Abs(k.Hi))
	peak := d.Verif.Saturated.LinearPeakCommand
	if !(peak > 0) || math.IsInf(peak, 0) {
		// No linear step response (an unstable loop generated with
		// --allow-unmet): the first-sample command of a unit step.
		peak = math.Abs(k.KpB) + math.Abs(k.G0) + math.Abs(k.B0)
	}
	if !(peak > 0) || !(top > 0) {
		return fmt.Errorf("no command scale: output limits [%g, %g], step command %g", k.Lo, k.Hi, peak)
	}
	// Three significant digits: the amplitudes come from the design (its
	// linear step response), whose last bits may differ between CPU
	// architectures; rounded, they do not (short of a tie at the fourth
	// digit), and the vectors stay a pure function of the input.
	small := round3(0.5 * lim / peak)
	big := round3(2 * top / peak)
	if c := 0.9 * m.inputLimit(); big > c {
		big = c
		small = math.Min(small, c/2)
	}
	if !(small > 0) || math.IsInf(big, 0) || math.IsNaN(big) {
		return fmt.Errorf("no input scale (small %g, big %g)", small, big)
	}
	alpha := T / (T + float64(ts/4))
	ylim := 0.95 * m.inputLimit()

	var rng uint32 = 0x9e3779b9
	noise := func() float64 {
		rng ^= rng << 13
		rng ^= rng >> 17
		rng ^= rng << 5
		// A uniform value in [−1, 1), exact in float64.
		return float64(int32(rng)) / (1 << 31)
	}
	namp := 0.01 * small
	y := 0.0
	var u float64
	sample := func(r float64) float64 {
		u = m.step(r, y)
		y = y + float64(alpha*float64(r-y)) + float64(namp*noise())
		y = math.Max(-ylim, math.Min(ylim, y))
		return u
	}
	m.reset(0, 0, "start")
	for i := 0; i < n; i++ {
		sample(small)
	}
	for i := 0; i < n; i++ {
		sample(-big)
	}
	for i := 0; i < n; i++ {
		sample(big)
	}
	// Chirp: the phasor (c, s) turns by θ_i = 2·atan(t_i) per sample, the
	// rotation written rationally, ((1 − t²) + j·2t)/(1 + t²), so that only
	// the four IEEE operations are used.
	c, s := 1.0, 0.0
	for i := 0; i < 2*n; i++ {
		t := 0.02 + float64(0.58*float64(i))/float64(2*n)
		t2 := float64(t * t)
		wc, ws := (1-t2)/(1+t2), float64(2*t)/(1+t2)
		c, s = float64(c*wc)-float64(s*ws), float64(c*ws)+float64(s*wc)
		sample(float64(small * s))
	}
	lo, hi := 0.6*k.Lo, 0.6*k.Hi
	nan, inf := math.NaN(), math.Inf(1)
	for i := 0; i < n; i++ {
		if i == n/2 && m.nonFinite() {
			for _, b := range [][2]float64{{nan, y}, {big, nan}, {inf, y}, {big, -inf}, {nan, nan}, {-inf, inf}} {
				m.step(b[0], b[1])
			}
			m.applied(nan)
			m.faults("non-finite inputs: held, counted")
		}
		v := sample(big)
		if a := math.Max(lo, math.Min(hi, v)); a != v {
			m.applied(a)
			u = a
		}
	}
	m.reset(u, y, "bumpless transfer")
	hold := y
	for i := 0; i < n/2; i++ {
		sample(hold)
	}
	for i := 0; i < n; i++ {
		sample(0)
	}
	if m.nonFinite() {
		m.reset(nan, y, "non-finite reset: taken as 0")
		for i := 0; i < 3; i++ {
			sample(0)
		}
		m.faults("one fault since the reset")
	}
	return nil
}

// round3 rounds x to three significant digits (through its decimal form,
// which strconv computes exactly).
func round3(x float64) float64 {
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 3, 64), 64)
	if err != nil {
		return x
	}
	return v
}
