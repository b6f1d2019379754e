package discrete

import "locusmith/airframe"

// Float is the sample type of a floating-point controller.
type Float interface{ ~float32 | ~float64 }

// Params are Coeffs rounded to the sample type T, as the emitted code holds
// them in named constants.
type Params[T Float] struct {
	Form              airframe.Form
	AntiWindup        AntiWindup
	DerivativeOnError bool
	Kp, KpB           T
	G0, G01, Kt       T
	Ad, Bd            T
	B0, B1, A1        T
	Lo, Hi, IL        T
}

// ParamsOf rounds the coefficients to T.
func ParamsOf[T Float](k Coeffs) Params[T] {
	return Params[T]{
		Form: k.Form, AntiWindup: k.AntiWindup, DerivativeOnError: k.DerivativeOnError,
		Kp: T(k.Kp), KpB: T(k.KpB), G0: T(k.G0), G01: T(k.G01), Kt: T(k.Kt),
		Ad: T(k.Ad), Bd: T(k.Bd), B0: T(k.B0), B1: T(k.B1), A1: T(k.A1),
		Lo: T(k.Lo), Hi: T(k.Hi), IL: T(k.IL),
	}
}

// State is the controller's memory between samples. The integrator update
// of a sample waits for the command actually applied (Applied), and is
// done at the start of the next Step.
type State[T Float] struct {
	S       T    // integrator (lead: the filter state x)
	Ud      T    // derivative filter output
	Vp      T    // previous derivative input
	E       T    // error of the last step
	Uu      T    // command before saturation, last step
	Ua      T    // command applied, last step
	Pending bool // the last step's integrator update is due
	Fresh   bool // after Reset with the derivative on the error: prime Vp at the next step
}

// Reset makes the transfer bumpless: the next command equals output when
// the setpoint then equals the measurement (the usual engagement: hold the
// current rate). The integrator takes output minus the proportional part
// at that point, (KpB − Kp)·measured, clamped to the integrator limit; the
// derivative history takes the measurement, so there is no derivative
// kick.
func Reset[T Float](p *Params[T], s *State[T], output, measured T) {
	*s = State[T]{}
	if p.Form == airframe.FormLead {
		// ul = B0·e + x, and e = 0 at engagement.
		s.S = output
		return
	}
	if p.Form.HasIntegral() {
		s.S = clamp(output-(T(p.KpB*measured)-T(p.Kp*measured)), -p.IL, p.IL)
	}
	if p.DerivativeOnError {
		s.Fresh = true
	} else {
		s.Vp = -measured
	}
}

// Applied records the command actually applied downstream (a mixer may
// clip several axes at once); anti-windup then works from it.
func Applied[T Float](s *State[T], applied T) {
	s.Ua = applied
}

func clamp[T Float](x, lo, hi T) T {
	if x > lo {
		if x < hi {
			return x
		}
		return hi
	}
	return lo
}

// Step is the reference model: one sample of the controller, in the exact
// operation order of the emitted code. Every product is converted to T
// explicitly so that no compiler fuses it with the following add (Go spec:
// an explicit conversion rounds and prevents fusion), which keeps the
// model bit-identical across CPU architectures.
func Step[T Float](p *Params[T], s *State[T], r, y T) T {
	if p.Form == airframe.FormLead {
		if s.Pending {
			s.S = T(p.B1*s.E) - T(p.A1*s.Uu)
		}
		e := r - y
		ul := T(p.B0*e) + s.S
		u := clamp(ul, p.Lo, p.Hi)
		s.E, s.Uu, s.Ua, s.Pending = e, ul, u, true
		return u
	}
	if s.Pending && p.Form.HasIntegral() {
		inc := T(p.G01 * s.E)
		switch p.AntiWindup {
		case AWClamp:
			if s.Ua < s.Uu && s.E > 0 || s.Ua > s.Uu && s.E < 0 {
				inc = 0
			}
		case AWBackcalc:
			inc += T(p.Kt * (s.Ua - s.Uu))
		}
		s.S = clamp(s.S+inc, -p.IL, p.IL)
	}
	e := r - y
	uu := T(p.KpB*r) - T(p.Kp*y)
	if p.Form.HasIntegral() {
		uu += s.S + T(p.G0*e)
	}
	if p.Form.HasDerivative() {
		v := -y
		if p.DerivativeOnError {
			v = e
		}
		if s.Fresh {
			s.Vp, s.Fresh = v, false
		}
		s.Ud = T(p.Ad*s.Ud) + T(p.Bd*(v-s.Vp))
		s.Vp = v
		uu += s.Ud
	}
	u := clamp(uu, p.Lo, p.Hi)
	s.E, s.Uu, s.Ua, s.Pending = e, uu, u, true
	return u
}
