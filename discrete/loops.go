package discrete

import (
	"fmt"
	"math"
	"math/cmplx"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// Loops is the sampled loop of one axis at every plant of its envelope,
// as the design search judges it (synth.Loops): the controller as the
// firmware runs it (discretized at the loop rate), the ZOH plant and the
// compute delay.
type Loops struct {
	p       airframe.Axis
	pc      airframe.Axis // p as the continuous design sees it (airframe.Axis.Continuous)
	d       int           // compute delay, samples
	T       float64
	corners []airframe.Corner
	primary int // the nominal plant and the box's corners lead corners
	plants  []Plant
	grid    []float64
	z       []complex128 // e^(jωT) on the grid
	open    [][]complex128
	// filt is the filter chain's response on the grid (nil without
	// one): the frequency checks take it as part of the controller's
	// feedback path, so that Open is the plant before it and the noise
	// gain |C·F| runs from the sensor's output to the command.
	filt []complex128
	// prewarp is the frequency at which a tustin_prewarp controller is
	// discretized during the search (the textbook target's ωn); the
	// chosen design is realized at its own crossover and verified again.
	prewarp float64
	// last is the last controller realize discretized, and its result:
	// the search asks for the same controller at every plant in turn
	// (and a tustin_prewarp one costs a crossover search). It makes a
	// Loops unsafe for concurrent use, which the search never needs.
	last struct {
		have bool
		c    synth.Controller
		k    Coeffs
		err  error
	}
}

// maxSchurDegree is the largest characteristic polynomial judged by the
// Schur–Cohn test (O(n²), and its recursion loses accuracy on long
// polynomials); longer ones, the loops with long delays, are judged by
// the winding number of the characteristic polynomial on the unit circle,
// whose cost grows linearly with the delay.
const maxSchurDegree = 64

// NewLoops samples the plant of p at every corner of its envelope at the
// loop rate, and evaluates each on the grid of the frequency checks.
func NewLoops(p airframe.Axis, loop airframe.Loop) (*Loops, error) {
	T := 1 / loop.Hz
	l := &Loops{p: p, pc: p.Continuous(), d: loop.ComputeDelay, T: T, corners: fineCorners(p.Envelope), primary: len(p.Envelope.Corners())}
	if t, err := synth.TargetFromSpec(p.Spec); err == nil {
		l.prewarp = t.OmegaN
	}
	ny := math.Pi / T
	lo := ny / 1e4
	var roots []complex128
	maxDelay := 0
	for _, c := range l.corners {
		a := p.At(c)
		pl, err := NewPlant(a, T)
		if err != nil {
			return nil, fmt.Errorf("corner %s: %w", cornerText(c), err)
		}
		l.plants = append(l.plants, pl)
		flo, _ := spanOf(a)
		lo = math.Min(lo, flo)
		roots = append(append(append(roots, a.Plant.Model.Poles...), a.Plant.Model.Zeros...), a.Sensor.Poles...)
		if c == airframe.Nominal() && len(a.Filters) > 0 {
			// The grid resolves the filters' notches and peaks too.
			h, err := a.FeedbackZPK()
			if err != nil {
				return nil, fmt.Errorf("feedback filters: %w", err)
			}
			roots = append(append(roots, h.Poles...), h.Zeros...)
		}
		maxDelay = max(maxDelay, pl.Delay)
	}
	// The grid resolves the derivative filters' notches and peaks.
	z, err := p.Ctrl.DerivativeZPK()
	if err != nil {
		return nil, fmt.Errorf("derivative filters: %w", err)
	}
	roots = append(append(roots, z.Poles...), z.Zeros...)
	// The delay z^(−D) turns the phase like a transport delay of D·T.
	l.grid = synth.FrequencyGrid(lo, ny*(1-1e-9), roots, float64(l.d+maxDelay+1)*T)
	l.z = make([]complex128, len(l.grid))
	for k, w := range l.grid {
		l.z[k] = complexExp(w * T)
	}
	for _, pl := range l.plants[:l.primary] {
		o := make([]complex128, len(l.grid))
		D := float64(l.d + pl.Delay)
		for k, w := range l.grid {
			o[k] = lti.Mul(pl.evalUnfiltered(l.z[k]), complexExp(-D*w*T))
		}
		l.open = append(l.open, o)
	}
	if pl := l.plants[0]; len(pl.Sections) > 0 {
		l.filt = make([]complex128, len(l.grid))
		for k, z := range l.z {
			l.filt[k] = pl.Filter(z)
		}
	}
	return l, nil
}

// cornerText names a corner in messages.
func cornerText(c airframe.Corner) string {
	return fmt.Sprintf("gain ×%g, lag ×%g, delay %+g s", c.GainScale, c.LagScale, c.DelayAdd)
}

// Corners lists the plants of the final verification: the nominal plant,
// the envelope's corners, then the finer look in between (fineCorners).
func (l *Loops) Corners() []airframe.Corner { return l.corners }

// Primary is the number of leading plants that are the nominal plant and
// the box's corners.
func (l *Loops) Primary() int { return l.primary }

// Grid returns the frequencies of the frequency checks, rad/s, up to just
// below Nyquist.
func (l *Loops) Grid() []float64 { return l.grid }

// Open returns the sampled loop without the controller and its filter
// chain at corner i, Pm(e^(jωT))·e^(−jωT·(d + Delay)), on the grid.
func (l *Loops) Open(i int) []complex128 { return l.open[i] }

// Plant returns the sampled plant of corner i.
func (l *Loops) Plant(i int) Plant { return l.plants[i] }

// realize discretizes c as the search sees it: the linear controller, so
// without anti-windup (whose tracking time needs Ki > 0, and which does
// not act on the linear loop).
//
// A tustin_prewarp controller is prewarped at its own continuous
// crossover, as the design will be (DesignAxis), so that the time checks
// judge the controller the firmware runs; only the frequency checks' basis
// (Ctrl, which must be linear in the gains) uses the fixed frequency.
func (l *Loops) realize(c synth.Controller) (Coeffs, error) {
	if l.last.have && sameController(c, l.last.c) {
		return l.last.k, l.last.err
	}
	k, err := l.realizeNew(c)
	l.last.have, l.last.c, l.last.k, l.last.err = true, c, k, err
	return k, err
}

// sameController reports whether a and b are the same controller, their
// numbers equal bit for bit.
func sameController(a, b synth.Controller) bool {
	same := func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) }
	return a.Form == b.Form && a.DerivativeOnError == b.DerivativeOnError && same(a.Kp, b.Kp) && same(a.Ki, b.Ki) &&
		same(a.Kd, b.Kd) && same(a.Tf, b.Tf) && same(a.B, b.B) && same(a.K, b.K) && same(a.Zero, b.Zero) && same(a.Pole, b.Pole) && a.DF == b.DF
}

