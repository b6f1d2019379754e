package discrete

import (
	"fmt"
	"slices"

	"locusmith/internal/lti"
	"locusmith/synth"
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
type Plant struct {
	N      int
	A, B   []float64 // x[k+1] = A x[k] + B ua[k]
	Cm, Cy []float64 // measured and true rate: y = C x[k]
	T      float64
}

// NewPlant samples the problem's plant and sensor at period T.
func NewPlant(p synth.Problem, T float64) (Plant, error) {
	g, err := p.Plant.Model.TF()
	if err != nil {
		return Plant{}, fmt.Errorf("plant: %w", err)
	}
	h, err := p.Sensor.TF()
	if err != nil {
		return Plant{}, fmt.Errorf("sensor: %w", err)
	}
	gs, err := g.SS()
	if err != nil {
		return Plant{}, fmt.Errorf("plant: %w", err)
	}
	hs, err := h.SS()
	if err != nil {
		return Plant{}, fmt.Errorf("sensor: %w", err)
	}
	// Cascade u → G → H: x = [xg; xh].
	n := gs.N + hs.N
	a := make([]float64, n*n)
	b := make([]float64, n)
	cm := make([]float64, n)
	cy := make([]float64, n)
	for i := 0; i < gs.N; i++ {
		copy(a[i*n:i*n+gs.N], gs.A[i*gs.N:(i+1)*gs.N])
		b[i] = gs.B[i]
		cy[i] = gs.C[i]
		cm[i] = hs.D * gs.C[i]
	}
	for i := 0; i < hs.N; i++ {
		r := gs.N + i
		for j := 0; j < gs.N; j++ {
			a[r*n+j] = hs.B[i] * gs.C[j]
		}
		copy(a[r*n+gs.N:r*n+n], hs.A[i*hs.N:(i+1)*hs.N])
		b[r] = hs.B[i] * gs.D
		cm[r] = hs.C[i]
	}
	dm, err := lti.ZOHDelay(lti.SS{N: n, A: a, B: b, C: cm, D: hs.D * gs.D}, T, p.Plant.Delay)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant and sensor: %w", err)
	}
	dy, err := lti.ZOHDelay(lti.SS{N: n, A: a, B: b, C: cy, D: gs.D}, T, p.Plant.Delay)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant: %w", err)
	}
	if dm.N != dy.N || !slices.Equal(dm.A, dy.A) || !slices.Equal(dm.B, dy.B) {
		return Plant{}, fmt.Errorf("sampling the plant: inconsistent realizations")
	}
	pl := Plant{N: dm.N, A: dm.A, B: dm.B, Cm: dm.C, Cy: dy.C, T: T}
	if dm.D != 0 || dy.D != 0 {
		// A sample at t_k sees the command held over the previous interval,
		// so a feedthrough acts through one extra state holding it.
		pl = pl.withHeldInput(dm.D, dy.D)
	}
	return pl, nil
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
