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
// may choose (1, 0.95, …, 0 for pi and pid; 1 otherwise), and judges each
// with discrete.Assess, the tool's own final verification: the stored
// result is the largest load-rejection gain among the controllers that
// pass every check, and whether any does. It shares no code with the
// search (synth/search.go): no closed-form Ms line search, no
// parameterization of the shape, no pattern search, no cut-short
// simulations. It only uses the search's public definitions of what is
// optimized (the load-rejection gain, the setpoint weights) and the same
// noise-gain bound (see refEngine.noiseBound).
//
// It is a lower bound on the true optimum (a grid), refined locally
// around its best points with finer grids, down to about 0.2 % of a
// gain.
//
// The only pruning is exact:
//   - controllers whose gain cannot beat the best passing one found so far
//     are not judged (the result is the maximum, not a ranking);
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
		v = []float64{c.Pole / c.Zero, c.K}
	}
	for i := range v {
		if !(v[i] > 0) || math.IsInf(v[i], 0) {
			return nil, false
		}
		v[i] = math.Log10(v[i])
	}
	return v, len(v) == len(f.params)
}

// Coarse grid sizes: 0.01 decade for the one parameter of a p, 0.067
// decade for the two of pi, pd and lead, 0.167 decade for the three of a
// pid (the local refinement then goes down to about 0.001 decade).
const (
	refPoints1 = 401
	refPoints2 = 61
	refPoints3 = 25
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
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPoints1)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp = v[0]; return c }}, nil
	case airframe.FormPI:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPoints2), dec("ki", g0*w0, -3, 1, refPoints2)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Ki = v[0], v[1]; return c }}, nil
	case airframe.FormPD:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPoints2), dec("kd", g0/w0, -3, 1, refPoints2)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Kd = v[0], v[1]; return c }}, nil
	case airframe.FormPID:
		return refFamily{params: []refParam{dec("kp", g0, -2, 2, refPoints3), dec("ki", g0*w0, -3, 1, refPoints3), dec("kd", g0/w0, -3, 1, refPoints3)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Kp, c.Ki, c.Kd = v[0], v[1], v[2]; return c }}, nil
	case airframe.FormLead:
		// The pole p = z·r, r > 1 (left of the zero), r from 1.01 to 1000;
		// K over 4.5 decades (a lead's gain at crossover is K·|jω − z|/|jω − p|,
		// below K).
		z := p.Ctrl.LeadZero
		return refFamily{params: []refParam{{Name: "pole_ratio", Lo: 1.01, Hi: 1000, Points: refPoints2}, dec("k", g0, -2, 2.5, refPoints2)},
			ctrl: func(v []float64) synth.Controller { c := base; c.Zero, c.Pole, c.K = z, z*v[0], v[1]; return c }}, nil
	}
	return refFamily{}, fmt.Errorf("form %q: no reference family", p.Ctrl.Form)
}

// refIndependent are the checks that do not depend on the setpoint
// weight (see the top of this file).
var refIndependent = []string{"stable", "phase_margin", "gain_margin", "max_sensitivity", "noise_gain", "disturbance_recovery"}

// refWeights returns the setpoint weights to try, from 1 down: the
// file's when it fixes one, 1 for the forms without an integral (there b
// changes the final value), else 1, 0.95, …, 0.
func refWeights(p airframe.Axis) []float64 {
	if p.Ctrl.SetpointWeightSet {
		return []float64{p.Ctrl.SetpointWeight}
	}
	if !p.Ctrl.Form.HasIntegral() {
		return []float64{1}
	}
	bs := make([]float64, 21)
	for i := range bs {
		bs[i] = float64(20-i) / 20
	}
	return bs
}

// refEngine runs the reference of one airframe.
type refEngine struct {
	p    airframe.Axis
	loop airframe.Loop
	fam  refFamily
	bs   []float64
	// nb is the noise-gain bound of the forms with an integral and of any
	// form whose file gives max_noise_gain; ratio (when nb is 0) bounds
	// the noise gain of a form without an integral to ratio times its
	// load-rejection gain, the search's own rule.
	nb, ratio float64
	sem       chan struct{}

	mu      sync.Mutex
	calls   int
	errs    int
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
// search's. For pi and pid the bound the tool reported (the file's, or
// its default knee); for p, pd and lead the file's, or else
// synth.NoiseRatio times the controller's own load-rejection gain, the
// rule the search applies to each candidate (it reports that rule's value
// at its design). Judged against the tool's reported value instead, a
// candidate that beats the tool would face a tighter bound than the
// search's own.
func (e *refEngine) noiseBound(c synth.Controller) float64 {
	if e.nb > 0 {
		return e.nb
	}
	if e.ratio > 0 {
		return e.ratio * refLoadGain(c)
	}
	return math.Inf(1)
}

// assess runs one discrete.Assess and reports whether c passes, and
// whether hold_rate failed and whether a b-independent check failed.
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
		if ck.OK {
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

// judge finds the first setpoint weight (from 1 down) with which the
// controller at u passes every check.
func (e *refEngine) judge(pt *refPoint) {
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
	refSeeds = 3
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
}

// run searches the coarse grid and climbs from its best points; then,
// when tool is not nil, climbs again from that controller (the tool's own
// design): a second, local search whose result is reported apart.
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
			pt := e.point(u)
			e.sweep([]*refPoint{pt}, 1)
			if e.best != nil {
				r.finalStep = e.climb([]*refPoint{pt}, h0, &r.toolGrids)
			}
		}
	}
	r.best, r.calls, r.errs = e.best, e.calls, e.errs
	return r
}

// climb lays local grids, the first around the seeds, then around the best
// point, at the spacing h while they find a better point and at 1/k of it
// when not, until the spacing falls to refShrink of h; it counts the grids
// in n and returns the last spacing.
func (e *refEngine) climb(seeds []*refPoint, h0 []float64, n *int) []float64 {
	h := slices.Clone(h0)
	k := refDivision(len(h))
	stop := h[0] * refShrink
	for grids := 0; grids < refMaxGrids && h[0] >= stop*(1-1e-9); grids++ {
		centers := []*refPoint{e.best}
		if grids == 0 {
			centers = seeds
		}
		var loc []*refPoint
		for _, c := range centers {
			for _, u := range local(c.u, h, k) {
				loc = append(loc, e.point(u))
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
