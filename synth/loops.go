package synth

import (
	"math"

	"locusmith/airframe"
)

// Loops is the loop the search designs against, at every plant of the
// envelope: the continuous loop (ContinuousLoops) or the sampled loop that
// package discrete supplies, which is what the firmware runs.
//
// The search is written against this interface so that it judges a
// controller by the same figures as the verification: the frequency
// checks (Ms, margins, noise gain) on a shared frequency grid, stability
// by an exact test, and the time checks (setpoint step, load disturbance)
// by simulation.
type Loops interface {
	// Corners lists the plants every check must hold at; index 0 is the
	// nominal one, then the corners of the envelope box, then any finer
	// look in between that the final verification takes.
	Corners() []airframe.Corner
	// Primary is the number of leading Corners (the nominal plant and the
	// box's corners) that the frequency screen bounds Ms on; the time
	// checks and the stability test take every plant, so that a design
	// the search accepts is one the final verification passes.
	Primary() int
	// Grid returns the frequencies (rad/s, ascending) of the frequency
	// checks: fine enough to resolve every plant's resonances and the
	// delay's phase.
	Grid() []float64
	// Open returns the loop without the controller, plant·sensor·delay
	// (and the sampling), on the grid, at corner i.
	Open(i int) []complex128
	// Ctrl writes the controller's feedback path C on the grid into out
	// (len(out) = len(Grid())). C is linear in the gains (Kp, Ki, Kd, or
	// K for a lead of fixed zero and pole), which the search relies on.
	Ctrl(c Controller, out []complex128)
	// OpenAt is Open at any frequency w (rad/s) of the grid's span, and
	// CtrlAt returns Ctrl's C at any such frequency: a sensitivity peak
	// falls between grid points, where the search refines it.
	OpenAt(i int, w float64) complex128
	CtrlAt(c Controller) func(w float64) complex128
	// Stable reports whether the closed loop of c at corner i is stable,
	// by an exact test.
	Stable(c Controller, i int) (bool, error)
	// Step returns the setpoint step responses of c at corner i, over a
	// record of four settling times.
	Step(c Controller, i int) (Evaluation, error)
	// Disturb returns the true rate after a unit load step at the plant
	// input (the disturbance enters where the command does), at corner i,
	// over at least span seconds.
	Disturb(c Controller, i int, span float64) (Response, error)
}

// Response is a sampled response: Y[k] at t = k·H.
type Response struct {
	H float64
	Y []float64
}

// Evaluation is a controller's setpoint step at one plant, as the search
// judges it.
type Evaluation struct {
	// The setpoint step responses (true rate) with setpoint weights b = 0
	// and b = 1 have N samples at step H and final values Final0, Final1.
	// The response is linear in the weight, y(b) = y0 + b·(y1 − y0), and
	// so is its final value: two simulations serve every weight.
	N                 int
	H, Final0, Final1 float64
	// Respond writes the next len(y0) samples of both responses into y0
	// and y1 (len(y1) = len(y0)), continuing where the last call ended:
	// the search stops a response as soon as it cannot meet the spec.
	Respond func(y0, y1 []float64)
}

// DisturbanceFigures are the figures of a load-disturbance response.
type DisturbanceFigures struct {
	Step float64 // the disturbance, command units
	// Peak is the largest |rate deviation|, IAE its integral ∫|y|dt.
	Peak, IAE float64
	// Recovery is the time after which the deviation stays within
	// RecoveryBand of its peak; +Inf when it never does within the record
	// (a form without integral action on an integrating plant keeps a
	// steady deviation).
	Recovery float64
	// Final is the deviation at the end of the record.
	Final float64
}

// RecoveryBand is the band of the disturbance recovery time: the rate
// deviation stays within 2 % of its peak from then on (the usual 2 %
// criterion of settling, applied to the deviation).
const RecoveryBand = 0.02

// Disturbance measures a load-disturbance response of size step (the
// response r is to a unit step, scaled by step). The deviation has settled
// when it stays within RecoveryBand of its peak; a response that ends
// outside that band (a steady deviation) has no recovery and an IAE over
// the record only, reported with Recovery = +Inf.
func Disturbance(r Response, step float64) DisturbanceFigures {
	f := DisturbanceFigures{Step: step, Recovery: math.Inf(1)}
	if len(r.Y) == 0 {
		return f
	}
	for _, y := range r.Y {
		f.Peak = math.Max(f.Peak, math.Abs(y))
	}
	f.Peak *= math.Abs(step)
	// Trapezoidal ∫|y| dt.
	for k := 1; k < len(r.Y); k++ {
		f.IAE += float64((math.Abs(r.Y[k-1]) + math.Abs(r.Y[k])) / 2 * r.H)
	}
	f.IAE *= math.Abs(step)
	f.Final = r.Y[len(r.Y)-1] * step
	band := float64(RecoveryBand * f.Peak)
	if math.Abs(f.Final) > band || !(f.Peak > 0) {
		return f
	}
	last := -1
	for k, y := range r.Y {
		if math.Abs(y*step) > band {
			last = k
		}
	}
	if last < 0 {
		f.Recovery = 0
		return f
	}
	// Interpolated exit from the band between samples last and last+1.
	a, b := math.Abs(r.Y[last]*step), math.Abs(r.Y[last+1]*step)
	th := 1.0
	if a != b {
		th = math.Max(0, math.Min(1, (a-band)/(a-b)))
	}
	f.Recovery = (float64(last) + th) * r.H
	return f
}
