package lti

import (
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

func TestPolyBasics(t *testing.T) {
	p := Poly{1, -3, 0, 2, 0, 0} // 1 − 3s + 2s³
	if p.Deg() != 3 || len(p.Trim()) != 4 {
		t.Fatalf("Deg %d Trim %v", p.Deg(), p.Trim())
	}
	if (Poly{}).Deg() != -1 || (Poly{0, 0}).Deg() != -1 || Poly(nil).Deg() != -1 {
		t.Fatal("zero polynomial degree")
	}
	if got := p.At(2); got != 1-6+16 {
		t.Fatalf("At(2) = %v", got)
	}
	// Horner vs direct expansion at a complex point.
	s := complex(0.3, -1.7)
	want := 1 - 3*s + 2*s*s*s
	if got := p.Eval(s); !nearC(got, want, 1e-15, 0) {
		t.Fatalf("Eval = %v want %v", got, want)
	}
	checkVec(t, "Deriv", p.Deriv().Trim(), []float64{-3, 0, 6}, 0, 0)
	checkVec(t, "Scale", p.Scale(-2).Trim(), []float64{-2, 6, 0, -4}, 0, 0)
	// (1+s)(1−s) = 1 − s²
	checkVec(t, "Mul", PolyMul(Poly{1, 1}, Poly{1, -1}), []float64{1, 0, -1}, 0, 0)
	checkVec(t, "Add", PolyAdd(Poly{1, 2, 3}, Poly{0, 0, -3}), []float64{1, 2}, 0, 0)
	if PolyMul(Poly{}, p).Deg() != -1 || PolyMul(p, Poly{0}).Deg() != -1 {
		t.Fatal("mul by zero polynomial")
	}
	if (Poly{}).Eval(1) != 0 || (Poly{}).At(1) != 0 || len(Poly{5}.Deriv()) != 0 {
		t.Fatal("degenerate eval/deriv")
	}
}

func TestFromRoots(t *testing.T) {
	r := []complex128{complex(-1, 2), -3, complex(-1, -2), 0.5}
	p, err := FromRoots(r)
	if err != nil {
		t.Fatal(err)
	}
	// (s²+2s+5)(s+3)(s−0.5) = s⁴ + 4.5s³ + 8.5s² + 9.5s − 7.5 (hand expansion).
	checkVec(t, "FromRoots", p, []float64{-7.5, 9.5, 8.5, 4.5, 1}, 1e-15, 0)
	// The pair need not be adjacent or in a particular order.
	p2, err := FromRoots([]complex128{complex(-1, -2), 0.5, -3, complex(-1, 2)})
	if err != nil {
		t.Fatal(err)
	}
	checkVec(t, "FromRoots(perm)", p2, p, 1e-15, 0)
	if _, err := FromRoots([]complex128{complex(1, 1)}); !errors.Is(err, ErrNotConj) {
		t.Fatalf("unpaired: %v", err)
	}
	if _, err := FromRoots([]complex128{complex(1, 1), complex(1, 1)}); !errors.Is(err, ErrNotConj) {
		t.Fatalf("same-sign pair: %v", err)
	}
	if _, err := FromRoots([]complex128{cmplx.NaN()}); err == nil {
		t.Fatal("NaN root accepted")
	}
	if p, _ := FromRoots(nil); len(p) != 1 || p[0] != 1 {
		t.Fatalf("no roots: %v", p)
	}
}

// TestRootsNumpy compares with numpy.roots (numpy 1.24 via testdata/gen_ref.py).
// Both are backward-stable companion-matrix eigensolvers (LAPACK dgeev with
// balancing vs gonum's port of it), so they agree to ~cond(root)·eps. The
// tolerance 1e-11 relative to max(1,|r|) covers the worst case here,
// Wilkinson's 1..8 (root condition numbers ~1e4–1e5, observed 1.7e-12); the
// random cases agree to ~1e-15 and the tiny-leading-coefficient case has a
// root near −1e8 that is measured relative to its own size.
func TestRootsNumpy(t *testing.T) {
	for _, c := range rootCases {
		got, err := c.p.Roots()
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if d := RootDistance(got, c.roots); d > 1e-11 {
			t.Errorf("%s: worst relative mismatch %.3g\n got  %v\n want %v", c.name, d, got, c.roots)
		}
		// Residual check independent of numpy: |p(r)| small relative to Σ|p_i||r|^i.
		for _, r := range got {
			var scale float64
			for i, a := range c.p {
				scale += math.Abs(a) * math.Pow(cmplx.Abs(r), float64(i))
			}
			if res := cmplx.Abs(c.p.Eval(r)); res > 1e-11*scale {
				t.Errorf("%s: residual at %v = %.3g (scale %.3g)", c.name, r, res, scale)
			}
		}
		if !sortedOK(got) {
			t.Errorf("%s: not in SortRoots order: %v", c.name, got)
		}
	}
}

func sortedOK(r []complex128) bool {
	for i := 1; i < len(r); i++ {
		if rootLess(r[i], r[i-1]) {
			return false
		}
	}
	for _, z := range r {
		if imag(z) == 0 {
			continue
		}
		n := 0
		for _, w := range r {
			if w == cmplx.Conj(z) {
				n++
			}
		}
		if n == 0 {
			return false
		}
	}
	return true
}

// TestRootsRepeated checks multiple roots against the exact values. A root of
// multiplicity m of a polynomial perturbed by δ (here δ ≈ eps·‖p‖ from the
// backward-stable eigensolver) moves by ≈ (δ·m!/|p^(m)(r)|)^(1/m), i.e.
// O(eps^(1/m)): 1.5e-8 for m = 2, 6e-6 for m = 3, 1.2e-4 for m = 4. The
// tolerance is 30·eps^(1/m) (scaled by max(1,|r|)), the factor 30 covering
// ‖p‖/|p^(m)(r)/m!| for these coefficient sizes.
func TestRootsRepeated(t *testing.T) {
	eps := math.Nextafter(1, 2) - 1
	cases := []struct {
		name  string
		roots []complex128
		m     int
	}{
		{"(s+1)^2", []complex128{-1, -1}, 2},
		{"(s+1)^3", []complex128{-1, -1, -1}, 3},
		{"(s+2)^2(s-1)", []complex128{-2, -2, 1}, 2},
		{"(s+0.5)^4", []complex128{-0.5, -0.5, -0.5, -0.5}, 4},
		{"(s^2+1)^2", []complex128{1i, -1i, 1i, -1i}, 2},
		{"(s^2+2s+5)^2 (s+3)", []complex128{complex(-1, 2), complex(-1, -2), complex(-1, 2), complex(-1, -2), -3}, 2},
		{"s^3 (s+1)", []complex128{0, 0, 0, -1}, 1}, // zeros extracted exactly
	}
	for _, c := range cases {
		p, err := FromRoots(c.roots)
		if err != nil {
			t.Fatal(err)
		}
		got, err := p.Roots()
		if err != nil {
			t.Fatal(err)
		}
		tol := 30 * math.Pow(eps, 1/float64(c.m))
		if d := RootDistance(got, c.roots); d > tol {
			t.Errorf("%s: mismatch %.3g > tol %.3g: %v", c.name, d, tol, got)
		}
	}
	// Exact zero roots.
	got, _ := Poly{0, 0, 2, 1}.Roots() // s²(s+2)
	if len(got) != 3 || got[0] != 0 || got[1] != 0 || got[2] != -2 {
		t.Errorf("s^2(s+2) roots %v", got)
	}
}

func TestRootsDegenerate(t *testing.T) {
	if _, err := (Poly{}).Roots(); !errors.Is(err, ErrZeroPoly) {
		t.Errorf("empty: %v", err)
	}
	if _, err := (Poly{0, 0}).Roots(); !errors.Is(err, ErrZeroPoly) {
		t.Errorf("zero: %v", err)
	}
	if _, err := (Poly{1, math.NaN()}).Roots(); !errors.Is(err, ErrNonFinite) {
		t.Errorf("NaN: %v", err)
	}
	if _, err := (Poly{1, math.Inf(1), 1}).Roots(); !errors.Is(err, ErrNonFinite) {
		t.Errorf("Inf: %v", err)
	}
	if r, err := (Poly{3}).Roots(); err != nil || len(r) != 0 {
		t.Errorf("constant: %v %v", r, err)
	}
	if r, err := (Poly{0, 0, 5}).Roots(); err != nil || len(r) != 2 || r[0] != 0 {
		t.Errorf("5s^2: %v %v", r, err)
	}
	if r, err := (Poly{4, -2}).Roots(); err != nil || len(r) != 1 || r[0] != 2 {
		t.Errorf("linear: %v %v", r, err)
	}
}

func TestSortRoots(t *testing.T) {
	r := []complex128{
		complex(-1, -2.0000000001), -5, complex(-1, 2), complex(0.5, 1e-14), complex(-1, 0), complex(3, 1), complex(3, -1),
	}
	SortRoots(r)
	want := []complex128{complex(3, 1), complex(3, -1), 0.5, complex(-1, 2.00000000005), -1, complex(-1, -2.00000000005), -5}
	// Within equal real parts: descending imaginary, so the pair straddles −1.
	for i := range want {
		if !nearC(r[i], want[i], 1e-15, 0) {
			t.Fatalf("SortRoots = %v\nwant %v", r, want)
		}
	}
	if r[3] != cmplx.Conj(r[5]) {
		t.Errorf("pair not exactly conjugate: %v %v", r[3], r[5])
	}
	if imag(r[2]) != 0 {
		t.Errorf("tiny imaginary part kept: %v", r[2])
	}
	n := []complex128{cmplx.NaN(), 1, complex(math.NaN(), 0), -1}
	SortRoots(n) // must not panic; NaN last
	if n[0] != 1 || n[1] != -1 {
		t.Errorf("NaN ordering %v", n)
	}
}

// Hurwitz against the roots a polynomial is built from (the definition):
// random real and complex-pair roots over four decades, stable, with one
// pair or one real root moved into the right half plane, or a root added
// at the origin; and the Routh textbook case s³ + s² + 2s + 8 (two roots
// in the right half plane, a sign change in the first column 1, 1, −6, 8).
func TestHurwitzAgainstRoots(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	mag := func() float64 { return math.Pow(10, 1+3*r.Float64()) }
	counts := map[bool]int{}
	for trial := 0; trial < 2000; trial++ {
		var roots []complex128
		for len(roots) < 2+r.IntN(9) {
			m := mag()
			if r.IntN(2) == 0 {
				roots = append(roots, complex(-m, 0))
			} else {
				th := (0.05 + 0.9*r.Float64()) * math.Pi / 2
				roots = append(roots, complex(-m*math.Cos(th), m*math.Sin(th)), complex(-m*math.Cos(th), -m*math.Sin(th)))
			}
		}
		switch trial % 4 {
		case 1: // a root into the right half plane
			i := r.IntN(len(roots))
			if imag(roots[i]) == 0 {
				roots[i] = complex(-real(roots[i])*0.1, 0)
			} else {
				j := i + 1 // its conjugate: pairs are appended + then −
				if imag(roots[i]) < 0 {
					j = i - 1
				}
				roots[i] = complex(0.2*math.Abs(real(roots[i])), imag(roots[i]))
				roots[j] = cmplx.Conj(roots[i])
			}
		case 2: // a root at the origin
			roots = append(roots, 0)
		}
		p, err := FromRoots(roots)
		if err != nil {
			t.Fatal(err)
		}
		p = PolyMul(p, Poly{3.7})
		want := true
		for _, z := range roots {
			want = want && real(z) < 0
		}
		if got := p.Hurwitz(); got != want {
			t.Fatalf("trial %d: Hurwitz %v, roots say %v: %v", trial, got, want, roots)
		}
		counts[want]++
	}
	if counts[true] < 500 || counts[false] < 500 {
		t.Errorf("cases: %v stable/unstable, want both well represented", counts)
	}
	if (Poly{8, 2, 1, 1}).Hurwitz() {
		t.Error("s³ + s² + 2s + 8 reported stable")
	}
	if !(Poly{6, 11, 6, 1}).Hurwitz() || !(Poly{-6, -11, -6, -1}).Hurwitz() {
		t.Error("(s+1)(s+2)(s+3) (either sign) reported unstable")
	}
}
