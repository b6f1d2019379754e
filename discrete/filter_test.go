package discrete

import (
	"encoding/json"
	"math"
	"math/cmplx"
	"slices"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
	"locusmith/synth"
)

// filterAxis is an invented axis (physical plant 2400 rad/s² per unit,
// motor 30 ms, gyro lowpass 100 Hz) with a feedback chain of a notch and a
// second-order lowpass.
func filterAxis() airframe.Axis {
	return airframe.Axis{
		Name:   "pitch",
		Plant:  airframe.Plant{Model: lti.ZPK{Gain: 2400 / 0.03, Poles: []complex128{0, complex(-1/0.03, 0)}}},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.1, MaxSensitivity: 1.7, MaxSteadyError: 0.02, DisturbanceStep: 0.05},
		Ctrl: airframe.Control{Form: airframe.FormPID, DerivativeLowpassHz: 125, SetpointWeight: 1,
			OutputLimit: [2]float64{-0.5, 0.5}, IntegratorLimit: 0.5, AntiWindup: "none", Discretize: "tustin"},
		Filters: []airframe.Filter{
			{Kind: airframe.FilterNotch, At: "feedback", Hz: 118, WidthHz: 30},
			{Kind: airframe.FilterLowpass, At: "feedback", Hz: 180, Order: 2, Damping: 1 / math.Sqrt2},
		},
	}
}

