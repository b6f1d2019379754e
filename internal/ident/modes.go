package ident

import (
	"cmp"
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/gonum/mat"

	"locusmith/internal/lti"
)

// Modes: lightly damped pole pairs (with their zeros where the data demand
// them) fitted on top of a low-order model, from a frequency-response
// estimate.
//
// Method. The estimate Ĥ is divided by the low-order model M, and the
// ratio R = Ĥ/M is fitted by
//
//	R(jω) ≈ c · e^{−jωδ} · Πᵢ Fᵢ(jω),
//	Fᵢ(s) = (ωpᵢ²/ωzᵢ²) · (s² + 2ζzᵢωzᵢ·s + ωzᵢ²)/(s² + 2ζpᵢωpᵢ·s + ωpᵢ²)
//
// with M the low-order continuous model and its delay, ZOH{·} the exact
// zero-order-hold equivalent (what the log's samples see; a mode near the
// Nyquist frequency is not the continuous factor times the sampled
// low-order model), Fᵢ unit gain at DC (a pole-only mode has no
// numerator but ωpᵢ²), and c and δ nuisance terms that absorb a small error of the low-order model's
// gain and delay. The fit is weighted least squares on the complex
// residuals, each frequency weighted by the inverse variance of the
// estimate, |Ĥ|²·(1 − γ²)/(2·K·γ²) for the open-loop H1 estimate (twice
// that for the closed-loop ratio) with γ² the coherence and K the
// averages (Bendat & Piersol, Random Data, ch. 9, from memory); c is
// solved linearly (variable projection), the rest by Levenberg–Marquardt
// from a grid of starts.
//
// Acceptance. A mode is kept only when the data demand it: its two
// parameters must lower the weighted squared error χ² by more than the
// 99.9 % point of χ² with 2 degrees of freedom (13.8; a likelihood-ratio
// test, Ljung, System Identification, §16.4, from memory), its damping
// must be below MaxModeDamping, its frequency inside the band where the
// estimate is coherent, and the estimate of the held-out part of the log
// must agree (χ² lower with the mode than without). A zero pair is added
// to a mode by the same test. Confidence intervals are ±1.96 standard
// errors from the Jacobian at the optimum, scaled by the reduced χ² when
// it exceeds 1 and widened for the correlation of neighbouring
// frequencies' errors, which the weights ignore (errorCorrelation).

// MaxModeDamping is the largest damping ratio reported as a lightly damped
// mode: above it the pair is not a resonance a notch would treat (a
// common practice threshold for notch design; the peak of a pole pair
// vanishes at ζ = 1/√2).
const MaxModeDamping = 0.3

// errorCorrelation is the factor by which the errors of neighbouring
// frequencies, correlated by the window and the overlap, widen the
// variance of a parameter that many frequencies determine (for a
// Jacobian smooth over a few bins, Σ over lags of the errors'
// correlation). With a Hann window the Fourier coefficients of one
// segment at bins k and k+1 correlate by −2/3, at k+2 by 1/6 (the
// coefficients of w² = 3/8 − cos/2 + cos(2·)/8 over its mean), and the
// errors of spectral estimates by the squares, 4/9 and 1/36: 1 + 2·(4/9 +
// 1/36). Half-overlapping Hann segments add 1 + 2·0.167² (Welch 1967,
// the correlation of neighbouring segments' periodograms, from memory).
const errorCorrelation = (1 + 2*(4.0/9+1.0/36)) * (1 + 2*0.167*0.167)

// modeChi2 is the 99.9 % point of χ² with two degrees of freedom,
// −2·ln(0.001) = 13.8: the drop in χ² that two more parameters must give.
const modeChi2 = 13.815510557964274

// Interval is an estimate with its 95 % confidence interval.
type Interval struct {
	Value, Lo, Hi float64
}

