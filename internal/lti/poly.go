package lti

import (
	"errors"
	"math"
	"math/cmplx"
	"sort"
)

// Poly is a real polynomial, ascending powers: p[i] multiplies s^i.
// The nil/empty Poly and any all-zero Poly are the zero polynomial.
type Poly []float64

// Errors returned by the package.
var (
	ErrZeroPoly    = errors.New("lti: zero polynomial")
	ErrNonFinite   = errors.New("lti: non-finite value")
	ErrNotConj     = errors.New("lti: complex roots must come in conjugate pairs")
	ErrImproper    = errors.New("lti: improper transfer function (deg Num > deg Den)")
	ErrBadPeriod   = errors.New("lti: sample period must be finite and > 0")
	ErrBadDelay    = errors.New("lti: delay must be finite and >= 0")
	ErrBadDims     = errors.New("lti: inconsistent state-space dimensions")
	ErrEigenFailed = errors.New("lti: eigenvalue decomposition failed")
)

// Trim drops trailing (highest-power) exact zeros. The result shares storage
// with p. The zero polynomial trims to an empty (length 0) Poly.
func (p Poly) Trim() Poly {
	n := len(p)
	for n > 0 && p[n-1] == 0 {
		n--
	}
	return p[:n]
}

// Deg is the degree after trimming trailing zeros; -1 for the zero polynomial.
func (p Poly) Deg() int { return len(p.Trim()) - 1 }

// Eval evaluates p at complex s by Horner's rule, each product rounded
// before its sum (Mul), so the same bits on every CPU. The zero polynomial
// gives 0.
func (p Poly) Eval(s complex128) complex128 {
	var r complex128
	for i := len(p) - 1; i >= 0; i-- {
		r = Mul(r, s) + complex(p[i], 0)
	}
	return r
}

// At evaluates p at real x by Horner's rule, each product rounded before
// its sum.
func (p Poly) At(x float64) float64 {
	var r float64
	for i := len(p) - 1; i >= 0; i-- {
		r = float64(r*x) + p[i]
	}
	return r
}

// Scale returns k·p (a new slice).
func (p Poly) Scale(k float64) Poly {
	q := make(Poly, len(p))
	for i, c := range p {
		q[i] = k * c
	}
	return q
}

// Deriv returns dp/ds (a new slice; the zero polynomial for constants).
func (p Poly) Deriv() Poly {
	if len(p) <= 1 {
		return Poly{}
	}
	q := make(Poly, len(p)-1)
	for i := 1; i < len(p); i++ {
		q[i-1] = float64(i) * p[i]
	}
	return q
}

// Clone returns a copy of p.
func (p Poly) Clone() Poly { return append(Poly(nil), p...) }

// IsFinite reports whether every coefficient is finite.
func (p Poly) IsFinite() bool {
	for _, c := range p {
		if math.IsNaN(c) || math.IsInf(c, 0) {
			return false
		}
	}
	return true
}

// PolyMul returns a·b. A zero factor gives the zero polynomial (empty).
func PolyMul(a, b Poly) Poly {
	a, b = a.Trim(), b.Trim()
	if len(a) == 0 || len(b) == 0 {
		return Poly{}
	}
	c := make(Poly, len(a)+len(b)-1)
	for i, x := range a {
		for j, y := range b {
			c[i+j] += float64(x * y)
		}
	}
	return c
}

// PolyAdd returns a+b, trimmed.
func PolyAdd(a, b Poly) Poly {
	n := len(a)
	if len(b) > n {
		n = len(b)
	}
	c := make(Poly, n)
	copy(c, a)
	for i, y := range b {
		c[i] += y
	}
	return c.Trim()
}

// conjTol is the relative distance under which two roots are accepted as a
// conjugate pair by FromRoots and paired up by SortRoots.
const conjTol = 1e-6

// realTol is the relative size under which an imaginary part is set to 0.
const realTol = 1e-12

func isRealRoot(r complex128) bool {
	return math.Abs(imag(r)) <= realTol*math.Max(1, Abs(r))
}

