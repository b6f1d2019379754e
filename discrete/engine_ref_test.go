package discrete_test

import (
	"cmp"
	"fmt"
	"math"
	"math/cmplx"
	"slices"
	"strings"
	"sync"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// The brute-force reference: a check of the design search against
// something outside it.
//
// For one airframe it enumerates controllers of the file's form on dense
// log-spaced grids of the gains (three to four decades around the loop's
// gain scale in every parameter), and every setpoint weight b the search
// may choose (1, 0.975, …, 0 for pi and pid; 1 otherwise), and judges each
// with discrete.Assess, the tool's own final verification: the stored
// result is the largest load-rejection gain among the controllers that
// pass every check (with a little room to each limit, refRoom), and
// whether any does. It shares no code with the
// search (synth/search.go): no closed-form Ms line search, no
// parameterization of the shape, no pattern search, no cut-short
// simulations. It only uses the search's public definitions of what is
// optimized (the load-rejection gain, the setpoint weights) and the same
// noise-gain bound (see refEngine.noiseBound).
//
// It is a lower bound on the true optimum (a grid). From the best points
// of the coarse grid it climbs over local grids, each around the best
// point so far, ever finer (to 1/256 of the coarse spacing): the grid's
// result, independent of the search. Passing sets can be thin (a noise
// bound that is the noise of the tool's own design leaves a sliver of
// shapes; a settling time jumps when a ripple leaves the band), so a
// coarse grid can miss one the search found; a second climb therefore
// starts from the tool's own design and can only show a better controller
// near it. Both results are stored, apart.
//
// The only pruning is exact:
//   - controllers whose gain cannot beat the best passing one found so far
//     are not judged (the result is the maximum, not a ranking);
//   - a controller whose gain at Nyquist already exceeds the noise bound
//     fails noise_gain, whose value is the largest gain from the crossover
//     up to Nyquist (refEngine.noiseFloor);
//   - a controller that fails a check that does not depend on b (stable,
//     phase_margin, gain_margin, max_sensitivity, noise_gain,
//     disturbance_recovery: all of them figures of the feedback path C
//     alone, the setpoint entering none of them) fails for every b, so
//     the other weights are not judged;
//   - b is tried from 1 down, and once hold_rate fails it fails for every
//     smaller b: at steady state the integrator carries
//     (1/G(0) + (1 − b)·Kp)·r, which grows as b falls for Kp > 0 and a
//     plant of positive DC gain (every airframe of the reference).

// refLoopScale returns the loop's gain scale: the textbook target's ωn
// (the second-order pole pair of the spec's overshoot and settling time)
// and the controller gain g0 = 1/|G·H(jω0)| that puts the crossover
// there. The grids span decades around these, whatever the tool designs.
func refLoopScale(p airframe.Axis) (g0, w0 float64, err error) {
	t, err := synth.TargetFromSpec(p.Spec)
	if err != nil {
		return 0, 0, err
	}
	w0 = t.OmegaN
	return 1 / cmplx.Abs(p.OpenLoop(complex(0, w0))), w0, nil
}

// refParam is one searched parameter: a log-spaced grid of Points values
// from Lo to Hi.
type refParam struct {
	Name   string  `json:"name"`
	Lo     float64 `json:"lo"`
	Hi     float64 `json:"hi"`
	Points int     `json:"points"`
}

// refLoadGain is the load-rejection gain the design maximizes (synth's
// Search): Ki for pi and pid, Kp for p and pd, the low-frequency gain
// C(0) = K·z/p for a lead.
func refLoadGain(c synth.Controller) float64 {
	switch {
	case c.Form.HasIntegral():
		return c.Ki
	case c.Form == airframe.FormLead:
		return c.K * c.Zero / c.Pole
	}
	return c.Kp
}

// refFamily is the form's parameters and the controller at a point.
type refFamily struct {
	params []refParam
	// ctrl returns the controller at the parameter values v (b = 1).
	ctrl func(v []float64) synth.Controller
	// floor, when set, is the least log10 value of each parameter that
	// the climb may go to (−Inf: none).
	floor []float64
}

// admits reports whether the log10 values u keep the family's floor.
func (f refFamily) admits(u []float64) bool {
	for d := range f.floor {
		if u[d] < f.floor[d]-1e-9 {
			return false
		}
	}
	return true
}

// coords returns the log10 parameter values of c, the inverse of ctrl;
// false when one is not positive.
func (f refFamily) coords(c synth.Controller) ([]float64, bool) {
	var v []float64
	switch c.Form {
	case airframe.FormP:
		v = []float64{c.Kp}
	case airframe.FormPI:
		v = []float64{c.Kp, c.Ki}
	case airframe.FormPD:
		v = []float64{c.Kp, c.Kd}
	case airframe.FormPID:
		v = []float64{c.Kp, c.Ki, c.Kd}
	case airframe.FormLead:
		v = []float64{c.Pole/c.Zero - 1, c.K}
	}
	for i := range v {
		if !(v[i] > 0) || math.IsInf(v[i], 0) {
			return nil, false
		}
		v[i] = math.Log10(v[i])
	}
	return v, len(v) == len(f.params)
}

// Coarse grid sizes (points over 4 decades). The gain that the objective
// grows with (Ki of a pi or pid) is sampled more coarsely than the shape
// (Kp, Kd), since the climb moves along it easily once on a passing
// point, while the passing set can be a thin band across the shape (the
// noise bound caps about Kp + Kd/Tf): 0.01 decade for a p, 0.04 decade
// for the Kp of a pi and 0.1 for its Ki, 0.067 for pd, 0.1 for
// the Kp and Kd of a pid and 0.2 for its Ki; 0.1 for the pole of a lead
// (6 decades) and 0.075 for its K.
const (
	refPointsP     = 401
	refPointsPIKp  = 101
	refPointsPIKi  = 41
	refPoints2     = 61
	refPointsPIDKp = 41
	refPointsPIDKi = 21
)

// newRefFamily lays out the grids of p's form around its gain scale.
func newRefFamily(p airframe.Axis) (refFamily, error) {
	g0, w0, err := refLoopScale(p)
	if err != nil {
		return refFamily{}, err
	}
	base := synth.Controller{Form: p.Ctrl.Form, Tf: p.Ctrl.Tf(), B: 1, DerivativeOnError: p.Ctrl.DerivativeOnError}
	dec := func(name string, ref, lo, hi float64, n int) refParam {
		return refParam{Name: name, Lo: ref * math.Pow(10, lo), Hi: ref * math.Pow(10, hi), Points: n}
	}
	switch p.Ctrl.Form {
	case airframe.FormP:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPointsP)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp = v[0]; return c }}, nil
	case airframe.FormPI:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPointsPIKp), dec("ki", g0*w0, -3, 1, refPointsPIKi)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Ki = v[0], v[1]; return c }}, nil
	case airframe.FormPD:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPoints2), dec("kd", g0/w0, -3, 1, refPoints2)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Kd = v[0], v[1]; return c }}, nil
	case airframe.FormPID:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPointsPIDKp), dec("ki", g0*w0, -3, 1, refPointsPIDKi), dec("kd", g0/w0, -3, 1, refPointsPIDKp)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Ki, c.Kd = v[0], v[1], v[2]; return c }}, nil
	case airframe.FormLead:
		// The pole p = z·(1 + q) lies left of the zero z < 0 by q·|z|, q
		// from 0.001 (a lead that is nearly a P) to 1000; K over 4.5
		// decades (a lead's gain at crossover is K·|jω − z|/|jω − p|, below
		// K). The climb keeps q ≥ 0.001: a pole closer to the zero cancels
		// it, and the controller is a P in all but name.
		z := p.Ctrl.LeadZero
		return refFamily{params: []refParam{{Name: "pole_distance_over_zero", Lo: 1e-3, Hi: 1e3, Points: refPoints2}, dec("k", g0, -2, 2.5, refPoints2)},
			floor: []float64{-3, math.Inf(-1)},
			ctrl:  func(v []float64) synth.Controller { c := base; c.Zero, c.Pole, c.K = z, z*(1+v[0]), v[1]; return c }}, nil
	}
	return refFamily{}, fmt.Errorf("form %q: no reference family", p.Ctrl.Form)
}

