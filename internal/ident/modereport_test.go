package ident

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// TestSegmentFor: hand-worked segment lengths (averages 2n/seg − 1 with
// half overlap).
func TestSegmentFor(t *testing.T) {
	for _, c := range []struct {
		n    int
		fs   float64
		want int
	}{
		{45000, 1000, 512}, // 174 averages
		{5000, 1000, 512},  // 18
		{3000, 1000, 256},  // 512 gives 10, 256 gives 22
		{500, 1000, 0},     // 64 gives 14
		{200000, 8000, 4096},
	} {
		if got := SegmentFor(c.n, c.fs); got != c.want {
			t.Errorf("SegmentFor(%d, %g) = %d, want %d", c.n, c.fs, got, c.want)
		}
	}
}

// TestNotchWidthAndCrossover: hand-worked widths (the wider of 2ζf and
// the interval, at most 0.9 f) and the crossover estimate
// 1/(2π·0.032 s) = 4.9736 Hz.
func TestNotchWidthAndCrossover(t *testing.T) {
	for _, c := range []struct {
		hz, lo, hi, zeta, want float64
	}{
		{60, 59, 61, 0.05, 6},
		{60, 50, 70, 0.01, 20},
		{10, 2, 30, 0.29, 9},
	} {
		m := Mode{Hz: Interval{c.hz, c.lo, c.hi}, Damping: Interval{Value: c.zeta}}
		if got := NotchWidth(m); got != c.want {
			t.Errorf("NotchWidth(%g Hz [%g, %g], ζ %g) = %g, want %g", c.hz, c.lo, c.hi, c.zeta, got, c.want)
		}
	}
	r := &Result{MotorTau: Param{Value: 0.03}, Delay: Param{Value: 0.002}}
	if got := r.CrossoverEstimate(); math.Abs(got-4.973591971621729) > 1e-12 {
		t.Errorf("crossover %g Hz, want 4.97359", got)
	}
}

// TestPlantZPK: the printed roots' form, and the mode factor of the zpk
// plant: unit gain at DC, and 1/(2ζ) in magnitude at its own frequency
// (ωp²/(j·2ζωp²), from memory) relative to the low-order model.
func TestPlantZPK(t *testing.T) {
	if got := rootsTOML([]complex128{0, -25, complex(-300, 400), complex(-300, -400)}); got != "[0.0, -25.0, [-300.0, 400.0]]" {
		t.Errorf("rootsTOML = %s", got)
	}
	r := &Result{Effectiveness: Param{Value: 2400}, MotorTau: Param{Value: 0.03}}
	m := Mode{Hz: Interval{Value: 60}, Damping: Interval{Value: 0.05}}
	z, low := r.PlantZPK([]Mode{m}), r.Model()
	wp := 2 * math.Pi * 60
	if got := cmplx.Abs(z.Eval(complex(0, wp)) / low.Eval(complex(0, wp))); math.Abs(got-10) > 1e-9 {
		t.Errorf("|mode factor| at the mode = %g, want 1/(2·0.05) = 10", got)
	}
	if got := cmplx.Abs(z.Eval(complex(0, 1e-3)) / low.Eval(complex(0, 1e-3))); math.Abs(got-1) > 1e-9 {
		t.Errorf("mode factor at DC = %g, want 1", got)
	}
}

// TestResultSpectra: the spectra of one stretch are Welch's on it (the
// SciPy-checked estimator), and two stretches separated by excluded
// samples pool the two estimates weighted by their averages, no segment
// spanning the break.
func TestResultSpectra(t *testing.T) {
	const n, seg = 3000, 256
	rng := rand.New(rand.NewPCG(1, 2))
	r := &Result{T: 0.001, Time: make([]float64, n), Command: make([]float64, n), Measured: make([]float64, n), Used: make([]int8, n)}
	for i := range n {
		r.Time[i] = float64(i) * r.T
		r.Command[i] = rng.NormFloat64()
		r.Measured[i] = 0.5*r.Command[i] + 0.1*rng.NormFloat64()
		r.Used[i] = PartFit
	}
	for i := 1000; i < 1010; i++ {
		r.Used[i] = 0
	}
	got, err := r.Spectra(PartFit, seg)
	if err != nil {
		t.Fatal(err)
	}
	a, _ := Welch(r.Command[:1000], r.Measured[:1000], nil, 1000, seg)
	b, _ := Welch(r.Command[1010:], r.Measured[1010:], nil, 1000, seg)
	if got.Averages != a.Averages+b.Averages {
		t.Fatalf("%d averages, want %d + %d", got.Averages, a.Averages, b.Averages)
	}
	wa := float64(a.Averages) / float64(got.Averages)
	for k := range got.Hz {
		want := complex(wa, 0)*a.Uy[k] + complex(1-wa, 0)*b.Uy[k]
		if cmplx.Abs(got.Uy[k]-want) > 1e-12*cmplx.Abs(want) {
			t.Fatalf("bin %d: Puy %v, want %v", k, got.Uy[k], want)
		}
	}
	if _, err := r.Spectra(PartHeld, seg); err == nil {
		t.Error("spectra of an empty part: no error")
	}
}