// FromRoots returns the monic polynomial Π(s − r_i). Real roots (imaginary
// part within 1e-12 relative) contribute (s − r); complex roots must come in
// conjugate pairs (matched to within 1e-6 relative, in any order) and each
// pair contributes s² − 2·Re(r)·s + |r|² so the coefficients are exactly
// real. Returns ErrNotConj for an unpaired complex root and ErrNonFinite for
// NaN/Inf roots. No roots gives Poly{1}.
func FromRoots(r []complex128) (Poly, error) {
	p := Poly{1}
	used := make([]bool, len(r))
	for i, z := range r {
		if cmplx.IsNaN(z) || cmplx.IsInf(z) {
			return nil, ErrNonFinite
		}
		if used[i] {
			continue
		}
		used[i] = true
		if isRealRoot(z) {
			p = PolyMul(p, Poly{-real(z), 1})
			continue
		}
		best, bestD := -1, math.Inf(1)
		for j := i + 1; j < len(r); j++ {
			if used[j] {
				continue
			}
			if d := Abs(r[j] - cmplx.Conj(z)); d < bestD {
				best, bestD = j, d
			}
		}
		if best < 0 || bestD > conjTol*math.Max(1, Abs(z)) {
			return nil, ErrNotConj
		}
		used[best] = true
		w := cmplx.Conj(r[best])
		re, im := (real(z)+real(w))/2, (imag(z)+imag(w))/2
		p = PolyMul(p, Poly{float64(re*re) + float64(im*im), -2 * re, 1})
	}
	return p, nil
}

// Roots returns the roots of p, sorted by SortRoots. Roots at s = 0 (trailing
// low-order zero coefficients) are extracted exactly first; degree-1 factors
// are solved directly; otherwise the roots are the eigenvalues of the
// companion matrix (eigvals: gonum's mat.Eigen, which balances first — the
// same method as numpy.roots — with the same bits on every CPU). A constant
// polynomial has no roots (empty, nil error).
// Errors: ErrZeroPoly for the zero polynomial, ErrNonFinite for NaN/Inf
// coefficients, ErrEigenFailed if the QR iteration does not converge.
//
// Accuracy: simple, well-separated roots come out to a few ulps relative to
// the polynomial's scale; a root of multiplicity m is only determined to about
// eps^(1/m) relative (the usual perturbation bound), exactly as numpy.roots.
func (p Poly) Roots() ([]complex128, error) {
	if !p.IsFinite() {
		return nil, ErrNonFinite
	}
	p = p.Trim()
	if len(p) == 0 {
		return nil, ErrZeroPoly
	}
	nz := 0
	for p[nz] == 0 {
		nz++
	}
	q := p[nz:]
	n := len(q) - 1
	roots := make([]complex128, nz, nz+n)
	switch {
	case n == 1:
		roots = append(roots, complex(-q[0]/q[1], 0))
	case n >= 2:
		lead := q[n]
		c := make([]float64, n*n)
		for j := 0; j < n; j++ {
			c[j] = -q[n-1-j] / lead
		}
		for i := 1; i < n; i++ {
			c[i*n+i-1] = 1
		}
		ev, err := eigvals(n, c)
		if err != nil {
			return nil, err
		}
		roots = append(roots, ev...)
	}
	SortRoots(roots)
	return roots, nil
}

// SortRoots puts r in the package's deterministic order, in place:
//
//  1. imaginary parts with |im| <= 1e-12·max(1,|r|) are set to 0;
//  2. each remaining root with im > 0 is paired with the nearest unpaired
//     root with im < 0 if that one is within 1e-6·max(1,|r|) of its
//     conjugate, and the pair is replaced by its average so the two are
//     exactly conjugate (unpaired roots are left alone);
//  3. stable sort by descending real part, then descending imaginary part
//     (so a pair appears as re+j·im, re−j·im). NaN parts sort last.
func SortRoots(r []complex128) {
	for i, z := range r {
		if imag(z) != 0 && isRealRoot(z) {
			r[i] = complex(real(z), 0)
		}
	}
	var used []bool
	for i, z := range r {
		if !(imag(z) > 0) {
			continue
		}
		if used == nil {
			used = make([]bool, len(r))
		}
		best, bestD := -1, math.Inf(1)
		for j, w := range r {
			if used[j] || !(imag(w) < 0) {
				continue
			}
			if d := Abs(w - cmplx.Conj(z)); d < bestD {
				best, bestD = j, d
			}
		}
		if best < 0 || !(bestD <= conjTol*math.Max(1, Abs(z))) {
			continue
		}
		used[best] = true
		w := r[best]
		re, im := (real(z)+real(w))/2, (imag(z)-imag(w))/2
		r[i] = complex(re, im)
		r[best] = complex(re, -im)
	}
	sort.SliceStable(r, func(i, j int) bool { return rootLess(r[i], r[j]) })
}

