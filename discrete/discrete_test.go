package discrete

import (
	"bytes"
	"math"
	"math/cmplx"
	"os"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete/internal/pairgen"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
	"locusmith/synth"
)

// demo is a multirotor-like rate loop (demo data): an integrating plant
// with a motor lag, a gyro lowpass and a transport delay.
func demo(form airframe.Form) airframe.Axis {
	tau := 0.03
	return airframe.Axis{Name: "roll",
		Plant:  airframe.Plant{Model: lti.ZPK{Gain: 2000 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: 0.002},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08, MinPhaseMargin: 40, MinGainMargin: 6},
		Ctrl: airframe.Control{Form: form, Refine: true, ThirdPole: 5, LeadZero: -20, DerivativeLowpassHz: 125,
			OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "backcalc", Discretize: "tustin"},
	}
}

// ctrlEval returns the feedback path C_fb(z) = u/(−y) of the discrete
// controller.
func ctrlEval(k Coeffs, z complex128) complex128 {
	c := linearize(k)
	return -lti.Disc{N: c.M, A: c.Ac, B: c.By, C: c.Cc, D: c.Dy, T: k.T}.Eval(z)
}

func pidControl(method string) airframe.Control {
	return airframe.Control{Form: airframe.FormPID, DerivativeLowpassHz: 60, OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "none", Discretize: method}
}

// The Tustin integrator is Ki·(T/2)(z+1)/(z−1), backward Ki·T·z/(z−1),
// forward Ki·T/(z−1) (Franklin, Powell & Workman, Digital Control, the
// substitution rules; from memory).
func TestIntegratorClosedForms(t *testing.T) {
	c := synth.Controller{Form: airframe.FormPI, Kp: 0, Ki: 3, B: 1}
	T := 0.001
	z := complexExp(0.3)
	for _, m := range []struct {
		method string
		want   complex128
	}{
		{"tustin", complex(3*T/2, 0) * (z + 1) / (z - 1)},
		{"backward", complex(3*T, 0) * z / (z - 1)},
		{"forward", complex(3*T, 0) / (z - 1)},
	} {
		ctrl := pidControl(m.method)
		ctrl.Form = airframe.FormPI
		k, _, err := Realize(c, ctrl, T, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		if got := ctrlEval(k, z); cmplx.Abs(got-m.want) > 1e-12*cmplx.Abs(m.want) {
			t.Errorf("%s: %v, want %v", m.method, got, m.want)
		}
		if got := feedback(k, z); cmplx.Abs(got-m.want) > 1e-12*cmplx.Abs(m.want) {
			t.Errorf("%s: feedback %v, want %v", m.method, got, m.want)
		}
	}
}

// Prewarping: with s = (ω/tan(ωT/2))(z−1)/(z+1) the discrete integrator
// equals Ki/(jω) exactly at the prewarp frequency ω, since
// (z−1)/(z+1) = j·tan(ωT/2) on the unit circle (Franklin, Powell &
// Workman, from memory).
func TestPrewarpExactAtCrossover(t *testing.T) {
	T, w := 0.002, 300.0
	c := synth.Controller{Form: airframe.FormPI, Kp: 0.01, Ki: 0.5, B: 1}
	ctrl := pidControl("tustin_prewarp")
	ctrl.Form = airframe.FormPI
	k, _, err := Realize(c, ctrl, T, w)
	if err != nil {
		t.Fatal(err)
	}
	want := complex(0.01, 0) + complex(0.5, 0)/complex(0, w)
	if got := ctrlEval(k, complexExp(w*T)); cmplx.Abs(got-want) > 1e-12*cmplx.Abs(want) {
		t.Errorf("prewarped C at ω: %v, want %v", got, want)
	}
	if got := 2 / w * math.Tan(w*T/2); math.Abs(k.G01/0.5-got) > 1e-15 {
		t.Errorf("T' = %.17g, want (2/ω)tan(ωT/2) = %.17g", k.G01/0.5, got)
	}
}

// The derivative filter is stable and does not ring for any filter
// setting: its pole lies in [0, 1) even when Tf ≪ T.
func TestDerivativePoleAlwaysInUnitInterval(t *testing.T) {
	for _, m := range []string{"tustin", "tustin_prewarp", "backward", "forward"} {
		for _, hz := range []float64{1, 50, 400, 4000, 1e6} {
			ctrl := pidControl(m)
			ctrl.DerivativeLowpassHz = hz
			c := synth.Controller{Form: airframe.FormPID, Kp: 1, Ki: 1, Kd: 0.01, Tf: ctrl.Tf(), B: 1}
			k, _, err := Realize(c, ctrl, 0.001, 100)
			if err != nil {
				t.Fatal(err)
			}
			if !(k.Ad >= 0 && k.Ad < 1) {
				t.Errorf("%s at %g Hz: derivative pole %g outside [0, 1)", m, hz, k.Ad)
			}
		}
	}
}

const c2dScript = `
import json, sys
import numpy as np
from scipy import signal
out = []
for c in json.load(sys.stdin):
    zs = [complex(a, b) for a, b in c['z']]
    if c['method'] == 'zoh':
        # State-space route (tf2ss, then expm): ss2tf would lose digits.
        A, B, C, D = signal.tf2ss(c['num'], c['den'])
        Ad, Bd, Cd, Dd, _ = signal.cont2discrete((A, B, C, D), c['T'], method='zoh')
        n = Ad.shape[0]
        vals = [(Cd @ np.linalg.solve(z * np.eye(n) - Ad, Bd))[0, 0] + Dd[0, 0] for z in zs]
    else:
        num, den, dt = signal.cont2discrete((c['num'], c['den']), c['T'], method=c['method'])
        num = np.atleast_1d(np.squeeze(num))
        vals = [np.polyval(num, z) / np.polyval(den, z) for z in zs]
    out.append([[complex(v).real, complex(v).imag] for v in vals])
json.dump(out, sys.stdout)
`

type c2dCase struct {
	Num    []float64    `json:"num"`
	Den    []float64    `json:"den"`
	T      float64      `json:"T"`
	Method string       `json:"method"`
	Z      [][2]float64 `json:"z"`
}

var unitPoints = []float64{0.001, 0.01, 0.1, 0.5, 1, 2, 3}

func zPoints() ([][2]float64, []complex128) {
	var pairs [][2]float64
	var zs []complex128
	for _, th := range unitPoints {
		z := complexExp(th)
		pairs, zs = append(pairs, [2]float64{real(z), imag(z)}), append(zs, z)
	}
	return pairs, zs
}

// The discrete controllers (every form and rule) against SciPy's
// signal.cont2discrete ('bilinear', 'backward_diff', 'euler'), compared
// by their frequency responses at points on the unit circle (coefficients
// of a transfer function are only defined up to a common factor). The
// filter time constant is long enough that the derivative follows the
// chosen rule. Tolerance 1e-9 relative: both are a few rational
// operations on the same numbers.
func TestControllersAgainstSciPy(t *testing.T) {
	T := 0.001
	methods := map[string]string{"tustin": "bilinear", "backward": "backward_diff", "forward": "euler"}
	ctrls := []synth.Controller{
		{Form: airframe.FormP, Kp: 0.02, B: 1},
		{Form: airframe.FormPI, Kp: 0.02, Ki: 0.3, B: 1},
		{Form: airframe.FormPD, Kp: 0.02, Kd: 0.0004, Tf: 0.004, B: 1},
		{Form: airframe.FormPID, Kp: 0.03, Ki: 0.27, Kd: 0.0008, Tf: 0.004, B: 1},
		{Form: airframe.FormLead, K: 0.01, Zero: -20, Pole: -80},
	}
	pairs, zs := zPoints()
	var in []c2dCase
	var ours [][]complex128
	for _, name := range []string{"tustin", "backward", "forward"} {
		for _, c := range ctrls {
			ctrl := pidControl(name)
			ctrl.Form = c.Form
			k, _, err := Realize(c, ctrl, T, math.NaN())
			if err != nil {
				t.Fatal(err)
			}
			if c.Form.HasDerivative() && k.DerivativeMethod != Method(name) {
				t.Fatalf("%s %s: derivative used %s", name, c.Form, k.DerivativeMethod)
			}
			tf := c.TF()
			in = append(in, c2dCase{Num: tf.Num.Descending(), Den: tf.Den.Descending(), T: T, Method: methods[name], Z: pairs})
			var v []complex128
			for _, z := range zs {
				v = append(v, ctrlEval(k, z))
				if f := feedback(k, z); cmplx.Abs(f-v[len(v)-1]) > 1e-12*cmplx.Abs(f) {
					t.Errorf("%s %s: feedback %v, linearized model %v", name, c.Form, f, v[len(v)-1])
				}
			}
			ours = append(ours, v)
		}
	}
	var ref [][][2]float64
	pyref.Run(t, c2dScript, in, &ref)
	for i := range in {
		for j, z := range ref[i] {
			want := complex(z[0], z[1])
			if got := ours[i][j]; cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
				t.Errorf("case %d (%s) at θ=%g: %v, SciPy %v", i, in[i].Method, unitPoints[j], got, want)
			}
		}
	}
}

