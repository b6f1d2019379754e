package lti

import (
	"math"
	"testing"
)

// Hand-computable sequences.
func TestStepMetricsTriangle(t *testing.T) {
	// 0, 0.5, 1, 1.5, 2, 1.5, 1, 1, 1, ... with final 1, h = 0.1.
	y := []float64{0, 0.5, 1, 1.5, 2, 1.5, 1}
	for i := 0; i < 20; i++ {
		y = append(y, 1)
	}
	si := StepMetrics(y, 0.1, 1, 0.05)
	if si.Peak != 2 || !near(si.PeakTime, 0.4, 1e-15, 0) || si.Overshoot != 1 {
		t.Errorf("peak %+v", si)
	}
	// 10 % reached at index 0.2 (0.02 s), 90 % at index 1.8 → rise 1.6·h.
	if !near(si.Rise, 0.16, 1e-12, 0) {
		t.Errorf("rise %v", si.Rise)
	}
	// Last outside sample: index 5 (1.5); exit 1.05 between 5 (1.5) and 6 (1):
	// θ = (0.5−0.05)/0.5 = 0.9 → 5.9·h.
	if !near(si.Settling, 0.59, 1e-12, 0) || !si.Settled {
		t.Errorf("settling %v settled %v", si.Settling, si.Settled)
	}
}

func TestStepMetricsExponential(t *testing.T) {
	// y = 1 − e^{−t/τ}: |e| = band at t = τ·ln(1/band); rise = τ·ln 9.
	const tau, h = 0.5, 1e-4
	y := make([]float64, 80000)
	for k := range y {
		y[k] = -math.Expm1(-float64(k) * h / tau)
	}
	for _, band := range []float64{0.02, 0.05, 0.001} {
		si := StepMetrics(y, h, 1, band)
		// Linear interpolation of an exponential between samples: error
		// ≤ h²/(8τ²)·band·τ relative — far below 1e-7 here.
		if want := tau * math.Log(1/band); !near(si.Settling, want, 1e-7, 0) {
			t.Errorf("band %v settling %v want %v", band, si.Settling, want)
		}
		if want := tau * math.Log(9); !near(si.Rise, want, 1e-7, 0) {
			t.Errorf("rise %v want %v", si.Rise, want)
		}
		if si.Overshoot != 0 || !si.Settled {
			t.Errorf("%+v", si)
		}
	}
}

func TestStepMetricsNegativeFinal(t *testing.T) {
	y := []float64{0, -0.5, -1.2, -1.1, -1, -1, -1, -1, -1, -1, -1, -1}
	si := StepMetrics(y, 1, -1, 0.02)
	if si.Peak != -1.2 || si.PeakTime != 2 || !near(si.Overshoot, 0.2, 1e-15, 0) {
		t.Errorf("%+v", si)
	}
	// 10 %: 0.2 between k=0 (0) and 1 (0.5) → 0.2; 90 %: between 1 (0.5) and 2 (1.2) → 1+0.4/0.7.
	if !near(si.Rise, 1+0.4/0.7-0.2, 1e-12, 0) {
		t.Errorf("rise %v", si.Rise)
	}
	// Last outside: k=3 (e = −0.1); exit at −0.02 toward k=4 (e = 0): θ = 0.8.
	if !near(si.Settling, 3.8, 1e-12, 0) || !si.Settled {
		t.Errorf("settling %v", si.Settling)
	}
}

func TestStepMetricsEdgeCases(t *testing.T) {
	si := StepMetrics(nil, 0.1, 1, 0.02)
	if !math.IsNaN(si.Peak) || si.Settled {
		t.Errorf("empty %+v", si)
	}
	// Never reaches 90 %: Rise NaN; last sample outside: Settling = record end.
	si = StepMetrics([]float64{0, 0.2, 0.4, 0.5}, 1, 1, 0.02)
	if !math.IsNaN(si.Rise) || si.Settling != 3 || si.Settled || si.Overshoot != 0 {
		t.Errorf("slow %+v", si)
	}
	// Inside from the start.
	si = StepMetrics([]float64{1, 1, 1}, 1, 1, 0.02)
	if si.Settling != 0 || !si.Settled || si.Rise != 0 {
		t.Errorf("const %+v", si)
	}
	// Entered the band only near the end of the record: not Settled.
	// Last outside sample k = 9 (e = −0.03), exit at 9.5 > 0.9·10.
	y := []float64{0, 0.5, 0.8, 0.9, 0.95, 0.96, 0.97, 0.97, 0.97, 0.97, 0.99}
	si = StepMetrics(y, 1, 1, 0.02)
	if si.Settled || !near(si.Settling, 9.5, 1e-12, 0) {
		t.Errorf("late %+v", si)
	}
	// NaN samples count as outside and are ignored for the peak.
	si = StepMetrics([]float64{0, math.NaN(), 1.1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, 1, 1, 0.02)
	if si.Peak != 1.1 || si.Settling <= 1 || !si.Settled {
		t.Errorf("NaN %+v", si)
	}
	// Final 0: overshoot and rise undefined.
	si = StepMetrics([]float64{0, 1, 0}, 1, 0, 0.02)
	if !math.IsNaN(si.Overshoot) || !math.IsNaN(si.Rise) {
		t.Errorf("final 0 %+v", si)
	}
}
