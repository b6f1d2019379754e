package ident

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Options controls Identify.
type Options struct {
	// Sensor also fits a first-order lowpass of the gyro,
	// H(s) = ωs/(s + ωs), ωs = 2π·lowpass_hz.
	Sensor bool
	// Holdout is the fraction of the log at its end kept out of the fit
	// and used for validation, in [0, 0.9].
	Holdout float64
	// Saturation chooses which samples are excluded as saturated.
	Saturation Saturation
	// MaxDelay bounds the delay searched, s (0: DefaultMaxDelay).
	MaxDelay float64
}

// DefaultMaxDelay is the default bound of the delay search: ten times the
// few milliseconds typical of a rate loop (gyro filtering, computation,
// ESC update), and a fifth of the largest delay the airframe file allows.
const DefaultMaxDelay = 0.1

// DefaultOptions are the options of the identify verb without flags.
func DefaultOptions() Options { return Options{Holdout: 0.25} }

// z95 is the two-sided 95 % quantile of the standard normal distribution
// (1.959964, any statistics table); with thousands of samples the t
// distribution of the estimate is normal to many digits.
const z95 = 1.959963984540054

// relCIWarn is the relative half-width of a 95 % interval above which a
// parameter is reported as poorly identifiable: a plant gain off by 20 %
// costs about 1.6 dB of gain margin, a good part of the usual 6 dB
// (common practice), so beyond it the value is no longer a usable point
// estimate.
const relCIWarn = 0.2

// condWarn is the condition number of the parameter correlation matrix
// above which the information matrix JᵀJ is called near-singular: some
// combination of the parameters is not determined by the data.
const condWarn = 1e8

// corrWarn is the magnitude of a pairwise correlation of two estimates
// above which they are reported as not separable by the data.
const corrWarn = 0.98

// Param is an identified parameter with its 95 % confidence interval.
type Param struct {
	Name   string  // airframe key: effectiveness, motor_tau, delay, lowpass_hz
	Unit   string  // for comments
	Value  float64 // estimate
	StdErr float64 // standard error from σ²(JᵀJ)⁻¹
	Lo, Hi float64 // Value ∓ 1.96·StdErr
}

// RelHalfWidth is the half-width of the interval relative to the value.
func (p Param) RelHalfWidth() float64 { return z95 * p.StdErr / math.Abs(p.Value) }

// Result is the identified model and the evidence for it.
type Result struct {
	Effectiveness, MotorTau, Delay Param
	// LowpassHz is the sensor corner (nil unless Options.Sensor).
	LowpassHz *Param

	// Correlation of the estimates, in the order effectiveness,
	// motor_tau, delay[, lowpass_hz].
	Correlation [][]float64
	// Cond is the condition number of Correlation.
	Cond float64

	T          float64 // sample period of the fit, s
	Resampled  bool
	FitSamples int // samples in the cost (after exclusions and burn-in)
	Segments   int // fitted segments
	// Excluded counts saturated samples.
	Excluded int
	// Sigma is the residual standard deviation (rate units).
	Sigma float64

	// Fit quality on the fitted samples: normalized RMS error
	// ‖y − ŷ‖/‖y − ȳ‖ and variance accounted for 1 − var(y − ŷ)/var(y).
	NRMSE, VAF float64
	// Held-out quality, the same measures (NaN when there is no
	// held-out data). The physical parameters come from the fit; only the
	// initial state of each held-out segment is estimated on it, as usual
	// in output-error validation.
	HoldoutNRMSE, HoldoutVAF float64
	HoldoutSamples           int

	// Offset is the constant rate of the first fitted segment (initial
	// rate plus gyro bias: the gyro bias when the log starts at rest);
	// Trim is its command offset (the command that holds the rate still).
	Offset, Trim float64

	// Notes describe what was done to the data; Warnings what limits the
	// result.
	Notes, Warnings []string

	// Time, Measured and Fitted are the prepared samples and the model
	// output (NaN where not simulated); Used marks each sample 0 excluded,
	// 1 fitted, 2 held out.
	Time, Measured, Fitted []float64
	Used                   []int8
	// Command and Excitation are the prepared command and injected
	// excitation (nil without one), on Time: the frequency-response
	// estimate (Result.Estimate) is made from them.
	Command, Excitation []float64

	// Evaluations counts cost evaluations (for benchmarks).
	Evaluations int
}

