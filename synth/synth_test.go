package synth

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// demoProblem is a multirotor-like rate loop (demo data): an integrating
// plant with a first-order motor lag, a gyro lowpass and optional delay.
func demoProblem(form airframe.Form, delay float64) airframe.Axis {
	tau := 0.03
	return airframe.Axis{Name: "roll",
		Plant:  airframe.Plant{Model: lti.ZPK{Gain: 2000 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: delay},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08, MinPhaseMargin: 40, MinGainMargin: 6},
		Ctrl: airframe.Control{Form: form, Refine: true, ThirdPole: 5, LeadZero: -20, DerivativeLowpassHz: 125,
			OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "backcalc", Discretize: "tustin"},
	}
}

// Percent overshoot against damping ratio: the standard second-order table
// (Nise, Control Systems Engineering, the %OS–ζ relation; Ogata, Modern
// Control Engineering; values from memory, to the three decimals printed
// there).
func TestZetaFromOvershootTable(t *testing.T) {
	for _, c := range []struct{ mp, zeta float64 }{
		{0.0432, 0.707}, {0.163, 0.500}, {0.05, 0.690}, {0.10, 0.591}, {0.20, 0.456}, {0.25, 0.404},
	} {
		if got := ZetaFromOvershoot(c.mp); math.Abs(got-c.zeta) > 0.0015 {
			t.Errorf("ζ(%.3f) = %.4f, table %.3f", c.mp, got, c.zeta)
		}
		// The inverse relation Mp = exp(−ζπ/√(1−ζ²)) (same sources).
		if got := OvershootFromZeta(ZetaFromOvershoot(c.mp)); math.Abs(got-c.mp) > 1e-12 {
			t.Errorf("round trip %.4f → %.15f", c.mp, got)
		}
	}
}

// The 2 % rule of thumb Ts ≈ 4/(ζωn) (Nise, from memory) against the
// envelope formula: ln(1/(0.02·√(1−ζ²)))/σ = (3.912 + ln(1/√(1−ζ²)))/σ, so
// the rule underestimates by at most ln(1/0.6)/4 ≈ 13 % at ζ = 0.8 and by
// about 2 % at ζ = 0.4; both are its known error.
func TestSettlingRuleOfThumb(t *testing.T) {
	for z := 0.4; z <= 0.8001; z += 0.05 {
		sigma := SigmaFromSettling(z, 0.02, 1)
		rule := 4 / sigma
		if rel := (1 - rule) / 1; rel < -1e-3 || rel > 0.13 {
			t.Errorf("ζ=%.2f: 4/σ = %.4f s against 1 s from the envelope (rel %.3f)", z, rule, rel)
		}
		// The envelope itself: 1/√(1−ζ²)·e^(−σ·Ts) equals the band at Ts.
		if env := math.Exp(-sigma) / math.Sqrt(1-z*z); math.Abs(env-0.02) > 1e-12 {
			t.Errorf("ζ=%.2f: envelope at Ts = %.6g, want 0.02", z, env)
		}
	}
}

// secondOrderProblem makes the closed loop exactly ωn²/(s² + 2ζωn·s + ωn²):
// plant ωn²/(s(s + 2ζωn)), ideal sensor, P gain 1.
func secondOrderProblem(zeta, wn float64) (airframe.Axis, Controller) {
	p := airframe.Axis{Name: "x",
		Plant:  airframe.Plant{Model: lti.ZPK{Gain: wn * wn, Poles: []complex128{0, complex(-2*zeta*wn, 0)}}},
		Sensor: lti.ZPK{Gain: 1},
		Spec:   airframe.Spec{SettlingTime: 4 / (zeta * wn), Band: 0.02, Overshoot: 0.5},
		Ctrl:   airframe.Control{Form: airframe.FormP},
	}
	return p, Controller{Form: airframe.FormP, Kp: 1, B: 1}
}

