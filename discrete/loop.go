package discrete

import (
	"math"

	"locusmith/internal/lti"
	"locusmith/synth"
)

// linearCtrl is the unsaturated controller as a state-space system with two
// inputs, setpoint r and measurement y:
//
//	xc[k+1] = Ac xc + Br r + By y,  u = Cc xc + Dr r + Dy y.
//
// States (those the form uses, in this order): integrator s, derivative
// filter ud, previous derivative input vp; or the lead state x.
type linearCtrl struct {
	M      int
	Ac     []float64
	Br, By []float64
	Cc     []float64
	Dr, Dy float64
}

// linearize writes the equations of Coeffs (see its doc) as a linear
// system, for poles and margins; saturation and the integrator clamp are
// left out, as they do not act on a small step.
func linearize(k Coeffs) linearCtrl {
	if k.Form == synth.FormLead {
		// ul = B0 e + x; x' = B1 e − A1 ul = (B1 − A1 B0) e − A1 x.
		return linearCtrl{M: 1, Ac: []float64{-k.A1}, Br: []float64{k.B1 - k.A1*k.B0}, By: []float64{-(k.B1 - k.A1*k.B0)},
			Cc: []float64{1}, Dr: k.B0, Dy: -k.B0}
	}
	hasI, hasD := k.Form.HasIntegral(), k.Form.HasDerivative()
	m := 0
	is, id, iv := -1, -1, -1
	if hasI {
		is = m
		m++
	}
	if hasD {
		id, iv = m, m+1
		m += 2
	}
	c := linearCtrl{M: m, Ac: make([]float64, m*m), Br: make([]float64, m), By: make([]float64, m), Cc: make([]float64, m)}
	c.Dr, c.Dy = k.KpB, -k.Kp
	if hasI {
		c.Ac[is*m+is] = 1
		c.Br[is], c.By[is] = k.G01, -k.G01
		c.Cc[is] = 1
		c.Dr += k.G0
		c.Dy -= k.G0
	}
	if hasD {
		ar, ay := 0.0, -1.0
		if k.DerivativeOnError {
			ar = 1
		}
		// ud' = Ad ud − Bd vp + Bd (ar r + ay y); vp' = ar r + ay y.
		c.Ac[id*m+id] = k.Ad
		c.Ac[id*m+iv] = -k.Bd
		c.Br[id], c.By[id] = k.Bd*ar, k.Bd*ay
		c.Br[iv], c.By[iv] = ar, ay
		c.Cc[id] = k.Ad
		c.Cc[iv] = -k.Bd
		c.Dr += k.Bd * ar
		c.Dy += k.Bd * ay
	}
	return c
}

// closedLoop is the linear sampled loop, state X = [plant; compute-delay
// registers; controller], input r, outputs true rate and command.
type closedLoop struct {
	N      int
	A      []float64
	B      []float64
	Cy, Cu []float64
	Du     float64
}

// newClosedLoop closes the loop of plant pl, controller c and compute delay
// d (the command computed at t_k is applied over [t_(k+d), t_(k+d+1))).
func newClosedLoop(pl Plant, c linearCtrl, d int) closedLoop {
	np, m := pl.N, c.M
	n := np + d + m
	L := closedLoop{N: n, A: make([]float64, n*n), B: make([]float64, n), Cy: make([]float64, n), Cu: make([]float64, n)}
	ic := np + d // first controller state
	// u = Cc xc + Dr r + Dy·Cm·xp, as a row over X.
	urow := make([]float64, n)
	for j := 0; j < np; j++ {
		urow[j] = c.Dy * pl.Cm[j]
	}
	for j := 0; j < m; j++ {
		urow[ic+j] = c.Cc[j]
	}
	copy(L.Cu, urow)
	L.Du = c.Dr
	// Plant: xp' = Ap xp + Bp ua.
	for i := 0; i < np; i++ {
		copy(L.A[i*n:i*n+np], pl.A[i*np:(i+1)*np])
		if d == 0 {
			for j := 0; j < n; j++ {
				L.A[i*n+j] += pl.B[i] * urow[j]
			}
			L.B[i] += pl.B[i] * c.Dr
		} else {
			L.A[i*n+np+d-1] += pl.B[i]
		}
		L.Cy[i] = pl.Cy[i]
	}
	// Delay registers: q1' = u, qi' = q(i−1).
	if d > 0 {
		copy(L.A[np*n:np*n+n], urow)
		L.B[np] = c.Dr
		for i := 1; i < d; i++ {
			L.A[(np+i)*n+np+i-1] = 1
		}
	}
	// Controller: xc' = Ac xc + Br r + By Cm xp.
	for i := 0; i < m; i++ {
		r := ic + i
		for j := 0; j < m; j++ {
			L.A[r*n+ic+j] = c.Ac[i*m+j]
		}
		for j := 0; j < np; j++ {
			L.A[r*n+j] += c.By[i] * pl.Cm[j]
		}
		L.B[r] = c.Br[i]
	}
	return L
}