// Params returns the identified parameters in report order.
func (r *Result) Params() []Param {
	ps := []Param{r.Effectiveness, r.MotorTau, r.Delay}
	if r.LowpassHz != nil {
		ps = append(ps, *r.LowpassHz)
	}
	return ps
}

// Identify fits G(s) = effectiveness/(s(motor_tau·s + 1))·e^(−s·delay)
// (and, with Options.Sensor, a gyro lowpass in cascade) to the log. See
// fit.go for the method. Errors for bad input are *InputError; others mean
// the fit failed.
func Identify(l *Log, opt Options) (res *Result, err error) {
	defer func() {
		// A panic below is a bug; it must not take the caller down.
		if r := recover(); r != nil {
			res, err = nil, fmt.Errorf("identify: %w: %v", ErrInternal, r)
		}
	}()
	if opt.MaxDelay == 0 {
		opt.MaxDelay = DefaultMaxDelay
	}
	if !(opt.MaxDelay > 0) || opt.MaxDelay > 0.5 {
		return nil, &InputError{Msg: fmt.Sprintf("max delay %g s: must be in (0, 0.5]", opt.MaxDelay)}
	}
	if opt.Saturation.Mode == SatLimits && !(opt.Saturation.Lo < opt.Saturation.Hi) {
		return nil, &InputError{Msg: fmt.Sprintf("saturation limits [%g, %g]: the lower must be below the upper", opt.Saturation.Lo, opt.Saturation.Hi)}
	}
	p, err := prepare(l, opt.Saturation, opt.Holdout)
	if err != nil {
		return nil, err
	}
	maxD := int(math.Ceil(opt.MaxDelay / p.T))

	var fitSegs, holdSegs []segment
	for _, s := range p.segs {
		if s.holdout {
			holdSegs = append(holdSegs, s)
		} else {
			fitSegs = append(fitSegs, s)
		}
	}
	g := arx(p, firstSamples(fitSegs, arxSamples), min(maxD, 400))
	// Burn-in: the delay line of each segment starts from a guess, so
	// the samples it reaches are not fitted. Twice the starting delay
	// plus a few samples leaves room for the search; it is adjusted to the
	// fitted delay afterwards.
	burn := 2*g.d + 4

	w := newWorkspace(len(p.t))
	var f *fitter
	var z []float64
	var limited bool
	for attempt := 0; ; attempt++ {
		fs := keepLong(fitSegs, burn)
		if len(fs) == 0 {
			return nil, &InputError{File: l.File, Msg: fmt.Sprintf("no stretch of at least %d usable samples to fit (after excluding saturation and keeping %.0f %% for validation)", burn+minSegment, 100*opt.Holdout)}
		}
		f = &fitter{T: p.T, u: p.u, y: p.y, segs: fs, burn: burn, sensor: opt.Sensor, maxDelay: opt.MaxDelay, w: w, sf: make([]segFit, len(fs))}
		if n := f.count(); n < MinSamples {
			return nil, &InputError{File: l.File, Msg: fmt.Sprintf("only %d usable samples to fit (after excluding saturation and keeping %.0f %% for validation); at least %d are needed", n, 100*opt.Holdout, MinSamples)}
		}
		if constantOver(p.u, fs) {
			return nil, &InputError{File: l.File, Msg: "the command is constant over the samples left to fit: nothing to identify"}
		}
		if z == nil {
			z = f.start(g)
		}
		z, limited, err = f.minimize(z)
		if err != nil {
			return nil, fmt.Errorf("identify: the output-error search failed: %w", err)
		}
		// The burn-in must cover the fitted delay line; one much longer
		// than needed only discards data. Refit (from the optimum, which
		// converges in a few iterations) when it is off either way.
		sh := f.shape(z)
		need := int(math.Floor(sh.delay/p.T)) + 3
		if (need > burn || burn > 2*need+4) && attempt < 2 {
			burn = need + 2
			continue
		}
		break
	}
	f.canonical(z)
	f.eval(z, nil)
	if math.IsInf(f.sse, 0) || math.IsNaN(f.K) {
		return nil, fmt.Errorf("identify: the fit did not converge to a finite cost")
	}
	res = &Result{T: p.T, Resampled: p.resampled, Excluded: p.excluded, Segments: len(f.segs)}
	if l.Truncated {
		res.Notes = append(res.Notes, fmt.Sprintf("the log has more than %d samples: the first %d (to line %d) are used, the rest ignored", MaxSamples, MaxSamples, lastLine(l)))
	}
	res.Notes = append(res.Notes, p.notes...)
	if dropped := len(fitSegs) - len(f.segs); dropped > 0 {
		res.Notes = append(res.Notes, fmt.Sprintf("%d stretch(es) shorter than %d samples between exclusions were not fitted", dropped, burn+minSegment))
	}
	if err := f.covariance(res); err != nil {
		return nil, err
	}
	res.FitSamples = f.count()
	res.NRMSE, res.VAF = quality(f)
	sf := f.sf[0]
	res.Offset = sf.beta[0]
	if f.K != 0 {
		res.Trim = -sf.beta[2] / f.K
	}

	// Fitted output for the plot.
	n := len(p.t)
	res.Time, res.Measured, res.Used = p.t, p.y, make([]int8, n)
	res.Command, res.Excitation = p.u, p.r
	res.Fitted = make([]float64, n)
	for i := range res.Fitted {
		res.Fitted[i] = math.NaN()
	}
	fill := func(f *fitter, mark int8) {
		f.output(z, w.out, false)
		for _, s := range f.segs {
			copy(res.Fitted[s.start:s.end], w.out[s.start:s.end])
			a, b := f.window(s)
			for k := a; k < b; k++ {
				res.Used[k] = mark
			}
		}
	}
	fill(f, 1)
	res.Evaluations = f.evals

	res.HoldoutNRMSE, res.HoldoutVAF = math.NaN(), math.NaN()
	if hs := keepLong(holdSegs, burn); len(hs) > 0 {
		h := &fitter{T: p.T, u: p.u, y: p.y, segs: hs, burn: burn, sensor: opt.Sensor, maxDelay: opt.MaxDelay, w: w, sf: make([]segFit, len(hs))}
		K := f.K
		h.eval(z, &K)
		res.HoldoutSamples = h.count()
		res.HoldoutNRMSE, res.HoldoutVAF = quality(h)
		fill(h, 2)
	} else if opt.Holdout > 0 {
		res.Notes = append(res.Notes, "no held-out stretch long enough to validate on")
	}
	res.warnings(opt)
	if limited {
		res.Warnings = append(res.Warnings, "the search stopped at its iteration limit before converging: the data may not follow the model (check the columns and units)")
	}
	return res, nil
}