// realizeNew is realize without its memory of the last controller.
func (l *Loops) realizeNew(c synth.Controller) (Coeffs, error) {
	ctl := l.p.Ctrl
	ctl.AntiWindup, ctl.TrackingTime = string(AWNone), 0
	w := l.prewarp
	if Method(ctl.Discretize) == TustinPrewarp {
		w = synth.Crossover(l.pc, c)
	}
	k, _, err := Realize(c, ctl, l.T, w)
	return k, err
}

// realizeLinear discretizes c at the fixed prewarp frequency: linear in
// the gains, for the frequency checks' basis.
func (l *Loops) realizeLinear(c synth.Controller) (Coeffs, error) {
	ctl := l.p.Ctrl
	ctl.AntiWindup, ctl.TrackingTime = string(AWNone), 0
	k, _, err := Realize(c, ctl, l.T, l.prewarp)
	return k, err
}

// Ctrl writes the controller's feedback path on the grid, after the
// filter chain: C·F, from the sensor's output to the command (F is fixed,
// so C·F stays linear in the gains).
func (l *Loops) Ctrl(c synth.Controller, out []complex128) {
	k, err := l.realizeLinear(c)
	if err != nil {
		for i := range out {
			out[i] = cmplx.NaN()
		}
		return
	}
	for i, z := range l.z {
		n, d := feedbackRatio(k, cmplx.Conj(z))
		out[i] = lti.Div(n, d)
		if l.filt != nil {
			out[i] = lti.Mul(out[i], l.filt[i])
		}
	}
}