// poles returns the closed-loop poles in z.
func (L closedLoop) poles() ([]complex128, error) {
	return lti.Disc{N: L.N, A: L.A, B: L.B, C: L.Cy, T: 1}.Poles()
}

// stepInto writes the true-rate response to a unit setpoint step into y
// and, if u is not nil, the command into u.
func (L closedLoop) stepInto(y, u []float64) {
	n := L.N
	x := make([]float64, 2*n)
	xc, xn := x[:n], x[n:]
	for k := range y {
		var acc, au float64
		for i := 0; i < n; i++ {
			acc += L.Cy[i] * xc[i]
			au += L.Cu[i] * xc[i]
		}
		y[k] = acc
		if u != nil {
			u[k] = au + L.Du
		}
		for i := 0; i < n; i++ {
			s := L.B[i]
			row := L.A[i*n : i*n+n]
			for j, a := range row {
				s += a * xc[j]
			}
			xn[i] = s
		}
		xc, xn = xn, xc
	}
}

// dcGain returns the final value of the true rate after a unit setpoint
// step, (Cy (I − A)⁻¹ B), or NaN when I − A is singular.
func (L closedLoop) dcGain() float64 {
	v := lti.Disc{N: L.N, A: L.A, B: L.B, C: L.Cy, T: 1}.Eval(1)
	if math.IsNaN(real(v)) || math.IsInf(real(v), 0) {
		return math.NaN()
	}
	return real(v)
}

// feedback returns the controller's feedback path C_fb(z) = u/(−y) from
// the coefficients, with q = z⁻¹:
//
//	PID family: Kp + G0 + G01·q/(1 − q) + Bd·(1 − q)/(1 − Ad·q)
//	lead:       (B0 + B1·q)/(1 + A1·q)
//
// (the terms the form lacks are zero). It equals the linearized model's
// transfer function (a test checks it) at a fraction of the cost.
func feedback(k Coeffs, z complex128) complex128 {
	q := 1 / z
	if k.Form == synth.FormLead {
		return (complex(k.B0, 0) + complex(k.B1, 0)*q) / (1 + complex(k.A1, 0)*q)
	}
	v := complex(k.Kp, 0)
	if k.Form.HasIntegral() {
		v += complex(k.G0, 0) + complex(k.G01, 0)*q/(1-q)
	}
	if k.Form.HasDerivative() {
		v += complex(k.Bd, 0) * (1 - q) / (1 - complex(k.Ad, 0)*q)
	}
	return v
}

// loopMargins returns the margins of the sampled loop
// L(z) = C_fb(z)·P(z)·z^(−d) on the unit circle, z = e^(jωT), from a low
// frequency up to just below Nyquist π/T.
func loopMargins(pl Plant, k Coeffs, d int, wlo float64) lti.Margins {
	T := pl.T
	ny := math.Pi / T
	lo := math.Min(wlo, ny/1e4)
	n := int(math.Ceil(30*math.Log10(ny/lo))) + 1
	return lti.LoopMargins(func(w float64) complex128 {
		z := complexExp(w * T)
		v := feedback(k, z) * pl.evalMeasured(z)
		for i := 0; i < d; i++ {
			v /= z
		}
		return v
	}, lo, ny*(1-1e-9), n)
}

func complexExp(theta float64) complex128 {
	s, c := math.Sincos(theta)
	return complex(c, s)
}