// start returns the starting point of the search. Equation error (the
// ARX guess) is biased when the rate is noisy and badly conditioned at
// high sample rates, so it is only one candidate: the output-error cost
// itself is scanned, coordinate by coordinate, on at most scanSamples
// fitted samples (the projected cost is cheap): τ on a wide logarithmic
// grid, the delay over the whole search range in whole samples, then
// finer steps around the best point (delay in half samples, τ in steps of
// √2, ωs over a grid of fractions of the sample rate), twice. The scan
// keeps the Newton search out of the local minima that a periodic
// excitation puts in the delay direction.
func (f *fitter) start(g arxGuess) []float64 {
	const scanSamples = 16000
	sub := *f
	sub.segs = nil
	sub.valid = false
	n := 0
	for _, s := range f.segs {
		a, b := f.window(s)
		if n >= scanSamples {
			break
		}
		if rest := scanSamples - n; b-a > rest+minSegment {
			s.end = a + rest
			b = s.end
		}
		sub.segs = append(sub.segs, s)
		n += b - a
	}
	sub.sf = make([]segFit, len(sub.segs))
	defer func() { f.evals += sub.evals; f.valid = false }()

	z := make([]float64, f.nz())
	z[zTau] = math.Log(20 * f.T)
	z[zDelay] = 0
	if f.sensor {
		z[zSensor] = math.Log(2 * math.Pi / f.T / 8)
	}
	best := sub.eval(z, nil)
	try := func(i int, v float64) {
		c := slices.Clone(z)
		c[i] = v
		if e := sub.eval(c, nil); e < best {
			best, z = e, c
		}
	}
	if g.ok {
		c := slices.Clone(z)
		c[zTau], c[zDelay] = math.Log(g.tau), float64(g.d)+0.5
		if e := sub.eval(c, nil); e < best {
			best, z = e, c
		}
	}
	// Wide τ grid: 2T to 2 s in steps of a factor √3.
	for lt := math.Log(2 * f.T); lt <= math.Log(2); lt += 0.5 * math.Log(3) {
		try(zTau, lt)
	}
	// Whole delay range, at most 64 steps.
	maxD := f.maxDelay / f.T
	step := math.Max(1, math.Ceil(maxD/64))
	for d := 0.0; d <= maxD; d += step {
		try(zDelay, d)
	}
	for round := 0; round < 2; round++ {
		dc := z[zDelay]
		span := math.Max(6, 2*step)
		for k := -span; k <= span; k += 0.5 {
			if v := dc + k; v >= 0 && v <= maxD && k != 0 {
				try(zDelay, v)
			}
		}
		tc := z[zTau]
		for k := -4; k <= 4; k++ {
			if k != 0 {
				try(zTau, tc+0.5*math.Ln2*float64(k))
			}
		}
		if f.sensor {
			for _, div := range []float64{40, 28, 20, 14, 10, 7, 5, 3.5, 2.5} {
				try(zSensor, math.Log(2*math.Pi/f.T/div))
			}
		}
	}
	return z
}

