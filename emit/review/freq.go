package review

import (
	"fmt"
	"math"
	"math/cmplx"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// zCtrl is the linear (unsaturated) discrete controller as polynomials in
// z (discrete.Coeffs.TF): the feedback path C(z) = Num/Den and the setpoint
// path F(z) = SetNum/Den.
type zCtrl struct {
	Num, SetNum, Den lti.Poly
}

func newZCtrl(k discrete.Coeffs) zCtrl {
	num, set, den := k.TF()
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
		plant: pl.Measured(),
		trueY: pl.TrueRate(),
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
	pm, err := l.plant.TF()
	if err != nil {
		return zMap{}, fmt.Errorf("plant poles and zeros: %w", err)
	}
	py, err := l.trueY.TF()
	if err != nil {
		return zMap{}, fmt.Errorf("plant zeros: %w", err)
	}
	dp, npm, npy := pm.Den, pm.Num, py.Num
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
func contLoop(p airframe.Axis, c synth.Controller) func(w float64) complex128 {
	return func(w float64) complex128 {
		s := complex(0, w)
		return c.Eval(s) * p.OpenLoop(s)
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
