package review

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"
	"strings"
)

// CanonicalRoots returns each real root and the upper member of each
// conjugate pair, with parts smaller than 1e-9 of max(|r|, 1) set to zero
// (as in the JSON report), sorted by descending real part, then
// descending imaginary part. Non-finite roots are left out.
func CanonicalRoots(rs []complex128) []complex128 {
	var out []complex128
	for _, r := range rs {
		if cmplx.IsNaN(r) || cmplx.IsInf(r) {
			continue
		}
		a := math.Max(cmplx.Abs(r), 1)
		re, im := real(r), imag(r)
		if math.Abs(im) <= 1e-9*a {
			im = 0
		}
		if math.Abs(re) <= 1e-9*a {
			re = 0
		}
		if im < 0 {
			continue
		}
		out = append(out, complex(re, im))
	}
	slices.SortStableFunc(out, func(a, b complex128) int {
		switch {
		case real(a) > real(b):
			return -1
		case real(a) < real(b):
			return 1
		case imag(a) > imag(b):
			return -1
		case imag(a) < imag(b):
			return 1
		}
		return 0
	})
	return out
}

// Factors writes the monic factors of the polynomial with roots rs, for
// reading a transfer function: (s + a) per real root, s for a root at the
// origin, (s² + b·s + c) per conjugate pair, numbers formatted by num and
// joined by sep.
func Factors(rs []complex128, num func(float64) string, sep string) string {
	sign := func(x float64) string {
		if x < 0 {
			return "−"
		}
		return "+"
	}
	var out []string
	for _, r := range CanonicalRoots(rs) {
		switch {
		case imag(r) != 0:
			out = append(out, fmt.Sprintf("(s² %s %s·s + %s)", sign(-2*real(r)), num(math.Abs(2*real(r))), num(real(r)*real(r)+imag(r)*imag(r))))
		case real(r) == 0:
			out = append(out, "s")
		default:
			out = append(out, fmt.Sprintf("(s %s %s)", sign(-real(r)), num(math.Abs(real(r)))))
		}
	}
	return strings.Join(out, sep)
}