// Mode is a fitted lightly damped pole pair and, when the data demand it,
// its zero pair.
type Mode struct {
	Hz, Damping Interval
	// ZeroHz and ZeroDamping are the zero pair (nil without one).
	ZeroHz, ZeroDamping *Interval
	// Drop is the fall of χ² the mode gives on the fitted part; Held the
	// relative fall on the held-out part, (χ²without − χ²with)/χ²without.
	Drop, Held float64
}

// Estimate is a frequency-response estimate with what its variance needs.
type Estimate struct {
	*FreqResponse
	// Averages is the number of segments averaged (Spectra.Averages).
	Averages int
}

// variance returns the variance of the estimate at bin k (NaN where it
// has none).
func (e Estimate) variance(k int) float64 {
	g := e.Coherence[k]
	if !(g > 0) || math.IsNaN(real(e.H[k])) {
		return math.NaN()
	}
	a := cmplx.Abs(e.H[k])
	v := a * a * (1 - g) / (2 * float64(e.Averages) * g)
	if e.Method != "" && e.Method[0] == 'c' { // closed loop: a ratio of two estimates
		v *= 2
	}
	return v
}

// ModeOptions tune FitModes.
type ModeOptions struct {
	// Plant is the low-order continuous model (command → measured rate,
	// sensor included), Delay its transport delay (s) and T the sample
	// period of the log: the estimate is of the sampled plant, so each
	// candidate is the zero-order-hold equivalent of Plant·ΠFᵢ with the
	// delay (lti.ZOHDelay), exactly what the log's samples see.
	Plant lti.ZPK
	Delay float64
	T     float64
	// MaxModes is the most modes fitted (default 2).
	MaxModes int
	// MinCoherence is the least coherence of a frequency used (default 0.5).
	MinCoherence float64
	// MaxHz is the highest frequency used (default: all).
	MaxHz float64
}

// ratioData is the estimate Ĥ at the usable frequencies.
type ratioData struct {
	w  []float64    // rad/s
	r  []complex128 // Ĥ
	s  []float64    // 1/standard deviation of Ĥ
	df float64      // the estimate's frequency spacing, Hz
}

func newRatio(e Estimate, opt ModeOptions) ratioData {
	var d ratioData
	if len(e.Hz) > 1 {
		d.df = e.Hz[1] - e.Hz[0]
	}
	for k, hz := range e.Hz {
		if hz <= 0 || opt.MaxHz > 0 && hz > opt.MaxHz || !(e.Coherence[k] >= opt.MinCoherence) {
			continue
		}
		v := e.variance(k)
		if !(v > 0) {
			continue
		}
		d.w = append(d.w, 2*math.Pi*hz)
		d.r = append(d.r, e.H[k])
		d.s = append(d.s, 1/math.Sqrt(v))
	}
	return d
}

// hannKernel returns the offsets (in frequency bins) and weights of the
// smoothing a Welch estimate with a Hann window applies to a response:
// for a white input the expected estimate at bin k is Σ K(x)·G(f_k +
// x·Δf)/Σ K(x) with K(x) = |W(x)|² the window's power spectrum,
// (0.5·sinc(x) + 0.25·sinc(x − 1) + 0.25·sinc(x + 1))² for a long
// segment (Harris, "On the use of windows for harmonic analysis with the
// discrete Fourier transform", Proc. IEEE 66, 1978, from memory; Bendat
// & Piersol on resolution bias). A lightly damped mode is narrower than
// a few bins, and without the smoothing its fitted damping comes out
// high. Offsets ±3 bins by quarters.
func hannKernel() ([]float64, []float64) {
	sinc := func(x float64) float64 {
		if x == 0 {
			return 1
		}
		return math.Sin(math.Pi*x) / (math.Pi * x)
	}
	var xs, ks []float64
	var sum float64
	for i := -12; i <= 12; i++ {
		x := float64(i) / 4
		w := 0.5*sinc(x) + 0.25*sinc(x-1) + 0.25*sinc(x+1)
		xs, ks = append(xs, x), append(ks, w*w)
		sum += w * w
	}
	for i := range ks {
		ks[i] /= sum
	}
	return xs, ks
}

