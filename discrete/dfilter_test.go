package discrete

import (
	"math"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
	"locusmith/synth"
)

// dfiltCoeffs realizes an invented PID (derivative on the error, setpoint
// weight 0.7) at 1 kHz with two derivative filters: a second-order
// Butterworth lowpass at 80 Hz and a full notch at 150 Hz, 40 Hz wide.
// The limits are far out, so that a small signal runs linearly.
func dfiltCoeffs(t *testing.T) Coeffs {
	t.Helper()
	ctl := airframe.Control{Form: airframe.FormPID, DerivativeLowpassHz: 125, DerivativeOnError: true,
		OutputLimit: [2]float64{-1e6, 1e6}, IntegratorLimit: 1e6, AntiWindup: "none", Discretize: "tustin",
		DerivativeFilters: []airframe.Filter{
			{Kind: airframe.FilterLowpass, At: airframe.FilterAtDerivative, Hz: 80, Order: 2, Damping: 1 / math.Sqrt2},
			{Kind: airframe.FilterNotch, At: airframe.FilterAtDerivative, Hz: 150, WidthHz: 40},
		}}
	c := synth.Controller{Form: airframe.FormPID, Kp: 0.03, Ki: 0.5, Kd: 0.0005, Tf: ctl.Tf(), B: 0.7, DerivativeOnError: true}
	k, _, err := Realize(c, ctl, 1e-3, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(k.DSections) != 2 {
		t.Fatalf("%d derivative sections, want 2", len(k.DSections))
	}
	return k
}

// dfiltScript builds the controller in SciPy from its terms (SciPy
// 1.10, numpy 1.24): P and the Tustin integral from the coefficients, the
// filtered derivative Bd·(1 − z⁻¹)/(1 − Ad·z⁻¹), and the derivative
// filters designed by SciPy itself (signal.butter(2, hz, fs) and
// signal.iirnotch(hz, hz/width, fs)), multiplied as polynomials. It
// returns, at the given frequencies, the feedback path C and the setpoint
// path F by signal.freqz, the same from the state-space matrices given
// (linearize), and the command of the controller for the given setpoint
// and measurement sequences by signal.lfilter, u = F·r − C·y.
const dfiltScript = `
import sys, json
import numpy as np
from scipy import signal
d = json.load(sys.stdin)
fs = 1.0 / d["T"]
kp, kpb, g0, g01, ad, bd = d["kp"], d["kpb"], d["g0"], d["g01"], d["ad"], d["bd"]
nf, df = np.array([1.0]), np.array([1.0])
for f in d["filters"]:
    if f["kind"] == "notch":
        b, a = signal.iirnotch(f["hz"], f["hz"] / f["width_hz"], fs=fs)
    else:
        b, a = signal.butter(2, f["hz"], fs=fs)
    nf, df = np.polymul(nf, b), np.polymul(df, a)
# In powers of z^-1: integral (g0 + (g01 - g0) z^-1)/(1 - z^-1), derivative bd (1 - z^-1)/(1 - ad z^-1).
di, dd = np.array([1.0, -1.0]), np.array([1.0, -ad])
ni = np.array([g0, g01 - g0])
nd = bd * np.array([1.0, -1.0])
den = np.polymul(np.polymul(di, dd), df)
rest = np.polymul(np.polymul(ni, dd), df)
dterm = np.polymul(np.polymul(nd, di), nf)
pad = lambda p, n: np.concatenate([p, np.zeros(n - len(p))])
n = max(len(den), len(rest), len(dterm))
cn = pad(kp * den, n) + pad(rest, n) + pad(dterm, n)
fn = pad(kpb * den, n) + pad(rest, n) + pad(dterm, n)
w = np.array(d["w"]) * d["T"]
_, hc = signal.freqz(cn, den, worN=w)
_, hf = signal.freqz(fn, den, worN=w)
A, By, Br, Cc = np.array(d["A"]), np.array(d["By"]), np.array(d["Br"]), np.array(d["Cc"])
m = A.shape[0]
ss_c, ss_f = [], []
for x in w:
    z = np.exp(1j * x)
    M = z * np.eye(m) - A
    ss_c.append(-(Cc @ np.linalg.solve(M, By) + d["Dy"]))
    ss_f.append(Cc @ np.linalg.solve(M, Br) + d["Dr"])
u = signal.lfilter(fn, den, d["r"]) - signal.lfilter(cn, den, d["y"])
c = lambda v: [[float(np.real(x)), float(np.imag(x))] for x in v]
print(json.dumps({"c": c(hc), "f": c(hf), "ss_c": c(ss_c), "ss_f": c(ss_f), "u": list(map(float, u))}))
`

// TestDerivativeFiltersAgainstSciPy holds the controller with derivative
// filters, as the checks see it (feedbackRatio, Coeffs.TF, linearize) and
// as the code runs it (Step), to the same controller built in SciPy from
// its terms with filters SciPy designs itself.
func TestDerivativeFiltersAgainstSciPy(t *testing.T) {
	k := dfiltCoeffs(t)
	lin := linearize(k)
	if lin.M != 3+4 {
		t.Fatalf("linearize: %d states, want 7 (s, ud, vp and two per section)", lin.M)
	}
	ws := []float64{0.5, 5, 30, 100, 2 * math.Pi * 80, 2 * math.Pi * 130, 2 * math.Pi * 150, 2 * math.Pi * 170, 2000, 3000}
	// A setpoint and measurement sequence: steps and a deterministic
	// pseudo-random part, small enough to stay linear.
	n := 400
	r, y := make([]float64, n), make([]float64, n)
	seed := uint32(12345)
	for i := range y {
		seed = seed*1664525 + 1013904223
		y[i] = float64(int32(seed))/(1<<31) + 0.5*float64(i/100%2)
		if i >= 50 {
			r[i] = 1
		}
	}
	// The first step has e = 0: a derivative on the error then starts
	// from rest in the model (it primes its history at the first step, so
	// that there is no kick) as in lfilter.
	y[0] = 0
	A := make([][]float64, lin.M)
	for i := range A {
		A[i] = lin.Ac[i*lin.M : (i+1)*lin.M]
	}
	type filt struct {
		Kind    string  `json:"kind"`
		Hz      float64 `json:"hz"`
		WidthHz float64 `json:"width_hz"`
	}
	in := map[string]any{"T": k.T, "kp": k.Kp, "kpb": k.KpB, "g0": k.G0, "g01": k.G01, "ad": k.Ad, "bd": k.Bd,
		"filters": []filt{{"lowpass", 80, 0}, {"notch", 150, 40}}, "w": ws,
		"A": A, "By": lin.By, "Br": lin.Br, "Cc": lin.Cc, "Dy": lin.Dy, "Dr": lin.Dr, "r": r, "y": y}
	var ref struct {
		C, F, SSC, SSF [][2]float64
		U              []float64
	}
	var raw struct {
		C   [][2]float64 `json:"c"`
		F   [][2]float64 `json:"f"`
		SSC [][2]float64 `json:"ss_c"`
		SSF [][2]float64 `json:"ss_f"`
		U   []float64    `json:"u"`
	}
	pyref.Run(t, dfiltScript, in, &raw)
	ref.C, ref.F, ref.SSC, ref.SSF, ref.U = raw.C, raw.F, raw.SSC, raw.SSF, raw.U
	cx := func(p [2]float64) complex128 { return complex(p[0], p[1]) }
	num, set, den := k.TF()
	// SciPy's filters and ours are the same Tustin designs computed in
	// different orders: they agree to about 1e-13 relative; 1e-9 leaves
	// room for the conditioning of the notch's zeros near its centre and
	// fails on any wrong term (a filter left out moves C by more than 1 %).
	const tol = 1e-9
	for i, w := range ws {
		z := complexExp(w * k.T)
		want, wantF := cx(ref.C[i]), cx(ref.F[i])
		scale := lti.Abs(want)
		for _, g := range []struct {
			name string
			v    complex128
		}{
			{"feedbackRatio", feedback(k, z)},
			{"Coeffs.TF", lti.Div(num.Eval(z), den.Eval(z))},
			{"numericFeedback", numericFeedback(k, z)},
		} {
			if d := lti.Abs(g.v - want); !(d <= tol*scale) {
				t.Errorf("ω = %g: %s C = %v, SciPy %v (|Δ|/|C| = %.2g)", w, g.name, g.v, want, d/scale)
			}
		}
		if d := lti.Abs(cx(ref.SSC[i]) - want); !(d <= tol*scale) {
			t.Errorf("ω = %g: linearize's C = %v, SciPy's product of sections %v", w, cx(ref.SSC[i]), want)
		}
		if d := lti.Abs(lti.Div(set.Eval(z), den.Eval(z)) - wantF); !(d <= tol*lti.Abs(wantF)) {
			t.Errorf("ω = %g: Coeffs.TF's F = %v, SciPy %v", w, lti.Div(set.Eval(z), den.Eval(z)), wantF)
		}
		if d := lti.Abs(cx(ref.SSF[i]) - wantF); !(d <= tol*lti.Abs(wantF)) {
			t.Errorf("ω = %g: linearize's F = %v, SciPy %v", w, cx(ref.SSF[i]), wantF)
		}
	}
	// The notch on the derivative: at its centre the derivative term is
	// gone, and C is P + I there (SciPy's own iirnotch has a zero on the
	// unit circle at the centre).
	z := complexExp(2 * math.Pi * 150 * k.T)
	kb := k
	kb.DSections, kb.Bd = nil, 0
	if got, want := feedback(k, z), feedback(kb, z); lti.Abs(got-want) > 1e-9*lti.Abs(want) {
		t.Errorf("at the notch's centre C = %v, want P + I = %v", got, want)
	}

	// The reference model, which the generated code follows operation for
	// operation, against SciPy's lfilter of the same controller.
	p := ParamsOf[float64](k)
	var st State[float64]
	Reset(&p, &st, 0, 0)
	umax := 0.0
	for _, u := range ref.U {
		umax = math.Max(umax, math.Abs(u))
	}
	for i := range y {
		u := Step(&p, &st, r[i], y[i])
		if d := math.Abs(u - ref.U[i]); !(d <= 1e-9*umax) {
			t.Fatalf("step %d: Step %v, SciPy's lfilter %v", i, u, ref.U[i])
		}
	}
}

// TestDerivativeFilterStateSpace: the closed loop with derivative filters
// (linearize, newClosedLoop) has the poles of the characteristic
// polynomial of Coeffs.TF, both ways of judging stability agree, and the
// margins move as they must: a lowpass on the derivative costs phase at
// high frequency, so the noise gain falls.
func TestDerivativeFilterStateSpace(t *testing.T) {
	p := filterAxis()
	p.Filters = nil
	p.Ctrl.DerivativeFilters = []airframe.Filter{{Kind: airframe.FilterLowpass, At: airframe.FilterAtDerivative, Hz: 60, Order: 2, Damping: 1 / math.Sqrt2}}
	pl, err := NewPlant(p, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	c := synth.Controller{Form: airframe.FormPID, Kp: 0.025, Ki: 0.3, Kd: 0.0004, Tf: p.Ctrl.Tf(), B: 1}
	k, _, err := Realize(c, p.Ctrl, 1e-3, 0)
	if err != nil {
		t.Fatal(err)
	}
	ps, err := newClosedLoop(pl, linearize(k), 1).poles()
	if err != nil {
		t.Fatal(err)
	}
	chi := characteristic(pl, k, 1)
	if chi == nil {
		t.Fatal("no characteristic polynomial")
	}
	// Every eigenvalue of the state-space loop is a root of the
	// polynomial (eigenvalues at 0, of the delay line and of a
	// non-minimal realization, are skipped).
	scale := 0.0
	for _, c := range chi {
		scale += math.Abs(c)
	}
	for _, s := range ps {
		if lti.Abs(s) < 1e-6 {
			continue
		}
		v := chi.Eval(s)
		// |χ(s)| relative to Σ|χ_i|·|s|^i, the size of its terms.
		if r := lti.Abs(v) / scale; r > 1e-9 {
			t.Errorf("eigenvalue %v: |χ| = %.3g relative", s, r)
		}
	}
	ok, err := stable(pl, k, 1)
	if err != nil || ok != (stabilityMargin(ps) > 0) {
		t.Errorf("Schur–Cohn says stable = %v (%v), the eigenvalues %v", ok, err, stabilityMargin(ps))
	}
	k0 := k
	k0.DSections = nil
	grid := []float64{100, 300, 1000, 3000}
	if n1, n0 := NoiseGain(k, nil, grid, 100), NoiseGain(k0, nil, grid, 100); !(n1 < n0) {
		t.Errorf("noise gain with the derivative lowpass %g, without %g: want less", n1, n0)
	}
}
