package ident

import (
	"fmt"
	"math"

	"locusmith/internal/lti"
)

// shape is the nonlinear part of the model: what the output depends on
// other than linearly. The effectiveness scales the forced response and
// is solved linearly (see fit.go).
type shape struct {
	tau    float64 // motor time constant, s
	delay  float64 // transport delay, s (>= 0)
	omegaS float64 // sensor lowpass corner, rad/s (0: no sensor)
}

// disc is the exact ZOH equivalent, period T, of the unit-effectiveness
// model with states x = [m, ω, s] (motor output, true rate, sensor output;
// s only with a sensor):
//
//	m' = (v − m)/τ,   ω' = m,   s' = ωs·(ω − s),   v(t) = u(t − delay),
//
// so that the rate is ω = 1/(s(τs+1))·e^(−s·delay)·u and the measured
// output s (or ω without a sensor) is y = C x. With delay = d·T + f,
// 0 <= f < T (Åström & Wittenmark, Computer-Controlled Systems, §2.3,
// from memory; the same split as lti.ZOHDelay):
//
//	x[k+1] = Φ x[k] + Γ0 u[k−d] + Γ1 u[k−d−1],
//	Φ = e^{AT}, Γ0 = ∫_0^{T−f} e^{Aη}dη B, Γ1 = e^{A(T−f)} ∫_0^f e^{Aη}dη B,
//
// and Γ = Γ0 + Γ1 = ∫_0^T e^{Aη}dη B is the undelayed input column.
type disc struct {
	n       int
	phi     [9]float64 // row-major n×n
	g0, g1  [3]float64
	g       [3]float64
	out     int // index of the output state
	d       int // whole samples of delay
	hasFrac bool
}

// continuous returns the unit-effectiveness state-space model of sh.
func (sh shape) continuous() lti.SS {
	if sh.omegaS > 0 {
		return lti.SS{N: 3,
			A: []float64{-1 / sh.tau, 0, 0, 1, 0, 0, 0, sh.omegaS, -sh.omegaS},
			B: []float64{1 / sh.tau, 0, 0},
			C: []float64{0, 0, 1}}
	}
	return lti.SS{N: 2,
		A: []float64{-1 / sh.tau, 0, 1, 0},
		B: []float64{1 / sh.tau, 0},
		C: []float64{0, 1}}
}

// discretize returns the ZOH equivalent of sh at period T.
func (sh shape) discretize(T float64) (disc, error) {
	if !(sh.tau > 0) || !(sh.delay >= 0) || !(sh.omegaS >= 0) || !(T > 0) ||
		math.IsInf(sh.tau, 0) || math.IsInf(sh.delay, 0) || math.IsInf(sh.omegaS, 0) {
		return disc{}, fmt.Errorf("model parameters out of range: tau %g, delay %g, sensor %g rad/s, T %g", sh.tau, sh.delay, sh.omegaS, T)
	}
	ss := sh.continuous()
	n := ss.N
	q := sh.delay / T
	if q > 1e7 {
		return disc{}, fmt.Errorf("delay %g s is %g samples: out of range", sh.delay, q)
	}
	d := int(math.Floor(q))
	f := sh.delay - float64(d)*T
	// Snap to the grid as lti.ZOHDelay does, so that a delay that is a
	// whole number of samples in exact arithmetic has no fractional part.
	if f < 1e-12*T {
		f = 0
	} else if T-f < 1e-12*T {
		d++
		f = 0
	}
	full, err := lti.ZOH(ss, T)
	if err != nil {
		return disc{}, fmt.Errorf("discretizing the model: %w", err)
	}
	m := disc{n: n, out: n - 1, d: d}
	copy(m.phi[:], full.A)
	copy(m.g[:], full.B)
	if f == 0 {
		m.g0 = m.g
		return m, nil
	}
	m.hasFrac = true
	head, err := lti.ZOH(ss, T-f)
	if err != nil {
		return disc{}, fmt.Errorf("discretizing the model: %w", err)
	}
	tail, err := lti.ZOH(ss, f)
	if err != nil {
		return disc{}, fmt.Errorf("discretizing the model: %w", err)
	}
	copy(m.g0[:], head.B)
	for i := 0; i < n; i++ {
		var acc float64
		for j := 0; j < n; j++ {
			acc += float64(head.A[i*n+j] * tail.B[j])
		}
		m.g1[i] = acc
	}
	return m, nil
}