// The sampled feedback path (ZOH of the cascade G·H) against SciPy's
// cont2discrete(method='zoh') of the product G·H, for plants with real
// and complex poles, an integrator, a zero, and sensors; compared by the
// frequency response on the unit circle to 1e-8 relative (the
// matrix-exponential and the transfer-function route differ by rounding
// amplified by the conditioning of the companion form).
func TestPlantZOHAgainstSciPy(t *testing.T) {
	plants := []struct {
		g lti.ZPK
		h lti.ZPK
	}{
		{lti.ZPK{Gain: 66667, Poles: []complex128{0, -33.3}}, lti.ZPK{Gain: 628.3, Poles: []complex128{-628.3}}},
		{lti.ZPK{Gain: 2600, Poles: []complex128{0, -40, complex(-60, 80), complex(-60, -80)}}, lti.ZPK{Gain: 1}},
		{lti.ZPK{Gain: 500, Poles: []complex128{-5, -50}, Zeros: []complex128{-20}}, lti.ZPK{Gain: 400, Poles: []complex128{-400}}},
		{lti.ZPK{Gain: 1, Poles: []complex128{-1}}, lti.ZPK{Gain: 1}},
		{lti.ZPK{Gain: 9e4, Poles: []complex128{complex(-30, 300), complex(-30, -300)}}, lti.ZPK{Gain: 1e6, Poles: []complex128{complex(-700, 700), complex(-700, -700)}}},
		{lti.ZPK{Gain: 3000, Poles: []complex128{0, 0}}, lti.ZPK{Gain: 1}},
	}
	T := 0.001
	pairs, zs := zPoints()
	var in []c2dCase
	var ours [][]complex128
	for _, c := range plants {
		p := airframe.Axis{Plant: airframe.Plant{Model: c.g}, Sensor: c.h}
		pl, err := NewPlant(p, T)
		if err != nil {
			t.Fatal(err)
		}
		g, _ := c.g.TF()
		h, _ := c.h.TF()
		gh := g.Series(h)
		in = append(in, c2dCase{Num: gh.Num.Descending(), Den: gh.Den.Descending(), T: T, Method: "zoh", Z: pairs})
		var v []complex128
		for _, z := range zs {
			v = append(v, pl.evalMeasured(z))
		}
		ours = append(ours, v)
	}
	var ref [][][2]float64
	pyref.Run(t, c2dScript, in, &ref)
	for i := range in {
		for j, z := range ref[i] {
			want := complex(z[0], z[1])
			if got := ours[i][j]; cmplx.Abs(got-want) > 1e-8*cmplx.Abs(want) {
				t.Errorf("plant %d at θ=%g: %v, SciPy %v", i, unitPoints[j], got, want)
			}
		}
	}
}

// The closed form of the ZOH of a first-order lag 1/(τs+1):
// y[k+1] = a·y[k] + (1 − a)·u[k], a = e^(−T/τ) (Franklin, Powell &
// Workman; Åström & Wittenmark; from memory).
func TestFirstOrderLagClosedForm(t *testing.T) {
	tau, T := 0.025, 0.001
	pl, err := NewPlant(airframe.Axis{Plant: airframe.Plant{Model: lti.ZPK{Gain: 1 / tau, Poles: []complex128{complex(-1/tau, 0)}}}, Sensor: lti.ZPK{Gain: 1}}, T)
	if err != nil {
		t.Fatal(err)
	}
	a := math.Exp(-T / tau)
	if pl.N != 1 || math.Abs(pl.A[0]-a) > 1e-15 || math.Abs(pl.B[0]*pl.Cm[0]-(1-a)) > 1e-15 {
		t.Errorf("A = %v, B·C = %v; want a = %.17g, 1−a = %.17g", pl.A, pl.B[0]*pl.Cm[0], a, 1-a)
	}
}

const delayScript = `
import json, sys
import numpy as np
from scipy import signal
out = []
for c in json.load(sys.stdin):
    q = c['q']
    T = c['T']
    u = np.array(c['u'])
    fine = np.repeat(u, q)
    d = c['dfine']
    ud = np.concatenate([np.zeros(d), fine[:len(fine)-d]])
    t = np.arange(len(fine)) * T / q
    _, y, _ = signal.lsim((c['num'], c['den']), ud, t)
    out.append(list(y[::q]))
json.dump(out, sys.stdout)
`