// arxSamples bounds the data the ARX scan uses: it only seeds the search.
const arxSamples = 16000

// firstSamples returns the leading segments holding about n samples.
func firstSamples(segs []segment, n int) []segment {
	var out []segment
	for _, s := range segs {
		if n <= 0 {
			break
		}
		if s.end-s.start > n+minSegment {
			s.end = s.start + n
		}
		out = append(out, s)
		n -= s.end - s.start
	}
	return out
}

// canonical puts z in the convention for the two lags. τ and 1/ωs enter
// the model symmetrically, 1/(s(τs+1)(s/ωs+1)), nuisance columns included
// (the free response of either lag spans the same functions), so the data
// fix only the pair. By convention the slower lag is the motor's
// (rate-loop gyro filters are faster than the motor response); the two
// are swapped if the search ended the other way.
func (f *fitter) canonical(z []float64) {
	if !f.sensor {
		return
	}
	if sh := f.shape(z); 1/sh.omegaS > sh.tau {
		z[zTau], z[zSensor] = -math.Log(sh.omegaS), -math.Log(sh.tau)
	}
}

// keepLong returns the segments with at least minSegment samples after the
// burn-in.
func keepLong(segs []segment, burn int) []segment {
	var out []segment
	for _, s := range segs {
		if s.end-s.start >= burn+minSegment {
			out = append(out, s)
		}
	}
	return out
}

func constantOver(u []float64, segs []segment) bool {
	first := math.NaN()
	for _, s := range segs {
		for k := s.start; k < s.end; k++ {
			if math.IsNaN(first) {
				first = u[k]
			} else if u[k] != first {
				return false
			}
		}
	}
	return true
}

