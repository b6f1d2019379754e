package ident

import (
	"errors"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// The output-error problem (Ljung, System Identification, §4.2 and §7.2,
// from memory). Over the fitted samples of every segment j the measured
// rate is modelled as
//
//	ŷ[k] = K·F[k] + c_j + a_j·A[k] + e_j·E[k],
//
// where F is the response of the unit-effectiveness model to the logged
// command from the zero state at the segment's first sample, and the
// three nuisance columns span the response to the unknown state there:
//
//   - 1 (c_j): a constant, the initial rate plus the gyro bias. For an
//     integrating plant the two are the same column, so they cannot be
//     told apart from the data (c_j is the bias only when the segment
//     starts at rest). With a gyro lowpass its state is taken equal to
//     the rate at the segment's start; a difference would decay within a
//     few sensor time constants, inside or just after the burn-in.
//   - A (a_j): the free response from a unit initial motor state, i.e. an
//     initial angular acceleration, decaying with the motor lag.
//   - E (e_j): the response to a constant unit command: a command offset
//     (trim: the command at which the rate holds still, or a constant
//     disturbance torque), which makes the rate ramp.
//
// Starting every segment from its own free state is what makes the fit
// work on an integrator: the rate drifts with any offset, so a simulation
// started from rest, or from an assumed state, accumulates the error of
// that assumption over the whole segment. The commands before a segment
// are unknown (taken equal to its first command); the first burn samples
// of each segment, which cover the delay, are simulated but not fitted, so
// that guess does not matter.
//
// The model is linear in K and the nuisance coefficients and nonlinear in
// η = (τ, delay, ωs). They are separated (variable projection, Golub &
// Pereyra 1973, from memory): for a given η the linear coefficients are
// the least-squares solution, and the optimizer (gonum optimize.Newton)
// works on the projected cost V(η) = ‖P⊥(η) y‖² only. Its gradient is
// −2 rᵀ ∂ŷ/∂η with the linear coefficients held fixed (exact, because the
// residual is orthogonal to the linear columns); the Hessian is the
// Gauss–Newton one, 2 J̃ᵀJ̃, with J̃ = P⊥ ∂ŷ/∂η (Kaufman's
// approximation). ∂ŷ/∂η is a finite difference of the exact simulation
// (forward during the search, central for the covariance).
//
// The nuisance columns are local to a segment, so the projection is done
// segment by segment with a 3-column Gram–Schmidt basis (twice, for
// orthogonality to rounding): memory stays proportional to the log
// whatever the number of segments.

// Optimizer coordinates: z = (ln τ, delay/T, ln ωs).
const (
	zTau = iota
	zDelay
	zSensor
)

// fdStep is the central-difference step in each coordinate: 1e-4 relative
// in τ and ωs, 1e-3 sample in the delay. The simulation is exact to
// rounding (~1e-16 relative), so the truncation error (~h²) dominates and
// is ~1e-8 relative, far below the noise the covariance describes.
func fdStep(i int) float64 {
	if i == zDelay {
		return 1e-3
	}
	return 1e-4
}

// workspace holds the per-sample buffers, shared by the fit and the
// held-out evaluation (their segments are disjoint).
type workspace struct {
	F, A, E    []float64 // columns at the current η
	q          [3][]float64
	yt, Ft, r  []float64
	tf, ta, te []float64 // columns at a perturbed η
	out        []float64
	jac        [3][]float64
	pj         [3][]float64

	// The free columns, their basis and P⊥y depend on τ and ωs only, not
	// on the delay: they are kept for the fitter that computed them
	// while those stay the same (delay scans and delay differences).
	owner   *fitter
	freeKey [2]float64
}

func newWorkspace(n int) *workspace {
	buf := make([]float64, 19*n)
	take := func() []float64 {
		s := buf[:n:n]
		buf = buf[n:]
		return s
	}
	w := &workspace{}
	w.F, w.A, w.E = take(), take(), take()
	for i := range w.q {
		w.q[i] = take()
	}
	w.yt, w.Ft, w.r = take(), take(), take()
	w.tf, w.ta, w.te = take(), take(), take()
	w.out = take()
	for i := range w.jac {
		w.jac[i] = take()
		w.pj[i] = take()
	}
	return w
}

// segFit is the per-segment state of an evaluation.
type segFit struct {
	kept [3]bool       // which nuisance columns are independent
	r    [3][3]float64 // Gram–Schmidt: columns = Q·r (upper triangular)
	beta [3]float64    // nuisance coefficients on (1, A, E)
}

// fitter evaluates the projected cost on a set of segments.
type fitter struct {
	T        float64
	u, y     []float64
	segs     []segment
	burn     int
	sensor   bool
	maxDelay float64 // s
	w        *workspace
	sf       []segFit

	// Cache of the last evaluation.
	z          []float64
	valid      bool
	sh         shape
	K          float64
	sse        float64
	ffNorm     float64 // ‖F̃‖²
	jacOK      bool
	jacCentral bool
	evals      int
}

// nz is the number of optimizer coordinates.
func (f *fitter) nz() int {
	if f.sensor {
		return 3
	}
	return 2
}

// window returns the fitted range of segment s.
func (f *fitter) window(s segment) (int, int) { return s.start + f.burn, s.end }

// count returns the number of fitted samples.
func (f *fitter) count() int {
	n := 0
	for _, s := range f.segs {
		a, b := f.window(s)
		n += b - a
	}
	return n
}

// Bounds of the coordinates: τ within [T/10, 100 s] and ωs within
// [2π·0.01 Hz, 20π/T] are far outside any rate loop; beyond them the cost
// is flat (clamped), so the search cannot run away.
func (f *fitter) shape(z []float64) shape {
	sh := shape{
		tau:   math.Exp(clamp(z[zTau], math.Log(f.T/10), math.Log(100))),
		delay: f.T * clamp(z[zDelay], 0, f.maxDelay/f.T),
	}
	if f.sensor {
		sh.omegaS = math.Exp(clamp(z[zSensor], math.Log(2*math.Pi*0.01), math.Log(20*math.Pi/f.T)))
	}
	return sh
}

func clamp(v, lo, hi float64) float64 {
	if math.IsNaN(v) {
		return lo
	}
	return math.Max(lo, math.Min(hi, v))
}

// basis builds the orthonormal basis of (1, A, E) over each window.
func (f *fitter) basis() {
	w := f.w
	cols := [3][]float64{nil, w.A, w.E}
	for si, s := range f.segs {
		a, b := f.window(s)
		sf := &f.sf[si]
		*sf = segFit{}
		for c := 0; c < 3; c++ {
			q := w.q[c][a:b]
			if c == 0 {
				for k := range q {
					q[k] = 1
				}
			} else {
				copy(q, cols[c][a:b])
			}
			norm0 := math.Sqrt(dot(q, q))
			// Two passes of Gram–Schmidt against the kept columns.
			for pass := 0; pass < 2; pass++ {
				for p := 0; p < c; p++ {
					if !sf.kept[p] {
						continue
					}
					qp := w.q[p][a:b]
					h := dot(qp, q)
					sf.r[p][c] += h
					axpy(-h, qp, q)
				}
			}
			norm := math.Sqrt(dot(q, q))
			// A column that is (numerically) a combination of the
			// previous ones carries no information of its own.
			if !(norm > 1e-9*norm0) || norm0 == 0 {
				for k := range q {
					q[k] = 0
				}
				continue
			}
			sf.kept[c] = true
			sf.r[c][c] = norm
			scale(1/norm, q)
		}
	}
}

// project writes P⊥ v into out over each window (out may be v). One
// modified Gram–Schmidt pass suffices: the basis is orthonormal to
// rounding (basis orthogonalizes twice).
func (f *fitter) project(out, v []float64) {
	for si, s := range f.segs {
		a, b := f.window(s)
		o, x := out[a:b], v[a:b]
		if &o[0] != &x[0] {
			copy(o, x)
		}
		for c := 0; c < 3; c++ {
			if !f.sf[si].kept[c] {
				continue
			}
			q := f.w.q[c][a:b]
			axpy(-dot(q, o), q, o)
		}
	}
}

// eval computes the projected cost at z, the effectiveness and the
// nuisance coefficients, and caches them. With fixedK it uses K instead
// of solving for it (held-out data).
func (f *fitter) eval(z []float64, fixedK *float64) float64 {
	if f.valid && slices.Equal(f.z, z) && fixedK == nil {
		return f.sse
	}
	f.evals++
	f.valid, f.jacOK, f.jacCentral = false, false, false
	f.z = append(f.z[:0], z...)
	sh := f.shape(z)
	m, err := sh.discretize(f.T)
	if err != nil {
		f.sse = math.Inf(1)
		return f.sse
	}
	w := f.w
	if key := [2]float64{sh.tau, sh.omegaS}; w.owner != f || w.freeKey != key {
		for _, s := range f.segs {
			m.free(w.A[s.start:s.end], w.E[s.start:s.end])
		}
		f.basis()
		f.project(w.yt, f.y)
		w.owner, w.freeKey = f, key
	}
	for _, s := range f.segs {
		m.forced(w.F[s.start:s.end], f.u[s.start:s.end])
	}
	f.project(w.Ft, w.F)
	var num, den float64
	for _, s := range f.segs {
		a, b := f.window(s)
		den += dot(w.Ft[a:b], w.Ft[a:b])
	}
	if fixedK != nil {
		f.K = *fixedK
	} else {
		for _, s := range f.segs {
			a, b := f.window(s)
			num += dot(w.Ft[a:b], w.yt[a:b])
		}
		f.K = 0
		if den > 0 {
			f.K = num / den
		}
	}
	f.ffNorm = den
	// Residual and nuisance coefficients: β = R⁻¹ Qᵀ (y − K F).
	var sse float64
	for si, s := range f.segs {
		a, b := f.window(s)
		sf := &f.sf[si]
		r := w.r[a:b]
		for k := range r {
			r[k] = f.y[a+k] - float64(f.K*w.F[a+k])
		}
		var qt [3]float64
		for c := 0; c < 3; c++ {
			if !sf.kept[c] {
				continue
			}
			q := w.q[c][a:b]
			h := dot(q, r)
			qt[c] = h
			axpy(-h, q, r)
		}
		for c := 2; c >= 0; c-- {
			if !sf.kept[c] {
				sf.beta[c] = 0
				continue
			}
			v := qt[c]
			for j := c + 1; j < 3; j++ {
				if sf.kept[j] {
					v -= sf.r[c][j] * sf.beta[j]
				}
			}
			sf.beta[c] = v / sf.r[c][c]
		}
		sse += dot(r, r)
	}
	f.sh = sh
	f.sse = sse
	if math.IsNaN(sse) {
		f.sse = math.Inf(1)
	}
	f.valid = fixedK == nil
	return f.sse
}

// output writes the model output at z with the cached K and nuisance
// coefficients into out over each segment (the whole segment, burn-in
// included), using the t* buffers. The free columns do not depend on the
// delay; with sameFree they are taken from the cached evaluation.
func (f *fitter) output(z []float64, out []float64, sameFree bool) bool {
	sh := f.shape(z)
	m, err := sh.discretize(f.T)
	if err != nil {
		return false
	}
	w := f.w
	ta, te := w.ta, w.te
	if sameFree {
		ta, te = w.A, w.E
	}
	for _, s := range f.segs {
		m.forced(w.tf[s.start:s.end], f.u[s.start:s.end])
		if !sameFree {
			m.free(ta[s.start:s.end], te[s.start:s.end])
		}
	}
	for si, s := range f.segs {
		bt := f.sf[si].beta
		for k := s.start; k < s.end; k++ {
			out[k] = float64(f.K*w.tf[k]) + bt[0] + float64(bt[1]*ta[k]) + float64(bt[2]*te[k])
		}
	}
	return true
}

// jacobian computes ∂ŷ/∂z at the cached point into w.jac: forward
// differences during the search (their O(h) error, ~1e-4 relative, only
// perturbs the Newton step), central differences with central = true for
// the covariance.
func (f *fitter) jacobian(central bool) {
	if f.jacOK && (f.jacCentral || !central) {
		return
	}
	w := f.w
	zp := make([]float64, len(f.z))
	for i := 0; i < f.nz(); i++ {
		h := fdStep(i)
		copy(zp, f.z)
		lo, hi := f.z[i], f.z[i]+h
		if central && !(i == zDelay && f.z[i]-h < 0) { // one-sided at the bound delay = 0
			lo = f.z[i] - h
		}
		same := i == zDelay
		zp[i] = hi
		ok := f.output(zp, w.jac[i], same)
		if lo == f.z[i] {
			// The output at z itself is y − r on the windows.
			for _, s := range f.segs {
				a, b := f.window(s)
				for k := a; k < b; k++ {
					w.out[k] = f.y[k] - w.r[k]
				}
			}
		} else {
			zp[i] = lo
			ok = ok && f.output(zp, w.out, same)
		}
		for _, s := range f.segs {
			a, b := f.window(s)
			for k := a; k < b; k++ {
				v := (w.jac[i][k] - w.out[k]) / (hi - lo)
				if !ok || math.IsNaN(v) || math.IsInf(v, 0) {
					v = 0
				}
				w.jac[i][k] = v
			}
		}
	}
	f.jacOK, f.jacCentral = true, central
}

// ensure evaluates at z unless it is the cached point.
func (f *fitter) ensure(z []float64) {
	if !f.valid || !slices.Equal(f.z, z) {
		f.eval(z, nil)
	}
}

func (f *fitter) grad(g, z []float64) {
	f.ensure(z)
	f.jacobian(false)
	for i := range g {
		var s float64
		for _, seg := range f.segs {
			a, b := f.window(seg)
			s += dot(f.w.r[a:b], f.w.jac[i][a:b])
		}
		g[i] = -2 * s
	}
}

func (f *fitter) hess(h *mat.SymDense, z []float64) {
	f.ensure(z)
	f.jacobian(false)
	w := f.w
	n := f.nz()
	for i := 0; i < n; i++ {
		f.project(w.pj[i], w.jac[i])
		if f.ffNorm > 0 {
			var c float64
			for _, s := range f.segs {
				a, b := f.window(s)
				c += dot(w.pj[i][a:b], w.Ft[a:b])
			}
			c /= f.ffNorm
			for _, s := range f.segs {
				a, b := f.window(s)
				axpy(-c, w.Ft[a:b], w.pj[i][a:b])
			}
		}
	}
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			var s float64
			for _, seg := range f.segs {
				a, b := f.window(seg)
				s += dot(w.pj[i][a:b], w.pj[j][a:b])
			}
			h.SetSym(i, j, 2*s)
		}
	}
}

