package discrete

import (
	"locusmith/airframe"
	"locusmith/internal/lti"
)

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
	// Sections is the feedback filter chain, run on the measured rate
	// before the controller; nil without one.
	Sections []Section[T]
	// DSections are the derivative filters, run on the filtered
	// derivative before it joins the command; nil without them.
	DSections []Section[T]
}

// Section is one filter section of the feedback chain rounded to T, run in
// transposed direct form II (see Step): Second says whether it has the
// second state (B2 and A2); a first-order section has B2 = A2 = 0.
type Section[T Float] struct {
	B0, B1, B2, A1, A2 T
	Second             bool
}

// SectionsOf rounds the filter sections to T.
func SectionsOf[T Float](qs []lti.Biquad) []Section[T] {
	var out []Section[T]
	for _, q := range qs {
		out = append(out, Section[T]{B0: T(q.B0), B1: T(q.B1), B2: T(q.B2), A1: T(q.A1), A2: T(q.A2),
			Second: q.B2 != 0 || q.A2 != 0})
	}
	return out
}

// ParamsOf rounds the coefficients to T.
func ParamsOf[T Float](k Coeffs) Params[T] {
	return Params[T]{
		Form: k.Form, AntiWindup: k.AntiWindup, DerivativeOnError: k.DerivativeOnError,
		Kp: T(k.Kp), KpB: T(k.KpB), G0: T(k.G0), G01: T(k.G01), Kt: T(k.Kt),
		Ad: T(k.Ad), Bd: T(k.Bd), B0: T(k.B0), B1: T(k.B1), A1: T(k.A1),
		Lo: T(k.Lo), Hi: T(k.Hi), IL: T(k.IL),
		DSections: SectionsOf[T](k.DSections),
	}
}

// State is the controller's memory between samples. Step updates every
// state at once (eagerly), the integrator from the command it returns;
// Applied corrects the integrator when a mixer changed that command.
//
// Which fields a form uses (the emitted code declares only these): S for
// pi, pid and lead (the lead's filter state x); Ud and Vp for pd and pid;
// Inc for conditional integration (AWClamp); Fresh for a derivative on
// the error; Ua and Faults for every form; F for each feedback filter,
// D for each derivative filter.
type State[T Float] struct {
	S      T      // integrator (lead: the filter state x)
	Ud     T      // derivative filter output
	Vp     T      // derivative input of the last step
	Inc    T      // AWClamp: the integrator increment of the last step, 0 when none was taken
	Ua     T      // the last command: returned by Step, or given to Applied or Reset
	Faults uint32 // non-finite inputs since Reset, saturating at the largest uint32
	Fresh  bool   // after Reset with the derivative on the error: prime Vp at the next step
	// F holds the states (s1, s2) of each filter section of the chain.
	F [airframe.MaxFilters][2]T
	// D holds the states (s1, s2) of each derivative filter; their rest
	// is 0, the derivative's value at a constant measurement.
	D [airframe.MaxFilters][2]T
}

// finite reports whether x is neither NaN nor infinite: x − x is +0 for
// every finite x and NaN otherwise (IEEE 754: ∞ − ∞ and NaN − NaN are
// NaN). The emitted code tests its inputs with the same expression, which
// needs nothing from <math.h>.
func finite[T Float](x T) bool { return x-x == 0 }

// fault counts one non-finite input, saturating.
func (s *State[T]) fault() {
	if s.Faults != ^uint32(0) {
		s.Faults++
	}
}

