package airframe

import (
	"math"
	"slices"

	"locusmith/internal/lti"
)

// The types below are the decoded file: the problem every stage of the
// pipeline works on. They live here, below the stages, so that the design
// stages (synth, discrete) and the renderers (emit, review) all read one
// definition of an axis, and so that the decoder needs none of them.

// Form names a controller structure.
type Form string

// The controller forms.
const (
	FormP    Form = "p"
	FormPI   Form = "pi"
	FormPD   Form = "pd"
	FormPID  Form = "pid"
	FormLead Form = "lead"
)

// Forms returns every form in a fixed order, for messages and tests.
func Forms() []Form { return []Form{FormP, FormPI, FormPD, FormPID, FormLead} }

// HasIntegral reports whether the form has an integral term.
func (f Form) HasIntegral() bool { return f == FormPI || f == FormPID }

// HasDerivative reports whether the form has a filtered derivative term.
func (f Form) HasDerivative() bool { return f == FormPD || f == FormPID }

// Plant is the actuator command → true body rate model.
type Plant struct {
	// Model is the rational part, command → rate, in zero-pole-gain form.
	Model lti.ZPK
	// Delay is the transport delay in seconds (≥ 0).
	Delay float64
}

// Spec is the time-domain and robustness spec of one axis. Every figure
// is checked on the sampled loop, at the nominal plant and over the
// envelope.
type Spec struct {
	SettlingTime float64 // s, to within ±Band of the final value
	Band         float64 // settling band as a fraction, 0.02 or 0.05
	Overshoot    float64 // largest overshoot as a fraction of the final value
	// MinPhaseMargin (deg) and MinGainMargin (dB) are required margins;
	// zero means no requirement beyond stability.
	MinPhaseMargin float64
	MinGainMargin  float64
	// MaxSensitivity is the bound on Ms = max |1/(1 + L)|.
	MaxSensitivity float64
	// MaxSteadyError bounds |1 − final value| of a unit setpoint step, a
	// fraction of the setpoint.
	MaxSteadyError float64
	// HoldRate is the largest steady setpoint (rad/s) the loop must hold
	// with the integrator within the integrator limit; 0: none asked.
	HoldRate float64
	// DisturbanceStep is the load disturbance of the disturbance check, in
	// command units at the plant input (where the command enters).
	DisturbanceStep float64
	// DisturbanceRecovery is the time (s) after a DisturbanceStep by which
	// the rate deviation must stay within 2 % of its peak; 0: not checked
	// (the response is still reported).
	DisturbanceRecovery float64
	// MaxNoiseGain bounds the controller's largest gain from measured rate
	// to command between the crossover and Nyquist (command units per
	// rad/s); 0 asks the design for its default (see the search).
	MaxNoiseGain float64
}

// Envelope is the plant's range: every check holds at the nominal plant
// and at every corner of the box the three intervals span.
type Envelope struct {
	// GainScale multiplies the plant's gain (effectiveness, or the zpk
	// gain): [low, high] with low ≤ 1 ≤ high.
	GainScale [2]float64
	// LagScale multiplies the time constant of every non-zero plant pole
	// (motor_tau in the physical form), keeping the low-frequency gain:
	// [low, high] with low ≤ 1 ≤ high.
	LagScale [2]float64
	// DelayAdd is added to the plant's transport delay, s: [low, high]
	// with low ≤ 0 ≤ high.
	DelayAdd [2]float64
}

// Corner is one plant of the envelope: the scales and the added delay.
type Corner struct {
	GainScale, LagScale, DelayAdd float64
}

// Nominal is the corner of the nominal plant.
func Nominal() Corner { return Corner{GainScale: 1, LagScale: 1} }

// Normalized returns e with a zero scale interval read as [1, 1]: the
// zero Envelope is the nominal plant only.
func (e Envelope) Normalized() Envelope {
	if e.GainScale == [2]float64{} {
		e.GainScale = [2]float64{1, 1}
	}
	if e.LagScale == [2]float64{} {
		e.LagScale = [2]float64{1, 1}
	}
	return e
}

// Corners returns the nominal plant, then every distinct corner of the
// envelope box, in a fixed order (gain, then lag, then delay, low before
// high). An envelope of [1, 1], [1, 1], [0, 0] (or the zero Envelope) has
// the nominal plant only.
func (e Envelope) Corners() []Corner {
	e = e.Normalized()
	cs := []Corner{Nominal()}
	for _, g := range e.GainScale {
		for _, l := range e.LagScale {
			for _, d := range e.DelayAdd {
				c := Corner{GainScale: g, LagScale: l, DelayAdd: d}
				if !slices.Contains(cs, c) {
					cs = append(cs, c)
				}
			}
		}
	}
	return cs
}

