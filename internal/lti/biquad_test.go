package lti

import (
	"errors"
	"math"
	"math/cmplx"
	"testing"

	"locusmith/internal/pyref"
)

// biquadCase is one filter to design here and in SciPy.
type biquadCase struct {
	Kind  string  `json:"kind"` // "lp1", "lp2", "notch"
	Hz    float64 `json:"hz"`
	Zeta  float64 `json:"zeta"`
	Width float64 `json:"width"`
	Depth float64 `json:"depth"` // dB; 0 for a full notch
	Fs    float64 `json:"fs"`
}

// biquadScript designs each case with SciPy's own routines: butter (first
// and second order, Butterworth: Tustin prewarped at the cutoff), iirnotch
// (Orfanidis's notch, −3 dB width of the discrete filter) and, for the
// cases with no ready-made routine (second order with another damping, a
// partial notch), signal.bilinear of the analog prototype prewarped at the
// centre. It also measures, with freqz and brentq, the discrete filter's
// −3 dB edges of every full notch and the gain at the centre of every
// notch from the returned coefficients.
const biquadScript = `
import json, sys, math
import numpy as np
from scipy import signal, optimize
out = []
for c in json.load(sys.stdin):
    fs, hz = c["fs"], c["hz"]
    wp = 2 * fs * math.tan(math.pi * hz / fs)   # prewarped analog frequency
    if c["kind"] == "lp1":
        b, a = signal.butter(1, hz, fs=fs)
    elif c["kind"] == "lp2" and abs(c["zeta"] - math.sqrt(0.5)) < 1e-15:
        b, a = signal.butter(2, hz, fs=fs)
    elif c["kind"] == "lp2":
        b, a = signal.bilinear([wp * wp], [1, 2 * c["zeta"] * wp, wp * wp], fs=fs)
    elif c["depth"] == 0:
        b, a = signal.iirnotch(hz, hz / c["width"], fs=fs)
    else:
        w0 = 2 * math.pi * hz / fs
        zp = math.tan(math.pi * c["width"] / fs) / math.sin(w0)
        zz = zp * 10 ** (-c["depth"] / 20)
        b, a = signal.bilinear([1, 2 * zz * wp, wp * wp], [1, 2 * zp * wp, wp * wp], fs=fs)
    b = np.concatenate([b / a[0], np.zeros(3 - len(b))])
    a = np.concatenate([a / a[0], np.zeros(3 - len(a))])
    r = {"b": list(b), "a": list(a[1:])}
    if c["kind"] == "notch":
        g = lambda f: abs(signal.freqz(b, a, worN=[f], fs=fs)[1][0])
        r["centre"] = g(hz)
        if c["depth"] == 0:
            lo = optimize.brentq(lambda f: g(f) ** 2 - 0.5, 1e-9 * hz, hz * (1 - 1e-12), xtol=1e-13, rtol=1e-15)
            hi = optimize.brentq(lambda f: g(f) ** 2 - 0.5, hz * (1 + 1e-12), fs / 2 * (1 - 1e-12), xtol=1e-13, rtol=1e-15)
            r["width"] = hi - lo
    out.append(r)
json.dump(out, sys.stdout)
`

type biquadRef struct {
	B      [3]float64 `json:"b"`
	A      [2]float64 `json:"a"`
	Centre float64    `json:"centre"`
	Width  float64    `json:"width"`
}

func designCase(c biquadCase) (Biquad, error) {
	switch c.Kind {
	case "lp1":
		return Lowpass1(c.Hz, c.Fs)
	case "lp2":
		return Lowpass2(c.Hz, c.Zeta, c.Fs)
	}
	depth := c.Depth
	if depth == 0 {
		depth = math.Inf(1)
	}
	return Notch(c.Hz, c.Width, depth, c.Fs)
}

