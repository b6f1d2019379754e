package ident

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os/exec"
	"testing"
)

// welchScript computes, with SciPy's signal.welch, signal.csd and
// signal.coherence (defaults: Hann window, half overlap, constant
// detrend, density scaling, one-sided), the spectra Welch estimates.
const welchScript = `
import json, sys
import numpy as np
from scipy import signal
d = json.load(sys.stdin)
u, y, r, fs, n = np.array(d["u"]), np.array(d["y"]), np.array(d["r"]), d["fs"], d["seg"]
f, uu = signal.welch(u, fs=fs, nperseg=n)
_, yy = signal.welch(y, fs=fs, nperseg=n)
_, uy = signal.csd(u, y, fs=fs, nperseg=n)
_, rr = signal.welch(r, fs=fs, nperseg=n)
_, ru = signal.csd(r, u, fs=fs, nperseg=n)
_, ry = signal.csd(r, y, fs=fs, nperseg=n)
_, coh = signal.coherence(u, y, fs=fs, nperseg=n)
c = lambda z: [[float(v.real), float(v.imag)] for v in z]
json.dump({"f": list(f), "uu": list(uu), "yy": list(yy), "uy": c(uy), "rr": list(rr), "ru": c(ru), "ry": c(ry), "coh": list(coh)}, sys.stdout)
`

type welchRef struct {
	F, Uu, Yy, Rr, Coh []float64
	Uy, Ru, Ry         [][2]float64
}

// lagLoop simulates, at fs, the plant y[k+1] = a·y[k] + g·u[k] (the
// zero-order-hold image of a first-order lag) in closed loop under
// u = r − kp·(y + n) with n white measurement noise, or open loop (kp =
// 0, u = r). It returns u, the measured y + n, and r.
func lagLoop(rng *rand.Rand, n int, a, g, kp, noise float64) (u, y, r []float64) {
	u, y, r = make([]float64, n), make([]float64, n), make([]float64, n)
	var x float64
	for k := range n {
		r[k] = rng.NormFloat64()
		y[k] = x + noise*rng.NormFloat64()
		u[k] = r[k] - kp*y[k]
		x = a*x + g*u[k]
	}
	return u, y, r
}

// TestWelchAgainstSciPy: every spectrum and the coherence equal SciPy's
// (Debian's python3-scipy: signal.welch, csd, coherence) to 1e-12 of the
// largest value of each (the same sums in a different order; the FFTs
// differ in the last bits).
func TestWelchAgainstSciPy(t *testing.T) {
	needSciPy(t)
	rng := rand.New(rand.NewPCG(7, 11))
	u, y, r := lagLoop(rng, 5000, 0.95, 0.1, 0.8, 0.05)
	const fs, seg = 500.0, 256
	s, err := Welch(u, y, r, fs, seg)
	if err != nil {
		t.Fatal(err)
	}
	in, _ := json.Marshal(map[string]any{"u": u, "y": y, "r": r, "fs": fs, "seg": seg})
	cmd := exec.Command(python, "-c", welchScript)
	cmd.Stdin = bytes.NewReader(in)
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("SciPy: %v", err)
	}
	var ref welchRef
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.F) != len(s.Hz) || s.Averages != (5000-seg)/(seg/2)+1 {
		t.Fatalf("%d frequencies and %d segments; SciPy %d frequencies", len(s.Hz), s.Averages, len(ref.F))
	}
	real := func(name string, got, want []float64) {
		t.Helper()
		top := 0.0
		for _, v := range want {
			top = math.Max(top, math.Abs(v))
		}
		for k := range want {
			if math.Abs(got[k]-want[k]) > 1e-12*top {
				t.Errorf("%s at %g Hz: %.15g, SciPy %.15g", name, ref.F[k], got[k], want[k])
				return
			}
		}
	}
	cplx := func(name string, got []complex128, want [][2]float64) {
		t.Helper()
		top := 0.0
		for _, v := range want {
			top = math.Max(top, math.Hypot(v[0], v[1]))
		}
		for k := range want {
			if cmplx.Abs(got[k]-complex(want[k][0], want[k][1])) > 1e-12*top {
				t.Errorf("%s at %g Hz: %v, SciPy %v", name, ref.F[k], got[k], want[k])
				return
			}
		}
	}
	real("frequency", s.Hz, ref.F)
	real("Puu", s.Uu, ref.Uu)
	real("Pyy", s.Yy, ref.Yy)
	real("Prr", s.Rr, ref.Rr)
	cplx("Puy", s.Uy, ref.Uy)
	cplx("Pru", s.Ru, ref.Ru)
	cplx("Pry", s.Ry, ref.Ry)
	open, _ := Welch(u, y, nil, fs, seg)
	coh := open.Response().Coherence
	real("coherence", coh[1:], ref.Coh[1:]) // bin 0 is NaN here (no power after detrending)
}