// quality returns the normalized RMS error and the VAF over f's windows
// (NaN when the output does not vary).
func quality(f *fitter) (nrmse, vaf float64) {
	var n int
	var sy, sr float64
	for _, s := range f.segs {
		a, b := f.window(s)
		for k := a; k < b; k++ {
			sy += f.y[k]
			sr += f.w.r[k]
			n++
		}
	}
	my, mr := sy/float64(n), sr/float64(n)
	var vy, rr, vr float64
	for _, s := range f.segs {
		a, b := f.window(s)
		for k := a; k < b; k++ {
			dy := f.y[k] - my
			vy += dy * dy
			rr += f.w.r[k] * f.w.r[k]
			dr := f.w.r[k] - mr
			vr += dr * dr
		}
	}
	if vy == 0 {
		return math.NaN(), math.NaN()
	}
	return math.Sqrt(rr / vy), 1 - vr/vy
}

// covariance fills the parameters, their intervals and correlations: the
// estimate's covariance is σ²(JᵀJ)⁻¹ with J the Jacobian of the model
// output with respect to all parameters at the optimum and σ² the
// residual variance with the degrees of freedom of every fitted parameter
// removed (Ljung, System Identification, §9.3, from memory). Only the
// physical block is needed: by the Frisch–Waugh–Lovell theorem it is
// σ²(J̃ᵀJ̃)⁻¹ with J̃ the physical columns projected off the nuisance
// columns, which the segment bases provide.
func (f *fitter) covariance(res *Result) error {
	f.jacobian(true)
	w := f.w
	sh := f.sh
	// Physical columns in natural units: ∂ŷ/∂K = F, ∂ŷ/∂τ = ∂ŷ/∂lnτ / τ,
	// ∂ŷ/∂delay = ∂ŷ/∂(delay/T) / T, ∂ŷ/∂f = 2π ∂ŷ/∂lnωs / ωs.
	cols := [][]float64{w.Ft, w.pj[0], w.pj[1]}
	factor := []float64{1, 1 / sh.tau, 1 / f.T}
	if f.sensor {
		cols = append(cols, w.pj[2])
		factor = append(factor, 2*math.Pi/sh.omegaS)
	}
	for i := 0; i < f.nz(); i++ {
		f.project(w.pj[i], w.jac[i])
	}
	np := len(cols)
	info := mat.NewSymDense(np, nil)
	for i := 0; i < np; i++ {
		for j := 0; j <= i; j++ {
			var s float64
			for _, seg := range f.segs {
				a, b := f.window(seg)
				s += dot(cols[i][a:b], cols[j][a:b])
			}
			info.SetSym(i, j, s*factor[i]*factor[j])
		}
	}
	dof := f.count() - np
	for _, sf := range f.sf {
		for _, k := range sf.kept {
			if k {
				dof--
			}
		}
	}
	if dof <= 0 {
		return &InputError{Msg: "too few samples for the number of parameters (segments too short)"}
	}
	sigma2 := f.sse / float64(dof)
	res.Sigma = math.Sqrt(sigma2)

	// Correlation-scaled information: its conditioning is that of the
	// parameters, free of their units.
	d := make([]float64, np)
	for i := range d {
		d[i] = math.Sqrt(info.At(i, i))
	}
	scaled := mat.NewSymDense(np, nil)
	for i := 0; i < np; i++ {
		for j := 0; j <= i; j++ {
			v := 0.0
			if d[i] > 0 && d[j] > 0 {
				v = info.At(i, j) / (d[i] * d[j])
			}
			scaled.SetSym(i, j, v)
		}
	}
	var eig mat.EigenSym
	cond := math.Inf(1)
	if eig.Factorize(scaled, false) {
		ev := eig.Values(nil)
		if ev[0] > 0 {
			cond = ev[len(ev)-1] / ev[0]
		}
	}
	res.Cond = cond
	var chol mat.Cholesky
	cov := mat.NewSymDense(np, nil)
	if chol.Factorize(scaled) {
		var inv mat.SymDense
		if err := chol.InverseTo(&inv); err == nil {
			for i := 0; i < np; i++ {
				for j := 0; j <= i; j++ {
					cov.SetSym(i, j, sigma2*inv.At(i, j)/(d[i]*d[j]))
				}
			}
		}
	}
	vals := []float64{f.K, sh.tau, sh.delay, sh.omegaS / (2 * math.Pi)}
	names := []string{"effectiveness", "motor_tau", "delay", "lowpass_hz"}
	units := []string{"rate/s per unit command", "s", "s", "Hz"}
	ps := make([]Param, np)
	for i := range ps {
		se := math.Sqrt(cov.At(i, i))
		if cov.At(i, i) == 0 || math.IsNaN(se) {
			se = math.Inf(1)
		}
		ps[i] = Param{Name: names[i], Unit: units[i], Value: vals[i], StdErr: se, Lo: vals[i] - z95*se, Hi: vals[i] + z95*se}
	}
	res.Effectiveness, res.MotorTau, res.Delay = ps[0], ps[1], ps[2]
	if f.sensor {
		res.LowpassHz = &ps[3]
	}
	res.Correlation = make([][]float64, np)
	for i := range res.Correlation {
		res.Correlation[i] = make([]float64, np)
		for j := range res.Correlation[i] {
			res.Correlation[i][j] = cov.At(i, j) / math.Sqrt(cov.At(i, i)*cov.At(j, j))
		}
	}
	return nil
}

