package discrete

import (
	"fmt"
	"math"
	"slices"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Plant is the sampled plant seen by the controller: one state vector, the
// ZOH of the cascade G·H with the transport delay, and two outputs, the
// measured rate (sensor output, the feedback path) and the true rate (G's
// output, what the vehicle does).
//
// The sensor is driven by the plant, not by a hold, so the feedback path is
// the ZOH equivalent of the cascade, not the product of two ZOH equivalents.
// A transport delay τ = d·T + f is exact: whole samples as shift registers
// and the fraction by the split-interval (modified z-transform) integral of
// lti.ZOHDelay.
//
// The whole samples of the delay are kept apart, as Delay: the state-space
// part (A, B, Cm, Cy) holds the plant, the sensor and the fraction of a
// sample, and its input is the command delayed by Delay samples. A long
// delay then costs a ring buffer, not a dense matrix, and the transfer
// function stays well conditioned.
type Plant struct {
	N      int
	A, B   []float64 // x[k+1] = A x[k] + B ua[k − Delay]
	Cm, Cy []float64 // measured and true rate: y = C x[k]
	Delay  int       // whole samples of transport delay
	T      float64
	// Sections are the feedback filter chain (airframe.Axis.Filters)
	// discretized at 1/T, in the order the measured rate runs through
	// them; their states are the last states of x (see withSection).
	Sections []lti.Biquad
	// num/den is the feedback path as a transfer function in z, for fast
	// frequency sweeps; nil when it could not be formed accurately.
	num, den lti.Poly
	// unf is the feedback path before the filter chain (plant, sensor
	// and the fraction of a sample), with its transfer function unum/uden
	// (nil as num/den); without filters it is the feedback path itself.
	unf        lti.Disc
	unum, uden lti.Poly
}

// NewPlant samples the problem's plant and sensor at period T.
func NewPlant(p airframe.Axis, T float64) (Plant, error) {
	// Section-by-section realizations keep the matrix exponential
	// accurate (see lti.ZPK.CascadeSS).
	gs, err := p.Plant.Model.CascadeSS()
	if err != nil {
		return Plant{}, fmt.Errorf("plant: %w", err)
	}
	hs, err := p.Sensor.CascadeSS()
	if err != nil {
		return Plant{}, fmt.Errorf("sensor: %w", err)
	}
	// Cascade u → G → H, x = [xg; xh]: the sensor's output is the measured
	// rate, G's output (on the first gs.N states) the true rate.
	gh := lti.Series(gs, hs)
	cy := make([]float64, gh.N)
	copy(cy, gs.C)
	whole, frac := lti.SplitDelay(p.Plant.Delay, T)
	dm, err := lti.ZOHDelay(gh, T, frac)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant and sensor: %w", err)
	}
	dy, err := lti.ZOHDelay(lti.SS{N: gh.N, A: gh.A, B: gh.B, C: cy, D: gs.D}, T, frac)
	if err != nil {
		return Plant{}, fmt.Errorf("sampling the plant: %w", err)
	}
	if dm.N != dy.N || !slices.Equal(dm.A, dy.A) || !slices.Equal(dm.B, dy.B) {
		return Plant{}, fmt.Errorf("sampling the plant: inconsistent realizations")
	}
	pl := Plant{N: dm.N, A: dm.A, B: dm.B, Cm: dm.C, Cy: dy.C, Delay: whole, T: T}
	if dm.D != 0 || dy.D != 0 {
		// A sample at t_k sees the command held over the previous interval,
		// so a feedthrough acts through one extra state holding it.
		pl = pl.withHeldInput(dm.D, dy.D)
	}
	pl.num, pl.den = pl.transferFunction()
	pl.unf, pl.unum, pl.uden = pl.measured(), pl.num, pl.den
	if len(p.Filters) == 0 {
		return pl, nil
	}
	// The filter chain runs on the sampled sensor output, in the
	// controller: its sections are appended to the sampled plant, not
	// sampled themselves.
	if len(p.Filters) > airframe.MaxFilters {
		return Plant{}, fmt.Errorf("%d filters: at most %d", len(p.Filters), airframe.MaxFilters)
	}
	for i, f := range p.Filters {
		q, err := f.Section(1 / T)
		if err != nil {
			return Plant{}, fmt.Errorf("filter[%d]: %w", i, err)
		}
		pl = pl.withSection(q)
		pl.Sections = append(pl.Sections, q)
	}
	pl.num, pl.den = pl.chainTF()
	return pl, nil
}

