package discrete

import (
	"fmt"
	"math/cmplx"
	"slices"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Plant is the sampled plant seen by the controller: one state vector, the
// ZOH of the cascade G·H with the transport delay, and two outputs, the
// measured rate (sensor output, the feedback path) and the true rate (G's
// output, what the vehicle does).
//
// The sensor is driven by the plant, not by a hold, so the feedback path is
// the ZOH equivalent of the cascade, not the product of two ZOH equivalents.
// A transport delay τ = d·T + f is exact: whole samples as shift registers
// and the fraction by the split-interval (modified z-transform) integral of
// lti.ZOHDelay.
//
// The whole samples of the delay are kept apart, as Delay: the state-space
// part (A, B, Cm, Cy) holds the plant, the sensor and the fraction of a
// sample, and its input is the command delayed by Delay samples. A long
// delay then costs a ring buffer, not a dense matrix, and the transfer
// function stays well conditioned.
type Plant struct {
	N      int
	A, B   []float64 // x[k+1] = A x[k] + B ua[k − Delay]
	Cm, Cy []float64 // measured and true rate: y = C x[k]
	Delay  int       // whole samples of transport delay
	T      float64
	// num/den is the feedback path as a transfer function in z, for fast
	// frequency sweeps; nil when it could not be formed accurately.
	num, den lti.Poly
}

// NewPlant samples the problem's plant and sensor at period T.
func NewPlant(p airframe.Axis, T float64) (Plant, error) {
	// Section-by-section realizations keep the matrix exponential
	// accurate (see lti.ZPK.CascadeSS).
	gs, err := p.Plant.Model.CascadeSS()
	if err != nil {
		return Plant{}, fmt.Errorf("plant: %w", err)
	}
	hs, err := p.Sensor.CascadeSS()
	if err != nil {
		return Plant{}, fmt.Errorf("sensor: %w", err)
	}
	// Cascade u → G → H, x = [xg; xh]: the sensor's output is the measured
	// rate, G's output (on the first gs.N states) the true rate.
	gh := lti.Series(gs, hs)
	cy := make([]float64, gh.N)
	copy(cy, gs.C)
	whole, frac := lti.SplitDelay(p.Plant.Delay, T)
	dm, err := lti.ZOHDelay(gh, T, frac)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant and sensor: %w", err)
	}
	dy, err := lti.ZOHDelay(lti.SS{N: gh.N, A: gh.A, B: gh.B, C: cy, D: gs.D}, T, frac)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant: %w", err)
	}
	if dm.N != dy.N || !slices.Equal(dm.A, dy.A) || !slices.Equal(dm.B, dy.B) {
		return Plant{}, fmt.Errorf("sampling the plant: inconsistent realizations")
	}
	pl := Plant{N: dm.N, A: dm.A, B: dm.B, Cm: dm.C, Cy: dy.C, Delay: whole, T: T}
	if dm.D != 0 || dy.D != 0 {
		// A sample at t_k sees the command held over the previous interval,
		// so a feedthrough acts through one extra state holding it.
		pl = pl.withHeldInput(dm.D, dy.D)
	}
	pl.num, pl.den = pl.transferFunction()
	return pl, nil
}

// transferFunction returns Cm(zI − A)⁻¹B as num/den in z (lti.Disc.TF,
// the determinant lemma), checked against the resolvent at a few points on
// the unit circle and dropped (nil) when they disagree by more than 1e-7
// relative, in which case sweeps use the resolvent. Seven digits of the
// frequency response are far more than a margin or a crossover needs; the
// expanded numerator of a plant of high relative degree loses more than
// nine near Nyquist, where |P| is tiny (1e-8 at |P| = 3e-7 on the demo
// gimbal's pitch).
func (p Plant) transferFunction() (lti.Poly, lti.Poly) {
	d := p.measured()
	tf, err := d.TF()
	if err != nil {
		return nil, nil
	}
	for _, th := range []float64{1e-3, 0.01, 0.1, 0.5, 1, 2, 3} {
		z := complexExp(th)
		want := d.Eval(z)
		if got := tf.Eval(z); !(cmplx.Abs(got-want) <= 1e-7*cmplx.Abs(want)) {
			return nil, nil
		}
	}
	return tf.Num, tf.Den
}

// TrueRate returns the true-rate output path (plant without sensor) as an
// lti.Disc on the same state, without the whole-sample delay.
func (p Plant) TrueRate() lti.Disc {
	return lti.Disc{N: p.N, A: p.A, B: p.B, C: p.Cy, T: p.T}
}

// Measured returns the feedback path (plant and sensor) as an lti.Disc,
// without the whole-sample delay.
func (p Plant) Measured() lti.Disc { return p.measured() }

// evalMeasured returns the frequency response at z of the feedback path
// without its whole-sample delay (the caller applies z^(−Delay)).
func (p Plant) evalMeasured(z complex128) complex128 {
	if p.den != nil {
		return p.num.Eval(z) / p.den.Eval(z)
	}
	return p.measured().Eval(z)
}

// Full returns the feedback path with the whole-sample delay as shift
// registers, as one lti.Disc (for tests and reference comparisons).
func (p Plant) Full() lti.Disc {
	m := p.Delay
	n := p.N + m
	d := lti.Disc{N: n, A: make([]float64, n*n), B: make([]float64, n), C: make([]float64, n), T: p.T}
	for i := 0; i < p.N; i++ {
		copy(d.A[i*n:i*n+p.N], p.A[i*p.N:(i+1)*p.N])
		d.C[i] = p.Cm[i]
		if m == 0 {
			d.B[i] = p.B[i]
		} else {
			d.A[i*n+p.N+m-1] = p.B[i]
		}
	}
	if m > 0 {
		d.B[p.N] = 1
		for i := 1; i < m; i++ {
			d.A[(p.N+i)*n+p.N+i-1] = 1
		}
	}
	return d
}

// withHeldInput adds a state z[k+1] = ua[k] carrying the feedthroughs.
func (p Plant) withHeldInput(dm, dy float64) Plant {
	n := p.N + 1
	q := Plant{N: n, A: make([]float64, n*n), B: make([]float64, n), Cm: make([]float64, n), Cy: make([]float64, n), T: p.T}
	for i := 0; i < p.N; i++ {
		copy(q.A[i*n:i*n+p.N], p.A[i*p.N:(i+1)*p.N])
		q.B[i] = p.B[i]
	}
	q.B[p.N] = 1
	copy(q.Cm, p.Cm)
	copy(q.Cy, p.Cy)
	q.Cm[p.N], q.Cy[p.N] = dm, dy
	return q
}

// measured returns the feedback-path model as an lti.Disc.
func (p Plant) measured() lti.Disc {
	return lti.Disc{N: p.N, A: p.A, B: p.B, C: p.Cm, T: p.T}
}