// Control holds the controller choices of one axis, with every default
// applied by the decoder.
type Control struct {
	Form   Form
	Refine bool
	// ThirdPole places the PID's third real closed-loop pole at
	// ThirdPole·(−σ) of the target.
	ThirdPole float64
	// LeadZero is the lead compensator's zero, rad/s (negative).
	LeadZero float64
	// DerivativeLowpassHz sets the derivative filter, Tf = 1/(2π·f).
	DerivativeLowpassHz float64
	// DerivativeOnError puts the derivative on the error instead of the
	// measurement (the default, which avoids a derivative kick).
	DerivativeOnError bool
	// SetpointWeight is b, the weight of the setpoint in the P term.
	// When SetpointWeightSet is false, the design may choose it.
	SetpointWeight    float64
	SetpointWeightSet bool
	// OutputLimit is the command range [low, high].
	OutputLimit [2]float64
	// IntegratorLimit bounds |integral term| in command units.
	IntegratorLimit float64
	// AntiWindup is "none", "clamp" or "backcalc".
	AntiWindup string
	// TrackingTime is the back-calculation tracking time in s; 0 picks the
	// rule of thumb.
	TrackingTime float64
	// Discretize is "tustin", "tustin_prewarp", "backward" or "forward".
	Discretize string
	// DerivativeFilters are the [[axes.NAME.filter]] tables with
	// at = "derivative" (pd and pid only), in file order: sections on the
	// derivative term after its first-order lowpass. They belong to the
	// controller, so every stage that realizes it sees them.
	DerivativeFilters []Filter
}

// Tf returns the derivative filter time constant in seconds,
// Tf = 1/(2π·derivative_lowpass_hz), or 0 without a derivative filter.
func (c Control) Tf() float64 {
	if c.DerivativeLowpassHz <= 0 {
		return 0
	}
	return 1 / (2 * math.Pi * c.DerivativeLowpassHz)
}

// Axis is one [axes.NAME] table: everything needed to design and verify
// one rate loop.
type Axis struct {
	Name     string
	Plant    Plant
	Sensor   lti.ZPK // true rate → measured rate; Gain 1 and no roots when ideal
	Spec     Spec
	Ctrl     Control
	Envelope Envelope
	// Filters is the feedback filter chain, in the order the measured
	// rate runs through it ([[axes.NAME.filter]]); nil without one.
	Filters []Filter
}

// At returns the axis with its plant moved to corner c of the envelope:
// the gain multiplied by c.GainScale; every non-zero pole p moved to
// p/c.LagScale (its time constant multiplied by c.LagScale) with the gain
// divided by c.LagScale for each such pole, so that the gain below the
// poles is kept (for the physical form effectiveness/(s·(τs + 1)) this is
// τ → c.LagScale·τ, effectiveness unchanged); c.DelayAdd added to the
// delay. Zeros and the sensor are not moved.
func (a Axis) At(c Corner) Axis {
	if c == Nominal() {
		return a
	}
	m := a.Plant.Model
	poles := make([]complex128, len(m.Poles))
	gain := m.Gain * c.GainScale
	for i, p := range m.Poles {
		poles[i] = p
		if p != 0 && c.LagScale != 1 {
			poles[i] = lti.Div(p, complex(c.LagScale, 0))
			gain /= c.LagScale
		}
	}
	a.Plant.Model = lti.ZPK{Gain: gain, Zeros: m.Zeros, Poles: poles}
	a.Plant.Delay += c.DelayAdd
	return a
}

// OpenLoop returns G(s)·H(s)·e^(−sτ), the loop without the controller:
// plant, sensor and transport delay.
func (a Axis) OpenLoop(s complex128) complex128 {
	v := lti.Mul(a.Plant.Model.Eval(s), a.Sensor.Eval(s))
	if a.Plant.Delay > 0 {
		v = lti.Mul(v, lti.CExp(lti.Mul(-s, complex(a.Plant.Delay, 0))))
	}
	return v
}

// Loop is the sampling of the rate loop.
type Loop struct {
	Hz float64 // loop rate, samples per second
	// ComputeDelay is d: the command computed from the sample at t_k is
	// applied over [t_(k+d), t_(k+d+1)).
	ComputeDelay int
}

// NumericType names the arithmetic of the generated controller.
type NumericType string

// The numeric types.
const (
	Float32 NumericType = "float32"
	Float64 NumericType = "float64"
	Q15     NumericType = "q15"
	Q31     NumericType = "q31"
)

// IsFixed reports whether the type is a fixed-point type.
func (t NumericType) IsFixed() bool { return t == Q15 || t == Q31 }

// Numeric is the numeric realization of the controller.
type Numeric struct {
	Type NumericType
	// InputFullScale is the largest |setpoint| or |measured rate|, in rate
	// units; OutputFullScale the largest |command|. Both matter for the
	// fixed-point types; for float types they are 0 when not given.
	InputFullScale  float64
	OutputFullScale float64
}