// modeShape is the parameter vector: δ, then per mode ln ωp, ζp and, for
// a mode with zeros, ln ωz, ζz; opt gives the low-order plant.
type modeShape struct {
	zeros  []bool // per mode
	opt    *ModeOptions
	kx, kw []float64 // hannKernel
}

func (ms modeShape) with(zeros []bool) modeShape {
	ms.zeros = zeros
	return ms
}

// sampled returns e^{−jωδ} times the sampled response of Plant·ΠFᵢ at θ
// with the delay, as a function of ω (rad/s), and the centre frequencies (rad/s) and half-power
// bandwidths of the modes' pole and zero pairs; ok is false when the model
// cannot be sampled.
func (ms modeShape) sampled(th []float64) (func(w float64) complex128, [][2]float64, bool) {
	z := ms.opt.Plant
	z.Zeros, z.Poles = slices.Clone(z.Zeros), slices.Clone(z.Poles)
	var sharp [][2]float64
	i := 1
	for _, hasZero := range ms.zeros {
		wp, zp := math.Exp(th[i]), th[i+1]
		i += 2
		z.Gain *= wp * wp
		z.Poles = append(z.Poles, rootsOfPair(wp, zp)...)
		sharp = append(sharp, [2]float64{wp, 2 * zp * wp})
		if hasZero {
			wz, zz := math.Exp(th[i]), th[i+1]
			i += 2
			z.Gain /= wz * wz
			z.Zeros = append(z.Zeros, rootsOfPair(wz, zz)...)
			sharp = append(sharp, [2]float64{wz, 2 * zz * wz})
		}
	}
	ss, err := z.CascadeSS()
	if err != nil {
		return nil, nil, false
	}
	whole, frac := lti.SplitDelay(ms.opt.Delay, ms.opt.T)
	dd, err := lti.ZOHDelay(ss, ms.opt.T, frac)
	if err != nil {
		return nil, nil, false
	}
	eval := dd.Eval
	// The rational form is a few complex multiplications per frequency
	// against a linear solve; it is used where it agrees with the
	// resolvent (as discrete.Plant does).
	if tf, err := dd.TF(); err == nil {
		good := true
		for _, th := range []float64{1e-3, 0.1, 1, 2, 3} {
			zk := cmplx.Exp(complex(0, th))
			if want := dd.Eval(zk); !(cmplx.Abs(tf.Eval(zk)-want) <= 1e-9*cmplx.Abs(want)) {
				good = false
				break
			}
		}
		if good {
			eval = tf.Eval
		}
	}
	// The rotation by the whole samples of delay and δ, e^{−jω·(d·T + δ)},
	// and z = e^{jωT}: one sine and cosine each.
	wd := float64(whole)*ms.opt.T + th[0]
	return func(w float64) complex128 {
		sn, cs := math.Sincos(w * ms.opt.T)
		sd, cd := math.Sincos(w * wd)
		return eval(complex(cs, sn)) * complex(cd, -sd)
	}, sharp, true
}

// response returns the expected estimate of the model at θ on the
// frequencies of d, e^{−jωδ} times the sampled response, smoothed by the
// window near the modes (within three half-power bandwidths, but not
// beyond twelve bins and at least two: where the response bends within a
// few bins; further out the smoothing changes nothing the data could
// show, and at low frequency, in closed loop, the estimate is not the
// window's average of the plant); nil when the model cannot be sampled.
func (ms modeShape) response(d ratioData, th []float64, g []complex128) []complex128 {
	at, sharp, ok := ms.sampled(th)
	if !ok {
		return nil
	}
	dw := 2 * math.Pi * d.df
	g = g[:0]
	for _, w := range d.w {
		near := false
		for _, sp := range sharp {
			if math.Abs(w-sp[0]) < math.Max(2*dw, math.Min(3*sp[1], 12*dw)) {
				near = true
				break
			}
		}
		if !near || dw == 0 {
			g = append(g, at(w))
			continue
		}
		var v complex128
		for j, x := range ms.kx {
			v += complex(ms.kw[j], 0) * at(w+x*dw)
		}
		g = append(g, v)
	}
	return g
}

