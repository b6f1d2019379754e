package lti

import (
	"errors"
	"math"
)

// ErrCascade is returned when the zeros cannot be assigned to sections of
// at least as many poles (only for improper models).
var ErrCascade = errors.New("lti: zeros cannot be assigned to proper sections")

// CascadeSS realizes z as a series of first- and second-order sections:
// each complex pole pair σ ± jω in modal form [[σ, ω], [−ω, σ]], each pair
// of real poles as two first-order lags in series, each real pole as a
// first-order lag, with the zeros assigned to the sections (pairs to pairs,
// then real zeros one per real pole and up to two per pair). Unlike the
// companion realization of the expanded polynomial, whose entries span
// powers of the pole magnitudes (1e9 for a 4th-order loop with a 500 rad/s
// mode), every section's matrix is of the size of its own poles, which
// keeps the matrix exponential accurate and independent of the CPU's
// rounding. Sections without a pole at the origin are scaled to unit DC
// gain, the remaining gain is applied at the output.
func (z ZPK) CascadeSS() (SS, error) {
	var pp, zp []complex128 // upper members of pairs
	var pr, zr []float64
	split := func(rs []complex128, pairs *[]complex128, reals *[]float64) error {
		for _, r := range rs {
			switch {
			case math.IsNaN(real(r)) || math.IsNaN(imag(r)) || math.IsInf(real(r), 0) || math.IsInf(imag(r), 0):
				return ErrNonFinite
			case imag(r) > 0:
				*pairs = append(*pairs, r)
			case imag(r) == 0:
				*reals = append(*reals, real(r))
			}
		}
		return nil
	}
	if err := split(z.Poles, &pp, &pr); err != nil {
		return SS{}, err
	}
	if err := split(z.Zeros, &zp, &zr); err != nil {
		return SS{}, err
	}
	if math.IsNaN(z.Gain) || math.IsInf(z.Gain, 0) {
		return SS{}, ErrNonFinite
	}
	if len(z.Zeros) > len(z.Poles) {
		return SS{}, ErrImproper
	}
	type section struct {
		den Poly // monic, degree 1 or 2
		num Poly // monic or 1, degree ≤ deg den
		// modal: the pair's σ and ω (ω > 0), or two real poles p1, p2.
		pair   complex128
		reals  []float64
		isPair bool
	}
	var secs []section
	quad := func(a, b float64) Poly { return Poly{a * b, -(a + b), 1} }
	pairPoly := func(r complex128) Poly {
		return Poly{float64(real(r)*real(r)) + float64(imag(r)*imag(r)), -2 * real(r), 1}
	}
	for _, p := range pp {
		s := section{den: pairPoly(p), num: Poly{1}, pair: p, isPair: true}
		if len(zp) > 0 {
			s.num, zp = pairPoly(zp[0]), zp[1:]
		}
		secs = append(secs, s)
	}
	// Zero pairs left over go with two real poles.
	for len(zp) > 0 && len(pr) >= 2 {
		secs = append(secs, section{den: quad(pr[0], pr[1]), num: pairPoly(zp[0]), reals: []float64{pr[0], pr[1]}})
		zp, pr = zp[1:], pr[2:]
	}
	if len(zp) > 0 {
		return SS{}, ErrCascade
	}
	for _, p := range pr {
		secs = append(secs, section{den: Poly{-p, 1}, num: Poly{1}, reals: []float64{p}})
	}
	// Real zeros: one per first-order section, then pair sections with
	// room, then second-order real sections.
	for i := range secs {
		if len(zr) == 0 {
			break
		}
		if len(secs[i].den) == 2 && len(secs[i].num) == 1 {
			secs[i].num, zr = Poly{-zr[0], 1}, zr[1:]
		}
	}
	for i := range secs {
		for len(zr) > 0 && len(secs[i].den) == 3 && len(secs[i].num) < 3 {
			secs[i].num, zr = PolyMul(secs[i].num, Poly{-zr[0], 1}), zr[1:]
		}
	}
	if len(zr) > 0 {
		return SS{}, ErrCascade
	}
	out := SS{N: 0, D: 1}
	gain := z.Gain
	for _, s := range secs {
		var sec SS
		num := s.num
		if d0, n0 := s.den[0], num[0]; d0 != 0 && n0 != 0 {
			// Unit DC gain: num·(d0/n0).
			f := d0 / n0
			num = num.Scale(f)
			gain /= f
		}
		switch len(s.den) {
		case 2: // 1/(s − p) with numerator n1·s + n0
			p := -s.den[0]
			n := make(Poly, 2)
			copy(n, num)
			sec = SS{N: 1, A: []float64{p}, B: []float64{1}, C: []float64{n[0] + float64(n[1]*p)}, D: n[1]}
		case 3:
			n := make(Poly, 3)
			copy(n, num)
			d := n[2]
			r0, r1 := n[0]-float64(d*s.den[0]), n[1]-float64(d*s.den[1]) // remainder r1·s + r0 over the quadratic
			if s.isPair {
				sg, w := real(s.pair), imag(s.pair)
				// C (sI − A)⁻¹ B = (c1·ω + c2·(s − σ))/Δ with B = [0, 1].
				sec = SS{N: 2, A: []float64{sg, w, -w, sg}, B: []float64{0, 1}, C: []float64{(r0 + float64(r1*sg)) / w, r1}, D: d}
			} else {
				p1, p2 := s.reals[0], s.reals[1]
				// x1' = p1·x1 + u, x2' = p2·x2 + x1: to x1 (s − p2)/Δ, to x2 1/Δ.
				sec = SS{N: 2, A: []float64{p1, 0, 1, p2}, B: []float64{1, 0}, C: []float64{r1, r0 + float64(r1*p2)}, D: d}
			}
		}
		out = Series(out, sec)
	}
	for i := range out.C {
		out.C[i] *= gain
	}
	out.D *= gain
	if err := out.check(); err != nil {
		return SS{}, err
	}
	return out, nil
}

// Series returns the state-space model of a followed by b (u → a → b → y),
// with state [xa; xb].
func Series(a, b SS) SS {
	n := a.N + b.N
	s := SS{N: n, A: make([]float64, n*n), B: make([]float64, n), C: make([]float64, n), D: b.D * a.D}
	for i := 0; i < a.N; i++ {
		copy(s.A[i*n:i*n+a.N], a.A[i*a.N:(i+1)*a.N])
		s.B[i] = a.B[i]
		s.C[i] = b.D * a.C[i]
	}
	for i := 0; i < b.N; i++ {
		r := a.N + i
		for j := 0; j < a.N; j++ {
			s.A[r*n+j] = b.B[i] * a.C[j]
		}
		copy(s.A[r*n+a.N:r*n+n], b.A[i*b.N:(i+1)*b.N])
		s.B[r] = b.B[i] * a.D
		s.C[r] = b.C[i]
	}
	return s
}
