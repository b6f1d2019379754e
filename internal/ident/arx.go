package ident

import "math"

// arxGuess is the equation-error starting point of the output-error fit.
//
// The ZOH equivalent of 1/(s(τs+1)) with d whole samples of delay is
// (Franklin, Powell & Workman, Digital Control of Dynamic Systems, ZOH
// table, from memory)
//
//	G(z) = z^(−d)·(b1 z^(−1) + b2 z^(−2)) / ((1 − z^(−1))(1 − a z^(−1))),
//	a = e^(−T/τ),
//
// so the rate increment Δy[k] = y[k] − y[k−1] obeys the ARX equation
//
//	Δy[k] = a·Δy[k−1] + b1·u[k−d−1] + b2·u[k−d−2] + c,
//
// which is linear in (a, b1, b2, c); differencing removes the gyro bias
// and the initial rate, and c absorbs a command offset. For each candidate
// d the least-squares fit is computed (Ljung, System Identification, §4.2
// and §7.3, from memory) and the d with the smallest mean squared equation
// error is kept. Equation error is biased when the output is noisy (the
// regressor Δy[k−1] carries the noise), so (a, b1, b2, c) are then
// re-estimated at that d with instrumental variables: Δy[k−1] is replaced
// in the instruments by the noise-free simulated increment of the previous
// estimate (Ljung §7.6, from memory), which is uncorrelated with the
// noise. The result only starts the output-error search; that search scans
// around it (fit.go).
type arxGuess struct {
	d   int     // whole samples of delay
	tau float64 // s
	ok  bool    // false: no usable estimate; defaults are used
}

// arx computes the starting point from the fit segments of p with delays
// 0..maxD samples. All candidate delays are fitted on the same samples
// (each segment from its (maxD+2)-th sample on), so that the normal
// equations of every delay come from the same few sums: the sums of u and
// u² and u[i]u[i−1] over shifted windows are differences of prefix sums,
// and the cross sums Σ Δy·u[k−j] are one pass per lag, O(N·maxD) in all.
func arx(p *data, segs []segment, maxD int) arxGuess {
	J := maxD + 2
	var syy1, sy1, sy0y1, sy0, sy0y0, cnt float64
	A := make([]float64, J+1) // Σ u[k−j]
	B := make([]float64, J+1) // Σ u[k−j]²
	C := make([]float64, J+1) // Σ u[k−j]·u[k−j−1]
	E := make([]float64, J+1) // Σ Δy[k−1]·u[k−j]
	G := make([]float64, J+1) // Σ Δy[k]·u[k−j]
	for _, s := range segs {
		k0 := s.start + J + 1
		if s.end-k0 < 10 {
			continue
		}
		u := p.u
		n := s.end - s.start
		// Prefix sums over the segment: P[i] = Σ_{m<i} of the term at
		// s.start+m.
		p1 := make([]float64, n+1)
		p2 := make([]float64, n+1)
		p3 := make([]float64, n+1)
		for m := 0; m < n; m++ {
			v := u[s.start+m]
			p1[m+1] = p1[m] + v
			p2[m+1] = p2[m] + v*v
			prod := 0.0
			if m > 0 {
				prod = v * u[s.start+m-1]
			}
			p3[m+1] = p3[m] + prod
		}
		lo, hi := k0-s.start, s.end-s.start // k − s.start in [lo, hi)
		for j := 1; j <= J; j++ {
			A[j] += p1[hi-j] - p1[lo-j]
			B[j] += p2[hi-j] - p2[lo-j]
			// Σ_k u[k−j]u[k−j−1] = Σ over m = k−j of the p3 term.
			C[j] += p3[hi-j] - p3[lo-j]
		}
		for k := k0; k < s.end; k++ {
			d0 := p.y[k] - p.y[k-1]
			d1 := p.y[k-1] - p.y[k-2]
			syy1 += d1 * d1
			sy1 += d1
			sy0y1 += d0 * d1
			sy0 += d0
			sy0y0 += d0 * d0
			cnt++
			for j := 1; j <= J; j++ {
				uj := u[k-j]
				E[j] += d1 * uj
				G[j] += d0 * uj
			}
		}
	}
	best, bestD := math.Inf(1), -1
	var bestTheta [4]float64
	if cnt >= 10 {
		for d := 0; d <= maxD; d++ {
			j1, j2 := d+1, d+2
			m := [4][4]float64{
				{syy1, E[j1], E[j2], sy1},
				{E[j1], B[j1], C[j1], A[j1]},
				{E[j2], C[j1], B[j2], A[j2]},
				{sy1, A[j1], A[j2], cnt},
			}
			rhs := [4]float64{sy0y1, G[j1], G[j2], sy0}
			theta, ok := solve4(m, rhs)
			if !ok {
				continue
			}
			sse := sy0y0
			for i := 0; i < 4; i++ {
				sse -= theta[i] * rhs[i]
			}
			if sse < best {
				best, bestD, bestTheta = sse, d, theta
			}
		}
	}
	if bestD < 0 {
		return arxGuess{}
	}
	theta := bestTheta
	// Instrumental-variable refinement at the chosen delay.
	d := bestD
	w := make([]float64, 0, 1024)
	for iter := 0; iter < 3; iter++ {
		a := theta[0]
		if !(a > 0 && a < 1) {
			break
		}
		var m [4][4]float64
		var rhs [4]float64
		for _, s := range segs {
			if s.end-s.start < d+3 {
				continue
			}
			w = w[:0]
			n := s.end - s.start
			// Noise-free increment of the current model, from rest.
			for k := 0; k < n; k++ {
				var v float64
				if k >= d+2 {
					v = a*w[k-1] + theta[1]*p.u[s.start+k-d-1] + theta[2]*p.u[s.start+k-d-2] + theta[3]
				}
				w = append(w, v)
			}
			for k := s.start + d + 2; k < s.end; k++ {
				t := p.y[k] - p.y[k-1]
				phi := [4]float64{p.y[k-1] - p.y[k-2], p.u[k-d-1], p.u[k-d-2], 1}
				zeta := [4]float64{w[k-s.start-1], p.u[k-d-1], p.u[k-d-2], 1}
				for i := 0; i < 4; i++ {
					for j := 0; j < 4; j++ {
						m[i][j] += zeta[i] * phi[j]
					}
					rhs[i] += zeta[i] * t
				}
			}
		}
		next, ok := solve4(m, rhs)
		if !ok || !(next[0] > 0 && next[0] < 1) {
			break
		}
		theta = next
	}
	g := arxGuess{d: d}
	if a := theta[0]; a > 0 && a < 1 {
		g.tau = -p.T / math.Log(a)
		g.ok = !math.IsInf(g.tau, 0) && !math.IsNaN(g.tau)
	}
	return g
}

