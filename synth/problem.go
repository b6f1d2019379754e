// Package synth designs a continuous-time rate controller for one axis by
// root-locus placement and verifies the full-order closed loop against the
// spec.
//
// The loop is
//
//	r ─▶ F ─┐
//	        ├─▶ u ─▶ G(s) ─▶ y ─▶ H(s) ─▶ y_m
//	y_m ─▶ C┘
//
// with the parallel PID C(s) = Kp + Ki/s + Kd·s/(Tf·s + 1), the setpoint path
// F(s) = b·Kp + Ki/s (+ the derivative term when the derivative acts on the
// error), or the lead compensator C(s) = K(s − z)/(s − p). G includes the
// plant's transport delay e^(−sτ); H is the rate sensor.
package synth

import (
	"math"

	"locusmith/internal/lti"
)

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

// Forms lists every form in a fixed order, for messages and tests.
var Forms = []Form{FormP, FormPI, FormPD, FormPID, FormLead}

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

// Spec is the time-domain and robustness spec of one axis.
type Spec struct {
	SettlingTime float64 // s, to within ±Band of the final value
	Band         float64 // settling band as a fraction, 0.02 or 0.05
	Overshoot    float64 // largest overshoot as a fraction of the final value
	// MinPhaseMargin (deg) and MinGainMargin (dB) are required margins;
	// zero means no requirement beyond stability.
	MinPhaseMargin float64
	MinGainMargin  float64
}

// Control holds the controller choices of one axis. Defaults are applied by
// the airframe package; synth expects every field set.
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
	// When SetpointWeightSet is false, refinement may choose it.
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
}

// Problem is everything needed to design and verify one axis.
type Problem struct {
	Axis   string
	Plant  Plant
	Sensor lti.ZPK // true rate → measured rate; Gain 1 and no roots when ideal
	Spec   Spec
	Ctrl   Control
}

// Tf returns the derivative filter time constant in seconds.
func (c Control) Tf() float64 {
	if c.DerivativeLowpassHz <= 0 {
		return 0
	}
	return 1 / (2 * math.Pi * c.DerivativeLowpassHz)
}