// Closed-form second-order step (Ogata, Modern airframe.Control Engineering):
// peak time π/ωd, overshoot exp(−ζπ/√(1−ζ²)). The simulation is exact at
// its samples, so the peak value is off only by the curvature over half a
// step, and the peak time by at most half a step h = Ts/200.
func TestSecondOrderStepClosedForm(t *testing.T) {
	for _, z := range []float64{0.3, 0.5, 0.707} {
		wn := 20.0
		p, c := secondOrderProblem(z, wn)
		v, err := Verify(p, c, NewTarget(z, z*wn))
		if err != nil {
			t.Fatal(err)
		}
		wd := wn * math.Sqrt(1-z*z)
		tp := math.Pi / wd
		mp := math.Exp(-z * math.Pi / math.Sqrt(1-z*z))
		if math.Abs(v.Step.PeakTime-tp) > v.H/2+1e-12 {
			t.Errorf("ζ=%.3f: peak time %.6f, closed form %.6f (h = %.2g)", z, v.Step.PeakTime, tp, v.H)
		}
		// |y'' |·(h/2)²/2 bounds the sampled peak's error: y'' ≤ ωn² at the peak.
		if tol := wn * wn * v.H * v.H / 8; math.Abs(v.Step.Overshoot-mp) > tol+1e-12 {
			t.Errorf("ζ=%.3f: overshoot %.6f, closed form %.6f (tol %.2g)", z, v.Step.Overshoot, mp, tol)
		}
		if math.Abs(v.SteadyStateError) > 1e-12 {
			t.Errorf("ζ=%.3f: steady-state error %.3g, want 0 (type-1 loop)", z, v.SteadyStateError)
		}
	}
}

// The classic loop K/(s(s+1)(s+2)): Routh–Hurwitz gives the critical gain
// 6 at ω = √2 rad/s, so the gain margin is 20·log10(6/K) dB (Franklin,
// Powell & Emami-Naeini; any of the REFERENCES texts).
func TestClassicLoopGainMargin(t *testing.T) {
	p := airframe.Axis{Plant: airframe.Plant{Model: lti.ZPK{Gain: 1, Poles: []complex128{0, -1, -2}}}, Sensor: lti.ZPK{Gain: 1},
		Spec: airframe.Spec{SettlingTime: 10, Band: 0.02, Overshoot: 0.5}}
	for _, k := range []float64{0.5, 1, 2, 4} {
		m := LoopMargins(p, Controller{Form: airframe.FormP, Kp: k, B: 1})
		if want := 20 * math.Log10(6/k); math.Abs(m.GainDB-want) > 1e-8 {
			t.Errorf("K=%g: GM %.10f dB, Routh–Hurwitz %.10f dB", k, m.GainDB, want)
		}
		if math.Abs(m.PhaseCrossover-math.Sqrt2) > 1e-8 {
			t.Errorf("K=%g: phase crossover %.10f, want √2", k, m.PhaseCrossover)
		}
		if m.DelayMargin <= 0 || math.Abs(m.DelayMargin-m.PhaseDeg*math.Pi/180/m.Crossover) > 1e-12 {
			t.Errorf("K=%g: delay margin %.6g inconsistent with PM/ωc", k, m.DelayMargin)
		}
	}
	// At K = 6 the closed loop has poles on the imaginary axis at ±j√2.
	cl, err := newClosedLoop(p, Controller{Form: airframe.FormP, Kp: 6, B: 1})
	if err != nil {
		t.Fatal(err)
	}
	ps, _ := cl.char.Roots()
	found := false
	for _, r := range ps {
		if cmplx.Abs(r-complex(0, math.Sqrt2)) < 1e-9 {
			found = true
		}
	}
	if !found {
		t.Errorf("K=6: poles %v, want ±j√2 among them", ps)
	}
}

// Placement: the designed closed loop has the target pole (residual of the
// characteristic equation 1 + C·L at s*, with the exact delay, below 1e-6)
// and, for PID, the third pole; on a delay-free loop the rational closed
// loop's roots include s* to 1e-6 relative.
func TestPlacementHasTargetPole(t *testing.T) {
	for _, delay := range []float64{0, 0.002} {
		for _, f := range []airframe.Form{airframe.FormPI, airframe.FormPD, airframe.FormPID, airframe.FormLead} {
			p := demoProblem(f, delay)
			// Settling times each form reaches with positive gains.
			p.Spec.SettlingTime = map[airframe.Form]float64{airframe.FormPI: 0.3, airframe.FormPD: 0.12, airframe.FormPID: 0.3, airframe.FormLead: 0.3}[f]
			tg, _ := TargetFromSpec(p.Spec)
			c, err := Place(p, tg)
			if err != nil {
				t.Errorf("delay %g %s: %v", delay, f, err)
				continue
			}
			if r := cmplx.Abs(1 + c.Eval(tg.Pole)*p.OpenLoop(tg.Pole)); r > 1e-9 {
				t.Errorf("delay %g %s: |1 + C·L| at s* = %.3g", delay, f, r)
			}
			if delay > 0 {
				continue
			}
			cl, _ := newClosedLoop(p, c)
			ps, _ := cl.char.Roots()
			want := []complex128{tg.Pole}
			if f == airframe.FormPID {
				want = append(want, complex(-p.Ctrl.ThirdPole*tg.Sigma, 0))
			}
			for _, w := range want {
				best := math.Inf(1)
				for _, r := range ps {
					best = math.Min(best, cmplx.Abs(r-w)/cmplx.Abs(w))
				}
				if best > 1e-6 {
					t.Errorf("%s: closed-loop poles %v miss %v (rel %.3g)", f, ps, w, best)
				}
			}
		}
	}
}