// Transport delay of a whole and a fractional sample: the sampled plant
// against SciPy's signal.lsim of the continuous plant driven by the
// delayed piecewise-constant input on a grid 20 times finer, on which the
// delay is a whole number of fine steps, so that lsim's linear
// interpolation of the input is exact except on the fine steps holding a
// switch (it interpolates across them; the 2e-3 relative tolerance covers
// that, 1/20 of a sample at each switch). The three delays go to SciPy in
// one run.
func TestTransportDelayAgainstSciPy(t *testing.T) {
	T := 0.001
	q := 20
	delays := []float64{0.0013, 0.00235, 0.0005}
	g := lti.ZPK{Gain: 2000 / 0.03, Poles: []complex128{-5, complex(-1/0.03, 0)}}
	tf, _ := g.TF()
	u := make([]float64, 60)
	for i := range u {
		u[i] = math.Sin(float64(i)*0.37) + 0.5*float64(i%7)
	}
	var in []map[string]any
	for _, delay := range delays {
		in = append(in, map[string]any{"q": q, "T": T, "u": u, "dfine": int(math.Round(delay / T * float64(q))), "num": tf.Num.Descending(), "den": tf.Den.Descending()})
	}
	var ref [][]float64
	pyref.Run(t, delayScript, in, &ref)
	if len(ref) != len(delays) {
		t.Fatalf("SciPy returned %d responses for %d delays", len(ref), len(delays))
	}
	for i, delay := range delays {
		pl, err := NewPlant(airframe.Axis{Plant: airframe.Plant{Model: g, Delay: delay}, Sensor: lti.ZPK{Gain: 1}}, T)
		if err != nil {
			t.Fatal(err)
		}
		d := pl.Full()
		got := d.Simulate(u)
		want := ref[i]
		if len(want) != len(got) {
			t.Fatalf("delay %g: SciPy returned %d samples, the plant %d", delay, len(want), len(got))
		}
		scale := 0.0
		for _, v := range want {
			scale = math.Max(scale, math.Abs(v))
		}
		for k := range got {
			if math.Abs(got[k]-want[k]) > 2e-3*scale {
				t.Errorf("delay %g: y[%d] = %.6g, SciPy %.6g", delay, k, got[k], want[k])
			}
		}
	}
}

const polesScript = `
import json, sys
import numpy as np
from scipy import signal
out = []
for c in json.load(sys.stdin):
    nc, dc, _ = signal.cont2discrete((c['cnum'], c['cden']), c['T'], method='bilinear')
    np_, dp, _ = signal.cont2discrete((c['pnum'], c['pden']), c['T'], method='zoh')
    nc, np_ = np.atleast_1d(np.squeeze(nc)), np.atleast_1d(np.squeeze(np_))
    zd = np.zeros(c['d'] + 1); zd[0] = 1.0   # z^d
    char = np.polyadd(np.polymul(np.polymul(dc, dp), zd), np.polymul(nc, np_))
    r = np.roots(np.trim_zeros(char, 'f'))
    out.append([[v.real, v.imag] for v in r if abs(v) > 1e-9])
json.dump(out, sys.stdout)
`

