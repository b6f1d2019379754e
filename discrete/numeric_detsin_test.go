package discrete

import (
	"math"
	"testing"
)

// TestDetSin: the platform-independent sine of the excitation agrees with
// math.Sin within 1e-10 over many periods (Taylor remainder at π/2:
// (π/2)^17/17! ≈ 6e-12, plus the reduction's rounding).
func TestDetSin(t *testing.T) {
	for x := -200.0; x <= 200; x += 0.0137 {
		if d := math.Abs(detSin(x) - math.Sin(x)); d > 1e-10 {
			t.Fatalf("detSin(%v) = %v, math.Sin %v", x, detSin(x), math.Sin(x))
		}
	}
	if got := rootPow2(1024, 10); math.Abs(got-math.Pow(1024, 1.0/1024)) > 1e-15 {
		t.Errorf("rootPow2(1024, 10) = %v", got)
	}
	for _, c := range [][2]float64{{3, 2}, {4, 4}, {0.3, 0.25}, {1, 1}} {
		if got := pow2Below(c[0]); got != c[1] {
			t.Errorf("pow2Below(%v) = %v, want %v", c[0], got, c[1])
		}
	}
}

// TestCeilLog2 against the definition: 2^(k−1) < x ≤ 2^k.
func TestCeilLog2(t *testing.T) {
	for _, x := range []float64{1, 1.5, 2, 2.0000001, 3, 4, 0.75, 0.5, 0.3, 1e20, 1e-20} {
		k := ceilLog2(x)
		if !(math.Ldexp(1, k-1) < x && x <= math.Ldexp(1, k)) {
			t.Errorf("ceilLog2(%v) = %d", x, k)
		}
	}
}
