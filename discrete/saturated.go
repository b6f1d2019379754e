package discrete

import (
	"math"

	"locusmith/airframe"
	"locusmith/synth"
)

// saturatedCheck judges the saturating step (Verification.Saturated):
// when the step drove the command to an output limit, the loop must come
// back into the settling band of the new setpoint and stay there, with
// the configured anti-windup; a response that never recovers (wound up,
// stuck at a limit, or cycling between the limits) is a failed check,
// whatever the linear figures say. The value is the recovery time, +Inf
// when not recovered; the limit is 90 % of the simulated record, the span
// within which lti.StepMetrics calls a response settled.
//
// A step that does not reach a limit exercises the linear loop alone,
// which the overshoot and settling checks judge already: no check then.
func (d *Design) saturatedCheck() (synth.Check, bool) {
	s := d.Verif.Saturated
	if !d.Verif.Stable || !(s.Amplitude > 0) || !s.Reached || len(s.Y) < 2 {
		return synth.Check{}, false
	}
	v := math.Inf(1)
	if s.Settled {
		v = snap10(s.Recovery)
	}
	limit := snap10(0.9 * float64(len(s.Y)-1) * d.Plant.T)
	return synth.Check{Name: "saturated_recovery", Limit: limit, Value: v, Upper: true, OK: s.Settled, Worst: airframe.Nominal()}, true
}

// reached reports whether a command trace touched an output limit: the
// saturating step is a saturating step only then.
func reached(u []float64, lo, hi float64) bool {
	tol := float64(1e-9 * (hi - lo))
	for _, v := range u {
		if v >= hi-tol || v <= lo+tol {
			return true
		}
	}
	return false
}