// refIndependent are the checks that do not depend on the setpoint
// weight (see the top of this file).
var refIndependent = []string{"stable", "phase_margin", "gain_margin", "max_sensitivity", "noise_gain", "disturbance_recovery"}

// refWeights returns the setpoint weights to try, from 1 down: the
// file's when it fixes one, 1 for the forms without an integral (there b
// changes the final value), else 1, 0.975, …, 0, the weights the search
// chooses from (a passing set can be as thin in b: a design of
// joint_compliant passes with b = 0.975 and fails with 1 and 0.95).
func refWeights(p airframe.Axis) []float64 {
	if p.Ctrl.SetpointWeightSet {
		return []float64{p.Ctrl.SetpointWeight}
	}
	if !p.Ctrl.Form.HasIntegral() {
		return []float64{1}
	}
	bs := make([]float64, 41)
	for i := range bs {
		bs[i] = float64(40-i) / 40
	}
	return bs
}

// refEngine runs the reference of one airframe.
type refEngine struct {
	p    airframe.Axis
	loop airframe.Loop
	fam  refFamily
	bs   []float64
	// nb is the noise-gain bound (0: none); ratio, when nb is 0, bounds
	// the noise gain to ratio times the candidate's load-rejection gain.
	nb, ratio float64
	sem       chan struct{}

	mu      sync.Mutex
	calls   int
	errs    int
	pruned  int // candidates over the noise bound at Nyquist, not judged
	best    *refPoint
	passing []*refPoint // every passing point judged, in judging order
	// judged holds the points already judged (or skipped for a gain no
	// larger than the best's, which cannot become useful later).
	judged map[string]bool
}