// The PI angle condition by hand for an integrator plant 1/s (a textbook
// exercise, from memory): C·L = (Kp·s + Ki)/s² must equal −1 at s*, so
// Kp·s* + Ki = −s*², i.e. Kp = 2σ and Ki = σ² + ωd² = ωn².
func TestPIByHand(t *testing.T) {
	p := airframe.Axis{Plant: airframe.Plant{Model: lti.ZPK{Gain: 1, Poles: []complex128{0}}}, Sensor: lti.ZPK{Gain: 1}, Ctrl: airframe.Control{Form: airframe.FormPI}}
	tg := NewTarget(0.6, 12)
	c, err := Place(p, tg)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(c.Kp-2*tg.Sigma) > 1e-12 || math.Abs(c.Ki-tg.OmegaN*tg.OmegaN) > 1e-9 {
		t.Errorf("Kp = %.12g, Ki = %.12g; want %.12g, %.12g", c.Kp, c.Ki, 2*tg.Sigma, tg.OmegaN*tg.OmegaN)
	}
	w := NewWorking(p, tg.Pole)
	// The integrator's angle is 180° − atan(ωd/σ); the deficiency is what
	// brings the sum to −180°.
	if got, want := w.Terms[0].AngleDeg, 180-deg(math.Atan2(imag(tg.Pole), tg.Sigma)); math.Abs(got-want) > 1e-9 {
		t.Errorf("integrator angle %.9f°, want %.9f°", got, want)
	}
	if got := wrapDeg(w.LoopAngleDeg + w.DeficiencyDeg); math.Abs(got-180) > 1e-9 && math.Abs(got+180) > 1e-9 {
		t.Errorf("loop angle + deficiency = %.9f°, want ±180°", got)
	}
	if math.Abs(w.NeededGain*w.LoopMagnitude-1) > 1e-12 {
		t.Errorf("magnitude condition: %.12g", w.NeededGain*w.LoopMagnitude)
	}
}

// A target that the form cannot reach gives an *InfeasibleError that says
// why and what the form can reach, never negative gains.
func TestInfeasibleSaysWhy(t *testing.T) {
	p := demoProblem(airframe.FormPI, 0.002)
	p.Ctrl.Refine = false
	p.Spec.SettlingTime = 0.05
	_, err := DesignAxis(p, nil)
	var inf *InfeasibleError
	if !errors.As(err, &inf) {
		t.Fatalf("err = %v, want *InfeasibleError", err)
	}
	msg := err.Error()
	for _, want := range []string{"pi cannot place", "< 0", "reaches about"} {
		if !strings.Contains(msg, want) {
			t.Errorf("message %q lacks %q", msg, want)
		}
	}
}

// Refinement: the textbook PID target overshoots far beyond the spec on
// this loop (its closed-loop zeros); the refined design meets overshoot,
// settling and margins of the full-order loop.
func TestRefinementMeetsSpec(t *testing.T) {
	for _, f := range []airframe.Form{airframe.FormPD, airframe.FormPID, airframe.FormLead} {
		d, err := DesignAxis(demoProblem(f, 0.002), nil)
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		if !d.OK() || !d.Met {
			t.Errorf("%s: refined design fails: %+v", f, d.Checks)
		}
		if d.Ctrl.Kp < 0 || d.Ctrl.Ki < 0 || d.Ctrl.Kd < 0 || d.Ctrl.K < 0 {
			t.Errorf("%s: negative gain %+v", f, d.Ctrl)
		}
		if f == airframe.FormPID {
			if d.Textbook == nil {
				t.Fatalf("pid: textbook design missing")
			}
			if d.Textbook.Verif.Step.Overshoot < 2*d.Problem.Spec.Overshoot {
				t.Errorf("pid: textbook overshoot %.3f; expected the closed-loop zero to push it well past the spec", d.Textbook.Verif.Step.Overshoot)
			}
		}
	}
}