// TestBiquadAgainstSciPy: every section's coefficients equal SciPy's
// design of the same filter (SciPy from Debian's python3-scipy; butter,
// iirnotch, bilinear) to 1e-12, and the full notches' −3 dB width,
// measured by SciPy on the coefficients, is the width asked for, and the
// gain at the centre the depth asked for. Tolerance: the two evaluate the
// same closed forms in a different order (a few ulps of values of order
// 1); the width is found by brentq to 1e-13 Hz, relative 1e-9.
func TestBiquadAgainstSciPy(t *testing.T) {
	s := math.Sqrt(0.5)
	cases := []biquadCase{
		{Kind: "lp1", Hz: 80, Fs: 1000},
		{Kind: "lp1", Hz: 5, Fs: 8000},
		{Kind: "lp1", Hz: 450, Fs: 1000},
		{Kind: "lp2", Hz: 80, Zeta: s, Fs: 1000},
		{Kind: "lp2", Hz: 180, Zeta: s, Fs: 4000},
		{Kind: "lp2", Hz: 30, Zeta: 0.5, Fs: 500},
		{Kind: "lp2", Hz: 300, Zeta: 1.3, Fs: 1000},
		{Kind: "notch", Hz: 118, Width: 30, Fs: 1000},
		{Kind: "notch", Hz: 22, Width: 4, Fs: 2000},
		{Kind: "notch", Hz: 400, Width: 60, Fs: 1000},
		{Kind: "notch", Hz: 90, Width: 20, Depth: 20, Fs: 1000},
		{Kind: "notch", Hz: 250, Width: 80, Depth: 6, Fs: 8000},
	}
	var ref []biquadRef
	pyref.Run(t, biquadScript, cases, &ref)
	for i, c := range cases {
		q, err := designCase(c)
		if err != nil {
			t.Fatalf("%+v: %v", c, err)
		}
		r := ref[i]
		got := []float64{q.B0, q.B1, q.B2, q.A1, q.A2}
		want := []float64{r.B[0], r.B[1], r.B[2], r.A[0], r.A[1]}
		for k := range got {
			if math.Abs(got[k]-want[k]) > 1e-12 {
				t.Errorf("%+v: coefficients %v, SciPy %v", c, got, want)
				break
			}
		}
		if !q.Stable() {
			t.Errorf("%+v: unstable section %+v", c, q)
		}
		if c.Kind != "notch" {
			continue
		}
		d := 0.0
		if c.Depth > 0 {
			d = math.Pow(10, -c.Depth/20)
		}
		if math.Abs(r.Centre-d) > 1e-9 || math.Abs(cmplx.Abs(q.At(c.Hz, c.Fs))-d) > 1e-9 {
			t.Errorf("%+v: gain at the centre %.3g (here %.3g), want %.3g", c, r.Centre, cmplx.Abs(q.At(c.Hz, c.Fs)), d)
		}
		if c.Depth == 0 && math.Abs(r.Width-c.Width) > 1e-9*c.Width {
			t.Errorf("%+v: −3 dB width %.12g Hz measured by SciPy, want %g", c, r.Width, c.Width)
		}
	}
}