// TestResponseClosedLoop: on a simulated closed loop with measurement
// noise, the indirect estimate recovers the plant's known response
// g·z⁻¹/(1 − a·z⁻¹) (exact for the simulated difference equation) within
// its random error, while H1 = Puy/Puu is biased towards −1/kp, the
// inverse of the controller (Ljung, §13.5, from memory: u is partly the
// controller's answer to the noise); open loop, H1 recovers it too. The
// bound at each frequency is four standard errors of the estimate: for H1,
// √((1 − γ²)/(2·K·γ²)) with K averages and γ² the coherence reported
// (Bendat & Piersol, Random Data, from memory); for the indirect estimate,
// a ratio of two cross-spectra each with that error, √2 times it. Neither
// is below 2 %, the
// Hann window's leakage on this plant (measured without noise: 0.9 % at
// most). The seeds are fixed, so the test is deterministic.
func TestResponseClosedLoop(t *testing.T) {
	const fs, seg, a, g = 1000.0, 1024, 0.95, 0.1
	truth := func(hz float64) complex128 {
		z := cmplx.Exp(complex(0, 2*math.Pi*hz/fs))
		return complex(g, 0) / (z - complex(a, 0))
	}
	bound := func(gamma2 float64, k int) float64 {
		return math.Max(0.02, 4*math.Sqrt((1-gamma2)/(2*float64(k)*gamma2)))
	}
	bound2 := func(gamma2 float64, k int) float64 {
		return math.Max(0.02, 4*math.Sqrt((1-gamma2)/(float64(k)*gamma2)))
	}
	for _, loop := range []struct {
		kp, noise float64
	}{{2, 0.3}, {2, 1}, {6, 0.5}} {
		rng := rand.New(rand.NewPCG(3, 5))
		u, y, r := lagLoop(rng, 60000, a, g, loop.kp, loop.noise)
		s, err := Welch(u, y, r, fs, seg)
		if err != nil {
			t.Fatal(err)
		}
		ind := s.Response()
		h1 := (&Spectra{Hz: s.Hz, Uu: s.Uu, Yy: s.Yy, Uy: s.Uy}).Response()
		checked, biased := 0, 0
		for k, hz := range s.Hz {
			if k == 0 || hz > 50 || ind.Coherence[k] < 0.1 {
				continue
			}
			checked++
			want := truth(hz)
			e := cmplx.Abs(ind.H[k]-want) / cmplx.Abs(want)
			if b := bound2(ind.Coherence[k], s.Averages); e > b {
				t.Errorf("kp %g, noise %g: indirect estimate at %g Hz %.1f %% off the plant, bound %.1f %% (coherence %.3f)",
					loop.kp, loop.noise, hz, 100*e, 100*b, ind.Coherence[k])
			}
			if cmplx.Abs(h1.H[k]-want)/cmplx.Abs(want) > bound(h1.Coherence[k], s.Averages) {
				biased++
			}
		}
		if checked < 20 {
			t.Fatalf("kp %g, noise %g: only %d frequencies below 50 Hz with coherence ≥ 0.1", loop.kp, loop.noise, checked)
		}
		if biased < checked/2 {
			t.Errorf("kp %g, noise %g: H1 in closed loop off the plant at only %d of %d frequencies: the test does not show the bias it guards against",
				loop.kp, loop.noise, biased, checked)
		}
		if ind.Method == h1.Method {
			t.Errorf("both estimates say %q", ind.Method)
		}
	}
	// Open loop, H1 is right.
	rng := rand.New(rand.NewPCG(9, 1))
	u, y, _ := lagLoop(rng, 60000, a, g, 0, 0.3)
	s, err := Welch(u, y, nil, fs, seg)
	if err != nil {
		t.Fatal(err)
	}
	op := s.Response()
	for k, hz := range s.Hz {
		if k == 0 || hz > 50 {
			continue
		}
		if e, b := cmplx.Abs(op.H[k]-truth(hz))/cmplx.Abs(truth(hz)), bound(op.Coherence[k], s.Averages); e > b {
			t.Errorf("open-loop H1 at %g Hz: %.1f %% off the plant, bound %.1f %%", hz, 100*e, 100*b)
		}
	}
}

// TestWelchErrors: records that cannot give an estimate are refused with
// ErrSpectra.
func TestWelchErrors(t *testing.T) {
	x := make([]float64, 64)
	bad := [][]any{
		{x, x[:63], []float64(nil), 100.0, 16},
		{x, x, x[:10], 100.0, 16},
		{x, x, []float64(nil), 0.0, 16},
		{x, x, []float64(nil), 100.0, 24},
		{x, x, []float64(nil), 100.0, 8},
		{x, x, []float64(nil), 100.0, 128},
		{append([]float64{math.NaN()}, x[1:]...), x, []float64(nil), 100.0, 16},
	}
	for i, c := range bad {
		_, err := Welch(c[0].([]float64), c[1].([]float64), c[2].([]float64), c[3].(float64), c[4].(int))
		if !errors.Is(err, ErrSpectra) {
			t.Errorf("case %d: %v, want ErrSpectra", i, err)
		}
	}
}