// solve4 solves m x = b by Gaussian elimination with partial pivoting on
// the column-scaled system; ok is false when m is singular.
func solve4(m [4][4]float64, b [4]float64) ([4]float64, bool) {
	var scale [4]float64
	for j := 0; j < 4; j++ {
		var s float64
		for i := 0; i < 4; i++ {
			s = math.Max(s, math.Abs(m[i][j]))
		}
		if s == 0 || math.IsNaN(s) || math.IsInf(s, 0) {
			return [4]float64{}, false
		}
		scale[j] = s
		for i := 0; i < 4; i++ {
			m[i][j] /= s
		}
	}
	for c := 0; c < 4; c++ {
		p := c
		for r := c + 1; r < 4; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[p][c]) {
				p = r
			}
		}
		if math.Abs(m[p][c]) < 1e-13 {
			return [4]float64{}, false
		}
		m[c], m[p] = m[p], m[c]
		b[c], b[p] = b[p], b[c]
		for r := c + 1; r < 4; r++ {
			f := m[r][c] / m[c][c]
			for j := c; j < 4; j++ {
				m[r][j] -= f * m[c][j]
			}
			b[r] -= f * b[c]
		}
	}
	var x [4]float64
	for i := 3; i >= 0; i-- {
		s := b[i]
		for j := i + 1; j < 4; j++ {
			s -= m[i][j] * x[j]
		}
		x[i] = s / m[i][i]
	}
	for j := range x {
		x[j] /= scale[j]
		if math.IsNaN(x[j]) || math.IsInf(x[j], 0) {
			return [4]float64{}, false
		}
	}
	return x, true
}
