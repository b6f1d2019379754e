package synth

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// AngleTerm is one pole, zero or delay of the loop seen from the target.
type AngleTerm struct {
	Kind     string     // "pole", "zero" or "delay"
	Of       string     // "plant" or "sensor"
	At       complex128 // location (for the delay: the delay in s as the real part)
	AngleDeg float64    // ∠(s* − at) in (−180°, 180°]; for the delay −ωd·τ in degrees
	Distance float64    // |s* − at|; 0 for the delay
}

// Working is the root-locus placement shown so that a reviewer can follow it
// by hand: the angle each open-loop pole and zero contributes at the target,
// the angle the controller must supply so that the total is −180°, and the
// magnitude condition |C(s*)|·|L(s*)| = 1.
type Working struct {
	Target        complex128
	Terms         []AngleTerm
	LoopAngleDeg  float64 // ∠L(s*) = Σ∠zeros − Σ∠poles − ωd·τ (+180° for a negative gain), unwrapped sum
	DeficiencyDeg float64 // angle the controller supplies: −180° − ∠L(s*), wrapped to (−180°, 180°]
	LoopMagnitude float64 // |L(s*)| = |k|·Π|s*−z| / Π|s*−p|
	NeededGain    float64 // |C(s*)| = 1/|L(s*)|
}

func deg(r float64) float64 { return r * 180 / math.Pi }

// wrapDeg wraps an angle in degrees to (−180, 180].
func wrapDeg(a float64) float64 {
	a = math.Mod(a, 360)
	if a > 180 {
		a -= 360
	} else if a <= -180 {
		a += 360
	}
	return a
}

// NewWorking computes the placement working of the loop at target s.
func NewWorking(p airframe.Axis, s complex128) Working {
	w := Working{Target: s}
	add := func(kind, of string, at []complex128) {
		for _, r := range at {
			d := s - r
			w.Terms = append(w.Terms, AngleTerm{Kind: kind, Of: of, At: r, AngleDeg: deg(lti.Phase(d)), Distance: lti.Abs(d)})
		}
	}
	add("zero", "plant", p.Plant.Model.Zeros)
	add("pole", "plant", p.Plant.Model.Poles)
	add("zero", "sensor", p.Sensor.Zeros)
	add("pole", "sensor", p.Sensor.Poles)
	if p.Plant.Delay > 0 {
		w.Terms = append(w.Terms, AngleTerm{Kind: "delay", Of: "plant", At: complex(p.Plant.Delay, 0), AngleDeg: -deg(imag(s) * p.Plant.Delay)})
	}
	sum := 0.0
	for _, t := range w.Terms {
		if t.Kind == "pole" {
			sum -= t.AngleDeg
		} else {
			sum += t.AngleDeg
		}
	}
	if p.Plant.Model.Gain*p.Sensor.Gain < 0 {
		sum += 180
	}
	w.LoopAngleDeg = sum
	w.DeficiencyDeg = wrapDeg(-180 - sum)
	w.LoopMagnitude = lti.Abs(p.OpenLoop(s))
	w.NeededGain = 1 / w.LoopMagnitude
	return w
}

// InfeasibleError says why a form cannot place the target, and what it can
// reach instead.
type InfeasibleError struct {
	Form    airframe.Form
	Target  Target
	Reason  string
	Reach   string // what the form can reach, if known
	Closest *Controller
}

func (e *InfeasibleError) Error() string {
	msg := fmt.Sprintf("%s cannot place the target pole %s (ζ = %.3f, ωn = %.4g rad/s): %s",
		e.Form, fmtComplex(e.Target.Pole), e.Target.Zeta, e.Target.OmegaN, e.Reason)
	if e.Reach != "" {
		msg += "; " + e.Reach
	}
	return msg
}

func fmtComplex(c complex128) string {
	if imag(c) == 0 {
		return fmt.Sprintf("%.4g", real(c))
	}
	return fmt.Sprintf("%.4g%+.4gj", real(c), imag(c))
}