// filterLoopScript builds the sampled loop in SciPy from its parts: the
// ZOH of the cascade plant → sensor (signal.cont2discrete), the notch
// and the lowpass designed by SciPy itself (signal.iirnotch with
// Q = centre/width, signal.butter at the cutoff, both at fs), the
// controller's polynomials and the compute delay z^−d. It returns the
// true rate's unit setpoint step (signal.dlsim of the closed loop put
// together in state space) and its final value, the sensitivity peak Ms
// (dense grid refined by scipy.optimize.minimize_scalar), the phase margin
// at the gain crossover and the gain margin at the phase crossover of the
// smallest |margin| (crossings by scipy.optimize.brentq), and the
// measured path with the filters at a few points.
const filterLoopScript = `
import sys, json
import numpy as np
from scipy import signal, optimize
def run(d):
    T = d["T"]; fs = 1.0 / T
    Ag, Bg, Cg, Dg = signal.tf2ss(d["g_num"], d["g_den"])
    if len(d["h_den"]) == 1:  # a static sensor: no state (tf2ss gives one at s = 0)
        Ah, Bh, Ch, Dh = np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[d["h_num"][-1] / d["h_den"][0]]])
    else:
        Ah, Bh, Ch, Dh = signal.tf2ss(d["h_num"], d["h_den"])
    ng, nh = Ag.shape[0], Ah.shape[0]
    A = np.block([[Ag, np.zeros((ng, nh))], [Bh @ Cg, Ah]])
    B = np.vstack([Bg, Bh @ Dg])
    C = np.vstack([np.hstack([Dh @ Cg, Ch]), np.hstack([Cg, np.zeros((1, nh))])])
    D = np.vstack([Dh @ Dg, Dg])
    Ad, Bd, Cd, Dd, _ = signal.cont2discrete((A, B, C, D, ), T, method="zoh")
    num, Dp = signal.ss2tf(Ad, Bd, Cd, Dd)
    Nm, Nt = num[0], num[1]
    Nf, Df = np.array([1.0]), np.array([1.0])
    for f in d["filters"]:
        if f["kind"] == "notch":
            b, a = signal.iirnotch(f["hz"], f["hz"] / f["width_hz"], fs=fs)
        else:
            b, a = signal.butter(f["order"], f["hz"], fs=fs)
        Nf, Df = np.polymul(Nf, b), np.polymul(Df, a)
    Nc, Ns, Dc = np.array(d["c_num"]), np.array(d["c_set"]), np.array(d["c_den"])
    # The closed loop in state space (expanded polynomials of this order lose
    # digits near z = 1): plant x, filter chain f, controller c (one
    # realization of [S, -C] over Dc, the transpose of a SIMO tf2ss), and the
    # d-sample delay line q; the map of one sample is linear, so its matrices
    # are read off by applying it to unit vectors.
    Af, Bf, Cf, Dff = signal.tf2ss(Nf, Df)
    n2 = max(len(Ns), len(Nc), len(Dc))
    pad = lambda p: np.concatenate([np.zeros(n2 - len(p)), p])
    As, Bs, Cs, Ds = signal.tf2ss(np.vstack([pad(Ns), -pad(Nc)]), pad(Dc))
    Ac, Bc, Cc, Dc2 = As.T, Cs.T, Bs.T, Ds.T
    nd = d["d"]
    npl, nf, nc = Ad.shape[0], Af.shape[0], Ac.shape[0]
    N = npl + nf + nc + nd
    def tick(s, r):
        xp, xf, xc, q = s[:npl], s[npl:npl+nf], s[npl+nf:npl+nf+nc], s[npl+nf+nc:]
        ym = Cd[0] @ xp
        yf = (Cf @ xf)[0] + Dff[0, 0] * ym if nf else Dff[0, 0] * ym
        v = np.array([r, yf])
        u = (Cc @ xc)[0] + Dc2[0] @ v
        ua = q[-1] if nd else u
        nq = np.concatenate([[u], q[:-1]]) if nd else q
        return np.concatenate([Ad @ xp + Bd[:, 0] * ua, Af @ xf + Bf[:, 0] * ym, Ac @ xc + Bc @ v, nq])
    M = np.column_stack([tick(e, 0.0) for e in np.eye(N)])
    Bm = tick(np.zeros(N), 1.0)
    Ct = np.concatenate([Cd[1], np.zeros(N - npl)])
    _, y, _ = signal.dlsim((M, Bm[:, None], Ct[None, :], np.zeros((1, 1)), T), np.ones(d["n"]))
    def L(w):
        z = np.exp(1j * w * T)
        return z ** (-d["d"]) * np.polyval(Nc, z) / np.polyval(Dc, z) * np.polyval(Nf, z) / np.polyval(Df, z) * np.polyval(Nm, z) / np.polyval(Dp, z)
    if not d["freq"]:
        return {"y": list(y[:, 0]), "final": float(Ct @ np.linalg.solve(np.eye(N) - M, Bm)), "ms": 0, "pm": 0, "gm": None, "meas": []}
    ny = np.pi / T
    w = np.logspace(np.log10(ny) - 5, np.log10(ny * (1 - 1e-9)), 200000)
    Lw = L(w)
    s = 1 / np.abs(1 + Lw)
    i = int(np.argmax(s))
    r = optimize.minimize_scalar(lambda x: -1 / abs(1 + L(x)), bounds=(w[max(i - 1, 0)], w[min(i + 1, len(w) - 1)]), method="bounded", options={"xatol": 1e-12})
    ms = max(s[i], -r.fun)
    pms, gms = [], []
    mag = np.abs(Lw) - 1
    for k in np.nonzero(np.sign(mag[:-1]) != np.sign(mag[1:]))[0]:
        wc = optimize.brentq(lambda x: abs(L(x)) - 1, w[k], w[k + 1], xtol=1e-14)
        ph = np.degrees(np.angle(L(wc)))
        pms.append((180 + ph + 180) % 360 - 180)
    im = np.imag(Lw)
    for k in np.nonzero(np.sign(im[:-1]) != np.sign(im[1:]))[0]:
        if np.real(Lw[k]) >= 0:
            continue
        wp = optimize.brentq(lambda x: np.imag(L(x)), w[k], w[k + 1], xtol=1e-14)
        gms.append(-20 * np.log10(abs(L(wp))))
    pm = min(pms, key=abs)
    gm = min(gms, key=abs) if gms else None
    wn = w[w >= d["noise_lo"]]
    cf = np.abs(np.polyval(Nc, np.exp(1j * wn * T)) / np.polyval(Dc, np.exp(1j * wn * T)) * np.polyval(Nf, np.exp(1j * wn * T)) / np.polyval(Df, np.exp(1j * wn * T)))
    noise = float(np.max(cf))
    pts = []
    for th in d["theta"]:
        z = np.exp(1j * th)
        v = np.polyval(Nm, z) / np.polyval(Dp, z) * np.polyval(Nf, z) / np.polyval(Df, z)
        pts.append([v.real, v.imag])
    final = Ct @ np.linalg.solve(np.eye(N) - M, Bm)
    return {"y": list(y[:, 0]), "final": float(final), "ms": float(ms), "pm": float(pm), "gm": None if gm is None else float(gm), "noise": noise, "meas": pts}
json.dump([run(d) for d in json.load(sys.stdin)], sys.stdout)
`