// Discrete closed-loop poles against NumPy's roots of the characteristic
// polynomial built independently: controller by SciPy's bilinear
// cont2discrete, plant by its ZOH, the compute delay (and a transport delay
// of whole samples) as powers of z: Dc·Dp·z^d + Nc·Np. Poles at the
// origin (delay registers) are left out of both sides. Tolerance 1e-6
// relative: np.roots of a degree-10 polynomial with clustered roots near
// z = 1 loses about half the digits.
func TestClosedLoopPolesAgainstNumPy(t *testing.T) {
	T := 0.001
	type tc struct {
		c     synth.Controller
		delay float64
		d     int
	}
	cases := []tc{
		{synth.Controller{Form: airframe.FormPI, Kp: 0.007, Ki: 0.02, B: 1}, 0, 1},
		{synth.Controller{Form: airframe.FormPID, Kp: 0.031, Ki: 0.27, Kd: 0.0008, Tf: 0.004, B: 0.5}, 0, 1},
		{synth.Controller{Form: airframe.FormPID, Kp: 0.031, Ki: 0.27, Kd: 0.0008, Tf: 0.004, B: 1}, 0.002, 0},
		{synth.Controller{Form: airframe.FormPD, Kp: 0.009, Kd: 0.0001, Tf: 0.004, B: 1}, 0.001, 2},
		{synth.Controller{Form: airframe.FormLead, K: 0.01, Zero: -20, Pole: -25}, 0, 1},
	}
	var in []map[string]any
	var ours [][]complex128
	for _, c := range cases {
		p := demo(c.c.Form)
		p.Plant.Delay = c.delay
		pl, err := NewPlant(p, T)
		if err != nil {
			t.Fatal(err)
		}
		ctrl := p.Ctrl
		ctrl.DerivativeLowpassHz = 1 / (2 * math.Pi * c.c.Tf)
		k, _, err := Realize(c.c, ctrl, T, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		ps, err := newClosedLoop(pl, linearize(k), c.d).poles()
		if err != nil {
			t.Fatal(err)
		}
		var nz []complex128
		for _, z := range ps {
			if cmplx.Abs(z) > 1e-9 {
				nz = append(nz, z)
			}
		}
		ours = append(ours, nz)
		g, _ := p.Plant.Model.TF()
		h, _ := p.Sensor.TF()
		gh := g.Series(h)
		tf := c.c.TF()
		in = append(in, map[string]any{"cnum": tf.Num.Descending(), "cden": tf.Den.Descending(), "pnum": gh.Num.Descending(), "pden": gh.Den.Descending(),
			"T": T, "d": c.d + int(math.Round(c.delay/T))})
	}
	var ref [][][2]float64
	pyref.Run(t, polesScript, in, &ref)
	for i := range cases {
		var want []complex128
		for _, z := range ref[i] {
			want = append(want, complex(z[0], z[1]))
		}
		if d := lti.RootDistance(ours[i], want); d > 1e-6 {
			t.Errorf("case %d: poles %v\nNumPy %v (rel %.3g)", i, ours[i], want, d)
		}
	}
}

// antiWindupCases are three rate loops of different airframes (demo data):
// a quadrotor roll axis (PID), a yaw axis (PI) and a gimbal (PID, no
// delay).
func antiWindupCases() []airframe.Axis {
	roll := demo(airframe.FormPID)
	yaw := demo(airframe.FormPI)
	yaw.Plant.Model = lti.ZPK{Gain: 300 / 0.05, Poles: []complex128{0, -20}}
	yaw.Spec = airframe.Spec{SettlingTime: 0.4, Band: 0.02, Overshoot: 0.1, MinPhaseMargin: 40, MinGainMargin: 6}
	gim := demo(airframe.FormPID)
	gim.Plant = airframe.Plant{Model: lti.ZPK{Gain: 4000, Poles: []complex128{-2, -60}}}
	gim.Spec = airframe.Spec{SettlingTime: 0.1, Band: 0.02, Overshoot: 0.05, MinPhaseMargin: 45, MinGainMargin: 6}
	gim.Ctrl.IntegratorLimit = 4
	return []airframe.Axis{roll, yaw, gim}
}

// antiWindupCtrls are the controllers of the anti-windup tests, one per
// case of antiWindupCases: fixed, hand-tuned values (a PID of moderate
// integral action on the roll, a PI on the yaw, a PID on the gimbal), so
// that the tests exercise the anti-windup schemes and not whatever the
// search chooses.
func antiWindupCtrls() []synth.Controller {
	tf := 1 / (2 * math.Pi * 125)
	return []synth.Controller{
		{Form: airframe.FormPID, Kp: 0.0217, Ki: 0.1525, Kd: 0.000587, Tf: tf, B: 1},
		{Form: airframe.FormPI, Kp: 0.02, Ki: 0.08, B: 1},
		{Form: airframe.FormPID, Kp: 0.2, Ki: 4, Kd: 0.002, Tf: tf, B: 1},
	}
}

// fixedDesign realizes c on p at 1 kHz with a compute delay of one
// sample and verifies it, without a search.
func fixedDesign(t *testing.T, p airframe.Axis, c synth.Controller) (Plant, Coeffs, Verification) {
	t.Helper()
	pl, err := NewPlant(p, 0.001)
	if err != nil {
		t.Fatal(err)
	}
	k, _, err := Realize(c, p.Ctrl, 0.001, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	v, err := verify(p, pl, k, 1, math.Inf(1))
	if err != nil {
		t.Fatal(err)
	}
	if !v.Stable {
		t.Fatalf("%s: the fixed controller %+v is unstable", p.Name, c)
	}
	return pl, k, v
}

// Anti-windup (Åström & Hägglund, Advanced PID Control: conditional
// integration and back-calculation reduce the overshoot and the recovery
// after saturation, from memory): on three loops, with a step that
// saturates the command, backcalc and clamp give no more overshoot and no
// longer recovery than none, strictly less on at least one, and the
// integrator never exceeds integrator_limit.
func TestAntiWindupHelps(t *testing.T) {
	cs := antiWindupCtrls()
	for i, p := range antiWindupCases() {
		pl, coeffs, v := fixedDesign(t, p, cs[i])
		n := horizon(p.Spec.SettlingTime, pl.T, v.Poles, 100) * 3
		a := v.Saturated.Amplitude
		metrics := func(aw AntiWindup) (lti.StepInfo, float64) {
			k := coeffs
			k.AntiWindup = aw
			y, _, ipk := simulateNonlinear(pl, k, 1, a, n)
			return lti.StepMetrics(y, pl.T, a*v.Step.Final, p.Spec.Band), ipk
		}
		none, _ := metrics(AWNone)
		for _, aw := range []AntiWindup{AWBackcalc, AWClamp} {
			m, ipk := metrics(aw)
			if ipk > coeffs.IL+1e-12 {
				t.Errorf("case %d %s: integrator peak %.6g > limit %.6g", i, aw, ipk, coeffs.IL)
			}
			if m.Overshoot > none.Overshoot+1e-9 || m.Settling > none.Settling+1e-9 {
				t.Errorf("case %d %s: overshoot %.4f recovery %.4f, none %.4f %.4f", i, aw, m.Overshoot, m.Settling, none.Overshoot, none.Settling)
			}
			if !(m.Overshoot < none.Overshoot || m.Settling < none.Settling) {
				t.Errorf("case %d %s: no improvement over none (overshoot %.4f, recovery %.4f)", i, aw, m.Overshoot, m.Settling)
			}
			t.Logf("case %d %s: overshoot %.4f recovery %.4f s; none %.4f %.4f s", i, aw, m.Overshoot, m.Settling, none.Overshoot, none.Settling)
		}
	}
}

// Saturation downstream: the controller's own limits are wide, a mixer
// clips the command at ±0.3 and reports it through Applied. With the
// report, back-calculation makes the integrator track the clipped command
// (it runs negative, against the proportional part) and never winds up in
// the direction of the error; without it, the integrator winds up toward
// its limit and the response overshoots more.
func TestMixerSaturationBoundsWindup(t *testing.T) {
	p := demo(airframe.FormPID)
	p.Ctrl.OutputLimit = [2]float64{-10, 10}
	p.Ctrl.IntegratorLimit = 10
	c := antiWindupCtrls()[0]
	c.Ki = 0.2
	pl, coeffs, _ := fixedDesign(t, p, c)
	run := func(report bool) (ipk float64, y []float64) {
		prm := ParamsOf[float64](coeffs)
		var st State[float64]
		y, _ = pl.Run(1, 4000, func(ym float64) float64 {
			u := Step(&prm, &st, 300, ym)
			ua := math.Max(-0.3, math.Min(0.3, u)) // the mixer clips
			if report {
				Applied(&prm, &st, ua)
			}
			ipk = math.Max(ipk, st.S) // windup is in the direction of the error (+)
			return ua
		})
		return ipk, y
	}
	withReport, yr := run(true)
	without, yn := run(false)
	t.Logf("largest integrator state: %.3g with Applied, %.3g without", withReport, without)
	if withReport > 0.3 {
		t.Errorf("integrator peak with Applied = %.3g, want ≤ 0.3 (the clipped range)", withReport)
	}
	if without < 5 {
		t.Errorf("integrator peak without Applied = %.3g: expected windup toward the limit 10", without)
	}
	os := func(y []float64) float64 {
		m := 0.0
		for _, v := range y {
			m = math.Max(m, v)
		}
		return m/300 - 1
	}
	if os(yr) >= os(yn) {
		t.Errorf("overshoot with Applied %.3f ≥ without %.3f", os(yr), os(yn))
	}
}

// Bumpless reset: after Reset(output, measured), a step with the setpoint
// at the measurement returns output, and the derivative does not kick.
func TestResetIsBumpless(t *testing.T) {
	for _, f := range []airframe.Form{airframe.FormPI, airframe.FormPID, airframe.FormLead} {
		d, err := DesignAxis(demo(f), airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float64})
		if err != nil {
			t.Fatal(err)
		}
		prm := ParamsOf[float64](d.Coeffs)
		var st State[float64]
		for i := 0; i < 10; i++ {
			Step(&prm, &st, 5, float64(i))
		}
		Reset(&prm, &st, 0.25, 3)
		if got := Step(&prm, &st, 3, 3); math.Abs(got-0.25) > 1e-15 {
			t.Errorf("%s: first command after reset %.17g, want 0.25", f, got)
		}
	}
}

// Discrete metrics converge to the continuous ones as the loop rate grows
// (the sampled loop tends to the continuous loop as T → 0): the same
// continuous controller realized at ×1, ×10 and ×100 the rate, with no
// compute delay, approaches the continuous overshoot and settling time.
func TestConvergesToContinuous(t *testing.T) {
	p := demo(airframe.FormPID)
	p.Ctrl.DerivativeLowpassHz = 40
	d, err := synth.DesignAxis(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	prev := math.Inf(1)
	for _, hz := range []float64{400, 4000, 40000} {
		T := 1 / hz
		pl, err := NewPlant(p, T)
		if err != nil {
			t.Fatal(err)
		}
		k, _, err := Realize(d.Ctrl, p.Ctrl, T, d.Verif.Margins.Crossover)
		if err != nil {
			t.Fatal(err)
		}
		v, err := Verify(p, pl, k, 0)
		if err != nil {
			t.Fatal(err)
		}
		e := math.Abs(v.Step.Overshoot-d.Verif.Step.Overshoot) + math.Abs(v.Step.Settling-d.Verif.Step.Settling)/p.Spec.SettlingTime
		t.Logf("%g Hz: overshoot %.5f (cont %.5f), settling %.5f (cont %.5f)", hz, v.Step.Overshoot, d.Verif.Step.Overshoot, v.Step.Settling, d.Verif.Step.Settling)
		if e >= prev && e > 2e-3 {
			t.Errorf("%g Hz: error %.4g did not shrink from %.4g", hz, e, prev)
		}
		prev = e
	}
	if prev > 5e-3 {
		t.Errorf("at 40 kHz the discrete metrics are still %.3g from the continuous ones", prev)
	}
}

// A loop rate too low for the design fails the sampling check (exit 1).
func TestSamplingTooLow(t *testing.T) {
	p := demo(airframe.FormPD)
	p.Ctrl.DerivativeLowpassHz = 20
	d, err := DesignAxis(p, airframe.Loop{Hz: 30, ComputeDelay: 0}, airframe.Numeric{Type: airframe.Float32})
	if err != nil {
		return // an infeasible design is also a refusal
	}
	for _, c := range d.Checks {
		if c.Name == "sampling" && c.OK {
			t.Errorf("sampling check passed at 30 Hz: %+v", c)
		}
	}
	if d.OK() {
		t.Errorf("design at 30 Hz reported ok")
	}
}

// BenchmarkDiscreteAxis: discretization, discrete verification and the
// saturated simulation of one PID axis (target ≤ 1 ms).
func BenchmarkDiscreteAxis(b *testing.B) {
	p := demo(airframe.FormPID)
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float32})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		pl, err := NewPlant(p, 0.001)
		if err != nil {
			b.Fatal(err)
		}
		k, _, err := Realize(d.Cont.Ctrl, p.Ctrl, 0.001, d.Cont.Verif.Margins.Crossover)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := Verify(p, pl, k, 1); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkDesignAxisAtRate: the whole design of one PID axis, refined
// against the sampled loop.
func BenchmarkDesignAxisAtRate(b *testing.B) {
	// The demo quadrotor's roll (PID) with the file's defaults: the
	// default envelope (gain ±10 %), Ms ≤ 1.7, the default noise bound.
	data, err := os.ReadFile("../examples/quadrotor.toml")
	if err != nil {
		b.Fatal(err)
	}
	f, err := airframe.Parse("quadrotor.toml", data)
	if err != nil {
		b.Fatal(err)
	}
	var p airframe.Axis
	for _, a := range f.Axes {
		if a.Name == "roll" {
			p = a
		}
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := DesignAxis(p, f.Loop, f.Numeric); err != nil {
			b.Fatal(err)
		}
	}
}

// FuzzDesignAtRate designs random plants at random loop rates, compute
// delays, rules and anti-windup schemes: no panic, no NaN in a design
// reported as passing, and poles inside the unit circle when stable.
func FuzzDesignAtRate(f *testing.F) {
	f.Add(2000.0, 0.03, 0.002, 100.0, 0.15, 0.08, 1000.0, uint8(1), uint8(3), uint8(0))
	f.Add(300.0, 0.05, 0.0, 0.0, 0.3, 0.1, 400.0, uint8(0), uint8(1), uint8(5))
	f.Add(50.0, 0.2, 0.01, 20.0, 1.0, 0.05, 50.0, uint8(4), uint8(4), uint8(10))
	f.Fuzz(func(t *testing.T, eff, tau, delay, hz, ts, os, loop float64, cd, form, opt uint8) {
		if !(eff > 0 && eff < 1e6 && tau > 1e-4 && tau < 10 && delay >= 0 && delay < 0.5 && hz >= 0 && hz < 1e4 &&
			ts > 1e-3 && ts < 100 && os > 0.001 && os < 0.99 && loop > 1 && loop < 1e5 && ts*loop < 3000) {
			t.Skip() // long horizons take seconds per run, too slow to fuzz
		}
		if n := math.Ceil(delay*loop) + float64(cd%5); n > airframe.MaxDelaySamples {
			// Beyond what a file may ask (airframe's limit): the nominal
			// loop's poles, the eigenvalues of a matrix with a state per
			// sample, take seconds, and the fuzzing engine takes a run
			// that slow for a hang (765 samples did).
			t.Skip()
		}
		p := demo(airframe.Forms()[int(form)%len(airframe.Forms())])
		p.Plant = airframe.Plant{Model: lti.ZPK{Gain: eff / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: delay}
		if hz > 0 {
			p.Sensor = lti.ZPK{Gain: 2 * math.Pi * hz, Poles: []complex128{complex(-2*math.Pi*hz, 0)}}
		} else {
			p.Sensor = lti.ZPK{Gain: 1}
		}
		p.Spec.SettlingTime, p.Spec.Overshoot = ts, os
		p.Ctrl.Discretize = []string{"tustin", "tustin_prewarp", "backward", "forward"}[int(opt)%4]
		p.Ctrl.AntiWindup = []string{"none", "clamp", "backcalc"}[int(opt/4)%3]
		p.Ctrl.DerivativeLowpassHz = loop / 8
		d, err := DesignAxis(p, airframe.Loop{Hz: loop, ComputeDelay: int(cd) % 5}, airframe.Numeric{Type: airframe.Float32})
		if err != nil {
			return
		}
		if d.Verif.Stable && d.Verif.StabilityMargin <= 0 {
			t.Fatalf("stable with margin %g", d.Verif.StabilityMargin)
		}
		if d.OK() {
			for _, c := range d.Checks {
				// stable has no value where a loop of more than
				// maxSchurDegree states is judged by its winding number
				// (the README's contract); the nominal loop's poles are
				// still computed.
				if math.IsNaN(c.Value) && !(c.Name == "stable" && d.Verif.Stable && !math.IsNaN(d.Verif.StabilityMargin)) {
					t.Fatalf("check %s passed with NaN", c.Name)
				}
			}
		}
	})
}

// The Schur–Cohn test against polynomials built from known roots: stable
// exactly when the largest root modulus is below one (the definition),
// including roots 1 % either side of the circle.
func TestSchurCohnKnownRoots(t *testing.T) {
	seed := uint64(1)
	rnd := func() float64 { // xorshift: deterministic, no global state
		seed ^= seed << 13
		seed ^= seed >> 7
		seed ^= seed << 17
		return float64(seed>>11) / (1 << 53)
	}
	for trial := 0; trial < 500; trial++ {
		n := 1 + trial%12
		var rs []complex128
		for len(rs) < n {
			r, th := 0.95*rnd(), math.Pi*rnd()
			if len(rs)+2 <= n && rnd() < 0.5 {
				z := cmplx.Rect(r, th)
				rs = append(rs, z, cmplx.Conj(z))
			} else {
				rs = append(rs, complex(r*math.Copysign(1, rnd()-0.5), 0))
			}
		}
		want := trial%2 == 0
		edge := 0.99
		if !want {
			edge = 1.01
		}
		rs[0] = complex(edge*real(rs[0])/cmplx.Abs(rs[0]), edge*imag(rs[0])/cmplx.Abs(rs[0]))
		if imag(rs[0]) != 0 {
			rs[1] = cmplx.Conj(rs[0])
		}
		p, err := lti.FromRoots(rs)
		if err != nil {
			t.Fatal(err)
		}
		if got := schurStable(p.Scale(1 + 3*rnd())); got != want {
			t.Errorf("trial %d: roots %v: stable = %v, want %v", trial, rs, got, want)
		}
	}
}

// The characteristic polynomial's roots equal the closed-loop state
// matrix's eigenvalues (away from the origin, where the state model has
// its unobservable delay and filter-history modes).
func TestCharacteristicMatchesStateModel(t *testing.T) {
	for _, f := range airframe.Forms() {
		p := demo(f)
		p.Plant.Delay = 0.0023
		pl, err := NewPlant(p, 0.001)
		if err != nil {
			t.Fatal(err)
		}
		c := synth.Controller{Form: f, Kp: 0.02, Ki: 0.2, Kd: 0.0005, Tf: 0.002, B: 1, K: 0.01, Zero: -20, Pole: -60}
		ctrl := p.Ctrl
		ctrl.Form = f
		k, _, err := Realize(c, ctrl, 0.001, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		for _, z := range []complex128{complexExp(0.2), complex(0.3, 0.1), 2} {
			n, _, d := k.TF()
			if got, want := n.Eval(z)/d.Eval(z), feedback(k, z); cmplx.Abs(got-want) > 1e-12*cmplx.Abs(want) {
				t.Errorf("%s: Coeffs.TF %v, feedback %v", f, got, want)
			}
		}
		roots, err := characteristic(pl, k, 1).Roots()
		if err != nil {
			t.Fatal(err)
		}
		ps, err := newClosedLoop(pl, linearize(k), 1).poles()
		if err != nil {
			t.Fatal(err)
		}
		nz := func(rs []complex128) (out []complex128) {
			for _, r := range rs {
				if cmplx.Abs(r) > 1e-6 {
					out = append(out, r)
				}
			}
			return out
		}
		if d := lti.RootDistance(nz(roots), nz(ps)); d > 1e-6 {
			t.Errorf("%s: characteristic roots %v, state-model poles %v", f, nz(roots), nz(ps))
		}
		if schurStable(characteristic(pl, k, 1)) != (stabilityMargin(ps) > 0) {
			t.Errorf("%s: Schur–Cohn and eigenvalues disagree on stability", f)
		}
	}
}

// The integrator's reach: at steady state u = r/G(0) (0 for an
// integrating plant, by the final-value theorem) and u = KpB·r − Kp·r + s,
// so the integrator holds s = (1/G(0) + Kp − KpB)·r and the largest
// steady setpoint is IL/|1/G(0) + Kp − KpB|. The reference model, run
// with a setpoint inside the reach, settles with its integrator there.
func TestReachLimitMatchesSteadyState(t *testing.T) {
	for _, plant := range []lti.ZPK{
		{Gain: 2000 / 0.03, Poles: []complex128{0, complex(-1/0.03, 0)}}, // integrating
		{Gain: 4000, Poles: []complex128{-2, -60}},                       // G(0) = 33.3
	} {
		p := demo(airframe.FormPID)
		p.Plant = airframe.Plant{Model: plant}
		p.Ctrl.SetpointWeight, p.Ctrl.SetpointWeightSet = 0.5, true
		p.Ctrl.OutputLimit = [2]float64{-100, 100}
		p.Ctrl.IntegratorLimit = 100
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float64})
		if err != nil {
			t.Fatal(err)
		}
		k := d.Coeffs
		g0 := real(plant.Eval(0))
		inv := 0.0
		if !math.IsInf(g0, 0) {
			inv = 1 / g0
		}
		if want := k.IL / math.Abs(inv+k.Kp-k.KpB); math.Abs(reachLimit(p, k)-want) > 1e-12*want {
			t.Errorf("reach %g, want %g", reachLimit(p, k), want)
		}
		r := 0.5 * reachLimit(p, k)
		prm := ParamsOf[float64](k)
		var st State[float64]
		d.Plant.Run(1, 20000, func(ym float64) float64 { return Step(&prm, &st, r, ym) })
		if want := (inv + k.Kp - k.KpB) * r; math.Abs(st.S-want) > 1e-6*math.Abs(want) {
			t.Errorf("G(0) = %g: integrator settles at %.9g, want %.9g", g0, st.S, want)
		}
	}
}

// The saturated step is the one whose linear command peaks at twice the
// upper limit (the response is linear in the setpoint), unless it is
// reduced to the reach or the full scale, which the result says.
func TestSaturatedStepAmplitude(t *testing.T) {
	d, err := DesignAxis(demo(airframe.FormPID), airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float32})
	if err != nil {
		t.Fatal(err)
	}
	s := d.Verif.Saturated
	peak := 0.0
	for _, u := range d.Verif.U {
		peak = math.Max(peak, math.Abs(u))
	}
	want := 2 * d.Coeffs.Hi / peak
	if rmax := reachLimit(d.Problem, d.Coeffs); want > 0.9*rmax {
		want = 0.9 * rmax
		if !s.LimitedByReach {
			t.Error("amplitude reduced to the reach without saying so")
		}
	}
	if math.Abs(s.Amplitude-want) > 1e-12*want {
		t.Errorf("amplitude %g, want %g", s.Amplitude, want)
	}
	dd, err := DesignAxis(demo(airframe.FormPID), airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float32, InputFullScale: 1, OutputFullScale: 1})
	if err != nil {
		t.Fatal(err)
	}
	if ss := dd.Verif.Saturated; ss.Amplitude != 1 || !ss.LimitedByFullScale {
		t.Errorf("with input full scale 1: amplitude %g, limited by full scale %v", ss.Amplitude, ss.LimitedByFullScale)
	}
}