// pointKey identifies a point of the grids (to 1e-9 decade).
func pointKey(u []float64) string {
	var b strings.Builder
	for _, v := range u {
		fmt.Fprintf(&b, "%.9f,", v)
	}
	return b.String()
}

// refPoint is one judged controller.
type refPoint struct {
	u    []float64 // log10 of the parameter values
	c    synth.Controller
	gain float64
	ok   bool
	seq  int // position in its sweep's order, for ties
}

// noiseBound is the bound Assess judges c against: the same as the
// search's. The file's max_noise_gain, or else the default the tool
// reported for its design (the knee of pi and pid, a multiple of the
// least noise gain for p, pd and lead); when the tool reported none (it
// found no design), the search's own rule for p, pd and lead, at most
// synth.NoiseRatio times the candidate's load-rejection gain.
func (e *refEngine) noiseBound(c synth.Controller) float64 {
	if e.nb > 0 {
		return e.nb
	}
	if e.ratio > 0 {
		return e.ratio * refLoadGain(c)
	}
	return math.Inf(1)
}

// refRoom is the room the reference keeps to every limit: a candidate
// passes only when each check passes with its value at least 0.2 % of the
// limit inside it (stable excepted, a yes or no). The reference's best
// lies on the boundary of the passing set, where a change in the last
// digits of a figure (a peak refined a little differently) would flip
// the stored point; with the room it still passes the exact judge after
// such a change, and fails it only when a check changes meaning. The
// room costs the reference about as much of its gain, against the 5 % of
// the comparison (refNearTool). (A larger room empties the thin passing
// sets: a design of joint_compliant meets its settling time with 0.23 %
// to spare.)
const refRoom = 0.002

// hasRoom reports whether the passing check c keeps refRoom to its limit.
func hasRoom(c synth.Check) bool {
	if c.Name == "stable" {
		return true
	}
	d := refRoom * math.Abs(c.Limit)
	if c.Upper {
		return c.Value <= c.Limit-d
	}
	return c.Value >= c.Limit+d
}

// assess runs one discrete.Assess and reports whether c passes (with
// refRoom), and whether hold_rate failed and whether a b-independent
// check failed.
func (e *refEngine) assess(c synth.Controller) (ok, holdFail, indepFail bool) {
	e.sem <- struct{}{}
	cs, err := discrete.Assess(e.p, e.loop, c, e.noiseBound(c))
	<-e.sem
	e.mu.Lock()
	e.calls++
	if err != nil {
		e.errs++
	}
	e.mu.Unlock()
	if err != nil {
		return false, false, true
	}
	ok = true
	for _, ck := range cs {
		if ck.OK && hasRoom(ck) {
			continue
		}
		ok = false
		if ck.Name == "hold_rate" {
			holdFail = true
		}
		if slices.Contains(refIndependent, ck.Name) {
			indepFail = true
		}
	}
	return ok, holdFail, indepFail
}

// noiseFloor returns a lower bound on the noise gain of c (the largest
// gain |C(e^(jωT))| of the discretized controller from the crossover up
// to Nyquist, which includes its value at Nyquist, z = −1), and false
// when it gives none. For Tustin, with or without prewarping, s → ∞ at
// z = −1: the integral term vanishes there, a P or PI has |C(−1)| = Kp,
// a lead K (its zero and pole no longer matter); the filtered derivative
// gives Kd/Tf, or 2·Kd/(2·Tf + T) where its pole would be negative and
// discrete.Realize uses the backward difference instead (for Tustin
// when 2·Tf < T; with prewarping, where that depends on the crossover,
// the smaller of the two is taken, a bound either way).
func (e *refEngine) noiseFloor(c synth.Controller) (float64, bool) {
	T := 1 / e.loop.Hz
	method := e.p.Ctrl.Discretize
	if method != "tustin" && method != "tustin_prewarp" {
		return 0, false
	}
	switch c.Form {
	case airframe.FormP, airframe.FormPI:
		return c.Kp, true
	case airframe.FormLead:
		return c.K, true
	}
	d := 2 * c.Kd / (2*c.Tf + T)
	if method == "tustin" && 2*c.Tf >= T {
		d = c.Kd / c.Tf
	}
	return c.Kp + d, true
}