// errNoTarget is returned by Place for the P form, which has one gain and
// so cannot choose both ζ and ωn.
var errNoTarget = errors.New("the p form places on the damping line, not at a target")

// Place solves the angle and magnitude conditions 1 + C(s*)·L(s*) = 0 at the
// target pole s* for the gains of the form. The conditions are two real
// equations, linear in the PID gains:
//
//	Kp + Ki/s* + Kd·s*/(Tf·s* + 1) = −1/L(s*)
//
// PI (Kd = 0) and PD (Ki = 0) are fully determined. PID adds the real
// equation of a third closed-loop pole at s3 = third_pole·(−σ). The lead
// form K(s − z)/(s − p) fixes z and solves p from the angle condition and K
// from the magnitude condition. Negative gains are refused: they would not
// fly.
func Place(p airframe.Axis, t Target) (Controller, error) {
	c := NewController(p)
	if p.Ctrl.SetpointWeightSet {
		c.B = p.Ctrl.SetpointWeight
	}
	s := t.Pole
	L := p.OpenLoop(s)
	if L == 0 || cmplx.IsNaN(L) || cmplx.IsInf(L) {
		return c, &InfeasibleError{Form: c.Form, Target: t, Reason: "the target is at an open-loop pole or zero"}
	}
	need := lti.Div(-1, L) // C(s*) that satisfies both conditions
	infeasible := func(why string) (Controller, error) {
		return c, &InfeasibleError{Form: c.Form, Target: t, Reason: why}
	}
	switch c.Form {
	case airframe.FormP:
		return c, errNoTarget
	case airframe.FormPI:
		q := lti.Div(1, s)
		c.Ki = imag(need) / imag(q)
		c.Kp = real(need) - float64(c.Ki*real(q))
	case airframe.FormPD:
		phi := c.derivBasis(s)
		c.Kd = imag(need) / imag(phi)
		c.Kp = real(need) - float64(c.Kd*real(phi))
	case airframe.FormPID:
		q := lti.Div(1, s)
		phi := c.derivBasis(s)
		s3 := -p.Ctrl.ThirdPole * t.Sigma
		L3 := real(p.OpenLoop(complex(s3, 0)))
		if L3 == 0 || math.IsNaN(L3) || math.IsInf(L3, 0) {
			return infeasible(fmt.Sprintf("the third pole %.4g is at an open-loop pole or zero; change third_pole", s3))
		}
		if den := float64(c.Tf*s3) + 1; math.Abs(den) < 1e-12 {
			return infeasible(fmt.Sprintf("the third pole %.4g is at the derivative filter pole; change third_pole or derivative_lowpass_hz", s3))
		}
		phi3 := s3 / (float64(c.Tf*s3) + 1)
		if c.DF != nil {
			phi3 = real(c.derivBasis(complex(s3, 0)))
		}
		// Rows: Re and Im of the target condition, then the third pole.
		a := [3][3]float64{
			{1, real(q), real(phi)},
			{0, imag(q), imag(phi)},
			{1, 1 / s3, phi3},
		}
		b := [3]float64{real(need), imag(need), -1 / L3}
		x, ok := solve3(a, b)
		if !ok {
			return infeasible("the placement equations are singular")
		}
		c.Kp, c.Ki, c.Kd = x[0], x[1], x[2]
	case airframe.FormLead:
		z := p.Ctrl.LeadZero
		// ∠C(s*) = ∠(s*−z) − ∠(s*−p) must equal the deficiency θ.
		theta := lti.Phase(need)
		phiP := lti.Phase(s-complex(z, 0)) - theta
		for phiP <= 0 {
			phiP += 2 * math.Pi
		}
		for phiP > 2*math.Pi {
			phiP -= 2 * math.Pi
		}
		if !(phiP > 0 && phiP < math.Pi) {
			return infeasible(fmt.Sprintf("the controller must supply %.1f° at the target, and a real pole seen from the upper half plane subtends (0°, 180°) only", deg(theta)))
		}
		c.Zero = z
		c.Pole = real(s) - imag(s)/lti.Tan(phiP)
		if c.Pole >= 0 {
			return infeasible(fmt.Sprintf("the compensator pole would be at %.4g, not in the left half plane", c.Pole))
		}
		c.K = lti.Abs(need) * lti.Abs(s-complex(c.Pole, 0)) / lti.Abs(s-complex(z, 0))
	default:
		return c, fmt.Errorf("unknown controller form %q", c.Form)
	}
	for _, g := range []struct {
		name string
		v    float64
	}{{"Kp", c.Kp}, {"Ki", c.Ki}, {"Kd", c.Kd}, {"K", c.K}} {
		if math.IsNaN(g.v) || math.IsInf(g.v, 0) {
			return infeasible(fmt.Sprintf("%s is not finite", g.name))
		}
		if g.v < 0 {
			return infeasible(fmt.Sprintf("it needs %s = %.4g < 0", g.name, g.v))
		}
	}
	if c.Form.HasIntegral() && c.Ki == 0 || c.Form.HasDerivative() && c.Kd == 0 {
		return infeasible("a gain of the form comes out zero")
	}
	return c.Snap(), nil
}