// setpointLanes realizes a fixed controller of the form (gains scaled by
// g) at period T, the demo's options, as the two linear controllers that
// refinement simulates: setpoint weight 0 and 1.
func setpointLanes(t *testing.T, form airframe.Form, g, T float64) (c0, c1 linearCtrl) {
	t.Helper()
	c := synth.Controller{Form: form, Kp: 0.04 * g, Ki: 0.4 * g, Kd: 0.0008 * g, Tf: 0.0013, B: 1, K: 2, Zero: -20, Pole: -90}
	k, _, err := Realize(c, demo(form).Ctrl, T, 0)
	if err != nil {
		t.Fatal(err)
	}
	k0, k1 := k, k
	k0.KpB, k1.KpB = 0, k.Kp
	return linearize(k0), linearize(k1)
}

// The paired simulation is the two single ones, sample for sample and bit
// for bit, however the record is cut into calls: every unrolled kernel
// (plants of 1 to 8 states, controllers of 0 to 3) and the loops beyond
// (9 states), each form, compute delays 0 to 2, and dense plant matrices so
// that every entry shows.
func TestPairStepperMatchesStepper(t *testing.T) {
	kernels := 0
	for np := 1; np <= 9; np++ {
		pl := Plant{N: np, A: make([]float64, np*np), B: make([]float64, np), Cm: make([]float64, np), Cy: make([]float64, np), T: 0.001, Delay: np % 3}
		for i := range np {
			for j := range np {
				pl.A[i*np+j] = 0.05 * math.Sin(float64(7*i+3*j+1))
			}
			pl.A[i*np+i] += 0.85 - 0.02*float64(i)
			pl.B[i], pl.Cm[i], pl.Cy[i] = 0.1*math.Cos(float64(i)), 1+0.3*float64(i), 1-0.2*float64(i)
		}
		for _, form := range airframe.Forms() {
			c0, c1 := setpointLanes(t, form, 10, pl.T)
			for d := range 3 {
				const n = 300
				w0, w1 := make([]float64, n), make([]float64, n)
				simulate(pl, c0, d, w0, nil)
				simulate(pl, c1, d, w1, nil)
				g0, g1 := make([]float64, n), make([]float64, n)
				ps := newPairStepper(pl, c0, c1, d)
				if pairKernel(newPairStepper(pl, c0, c1, d), g0[:0], g1[:0]) {
					kernels++
				}
				for i, cut := 0, 1; i < n; cut = cut*2 + 1 {
					j := min(i+cut, n)
					ps.run(g0[i:j], g1[i:j])
					i = j
				}
				var moved bool
				for i := range n {
					if g0[i] != w0[i] || g1[i] != w1[i] {
						t.Fatalf("%d states, %s, d=%d: sample %d: pair (%g, %g), single (%g, %g)", np, form, d, i, g0[i], g1[i], w0[i], w1[i])
					}
					moved = moved || g1[i] != 0
				}
				if !moved {
					t.Fatalf("%d states, %s, d=%d: the response never left 0", np, form, d)
				}
			}
		}
	}
	if want := 8 * len(airframe.Forms()) * 3; kernels != want {
		t.Errorf("%d runs through a kernel, want %d", kernels, want)
	}
	// Lower triangular plants beyond the kernels run over each row's span
	// of nonzero entries (sparseRows): still bit for bit.
	for np := 9; np <= 12; np++ {
		pl := Plant{N: np, A: make([]float64, np*np), B: make([]float64, np), Cm: make([]float64, np), Cy: make([]float64, np), T: 0.001, Delay: np % 3}
		for i := range np {
			for j := range i {
				pl.A[i*np+j] = 0.05 * math.Sin(float64(7*i+3*j+1))
			}
			pl.A[i*np+i] = 0.85 - 0.02*float64(i)
			pl.B[i], pl.Cm[i], pl.Cy[i] = 0.1*math.Cos(float64(i)), 1+0.3*float64(i), 1-0.2*float64(i)
		}
		for _, form := range airframe.Forms() {
			c0, c1 := setpointLanes(t, form, 10, pl.T)
			const n = 300
			w0, w1 := make([]float64, n), make([]float64, n)
			simulate(pl, c0, 1, w0, nil)
			simulate(pl, c1, 1, w1, nil)
			ps := newPairStepper(pl, c0, c1, 1)
			if ps.rows == nil {
				t.Fatalf("%d lower triangular states: no spans", np)
			}
			g0, g1 := make([]float64, n), make([]float64, n)
			ps.run(g0, g1)
			for i := range n {
				if g0[i] != w0[i] || g1[i] != w1[i] {
					t.Fatalf("%d lower triangular states, %s: sample %d: pair (%g, %g), single (%g, %g)", np, form, i, g0[i], g1[i], w0[i], w1[i])
				}
			}
		}
	}
}