// rootsOfPair returns the roots of s² + 2ζω·s + ω² (0 < ζ < 1).
func rootsOfPair(w, zeta float64) []complex128 {
	im := w * math.Sqrt(1-zeta*zeta)
	return []complex128{complex(-zeta*w, im), complex(-zeta*w, -im)}
}

// residuals returns the weighted residuals (real and imaginary parts
// stacked) at θ with c projected out, and χ².
func (ms modeShape) residuals(d ratioData, th []float64, out []float64) ([]float64, float64) {
	g := ms.response(d, th, nil)
	if g == nil {
		return out[:0], math.Inf(1)
	}
	return project(d, g, out)
}

// project returns the weighted residuals of Ĥ − c·g with the least-squares
// c, and χ².
func project(d ratioData, g []complex128, out []float64) ([]float64, float64) {
	out = out[:0]
	var num, den float64
	for k := range d.w {
		a := complex(d.s[k], 0) * g[k]
		b := complex(d.s[k], 0) * d.r[k]
		num += real(cmplx.Conj(a) * b)
		den += real(cmplx.Conj(a) * a)
	}
	c := 1.0
	if den > 0 {
		c = num / den
	}
	var chi2 float64
	for k := range d.w {
		e := complex(d.s[k], 0) * (d.r[k] - complex(c, 0)*g[k])
		out = append(out, real(e), imag(e))
		chi2 += real(e)*real(e) + imag(e)*imag(e)
	}
	return out, chi2
}

// valid reports whether θ is a physical shape: damping in (0, 1), delay
// correction within ±the span of a sample at the top frequency.
func (ms modeShape) valid(th []float64) bool {
	for i := 1; i < len(th); i += 2 {
		if !(th[i+1] > 0 && th[i+1] < 1) || math.IsNaN(th[i]) || math.IsInf(th[i], 0) {
			return false
		}
	}
	return !math.IsNaN(th[0])
}

