package lti

import (
	"math"
	"math/cmplx"
	"testing"
)

// TestDegenerateNoPanic: degenerate inputs give errors or NaN, never panics.
func TestDegenerateNoPanic(t *testing.T) {
	nan := math.NaN()
	bad := Disc{N: 3, A: []float64{1}, B: nil, C: nil}
	if y := bad.Step(3); len(y) != 3 || !math.IsNaN(y[0]) {
		t.Errorf("bad Step %v", y)
	}
	if y := bad.Simulate([]float64{1, 2}); len(y) != 2 || !math.IsNaN(y[1]) {
		t.Errorf("bad Simulate %v", y)
	}
	if !cmplx.IsNaN(bad.Eval(1)) {
		t.Error("bad Eval")
	}
	if _, err := bad.Poles(); err == nil {
		t.Error("bad Poles")
	}
	if _, err := (SS{N: 2}).Poles(); err == nil {
		t.Error("bad SS Poles")
	}
	if !cmplx.IsNaN((SS{N: 2}).Eval(1)) {
		t.Error("bad SS Eval")
	}
	if y := (Disc{}).Step(-5); len(y) != 0 {
		t.Error("negative n")
	}
	if y := (Disc{D: 2}).Step(3); y[2] != 2 {
		t.Errorf("static step %v", y)
	}
	if p, err := (Disc{N: 1, A: []float64{nan}, B: []float64{1}, C: []float64{1}}).Poles(); err == nil {
		t.Errorf("NaN poles %v", p)
	}
	nanD := Disc{N: 1, A: []float64{nan}, B: []float64{1}, C: []float64{1}}
	if v := nanD.Eval(1); !cmplx.IsNaN(v) {
		t.Errorf("NaN Eval %v", v)
	}
	_ = nanD.Step(4)
	d := Disc{N: 1, A: []float64{0.5}, B: []float64{1}, C: []float64{1}}
	d.SimulateInto(make([]float64, 1), []float64{1, 2, 3}) // short y: truncated, no panic
	d.StepInto(nil)
	if _, err := (ZPK{Gain: nan}).TF(); err == nil {
		t.Error("NaN gain")
	}
	if _, err := (ZPK{Gain: 1, Poles: []complex128{1i}}).TF(); err == nil {
		t.Error("unpaired pole")
	}
	if v := (TF{Num: Poly{1}, Den: Poly{}}).Eval(1); !cmplx.IsInf(v) {
		t.Errorf("zero den eval %v", v)
	}
	if v := (TF{}).Eval(1); !cmplx.IsNaN(v) {
		t.Errorf("0/0 eval %v", v)
	}
	if v := (ZPK{Gain: 1, Poles: []complex128{0}}).Eval(0); !cmplx.IsInf(v) {
		t.Errorf("ZPK at pole %v", v)
	}
	if p := Pade(0.1, -2); p.Eval(1) != 1 {
		t.Error("Pade n<0")
	}
	if p := Pade(nan, 2); !cmplx.IsNaN(p.Eval(1)) {
		t.Error("Pade NaN")
	}
	if _, err := (TF{Num: Poly{1}, Den: Poly{nan, 1}}).SS(); err == nil {
		t.Error("NaN den")
	}
}

func FuzzRoots(f *testing.F) {
	f.Add(1.0, 2.0, 3.0, 4.0, 0.0)
	f.Add(0.0, 0.0, 0.0, 0.0, 0.0)
	f.Add(0.0, 0.0, 1.0, 0.0, 1.0)
	f.Add(math.NaN(), 1.0, 1.0, 1.0, 1.0)
	f.Add(1e300, -1e-300, 1e300, 5e-324, 1.0)
	f.Fuzz(func(t *testing.T, a, b, c, d, e float64) {
		p := Poly{a, b, c, d, e}
		r, err := p.Roots()
		if err != nil {
			return
		}
		if len(r) != p.Deg() {
			t.Fatalf("%v: %d roots for degree %d", p, len(r), p.Deg())
		}
		SortRoots(r)
		_, _ = FromRoots(r)
	})
}

func FuzzZOHDelay(f *testing.F) {
	f.Add(-1.0, 2.0, 0.5, 0.1, 0.25)
	f.Add(0.0, 0.0, 0.0, 1e-300, 1e300)
	f.Add(1e300, -1e300, 1.0, 1e-9, 0.0)
	f.Add(math.Inf(1), 0.0, 1.0, 0.1, 0.1)
	f.Fuzz(func(t *testing.T, a0, a1, b, T, tau float64) {
		if tau/T > 64 { // keep the shift register small
			return
		}
		s, err := TF{Num: Poly{b}, Den: Poly{a0, a1, 1}}.SS()
		if err != nil {
			return
		}
		d, err := ZOHDelay(s, T, tau)
		if err != nil {
			return
		}
		_ = d.Step(10)
		_, _ = d.Poles()
		_ = d.Eval(complex(0.5, 0.5))
	})
}

func FuzzStepMetrics(f *testing.F) {
	f.Add(0.0, 0.5, 1.2, 1.0, 1.0, 0.1, 1.0, 0.02)
	f.Add(math.NaN(), math.Inf(1), 0.0, -1.0, 1.0, 0.0, 0.0, 0.0)
	f.Fuzz(func(t *testing.T, y0, y1, y2, y3, y4, h, final, band float64) {
		si := StepMetrics([]float64{y0, y1, y2, y3, y4}, h, final, band)
		_ = si
	})
}

func FuzzLoopMargins(f *testing.F) {
	f.Add(1.0, 2.0, 0.1, 1e-3, 1e3)
	f.Add(0.0, 0.0, 0.0, 1.0, 1.0)
	f.Add(1e10, 1e-10, 100.0, 1e-6, 1e6)
	f.Fuzz(func(t *testing.T, k, a, tau, wmin, wmax float64) {
		if math.Abs(tau) > 1e3 || wmax > 1e8 {
			return
		}
		L := loopOf(Poly{k}, Poly{0, a, 1}, tau)
		_ = LoopMargins(L, wmin, wmax, 50)
	})
}