// sciLoop is a loop with fixed gains for the SciPy comparison.
type sciLoop struct {
	Name    string       `json:"name"`
	K       float64      `json:"k"`
	Zeros   [][2]float64 `json:"zeros"`
	Poles   [][2]float64 `json:"poles"`
	Delay   float64      `json:"delay"`
	SensorW float64      `json:"sensor_w"` // 0: ideal
	CNum    []float64    `json:"cnum"`     // C(s) numerator, descending powers
	CDen    []float64    `json:"cden"`
	FNum    []float64    `json:"fnum"` // setpoint path numerator over CDen
	Band    float64      `json:"band"`
	Tend    float64      `json:"tend"`
	Pade    int          `json:"pade"`
	WLo     float64      `json:"wlo"`
	WHi     float64      `json:"whi"`
}

type sciResult struct {
	Poles     [][2]float64 `json:"poles"`
	Overshoot float64      `json:"overshoot"`
	Settling  float64      `json:"settling"`
	Rise      float64      `json:"rise"`
	Final     float64      `json:"final"`
	PM        float64      `json:"pm"`
	WC        float64      `json:"wc"`
	GM        *float64     `json:"gm"`
	WP        *float64     `json:"wp"`
}

// sciScript computes, independently of the project, the closed-loop poles
// (numpy.roots of Dc·Dg·Dh + Nc·Ng·Nh, delay by scipy.interpolate.pade),
// the step response (scipy.signal.lsim's exact sampled recursion on a grid
// of 400 001 points, see step) and its metrics, and the margins of C·G·H
// with the exact e^(−jωτ) (scipy.optimize.brentq on a dense log grid).
//
// step gives what lsim((num, den), ones, t) gives, about 15 times faster:
// lsim steps its recursion x[k+1] = Ad·x[k] + Bd in a Python loop, 8 s for
// the seven loops. Under a constant input the state m steps after x is
// Ad^m·x (lsim's free response from x) plus the response from rest over m
// steps, so lsim runs over one block of m steps (from rest, and free from
// each unit state) and the blocks are chained by that superposition; the
// result is held to lsim itself over the first points, to 1e-12 of the
// peak (the two sum the same terms in another order).
const sciScript = `
import json, sys, math
import numpy as np
from scipy import signal, optimize, interpolate

def step(num, den, t, m=1000, check=3000):
    A, B, C, D = signal.tf2ss(num, den)
    n, N = A.shape[0], len(t)
    tb = t[:m + 1]
    _, _, S = signal.lsim((A, B, C, D), np.ones(m + 1), tb)
    P = np.empty((m + 1, n, n))
    for i in range(n):
        _, _, P[:, :, i] = signal.lsim((A, B, C, D), np.zeros(m + 1), tb, X0=np.eye(n)[i])
    x = np.empty((N, n))
    xq = np.zeros(n)
    for q in range(0, N - 1, m):
        k = min(m + 1, N - q)
        x[q:q + k] = P[:k] @ xq + S[:k]
        xq = x[q + k - 1]
    y = x @ C[0] + D[0, 0]
    _, y0, _ = signal.lsim((A, B, C, D), np.ones(check), t[:check])
    err = np.max(np.abs(y[:check] - y0))
    if not err <= 1e-12 * np.max(np.abs(y0)):
        raise SystemExit("step by superposition differs from lsim by %g" % err)
    return y

out = []
for L in json.load(sys.stdin):
    z = [complex(a, b) for a, b in L['zeros']]
    p = [complex(a, b) for a, b in L['poles']]
    ng = np.real(L['k'] * np.poly(z)) if z else np.array([L['k']])
    dg = np.real(np.poly(p))
    if L['delay'] > 0:
        tay = [(-L['delay'])**i / math.factorial(i) for i in range(2*L['pade']+1)]
        pn, pd = interpolate.pade(tay, L['pade'])
        ng = np.polymul(ng, pn.coeffs); dg = np.polymul(dg, pd.coeffs)
    if L['sensor_w'] > 0:
        nh, dh = np.array([L['sensor_w']]), np.array([1.0, L['sensor_w']])
    else:
        nh, dh = np.array([1.0]), np.array([1.0])
    nc, dc, nf = np.array(L['cnum']), np.array(L['cden']), np.array(L['fnum'])
    char = np.polyadd(np.polymul(np.polymul(dc, dg), dh), np.polymul(np.polymul(nc, ng), nh))
    num = np.polymul(np.polymul(ng, nf), dh)
    roots = np.roots(char)
    final = np.polyval(num, 0) / np.polyval(char, 0)
    t = np.linspace(0, L['tend'], 400001)
    y = step(num, char, t)
    over = max(0.0, (y.max() - final) / final)
    out_idx = np.nonzero(np.abs(y - final) > L['band'] * abs(final))[0]
    if len(out_idx) == 0:
        ts = 0.0
    else:
        k = out_idx[-1]
        e0, e1 = abs(y[k] - final), abs(y[k+1] - final)
        tol = L['band'] * abs(final)
        ts = t[k] + (t[k+1] - t[k]) * (e0 - tol) / (e0 - e1)
    def cross(level):
        k = np.nonzero(y >= level * final)[0][0]
        return t[k-1] + (t[k] - t[k-1]) * (level*final - y[k-1]) / (y[k] - y[k-1])
    rise = cross(0.9) - cross(0.1)
    def Lw(w):
        s = 1j * w
        v = np.polyval(nc, s) / np.polyval(dc, s) * np.polyval(np.real(L['k'] * np.poly(z)) if z else np.array([L['k']]), s) / np.polyval(np.real(np.poly(p)), s)
        v = v * np.polyval(nh, s) / np.polyval(dh, s) * np.exp(-s * L['delay'])
        return v
    ws = np.logspace(math.log10(L['wlo']), math.log10(L['whi']), 40001)
    mag = np.abs(Lw(ws))
    gc = [optimize.brentq(lambda w: abs(Lw(w)) - 1, ws[i], ws[i+1], xtol=1e-14, rtol=1e-14)
          for i in range(len(ws)-1) if (mag[i]-1)*(mag[i+1]-1) < 0]
    pms = [((180 + math.degrees(np.angle(Lw(w)))) + 180) % 360 - 180 for w in gc]
    i = int(np.argmin(np.abs(pms)))
    res = {'poles': [[r.real, r.imag] for r in roots], 'overshoot': over, 'settling': ts, 'rise': rise,
           'final': final, 'pm': pms[i], 'wc': gc[i], 'gm': None, 'wp': None}
    im = np.imag(Lw(ws)); re = np.real(Lw(ws))
    pc = [optimize.brentq(lambda w: np.imag(Lw(w)), ws[i], ws[i+1], xtol=1e-14, rtol=1e-14)
          for i in range(len(ws)-1) if im[i]*im[i+1] < 0 and re[i] < 0]
    if pc:
        gms = [-20*math.log10(abs(Lw(w))) for w in pc]
        j = int(np.argmin(np.abs(gms)))
        res['gm'], res['wp'] = gms[j], pc[j]
    out.append(res)
json.dump(out, sys.stdout)
`