// A plant with a feedback filter chain runs section by section
// (runChain): the same equations as the dense composite of withSection
// that the single stepper runs, associated otherwise, so the two agree to
// rounding: within 1e-12 of the response's peak, for chains of one to
// three sections of either order, every form, compute delays 0 to 2, and
// plants of 3, 4, 5, 7 and 9 states before the chain (the unrolled
// kernels up to 8, the loops beyond). The kernels are the loops bit for
// bit.
func TestChainStepperMatchesDense(t *testing.T) {
	kernels := 0
	for _, extra := range []int{0, 1, 2, 4, 6} {
		testChainStepper(t, extra, &kernels)
	}
	if want := 4 * 3 * len(airframe.Forms()) * 3; kernels != want {
		t.Errorf("%d runs through a chain kernel, want %d", kernels, want)
	}
}

// testChainStepper is TestChainStepperMatchesDense for the demo plant with
// extra more sensor poles (one state each).
func testChainStepper(t *testing.T, extra int, kernels *int) {
	chains := [][]airframe.Filter{
		{{Kind: airframe.FilterLowpass, At: "feedback", Hz: 90, Order: 1}},
		{{Kind: airframe.FilterNotch, At: "feedback", Hz: 120, WidthHz: 30}},
		{{Kind: airframe.FilterNotch, At: "feedback", Hz: 150, DepthDB: 12, WidthHz: 40},
			{Kind: airframe.FilterLowpass, At: "feedback", Hz: 250, Order: 2, Damping: 1 / math.Sqrt2},
			{Kind: airframe.FilterLowpass, At: "feedback", Hz: 300, Order: 1}},
	}
	for ci, fs := range chains {
		for _, form := range airframe.Forms() {
			p := demo(form)
			p.Filters = fs
			for i := range extra {
				w := 2 * math.Pi * float64(400+100*i)
				p.Sensor.Gain *= w
				p.Sensor.Poles = append(p.Sensor.Poles, complex(-w, 0))
			}
			pl, err := NewPlant(p, 0.001)
			if err != nil {
				t.Fatal(err)
			}
			c0, c1 := setpointLanes(t, form, 1, pl.T)
			for d := range 3 {
				const n = 400
				w0, w1 := make([]float64, n), make([]float64, n)
				simulate(pl, c0, d, w0, nil)
				simulate(pl, c1, d, w1, nil)
				ps := newPairStepper(pl, c0, c1, d)
				if len(ps.chain) != len(fs) {
					t.Fatalf("chain %d, %s: %d sections run one by one, want %d", ci, form, len(ps.chain), len(fs))
				}
				if chainKernel(newPairStepper(pl, c0, c1, d), nil, nil) {
					*kernels++
				}
				g0, g1 := make([]float64, n), make([]float64, n)
				l0, l1 := make([]float64, n), make([]float64, n)
				loops := newPairStepper(pl, c0, c1, d)
				for i, cut := 0, 1; i < n; cut = cut*2 + 1 {
					j := min(i+cut, n)
					ps.run(g0[i:j], g1[i:j])
					loops.runChainLoops(l0[i:j], l1[i:j])
					i = j
				}
				for i := range n {
					if g0[i] != l0[i] || g1[i] != l1[i] {
						t.Fatalf("chain %d, %d states before it, %s, d=%d: sample %d: kernel (%g, %g), loops (%g, %g)", ci, pl.unf.N, form, d, i, g0[i], g1[i], l0[i], l1[i])
					}
				}
				peak := 0.0
				for i := range n {
					peak = math.Max(peak, math.Max(math.Abs(w0[i]), math.Abs(w1[i])))
				}
				if !(peak > 0) {
					t.Fatalf("chain %d, %s, d=%d: the response never left 0", ci, form, d)
				}
				for i := range n {
					if math.Abs(g0[i]-w0[i]) > 1e-12*peak || math.Abs(g1[i]-w1[i]) > 1e-12*peak {
						t.Fatalf("chain %d, %d states before it, %s, d=%d: sample %d: by sections (%.17g, %.17g), dense (%.17g, %.17g)", ci, pl.unf.N, form, d, i, g0[i], g1[i], w0[i], w1[i])
					}
				}
			}
		}
	}
}

