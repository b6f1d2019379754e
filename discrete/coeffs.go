package discrete

import (
	"fmt"
	"math"
	"strconv"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// Method names a discretization rule.
type Method string

// The discretization rules, s ↦ function of z.
const (
	Tustin        Method = "tustin"         // s = (2/T)(z−1)/(z+1)
	TustinPrewarp Method = "tustin_prewarp" // s = (ω/tan(ωT/2))(z−1)/(z+1), exact at ω
	Backward      Method = "backward"       // s = (z−1)/(T·z)
	Forward       Method = "forward"        // s = (z−1)/T
)

// AntiWindup names an integrator windup protection.
type AntiWindup string

// The anti-windup schemes.
const (
	AWNone     AntiWindup = "none"
	AWClamp    AntiWindup = "clamp"    // conditional integration
	AWBackcalc AntiWindup = "backcalc" // back-calculation with tracking time Tt
)

// Coeffs are the difference equations of one axis's controller, in the
// operation order of the reference model (Step) and of the emitted code.
//
// PID family, at each sample with setpoint r and measurement y:
//
//	e  = r − y
//	v  = −y (derivative on measurement) or e (on error)
//	ud = Ad·ud + Bd·(v − v_prev)                  filtered derivative
//	uu = KpB·r − Kp·y + (s + G0·e) + ud           before saturation
//	u  = clamp(uu, Lo, Hi)
//
// and the integrator, updated once the applied command ua is known (u, or
// the value passed to Applied):
//
//	s ← clamp(s + G01·e [+ Kt·(ua − uu)], −IL, IL)
//
// with the increment dropped under conditional integration when the
// saturation and the error have the same sign. The lead form is
//
//	ul = B0·e + x,  u = clamp(ul, Lo, Hi),  x ← B1·e − A1·ul.
type Coeffs struct {
	Form              airframe.Form
	Method            Method
	T                 float64 // sample period, s
	PrewarpOmega      float64 // rad/s, for TustinPrewarp
	Kp, KpB           float64 // P gain on the measurement and on the setpoint (b·Kp)
	G0, G01           float64 // integrator: current-error weight and state increment weight
	Ad, Bd            float64 // derivative filter
	DerivativeOnError bool
	DerivativeMethod  Method  // the rule used for the derivative (see Realize)
	B0, B1, A1        float64 // lead
	Lo, Hi            float64 // output limits
	IL                float64 // integrator limit
	AntiWindup        AntiWindup
	Kt                float64 // back-calculation gain T/Tt
	Tt                float64 // tracking time, s
	// DSections are the derivative filters (pd, pid), run on ud in
	// transposed direct form II before it joins the command (dfilter.go);
	// nil without them. Shared between copies of Coeffs, never modified.
	DSections []lti.Biquad
}

// Realize discretizes the continuous controller c at period T.
//
// The integral term Ki/s maps to (G0 + G1·z⁻¹)/(1 − z⁻¹) with
// G0 = G1 = Ki·T'/2 (Tustin; T' = T, or 2·tan(ωT/2)/ω when prewarped at the
// crossover ω), G0 = Ki·T, G1 = 0 (backward), G0 = 0, G1 = Ki·T (forward).
//
// The filtered derivative Kd·s/(Tf·s + 1) maps to
// Bd(1 − z⁻¹)/(1 − Ad·z⁻¹). It follows the chosen rule only when that keeps
// its pole Ad in [0, 1): Tustin's pole (2Tf − T')/(2Tf + T') is negative
// (a ringing derivative) for Tf < T'/2, and forward Euler's 1 − T/Tf is
// unstable for Tf < T/2. Otherwise the backward difference is used, whose
// pole Tf/(Tf + T) lies in [0, 1) for every Tf ≥ 0 (Åström & Hägglund,
// Advanced PID Control, the recommended derivative approximation, from
// memory), and a warning says so.
//
// The back-calculation gain is the forward-Euler tracking term
// Kt = T/Tt. With tracking_time = 0, Tt = √(Ti·Td) for PID and Tt = Ti for
// PI (Åström & Hägglund, Advanced PID Control, rule of thumb for the
// tracking time, from memory).
func Realize(c synth.Controller, ctrl airframe.Control, T, crossover float64) (Coeffs, []string, error) {
	var warns []string
	k := Coeffs{
		Form: c.Form, Method: Method(ctrl.Discretize), T: T,
		Kp: c.Kp, KpB: c.B * c.Kp,
		DerivativeOnError: c.DerivativeOnError,
		Lo:                ctrl.OutputLimit[0], Hi: ctrl.OutputLimit[1],
		IL:         ctrl.IntegratorLimit,
		AntiWindup: AntiWindup(ctrl.AntiWindup),
	}
	if !(T > 0) {
		return k, nil, fmt.Errorf("sample period %g: must be > 0", T)
	}
	// Tp is the effective period of the bilinear map: T, or prewarped.
	tp := T
	switch k.Method {
	case Tustin, Backward, Forward:
	case TustinPrewarp:
		w := crossover
		if !(w > 0) || math.IsInf(w, 0) || w*T/2 >= math.Pi/2 {
			warns = append(warns, "tustin_prewarp: no usable crossover below Nyquist; plain Tustin used")
		} else {
			// The crossover comes from a search whose last bits may differ
			// between CPU architectures; 10 digits make tp reproducible.
			w = snap10(w)
			k.PrewarpOmega = w
			tp = 2 * lti.Tan(w*T/2) / w
		}
	default:
		return k, nil, fmt.Errorf("unknown discretization %q", ctrl.Discretize)
	}
	if c.Form == airframe.FormLead {
		k.B0, k.B1, k.A1 = leadCoeffs(c, k.Method, T, tp)
		return k, warns, nil
	}
	if c.Form.HasIntegral() {
		kit := c.Ki * T
		switch k.Method {
		case Tustin, TustinPrewarp:
			k.G0 = c.Ki * tp / 2
			k.G01 = c.Ki * tp
		case Backward:
			k.G0, k.G01 = kit, kit
		case Forward:
			k.G0, k.G01 = 0, kit
		}
		switch k.AntiWindup {
		case AWNone, AWClamp:
		case AWBackcalc:
			tt := ctrl.TrackingTime
			if tt == 0 {
				if c.Form == airframe.FormPID && c.Kd > 0 {
					tt = math.Sqrt(c.Ti() * c.Td())
				} else {
					tt = c.Ti()
				}
			}
			if !(tt > 0) || math.IsInf(tt, 0) {
				return k, nil, fmt.Errorf("tracking time %g: must be finite and > 0", tt)
			}
			k.Tt = tt
			// Forward Euler of dI/dt = (ua − uu)/Tt; a gain above 1 would
			// overcorrect in one sample, so it is capped there.
			k.Kt = math.Min(T/tt, 1)
		default:
			return k, nil, fmt.Errorf("unknown anti-windup %q", ctrl.AntiWindup)
		}
	}
	if c.Form.HasDerivative() {
		tf := c.Tf
		k.DerivativeMethod = k.Method
		switch k.Method {
		case Tustin, TustinPrewarp:
			if 2*tf >= tp {
				k.Ad = (2*tf - tp) / (2*tf + tp)
				k.Bd = 2 * c.Kd / (2*tf + tp)
			} else {
				k.DerivativeMethod = Backward
			}
		case Forward:
			if tf >= T {
				k.Ad = 1 - T/tf
				k.Bd = c.Kd / tf
			} else {
				k.DerivativeMethod = Backward
			}
		}
		if k.DerivativeMethod == Backward {
			if k.Method != Backward {
				warns = append(warns, fmt.Sprintf("derivative filter Tf = %.3g s is short for %s at T = %.3g s (its pole would not lie in [0, 1)); the derivative uses the backward difference", tf, k.Method, T))
			}
			k.Ad = tf / (tf + T)
			k.Bd = c.Kd / (tf + T)
		}
		// The derivative filters, Tustin prewarped at their own
		// frequencies (the feedback chain's rule), whatever the rule of
		// the rest.
		qs, err := ctrl.DerivativeSections(1 / T)
		if err != nil {
			return k, nil, err
		}
		k.DSections = qs
	}
	return k, warns, nil
}

// leadCoeffs maps K(s − z)/(s − p) to (B0 + B1·z⁻¹)/(1 + A1·z⁻¹). The
// products are converted explicitly so that no compiler fuses them into a
// multiply-add, which would change the last bit on some architectures.
func leadCoeffs(c synth.Controller, m Method, T, tp float64) (b0, b1, a1 float64) {
	kk, z, p := c.K, c.Zero, c.Pole
	switch m {
	case Backward:
		d := 1 - float64(p*T)
		return kk * (1 - float64(z*T)) / d, -kk / d, -1 / d
	case Forward:
		return kk, -kk * (1 + float64(z*T)), -(1 + float64(p*T))
	}
	w := 2 / tp
	d := w - p
	return kk * (w - z) / d, -kk * (w + z) / d, -(w + p) / d
}

// snap10 rounds x to 10 significant digits (see synth.Controller.Snap).
func snap10(x float64) float64 {
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 10, 64), 64)
	if err != nil {
		return x
	}
	return v
}