// minimize runs gonum's Newton method with the Gauss–Newton Hessian from
// z0 and returns the best point found; limited is true when the search
// stopped at its iteration or evaluation limit rather than converging.
func (f *fitter) minimize(z0 []float64) (best []float64, limited bool, err error) {
	prob := optimize.Problem{
		Func: func(z []float64) float64 { return f.eval(z, nil) },
		Grad: f.grad,
		Hess: f.hess,
	}
	settings := &optimize.Settings{
		// Gauss–Newton converges in a handful of iterations near the
		// optimum; the limits only bound the time spent on data the model
		// does not describe.
		MajorIterations: 60,
		FuncEvaluations: 300,
		// Stop when 4 iterations in a row gain less than 1e-10 of the
		// cost: far below the cost's statistical spread (~√(2/N) of it).
		Converger: &optimize.FunctionConverge{Relative: 1e-10, Iterations: 4},
	}
	res, err := optimize.Minimize(prob, z0, settings, &optimize.Newton{})
	if res == nil {
		return z0, false, err
	}
	best = res.X
	if f0 := f.eval(z0, nil); !(res.F <= f0) {
		best = z0
	}
	limited = res.Status == optimize.IterationLimit || res.Status == optimize.FunctionEvaluationLimit
	if err != nil && !errors.Is(err, optimize.ErrLinesearcherFailure) && !errors.Is(err, optimize.ErrNoProgress) {
		return best, limited, err
	}
	// A line search that cannot improve means the optimum is reached to
	// rounding: the best point is the answer.
	return best, limited, nil
}

// dot is Σ a[i]·b[i] with four partial sums (a fixed order, so the result
// is deterministic; the conversions prevent multiply-add fusion).
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += float64(a[i] * b[i])
		s1 += float64(a[i+1] * b[i+1])
		s2 += float64(a[i+2] * b[i+2])
		s3 += float64(a[i+3] * b[i+3])
	}
	for ; i < len(a); i++ {
		s0 += float64(a[i] * b[i])
	}
	return (s0 + s1) + (s2 + s3)
}

func axpy(alpha float64, x, y []float64) {
	y = y[:len(x)]
	for i, v := range x {
		y[i] += float64(alpha * v)
	}
}

func scale(alpha float64, x []float64) {
	for i := range x {
		x[i] *= alpha
	}
}