func toPairs(rs []complex128) [][2]float64 {
	out := make([][2]float64, len(rs))
	for i, r := range rs {
		out[i] = [2]float64{real(r), imag(r)}
	}
	return out
}

// TestAgainstSciPy compares closed-loop poles, step metrics and margins of
// loops with PI, PD, PID and lead controllers, with and without a sensor
// pole and a transport delay, against SciPy and NumPy (Debian's
// python3-scipy; version in the log).
//
// Tolerances: poles 1e-7 relative (both are eigenvalue solvers on the
// same, moderately conditioned polynomial); overshoot 2e-4 absolute and
// settling/rise 0.6 % of the settling time (the simulation resolves time to
// Ts/200 = 0.5 %, SciPy's grid is 400× finer); margins 1e-6 (both refine
// crossings to near machine precision; the delay's phase is exact in both).
func TestAgainstSciPy(t *testing.T) {
	type tc struct {
		name  string
		form  airframe.Form
		delay float64
		w     float64 // sensor pole, 0 for ideal
		c     Controller
	}
	tf := 1 / (2 * math.Pi * 125)
	cases := []tc{
		{"pi ideal sensor", airframe.FormPI, 0, 0, Controller{Form: airframe.FormPI, Kp: 0.0075, Ki: 0.024, B: 1}},
		{"pi b=0.7 delay", airframe.FormPI, 0.002, 628.3, Controller{Form: airframe.FormPI, Kp: 0.0075, Ki: 0.024, B: 0.7}},
		{"pd sensor", airframe.FormPD, 0, 628.3, Controller{Form: airframe.FormPD, Kp: 0.0093, Kd: 0.00012, Tf: tf, B: 1}},
		{"pid sensor delay", airframe.FormPID, 0.002, 628.3, Controller{Form: airframe.FormPID, Kp: 0.0314, Ki: 0.271, Kd: 0.00079, Tf: tf, B: 0.5}},
		{"pid ideal, D on error", airframe.FormPID, 0, 0, Controller{Form: airframe.FormPID, Kp: 0.02, Ki: 0.15, Kd: 0.0004, Tf: tf, B: 1, DerivativeOnError: true}},
		{"lead delay", airframe.FormLead, 0.0015, 628.3, Controller{Form: airframe.FormLead, K: 0.0099, Zero: -20, Pole: -25.2}},
		{"p sensor", airframe.FormP, 0, 628.3, Controller{Form: airframe.FormP, Kp: 0.006, B: 1}},
	}
	var in []sciLoop
	var probs []airframe.Axis
	for _, c := range cases {
		p := demoProblem(c.form, c.delay)
		if c.w == 0 {
			p.Sensor = lti.ZPK{Gain: 1}
		} else {
			c.w = -real(p.Sensor.Poles[0])
		}
		p.Spec.SettlingTime = 0.3
		probs = append(probs, p)
		ctf, ftf := c.c.TF(), c.c.Setpoint()
		in = append(in, sciLoop{Name: c.name, K: p.Plant.Model.Gain, Poles: toPairs(p.Plant.Model.Poles), Zeros: toPairs(p.Plant.Model.Zeros),
			Delay: c.delay, SensorW: c.w, CNum: ctf.Num.Descending(), CDen: ctf.Den.Descending(), FNum: ftf.Num.Descending(), Band: 0.02, Tend: 3, Pade: PadeOrder,
			WLo: 1e-3, WHi: 1e5})
	}
	var ref []sciResult
	pyref.Run(t, sciScript, in, &ref)
	ver, _ := pyref.Versions()
	t.Logf("reference: %s", ver)
	for i, c := range cases {
		p, r := probs[i], ref[i]
		v, err := Verify(p, c.c, NewTarget(0.7, 10))
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		var want []complex128
		for _, q := range r.Poles {
			want = append(want, complex(q[0], q[1]))
		}
		if d := lti.RootDistance(v.Poles, want); d > 1e-7 {
			t.Errorf("%s: poles %v, SciPy %v (rel %.3g)", c.name, v.Poles, want, d)
		}
		ts := p.Spec.SettlingTime
		if math.Abs(v.Step.Overshoot-r.Overshoot) > 2e-4 {
			t.Errorf("%s: overshoot %.6f, SciPy %.6f", c.name, v.Step.Overshoot, r.Overshoot)
		}
		if math.Abs(v.Step.Settling-r.Settling) > 0.006*ts {
			t.Errorf("%s: settling %.6f, SciPy %.6f", c.name, v.Step.Settling, r.Settling)
		}
		if math.Abs(v.Step.Rise-r.Rise) > 0.006*ts {
			t.Errorf("%s: rise %.6f, SciPy %.6f", c.name, v.Step.Rise, r.Rise)
		}
		if math.Abs(v.Margins.PhaseDeg-r.PM) > 1e-6 || math.Abs(v.Margins.Crossover-r.WC) > 1e-6*r.WC {
			t.Errorf("%s: PM %.9f° at %.9f, SciPy %.9f° at %.9f", c.name, v.Margins.PhaseDeg, v.Margins.Crossover, r.PM, r.WC)
		}
		if r.GM != nil && (math.Abs(v.Margins.GainDB-*r.GM) > 1e-6 || math.Abs(v.Margins.PhaseCrossover-*r.WP) > 1e-6**r.WP) {
			t.Errorf("%s: GM %.9f dB at %.9f, SciPy %.9f at %.9f", c.name, v.Margins.GainDB, v.Margins.PhaseCrossover, *r.GM, *r.WP)
		}
		if r.GM == nil && !math.IsInf(v.Margins.GainDB, 1) {
			t.Errorf("%s: GM %.6g, SciPy found no phase crossover", c.name, v.Margins.GainDB)
		}
	}
}

