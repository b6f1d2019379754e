package synth

import (
	"math"
	"slices"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// FrequencyGrid returns the frequency grid of the frequency checks on
// [lo, hi] (rad/s): 40 points per decade; around every lightly damped
// root r (damping below 0.3) 49 points spaced ζ/8 of |r| across ±3ζ·|r|,
// so that a resonance's peak (half-power width 2ζ·|r|) is resolved to a
// fraction of a percent; and, where a transport delay tau turns the phase
// by more than half a radian between log points, a linear spacing of
// 0.5/tau, so that the phase is never aliased. At most maxGrid points.
func FrequencyGrid(lo, hi float64, roots []complex128, tau float64) []float64 {
	const perDecade, maxGrid = 40, 40000
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil
	}
	n := int(math.Ceil(perDecade*lti.Log10(hi/lo))) + 1
	ws := make([]float64, 0, n+64)
	for i := 0; i < n; i++ {
		ws = append(ws, lo*lti.Pow(hi/lo, float64(i)/float64(n-1)))
	}
	for _, r := range roots {
		a := lti.Abs(r)
		if a == 0 || imag(r) == 0 {
			continue
		}
		z := -real(r) / a
		if !(z < 0.3) || a < lo || a > hi {
			continue
		}
		z = math.Max(z, 1e-4)
		for k := -24; k <= 24; k++ {
			if w := a * (1 + float64(float64(k)*z/8)); w > lo && w < hi {
				ws = append(ws, w)
			}
		}
	}
	if tau > 0 {
		// Log spacing turns the delay's phase by ω·τ·(10^(1/40) − 1).
		dw := 0.5 / tau
		from := dw / (lti.Pow(10, 1.0/perDecade) - 1)
		for w := math.Max(from, lo); w < hi && len(ws) < maxGrid; w += dw {
			ws = append(ws, w)
		}
	}
	slices.Sort(ws)
	ws = slices.Compact(ws)
	if len(ws) > maxGrid {
		ws = ws[:maxGrid]
	}
	return ws
}

// contLoops is the continuous loop over the envelope (Loops).
type contLoops struct {
	p       airframe.Axis
	corners []airframe.Corner
	axes    []airframe.Axis
	grid    []float64
	open    [][]complex128
}

// ContinuousLoops returns the continuous loop of p over its envelope, for
// the search and the continuous verification: the exact delay e^(−sτ) in
// the frequency checks, its Padé approximant in the step responses and the
// stability test (Routh–Hurwitz).
func ContinuousLoops(p airframe.Axis) Loops {
	l := &contLoops{p: p, corners: p.Envelope.Corners()}
	lo, hi := math.Inf(1), 0.0
	var roots []complex128
	tau := 0.0
	for _, c := range l.corners {
		a := p.At(c)
		l.axes = append(l.axes, a)
		flo, fhi := frequencySpan(a)
		lo, hi = math.Min(lo, flo), math.Max(hi, fhi)
		roots = append(append(append(roots, a.Plant.Model.Poles...), a.Plant.Model.Zeros...), a.Sensor.Poles...)
		tau = math.Max(tau, a.Plant.Delay)
	}
	// The grid resolves the derivative filters' notches and peaks
	// (DesignAxis rejects filters that cannot be formed).
	if z, err := p.Ctrl.DerivativeZPK(); err == nil {
		roots = append(append(roots, z.Poles...), z.Zeros...)
	}
	if tf := p.Ctrl.Tf(); p.Ctrl.Form.HasDerivative() && tf > 0 {
		hi = math.Max(hi, 100/tf)
	}
	if p.Ctrl.Form == airframe.FormLead {
		// The search puts the pole up to 200 times the zero.
		hi = math.Max(hi, -p.Ctrl.LeadZero*2e4)
		lo = math.Min(lo, -p.Ctrl.LeadZero/100)
	}
	l.grid = FrequencyGrid(lo, hi, roots, tau)
	for _, a := range l.axes {
		o := make([]complex128, len(l.grid))
		for k, w := range l.grid {
			o[k] = a.OpenLoop(complex(0, w))
		}
		l.open = append(l.open, o)
	}
	return l
}

func (l *contLoops) Corners() []airframe.Corner { return l.corners }
func (l *contLoops) Primary() int               { return len(l.corners) }
func (l *contLoops) Grid() []float64            { return l.grid }
func (l *contLoops) Open(i int) []complex128    { return l.open[i] }

func (l *contLoops) Ctrl(c Controller, out []complex128) {
	for k, w := range l.grid {
		out[k] = c.Eval(complex(0, w))
	}
}

func (l *contLoops) OpenAt(i int, w float64) complex128 {
	return l.axes[i].OpenLoop(complex(0, w))
}

func (l *contLoops) CtrlAt(c Controller) func(w float64) complex128 {
	return func(w float64) complex128 { return c.Eval(complex(0, w)) }
}

func (l *contLoops) Stable(c Controller, i int) (bool, error) {
	cl, err := newClosedLoop(l.axes[i], c)
	if err != nil {
		return false, err
	}
	return cl.char.Hurwitz(), nil
}

// Step simulates both setpoint weights on one state over 4·Ts, as the
// sampled loop does: a candidate must be inside the band from Ts on, which
// 3·Ts of record inside shows for the decaying modes of a stable loop; the
// chosen design is verified again on the horizon its slowest pole needs.
func (l *contLoops) Step(c Controller, i int) (Evaluation, error) {
	var e Evaluation
	cl, err := newClosedLoop(l.axes[i], c)
	if err != nil {
		return e, err
	}
	e.H = l.p.Spec.SettlingTime / 200
	e.N = 801
	c0, c1 := c, c
	c0.B, c1.B = 0, 1
	n0 := lti.PolyMul(lti.PolyMul(cl.g.Num, c0.Setpoint().Num), cl.h.Den).Trim()
	n1 := lti.PolyMul(lti.PolyMul(cl.g.Num, c1.Setpoint().Num), cl.h.Den).Trim()
	d, cs, ds, err := stepSystem(cl.char, []lti.Poly{n0, n1}, e.H)
	if err != nil {
		return e, err
	}
	e.Final0, e.Final1 = evalRatio(n0, cl.char, 0), evalRatio(n1, cl.char, 0)
	e.Respond = d.NewStepPair(cs[0], cs[1], ds[0], ds[1]).Run
	return e, nil
}

// Disturb is the response of the true rate to a unit load step at the
// plant input: Y/W = G/(1 + C·G·H) = Ng·Dc·Dh / char.
func (l *contLoops) Disturb(c Controller, i int, span float64) (Response, error) {
	cl, err := newClosedLoop(l.axes[i], c)
	if err != nil {
		return Response{}, err
	}
	num := lti.PolyMul(lti.PolyMul(cl.g.Num, cl.c.Den), cl.h.Den).Trim()
	h := span / 800
	ys, err := stepResponses(cl.char, []lti.Poly{num}, h, 801)
	if err != nil {
		return Response{}, err
	}
	return Response{H: h, Y: ys[0]}, nil
}