// levenberg minimizes χ² from θ0 by Levenberg–Marquardt (Nocedal &
// Wright, Numerical Optimization, §10.3, from memory) with a central-
// difference Jacobian; it returns θ, χ² and the Jacobian at θ.
func (ms modeShape) levenberg(d ratioData, th0 []float64) ([]float64, float64, *mat.Dense) {
	th := slices.Clone(th0)
	res, chi2 := ms.residuals(d, th, nil)
	n, m := len(th), len(res)
	jac := mat.NewDense(m, n, nil)
	jacobian := func() {
		var rp, rm []float64
		for j := range n {
			h := 1e-6 * math.Max(1, math.Abs(th[j]))
			tp, tm := slices.Clone(th), slices.Clone(th)
			tp[j] += h
			tm[j] -= h
			rp, _ = ms.residuals(d, tp, rp)
			rm, _ = ms.residuals(d, tm, rm)
			// One-sided where a side cannot be sampled (a damping at 0
			// or 1); zero where neither can.
			switch {
			case len(rp) == m && len(rm) == m:
				for i := range m {
					jac.Set(i, j, (rp[i]-rm[i])/(2*h))
				}
			case len(rp) == m:
				for i := range m {
					jac.Set(i, j, (rp[i]-res[i])/h)
				}
			case len(rm) == m:
				for i := range m {
					jac.Set(i, j, (res[i]-rm[i])/h)
				}
			default:
				for i := range m {
					jac.Set(i, j, 0)
				}
			}
		}
	}
	lambda := 1e-3
	for iter := 0; iter < 100; iter++ {
		jacobian()
		var jtj mat.SymDense
		jtj.SymOuterK(1, jac.T())
		g := mat.NewVecDense(n, nil)
		g.MulVec(jac.T(), mat.NewVecDense(m, res))
		improved := false
		for try := 0; try < 20; try++ {
			a := mat.NewDense(n, n, nil)
			for i := range n {
				for j := range n {
					a.Set(i, j, jtj.At(i, j))
				}
				a.Set(i, i, jtj.At(i, i)*(1+lambda)+1e-12)
			}
			var step mat.VecDense
			if err := step.SolveVec(a, g); err != nil {
				lambda *= 10
				continue
			}
			next := slices.Clone(th)
			for j := range n {
				next[j] -= step.AtVec(j)
			}
			if !ms.valid(next) {
				lambda *= 10
				continue
			}
			r2, c2 := ms.residuals(d, next, nil)
			if c2 < chi2 {
				rel := (chi2 - c2) / math.Max(chi2, 1e-300)
				th, res, chi2 = next, r2, c2
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				if rel < 1e-9 {
					jacobian()
					return th, chi2, jac
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			break
		}
	}
	jacobian()
	return th, chi2, jac
}

// start returns the best start for one more mode on top of the fitted
// θ, pole pair only or with a zero pair: a grid of centre frequencies
// over the usable band (log-spaced by 2.5 %, 5 % with zeros), of dampings
// and, with zeros, of the zero pair's frequency ratio (0.5 to 2, both
// sides) and
// damping, each judged with the current model's response times the
// continuous factor (a screen; the fit that follows is exact).
func (ms modeShape) start(d ratioData, th []float64, zeros bool) []float64 {
	base := ms.response(d, th, nil)
	if base == nil {
		return nil
	}
	lo, hi := d.w[0], d.w[len(d.w)-1]
	ratios, zdamp := []float64{1}, []float64{0}
	if zeros {
		ratios = []float64{0.5, 0.65, 0.8, 0.9, 1.1, 1.25, 1.5, 2}
		zdamp = []float64{0.03, 0.1}
	}
	g := make([]complex128, len(d.w))
	var out []float64
	best, bestChi := []float64(nil), math.Inf(1)
	step := 1.025
	if zeros {
		step = 1.05
	}
	// F = wc²/D with D = (wc² − ω²) + j·2ζ·wc·ω, in real arithmetic
	// (a complex division per frequency and candidate is most of the cost).
	for wc := lo * 1.1; wc < hi/1.05; wc *= step {
		for _, z := range []float64{0.02, 0.05, 0.1, 0.2} {
			for _, q := range ratios {
				for _, zz := range zdamp {
					wz := q * wc
					for k, w := range d.w {
						dr, di := wc*wc-w*w, 2*z*wc*w
						m := wc * wc / (dr*dr + di*di)
						fr, fi := m*dr, -m*di
						if zeros {
							nr, ni := (wz*wz-w*w)/(wz*wz), 2*zz*w/wz
							fr, fi = fr*nr-fi*ni, fr*ni+fi*nr
						}
						g[k] = base[k] * complex(fr, fi)
					}
					var c float64
					if out, c = project(d, g, out); c < bestChi {
						best, bestChi = append(slices.Clone(th), math.Log(wc), z), c
						if zeros {
							best = append(best, math.Log(wz), zz)
						}
					}
				}
			}
		}
	}
	return best
}

// FitModes fits up to opt.MaxModes lightly damped modes to the estimate
// fit, on top of opt.Model, and checks each against held (the estimate
// from the held-out part of the log; nil: no held-out check). It returns
// the modes kept, in order of frequency, and a note for each candidate
// the data could not support.
func FitModes(fit Estimate, held *Estimate, opt ModeOptions) ([]Mode, []string, error) {
	mf, err := FitModesDetail(fit, held, opt)
	if err != nil {
		return nil, nil, err
	}
	return mf.Modes, mf.Notes, nil
}

// ModeFit is the result of FitModesDetail: the modes and notes of
// FitModes, and the nuisance terms of the fit, the delay correction δ
// (s) and the gain factor c: the fitted plant is c·Plant·ΠFᵢ with the
// delay Delay + δ. They say how much of the low-order model's delay and
// gain the modes took over (a mode's phase below its frequency looks like
// delay to a low-order fit).
type ModeFit struct {
	Modes               []Mode
	Notes               []string
	DelayCorr, GainCorr float64
}

// FitModesDetail is FitModes with the nuisance terms of the fit.
func FitModesDetail(fit Estimate, held *Estimate, opt ModeOptions) (*ModeFit, error) {
	modes, notes, ms, th, d, err := fitModes(fit, held, opt)
	if err != nil {
		return nil, err
	}
	mf := &ModeFit{Modes: modes, Notes: notes, GainCorr: 1}
	if th != nil {
		mf.DelayCorr = th[0]
		if g := ms.response(d, th, nil); g != nil {
			var num, den float64
			for k := range d.w {
				a := complex(d.s[k], 0) * g[k]
				b := complex(d.s[k], 0) * d.r[k]
				num += real(cmplx.Conj(a) * b)
				den += real(cmplx.Conj(a) * a)
			}
			if den > 0 {
				mf.GainCorr = num / den
			}
		}
	}
	return mf, nil
}

// fitModes is FitModes; it also returns the final shape, θ and the data
// (θ nil when no fit was made).
func fitModes(fit Estimate, held *Estimate, opt ModeOptions) ([]Mode, []string, modeShape, []float64, ratioData, error) {
	var ms modeShape
	var th []float64
	var d ratioData
	done := func(m modeShape, t []float64, jac *mat.Dense, d ratioData, dh ratioData, chi float64, notes []string) ([]Mode, []string, modeShape, []float64, ratioData, error) {
		modes, notes, err := finish(m, t, jac, d, dh, chi, notes)
		return modes, notes, m, t, d, err
	}
	if len(opt.Plant.Poles) == 0 || !(opt.T > 0) {
		return nil, nil, ms, nil, d, fmt.Errorf("modes: no low-order model or sample period")
	}
	if opt.MaxModes == 0 {
		opt.MaxModes = 2
	}
	if opt.MinCoherence == 0 {
		opt.MinCoherence = 0.5
	}
	d = newRatio(fit, opt)
	if len(d.w) < 20 {
		return nil, []string{fmt.Sprintf("no mode fitted: %d frequencies with coherence ≥ %g, at least 20 needed (excite a wider band, or log longer)", len(d.w), opt.MinCoherence)}, ms, nil, d, nil
	}
	var dh ratioData
	if held != nil {
		dh = newRatio(*held, opt)
	}
	var notes []string
	kx, kw := hannKernel()
	ms = modeShape{opt: &opt, kx: kx, kw: kw}
	th, chi, jac := ms.levenberg(d, []float64{0})
	for len(ms.zeros) < opt.MaxModes {
		// The pole pair alone, and with a zero pair, each from the best
		// point of its screen; the zero pair stays when it lowers χ² by
		// the test's threshold for its two parameters.
		st := ms.start(d, th, false)
		if st == nil {
			break
		}
		next := ms.with(append(slices.Clone(ms.zeros), false))
		t1, c1, j1 := next.levenberg(d, st)
		if sz := ms.start(d, th, true); sz != nil {
			zs := ms.with(append(slices.Clone(ms.zeros), true))
			if t2, c2, j2 := zs.levenberg(d, sz); c1-c2 > modeChi2 && chi-c2 > 2*modeChi2 {
				next, t1, c1, j1 = zs, t2, c2, j2
			}
		}
		i := len(th)
		hz, z := math.Exp(t1[i])/(2*math.Pi), t1[i+1]
		switch {
		case chi-c1 <= modeChi2:
			notes = append(notes, fmt.Sprintf("no further mode: the best pole pair (%.4g Hz, damping %.3g) lowers χ² by %.3g, less than %.3g, the 99.9 %% point for two more parameters", hz, z, chi-c1, modeChi2))
			return done(ms, th, jac, d, dh, chi, notes)
		case z >= MaxModeDamping:
			notes = append(notes, fmt.Sprintf("no further lightly damped mode: the best pole pair (%.4g Hz) has damping %.3g ≥ %g", hz, z, MaxModeDamping))
			return done(ms, th, jac, d, dh, chi, notes)
		case math.Exp(t1[i]) <= d.w[0]*1.05 || math.Exp(t1[i]) >= d.w[len(d.w)-1]/1.05:
			notes = append(notes, fmt.Sprintf("no further mode: the best pole pair (%.4g Hz) lies at the edge of the coherent band %.4g–%.4g Hz, where the data cannot place it", hz, d.w[0]/(2*math.Pi), d.w[len(d.w)-1]/(2*math.Pi)))
			return done(ms, th, jac, d, dh, chi, notes)
		}
		ms, th, chi, jac = next, t1, c1, j1
	}
	return done(ms, th, jac, d, dh, chi, notes)
}

// finish computes the intervals (from jac, the Jacobian of the weighted
// residuals at θ) and the held-out check of the modes of ms at θ and drops those the held-out part does not support.
func finish(ms modeShape, th []float64, jac *mat.Dense, d, dh ratioData, chi float64, notes []string) ([]Mode, []string, error) {
	if len(ms.zeros) == 0 {
		return nil, notes, nil
	}
	n := len(th)
	var jtj mat.SymDense
	jtj.SymOuterK(1, jac.T())
	var cov mat.Dense
	if err := cov.Inverse(&jtj); err != nil {
		return nil, append(notes, "modes dropped: their parameters are not identifiable from the data (singular information matrix)"), nil
	}
	dof := 2*len(d.w) - n - 1
	scale := 1.0
	if dof > 0 {
		scale = math.Max(1, chi/float64(dof))
	}
	scale *= errorCorrelation
	sd := func(j int) float64 { return math.Sqrt(math.Max(0, cov.At(j, j)) * scale) }
	var modes []Mode
	i := 1
	for mi, z := range ms.zeros {
		m := Mode{
			Hz:      logInterval(th[i], sd(i)),
			Damping: Interval{th[i+1], th[i+1] - 1.96*sd(i+1), th[i+1] + 1.96*sd(i+1)},
		}
		if z {
			zh := logInterval(th[i+2], sd(i+2))
			zd := Interval{th[i+3], th[i+3] - 1.96*sd(i+3), th[i+3] + 1.96*sd(i+3)}
			m.ZeroHz, m.ZeroDamping = &zh, &zd
		}
		// The mode's own contribution: χ² with and without it, the others
		// kept, on the fitted and on the held-out part.
		without, tw := dropMode(ms, th, mi)
		_, cw := without.residuals(d, tw, nil)
		m.Drop = cw - chi
		m.Held = math.NaN()
		if len(dh.w) > 0 {
			_, hWith := ms.residuals(dh, th, nil)
			_, hWithout := without.residuals(dh, tw, nil)
			m.Held = (hWithout - hWith) / hWithout
			if !(hWith < hWithout) {
				notes = append(notes, fmt.Sprintf("mode at %.4g Hz (damping %.3g) dropped: the held-out part of the log does not support it (χ² %.4g with it, %.4g without)", m.Hz.Value, m.Damping.Value, hWith, hWithout))
				i += 2
				if z {
					i += 2
				}
				continue
			}
		}
		modes = append(modes, m)
		i += 2
		if z {
			i += 2
		}
	}
	slices.SortFunc(modes, func(a, b Mode) int { return cmp.Compare(a.Hz.Value, b.Hz.Value) })
	return modes, notes, nil
}

// logInterval turns ln ω ± 1.96σ into Hz.
func logInterval(lw, s float64) Interval {
	f := func(x float64) float64 { return math.Exp(x) / (2 * math.Pi) }
	return Interval{f(lw), f(lw - 1.96*s), f(lw + 1.96*s)}
}

// dropMode returns the shape and θ without mode mi.
func dropMode(ms modeShape, th []float64, mi int) (modeShape, []float64) {
	out := ms.with(nil)
	t := []float64{th[0]}
	i := 1
	for j, z := range ms.zeros {
		k := 2
		if z {
			k = 4
		}
		if j != mi {
			out.zeros = append(out.zeros, z)
			t = append(t, th[i:i+k]...)
		}
		i += k
	}
	return out, t
}
