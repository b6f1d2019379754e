package discrete

import (
	"locusmith/internal/lti"
)

// The derivative filters (airframe.Control.DerivativeFilters) are
// sections on the derivative term of a pd or pid alone, after its own
// first-order lowpass: with ud the filtered derivative of Coeffs,
//
//	d = H1(H2(…Hn(ud)))   each Hj(z) = (b0 + b1·z⁻¹ + b2·z⁻²)/(1 + a1·z⁻¹ + a2·z⁻²)
//	uu = KpB·r − Kp·y + (s + G0·e) + d
//
// run in transposed direct form II as the feedback chain's sections are
// (Step). They belong to the controller: linearize, feedbackRatio and
// Coeffs.TF below carry them into every check of the sampled loop.

// sectionStates is the number of states of section q in transposed
// direct form II: 1 for a first-order section (B2 = A2 = 0), 2 otherwise.
func sectionStates(q lti.Biquad) int {
	if q.B2 != 0 || q.A2 != 0 {
		return 2
	}
	return 1
}

// linForm is a linear function of the controller's states and inputs,
// x·xc + r·setpoint + y·measurement.
type linForm struct {
	x    []float64
	r, y float64
}

// axpy returns a·f + g (f and g over the same states), each product
// rounded before it is added (no fused multiply-add).
func axpy(a float64, f, g linForm) linForm {
	out := linForm{x: make([]float64, len(f.x)), r: float64(a*f.r) + g.r, y: float64(a*f.y) + g.y}
	for j := range f.x {
		out.x[j] = float64(a*f.x[j]) + g.x[j]
	}
	return out
}

// linearizeDerivative is linearize for coefficients with derivative
// sections: the controller of k without them (states s, ud, vp) extended
// by the sections' states, in the order they run, each section's s1 then
// s2. The derivative's contribution to the command, ud as updated this
// step, is replaced by the chain's output.
func linearizeDerivative(k Coeffs) linearCtrl {
	kc := k
	kc.DSections = nil
	c := linearize(kc) // the dynamics of s, ud and vp
	// The command without the derivative: the same equations with Ad =
	// Bd = 0 (their terms then add exact zeros).
	kb := kc
	kb.Ad, kb.Bd = 0, 0
	cb := linearize(kb)
	m0 := c.M
	id := m0 - 2 // ud, then vp, are the last states of linearize
	m := m0
	for _, q := range k.DSections {
		m += sectionStates(q)
	}
	buf := make([]float64, m*m+3*m)
	out := linearCtrl{M: m, Ac: buf[: m*m : m*m], Br: buf[m*m : m*m+m : m*m+m], By: buf[m*m+m : m*m+2*m : m*m+2*m],
		Cc: buf[m*m+2*m : m*m+3*m : m*m+3*m]}
	for i := 0; i < m0; i++ {
		copy(out.Ac[i*m:i*m+m0], c.Ac[i*m0:i*m0+m0])
		out.Br[i], out.By[i] = c.Br[i], c.By[i]
	}
	// sig is the signal entering the next section: first ud as updated
	// this step, ud' = row id of the controller.
	sig := linForm{x: make([]float64, m), r: c.Br[id], y: c.By[id]}
	copy(sig.x, c.Ac[id*m0:id*m0+m0])
	unit := func(i int) linForm {
		f := linForm{x: make([]float64, m)}
		f.x[i] = 1
		return f
	}
	zero := linForm{x: make([]float64, m)}
	at := m0
	for _, q := range k.DSections {
		two := sectionStates(q) == 2
		// out = B0·w + s1; s1' = B1·w − A1·out (+ s2); s2' = B2·w − A2·out.
		o := axpy(q.B0, sig, unit(at))
		rest := zero
		if two {
			rest = unit(at + 1)
		}
		s1 := axpy(-q.A1, o, axpy(q.B1, sig, rest))
		rows := []linForm{s1}
		if two {
			rows = append(rows, axpy(-q.A2, o, axpy(q.B2, sig, zero)))
		}
		for j, f := range rows {
			i := at + j
			copy(out.Ac[i*m:i*m+m], f.x)
			out.Br[i], out.By[i] = f.r, f.y
		}
		at += len(rows)
		sig = o
	}
	// u = the command without the derivative + the chain's output.
	base := linForm{x: make([]float64, m), r: cb.Dr, y: cb.Dy}
	copy(base.x, cb.Cc[:m0])
	u := axpy(1, sig, base)
	copy(out.Cc, u.x)
	out.Dr, out.Dy = u.r, u.y
	return out
}

// sectionsRatio returns the product of the sections' numerators and of
// their denominators at q = z⁻¹.
func sectionsRatio(qs []lti.Biquad, q complex128) (n, d complex128) {
	n, d = 1, 1
	q2 := lti.Mul(q, q)
	for _, s := range qs {
		n = lti.Mul(n, complex(s.B0, 0)+lti.Mul(complex(s.B1, 0), q)+lti.Mul(complex(s.B2, 0), q2))
		d = lti.Mul(d, 1+lti.Mul(complex(s.A1, 0), q)+lti.Mul(complex(s.A2, 0), q2))
	}
	return n, d
}

// feedbackRatioDerivative is feedbackRatio with derivative sections
// H = Nf/Df: the terms without the derivative over Df, the derivative's
// through Nf,
//
//	n = [(Kp + G0)·fi·fd + G01·q·fd]·Df + Bd·(1 − q)·fi·Nf,  d = fi·fd·Df.
func feedbackRatioDerivative(k Coeffs, q complex128) (n, d complex128) {
	kb := k
	kb.DSections, kb.Bd = nil, 0
	nb, db := feedbackRatio(kb, q)
	nf, df := sectionsRatio(k.DSections, q)
	fi := complex(1, 0)
	if k.Form.HasIntegral() {
		fi = 1 - q
	}
	nd := lti.Mul(lti.Mul(complex(k.Bd, 0), 1-q), fi)
	return lti.Mul(nb, df) + lti.Mul(nd, nf), lti.Mul(db, df)
}

// tfDerivative is Coeffs.TF with derivative sections: each section is
// (B0·z² + B1·z + B2)/(z² + A1·z + A2) (first order: (B0·z + B1)/(z + A1)),
// the terms without the derivative go over their denominators' product Df,
// the derivative's through their numerators' product Nf.
func (k Coeffs) tfDerivative() (num, setNum, den lti.Poly) {
	kb := k
	kb.DSections, kb.Bd = nil, 0
	nb, sb, db := kb.TF()
	nf, df := lti.Poly{1}, lti.Poly{1}
	for _, q := range k.DSections {
		if sectionStates(q) == 2 {
			nf = lti.PolyMul(nf, lti.Poly{q.B2, q.B1, q.B0})
			df = lti.PolyMul(df, lti.Poly{q.A2, q.A1, 1})
		} else {
			nf = lti.PolyMul(nf, lti.Poly{q.B1, q.B0})
			df = lti.PolyMul(df, lti.Poly{q.A1, 1})
		}
	}
	// D(z) = Bd·(z − 1)/(z − Ad), over the common denominator.
	t := lti.Poly{-k.Bd, k.Bd}
	if k.Form.HasIntegral() {
		t = lti.PolyMul(t, lti.Poly{-1, 1})
	}
	t = lti.PolyMul(t, nf)
	num = lti.PolyAdd(lti.PolyMul(nb, df), t)
	setNum = lti.PolyMul(sb, df)
	if k.DerivativeOnError {
		setNum = lti.PolyAdd(setNum, t)
	}
	return num, setNum, lti.PolyMul(db, df)
}