// chainTF returns the feedback path with the filter chain as num/den in
// z: the path before the chain times each section's polynomials, (B0·z² +
// B1·z + B2)/(z² + A1·z + A2) or (B0·z + B1)/(z + A1). The expanded
// transfer function of the whole state space loses the accuracy check of
// transferFunction where a notch puts zeros on the unit circle; the
// product of the factors keeps it. nil when the path before the chain has
// none, or when the product disagrees with the resolvent as in
// transferFunction.
func (p Plant) chainTF() (lti.Poly, lti.Poly) {
	if p.uden == nil {
		return nil, nil
	}
	num, den := p.unum, p.uden
	for _, q := range p.Sections {
		n, d := lti.Poly{q.B2, q.B1, q.B0}, lti.Poly{q.A2, q.A1, 1}
		if q.B2 == 0 && q.A2 == 0 {
			n, d = lti.Poly{q.B1, q.B0}, lti.Poly{q.A1, 1}
		}
		num, den = lti.PolyMul(num, n), lti.PolyMul(den, d)
	}
	m := p.measured()
	for _, th := range []float64{1e-3, 0.01, 0.1, 0.5, 1, 2, 3} {
		z := complexExp(th)
		want := m.Eval(z)
		// Relative to the path before the chain: at a notch's centre
		// the whole path is ~0.
		if got := lti.Div(num.Eval(z), den.Eval(z)); !(lti.Abs(got-want) <= 1e-7*lti.Abs(p.evalUnfiltered(z))) {
			return nil, nil
		}
	}
	return num, den
}

// SectionSS returns the state-space form of the section q as the
// generated code runs it, transposed direct form II:
//
//	y = B0·u + s1,  s1' = B1·u − A1·y + s2,  s2' = B2·u − A2·y,
//
// so with the state (s1, s2): A = [[−A1, 1], [−A2, 0]], B = [B1 − A1·B0;
// B2 − A2·B0], C = [1, 0], D = B0; a first-order section (B2 = A2 = 0)
// has the state s1 alone (Oppenheim & Schafer, Discrete-Time Signal
// Processing, transposed direct form II; from memory).
func SectionSS(q lti.Biquad) (a, b, c []float64, d float64) {
	b1 := q.B1 - float64(q.A1*q.B0)
	if q.B2 == 0 && q.A2 == 0 {
		return []float64{-q.A1}, []float64{b1}, []float64{1}, q.B0
	}
	b2 := q.B2 - float64(q.A2*q.B0)
	return []float64{-q.A1, 1, -q.A2, 0}, []float64{b1, b2}, []float64{1, 0}, q.B0
}

// withSection appends the section q to the measured output: with the
// section's state xf driven by the measured rate ym = Cm·x (the sampled
// path has no feedthrough),
//
//	[x; xf]' = [[A, 0], [Bf·Cm, Af]]·[x; xf] + [B; 0]·u,
//	ym' = [Df·Cm, Cf]·[x; xf],  yt = [Cy, 0]·[x; xf],
//
// the true rate unfiltered.
func (p Plant) withSection(q lti.Biquad) Plant {
	af, bf, cf, df := SectionSS(q)
	nf := len(cf)
	n := p.N + nf
	r := Plant{N: n, A: make([]float64, n*n), B: make([]float64, n), Cm: make([]float64, n), Cy: make([]float64, n),
		Delay: p.Delay, T: p.T, Sections: p.Sections, unf: p.unf, unum: p.unum, uden: p.uden}
	for i := 0; i < p.N; i++ {
		copy(r.A[i*n:i*n+p.N], p.A[i*p.N:(i+1)*p.N])
		r.B[i] = p.B[i]
		r.Cm[i] = float64(df * p.Cm[i])
		r.Cy[i] = p.Cy[i]
	}
	for i := 0; i < nf; i++ {
		row := (p.N + i) * n
		for j := 0; j < p.N; j++ {
			r.A[row+j] = float64(bf[i] * p.Cm[j])
		}
		copy(r.A[row+p.N:row+n], af[i*nf:(i+1)*nf])
		r.Cm[p.N+i] = cf[i]
	}
	return r
}

// Unfiltered returns the plant before its filter chain: the same state
// without the sections' states (the last ones), the measured rate the
// sensor gives; the plant itself without a chain.
func (p Plant) Unfiltered() Plant {
	if len(p.Sections) == 0 {
		return p
	}
	n := p.unf.N
	return Plant{N: n, A: p.unf.A, B: p.unf.B, Cm: p.unf.C, Cy: p.Cy[:n], Delay: p.Delay, T: p.T,
		unf: p.unf, unum: p.unum, uden: p.uden, num: p.unum, den: p.uden}
}

// WithSections returns the plant with its filter chain replaced by the
// sections qs (the chain's coefficients as the generated code rounds
// them, for the re-verification of a realization).
func (p Plant) WithSections(qs []lti.Biquad) Plant {
	r := p.Unfiltered()
	r.Sections = nil
	for _, q := range qs {
		r = r.withSection(q)
		r.Sections = append(r.Sections, q)
	}
	r.num, r.den = r.chainTF()
	return r
}