// warnings adds the warnings on identifiability and plausibility.
func (r *Result) warnings(opt Options) {
	ps := r.Params()
	for _, p := range ps {
		if p.Name == "delay" && p.Value < 0.01*r.T {
			r.Warnings = append(r.Warnings, "delay is at its lower bound 0: its interval is not meaningful (the true delay may be shorter than the resolution of the data)")
			continue
		}
		if rel := p.RelHalfWidth(); !(rel <= relCIWarn) {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s is poorly identifiable: its 95 %% interval is ±%s %% of the value (the cost is nearly flat in that direction); excite the axis more, or with faster content",
				p.Name, fmtSig(100*rel, 3)))
		}
	}
	for i := range ps {
		for j := i + 1; j < len(ps); j++ {
			if c := r.Correlation[i][j]; math.Abs(c) > corrWarn {
				r.Warnings = append(r.Warnings, fmt.Sprintf("%s and %s are strongly correlated (%s): the data barely separate them", ps[i].Name, ps[j].Name, fmtSig(c, 3)))
			}
		}
	}
	if !(r.Cond <= condWarn) {
		r.Warnings = append(r.Warnings, fmt.Sprintf("the information matrix JᵀJ is near-singular (condition number %s of the correlation matrix): some combination of the parameters is not determined by the data", fmtSig(r.Cond, 3)))
	}
	maxD := opt.MaxDelay
	if r.Delay.Value > 0.99*maxD {
		r.Warnings = append(r.Warnings, fmt.Sprintf("delay is at the search bound %s s: raise --max-delay", fmtSig(maxD, 3)))
	}
	if r.MotorTau.Value < 0.2*r.T {
		r.Warnings = append(r.Warnings, "motor_tau is far below the sample period: the data cannot resolve it")
	}
	if r.LowpassHz != nil && r.LowpassHz.Value > 0.5/r.T {
		r.Warnings = append(r.Warnings, "lowpass_hz is above the Nyquist frequency of the log: the data cannot resolve it")
	}
	if r.VAF < 0.5 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("the model explains only %s %% of the rate's variance: check the columns, the units and that the log is of this axis", fmtSig(100*r.VAF, 3)))
	}
}

func fmtSig(v float64, digits int) string {
	return fmt.Sprint(strconvG(v, digits))
}

// ErrInternal marks an error of Identify that is a bug (a recovered
// panic), neither bad input nor a fit that failed.
var ErrInternal = errors.New("internal error (a bug; please report it with the log)")

// lastLine is the source line of the last sample of l (its index + 1
// when l was built in code).
func lastLine(l *Log) int {
	if n := len(l.Line); n > 0 {
		return l.Line[n-1]
	}
	return len(l.Time) + 1
}