// scipyFilter is a filter as SciPy designs it in filterLoopScript.
type scipyFilter struct {
	Kind    string  `json:"kind"`
	Hz      float64 `json:"hz"`
	WidthHz float64 `json:"width_hz,omitempty"`
	Order   int     `json:"order,omitempty"`
}

// filterLoopInput is the loop filterLoopScript builds: polynomials in
// descending powers, D the whole samples of delay (compute and
// transport), N the samples of the step.
type filterLoopInput struct {
	T          float64       `json:"T"`
	D          int           `json:"d"`
	N          int           `json:"n"`
	GNum, GDen []float64     `json:"-"`
	HNum, HDen []float64     `json:"-"`
	Filters    []scipyFilter `json:"filters"`
	CNum, CSet []float64     `json:"-"`
	CDen       []float64     `json:"c_den"`
	Theta      []float64     `json:"theta"`
	Freq       bool          `json:"freq"` // compute Ms, the margins, the noise gain and the path at Theta
	NoiseLo    float64       `json:"noise_lo"`
}

// MarshalJSON writes the polynomials under the script's names.
func (f filterLoopInput) MarshalJSON() ([]byte, error) {
	type plain filterLoopInput
	return json.Marshal(struct {
		plain
		GNum []float64 `json:"g_num"`
		GDen []float64 `json:"g_den"`
		HNum []float64 `json:"h_num"`
		HDen []float64 `json:"h_den"`
		CNum []float64 `json:"c_num"`
		CSet []float64 `json:"c_set"`
	}{plain(f), f.GNum, f.GDen, f.HNum, f.HDen, f.CNum, f.CSet})
}

// filterLoopResult is filterLoopScript's answer.
type filterLoopResult struct {
	Y     []float64    `json:"y"`
	Final float64      `json:"final"`
	Ms    float64      `json:"ms"`
	PM    float64      `json:"pm"`
	GM    *float64     `json:"gm"`
	Noise float64      `json:"noise"`
	Meas  [][2]float64 `json:"meas"`
}