// SectionPhaseDeg returns the phase of the section q at w rad/s when it
// runs at hz samples per second, in degrees: ∠q(e^(jωT)).
func SectionPhaseDeg(q lti.Biquad, w, hz float64) float64 {
	return lti.Phase(q.At(w/(2*math.Pi), hz)) * 180 / math.Pi
}

// Filter returns the response of the filter chain at z (1 without one).
func (p Plant) Filter(z complex128) complex128 {
	v := complex(1, 0)
	for _, q := range p.Sections {
		v = lti.Mul(v, q.Eval(z))
	}
	return v
}

// evalUnfiltered returns the frequency response at z of the feedback path
// before the filter chain, without the whole-sample delay.
func (p Plant) evalUnfiltered(z complex128) complex128 {
	if p.uden != nil {
		return lti.Div(p.unum.Eval(z), p.uden.Eval(z))
	}
	return p.unf.Eval(z)
}

// transferFunction returns Cm(zI − A)⁻¹B as num/den in z (lti.Disc.TF,
// the determinant lemma), checked against the resolvent at a few points on
// the unit circle and dropped (nil) when they disagree by more than 1e-7
// relative, in which case sweeps use the resolvent. Seven digits of the
// frequency response are far more than a margin or a crossover needs; the
// expanded numerator of a plant of high relative degree loses more than
// nine near Nyquist, where |P| is tiny (1e-8 at |P| = 3e-7 on the demo
// gimbal's pitch).
func (p Plant) transferFunction() (lti.Poly, lti.Poly) {
	d := p.measured()
	tf, err := d.TF()
	if err != nil {
		return nil, nil
	}
	for _, th := range []float64{1e-3, 0.01, 0.1, 0.5, 1, 2, 3} {
		z := complexExp(th)
		want := d.Eval(z)
		if got := tf.Eval(z); !(lti.Abs(got-want) <= 1e-7*lti.Abs(want)) {
			return nil, nil
		}
	}
	return tf.Num, tf.Den
}

// TrueRate returns the true-rate output path (plant without sensor) as an
// lti.Disc on the same state, without the whole-sample delay.
func (p Plant) TrueRate() lti.Disc {
	return lti.Disc{N: p.N, A: p.A, B: p.B, C: p.Cy, T: p.T}
}

// Measured returns the feedback path (plant and sensor) as an lti.Disc,
// without the whole-sample delay.
func (p Plant) Measured() lti.Disc { return p.measured() }

// evalMeasured returns the frequency response at z of the feedback path
// without its whole-sample delay (the caller applies z^(−Delay)).
func (p Plant) evalMeasured(z complex128) complex128 {
	if len(p.Sections) > 0 {
		// The path before the chain times the sections: exact where the
		// expanded polynomials would lose digits.
		return lti.Mul(p.evalUnfiltered(z), p.Filter(z))
	}
	if p.den != nil {
		return lti.Div(p.num.Eval(z), p.den.Eval(z))
	}
	return p.measured().Eval(z)
}

// Full returns the feedback path with the whole-sample delay as shift
// registers, as one lti.Disc (for tests and reference comparisons).
func (p Plant) Full() lti.Disc {
	m := p.Delay
	n := p.N + m
	d := lti.Disc{N: n, A: make([]float64, n*n), B: make([]float64, n), C: make([]float64, n), T: p.T}
	for i := 0; i < p.N; i++ {
		copy(d.A[i*n:i*n+p.N], p.A[i*p.N:(i+1)*p.N])
		d.C[i] = p.Cm[i]
		if m == 0 {
			d.B[i] = p.B[i]
		} else {
			d.A[i*n+p.N+m-1] = p.B[i]
		}
	}
	if m > 0 {
		d.B[p.N] = 1
		for i := 1; i < m; i++ {
			d.A[(p.N+i)*n+p.N+i-1] = 1
		}
	}
	return d
}

// withHeldInput adds a state z[k+1] = ua[k] carrying the feedthroughs.
func (p Plant) withHeldInput(dm, dy float64) Plant {
	n := p.N + 1
	q := Plant{N: n, A: make([]float64, n*n), B: make([]float64, n), Cm: make([]float64, n), Cy: make([]float64, n), T: p.T}
	for i := 0; i < p.N; i++ {
		copy(q.A[i*n:i*n+p.N], p.A[i*p.N:(i+1)*p.N])
		q.B[i] = p.B[i]
	}
	q.B[p.N] = 1
	copy(q.Cm, p.Cm)
	copy(q.Cy, p.Cy)
	q.Cm[p.N], q.Cy[p.N] = dm, dy
	return q
}

// measured returns the feedback-path model as an lti.Disc.
func (p Plant) measured() lti.Disc {
	return lti.Disc{N: p.N, A: p.A, B: p.B, C: p.Cm, T: p.T}
}