// PlaceP returns the proportional gain at which the root locus of K·L(s)
// crosses the damping line of ζ, and the crossing as the target. The line
// s = ωn·(−ζ + j√(1−ζ²)) is scanned for the angle condition ∠L(s) = −180°;
// of the crossings, the nearest to the origin whose closed loop is stable is
// taken: farther crossings belong to branches that come in from infinity
// (the delay's among them), not to the dominant pair. A locus that never
// leaves the real axis gets a real pole at the settling rate instead.
func PlaceP(p airframe.Axis, zeta float64) (Controller, Target, error) {
	c := Controller{Form: airframe.FormP, B: 1}
	if p.Ctrl.SetpointWeightSet {
		c.B = p.Ctrl.SetpointWeight
	}
	dir := complex(-zeta, math.Sqrt(1-float64(zeta*zeta)))
	lo, hi := frequencySpan(p)
	const n = 400
	type hit struct{ wn, k float64 }
	var hits []hit
	f := func(wn float64) float64 {
		// Imaginary part of L normalized: zero on the real axis of the L-plane.
		v := p.OpenLoop(lti.Mul(complex(wn, 0), dir))
		return lti.Atan2(imag(v), -real(v)) // 0 where ∠L = −180°
	}
	prevW := lo
	prev := f(lo)
	for i := 1; i <= n; i++ {
		w := lo * lti.Pow(hi/lo, float64(i)/n)
		cur := f(w)
		if prev == 0 || prev*cur < 0 && math.Abs(prev-cur) < math.Pi {
			a, b, fa := prevW, w, prev
			for j := 0; j < 100; j++ {
				m := math.Sqrt(a * b)
				fm := f(m)
				if fm == 0 {
					a, b = m, m
					break
				}
				if fa*fm < 0 {
					b = m
				} else {
					a, fa = m, fm
				}
				if b-a < 1e-13*b {
					break
				}
			}
			wn := math.Sqrt(a * b)
			v := p.OpenLoop(lti.Mul(complex(wn, 0), dir))
			if real(v) < 0 {
				hits = append(hits, hit{wn, 1 / lti.Abs(v)})
			}
		}
		prevW, prev = w, cur
	}
	for _, h := range hits {
		c.Kp = snap(h.k)
		if stable, err := closedLoopStable(p, c); err == nil && stable {
			return c, NewTarget(zeta, zeta*h.wn), nil
		}
	}
	// No crossing (a first-order loop, say, whose locus stays on the real
	// axis): place a real closed-loop pole at −σ of the spec's envelope,
	// where the angle condition holds when L(−σ) is real and negative.
	if p.Spec.SettlingTime > 0 && p.Spec.Band > 0 {
		sigma := SigmaFromSettling(zeta, p.Spec.Band, p.Spec.SettlingTime)
		if v := p.OpenLoop(complex(-sigma, 0)); real(v) < 0 && !math.IsInf(real(v), 0) {
			c.Kp = snap(-1 / real(v))
			if stable, err := closedLoopStable(p, c); err == nil && stable {
				return c, Target{Zeta: 1, OmegaN: sigma, Sigma: sigma, Pole: complex(-sigma, 0)}, nil
			}
		}
	}
	t := NewTarget(zeta, zeta*math.Sqrt(lo*hi))
	return c, t, &InfeasibleError{Form: airframe.FormP, Target: t, Reason: fmt.Sprintf("the root locus does not cross the damping line ζ = %.3f at a stable gain, nor the real axis at the settling rate", zeta)}
}

