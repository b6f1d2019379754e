package synth

import (
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// dfiltProblem is demoProblem's PID (or PD) with two derivative filters:
// a second-order Butterworth lowpass at 60 Hz and a full notch at 150 Hz,
// 40 Hz wide.
func dfiltProblem(form airframe.Form) airframe.Axis {
	p := demoProblem(form, 0)
	p.Ctrl.DerivativeFilters = []airframe.Filter{
		{Kind: airframe.FilterLowpass, At: airframe.FilterAtDerivative, Hz: 60, Order: 2, Damping: 1 / math.Sqrt2},
		{Kind: airframe.FilterNotch, At: airframe.FilterAtDerivative, Hz: 150, WidthHz: 40},
	}
	return p
}

// TestDerivativeFilterContinuous: the continuous controller with
// derivative filters, C(s) = Kp + Ki/s + Kd·s/(Tf·s + 1)·H(s), against
// SciPy 1.10's signal.freqs of the same sum built from its terms, H the
// product of signal.butter(2, 2π·60, analog=True) and the textbook analog
// notch (s² + ω0²)/(s² + (ω0/Q)·s + ω0²), Q = centre/width (Audio EQ
// Cookbook's prototype, from memory): Eval, TF and Setpoint agree with
// it, and the placement puts the target pole on the loop with the filters.
func TestDerivativeFilterContinuous(t *testing.T) {
	for _, form := range []airframe.Form{airframe.FormPID, airframe.FormPD} {
		p := dfiltProblem(form)
		p.Spec.SettlingTime = map[airframe.Form]float64{airframe.FormPD: 0.12, airframe.FormPID: 0.3}[form]
		c := NewController(p)
		if c.DF == nil {
			t.Fatal("NewController: no derivative filter")
		}
		c.Kp, c.Kd, c.B = 0.03, 0.0005, 0.6
		if form == airframe.FormPID {
			c.Ki = 0.5
		}
		ws := []float64{1, 10, 100, 2 * math.Pi * 60, 2 * math.Pi * 150, 2000, 10000}
		in := map[string]any{"kp": c.Kp, "ki": c.Ki, "kd": c.Kd, "tf": c.Tf, "b": c.B, "w": ws}
		var ref struct {
			C, F [][2]float64
		}
		pyref.Run(t, `
import sys, json
import numpy as np
from scipy import signal
d = json.load(sys.stdin)
bl, al = signal.butter(2, 2 * np.pi * 60, analog=True)
w0, q = 2 * np.pi * 150, 150.0 / 40.0
bn, an = np.array([1.0, 0.0, w0 * w0]), np.array([1.0, w0 / q, w0 * w0])
nh, dh = np.polymul(bl, bn), np.polymul(al, an)
# Descending powers of s: Kp + Ki/s + Kd s/(Tf s + 1) H over s (Tf s + 1) Dh.
den = np.polymul(np.polymul([1.0, 0.0], [d["tf"], 1.0]), dh)
def path(kp):
    a = np.polymul(np.polyadd(np.polymul([kp, 0.0], [d["tf"], 1.0]), np.polymul([d["ki"]], [d["tf"], 1.0])), dh)
    return np.polyadd(a, np.polymul([d["kd"], 0.0, 0.0], nh))
w = np.array(d["w"])
_, hc = signal.freqs(path(d["kp"]), den, worN=w)
_, hf = signal.freqs(np.polysub(path(d["b"] * d["kp"]), np.polymul([d["kd"], 0.0, 0.0], nh)), den, worN=w)
c = lambda v: [[float(np.real(x)), float(np.imag(x))] for x in v]
print(json.dumps({"C": c(hc), "F": c(hf)}))
`, in, &ref)
		tf, sp := c.TF(), c.Setpoint()
		for i, w := range ws {
			s := complex(0, w)
			want, wantF := complex(ref.C[i][0], ref.C[i][1]), complex(ref.F[i][0], ref.F[i][1])
			// The same rational function in two arithmetic orders: 1e-9
			// relative, far below any missing term (the notch alone moves
			// C by more than 1 % near its centre).
			for name, v := range map[string]complex128{"Eval": c.Eval(s), "TF": lti.Div(tf.Num.Eval(s), tf.Den.Eval(s))} {
				if d := cmplx.Abs(v - want); !(d <= 1e-9*cmplx.Abs(want)) {
					t.Errorf("%s ω = %g: %s = %v, SciPy %v", form, w, name, v, want)
				}
			}
			// The derivative is on the measurement: F = b·Kp + Ki/s.
			if v := lti.Div(sp.Num.Eval(s), sp.Den.Eval(s)); !(cmplx.Abs(v-wantF) <= 1e-9*cmplx.Abs(wantF)) {
				t.Errorf("%s ω = %g: Setpoint = %v, SciPy %v", form, w, v, wantF)
			}
		}
		// Placement with the filters in the derivative's column.
		tg, _ := TargetFromSpec(p.Spec)
		pc, err := Place(p, tg)
		if err != nil {
			t.Fatalf("%s: %v", form, err)
		}
		if r := cmplx.Abs(1 + pc.Eval(tg.Pole)*p.OpenLoop(tg.Pole)); r > 1e-9 {
			t.Errorf("%s: |1 + C·L| at s* = %.3g", form, r)
		}
	}
}

// TestDerivativeFilterUnformable: an Axis built in code (not parsed) with
// a derivative filter that cannot be formed, a notch of no width, is an
// error of the design naming the filter, not a controller
// designed without it.
func TestDerivativeFilterUnformable(t *testing.T) {
	p := dfiltProblem(airframe.FormPID)
	p.Ctrl.Refine = true
	p.Ctrl.DerivativeFilters[1].WidthHz = 0
	_, err := DesignAxis(p, ContinuousLoops(p))
	if err == nil || !strings.Contains(err.Error(), "derivative filter 2") {
		t.Errorf("DesignAxis: %v, want an error naming derivative filter 2", err)
	}
}