// FuzzDesign designs random plants and specs: no panic, and every
// returned design has non-negative gains.
func FuzzDesign(f *testing.F) {
	f.Add(2000.0, 0.03, 0.002, 100.0, 0.15, 0.08, uint8(3))
	f.Add(300.0, 0.05, 0.0, 0.0, 0.3, 0.1, uint8(1))
	f.Add(1.0, 1.0, 0.5, 1.0, 0.01, 0.5, uint8(4))
	f.Fuzz(func(t *testing.T, eff, tau, delay, hz, ts, os float64, form uint8) {
		if !(eff > 0 && eff < 1e6 && tau > 1e-4 && tau < 10 && delay >= 0 && delay < 0.5 && hz >= 0 && hz < 1e4 && ts > 1e-3 && ts < 100 && os > 0.001 && os < 0.99) {
			t.Skip()
		}
		if delay > ts/2 {
			// A delay beyond half the settling time makes the spec
			// infeasible, and the search for a small feasible set then
			// spends its whole budget on the Padé-delayed loop: 4–6 s an
			// input (1.3 s at half), over the fuzzing engine's limit of
			// about 10 s an input once instrumented for coverage, which
			// it reports as a hung process. The infeasible verdicts are
			// tested in package discrete (reach_test.go).
			t.Skip()
		}
		p := demoProblem(airframe.Forms()[int(form)%len(airframe.Forms())], delay)
		p.Plant.Model = lti.ZPK{Gain: eff / tau, Poles: []complex128{0, complex(-1/tau, 0)}}
		if hz > 0 {
			p.Sensor = lti.ZPK{Gain: 2 * math.Pi * hz, Poles: []complex128{complex(-2*math.Pi*hz, 0)}}
		} else {
			p.Sensor = lti.ZPK{Gain: 1}
		}
		p.Spec.SettlingTime, p.Spec.Overshoot = ts, os
		d, err := DesignAxis(p, nil)
		if err != nil {
			return
		}
		if c := d.Ctrl; c.Kp < 0 || c.Ki < 0 || c.Kd < 0 || c.K < 0 {
			t.Fatalf("negative gain: %+v", c)
		}
	})
}