// dcGains is the resolvent at z = 1 (lti.Disc.Eval, tested against SciPy)
// for both inputs, and NaN for a loop whose I − A is singular.
func TestDCGainsMatchResolvent(t *testing.T) {
	for _, form := range airframe.Forms() {
		p := demo(form)
		pl, err := NewPlant(p, 0.001)
		if err != nil {
			t.Fatal(err)
		}
		c0, c1 := setpointLanes(t, form, 1, pl.T)
		for d := range 3 {
			L0, L1 := newClosedLoop(pl, c0, d), newClosedLoop(pl, c1, d)
			g0, g1 := L0.dcGains(setpointInput(pl, c1, d))
			resolvent := func(L closedLoop) float64 {
				return real(lti.Disc{N: L.N, A: L.A, B: L.B, C: L.Cy, T: 1}.Eval(1))
			}
			w0, w1 := resolvent(L0), resolvent(L1)
			if L0.dcGain() != g0 || L1.dcGain() != g1 {
				t.Errorf("%s d=%d: dcGain (%.15g, %.15g) is not dcGains (%.15g, %.15g)", form, d, L0.dcGain(), L1.dcGain(), g0, g1)
			}
			if math.Abs(g0-w0) > 1e-12*math.Abs(w0) || math.Abs(g1-w1) > 1e-12*math.Abs(w1) {
				t.Errorf("%s d=%d: dcGains (%.15g, %.15g), resolvent (%.15g, %.15g)", form, d, g0, g1, w0, w1)
			}
			// The delay-free final values (finalValues) against the
			// resolvent of the loop with its delay registers, for the
			// compute delay alone and with whole samples of plant delay.
			for _, whole := range []int{0, 5, 40} {
				pd := pl
				pd.Delay = whole
				L0, L1 := newClosedLoop(pd, c0, d), newClosedLoop(pd, c1, d)
				w0, w1 := resolvent(L0), resolvent(L1)
				f0, f1 := finalValues(pd, c0, c1)
				if math.Abs(f0-w0) > 1e-12*math.Abs(w0) || math.Abs(f1-w1) > 1e-12*math.Abs(w1) {
					t.Errorf("%s d=%d, %d delay samples: finalValues (%.15g, %.15g), resolvent (%.15g, %.15g)", form, d, whole, f0, f1, w0, w1)
				}
			}
		}
	}
	L := closedLoop{N: 2, A: []float64{1, 0, 0, 0.5}, B: []float64{1, 1}, Cy: []float64{1, 1}}
	if g0, g1 := L.dcGains([]float64{0, 1}); !math.IsNaN(g0) || !math.IsNaN(g1) {
		t.Errorf("singular I − A: (%g, %g), want NaN", g0, g1)
	}
}