// refNoiseMargin: a candidate whose noise floor exceeds the bound by more
// than 1 % is not judged (the final verification admits 0.1 % over the
// bound, for the refinement of the peak between grid points).
const refNoiseMargin = 1.01

// judge finds the first setpoint weight (from 1 down) with which the
// controller at u passes every check.
func (e *refEngine) judge(pt *refPoint) {
	if f, ok := e.noiseFloor(pt.c); ok && f > refNoiseMargin*e.noiseBound(pt.c) {
		e.mu.Lock()
		e.pruned++
		e.mu.Unlock()
		return
	}
	for _, b := range e.bs {
		c := pt.c
		c.B = b
		ok, hold, indep := e.assess(c)
		if ok {
			pt.c, pt.ok = c, true
			return
		}
		if indep || hold {
			return
		}
	}
}

// point returns the unjudged point at log-values u.
func (e *refEngine) point(u []float64) *refPoint {
	v := make([]float64, len(u))
	for i := range u {
		v[i] = math.Pow(10, u[i])
	}
	c := e.fam.ctrl(v)
	return &refPoint{u: slices.Clone(u), c: c, gain: refLoadGain(c)}
}

// sweep judges the points in descending order of gain, in parallel
// batches, until no remaining point can beat the best passing one found
// so far by more than the factor keep (keep = 1: strictly better only;
// below 1 it also judges the points within that band, as seeds of the
// refinement). The outcome does not depend on the scheduling: a batch is
// judged whole before the stopping rule looks at it.
func (e *refEngine) sweep(pts []*refPoint, keep float64) {
	var fresh []*refPoint
	for _, pt := range pts {
		k := pointKey(pt.u)
		if !e.judged[k] {
			e.judged[k] = true
			fresh = append(fresh, pt)
		}
	}
	pts = fresh
	for i, pt := range pts {
		pt.seq = i
	}
	slices.SortStableFunc(pts, func(a, b *refPoint) int { return cmp.Compare(b.gain, a.gain) })
	batch := 4 * cap(e.sem)
	for start := 0; start < len(pts); {
		var todo []*refPoint
		for ; start < len(pts) && len(todo) < batch; start++ {
			pt := pts[start]
			if e.best != nil && !(pt.gain > e.best.gain*keep) {
				start = len(pts)
				break
			}
			todo = append(todo, pt)
		}
		var wg sync.WaitGroup
		for _, pt := range todo {
			wg.Add(1)
			go func() {
				defer wg.Done()
				e.judge(pt)
			}()
		}
		wg.Wait()
		for _, pt := range todo {
			if !pt.ok {
				continue
			}
			e.passing = append(e.passing, pt)
			if e.best == nil || pt.gain > e.best.gain {
				e.best = pt
			}
		}
	}
}

// grid returns the points of the coarse grid, in log10.
func (e *refEngine) grid() [][]float64 {
	pts := [][]float64{{}}
	for _, pr := range e.fam.params {
		lo, hi := math.Log10(pr.Lo), math.Log10(pr.Hi)
		var next [][]float64
		for _, u := range pts {
			for i := 0; i < pr.Points; i++ {
				next = append(next, append(slices.Clone(u), lo+(hi-lo)*float64(i)/float64(pr.Points-1)))
			}
		}
		pts = next
	}
	return pts
}

// steps returns the coarse grid's spacing of each parameter, in decades.
func (e *refEngine) steps() []float64 {
	h := make([]float64, len(e.fam.params))
	for i, pr := range e.fam.params {
		h[i] = (math.Log10(pr.Hi) - math.Log10(pr.Lo)) / float64(pr.Points-1)
	}
	return h
}

// local returns the local grid around u: in each parameter u + j·h/k
// for j = −k … k, out to the neighbours of u at the spacing h.
func local(u, h []float64, k int) [][]float64 {
	pts := [][]float64{{}}
	for d := range u {
		var next [][]float64
		for _, q := range pts {
			for j := -k; j <= k; j++ {
				next = append(next, append(slices.Clone(q), u[d]+float64(j)*h[d]/float64(k)))
			}
		}
		pts = next
	}
	return pts
}

