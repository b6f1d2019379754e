package lti

import (
	"math"
	"math/cmplx"
	"testing"
)

// near reports |a−b| <= atol + rtol·max(|a|,|b|).
func near(a, b, rtol, atol float64) bool {
	if math.IsInf(a, 0) || math.IsInf(b, 0) {
		return a == b
	}
	return math.Abs(a-b) <= atol+rtol*math.Max(math.Abs(a), math.Abs(b))
}

func nearC(a, b complex128, rtol, atol float64) bool {
	return cmplx.Abs(a-b) <= atol+rtol*math.Max(cmplx.Abs(a), cmplx.Abs(b))
}

func checkVec(t *testing.T, what string, got, want []float64, rtol, atol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: len %d, want %d", what, len(got), len(want))
	}
	for i := range got {
		if !near(got[i], want[i], rtol, atol) {
			t.Errorf("%s[%d] = %.17g, want %.17g (diff %.3g)", what, i, got[i], want[i], got[i]-want[i])
		}
	}
}