// OpenAt is Open at the frequency w (rad/s), off the grid.
func (l *Loops) OpenAt(i int, w float64) complex128 {
	pl := l.plants[i]
	D := float64(l.d + pl.Delay)
	return lti.Mul(pl.evalUnfiltered(complexExp(w*l.T)), complexExp(-D*w*l.T))
}

// CtrlAt returns Ctrl's C·F of c at any frequency w (rad/s), off the grid.
func (l *Loops) CtrlAt(c synth.Controller) func(w float64) complex128 {
	k, err := l.realizeLinear(c)
	pl := l.plants[0]
	return func(w float64) complex128 {
		if err != nil {
			return cmplx.NaN()
		}
		z := complexExp(w * l.T)
		n, d := feedbackRatio(k, cmplx.Conj(z))
		v := lti.Div(n, d)
		if l.filt != nil {
			v = lti.Mul(v, pl.Filter(z))
		}
		return v
	}
}

// Stable reports whether the sampled loop of c at corner i is stable.
func (l *Loops) Stable(c synth.Controller, i int) (bool, error) {
	k, err := l.realize(c)
	if err != nil {
		return false, err
	}
	return stable(l.plants[i], k, l.d)
}

// stable judges the closed loop of coefficients k on plant pl with compute
// delay d: the Schur–Cohn test on the characteristic polynomial, or for a
// long one its winding number; eigenvalues where the plant's transfer
// function could not be formed.
func stable(pl Plant, k Coeffs, d int) (bool, error) {
	if pl.den == nil {
		ps, err := newClosedLoop(pl, linearize(k), d).poles()
		if err != nil {
			return false, err
		}
		return stabilityMargin(ps) > 0, nil
	}
	nc, _, dc := k.TF()
	D := d + pl.Delay
	if D+len(dc)+len(pl.den) <= maxSchurDegree {
		return schurStable(characteristic(pl, k, d)), nil
	}
	return windingStable(lti.PolyMul(dc, pl.den).Trim(), lti.PolyMul(nc, pl.num).Trim(), D), nil
}

// windingStable reports whether every root of χ(z) = a(z)·z^D + b(z) lies
// inside the unit circle, by the argument principle: the number of roots
// inside equals the winding number of χ(e^(jθ)) about 0 as θ runs over
// [0, 2π], which for real coefficients is twice its turn over [0, π]
// (conjugate symmetry); χ has degree D + deg a (deg b ≤ that). The turn
// is summed on 8 points per root of χ, and every step that turns by more
// than 45° is split (recursively, 30 levels), so that a turn is never
// aliased; a value of χ within the rounding of its evaluation is a root
// on the circle, unstable. The cost grows linearly with D, where
// eigenvalues or the Schur–Cohn recursion grow with D³ and D².
func windingStable(a, b lti.Poly, D int) bool {
	n := D + len(a) - 1
	if len(b)-1 > n || a[len(a)-1] == 0 {
		return false
	}
	scale := 0.0
	for _, c := range a {
		scale += math.Abs(c)
	}
	for _, c := range b {
		scale += math.Abs(c)
	}
	chi := func(th float64) complex128 {
		z := complexExp(th)
		return lti.Mul(a.Eval(z), complexExp(float64(D)*th)) + b.Eval(z)
	}
	// Horner's rounding on the unit circle is at most about 2·deg·u times
	// the sum of the coefficients' magnitudes (Higham, Accuracy and
	// Stability of Numerical Algorithms, §5.1, from memory), twice that
	// for complex arithmetic; a value below the bound may be a root on
	// the circle. A fixed 1e-13·scale called stable loops with a slow
	// pole 1e-5 inside the circle unstable.
	tiny := float64(4*(len(a)+len(b))+8) * 0x1p-53 * scale
	var turn float64
	ok := true
	var split func(t0, t1 float64, v0, v1 complex128, depth int)
	split = func(t0, t1 float64, v0, v1 complex128, depth int) {
		if !ok {
			return
		}
		dph := lti.Phase(lti.Div(v1, v0))
		if math.Abs(dph) <= math.Pi/4 || depth >= 30 {
			turn += dph
			return
		}
		tm := (t0 + t1) / 2
		vm := chi(tm)
		if lti.Abs(vm) <= tiny {
			ok = false
			return
		}
		split(t0, tm, v0, vm, depth+1)
		split(tm, t1, vm, v1, depth+1)
	}
	m := 8*n + 64
	prev := chi(0)
	if lti.Abs(prev) <= tiny {
		return false
	}
	for j := 1; j <= m; j++ {
		th := math.Pi * float64(j) / float64(m)
		v := chi(th)
		if lti.Abs(v) <= tiny {
			return false
		}
		split(math.Pi*float64(j-1)/float64(m), th, prev, v, 0)
		prev = v
	}
	if !ok {
		return false
	}
	inside := int(math.Round(turn / math.Pi))
	return inside == n
}