// frequencySpan returns a frequency range (rad/s) that covers every corner
// of the loop with two decades to spare on each side.
func frequencySpan(p airframe.Axis) (lo, hi float64) {
	lo, hi = math.Inf(1), 0.0
	note := func(rs []complex128) {
		for _, r := range rs {
			if a := lti.Abs(r); a > 0 {
				lo, hi = math.Min(lo, a), math.Max(hi, a)
			}
		}
	}
	note(p.Plant.Model.Poles)
	note(p.Plant.Model.Zeros)
	note(p.Sensor.Poles)
	note(p.Sensor.Zeros)
	if p.Plant.Delay > 0 {
		lo, hi = math.Min(lo, 1/p.Plant.Delay), math.Max(hi, 1/p.Plant.Delay)
	}
	if p.Spec.SettlingTime > 0 {
		w := 4 / p.Spec.SettlingTime
		lo, hi = math.Min(lo, w), math.Max(hi, w)
	}
	if math.IsInf(lo, 1) {
		lo, hi = 1, 1
	}
	return lo / 100, hi * 100
}

// solve3 solves a 3×3 linear system by Gaussian elimination with partial
// pivoting.
func solve3(a [3][3]float64, b [3]float64) ([3]float64, bool) {
	var x [3]float64
	for col := 0; col < 3; col++ {
		piv := col
		for r := col + 1; r < 3; r++ {
			if math.Abs(a[r][col]) > math.Abs(a[piv][col]) {
				piv = r
			}
		}
		if math.Abs(a[piv][col]) < 1e-300 {
			return x, false
		}
		a[col], a[piv] = a[piv], a[col]
		b[col], b[piv] = b[piv], b[col]
		for r := col + 1; r < 3; r++ {
			f := a[r][col] / a[col][col]
			for k := col; k < 3; k++ {
				a[r][k] -= float64(f * a[col][k])
			}
			b[r] -= float64(f * b[col])
		}
	}
	for r := 2; r >= 0; r-- {
		s := b[r]
		for k := r + 1; k < 3; k++ {
			s -= float64(a[r][k] * x[k])
		}
		x[r] = s / a[r][r]
	}
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return x, false
		}
	}
	return x, true
}

// closedLoopStable reports whether all closed-loop poles of the loop with
// controller c lie in the open left half plane (delay by its Padé
// approximant).
func closedLoopStable(p airframe.Axis, c Controller) (bool, error) {
	cl, err := newClosedLoop(p, c)
	if err != nil {
		return false, err
	}
	ps, err := cl.char.Roots()
	if err != nil {
		return false, err
	}
	return allStable(ps), nil
}

func allStable(ps []complex128) bool {
	for _, r := range ps {
		if !(real(r) < 0) {
			return false
		}
	}
	return true
}

// derivBasis is the derivative term per unit Kd at s, s/(Tf·s + 1)·DF(s):
// the column of Kd in the placement equations.
func (c Controller) derivBasis(s complex128) complex128 {
	phi := lti.Div(s, lti.Mul(complex(c.Tf, 0), s)+1)
	if c.DF != nil {
		phi = lti.Mul(phi, lti.Div(c.DF.Num.Eval(s), c.DF.Den.Eval(s)))
	}
	return phi
}