// pairkernels_gen.go is what its generator makes (regenerate after a
// change to package pairgen).
func TestPairKernelsUpToDate(t *testing.T) {
	want, err := pairgen.Source()
	if err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile("pairkernels_gen.go")
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("pairkernels_gen.go is stale: run %s", pairgen.Command)
	}
}

// The stability test (Schur–Cohn up to maxSchurDegree, the winding number
// beyond) against the eigenvalues of the closed-loop
// state matrix (lti.Disc.Poles, checked against SciPy) on loops whose
// slowest pole creeps towards z = 1 as the integral gain falls: an
// integrating plant, long delays, and integral gains down to where the
// slow pole is 1e-6 inside the circle and χ(1) is a few 1e-13. A stable
// loop must not read as a root on the circle there; the threshold is
// the rounding of Horner's evaluation (Higham, Accuracy and Stability of
// Numerical Algorithms, §5.1, from memory), not a fixed fraction of the
// coefficients.
func TestStabilityMatchesEigenvaluesNearOne(t *testing.T) {
	for _, D := range []int{4, 20, 50, 70, 255} {
		for _, ki := range []float64{3e-3, 3e-4, 1e-4} {
			p := demo(airframe.FormPID)
			p.Plant.Delay = float64(D) / 8000
			pl, err := NewPlant(p, 1.0/8000)
			if err != nil {
				t.Fatal(err)
			}
			c := synth.Controller{Form: airframe.FormPID, Kp: 0.003511, Ki: ki, Kd: 5.587e-05, Tf: 0.0001592, B: 1}
			k, _, err := Realize(c, p.Ctrl, pl.T, math.NaN())
			if err != nil {
				t.Fatal(err)
			}
			ps, err := newClosedLoop(pl, linearize(k), 1).poles()
			if err != nil {
				t.Fatal(err)
			}
			m := stabilityMargin(ps)
			if math.Abs(m) < 1e-9 {
				t.Fatalf("D=%d ki=%g: the reference is undecided (margin %g)", D, ki, m)
			}
			nc, _, dc := k.TF()
			if D+1+len(dc)+len(pl.den) > maxSchurDegree {
				got := windingStable(lti.PolyMul(dc, pl.den).Trim(), lti.PolyMul(nc, pl.num).Trim(), D+1)
				if got != (m > 0) {
					t.Errorf("D=%d ki=%g: winding says stable %v, eigenvalues max |z| = 1 − %.3g", D, ki, got, m)
				}
			}
			if got, err := stable(pl, k, 1); err != nil || got != (m > 0) {
				t.Errorf("D=%d ki=%g: stable says %v (%v), eigenvalues max |z| = 1 − %.3g", D, ki, got, err, m)
			}
		}
	}
}