// Step returns the setpoint step responses of c at corner i (setpoint
// weights 0 and 1 in one pass) over four settling times.
func (l *Loops) Step(c synth.Controller, i int) (synth.Evaluation, error) {
	var e synth.Evaluation
	k, err := l.realize(c)
	if err != nil {
		return e, err
	}
	pl := l.plants[i]
	k0, k1 := k, k
	k0.KpB, k1.KpB = 0, k.Kp
	// The two controllers differ in the direct setpoint gain alone.
	c0 := linearize(k0)
	c1 := c0
	c1.Dr = directSetpoint(k1)
	e.N, e.H = horizon(l.p.Spec.SettlingTime, pl.T, nil, 4), pl.T
	e.Final0, e.Final1 = finalValues(pl, c0, c1)
	e.Respond = newPairStepper(pl, c0, c1, l.d).run
	return e, nil
}

// Disturb returns the true rate after a unit load step at the plant input
// of corner i, over at least span seconds.
func (l *Loops) Disturb(c synth.Controller, i int, span float64) (synth.Response, error) {
	k, err := l.realize(c)
	if err != nil {
		return synth.Response{}, err
	}
	pl := l.plants[i]
	n := int(math.Ceil(span/pl.T)) + 1
	return synth.Response{H: pl.T, Y: disturbance(pl, linearize(k), l.d, min(n, maxHorizon))}, nil
}

// maxHorizon bounds every simulated record, in samples.
const maxHorizon = 200000

// disturbance simulates the linear loop (setpoint 0) after a unit step w
// at the plant input, and returns the true rate at the n samples. The
// disturbance adds to the command where the command enters the plant
// model, after the compute delay: it takes the plant's own path, its
// transport delay (whole samples here, the fraction in the sampled
// states) included.
func disturbance(pl Plant, c linearCtrl, d, n int) []float64 {
	D := d + pl.Delay
	np, m := pl.N, c.M
	x, xn := make([]float64, np), make([]float64, np)
	xc, xcn := make([]float64, m), make([]float64, m)
	ring := make([]float64, D+1)
	y := make([]float64, n)
	w := 0
	for t := 0; t < n; t++ {
		var ym, yt float64
		for j := 0; j < np; j++ {
			ym += float64(pl.Cm[j] * x[j])
			yt += float64(pl.Cy[j] * x[j])
		}
		y[t] = yt
		cmd := float64(c.Dy * ym)
		for j := 0; j < m; j++ {
			cmd += float64(c.Cc[j] * xc[j])
		}
		for r := 0; r < m; r++ {
			acc := float64(c.By[r] * ym)
			for j := 0; j < m; j++ {
				acc += float64(c.Ac[r*m+j] * xc[j])
			}
			xcn[r] = acc
		}
		xc, xcn = xcn, xc
		ring[w] = cmd
		w++
		if w == len(ring) {
			w = 0
		}
		ua := ring[w]
		if t >= pl.Delay {
			ua++
		}
		for r := 0; r < np; r++ {
			acc := float64(pl.B[r] * ua)
			for j := 0; j < np; j++ {
				acc += float64(pl.A[r*np+j] * x[j])
			}
			xn[r] = acc
		}
		x, xn = xn, x
	}
	return y
}