// TestFilterLoopAgainstSciPy checks the sampled loop with a notch and a
// lowpass in the feedback path (NewPlant's appended sections) against
// the same loop built in SciPy 1.10 from its parts, with the filters
// designed by SciPy's own iirnotch and butter: the measured path, the
// closed-loop setpoint step, Ms and both margins.
func TestFilterLoopAgainstSciPy(t *testing.T) {
	p := filterAxis()
	T := 0.001
	pl, err := NewPlant(p, T)
	if err != nil {
		t.Fatal(err)
	}
	if len(pl.Sections) != 2 || pl.N != 3+4 {
		t.Fatalf("%d sections, %d states; want 2 and 7", len(pl.Sections), pl.N)
	}
	c := synth.Controller{Form: airframe.FormPID, Kp: 0.03, Ki: 0.27, Kd: 0.0008, Tf: 1 / (2 * math.Pi * 125), B: 1}
	k, _, err := Realize(c, p.Ctrl, T, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	const d = 1
	v, err := Verify(p, pl, k, d)
	if err != nil || !v.Stable {
		t.Fatalf("verify: %v, stable %v", err, v.Stable)
	}
	grid := make([]float64, 4000)
	for i := range grid {
		grid[i] = math.Pi / T * math.Pow(10, -5+5*float64(i)/float64(len(grid)-1)) * (1 - 1e-9)
	}
	ms, _ := sensitivityPeaks(pl, k, d, grid)
	g, _ := p.Plant.Model.TF()
	h, _ := p.Sensor.TF()
	nc, ns, dc := k.TF()
	thetas := []float64{0.01, 0.3, 2 * math.Pi * 118 * T, 1, 2.5}
	in := filterLoopInput{
		T: T, D: d, N: len(v.Y),
		GNum: g.Num.Descending(), GDen: g.Den.Descending(),
		HNum: h.Num.Descending(), HDen: h.Den.Descending(),
		Filters: []scipyFilter{{Kind: "notch", Hz: 118, WidthHz: 30}, {Kind: "lowpass", Hz: 180, Order: 2}},
		CNum:    nc.Descending(), CSet: ns.Descending(), CDen: dc.Descending(),
		Theta: thetas, Freq: true, NoiseLo: v.Margins.Crossover,
	}
	var refs []filterLoopResult
	pyref.Run(t, filterLoopScript, []filterLoopInput{in}, &refs)
	ref := refs[0]
	// The measured path at points of the unit circle, the notch's centre
	// among them (where both are ~0): 1e-8 relative to the unfiltered
	// path's size, the rounding of the companion forms (as in
	// TestPlantZOHAgainstSciPy).
	for i, th := range thetas {
		z := cmplx.Exp(complex(0, th))
		got := pl.Measured().Eval(z)
		want := complex(ref.Meas[i][0], ref.Meas[i][1])
		if cmplx.Abs(got-want) > 1e-8*cmplx.Abs(pl.evalUnfiltered(z)) {
			t.Errorf("measured path at θ=%g: %v, SciPy %v", th, got, want)
		}
		if tf := pl.evalMeasured(z); cmplx.Abs(tf-got) > 1e-7*cmplx.Abs(pl.evalUnfiltered(z)) {
			t.Errorf("measured path at θ=%g: transfer function %v, state space %v", th, tf, got)
		}
		// The polynomials of the stability tests (the path before the
		// chain times the sections' factors) exist and agree too.
		if pl.den == nil {
			t.Fatalf("no transfer function of the path with the chain")
		}
		if tf := pl.num.Eval(z) / pl.den.Eval(z); cmplx.Abs(tf-got) > 1e-7*cmplx.Abs(pl.evalUnfiltered(z)) {
			t.Errorf("measured path at θ=%g: polynomials %v, state space %v", th, tf, got)
		}
	}
	// The step: 1e-9 of the unit step (two realizations of the same loop,
	// rounding only).
	if len(ref.Y) != len(v.Y) {
		t.Fatalf("%d samples, SciPy %d", len(v.Y), len(ref.Y))
	}
	worst := 0.0
	for i := range v.Y {
		worst = math.Max(worst, math.Abs(v.Y[i]-ref.Y[i]))
	}
	if worst > 1e-9 {
		t.Errorf("step differs from SciPy's dlsim by %g", worst)
	}
	// Ms, PM and GM: the same refinement of a smooth function on both
	// sides, 1e-6 relative and 1e-4 degrees / dB.
	if math.Abs(ms-ref.Ms) > 1e-6*ref.Ms {
		t.Errorf("Ms = %.9g, SciPy %.9g", ms, ref.Ms)
	}
	if math.Abs(v.Margins.PhaseDeg-ref.PM) > 1e-4 {
		t.Errorf("phase margin %.7g°, SciPy %.7g°", v.Margins.PhaseDeg, ref.PM)
	}
	if ref.GM == nil || math.Abs(v.Margins.GainDB-*ref.GM) > 1e-4 {
		t.Errorf("gain margin %.7g dB, SciPy %v", v.Margins.GainDB, ref.GM)
	}
	// The noise gain through the chain, |C·F| from the crossover up: the
	// refined peak against SciPy's 200 000-point grid, which lies below
	// it by at most the grid's resolution near the peak (1e-6 relative).
	ng := NoiseGain(k, pl.Sections, grid, v.Margins.Crossover)
	if !(ng >= ref.Noise*(1-1e-9) && ng <= ref.Noise*(1+1e-6)) {
		t.Errorf("noise gain %.9g, SciPy %.9g", ng, ref.Noise)
	}
	if c0 := NoiseGain(k, nil, grid, v.Margins.Crossover); !(ng < c0) {
		t.Errorf("noise gain %g through the lowpass, %g without it: want less", ng, c0)
	}
	t.Logf("with the notch and lowpass: PM %.2f°, GM %.2f dB, Ms %.3f", v.Margins.PhaseDeg, v.Margins.GainDB, ms)

	// The true rate is not filtered: the same plant without the chain
	// has the same true-rate path.
	q := p
	q.Filters = nil
	pq, err := NewPlant(q, T)
	if err != nil {
		t.Fatal(err)
	}
	for _, th := range thetas {
		z := cmplx.Exp(complex(0, th))
		if a, b := pl.TrueRate().Eval(z), pq.TrueRate().Eval(z); cmplx.Abs(a-b) > 1e-12*cmplx.Abs(b) {
			t.Errorf("true rate at θ=%g: %v with the chain, %v without", th, a, b)
		}
	}
}

// TestFilterLongLoop checks the paths of a large loop with the chain: a
// plant of 4 states with 4 sections (12 states, beyond the unrolled
// kernels) and a delay beyond the Schur–Cohn bound (winding number). The
// exact test, the paired simulation and the plain one agree with the
// closed-loop matrix (eigenvalues; the step by the linear recursion).
func TestFilterLongLoop(t *testing.T) {
	p := compliantAxis()
	p.Plant.Delay = 0.07 // 70 samples at 1 kHz
	p.Filters = []airframe.Filter{
		{Kind: airframe.FilterNotch, At: "feedback", Hz: 40, WidthHz: 16},
		{Kind: airframe.FilterNotch, At: "feedback", Hz: 90, WidthHz: 20, DepthDB: 20},
		{Kind: airframe.FilterLowpass, At: "feedback", Hz: 150, Order: 2, Damping: 0.6},
		{Kind: airframe.FilterLowpass, At: "feedback", Hz: 300, Order: 1},
	}
	T := 0.001
	pl, err := NewPlant(p, T)
	if err != nil {
		t.Fatal(err)
	}
	if pl.N != 4+7 || pl.Delay != 70 {
		t.Fatalf("%d states, %d delay samples; want 11 and 70", pl.N, pl.Delay)
	}
	for _, ki := range []float64{0.005, 0.5} {
		c := synth.Controller{Form: airframe.FormPI, Kp: ki / 4, Ki: ki, B: 1}
		k, _, err := Realize(c, p.Ctrl, T, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		const d = 1
		lin := linearize(k)
		if pl.N+d+pl.Delay+lin.M <= maxSchurDegree {
			t.Fatal("the loop does not reach the winding-number path")
		}
		ok, err := stable(pl, k, d)
		if err != nil {
			t.Fatal(err)
		}
		ps, err := newClosedLoop(pl, lin, d).poles()
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("Ki %g: stable %v (margin %.3g)", ki, ok, stabilityMargin(ps))
		if want := stabilityMargin(ps) > 0; ok != want {
			t.Errorf("Ki %g: stable %v, eigenvalues say %v", ki, ok, want)
		}
		if !ok {
			continue
		}
		n := 400
		y := make([]float64, n)
		simulate(pl, lin, d, y, nil)
		y0, y1 := make([]float64, n), make([]float64, n)
		k0 := k
		k0.KpB = 0
		newPairStepper(pl, linearize(k0), lin, d).run(y0, y1)
		L := newClosedLoop(pl, lin, d)
		x := make([]float64, L.N)
		for i := 0; i < n; i++ {
			var yt float64
			for j := range x {
				yt += L.Cy[j] * x[j]
			}
			if math.Abs(yt-y[i]) > 1e-12 || math.Abs(y1[i]-y[i]) > 1e-12 {
				t.Fatalf("Ki %g, sample %d: closed-loop matrix %g, simulate %g, paired %g", ki, i, yt, y[i], y1[i])
			}
			xn := make([]float64, L.N)
			for r := range xn {
				xn[r] = L.B[r]
				for j := range x {
					xn[r] += L.A[r*L.N+j] * x[j]
				}
			}
			x = xn
		}
	}
}

// TestFilterModelMatchesLoop checks the reference model's filter chain
// (Step, in transposed direct form II, float64) against the linear loop
// with the sections in the plant (withSection, SectionSS): in the linear
// range, the model on the plant before the chain and the linear
// simulation give the same true rate to rounding (1e-12 of the step; the
// two sum the same terms in other orders). A textbook identity: a
// realization's output does not depend on where its states sit.
func TestFilterModelMatchesLoop(t *testing.T) {
	p := filterAxis()
	p.Filters = append(p.Filters, airframe.Filter{Kind: airframe.FilterLowpass, At: "feedback", Hz: 300, Order: 1},
		airframe.Filter{Kind: airframe.FilterNotch, At: "feedback", Hz: 70, WidthHz: 14, DepthDB: 12})
	T := 0.001
	pl, err := NewPlant(p, T)
	if err != nil {
		t.Fatal(err)
	}
	c := synth.Controller{Form: airframe.FormPID, Kp: 0.03, Ki: 0.27, Kd: 0.0008, Tf: 1 / (2 * math.Pi * 125), B: 0.6}
	k, _, err := Realize(c, p.Ctrl, T, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	const d, n = 1, 600
	a := 0.01 // far from the output limit: linear
	y, u, _ := simulateNonlinear(pl, k, d, a, n)
	yl, ul := make([]float64, n), make([]float64, n)
	simulate(pl, linearize(k), d, yl, ul)
	peak := 0.0
	for i := range yl {
		peak = math.Max(peak, math.Abs(a*ul[i]))
		if math.Abs(y[i]-a*yl[i]) > 1e-12*a || math.Abs(u[i]-a*ul[i]) > 1e-12*a {
			t.Fatalf("sample %d: model %g, %g; linear loop %g, %g", i, y[i], u[i], a*yl[i], a*ul[i])
		}
	}
	if !(peak < 0.5*k.Hi) {
		t.Fatalf("peak command %g reaches the limit %g: not the linear range", peak, k.Hi)
	}
	// Reset at rest: with the measurement held at m and the setpoint at
	// m, the chain's output stays m (to rounding) and so the command
	// stays the output given to Reset.
	prm := ParamsOf[float64](k)
	prm.Sections = SectionsOf[float64](pl.Sections)
	var st State[float64]
	Reset(&prm, &st, 0.2, 3.5)
	for i := 0; i < 50; i++ {
		if got := Step(&prm, &st, 3.5, 3.5); math.Abs(got-0.2) > 1e-12 {
			t.Fatalf("step %d after a bumpless reset: %g, want 0.2", i, got)
		}
	}
}

// TestFilterRealization checks the float32 realization's view of the
// chain: each section's coefficients in the coefficient table, rounded to
// float32 (the relative error of a round to nearest is at most 2^−24, IEEE
// 754), and the plant rebuilt with given sections (WithSections) equal to
// NewPlant's when they are the same sections.
func TestFilterRealization(t *testing.T) {
	p := filterAxis()
	p.Filters = append(p.Filters, airframe.Filter{Kind: airframe.FilterLowpass, At: "feedback", Hz: 300, Order: 1})
	p.Ctrl.Refine, p.Ctrl.ThirdPole = true, 5
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float32})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, c := range d.Num.Coefficients {
		if strings.HasPrefix(c.Name, "F") {
			names = append(names, c.Name)
			if float64(float32(c.Value)) != c.Quantized || math.Abs(c.RelError) > 0x1p-24 {
				t.Errorf("%s: %g → %g (relative %g)", c.Name, c.Value, c.Quantized, c.RelError)
			}
		}
	}
	want := "F1_B0 F1_B1 F1_B2 F1_A1 F1_A2 F2_B0 F2_B1 F2_B2 F2_A1 F2_A2 F3_B0 F3_B1 F3_A1"
	if got := strings.Join(names, " "); got != want {
		t.Errorf("filter coefficients %s, want %s", got, want)
	}
	if d.Num.quantizedPlant == nil || len(d.Num.quantizedPlant.Sections) != 3 || d.Num.quantizedPlant.Sections[1].A1 != float64(float32(d.Plant.Sections[1].A1)) {
		t.Errorf("the quantized verification does not run the rounded sections")
	}
	q := d.Plant.WithSections(d.Plant.Sections)
	if q.N != d.Plant.N || !slices.Equal(q.A, d.Plant.A) || !slices.Equal(q.B, d.Plant.B) || !slices.Equal(q.Cm, d.Plant.Cm) || !slices.Equal(q.Cy, d.Plant.Cy) {
		t.Errorf("WithSections of the plant's own sections differs from the plant")
	}
}

// TestFeedbackFilterUnformable: an Axis built in code (not parsed, so
// not validated) with a feedback filter that cannot be formed, a notch
// of no width, is an error of the design naming the filter and what is
// allowed, not a panic or a loop designed without it.
func TestFeedbackFilterUnformable(t *testing.T) {
	p := demo(airframe.FormPID)
	p.Filters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "feedback", Hz: 250, WidthHz: 0}}
	_, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float32})
	if err == nil || !strings.Contains(err.Error(), "filter[0]") || !strings.Contains(err.Error(), "must be in") {
		t.Errorf("DesignAxis: %v, want an error naming filter[0] and its allowed width", err)
	}
}
