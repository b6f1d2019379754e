package review

import (
	"math"
	"math/cmplx"
	"slices"
	"testing"

	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// sampledDemo is a rate loop whose sampled model SciPy can build on its
// own (demo data): the transport delay is exactly two samples, and the
// derivative filter is slow enough for Tustin (Tf ≥ T/2), so the discrete
// controller is the bilinear transform of C(s) as a whole.
const sampledDemo = `airframe = "sampled_demo"
description = "demo data: SciPy cross-check of the sampled loop"
loop_hz = 1000.0
compute_delay = 1

[numeric]
type = "float64"

[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002

[axes.roll.sensor]
lowpass_hz = 100.0

[axes.roll.spec]
settling_time = 0.15
overshoot = 0.10

[axes.roll.control]
form = "pid"
derivative_lowpass_hz = 60.0
output_limit = [-0.5, 0.5]
`

// The sampled loop of the frequency-response plot and the z-plane map
// against SciPy (Debian's python3-scipy, version in the log):
// scipy.signal.cont2discrete with method "zoh" samples G·H, "bilinear"
// the controller C(s), the delays are z^(−2) (transport) and z^(−1)
// (compute); L(e^(jωT)) is compared at frequencies up to near Nyquist and
// the closed-loop poles, numpy.roots of Dc·Dp·z³ + Nc·Np, with the z-plane
// map's. 1e-8 relative: both sides evaluate the same rational functions
// in double precision (the ZOH through the matrix exponential in both).
func TestSampledLoopAgainstSciPy(t *testing.T) {
	a := sharedText(t, "sampled_demo.toml", sampledDemo)
	d := a.Axes[0].Design
	if d.Coeffs.DerivativeMethod != discrete.Tustin {
		t.Fatalf("derivative by %s, the test needs Tustin", d.Coeffs.DerivativeMethod)
	}
	p := d.Problem
	ctf := d.Cont.Ctrl.TF()
	g, err := p.Plant.Model.TF()
	if err != nil {
		t.Fatal(err)
	}
	h, err := p.Sensor.TF()
	if err != nil {
		t.Fatal(err)
	}
	gh := g.Series(h)
	ws := []float64{0.5, 5, 23, 60, 200, 700, 2000, 3000}
	type in struct {
		PNum, PDen, CNum, CDen []float64
		T                      float64
		Delay                  int
		W                      []float64
	}
	type out struct {
		L     [][2]float64
		Poles [][2]float64
	}
	q := in{PNum: gh.Num.Descending(), PDen: gh.Den.Descending(), CNum: ctf.Num.Descending(), CDen: ctf.Den.Descending(), T: d.Plant.T, Delay: 3, W: ws}
	var ref out
	pyref.Run(t, `
import json, sys, numpy as np, scipy.signal as sig
q = json.load(sys.stdin)
T = q['T']
pn, pd, _ = sig.cont2discrete((q['PNum'], q['PDen']), T, method='zoh')
cn, cd, _ = sig.cont2discrete((q['CNum'], q['CDen']), T, method='bilinear')
pn, cn = np.trim_zeros(np.ravel(pn), 'f'), np.trim_zeros(np.ravel(cn), 'f')
L = []
for w in q['W']:
    z = np.exp(1j * w * T)
    v = np.polyval(cn, z) / np.polyval(cd, z) * np.polyval(pn, z) / np.polyval(pd, z) * z ** (-q['Delay'])
    L.append([v.real, v.imag])
zd = np.zeros(q['Delay'] + 1); zd[0] = 1
char = np.polyadd(np.polymul(np.polymul(cd, pd), zd), np.polymul(cn, pn))
r = np.roots(char)
json.dump({'L': L, 'Poles': [[float(x.real), float(x.imag)] for x in r]}, sys.stdout)
`, q, &ref)
	ver, _ := pyref.Versions()
	t.Logf("reference: %s", ver)
	dl := newDiscreteLoop(d)
	for i, w := range ws {
		got, want := dl.at(w), complex(ref.L[i][0], ref.L[i][1])
		if cmplx.Abs(got-want) > 1e-8*cmplx.Abs(want) {
			t.Errorf("L(e^(j%gT)) = %v, SciPy %v", w, got, want)
		}
	}
	zm, err := newZMap(dl)
	if err != nil {
		t.Fatal(err)
	}
	var want []complex128
	for _, r := range ref.Poles {
		want = append(want, complex(r[0], r[1]))
	}
	// The z-plane map has the poles of the loop as discrete realizes it;
	// a ZOH of a strictly proper G·H has no feedthrough, so the orders
	// agree.
	if dist := matchDist(zm.Poles, want); dist > 1e-8 {
		t.Errorf("z-plane poles %v, SciPy %v (%.3g)", zm.Poles, want, dist)
	}
}

// matchDist pairs want with got by the nearest unused root and returns
// the largest distance relative to max(1, |want|) (Inf for a count
// mismatch).
func matchDist(got, want []complex128) float64 {
	if len(got) != len(want) {
		return math.Inf(1)
	}
	used := make([]bool, len(got))
	worst := 0.0
	for _, w := range want {
		bi, bd := -1, math.Inf(1)
		for i, g := range got {
			if !used[i] && cmplx.Abs(g-w) < bd {
				bi, bd = i, cmplx.Abs(g-w)
			}
		}
		used[bi] = true
		worst = math.Max(worst, bd/math.Max(1, cmplx.Abs(w)))
	}
	return worst
}

// On every demo airframe the plots' sampled loop agrees with the discrete
// package's verification: the margins found on L(e^(jωT)) by
// lti.LoopMargins over the same range, and the closed-loop poles of the
// z-plane map. This ties the pictures to the figures in the tables
// (which are themselves checked against SciPy in package discrete).
// 1e-6: the same crossings refined to 1e-11 in log ω; the poles come from
// a characteristic polynomial here and from a state matrix there, and
// the double pole of a compute delay is only determined to about √eps.
func TestSampledLoopMatchesVerification(t *testing.T) {
	for _, path := range airframes(t) {
		a := sharedDesign(t, path)
		for _, x := range a.Axes {
			if x.Design == nil {
				continue
			}
			d := x.Design
			dl := newDiscreteLoop(d)
			v := d.Verif
			ny := math.Pi / d.Plant.T
			lo := v.Margins.Crossover / 1e4
			if !(lo > 0) {
				continue
			}
			m := lti.LoopMargins(dl.at, lo, ny*(1-1e-9), int(math.Ceil(80*math.Log10(ny/lo)))+1)
			if !closeTo(m.PhaseDeg, v.Margins.PhaseDeg, 1e-6) || !closeTo(m.Crossover, v.Margins.Crossover, 1e-6) {
				t.Errorf("%s %s: PM %g° at %g, verification %g° at %g", path, x.Name, m.PhaseDeg, m.Crossover, v.Margins.PhaseDeg, v.Margins.Crossover)
			}
			if !closeTo(m.GainDB, v.Margins.GainDB, 1e-6) {
				t.Errorf("%s %s: GM %g dB, verification %g dB", path, x.Name, m.GainDB, v.Margins.GainDB)
			}
			zm, err := newZMap(dl)
			if err != nil {
				t.Errorf("%s %s: %v", path, x.Name, err)
				continue
			}
			// The verification's state space keeps the derivative's
			// previous input as a state, a pure delay that the transfer
			// function cancels: its extra poles sit at z = 0.
			want := v.Poles
			for len(want) > len(zm.Poles) {
				i := slices.IndexFunc(want, func(z complex128) bool { return cmplx.Abs(z) < 1e-9 })
				if i < 0 {
					break
				}
				want = slices.Delete(slices.Clone(want), i, i+1)
			}
			if dist := matchDist(zm.Poles, want); dist > 1e-6 {
				t.Errorf("%s %s: z-plane poles %v, verification %v (%.3g)", path, x.Name, zm.Poles, v.Poles, dist)
			}
		}
	}
}

func closeTo(a, b, rel float64) bool {
	if math.IsInf(a, 0) || math.IsInf(b, 0) {
		return a == b
	}
	return math.Abs(a-b) <= rel*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// The fixed-point step of the plot runs the bit-exact integer controller;
// with the raw conversions of the README ("[numeric]") it must follow the float64
// reference model in the same loop to within the quantization: checked
// on the demo airframes with a fixed-point type, against the discrete
// step record scaled by the same amplitude (the loop is linear below the
// reference step). The allowance is 1 % of the step: a few input LSB
// (here about 1e−4 of the step each) accumulated through the integrator.
func TestFixedStepFollowsReference(t *testing.T) {
	n := 0
	for _, path := range airframes(t) {
		a := sharedDesign(t, path)
		for _, x := range a.Axes {
			if x.Design == nil || x.Design.Num == nil || x.Design.Num.Fixed == nil {
				continue
			}
			amp, y := fixedStep(x.Design)
			if !(amp > 0) || len(y) != len(x.Design.Verif.Y) {
				t.Fatalf("%s %s: fixed step of %g, %d samples", path, x.Name, amp, len(y))
			}
			n++
			worst := 0.0
			for i := range y {
				worst = math.Max(worst, math.Abs(y[i]-x.Design.Verif.Y[i]))
			}
			if worst > 0.01 {
				t.Errorf("%s %s: integer controller's step differs from the linear loop by %.3g of the step", path, x.Name, worst)
			}
		}
	}
	if n == 0 {
		t.Fatal("no fixed-point axis among the demo airframes")
	}
}
