package review

import (
	"fmt"
	"math"
	"math/cmplx"

	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// zCtrl is the linear (unsaturated) discrete controller as polynomials in
// z: the feedback path C(z) = Num/Den from the measurement (u = F·r − C·y)
// and the setpoint path F(z) = SetNum/Den. It is read off the difference
// equations documented on discrete.Coeffs:
//
//	integral    I(z) = G0 + G01·z⁻¹/(1 − z⁻¹) = (G0·z + G01 − G0)/(z − 1)
//	derivative  D(z) = Bd·(1 − z⁻¹)/(1 − Ad·z⁻¹) = Bd·(z − 1)/(z − Ad)
//	C = Kp + I + D,  F = b·Kp + I (+ D with the derivative on the error)
//	lead        C = F = (B0 + B1·z⁻¹)/(1 + A1·z⁻¹) = (B0·z + B1)/(z + A1)
type zCtrl struct {
	Num, SetNum, Den lti.Poly
}

func newZCtrl(k discrete.Coeffs) zCtrl {
	if k.Form == synth.FormLead {
		n := lti.Poly{k.B1, k.B0}
		return zCtrl{Num: n, SetNum: n, Den: lti.Poly{k.A1, 1}}
	}
	den := lti.Poly{1}
	iDen, dDen := lti.Poly{-1, 1}, lti.Poly{-k.Ad, 1}
	hasI, hasD := k.Form.HasIntegral(), k.Form.HasDerivative()
	if hasI {
		den = lti.PolyMul(den, iDen)
	}
	if hasD {
		den = lti.PolyMul(den, dDen)
	}
	// Each term over the common denominator: term·den/own denominator.
	num := den.Scale(k.Kp)
	set := den.Scale(k.KpB)
	if hasI {
		t := lti.Poly{k.G01 - k.G0, k.G0}
		if hasD {
			t = lti.PolyMul(t, dDen)
		}
		num, set = lti.PolyAdd(num, t), lti.PolyAdd(set, t)
	}
	if hasD {
		t := lti.Poly{-k.Bd, k.Bd}
		if hasI {
			t = lti.PolyMul(t, iDen)
		}
		num = lti.PolyAdd(num, t)
		if k.DerivativeOnError {
			set = lti.PolyAdd(set, t)
		}
	}
	return zCtrl{Num: num, SetNum: set, Den: den}
}

// discreteLoop is the sampled loop L(z) = C(z)·Pm(z)·z^(−d) of a design,
// with Pm the ZOH plant seen through the sensor (its fractional transport
// delay included) and d the whole samples of delay: the compute delay
// and the whole samples of the transport delay, which discrete.Plant
// keeps apart from its state matrix.
type discreteLoop struct {
	ctrl  zCtrl
	plant lti.Disc // measured output
	trueY lti.Disc // true-rate output
	d     int
	T     float64
}

func newDiscreteLoop(d *discrete.Design) discreteLoop {
	pl := d.Plant
	return discreteLoop{
		ctrl:  newZCtrl(d.Coeffs),
		plant: lti.Disc{N: pl.N, A: pl.A, B: pl.B, C: pl.Cm, T: pl.T},
		trueY: lti.Disc{N: pl.N, A: pl.A, B: pl.B, C: pl.Cy, T: pl.T},
		d:     d.Loop.ComputeDelay + pl.Delay,
		T:     pl.T,
	}
}

// at returns L(e^(jωT)).
func (l discreteLoop) at(w float64) complex128 {
	s, c := math.Sincos(w * l.T)
	z := complex(c, s)
	v := l.ctrl.Num.Eval(z) / l.ctrl.Den.Eval(z) * l.plant.Eval(z)
	for i := 0; i < l.d; i++ {
		v /= z
	}
	return v
}

// charPoly returns det(zI − A) of an n×n row-major matrix as a monic
// polynomial, from its eigenvalues.
func charPoly(n int, a []float64) (lti.Poly, error) {
	ev, err := lti.Disc{N: n, A: a, B: make([]float64, n), C: make([]float64, n), T: 1}.Poles()
	if err != nil {
		return nil, err
	}
	return lti.FromRoots(ev)
}

// numerator returns the numerator of C(zI − A)⁻¹B over det(zI − A):
// det(zI − A + B·C) − det(zI − A), by the matrix determinant lemma.
func numerator(s lti.Disc) (lti.Poly, error) {
	n := s.N
	abc := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			abc[i*n+j] = s.A[i*n+j] - float64(s.B[i]*s.C[j])
		}
	}
	p1, err := charPoly(n, abc)
	if err != nil {
		return nil, err
	}
	p0, err := charPoly(n, s.A)
	if err != nil {
		return nil, err
	}
	return lti.PolyAdd(p1, p0.Scale(-1)), nil
}

