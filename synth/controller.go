package synth

import (
	"fmt"
	"math"
	"strconv"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Controller is a designed continuous-time controller.
//
// For the PID family, C(s) = Kp + Ki/s + Kd·s/(Tf·s + 1) acts on the
// measurement and F(s) = B·Kp + Ki/s (+ Kd·s/(Tf·s + 1) with the derivative
// on the error) on the setpoint, so u = F·r − C·y_m. For the lead form,
// C(s) = F(s) = K(s − Zero)/(s − Pole) acts on the error.
type Controller struct {
	Form              airframe.Form
	Kp, Ki, Kd        float64
	Tf                float64 // derivative filter time constant, s
	B                 float64 // setpoint weight on P
	DerivativeOnError bool
	K, Zero, Pole     float64 // lead form only
	// DF is the continuous counterpart of the derivative filters
	// (airframe.Control.DerivativeFilters) in series after the
	// derivative's own lowpass: the derivative term is
	// Kd·s/(Tf·s + 1)·DF(s). Nil without them. It comes from the file, is
	// shared by every controller of a design and never modified.
	DF *lti.TF
}

// NewController returns the controller of form p.Ctrl with no gains set:
// its fixed parts (derivative filter, setpoint weight 1, where the
// derivative acts), which the placement and the search fill in.
// DesignAxis rejects derivative filters that cannot be formed
// (derivativeTF).
func NewController(p airframe.Axis) Controller {
	c := Controller{Form: p.Ctrl.Form, Tf: p.Ctrl.Tf(), B: 1, DerivativeOnError: p.Ctrl.DerivativeOnError}
	if t, err := derivativeTF(p.Ctrl); err == nil {
		c.DF = t
	}
	return c
}

// derivativeTF returns the derivative filters of ctl in series as a
// transfer function, nil without any (or for a form without a
// derivative).
func derivativeTF(ctl airframe.Control) (*lti.TF, error) {
	if len(ctl.DerivativeFilters) == 0 || !ctl.Form.HasDerivative() {
		return nil, nil
	}
	z, err := ctl.DerivativeZPK()
	if err != nil {
		return nil, err
	}
	t, err := z.TF()
	if err != nil {
		return nil, fmt.Errorf("derivative filters: %w", err)
	}
	return &t, nil
}

// den returns the common denominator of C and F.
func (c Controller) den() lti.Poly {
	if c.DF != nil && c.Form.HasDerivative() {
		d := c
		d.DF = nil
		return lti.PolyMul(d.den(), c.DF.Den)
	}
	switch c.Form {
	case airframe.FormPI:
		return lti.Poly{0, 1}
	case airframe.FormPD:
		return lti.Poly{1, c.Tf}
	case airframe.FormPID:
		return lti.Poly{0, 1, c.Tf}
	case airframe.FormLead:
		return lti.Poly{-c.Pole, 1}
	}
	return lti.Poly{1}
}

// withDF returns the numerator of the feedback (setpoint: true) path
// with the derivative filter: the terms without the derivative over
// DF's denominator, and the derivative's (kd·s over the form's
// denominator, with kd as that path weights it) through DF's numerator.
func (c Controller) withDF(setpoint bool) lti.Poly {
	c0 := c
	c0.DF, c0.Kd = nil, 0
	n0 := c0.TF().Num
	if setpoint {
		n0 = c0.Setpoint().Num
	}
	kd := c.Kd
	if setpoint && !c.DerivativeOnError {
		kd = 0
	}
	// Kd·s/(Tf·s + 1) over the form's denominator: Kd·s (pd), Kd·s² (pid).
	t := lti.Poly{0, kd}
	if c.Form == airframe.FormPID {
		t = lti.Poly{0, 0, kd}
	}
	return lti.PolyAdd(lti.PolyMul(n0, c.DF.Den), lti.PolyMul(t, c.DF.Num))
}

// TF returns the feedback path C(s).
func (c Controller) TF() lti.TF {
	if c.DF != nil && c.Form.HasDerivative() {
		return lti.TF{Num: c.withDF(false), Den: c.den()}
	}
	var n lti.Poly
	switch c.Form {
	case airframe.FormP:
		n = lti.Poly{c.Kp}
	case airframe.FormPI:
		n = lti.Poly{c.Ki, c.Kp}
	case airframe.FormPD:
		n = lti.Poly{c.Kp, float64(c.Kp*c.Tf) + c.Kd}
	case airframe.FormPID:
		n = lti.Poly{c.Ki, c.Kp + float64(c.Ki*c.Tf), float64(c.Kp*c.Tf) + c.Kd}
	case airframe.FormLead:
		n = lti.Poly{-c.K * c.Zero, c.K}
	}
	return lti.TF{Num: n, Den: c.den()}
}

// Setpoint returns the setpoint path F(s), over the same denominator as C.
func (c Controller) Setpoint() lti.TF {
	if c.DF != nil && c.Form.HasDerivative() {
		return lti.TF{Num: c.withDF(true), Den: c.den()}
	}
	var n lti.Poly
	kd := 0.0
	if c.DerivativeOnError {
		kd = c.Kd
	}
	switch c.Form {
	case airframe.FormP:
		n = lti.Poly{c.B * c.Kp}
	case airframe.FormPI:
		n = lti.Poly{c.Ki, c.B * c.Kp}
	case airframe.FormPD:
		n = lti.Poly{c.B * c.Kp, float64(c.B*c.Kp*c.Tf) + kd}
	case airframe.FormPID:
		n = lti.Poly{c.Ki, float64(c.B*c.Kp) + float64(c.Ki*c.Tf), float64(c.B*c.Kp*c.Tf) + kd}
	case airframe.FormLead:
		return c.TF()
	}
	return lti.TF{Num: n, Den: c.den()}
}

// Eval returns C(s).
func (c Controller) Eval(s complex128) complex128 {
	switch c.Form {
	case airframe.FormLead:
		return lti.Div(lti.Mul(complex(c.K, 0), s-complex(c.Zero, 0)), s-complex(c.Pole, 0))
	}
	v := complex(c.Kp, 0)
	if c.Form.HasIntegral() {
		v += lti.Div(complex(c.Ki, 0), s)
	}
	if c.Form.HasDerivative() {
		d := lti.Div(lti.Mul(complex(c.Kd, 0), s), lti.Mul(complex(c.Tf, 0), s)+1)
		if c.DF != nil {
			d = lti.Mul(d, lti.Div(c.DF.Num.Eval(s), c.DF.Den.Eval(s)))
		}
		v += d
	}
	return v
}

// Series returns C(s) as gain, zeros and poles: C = Gain·Π(s − z)/Π(s − p).
func (c Controller) Series() (lti.ZPK, error) {
	t := c.TF()
	n, d := t.Num.Trim(), t.Den.Trim()
	zs, err := n.Roots()
	if err != nil {
		return lti.ZPK{}, err
	}
	ps, err := d.Roots()
	if err != nil {
		return lti.ZPK{}, err
	}
	return lti.ZPK{Gain: n[len(n)-1] / d[len(d)-1], Zeros: zs, Poles: ps}, nil
}

// HighFrequencyGain is |C(j∞)|, the gain from sensor noise at high frequency
// to the command: Kp + Kd/Tf for the PID family (the Kd/Tf term times
// |DF(j∞)| with derivative filters: a notch passes it, a lowpass stops
// it), K for lead. Refinement
// minimizes it, as it sets how much gyro noise reaches the actuators.
func (c Controller) HighFrequencyGain() float64 {
	switch c.Form {
	case airframe.FormLead:
		return math.Abs(c.K)
	case airframe.FormPD, airframe.FormPID:
		if c.Tf > 0 {
			d := c.Kd / c.Tf
			if c.DF != nil {
				// DF(j∞): a notch passes, a lowpass stops.
				n, m := c.DF.Num.Trim(), c.DF.Den.Trim()
				if len(n) != len(m) {
					d = 0
				} else {
					d = math.Abs(d * n[len(n)-1] / m[len(m)-1])
				}
			}
			return c.Kp + d
		}
		return math.Inf(1)
	}
	return c.Kp
}

// Ti and Td are the integral and derivative times of the standard form.
func (c Controller) Ti() float64 {
	if c.Ki == 0 {
		return math.Inf(1)
	}
	return c.Kp / c.Ki
}

// Td returns the derivative time Kd/Kp.
func (c Controller) Td() float64 {
	if c.Kp == 0 {
		return 0
	}
	return c.Kd / c.Kp
}

// Snap rounds every gain and corner of c to 10 significant digits.
//
// The design is a long chain of floating-point operations (eigenvalues,
// matrix exponentials, searches) whose last bits may differ between CPU
// architectures (fused multiply-add, assembly kernels); rounding the
// placed controller makes the generated code a function of the input
// alone, except in the rare case that a value falls within a few ulps of a
// rounding boundary. Ten digits keep the placement residual near 1e−10.
func (c Controller) Snap() Controller {
	for _, v := range []*float64{&c.Kp, &c.Ki, &c.Kd, &c.Tf, &c.B, &c.K, &c.Zero, &c.Pole} {
		*v = snap(*v)
	}
	return c
}

// snapUp is snap rounded up: a ten-digit value not below x (x > 0;
// +Inf stays +Inf). x·(1 + 1e-9) rounds to ten digits within 5e-10 of
// itself.
func snapUp(x float64) float64 {
	return snap(float64(x * (1 + 1e-9)))
}

func snap(x float64) float64 {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return x
	}
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 10, 64), 64)
	if err != nil {
		return x
	}
	return v
}