// BenchmarkDesignAxis: continuous design with refinement and full
// verification of one PID axis (target ≤ 2 ms, ≤ 1 MB).
func BenchmarkDesignAxis(b *testing.B) {
	p := demoProblem(airframe.FormPID, 0.002)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := DesignAxis(p, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// A first-order plant under P control has a real closed-loop pole only:
// the locus never meets the damping line, so P places the real pole at
// −σ of the spec, K = (σ − a)/k for k/(s + a) (closed loop k·K/(s + a + k·K)).
func TestPFirstOrderPlacesRealPole(t *testing.T) {
	p := airframe.Axis{Plant: airframe.Plant{Model: lti.ZPK{Gain: 500, Poles: []complex128{-10}}}, Sensor: lti.ZPK{Gain: 1},
		Spec: airframe.Spec{SettlingTime: 0.1, Band: 0.02, Overshoot: 0.05}, Ctrl: airframe.Control{Form: airframe.FormP}}
	c, tg, err := PlaceP(p, ZetaFromOvershoot(0.05))
	if err != nil {
		t.Fatal(err)
	}
	sigma := SigmaFromSettling(ZetaFromOvershoot(0.05), 0.02, 0.1)
	if want := (sigma - 10) / 500; math.Abs(c.Kp-want) > 1e-9*want || real(tg.Pole) != -sigma {
		t.Errorf("Kp = %.12g at %v, want %.12g at −%.12g", c.Kp, tg.Pole, want, sigma)
	}
}

// Crossover (magnitude only) is the crossover LoopMargins reports, for
// every form, with and without delay, over a range of gains; and |C·L| = 1
// there (the definition).
func TestCrossoverMatchesMargins(t *testing.T) {
	for _, form := range airframe.Forms() {
		for _, delay := range []float64{0, 0.002} {
			p := demoProblem(form, delay)
			for _, scale := range []float64{0.3, 1, 3} {
				c := Controller{Form: form, Kp: 0.04 * scale, Ki: 0.4 * scale, Kd: 0.0008 * scale, Tf: 0.0013, B: 1, K: 0.5 * scale, Zero: -20, Pole: -90}
				got, want := Crossover(p, c), LoopMargins(p, c).Crossover
				if math.Abs(got-want) > 1e-9*want {
					t.Errorf("%s delay %g ×%g: Crossover %.12g, LoopMargins %.12g", form, delay, scale, got, want)
				}
				s := complex(0, got)
				if v := cmplx.Abs(c.Eval(s) * p.OpenLoop(s)); math.Abs(v-1) > 1e-9 {
					t.Errorf("%s delay %g ×%g: |C·L| = %.12g at the crossover", form, delay, scale, v)
				}
				for _, w := range []float64{0.1, 3, 40, 700, 2e4} {
					s := complex(0, w)
					want := cmplx.Abs(c.Eval(s) * p.OpenLoop(s))
					if got := loopMag2(p, c)(w); math.Abs(got-want*want) > 1e-12*want*want {
						t.Errorf("%s ×%g: |C·L|² at %g = %.15g, complex evaluation %.15g", form, scale, w, got, want*want)
					}
				}
			}
		}
	}
}

// Above fallingAbove the loop gain does not increase (checked on a fine
// grid over three decades), and the margins that stop there are those of
// the whole sweep, for every form, with and without delay, over a range of
// gains — and for a loop with a resonance.
func TestFallingMarginsMatchFull(t *testing.T) {
	check := func(name string, p airframe.Axis, c Controller) {
		t.Helper()
		wf := fallingAbove(p, c)
		if math.IsInf(wf, 1) {
			t.Fatalf("%s: no falling bound", name)
		}
		prev := math.Inf(1)
		for i := 0; i <= 3000; i++ {
			w := wf * math.Pow(10, 3*float64(i)/3000)
			s := complex(0, w)
			v := cmplx.Abs(c.Eval(s) * p.OpenLoop(s))
			if v > prev*(1+1e-12) {
				t.Fatalf("%s: |L| rises at %g rad/s above the bound %g", name, w, wf)
			}
			prev = v
		}
		lo, hi, n := marginSpan(p, c)
		full := lti.LoopMargins(func(w float64) complex128 { s := complex(0, w); return c.Eval(s) * p.OpenLoop(s) }, lo, hi, n)
		got := loopMargins(p, c)
		if got.GainDB != full.GainDB || got.PhaseDeg != full.PhaseDeg || got.Crossover != full.Crossover ||
			got.PhaseCrossover != full.PhaseCrossover || got.DelayMargin != full.DelayMargin {
			t.Errorf("%s: margins %+v, full sweep %+v", name, got, full)
		}
	}
	for _, form := range airframe.Forms() {
		for _, delay := range []float64{0, 0.002} {
			p := demoProblem(form, delay)
			for _, scale := range []float64{0.3, 1, 3} {
				c := Controller{Form: form, Kp: 0.04 * scale, Ki: 0.4 * scale, Kd: 0.0008 * scale, Tf: 0.0013, B: 1, K: 0.5 * scale, Zero: -20, Pole: -90}
				check(fmt.Sprintf("%s delay %g ×%g", form, delay, scale), p, c)
			}
		}
	}
	p := demoProblem(airframe.FormPID, 0.001)
	p.Plant.Model.Poles = append(p.Plant.Model.Poles, complex(-5, 300), complex(-5, -300))
	p.Plant.Model.Gain *= 300 * 300
	check("resonance", p, Controller{Form: airframe.FormPID, Kp: 0.04, Ki: 0.4, Kd: 0.0008, Tf: 0.0013, B: 1})
}

// TestLeadNote: a lead whose pole lies within 5 % of its zero is called a
// gain, with its largest phase lead asin((r − 1)/(r + 1)) (the classical
// lead's maximum phase, from memory: r = 1.02 gives 0.567°); a real lead,
// a lag (pole right of the zero, which refine = false can keep), or
// another form, gets no note.
func TestLeadNote(t *testing.T) {
	c := Controller{Form: airframe.FormLead, K: 0.1005, Zero: -40, Pole: -40.8}
	want := "the lead's pole lies within 2 % of its zero (phase lead at most 0.57°): it acts as a gain of about 0.1005, and a p controller would do the same with one state less"
	if got := leadNote(c); got != want {
		t.Errorf("leadNote = %q, want %q", got, want)
	}
	for _, c := range []Controller{
		{Form: airframe.FormLead, K: 1, Zero: -40, Pole: -44},
		{Form: airframe.FormLead, K: 1, Zero: -40, Pole: -5}, // a lag (refine = false)
		{Form: airframe.FormLead, K: 1, Zero: -40, Pole: -39.9},
		{Form: airframe.FormPI, Kp: 1, Ki: 1},
	} {
		if got := leadNote(c); got != "" {
			t.Errorf("leadNote(%+v) = %q, want none", c, got)
		}
	}
}
