package lti

import (
	"math"
	"math/cmplx"
	"testing"
)

// The cascade realization has the model's frequency response (against the
// zero-pole-gain formula evaluated directly) and its poles.
func TestCascadeSS(t *testing.T) {
	cases := []ZPK{
		{Gain: 2e9, Poles: []complex128{0, -25, complex(-300, 400), complex(-300, -400)}},
		{Gain: 66667, Poles: []complex128{0, -33.3}},
		{Gain: 500, Poles: []complex128{-5, -50}, Zeros: []complex128{-20}},
		{Gain: 3, Poles: []complex128{-1, -2, -3}, Zeros: []complex128{complex(-1, 2), complex(-1, -2)}},
		{Gain: 7, Poles: []complex128{complex(-2, 5), complex(-2, -5), -4}, Zeros: []complex128{-1, -3, -6}},
		{Gain: 1, Poles: []complex128{0, 0}},
		{Gain: -2, Poles: []complex128{-1}, Zeros: []complex128{1}},
		{Gain: 1},
	}
	for i, z := range cases {
		s, err := z.CascadeSS()
		if err != nil {
			t.Fatalf("case %d: %v", i, err)
		}
		for _, w := range []complex128{complex(0, 0.1), complex(0, 7), complex(0, 900), complex(-0.5, 3)} {
			want := z.Eval(w)
			if got := s.Eval(w); cmplx.Abs(got-want) > 1e-12*cmplx.Abs(want) {
				t.Errorf("case %d at %v: %v, want %v", i, w, got, want)
			}
		}
		ps, err := s.Poles()
		if err != nil {
			t.Fatal(err)
		}
		want := append([]complex128(nil), z.Poles...)
		SortRoots(want)
		if d := RootDistance(ps, want); d > 1e-9 {
			t.Errorf("case %d: poles %v, want %v", i, ps, want)
		}
	}
	if _, err := (ZPK{Gain: 1, Poles: []complex128{-1}, Zeros: []complex128{-1, -2}}).CascadeSS(); err == nil {
		t.Error("improper model accepted")
	}
}

// SplitDelay: a delay of whole samples written in decimal (0.003 s at
// 1 kHz is 2.9999999999999996 samples in binary) gives whole samples.
func TestSplitDelay(t *testing.T) {
	for _, c := range []struct {
		tau, T float64
		d      int
		f      float64
	}{{0.003, 0.001, 3, 0}, {0.0013, 0.001, 1, 0.0003}, {0, 0.001, 0, 0}, {0.0005, 0.001, 0, 0.0005}, {0.7, 0.1, 7, 0}} {
		d, f := SplitDelay(c.tau, c.T)
		if d != c.d || math.Abs(f-c.f) > 1e-15 {
			t.Errorf("SplitDelay(%g, %g) = %d, %g; want %d, %g", c.tau, c.T, d, f, c.d, c.f)
		}
	}
}

// Disc.TF agrees with the resolvent C(zI − A)⁻¹B + D (Gaussian elimination
// at each z) for the ZOH of the cascade models above.
func TestDiscTF(t *testing.T) {
	for i, z := range []ZPK{
		{Gain: 2e9, Poles: []complex128{0, -25, complex(-300, 400), complex(-300, -400)}},
		{Gain: 500, Poles: []complex128{-5, -50}, Zeros: []complex128{-20}},
		{Gain: -2, Poles: []complex128{-1}, Zeros: []complex128{1}},
	} {
		s, err := z.CascadeSS()
		if err != nil {
			t.Fatal(err)
		}
		d, err := ZOH(s, 0.001)
		if err != nil {
			t.Fatal(err)
		}
		tf, err := d.TF()
		if err != nil {
			t.Fatal(err)
		}
		for _, th := range []float64{0.01, 0.5, 3} {
			w := cmplx.Rect(1, th)
			if got, want := tf.Eval(w), d.Eval(w); cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
				t.Errorf("case %d at θ=%g: %v, resolvent %v", i, th, got, want)
			}
		}
	}
}