// rootLess orders by descending real then descending imaginary; NaN last.
func rootLess(a, b complex128) bool {
	ar, br := real(a), real(b)
	if math.IsNaN(ar) || math.IsNaN(br) {
		return !math.IsNaN(ar) && math.IsNaN(br)
	}
	if ar != br {
		return ar > br
	}
	ai, bi := imag(a), imag(b)
	if math.IsNaN(ai) || math.IsNaN(bi) {
		return !math.IsNaN(ai) && math.IsNaN(bi)
	}
	return ai > bi
}

// Descending returns the coefficients of p (trimmed) from the highest
// power down, the order NumPy and SciPy use.
func (p Poly) Descending() []float64 {
	p = p.Trim()
	out := make([]float64, len(p))
	for i := range p {
		out[i] = p[len(p)-1-i]
	}
	return out
}

// RootDistance compares two sets of roots: each root of want is paired
// with the nearest unused root of got, and the largest distance relative
// to max(1, |want|) is returned; +Inf when the sets differ in size. Greedy
// pairing is exact for sets whose members are farther apart than the
// distances being measured, as in comparisons against a reference.
func RootDistance(got, want []complex128) float64 {
	if len(got) != len(want) {
		return math.Inf(1)
	}
	used := make([]bool, len(got))
	worst := 0.0
	for _, w := range want {
		bi, bd := -1, math.Inf(1)
		for i, g := range got {
			if !used[i] && Abs(g-w) < bd {
				bi, bd = i, Abs(g-w)
			}
		}
		used[bi] = true
		worst = math.Max(worst, bd/math.Max(1, Abs(w)))
	}
	return worst
}

// Hurwitz reports whether every root of p lies in the open left half plane,
// by the Routh–Hurwitz criterion (Ogata, Modern Control Engineering, the
// Routh stability criterion; from memory): with p written from the leading
// coefficient down, every entry of the first column of the Routh array is
// nonzero and of one sign. A zero entry means roots on or right of the
// imaginary axis, so the test needs no ε rule: it answers false. O(n²),
// against O(n³) for the roots.
//
// The coefficients of a closed loop span many decades, so s is scaled
// first by ω0 = |p0/pn|^(1/n), the geometric mean of the root magnitudes
// (which leaves the half plane of every root unchanged) to bring them all
// near one.
func (p Poly) Hurwitz() bool {
	p = p.Trim()
	n := len(p) - 1
	if n < 1 {
		return n == 0 && p[0] != 0
	}
	if !(p[0] != 0) || !p.IsFinite() {
		return false // a root at 0, or NaN
	}
	w0 := Pow(math.Abs(p[0]/p[n]), 1/float64(n))
	// Descending coefficients of p(ω0·ŝ), leading one positive.
	c := make([]float64, n+1)
	f := 1.0
	for i := 0; i <= n; i++ {
		c[n-i] = p[i] * f
		f *= w0
	}
	if c[0] < 0 {
		for i := range c {
			c[i] = -c[i]
		}
	}
	w := n/2 + 1
	prev, cur := make([]float64, w), make([]float64, w)
	for j := 0; 2*j <= n; j++ {
		prev[j] = c[2*j]
		if 2*j+1 <= n {
			cur[j] = c[2*j+1]
		}
	}
	if !(prev[0] > 0) {
		return false
	}
	for k := 1; k <= n; k++ {
		if !(cur[0] > 0) {
			return false
		}
		next := make([]float64, w)
		for j := 0; j+1 < w; j++ {
			next[j] = (float64(cur[0]*prev[j+1]) - float64(prev[0]*cur[j+1])) / cur[0]
		}
		prev, cur = cur, next
	}
	return true
}