// Refinement: a climb over local grids. The first local grid is laid
// around each of the refSeeds best coarse points; then, around the best
// point so far, a local grid at the same spacing as long as it finds a
// better point, else at 1/k of it, until the spacing is the coarse
// spacing / 4^4 (about 0.001 decade for two parameters). k = 4 for one or
// two parameters (9 or 81 points a grid), 2 for three (125 points). Only
// points of a larger gain than the best are judged, and none twice.
const (
	refSeeds = 5
	// refSeedBand: the coarse sweep also judges the points within 3 % of
	// the best one's gain, as candidate seeds.
	refSeedBand = 0.97
	// refShrink is the spacing at which the climb stops, relative to the
	// coarse spacing.
	refShrink = 1.0 / 256
	// refMaxGrids bounds the climb's local grids.
	refMaxGrids = 400
)

// refDivision returns the local grids' division k for n parameters.
func refDivision(n int) int {
	if n >= 3 {
		return 2
	}
	return 4
}

// refRun is what the reference found, and how.
type refRun struct {
	best       *refPoint
	calls      int
	errs       int
	coarse     int // points of the coarse grid
	coarseBest *refPoint
	atEdge     []string // parameters whose coarse best lies on the grid's edge
	finalStep  []float64
	grids      int // local grids of the climb from the coarse grid
	// gridBest is the best of the coarse grid and its climb, found with
	// gridCalls assessments, before the climb from the tool's design
	// (toolGrids local grids).
	gridBest  *refPoint
	gridCalls int
	toolGrids int
	pruned    int
}

// run searches the coarse grid and climbs from its best points; then,
// when tool is not nil, climbs again from that controller (the tool's own
// design, passing or not): a second, local search whose result is
// reported apart.
func (e *refEngine) run(tool *synth.Controller) refRun {
	var r refRun
	var pts []*refPoint
	for _, u := range e.grid() {
		pts = append(pts, e.point(u))
	}
	r.coarse = len(pts)
	e.sweep(pts, refSeedBand)
	h0 := e.steps()
	if e.best != nil {
		r.coarseBest = e.best
		for d, pr := range e.fam.params {
			lo, hi := math.Log10(pr.Lo), math.Log10(pr.Hi)
			if math.Abs(e.best.u[d]-lo) < h0[d]/2 || math.Abs(e.best.u[d]-hi) < h0[d]/2 {
				r.atEdge = append(r.atEdge, pr.Name)
			}
		}
		// The seeds: the passing points of the largest gain, in order.
		seeds := slices.Clone(e.passing)
		slices.SortStableFunc(seeds, func(a, b *refPoint) int {
			if c := cmp.Compare(b.gain, a.gain); c != 0 {
				return c
			}
			return cmp.Compare(a.seq, b.seq)
		})
		r.finalStep = e.climb(seeds[:min(refSeeds, len(seeds))], h0, &r.grids)
	}
	r.gridBest, r.gridCalls = e.best, e.calls
	if tool != nil {
		if u, ok := e.fam.coords(*tool); ok {
			r.finalStep = e.climb([]*refPoint{e.point(u)}, h0, &r.toolGrids)
		}
	}
	r.best, r.calls, r.errs, r.pruned = e.best, e.calls, e.errs, e.pruned
	return r
}

// climb lays local grids, the first around the seeds, then around the best
// point (around the seeds again while none passes), at the spacing h
// while they find a better point and at 1/k of it when not, until the
// spacing falls to refShrink of h; it counts the grids in n and returns
// the last spacing.
func (e *refEngine) climb(seeds []*refPoint, h0 []float64, n *int) []float64 {
	h := slices.Clone(h0)
	k := refDivision(len(h))
	stop := h[0] * refShrink
	for grids := 0; grids < refMaxGrids && h[0] >= stop*(1-1e-9); grids++ {
		centers := []*refPoint{e.best}
		if grids == 0 || e.best == nil {
			centers = seeds
		}
		var loc []*refPoint
		for _, c := range centers {
			for _, u := range local(c.u, h, k) {
				if e.fam.admits(u) {
					loc = append(loc, e.point(u))
				}
			}
		}
		before := e.best
		e.sweep(loc, 1)
		*n++
		if e.best == before {
			for d := range h {
				h[d] /= float64(k)
			}
		}
	}
	return h
}