// The kernels below are unrolled for 2 and 3 states; the explicit float64
// conversions keep the compiler from fusing multiply-adds, so that results
// are the same on every architecture.

// forced writes into y the response to the command u from the zero state,
// with the command before u[0] taken as u[0] (its effect is absorbed by the
// free initial state, see fit.go).
func (m *disc) forced(y, u []float64) {
	y = y[:len(u)]
	g1 := m.g1
	if !m.hasFrac {
		g1 = [3]float64{}
	}
	d := m.d
	at := func(i int) float64 {
		if i < 0 {
			return u[0]
		}
		return u[i]
	}
	p := &m.phi
	switch m.n {
	case 2:
		p00, p01, p10, p11 := p[0], p[1], p[2], p[3]
		a0, a1, b0, b1 := m.g0[0], m.g0[1], g1[0], g1[1]
		var x0, x1 float64
		for k := range u {
			y[k] = x1
			ua, ub := at(k-d), at(k-d-1)
			x0, x1 = float64(p00*x0)+float64(p01*x1)+float64(a0*ua)+float64(b0*ub),
				float64(p10*x0)+float64(p11*x1)+float64(a1*ua)+float64(b1*ub)
		}
	case 3:
		p00, p01, p02, p10, p11, p12, p20, p21, p22 := p[0], p[1], p[2], p[3], p[4], p[5], p[6], p[7], p[8]
		a0, a1, a2, b0, b1, b2 := m.g0[0], m.g0[1], m.g0[2], g1[0], g1[1], g1[2]
		var x0, x1, x2 float64
		for k := range u {
			y[k] = x2
			ua, ub := at(k-d), at(k-d-1)
			x0, x1, x2 = float64(p00*x0)+float64(p01*x1)+float64(p02*x2)+float64(a0*ua)+float64(b0*ub),
				float64(p10*x0)+float64(p11*x1)+float64(p12*x2)+float64(a1*ua)+float64(b1*ub),
				float64(p20*x0)+float64(p21*x1)+float64(p22*x2)+float64(a2*ua)+float64(b2*ub)
		}
	}
}

// free writes into ya the response from the initial state m = 1 (unit
// initial acceleration) without input, and into yd the response to a
// constant unit input through Γ from the zero state (a command offset).
func (m *disc) free(ya, yd []float64) {
	yd = yd[:len(ya)]
	p := &m.phi
	switch m.n {
	case 2:
		p00, p01, p10, p11 := p[0], p[1], p[2], p[3]
		g0, g1 := m.g[0], m.g[1]
		a0, a1 := 1.0, 0.0
		var e0, e1 float64
		for k := range ya {
			ya[k], yd[k] = a1, e1
			a0, a1 = float64(p00*a0)+float64(p01*a1), float64(p10*a0)+float64(p11*a1)
			e0, e1 = float64(p00*e0)+float64(p01*e1)+g0, float64(p10*e0)+float64(p11*e1)+g1
		}
	case 3:
		p00, p01, p02, p10, p11, p12, p20, p21, p22 := p[0], p[1], p[2], p[3], p[4], p[5], p[6], p[7], p[8]
		g0, g1, g2 := m.g[0], m.g[1], m.g[2]
		a0, a1, a2 := 1.0, 0.0, 0.0
		var e0, e1, e2 float64
		for k := range ya {
			ya[k], yd[k] = a2, e2
			a0, a1, a2 = float64(p00*a0)+float64(p01*a1)+float64(p02*a2),
				float64(p10*a0)+float64(p11*a1)+float64(p12*a2),
				float64(p20*a0)+float64(p21*a1)+float64(p22*a2)
			e0, e1, e2 = float64(p00*e0)+float64(p01*e1)+float64(p02*e2)+g0,
				float64(p10*e0)+float64(p11*e1)+float64(p12*e2)+g1,
				float64(p20*e0)+float64(p21*e1)+float64(p22*e2)+g2
		}
	}
}