// Reset makes the transfer bumpless: the next command equals output when
// the setpoint then equals the measurement (the usual engagement: hold the
// current rate). The integrator takes output minus the proportional part
// at that point, (KpB − Kp)·measured, clamped to the integrator limit; the
// derivative history takes the measurement, so there is no derivative
// kick. The command held on a non-finite input is output until the first
// step. Faults starts at 0; when output or measured is not finite, both
// are taken as 0 and Faults starts at 1, so that no non-finite value
// enters the state.
func Reset[T Float](p *Params[T], s *State[T], output, measured T) {
	*s = State[T]{}
	if !(output-output == measured-measured) {
		output, measured = 0, 0
		s.Faults = 1
	}
	s.Ua = output
	// Each filter section at rest with its input at measured: its output
	// is measured too (every section has unit DC gain), so the controller
	// sees no step at engagement; s1 = m − B0·m and s2 = B2·m − A2·m are
	// the states of transposed direct form II at that rest.
	for i, q := range p.Sections {
		s.F[i][0] = measured - T(q.B0*measured)
		if q.Second {
			s.F[i][1] = T(q.B2*measured) - T(q.A2*measured)
		}
	}
	// The derivative filters stay at 0 (the zeroed state): at rest with
	// their input, the derivative of a constant measurement, at 0.
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
// clip several axes at once). With back-calculation the integrator, which
// Step updated from the command it returned (Ua), is corrected by
// Kt·(applied − Ua), within its limit; with conditional integration the
// increment of the last step is withdrawn when the applied command is
// below the returned one while the integrator rose (or above while it
// fell). Without anti-windup only the held command changes. A non-finite
// applied command changes nothing but Faults.
func Applied[T Float](p *Params[T], s *State[T], applied T) {
	if !finite(applied) {
		s.fault()
		return
	}
	if p.Form.HasIntegral() {
		switch p.AntiWindup {
		case AWBackcalc:
			s.S = clamp(s.S+T(p.Kt*(applied-s.Ua)), -p.IL, p.IL)
		case AWClamp:
			if applied < s.Ua && s.Inc > 0 || applied > s.Ua && s.Inc < 0 {
				s.S = clamp(s.S-s.Inc, -p.IL, p.IL)
				s.Inc = 0
			}
		}
	}
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

// floatSections runs x through the sections qs, each in transposed direct
// form II (Oppenheim & Schafer; from memory): out = B0·w + s1, then
// s1 = B1·w − A1·out + s2 and s2 = B2·w − A2·out, with their states in
// st; it returns the last one's output.
func floatSections[T Float](qs []Section[T], st *[airframe.MaxFilters][2]T, x T) T {
	for i, q := range qs {
		f := &st[i]
		w := x
		x = T(q.B0*w) + f[0]
		if q.Second {
			f[0] = T(q.B1*w) - T(q.A1*x) + f[1]
			f[1] = T(q.B2*w) - T(q.A2*x)
		} else {
			f[0] = T(q.B1*w) - T(q.A1*x)
		}
	}
	return x
}

// Step is the reference model: one sample of the controller, in the exact
// operation order of the emitted code. Every product is converted to T
// explicitly so that no compiler fuses it with the following add (Go spec:
// an explicit conversion rounds and prevents fusion), which keeps the
// model bit-identical across CPU architectures.
//
// A setpoint or measurement that is not finite (NaN, ±Inf) leaves the
// state untouched: Step counts it in Faults and returns the last command
// (Ua) again. One bad sample therefore costs one held command, and the
// samples after it give the commands they would have given without it.
//
// Without Applied, the commands are those of the same equations with the
// integrator update deferred to the next step (the order before the
// eager update): the same operations on the same values.
func Step[T Float](p *Params[T], s *State[T], r, y T) T {
	if !(r-r == y-y) {
		s.fault()
		return s.Ua
	}
	// The feedback filter chain: the controller sees its output as the
	// measured rate.
	y = floatSections(p.Sections, &s.F, y)
	if p.Form == airframe.FormLead {
		e := r - y
		ul := T(p.B0*e) + s.S
		u := clamp(ul, p.Lo, p.Hi)
		s.S = T(p.B1*e) - T(p.A1*ul)
		s.Ua = u
		return u
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
		// The derivative filters: the command takes the last one's
		// output in place of Ud.
		uu += floatSections(p.DSections, &s.D, s.Ud)
	}
	u := clamp(uu, p.Lo, p.Hi)
	if p.Form.HasIntegral() {
		inc := T(p.G01 * e)
		switch p.AntiWindup {
		case AWClamp:
			if u < uu && e > 0 || u > uu && e < 0 {
				inc = 0 // saturated in the error's direction
			}
			s.Inc = inc
		case AWBackcalc:
			inc += T(p.Kt * (u - uu))
		}
		s.S = clamp(s.S+inc, -p.IL, p.IL)
	}
	s.Ua = u
	return u
}