// zMap is the z-plane picture of the sampled loop: closed-loop poles and
// zeros from setpoint to true rate,
//
//	T(z) = F·Py·z^(−d) / (1 + C·Pm·z^(−d)) = NF·NPy / (DC·DP·z^d + NC·NPm),
//
// (the delay's z^d cancels into the characteristic polynomial).
type zMap struct {
	Poles, Zeros []complex128
}

func newZMap(l discreteLoop) (zMap, error) {
	dp, err := charPoly(l.plant.N, l.plant.A)
	if err != nil {
		return zMap{}, fmt.Errorf("plant poles: %w", err)
	}
	npm, err := numerator(l.plant)
	if err != nil {
		return zMap{}, fmt.Errorf("plant zeros: %w", err)
	}
	npy, err := numerator(l.trueY)
	if err != nil {
		return zMap{}, fmt.Errorf("plant zeros: %w", err)
	}
	zd := make(lti.Poly, l.d+1)
	zd[l.d] = 1
	char := lti.PolyAdd(lti.PolyMul(lti.PolyMul(l.ctrl.Den, dp), zd), lti.PolyMul(l.ctrl.Num, npm))
	poles, err := char.Trim().Roots()
	if err != nil {
		return zMap{}, fmt.Errorf("closed-loop poles: %w", err)
	}
	zeros, err := trimSmall(lti.PolyMul(l.ctrl.SetNum, npy)).Roots()
	if err != nil {
		return zMap{}, fmt.Errorf("closed-loop zeros: %w", err)
	}
	return zMap{Poles: poles, Zeros: zeros}, nil
}

// trimSmall drops leading coefficients that are rounding residue (below
// 1e-12 of the largest): the determinant-lemma numerator's leading terms
// cancel exactly in theory, not always in floating point.
func trimSmall(p lti.Poly) lti.Poly {
	m := 0.0
	for _, c := range p {
		m = math.Max(m, math.Abs(c))
	}
	n := len(p)
	for n > 0 && math.Abs(p[n-1]) <= 1e-12*m {
		n--
	}
	return p[:n]
}

// contLoop returns the continuous loop C(jω)·G(jω)·H(jω)·e^(−jωτ) with the
// exact delay.
func contLoop(p synth.Problem, c synth.Controller) func(w float64) complex128 {
	return func(w float64) complex128 {
		s := complex(0, w)
		return c.Eval(s) * p.Loop(s)
	}
}

// unwrapDeg returns the phase of vs in degrees, unwrapped continuously
// along the slice, the first value put on the branch nearest start.
func unwrapDeg(vs []complex128, start float64) []float64 {
	out := make([]float64, len(vs))
	prev := math.NaN()
	for i, v := range vs {
		ph := cmplx.Phase(v) * 180 / math.Pi
		if math.IsNaN(prev) {
			ph += 360 * math.Round((start-ph)/360)
		} else {
			ph += 360 * math.Round((prev-ph)/360)
		}
		out[i] = ph
		if !math.IsNaN(ph) {
			prev = ph
		}
	}
	return out
}

// logGrid returns n frequencies log-spaced from lo to hi.
func logGrid(lo, hi float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	out[n-1] = hi
	return out
}