// TestBiquadProperties checks what holds for every design (handbook facts
// of the analog prototypes, carried exactly by prewarped Tustin): unit DC
// gain; a first-order or Butterworth lowpass is −3 dB (|H|² = ½) at its
// cutoff and ζ = 0.5 gives |H| = 1/(2ζ) = 1 there; the response at the
// centre or cutoff equals the analog counterpart's at ω = 2π·hz, so the
// continuous-loop figures see what the code runs there.
func TestBiquadProperties(t *testing.T) {
	fs := 1000.0
	for _, hz := range []float64{1, 20, 100, 250, 400, 499} {
		l1, err := Lowpass1(hz, fs)
		if err != nil {
			t.Fatal(err)
		}
		l2, _ := Lowpass2(hz, math.Sqrt(0.5), fs)
		l5, _ := Lowpass2(hz, 0.5, fs)
		n, _ := Notch(hz, math.Min(hz, fs/2-hz)/2, math.Inf(1), fs)
		// 1 + A1 + A2 is of order Ω² = tan²(π·hz/fs) while its terms are
		// of order 1: each rounding (ε ≈ 1.1e-16) is amplified by 1/Ω²
		// (the cancellation that makes direct-form sections with a low
		// cutoff sensitive; common numerical practice), 1e-10 at 1 Hz;
		// near the Nyquist frequency the response at z ≈ −1 cancels the
		// same way in (1 + z⁻¹)², by Ω² (1e-10 at 499 Hz).
		w := math.Tan(math.Pi * hz / fs)
		tol := 1e-15 * math.Max(1/(w*w), w*w)
		for name, q := range map[string]Biquad{"lp1": l1, "lp2": l2, "lp2 ζ 0.5": l5, "notch": n} {
			if math.Abs(q.DC()-1) > tol {
				t.Errorf("%s at %g Hz: DC gain %.15g, want 1", name, hz, q.DC())
			}
			if !q.Stable() {
				t.Errorf("%s at %g Hz: unstable", name, hz)
			}
		}
		for name, q := range map[string]Biquad{"lp1": l1, "lp2": l2} {
			if g := cmplx.Abs(q.At(hz, fs)); math.Abs(g*g-0.5) > 1e-12 {
				t.Errorf("%s at %g Hz: |H|² %.15g at the cutoff, want 0.5", name, hz, g*g)
			}
		}
		if g := cmplx.Abs(l5.At(hz, fs)); math.Abs(g-1) > 1e-12 {
			t.Errorf("lp2 ζ 0.5 at %g Hz: |H| %.15g at ω, want 1/(2ζ) = 1", hz, g)
		}
		a1, _ := LowpassZPK(hz, 0, 1)
		a2, _ := LowpassZPK(hz, 0.5, 2)
		jw := complex(0, 2*math.Pi*hz)
		if d := cmplx.Abs(a1.Eval(jw) - l1.At(hz, fs)); d > tol {
			t.Errorf("lp1 at %g Hz: analog and discrete differ by %.3g at the cutoff", hz, d)
		}
		if d := cmplx.Abs(a2.Eval(jw) - l5.At(hz, fs)); d > tol {
			t.Errorf("lp2 at %g Hz: analog and discrete differ by %.3g at the cutoff", hz, d)
		}
	}
	// A notch's analog counterpart: −3 dB at hz ± about width/2 (exactly,
	// at ω0·(√(1+ζp²) ± ζp), the edges of a second-order notch, whose
	// difference is 2ζp·ω0), 0 at the centre, D for a partial notch.
	a, err := NotchZPK(120, 30, math.Inf(1))
	if err != nil {
		t.Fatal(err)
	}
	zp := 30.0 / 240
	for _, f := range []float64{120 * (math.Sqrt(1+zp*zp) - zp), 120 * (math.Sqrt(1+zp*zp) + zp)} {
		if g := cmplx.Abs(a.Eval(complex(0, 2*math.Pi*f))); math.Abs(g*g-0.5) > 1e-12 {
			t.Errorf("analog notch: |H|² %.15g at the edge %.6g Hz, want 0.5", g*g, f)
		}
	}
	p, _ := NotchZPK(120, 30, 12)
	if g := cmplx.Abs(p.Eval(complex(0, 2*math.Pi*120))); math.Abs(g-math.Pow(10, -12.0/20)) > 1e-12 {
		t.Errorf("analog partial notch: centre gain %.15g, want %.15g", g, math.Pow(10, -12.0/20))
	}
}

// TestBiquadErrors: what cannot be realized at the sample rate is refused
// with ErrFilter and the value named.
func TestBiquadErrors(t *testing.T) {
	bad := []func() error{
		func() error { _, err := Lowpass1(500, 1000); return err },
		func() error { _, err := Lowpass1(0, 1000); return err },
		func() error { _, err := Lowpass1(math.NaN(), 1000); return err },
		func() error { _, err := Lowpass2(100, 0, 1000); return err },
		func() error { _, err := Lowpass2(100, 0.7, math.Inf(1)); return err },
		func() error { _, err := Notch(100, 0, math.Inf(1), 1000); return err },
		func() error { _, err := Notch(100, 600, math.Inf(1), 1000); return err },
		func() error { _, err := Notch(100, 10, 0, 1000); return err },
		func() error { _, err := Notch(700, 10, 20, 1000); return err },
		func() error { _, err := LowpassZPK(10, 0.7, 3); return err },
		func() error { _, err := NotchZPK(10, -1, 20); return err },
	}
	for i, f := range bad {
		if err := f(); !errors.Is(err, ErrFilter) {
			t.Errorf("case %d: error %v, want ErrFilter", i, err)
		}
	}
}
