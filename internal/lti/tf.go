package lti

import (
	"math"
	"math/cmplx"
)

// ZPK is a SISO transfer function k·Π(s−z)/Π(s−p).
type ZPK struct {
	Gain         float64
	Zeros, Poles []complex128
}

// Eval returns k·Π(s−z)/Π(s−p) at s (complex Inf at a pole, NaN at 0/0).
func (z ZPK) Eval(s complex128) complex128 {
	num := complex(z.Gain, 0)
	for _, r := range z.Zeros {
		num = Mul(num, s-r)
	}
	den := complex(1, 0)
	for _, r := range z.Poles {
		den = Mul(den, s-r)
	}
	return cdiv(num, den)
}

// cdiv is num/den with den == 0 mapped to complex Inf (or NaN for 0/0)
// instead of Go's per-component IEEE result.
func cdiv(num, den complex128) complex128 {
	if den == 0 {
		if num == 0 || cmplx.IsNaN(num) {
			return cmplx.NaN()
		}
		return cmplx.Inf()
	}
	return Div(num, den)
}

// TF converts to polynomial form: Num = k·FromRoots(Zeros), Den =
// FromRoots(Poles) (monic). Errors from FromRoots (unpaired complex roots,
// NaN) are returned; a non-finite gain gives ErrNonFinite.
func (z ZPK) TF() (TF, error) {
	if math.IsNaN(z.Gain) || math.IsInf(z.Gain, 0) {
		return TF{}, ErrNonFinite
	}
	n, err := FromRoots(z.Zeros)
	if err != nil {
		return TF{}, err
	}
	d, err := FromRoots(z.Poles)
	if err != nil {
		return TF{}, err
	}
	return TF{Num: n.Scale(z.Gain), Den: d}, nil
}

// TF is a SISO transfer function Num(s)/Den(s).
type TF struct{ Num, Den Poly }

// Eval returns Num(s)/Den(s) (complex Inf at a pole, NaN at 0/0).
func (t TF) Eval(s complex128) complex128 { return cdiv(t.Num.Eval(s), t.Den.Eval(s)) }

// DC returns Num(0)/Den(0). When Den(0) = 0 it is ±Inf, the sign being that
// of the limit s→0+ along the real axis (sign of Num(0) times the sign of the
// lowest non-zero Den coefficient), or NaN when Num(0) = 0 too or Den is the
// zero polynomial.
func (t TF) DC() float64 {
	n0, d0 := 0.0, 0.0
	if len(t.Num) > 0 {
		n0 = t.Num[0]
	}
	if len(t.Den) > 0 {
		d0 = t.Den[0]
	}
	if d0 != 0 {
		return n0 / d0
	}
	if n0 == 0 || math.IsNaN(n0) {
		return math.NaN()
	}
	for _, c := range t.Den {
		if c != 0 {
			if math.IsNaN(c) {
				return math.NaN()
			}
			if (c > 0) == (n0 > 0) {
				return math.Inf(1)
			}
			return math.Inf(-1)
		}
	}
	return math.NaN()
}

// Series returns t·u.
func (t TF) Series(u TF) TF {
	return TF{Num: PolyMul(t.Num, u.Num), Den: PolyMul(t.Den, u.Den)}
}

// Feedback returns the negative-feedback closed loop t/(1+t·h) =
// Nt·Dh/(Dt·Dh+Nt·Nh). No cancellation is attempted.
func (t TF) Feedback(h TF) TF {
	return TF{
		Num: PolyMul(t.Num, h.Den),
		Den: PolyAdd(PolyMul(t.Den, h.Den), PolyMul(t.Num, h.Num)),
	}
}

// Normalize trims both polynomials and scales so Den is monic (new slices).
// A zero Den is returned trimmed and unscaled.
func (t TF) Normalize() TF {
	n, d := t.Num.Trim().Clone(), t.Den.Trim().Clone()
	if len(d) == 0 {
		return TF{Num: n, Den: d}
	}
	k := d[len(d)-1]
	if k != 1 {
		for i := range n {
			n[i] /= k
		}
		for i := range d {
			d[i] /= k
		}
		d[len(d)-1] = 1
	}
	return TF{Num: n, Den: d}
}

// Pade returns the (n,n) Padé approximation of e^(−sτ), normalised so that
// Num(0) = Den(0) = 1 (the scipy.interpolate.pade normalisation):
//
//	Den_k = c_k τ^k, Num_k = (−1)^k c_k τ^k, c_k = (2n−k)! n! / ((2n)! k! (n−k)!).
//
// τ = 0 or n <= 0 gives the unit transfer function 1/1.
// (1,1): (1 − sτ/2)/(1 + sτ/2); (2,2): (1 − sτ/2 + s²τ²/12)/(1 + sτ/2 + s²τ²/12).
func Pade(tau float64, n int) TF {
	if tau == 0 || n <= 0 {
		return TF{Num: Poly{1}, Den: Poly{1}}
	}
	num := make(Poly, n+1)
	den := make(Poly, n+1)
	c, tk := 1.0, 1.0
	for k := 0; k <= n; k++ {
		den[k] = c * tk
		if k%2 == 0 {
			num[k] = c * tk
		} else {
			num[k] = -c * tk
		}
		c *= float64(n-k) / (float64(2*n-k) * float64(k+1))
		tk *= tau
	}
	return TF{Num: num, Den: den}
}
