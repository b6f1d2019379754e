package synth

import (
	"errors"
	"fmt"
	"math"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Evaluation is a candidate controller's behaviour as refinement judges it.
type Evaluation struct {
	Stable bool
	// Margins computes the loop's margins; refinement calls it only for
	// candidates whose time response is good enough to matter, as the
	// frequency sweep costs more than the step.
	Margins func() lti.Margins
	// The setpoint step responses (true rate) with setpoint weights b = 0
	// and b = 1 have N samples at step H and final values Final0, Final1.
	// The response is linear in the weight, y(b) = y0 + b·(y1 − y0), and
	// so is its final value: two simulations serve every weight.
	N                 int
	H, Final0, Final1 float64
	// Respond writes the next len(y0) samples of both responses into y0
	// and y1 (len(y1) = len(y0)), continuing where the last call ended:
	// refinement stops a response as soon as it cannot meet the spec.
	Respond func(y0, y1 []float64)
}

// Evaluator measures a controller for refinement. The continuous evaluator
// is ContinuousEvaluator; the discrete package supplies one that judges the
// sampled loop.
type Evaluator func(c Controller) (Evaluation, error)

// ContinuousEvaluator judges candidates by the full-order continuous loop.
func ContinuousEvaluator(p airframe.Axis) Evaluator {
	return func(c Controller) (Evaluation, error) {
		var e Evaluation
		cl, err := newClosedLoop(p, c)
		if err != nil {
			return e, err
		}
		// Stability by the Routh–Hurwitz test: no roots needed.
		if e.Stable = cl.char.Hurwitz(); !e.Stable {
			return e, nil
		}
		e.Margins = func() lti.Margins { return loopMargins(p, c) }
		// As for the sampled loop, a record of 4·Ts judges a candidate
		// (inside the band from Ts on for 3·Ts); the chosen design is
		// verified again on the horizon its slowest pole needs.
		e.H = p.Spec.SettlingTime / 200
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
}

// weightWindow is a necessary condition on the setpoint weight b for a
// response within a violation bound β of the time spec: the interval
// [lo, hi] (within the admitted [bmin, bmax]) of weights whose response,
// at every sample seen so far, is at most (1 + os')·F with os' = os·(1+β),
// and inside the settling band at every sample after Ts' = Ts·(1+β).
//
// A response with timeViolation ≤ β has overshoot ≤ os' and settling time
// ≤ Ts'; its last sample outside the band is then at or before Ts' (the
// interpolated exit is after that sample), so every weight with violation
// ≤ β is in the window, and only those need a step summary. Each sample
// gives linear inequalities in b: with d = y1 − y0 and F(b) = F0 + b·dF > 0,
// the peak bound y ≤ (1 + os')·F reads b·(d − (1 + os')·dF) ≤ (1 + os')·F0
// − y0, and the band |y − F| ≤ band·F reads b·(d − (1 + band)·dF) ≤
// (1 + band)·F0 − y0 and −b·(d − (1 − band)·dF) ≤ y0 − (1 − band)·F0. Their
// intersection is an interval, kept in one pass.
type weightWindow struct {
	lo, hi               float64
	k0                   int // first sample held to the band
	f0, df               float64
	osHi, bandHi, bandLo float64
	// ok is false where the test does not apply: a final value not
	// positive over the admitted weights or a non-finite sample.
	ok bool
}

func newWeightWindow(e *Evaluation, s airframe.Spec, bmin, bmax, beta float64) weightWindow {
	w := weightWindow{lo: bmin, hi: bmax, f0: e.Final0, df: e.Final1 - e.Final0,
		osHi: 1 + s.Overshoot*(1+beta), bandHi: 1 + s.Band, bandLo: 1 - s.Band, k0: e.N}
	fmin, fmax := w.f0+bmin*w.df, w.f0+bmax*w.df
	w.ok = fmin > 0 && fmax > 0 && !math.IsInf(fmin, 0) && !math.IsInf(fmax, 0)
	if t := s.SettlingTime * (1 + beta) / e.H; t < float64(e.N) {
		w.k0 = int(math.Floor(t)) + 1
	}
	return w
}

// add narrows the window by sample k of the responses for b = 0 and 1.
func (w *weightWindow) add(k int, y0, y1 float64) {
	d := y1 - y0
	if math.IsNaN(y0) || math.IsNaN(d) || math.IsInf(y0, 0) || math.IsInf(d, 0) {
		w.ok = false
		return
	}
	w.bound(d-w.osHi*w.df, w.osHi*w.f0-y0)
	if k >= w.k0 {
		w.bound(d-w.bandHi*w.df, w.bandHi*w.f0-y0)
		w.bound(-(d - w.bandLo*w.df), y0-w.bandLo*w.f0)
	}
}

// bound applies a·b ≤ c, dividing only when the bound tightens.
func (w *weightWindow) bound(a, c float64) {
	switch {
	case a > 0:
		if c < w.hi*a {
			w.hi = c / a
		}
	case a < 0:
		if c < w.lo*a {
			w.lo = c / a
		}
	case c < 0:
		w.lo, w.hi = 1, 0
	}
}

// windowSlack widens the window against rounding in the inequalities: it
// only filters, and every weight it admits is summarized exactly.
const windowSlack = 1e-9

// admits reports whether b is in the window.
func (w *weightWindow) admits(b float64) bool {
	return b >= w.lo-windowSlack && b <= w.hi+windowSlack
}

// admitsAny reports whether one of the weights ws is in the window.
func (w *weightWindow) admitsAny(ws []float64) bool {
	for _, b := range ws {
		if w.admits(b) {
			return true
		}
	}
	return false
}

// Violation scores how far a response misses the spec: the sum of the
// relative excesses of overshoot and settling time and the relative
// shortfalls of the margins; 0 when the spec is met, +Inf when unstable.
func Violation(s airframe.Spec, stable bool, m lti.Margins, st lti.StepInfo) float64 {
	return timeViolation(s, stable, st) + marginViolation(s, m)
}

// timeViolation is the time-domain part of Violation.
func timeViolation(s airframe.Spec, stable bool, st lti.StepInfo) float64 {
	if !stable || math.IsNaN(st.Overshoot) || math.IsNaN(st.Settling) {
		return math.Inf(1)
	}
	v := math.Max(0, st.Overshoot/s.Overshoot-1) + math.Max(0, st.Settling/s.SettlingTime-1)
	if !st.Settled {
		v += 1
	}
	return v
}

// marginViolation is the margin part of Violation.
func marginViolation(s airframe.Spec, m lti.Margins) float64 {
	v := 0.0
	if s.MinPhaseMargin > 0 {
		v += math.Max(0, (s.MinPhaseMargin-m.PhaseDeg)/s.MinPhaseMargin)
	}
	if s.MinGainMargin > 0 {
		v += math.Max(0, (s.MinGainMargin-m.GainDB)/s.MinGainMargin)
	}
	if math.IsNaN(v) {
		return math.Inf(1)
	}
	return v
}

// candidate is one point of the refinement search.
type candidate struct {
	target    Target
	ctrl      Controller
	step      lti.StepInfo
	violation float64
	gain      float64
}

// setpointWeights returns the weights refinement may choose from, in
// descending order.
func setpointWeights(p airframe.Axis) []float64 {
	if p.Ctrl.SetpointWeightSet {
		return []float64{p.Ctrl.SetpointWeight}
	}
	if !p.Ctrl.Form.HasIntegral() {
		// Without an integral term, b < 1 changes the final value.
		return []float64{1}
	}
	bs := make([]float64, 21)
	for i := range bs {
		bs[i] = 1 - float64(i)/20
	}
	return bs
}

// UnitWeightPremium is how much more high-frequency gain refinement accepts
// to keep the setpoint weight b = 1 rather than take the least-gain design
// with b < 1: with b < 1 the integrator must carry (1 − b)·Kp·r at steady
// state, which the integrator limit caps, but a gain much higher than
// needed amplifies gyro noise into the actuators for good.
const UnitWeightPremium = 1.5

// searcher places and evaluates candidates for refinement. Each target's
// placement and evaluation are cached, so that the pass that looks for
// b = 1 reuses the simulations of the pass over every weight.
type searcher struct {
	p     airframe.Axis
	eval  Evaluator
	bs    []float64 // all admitted weights, descending
	cache map[Target]*cached
	buf   []float64   // scratch for one response
	free  [][]float64 // records of stopped candidates, for reuse
}

// record returns an empty response record of capacity n, reusing a freed
// one when there is one.
func (sr *searcher) record(n int) []float64 {
	if k := len(sr.free); k > 0 {
		r := sr.free[k-1]
		sr.free = sr.free[:k-1]
		if cap(r) >= n {
			return r[:0]
		}
	}
	return make([]float64, 0, n)
}

type cached struct {
	t    Target
	ctrl Controller
	err  error // placement error
	// Evaluated lazily: a candidate whose gain cannot win is never
	// simulated, and its responses only as far as needed.
	done    bool
	e       Evaluation
	evalErr error
	y0, y1  []float64 // the responses so far, of at most e.N samples
	// freed: the record of a stopped response was given back; a judgment
	// that needs it after all simulates the candidate again.
	freed bool
	// The responses were last cut short because every weight admitted
	// (all of them, or b = 1 alone) was beyond the violation bound
	// stopBound (NaN: never cut short).
	stopBound float64
	stopAll   bool
	margins   *lti.Margins
}

// beyond reports whether an earlier cut-short response showed every
// weight of ws beyond the bound (stopped under a bound at least as large,
// for all weights or for b = 1 alone).
func (c *cached) beyond(bound float64, ws []float64) bool {
	return c.stopBound >= bound && (c.stopAll || len(ws) == 1)
}

func (sr *searcher) place(t Target) *cached {
	if c, ok := sr.cache[t]; ok {
		return c
	}
	c := &cached{t: t, stopBound: math.NaN()}
	if sr.p.Ctrl.Form == airframe.FormP {
		c.ctrl, c.t, c.err = PlaceP(sr.p, t.Zeta)
	} else {
		c.ctrl, c.err = Place(sr.p, t)
	}
	sr.cache[t] = c
	return c
}

// respondChunk is how many samples refinement simulates between looks at
// the weight window.
const respondChunk = 32

// respond returns the weight window for the violation bound beta over the
// candidate's responses, simulating them on as far as needed: to the end,
// or until the window admits none of ws (stopped). The simulation resumes
// where it was cut short when a later call needs more of it.
func (sr *searcher) respond(c *cached, ws []float64, beta float64) (w weightWindow, stopped bool) {
	e := &c.e
	w = newWeightWindow(e, sr.p.Spec, sr.bs[len(sr.bs)-1], sr.bs[0], beta)
	for k := range c.y0 {
		if !w.ok {
			break
		}
		w.add(k, c.y0[k], c.y1[k])
	}
	for k := len(c.y0); k < e.N; {
		if w.ok && !w.admitsAny(ws) {
			c.stopBound, c.stopAll = beta, len(ws) == len(sr.bs)
			// The bounds of later judgments are no larger, so this record
			// is not read again: its memory serves the next candidate.
			sr.free = append(sr.free, c.y0[:0], c.y1[:0])
			c.y0, c.y1, c.freed = nil, nil, true
			return w, true
		}
		m := min(k+respondChunk, e.N)
		if c.y0 == nil {
			c.y0, c.y1 = sr.record(e.N), sr.record(e.N)
		}
		c.y0, c.y1 = c.y0[:m], c.y1[:m]
		e.Respond(c.y0[k:m], c.y1[k:m])
		for ; k < m; k++ {
			if w.ok {
				w.add(k, c.y0[k], c.y1[k])
			}
		}
	}
	return w, false
}

// judge evaluates the placed candidate ce with the weights ws admitted
// (descending): the largest weight that meets the time spec, or, when none
// does, the weight of least violation (then the shortest settling, then
// the larger b) if that is within the bound. The margins are computed
// only when the time response could make the candidate the best or the
// closest so far (bound: violations only add); otherwise the violation is
// +Inf.
//
// With timeOnly the margins are left out: the violation is the time
// response's, 0 or +Inf (the bound is 0).
func (sr *searcher) judge(ce *cached, ws []float64, bound float64, timeOnly bool) (candidate, error) {
	if timeOnly {
		bound = 0
	}
	if !ce.done || ce.freed && !ce.beyond(bound, ws) {
		ce.done, ce.freed = true, false
		ce.e, ce.evalErr = sr.eval(ce.ctrl)
	}
	if ce.evalErr != nil {
		return candidate{}, ce.evalErr
	}
	e := &ce.e
	c := candidate{target: ce.t, ctrl: ce.ctrl, violation: math.Inf(1), gain: ce.ctrl.HighFrequencyGain()}
	c.ctrl.B = ws[0]
	if !e.Stable || ce.beyond(bound, ws) {
		return c, nil
	}
	w, stopped := sr.respond(ce, ws, bound)
	if stopped {
		return c, nil
	}
	if len(sr.buf) < e.N {
		sr.buf = make([]float64, e.N)
	}
	buf := sr.buf[:e.N]
	first := true
	for _, b := range ws {
		if w.ok && !w.admits(b) {
			continue
		}
		for k := range buf {
			buf[k] = ce.y0[k] + b*(ce.y1[k]-ce.y0[k])
		}
		st := lti.Settle(buf, e.H, e.Final0+b*(e.Final1-e.Final0), sr.p.Spec.Band)
		v := timeViolation(sr.p.Spec, true, st)
		if first || v < c.violation || v == c.violation && st.Settling < c.step.Settling {
			c.violation, c.step, c.ctrl.B, first = v, st, b, false
		}
		if v == 0 {
			break // the largest weight that meets the time spec
		}
	}
	if timeOnly {
		if c.violation > 0 {
			c.violation = math.Inf(1)
		}
		return c, nil
	}
	if e.Margins != nil && c.violation <= bound {
		if ce.margins == nil {
			m := e.Margins()
			ce.margins = &m
		}
		c.violation += marginViolation(sr.p.Spec, *ce.margins)
	} else {
		c.violation = math.Inf(1)
	}
	return c, nil
}

// refine searches the target (ζ, σ) and the setpoint weight b for the design
// that meets the spec with the least high-frequency controller gain.
//
// For each ζ of a coarse grid (0.3 to 0.9 by 0.1, and the spec's own ζ) it
// scans σ upward by factors of 1.5 from 0.4× the textbook value of that ζ
// (the gain grows with σ) and, at the first σ that meets the spec, narrows
// the boundary by five bisections (to 1.3 % in σ). The best ζ is then
// refined by ±0.05 and ±0.025. A target whose placement already needs at
// least the gain of the best design so far is not simulated: it counts as
// an upper end of the σ scan, since a feasible design beyond it could not
// win. It returns the best feasible candidate, or the closest one (least
// violation) and false. The search is bounded: two passes of at most 12
// scans, each of at most 20 targets.
//
// Every weight b is admitted and, for a design, the largest one that meets
// the spec is taken. When the least-gain design needs b < 1, a second pass
// looks for a b = 1 design with at most UnitWeightPremium times its gain,
// which is preferred.
func refine(p airframe.Axis, eval Evaluator) (candidate, bool, error) {
	sr := &searcher{p: p, eval: eval, bs: setpointWeights(p), cache: map[Target]*cached{}}
	c, ok, err := sr.search(sr.bs, math.Inf(1), nil)
	if err != nil || !ok || c.ctrl.B == 1 || len(sr.bs) == 1 {
		return c, ok, err
	}
	c1, ok1, err := sr.search(sr.bs[:1], UnitWeightPremium*c.gain, &c)
	if err != nil {
		return candidate{}, false, err
	}
	if ok1 {
		return c1, true, nil
	}
	return c, true, nil
}

// search is refine with the weights ws admitted and no target evaluated
// whose gain is at least capGain. With a fallback design only feasible
// candidates matter (the closest one is not tracked), and the fallback's ζ
// centres the local refinement while no feasible candidate is found.
func (sr *searcher) search(ws []float64, capGain float64, fallback *candidate) (candidate, bool, error) {
	p := sr.p
	var best, closest candidate
	haveBest, haveClosest := false, false
	consider := func(c candidate) {
		if !haveClosest || c.violation < closest.violation {
			closest, haveClosest = c, true
		}
		if c.violation == 0 && (!haveBest || c.gain < best.gain) {
			best, haveBest = c, true
		}
	}
	var firstErr error
	// try judges the target: ok when it was placed and judged, pruned when
	// its gain rules it out unseen.
	try := func(t Target, timeOnly bool) (c candidate, ok, pruned bool, err error) {
		ce := sr.place(t)
		if ce.err != nil {
			var inf *InfeasibleError
			if errors.As(ce.err, &inf) {
				if firstErr == nil {
					firstErr = ce.err
				}
				return c, false, false, nil
			}
			return c, false, false, ce.err
		}
		limit := capGain
		if haveBest {
			limit = math.Min(limit, best.gain)
		}
		if ce.ctrl.HighFrequencyGain() >= limit {
			return c, false, true, nil
		}
		bound := math.Inf(1)
		if haveClosest {
			bound = closest.violation
		}
		if fallback != nil {
			bound = 0
		}
		// Until a design meets the spec the closest one guides the local
		// refinement, so every candidate is judged in full.
		timeOnly = timeOnly && (haveBest || fallback != nil)
		c, err = sr.judge(ce, ws, bound, timeOnly)
		if err != nil {
			return c, false, false, err
		}
		if !timeOnly {
			consider(c)
		}
		return c, true, false, nil
	}
	// boundary narrows [lo, hi] by five bisections in σ (factors of s0),
	// hi feasible (or pruned) and lo not, judged on the time response alone
	// or in full; it returns the new hi and whether it is pruned.
	boundary := func(z, s0, lo, hi float64, hiPruned, timeOnly bool) (float64, bool, error) {
		for i := 0; lo > 0 && i < 5; i++ {
			m := math.Sqrt(lo * hi)
			cm, ok, pruned, err := try(NewTarget(z, m*s0), timeOnly)
			if err != nil {
				return hi, hiPruned, err
			}
			if pruned || ok && cm.violation == 0 {
				hi, hiPruned = m, pruned
			} else {
				lo = m
			}
		}
		return hi, hiPruned, nil
	}
	// scan searches σ at damping z for the least feasible gain. The σ grid
	// is scanned upward on the time response alone, and the least σ whose
	// time response meets the spec is narrowed by bisection; the margins
	// are checked there. Where they fail (a PI loop on an integrating plant
	// gains phase margin as it speeds up), the scan goes on from there with
	// the margins judged at every point.
	scan := func(z float64) error {
		if p.Ctrl.Form == airframe.FormP {
			_, _, _, err := try(NewTarget(z, 1), false)
			return err
		}
		s0 := SigmaFromSettling(z, p.Spec.Band, p.Spec.SettlingTime)
		factor := func(k int) float64 { return 0.4 * math.Pow(1.5, float64(k)) }
		prevF, full := 0.0, false
		for k := 0; k < 9; k++ {
			f := factor(k)
			c, ok, pruned, err := try(NewTarget(z, f*s0), !full)
			if err != nil {
				return err
			}
			if !pruned && (!ok || c.violation > 0) {
				prevF = f
				continue
			}
			hi, hiPruned, err := boundary(z, s0, prevF, f, pruned, !full)
			if err != nil || hiPruned || full {
				return err
			}
			c, ok, _, err = try(NewTarget(z, hi*s0), false)
			if err != nil || ok && c.violation == 0 {
				return err
			}
			// The margins fail at the time boundary: on in full.
			prevF, full = hi, true
			if hi == f {
				continue
			}
			if c, ok, pruned, err = try(NewTarget(z, f*s0), false); err != nil {
				return err
			}
			if pruned || ok && c.violation == 0 {
				_, _, err = boundary(z, s0, hi, f, pruned, false)
				return err
			}
			prevF = f
		}
		return nil
	}
	zetas := []float64{ZetaFromOvershoot(p.Spec.Overshoot)}
	for z := 3; z <= 9; z++ {
		zetas = append(zetas, float64(z)/10)
	}
	for _, z := range zetas {
		if err := scan(z); err != nil {
			return candidate{}, false, err
		}
	}
	for _, dz := range []float64{0.05, 0.025} {
		ref := closest
		switch {
		case haveBest:
			ref = best
		case fallback != nil:
			ref = *fallback
		case !haveClosest:
			continue
		}
		for _, z := range []float64{ref.target.Zeta - dz, ref.target.Zeta + dz} {
			if z < 0.2 || z > 0.97 {
				continue
			}
			if err := scan(z); err != nil {
				return candidate{}, false, err
			}
		}
	}
	if haveBest {
		return best, true, nil
	}
	if fallback != nil {
		return candidate{}, false, nil
	}
	if haveClosest && !math.IsInf(closest.violation, 1) {
		return closest, false, nil
	}
	if firstErr != nil {
		return candidate{}, false, firstErr
	}
	return candidate{}, false, fmt.Errorf("no %s design places a stable closed loop anywhere on the search grid", p.Ctrl.Form)
}
