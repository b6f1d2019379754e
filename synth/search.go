package synth

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// The design search.
//
// The design is the controller of the requested form that passes every
// check over the envelope with one setpoint weight b and has the best
// load-disturbance rejection: the largest integral gain Ki for pi and pid,
// the largest Kp for p and pd, the largest low-frequency gain C(0) for a
// lead. This is the criterion of Åström, Panagopoulos and Hägglund's
// design of PI and PID controllers (maximize Ki, whose inverse is the
// integrated error after a load step, IE = 1/Ki, under a bound on the
// sensitivity peak Ms; Automatica 34(5), 1998, and IEE Proc. Control
// Theory Appl. 149(1), 2002; from memory), with the constraints that a
// rate loop adds: the step spec, the margins, the noise gain, the holdable
// rate, the disturbance recovery, all at every plant of the envelope.
// Among designs within NearBest of the best, the one with the least noise
// gain is taken.
//
// How the search cannot miss a small feasible set: the controller is
// linear in its gains, C = A + x·B, where x is the gain that the objective
// grows with (Ki, Kp, or K) and A, B depend on the others, the shape θ (Kp
// and Kd for a pid, Kp for a pi, Kd for a pd, the pole for a lead). For a
// fixed shape, the Ms bound |1 + (A + x·B)·P| ≥ 1/Ms at each frequency of
// the grid and each plant is a quadratic inequality in x, solved in closed
// form; the first interval of x ≥ 0 that keeps the bound is exact on the
// grid, and its ends are refined between grid points (loExact, msExact),
// so that the search judges the Ms the final verification finds. It
// mostly starts at x = 0; where x = 0 itself exceeds Ms (on a random
// airframe of our own a pid's shape meets Ms ≤ 2 over its envelope from
// Ki ≈ 2.6 on, not below), it starts higher, and gains below its start
// fail Ms without a judgment. Since the Nyquist curve cannot reach −1
// without entering the Ms circle, every x of the interval has, at each
// plant, the stability of any one of them: that of x = 0, or, for an
// interval above 0, of its start, tested exactly at the nominal plant
// (the other plants are tested where a design passes). The margins and
// the noise gain then lower x by bisection, and the time checks by
// steps. So one evaluation answers, for a whole line of
// controllers, how far it can go; the search needs a grid over the shape
// only (two dimensions at most): a coarse structured grid over several
// decades around the plant's own gain scale (for a pd or a lead, with the
// shape at the NoiseRatio limit itself, family.edge), then a pattern
// search (halving steps down to NearStep) from the best point.
//
// When no shape of the grid passes, the feasible set, if any, is small:
// descents down the violation from the closest shapes, then local grids
// in the shape and the gain together around the nearest misses (rescue),
// then a denser grid, within fineBudget judgments (see maximize). Forms
// without an integral reach that search too when their scan for the
// least noise gain passes nowhere.
//
// The passing set on one line of x can be several windows, a few per
// cent wide, past failing bands (a settling time jumps where a ripple of
// the response leaves the band): the knee behind the default noise bound
// has its own line scanned finely before it sets the bound (scanKnee),
// the design's line and its neighbours' are scanned below their tops
// (scanAbove), and where the scan moved the knee both knees are refined
// (kneeDesign). The design is last refined with setpoint weights five
// times as dense as the search's (refineWeights), since the weight that
// settles in time can be a narrow window that moves with the gain, and
// the line of the quieter design the tie-break takes is scanned above
// the best too (quietestAbove). A pid under a noise bound is last
// polished again with its local grids riding the bound (rideUp, ride):
// its best designs hug the bound along an edge that the grids' fixed
// steps cannot follow. The design is last replaced by a design the
// search judged on its way that beats it in gain and noise both, if any
// (undominated). Under a noise bound of the file the search keeps the
// better of its own design and the design the default bound would give,
// or the best the default search passed under the file's bound
// (freeDesign), so that loosening the bound never lowers the design's
// gain below the default's and a bound the default's design meets is
// never called infeasible. The last stages (finish) end at different
// designs from different starts: they run from the knee's design and
// from the largest gain under the knee's bound searched over the whole
// grid (widen), or, under a bound of the file, from the search's own
// design and the default's, and the better is kept.

// NoiseFactor sets the default noise bound of the forms without an
// integral (p, pd, lead): at most NoiseFactor times the least noise gain
// with which the form meets every other check. Their load-rejection gain
// and their noise gain grow together, so there is no knee to stop at (see
// KneeNoise); the bound trades a quarter more gyro noise in the command
// for load rejection, and never makes a feasible spec infeasible.
const NoiseFactor = 1.25

// NearBest is the band of the tie-break: among designs whose load-rejection
// gain is within 2 % of the best one, the least noise gain is taken.
const NearBest = 0.02

// KneeNoise documents the default noise bound. When the file gives no
// max_noise_gain, a form with an integral (pi, pid) may use the noise
// gain N of the design that maximizes Ki/N² over every other check: the
// knee of the trade-off between the integrated load error IE = 1/Ki and
// the noise power in the command (∝ N²), two of the four criteria of
// Garpinger, Hägglund and Åström ("Criteria and trade-offs in PID
// design", 2012; from memory). Below the knee a little more noise buys
// much more load rejection; beyond it, less. The default never makes a
// feasible spec infeasible. Forms without an integral (p, pd, lead)
// have NoiseFactor instead.
const KneeNoise = "Ki/N²"

// NoiseRatio bounds the noise gain of the forms without an integral (p,
// pd, lead) relative to their load-rejection gain J (Kp, or C(0)) while
// the search looks for their least noise gain: at most twenty times J.
// For a pd it keeps the derivative gain limit N = Td/Tf within the usual
// range of 8 to 20 (Åström & Hägglund, Advanced PID Control, the
// derivative filter; from memory), Kd/Tf ≤ 19·Kp; for a lead it bounds
// the lead ratio p/z by the same twenty, beyond which a lead buys little
// phase for much noise (common practice).
const NoiseRatio = 20

// maxLined bounds the shapes of the coarse grid whose line of x is
// searched below its top once a passing design is known: the sixteen of
// the largest upper bounds. The pattern searches from the best designs
// take it from there.
const maxLined = 16

// fineBudget bounds the judgments of the search for a small feasible set
// (the descents, a quarter each, and the denser grid), which runs when the
// coarse grid finds no passing design; an infeasible spec is then
// reported with the closest design found. A descent that walks the fine
// line of x (64 gains) at each shape it tries needs more than a thousand
// judgments to reach a feasible set a few per cent wide in Kp and Ki: of
// 40 random PI and PID airframes of plausible rate plants, a budget of
// 1500 called one infeasible that has a design (arm_narrow_pi among the
// reference airframes of package discrete). An infeasible verdict costs
// 0.1 s on the demo quadrotor's roll, and 17 s on the slowest airframe
// the project has built (testdata/slowest.toml in package discrete; 13 s
// before lines could start above x = 0, a quarter of it now the exact
// stability test of such lines, at 256 delay samples).
const fineBudget = 6000

// unboundedMs is the sensitivity bound of the search when the spec gives
// none: |1 + L| ≥ 1/20, a distance from −1 that only stops the line of x
// before the closed loop turns unstable there.
const unboundedMs = 20

// nearStep is the last step of the pattern search, in decades of the shape
// parameters (0.7 %): finer steps move the load-rejection gain by less
// than a percent.
const nearStep = 0.003

// weights returns the setpoint weights b the search may choose from, in
// descending order: the file's, b = 1 for forms without an integral (b
// then changes the final value), or 1 down to 0 by 0.025 (by 0.005 in the
// last refinement, refineWeights).
func weights(p airframe.Axis) []float64 {
	if p.Ctrl.SetpointWeightSet {
		return []float64{p.Ctrl.SetpointWeight}
	}
	if !p.Ctrl.Form.HasIntegral() {
		return []float64{1}
	}
	return evenWeights(coarseWeights)
}

// coarseWeights is how many setpoint weights the search chooses from (1
// down to 0 by 0.025), and fineWeights how many its last refinement does
// (by 0.005; see refineWeights). Every coarse weight is a fine one, bit
// for bit (j/40 and 5j/200 round alike).
const (
	coarseWeights = 41
	fineWeights   = 201
)

// evenWeights returns n setpoint weights from 1 down to 0 in even steps.
func evenWeights(n int) []float64 {
	bs := make([]float64, n)
	for i := range bs {
		bs[i] = 1 - float64(i)/float64(n-1)
	}
	return bs
}

// family is a form's parameterization: the shape θ (searched on a grid in
// log space around ref) and the gain x the objective grows with.
type family struct {
	ref    []float64 // reference value of each shape parameter
	lo, hi []float64 // the grid spans ref·10^lo … ref·10^hi
	steps  []int     // grid points per parameter
	xRef   float64   // scale of x (caps an unbounded x)
	// floor, when set, bounds each shape parameter below (in the log
	// units of lo and hi): a lead's pole must stay left of its zero.
	floor []float64
	// edge, when set, is the shape (in the log units of lo and hi) where
	// the noise gain meets NoiseRatio times the load-rejection gain. The
	// coarse grid holds it besides its even points: the noise-ratio
	// bound is a constraint of the search, and a small feasible set lies
	// against it when more derivative (or lead) phase is what settles
	// the loop.
	edge []float64
	ctrl func(th []float64, x float64) Controller
	gain func(th []float64, x float64) float64 // the load-rejection gain
}

// newFamily sets up the search of form f around the gain scale g0 of the
// loop at the frequency w0: |C| ≈ g0 puts the crossover near w0.
func newFamily(p airframe.Axis, g0, w0 float64) family {
	base := NewController(p)
	one := func(th []float64, x float64) float64 { return x }
	switch p.Ctrl.Form {
	case airframe.FormP:
		return family{xRef: g0, gain: one, ctrl: func(_ []float64, x float64) Controller {
			c := base
			c.Kp = x
			return c
		}}
	case airframe.FormPI:
		return family{ref: []float64{g0}, lo: []float64{-2.5}, hi: []float64{1.5}, steps: []int{17}, xRef: g0 * w0, gain: one,
			ctrl: func(th []float64, x float64) Controller {
				c := base
				c.Kp, c.Ki = th[0], x
				return c
			}}
	case airframe.FormPD:
		// θ = ρ, the derivative's share of the high-frequency gain,
		// Kd = ρ·Tf·Kp: the controller Kp·(1 + ρ·Tf·s/(Tf·s + 1)) is
		// linear in x = Kp, and its noise gain relative to Kp depends on
		// ρ alone.
		tf := p.Ctrl.Tf()
		return family{ref: []float64{1}, lo: []float64{-2}, hi: []float64{2}, steps: []int{17}, xRef: g0, gain: one,
			edge: []float64{ratioEdge(NoiseRatio - 1)},
			ctrl: func(th []float64, x float64) Controller {
				c := base
				c.Kp, c.Kd = x, th[0]*tf*x
				return c
			}}
	case airframe.FormLead:
		z := p.Ctrl.LeadZero
		// θ is the pole's distance ratio r = p/z > 1 (pole left of the
		// zero); the grid spans r from 1.02 to 200.
		return family{ref: []float64{1}, lo: []float64{lti.Log10(1.02)}, hi: []float64{lti.Log10(200)}, steps: []int{17},
			xRef: g0, floor: []float64{lti.Log10(1.02)}, edge: []float64{ratioEdge(NoiseRatio)},
			gain: func(th []float64, x float64) float64 { return x / th[0] },
			ctrl: func(th []float64, x float64) Controller {
				c := base
				c.K, c.Zero, c.Pole = x, z, z*th[0]
				return c
			}}
	}
	// pid: θ = (n, ρ), the controller's high-frequency gain n = Kp + Kd/Tf
	// (what the noise gain tends to) and the derivative's share of it,
	// ρ = (Kd/Tf)/Kp: Kp = n/(1 + ρ), Kd = Tf·n·ρ/(1 + ρ). In these
	// coordinates a noise bound is a bound on n alone, so the search moves
	// along it instead of across a diagonal ridge of (Kp, Kd).
	tf := p.Ctrl.Tf()
	return family{ref: []float64{g0, 1}, lo: []float64{-2, -2}, hi: []float64{2, 2}, steps: []int{13, 9}, xRef: g0 * w0, gain: one,
		ctrl: func(th []float64, x float64) Controller {
			c := base
			c.Kp = th[0] / (1 + th[1])
			c.Kd = tf * th[0] * th[1] / (1 + th[1])
			c.Ki = x
			return c
		}}
}

// point is one shape after the frequency screen: the largest x that the
// frequency checks allow (xf, 0 when none), the noise gain there, and the
// violation of the frequency checks at a small x when none.
type point struct {
	u  []float64 // log10 of θ/ref
	th []float64
	xf float64
	// xlo is where the line's admissible interval starts (0 but where Ms
	// fails at x = 0): gains below it fail Ms.
	xlo   float64
	noise float64 // at xf
	fviol float64 // when xf = 0: how far the frequency checks miss
	why   string  // when xf = 0: the check that stops it
	// stuckTop says that the shape failed without settling at xf, judged
	// before any passing design (maximize's first pass): the first of the
	// stuckRun its line may take.
	stuckTop bool
}

// cand is a full judgment: a controller and whether it passes everything.
type cand struct {
	pt    *point
	x     float64
	ctrl  Controller // with B
	gain  float64
	noise float64
	ok    bool
	viol  float64  // total relative violation (0 when ok)
	fails []string // the checks that fail
	// settle is the best settling time over the envelope with the
	// overshoot met (for "what is reachable"); NaN when unknown.
	settle float64
}

// searcher holds the data of one search.
type searcher struct {
	p      airframe.Axis
	L      Loops
	fam    family
	grid   []float64
	open   [][]complex128
	ncorn  int
	bs     []float64
	noiseB float64 // noise bound in force (+Inf: none)
	a, b   []complex128
	lbuf   []complex128
	// gaps holds msBound's gap at each grid frequency of each plant of
	// the last shape it bounded (plant by plant), which loExact and
	// msExact refine.
	gaps        []gap
	sorted      []gap // msBound's scratch
	cache       map[string]*point
	closest     cand
	haveClosest bool
	bestOK      cand // the passing candidate of the largest gain
	haveOK      bool
	// shut names the frequency checks that shut shapes out entirely.
	shut []string
	// ratioB bounds the noise gain relative to the load-rejection gain
	// (NoiseRatio, for the forms without an integral; 0: none).
	ratioB float64
	// fine scores failures on every weight, when the search looks for a
	// small feasible set.
	fine     bool
	lastFail int       // the plant of the last failed time check
	freqFail int       // the plant of the last failed margin (freqPass)
	passing  []cand    // every passing candidate, in the order judged
	fineLeft int       // judgments left to the search for a small feasible set
	th       []float64 // the shape of the last basis
	// alive is the scratch of fastTimeChecks.
	alive []int
	// score is the scratch of a scored failure (timeChecks).
	score scoreBuf
	// rooms are IL/r − |1/G(0)| at every plant (holdWeight), and
	// holdBeyond whether one is negative: no controller holds r there.
	rooms      []float64
	holdBeyond bool
	// haveBasis says that a and b hold the basis of th.
	haveBasis bool
	// reachers are the candidates of the least settling times seen with
	// every other check met (at most reachKeep), whose settling is
	// verified at every plant for the figure reported (reachAll).
	reachers []cand
	// nearest holds, per shape of the grid (key of u), its candidate of
	// least violation, for the starts of the search for a small
	// feasible set.
	nearest map[string]cand
	// runs keep the step responses that fastTimeChecks computed for the
	// controller being judged: the nominal plant's and the last other
	// plant's, which are the plants a failure is scored on (timeChecks),
	// so that the scoring continues them instead of simulating them again.
	runs [2]stepRun
	// judged counts the controllers given to timeChecks; a run belongs to
	// the controller of its count.
	judged int
	// seen holds the judgments that do not depend on the order of the
	// search (see judgeAt), by shape and gain.
	seen map[seenKey]cand
	// riding lets the local grids ride the noise bound (rideUp).
	riding bool
	// stuck says that the last scored failure (timeChecks) could not
	// settle: its response at the best weight was still outside the band
	// at the end of its record, or grew a million times past the
	// overshoot limit (see stuckRun).
	stuck bool
}

// scoreBuf holds the per-weight figures of a scored failure, reused from
// one judgment to the next.
type scoreBuf struct {
	bs, worst, slow, ws, fs []float64
	osOK, unsettled         []bool
	idx                     []int
	sts                     []lti.StepInfo
}

// grow makes room for n weights.
func (b *scoreBuf) grow(n int) {
	if cap(b.worst) < n {
		b.worst, b.slow, b.ws, b.fs = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		b.osOK, b.unsettled, b.idx, b.sts = make([]bool, n), make([]bool, n), make([]int, n), make([]lti.StepInfo, n)
	}
}

// stepRun is a setpoint step at one plant as far as it was simulated: the
// responses y0 and y1 (b = 0 and 1) hold the first k of e.N samples, and
// e.Respond continues from there.
type stepRun struct {
	e      Evaluation
	y0, y1 []float64
	k      int
	plant  int
	judged int // the searcher's judged count when the run started
}

// run returns the slot for plant i of the current controller, started
// from e with buffers of e.N samples.
func (sr *searcher) run(i int, e Evaluation) *stepRun {
	r := &sr.runs[0]
	if i != 0 {
		r = &sr.runs[1]
	}
	if cap(r.y0) < e.N {
		r.y0, r.y1 = make([]float64, e.N), make([]float64, e.N)
	}
	r.e, r.y0, r.y1, r.k, r.plant, r.judged = e, r.y0[:e.N], r.y1[:e.N], 0, i, sr.judged
	return r
}

// ran returns the run of plant i kept from the current controller's
// verdict, nil when there is none.
func (sr *searcher) ran(i int) *stepRun {
	for j := range sr.runs {
		if r := &sr.runs[j]; r.judged == sr.judged && r.plant == i && r.y0 != nil {
			return r
		}
	}
	return nil
}

func newSearcher(p airframe.Axis, L Loops, g0, w0 float64) *searcher {
	sr := &searcher{p: p, L: L, fam: newFamily(p, g0, w0), grid: L.Grid(), bs: weights(p),
		cache: map[string]*point{}, nearest: map[string]cand{}, seen: map[seenKey]cand{}, noiseB: math.Inf(1)}
	sr.ncorn = len(L.Corners())
	for i := 0; i < L.Primary(); i++ {
		sr.open = append(sr.open, L.Open(i))
	}
	n := len(sr.grid)
	sr.a, sr.b, sr.lbuf = make([]complex128, n), make([]complex128, n), make([]complex128, n)
	if s := p.Spec.MaxNoiseGain; s > 0 {
		sr.noiseB = s
	} else if !p.Ctrl.Form.HasIntegral() {
		sr.ratioB = NoiseRatio
	}
	// The room of each plant does not depend on the controller.
	sr.rooms, sr.holdBeyond = holdRooms(p, L.Corners())
	return sr
}

func (sr *searcher) theta(u []float64) []float64 {
	th := make([]float64, len(u))
	for i := range u {
		th[i] = sr.fam.ref[i] * lti.Pow(10, u[i])
	}
	return th
}

// key is the cache key of shape u: its parameters to six decimals (of a
// decade), so that shapes reached by different paths of the search meet.
func key(u []float64) string {
	b := make([]byte, 0, 12*len(u))
	for _, v := range u {
		b = strconv.AppendFloat(b, v, 'f', 6, 64)
		b = append(b, ',')
	}
	return string(b)
}

// basis writes A = C(θ, 0) and B = C(θ, 1) − C(θ, 0) on the grid.
//
// The search sets the basis of a shape again and again (each judgment
// of it): a basis already set for the same shape, bit for bit, is kept.
func (sr *searcher) basis(th []float64) {
	if sr.haveBasis && sameBits(th, sr.th) {
		return
	}
	sr.th, sr.haveBasis = th, true
	sr.L.Ctrl(sr.fam.ctrl(th, 0), sr.a)
	sr.L.Ctrl(sr.fam.ctrl(th, 1), sr.b)
	for k := range sr.b {
		sr.b[k] -= sr.a[k]
	}
}

// sameBits reports whether u and v hold the same float64 values bit for
// bit.
func sameBits(u, v []float64) bool {
	if len(u) != len(v) {
		return false
	}
	for i := range u {
		if math.Float64bits(u[i]) != math.Float64bits(v[i]) {
			return false
		}
	}
	return true
}

// msBound returns the first interval [lo, hi] of x ≥ 0 on which every x
// keeps |1 + (A + x·B)·P| ≥ 1/Ms at every grid frequency and plant (hi
// +Inf when nothing bounds it from above), and false when there is none.
//
// At one frequency the bound fails on an open interval of x (lineGap).
// Mostly none holds x = 0 and lo = 0; the first interval then ends at the
// least gap above 0. On some shapes x = 0 itself exceeds Ms (a PD whose
// Nyquist curve passes near −1, pushed away by the integral's phase), and
// the admissible set starts above 0: lo is the end of the chain of gaps
// that overlap from 0 up.
func (sr *searcher) msBound() (lo, hi float64, ok bool) {
	r2 := sr.msR2()
	hi = math.Inf(1)
	sr.gaps = sr.gaps[:0]
	holds0 := false
	for i := range sr.open {
		P := sr.open[i]
		for k := range P {
			g := lineGap(1+lti.Mul(sr.a[k], P[k]), lti.Mul(sr.b[k], P[k]), r2)
			sr.gaps = append(sr.gaps, g)
			holds0 = holds0 || g.holds(0)
		}
	}
	if holds0 {
		if lo = chainEnd(sr.gaps, &sr.sorted); math.IsInf(lo, 1) {
			return 0, 0, false
		}
	}
	for _, g := range sr.gaps {
		hi = math.Min(hi, g.above(lo))
	}
	return lo, snap(hi), true
}

// gap is the interval of x where the Ms bound fails, (gap[0], gap[1]);
// empty as (+Inf, +Inf). holds counts gap[0] in, a root where the bound
// is just met, so that a chain of gaps is never left at one of its
// roots.
type gap [2]float64

// holds reports whether x lies in the gap.
func (g gap) holds(x float64) bool { return g[0] <= x && x < g[1] }

// above is the end that the gap puts to an interval of x starting at lo:
// its start where that lies above lo, lo where it holds lo, +Inf where it
// lies below.
func (g gap) above(lo float64) float64 {
	switch {
	case g[0] > lo:
		return g[0]
	case g.holds(lo):
		return lo
	}
	return math.Inf(1)
}

// chainEnd returns the least x ≥ 0 in no gap: starting from 0, the end of
// each gap that holds the current x, taken in order of their starts. The
// gaps are copied into *scratch and sorted there.
func chainEnd(gaps []gap, scratch *[]gap) float64 {
	s := append((*scratch)[:0], gaps...)
	*scratch = s
	slices.SortFunc(s, func(a, b gap) int { return cmp.Compare(a[0], b[0]) })
	x := 0.0
	for _, g := range s {
		if g[0] > x {
			break
		}
		if g[1] > x {
			x = g[1]
		}
	}
	return x
}

// msR2 is 1/Ms² of the bound in force.
func (sr *searcher) msR2() float64 {
	ms := sr.p.Spec.MaxSensitivity
	if !(ms > 0) {
		// No Ms bound asked: the line of x still stops short of −1, where
		// the loop turns unstable.
		ms = unboundedMs
	}
	return 1 / (ms * ms)
}

// lineGap returns the open interval of x where |a + x·c|² < r2: empty
// (+Inf, +Inf) when there is none or a figure is not a number (on an
// undamped pole, say), (−Inf, +Inf) when x has no effect and the bound
// fails.
//
// The condition reads α·x² + 2β·x + γ ≥ 0 with α = |c|², β = Re(ā·c),
// γ = |a|² − r²: it fails between the roots when β² > α·γ.
func lineGap(a, c complex128, r2 float64) gap {
	none := gap{math.Inf(1), math.Inf(1)}
	al := float64(real(c)*real(c)) + float64(imag(c)*imag(c))
	be := float64(real(a)*real(c)) + float64(imag(a)*imag(c))
	ga := float64(real(a)*real(a)) + float64(imag(a)*imag(a)) - r2
	if !(al > 1e-300) {
		// x has no effect here: fine or forbidden for every x.
		if ga < 0 {
			return gap{math.Inf(-1), math.Inf(1)}
		}
		return none
	}
	disc := float64(be*be) - float64(al*ga)
	if !(disc > 0) {
		return none
	}
	sq := math.Sqrt(disc)
	// Roots (−β ∓ √disc)/α, computed without cancellation.
	q := -(be + math.Copysign(sq, be))
	x1, x2 := q/al, ga/q
	if x1 > x2 {
		x1, x2 = x2, x1
	}
	if math.IsNaN(x1) || math.IsNaN(x2) {
		return none
	}
	return gap{x1, x2}
}

// msNear is how far above the line's Ms bound on the grid (relative) a
// grid frequency's own bound may lie and still be refined between its
// neighbours by msExact: between the grid's 40 points a decade (and the
// denser points at resonances) the bound falls by up to about 4 % (a
// dense sweep over the coarse grid's lines of a PID found so much).
const msNear = 0.1

// msInside is how far inside the Ms bound (relative) msExact puts the
// line's bound: a design on the bound itself has an Ms that independent
// evaluations put a few 1e-8 either side of it (SciPy's and the final
// verification's agree to 4e-8 on the reference airframes), so that the
// verdict would hang on their rounding.
const msInside = 1e-6

// msExact returns the end of the line's admissible interval between grid
// points too, from lo and xg, the interval on the grid (msBound, xg finite
// and positive, just run on the shape of the basis in force; lo refined by
// loExact): at each plant,
// each grid frequency whose own bound is least among its neighbours and
// within msNear of xg is refined by minimizing the bound over the two
// grid intervals around it (Brent's method in log ω). A design at the
// grid's bound can exceed Ms between grid points (by 0.1 % to a few per
// cent), which the exact verification finds; the search then has to
// lower a design it judged on the wrong bound, out of a small feasible
// set (winch_slow_pid among the reference airframes of package
// discrete).
func (sr *searcher) msExact(lo, xg float64) float64 {
	off := sr.gapOff()
	x := xg
	n := len(sr.grid)
	for i := range sr.open {
		gs := sr.gaps[i*n : (i+1)*n]
		at := func(w float64) float64 { return off(i, w).above(lo) }
		for k, g := range gs {
			v := g.above(lo)
			if !(v <= float64(xg*(1+msNear))) || (k > 0 && gs[k-1].above(lo) < v) || (k+1 < n && gs[k+1].above(lo) < v) {
				continue
			}
			x = math.Min(x, sr.brentAround(k, at))
		}
	}
	return x
}

// gapOff returns lineGap at plant i and frequency w off the grid, for the
// shape of the basis in force, with the bound msInside inside Ms.
func (sr *searcher) gapOff() func(i int, w float64) gap {
	r2 := sr.msR2() / ((1 - msInside) * (1 - msInside))
	ca, c1 := sr.L.CtrlAt(sr.fam.ctrl(sr.th, 0)), sr.L.CtrlAt(sr.fam.ctrl(sr.th, 1))
	return func(i int, w float64) gap {
		A := ca(w)
		B := c1(w) - A
		Pw := sr.L.OpenAt(i, w)
		return lineGap(1+lti.Mul(A, Pw), lti.Mul(B, Pw), r2)
	}
}

// brentAround returns the least value of f over the two grid intervals
// around grid point k (brentMin in log ω, from the point itself).
func (sr *searcher) brentAround(k int, f func(w float64) float64) float64 {
	n := len(sr.grid)
	a, b := sr.grid[max(k-1, 0)], sr.grid[min(k+1, n-1)]
	return brentMin(f, lti.Log(a), lti.Log(b), lti.Log(sr.grid[k]))
}

// loExact returns the start of the line's admissible interval between
// grid points too, from lo, the start on the grid (msBound, positive, just
// run on the shape of the basis in force): at each plant, each grid
// frequency whose gap ends within msNear below lo (or above it) at a local
// greatest end is refined by maximizing the gap's end over the two grid
// intervals around it, as msExact does for the interval's end, with the
// bound msInside inside Ms. Gaps that start above lo are left to msExact.
func (sr *searcher) loExact(lo float64) float64 {
	off := sr.gapOff()
	x := lo
	n := len(sr.grid)
	end := func(g gap) float64 {
		if g[0] <= lo && g[1] > 0 {
			return g[1]
		}
		return 0
	}
	for i := range sr.open {
		gs := sr.gaps[i*n : (i+1)*n]
		at := func(w float64) float64 { return -end(off(i, w)) }
		for k, g := range gs {
			v := end(g)
			if !(v >= float64(lo*(1-msNear))) || (k > 0 && end(gs[k-1]) > v) || (k+1 < n && end(gs[k+1]) > v) {
				continue
			}
			x = math.Max(x, -sr.brentAround(k, at))
		}
	}
	return x
}

// brentMin returns the least value of f(e^t) that Brent's method finds
// for t in [a, b] from the start t0 (Brent, Algorithms for Minimization
// without Derivatives, 1973, ch. 5: golden-section steps, parabolic
// steps where they behave; from memory), to 1e-7 in t, at most 41
// evaluations. The least value seen is returned, so it is never above
// f(e^t0).
func brentMin(f func(w float64) float64, a, b, t0 float64) float64 {
	const cgold, tol = 0.3819660112501051, 1e-7
	x := t0
	w, v := x, x
	fx := f(lti.Exp(x))
	fw, fv := fx, fx
	best := fx
	d, e := 0.0, 0.0
	for it := 0; it < 40; it++ {
		m := float64(0.5 * (a + b))
		if math.Abs(x-m) <= 2*tol-float64(0.5*(b-a)) {
			break
		}
		useGolden := true
		if math.Abs(e) > tol {
			// A parabola through x, w and v.
			r := float64((x - w) * (fx - fv))
			q := float64((x - v) * (fx - fw))
			p := float64((x-v)*q) - float64((x-w)*r)
			q = 2 * (q - r)
			if q > 0 {
				p = -p
			}
			q = math.Abs(q)
			if math.Abs(p) < math.Abs(float64(0.5*q*e)) && p > float64(q*(a-x)) && p < float64(q*(b-x)) {
				e, d = d, p/q
				if u := x + d; u-a < 2*tol || b-u < 2*tol {
					d = math.Copysign(tol, m-x)
				}
				useGolden = false
			}
		}
		if useGolden {
			if x < m {
				e = b - x
			} else {
				e = a - x
			}
			d = float64(cgold * e)
		}
		u := x + d
		if math.Abs(d) < tol {
			u = x + math.Copysign(tol, d)
		}
		fu := f(lti.Exp(u))
		best = math.Min(best, fu)
		if fu <= fx {
			if u < x {
				b = x
			} else {
				a = x
			}
			v, fv, w, fw, x, fx = w, fw, x, fx, u, fu
			continue
		}
		if u < x {
			a = u
		} else {
			b = u
		}
		switch {
		case fu <= fw || w == x:
			v, fv, w, fw = w, fw, u, fu
		case fu <= fv || v == x || v == w:
			v, fv = u, fu
		}
	}
	return best
}

// freqFigures computes, for C = A + x·B on the grid, the worst phase and
// gain margins over the plants (interpolated between grid points) and the
// noise gain: the largest |C| from the lowest gain crossover up.
//
// With stop, it returns early (stopped) once a margin of the plants
// judged so far fails its bound: the verdict of freqOK is then decided,
// since the worst margin over every plant can only be lower (and snap
// keeps the order). A minimum does not depend on the order of the plants,
// so the plant that failed last goes first.
func (sr *searcher) freqFigures(x float64, stop bool) (pm, gm, noise float64, stopped bool) {
	s := sr.p.Spec
	pm, gm = math.Inf(1), math.Inf(1)
	kc := crossing{k: len(sr.grid)}
	c := sr.lbuf
	for k := range c {
		c[k] = sr.a[k] + lti.Mul(complex(x, 0), sr.b[k])
	}
	n := len(sr.open)
	for j := range n {
		i := j
		if stop {
			i = (j + sr.freqFail) % n
		}
		m, g, kci := gridMargins(sr.grid, c, sr.open[i])
		pm, gm = math.Min(pm, m), math.Min(gm, g)
		if kci.below(kc) {
			kc = kci
		}
		if stop && (failsBelow(pm, s.MinPhaseMargin) || failsBelow(gm, s.MinGainMargin)) {
			sr.freqFail = i
			return pm, gm, 0, true
		}
	}
	return pm, gm, sr.noiseFrom(kc), false
}

// failsBelow reports whether freqOK fails the bound lim (when set) on v.
func failsBelow(v, lim float64) bool {
	return lim > 0 && !(v >= lim) && !(snap(v) >= lim)
}

// crossing is where a gain crossover lies on the grid: between the grid
// points k and k + 1, the fraction t of the way (|L|² − 1 interpolated
// linearly); k = len(grid) for none.
type crossing struct {
	k int
	t float64
}

// below reports whether a lies below b.
func (a crossing) below(b crossing) bool {
	return a.k < b.k || a.k == b.k && a.t < b.t
}

// noiseFrom returns the noise gain of C = sr.lbuf from the lowest gain
// crossover kc up (none: the whole grid). At the crossover itself C is
// interpolated between its grid points: the final verification's noise
// gain starts there, and a PI's |C|, falling with frequency, is largest
// there; the grid point below it would overstate the noise gain (by 4 %
// of a PI's Ki on crawler_delay among the reference airframes of package
// discrete).
func (sr *searcher) noiseFrom(kc crossing) float64 {
	c := sr.lbuf
	// The largest |C|², as math.Max would fold it from 0: +Inf if any is,
	// else NaN if any is (NaN fails every comparison), else the largest
	// (the squares are never −0).
	n2, nan := 0.0, false
	from := 0
	if kc.k+1 < len(c) {
		from = kc.k + 1
		a, b := c[kc.k], c[kc.k+1]
		re := real(a) + float64(kc.t*(real(b)-real(a)))
		im := imag(a) + float64(kc.t*(imag(b)-imag(a)))
		if n2 = float64(re*re) + float64(im*im); n2 != n2 {
			n2, nan = 0, true
		}
	}
	for k := from; k < len(c); k++ {
		if v := float64(real(c[k])*real(c[k])) + float64(imag(c[k])*imag(c[k])); v > n2 {
			n2 = v
		} else if v != v {
			nan = true
		}
	}
	if nan && !math.IsInf(n2, 1) {
		n2 = math.NaN()
	}
	return math.Sqrt(n2)
}

// noiseAt is the noise gain of freqFigures alone: the lowest gain
// crossover over the plants is found without the margins, each plant's
// scan stopping at the lowest crossover found so far.
func (sr *searcher) noiseAt(x float64) float64 {
	c := sr.lbuf
	for k := range c {
		c[k] = sr.a[k] + lti.Mul(complex(x, 0), sr.b[k])
	}
	kc := crossing{k: len(sr.grid)}
	for i := range sr.open {
		kc = firstCrossover(c[:min(kc.k+2, len(c))], sr.open[i], kc)
	}
	return sr.noiseFrom(kc)
}

// firstCrossover returns the first gain crossover of L = C·P (as
// gridMargins finds it) when it lies below none, else none.
func firstCrossover(c, P []complex128, none crossing) crossing {
	var prevM float64
	for k := range c {
		L := lti.Mul(c[k], P[k])
		m := float64(real(L)*real(L)) + float64(imag(L)*imag(L)) - 1
		if k > 0 && (prevM >= 0) != (m >= 0) {
			if x := (crossing{k - 1, prevM / (prevM - m)}); x.below(none) {
				return x
			}
			return none
		}
		prevM = m
	}
	return none
}

// gridMargins returns the phase and gain margins of L = C·P on the grid
// (of each kind the crossing nearest the critical point, as
// lti.LoopMargins reports them, with L interpolated linearly between grid
// points), and the first gain crossover (k = len(w) when none). A gain
// crossover is a sign change of |L|² − 1; a phase crossover (∠L = −180°
// + k·360°) a sign change of Im L where Re L < 0. Angles and logarithms
// are taken at the crossings only.
func gridMargins(w []float64, c, P []complex128) (pm, gm float64, kc crossing) {
	pm, gm = math.Inf(1), math.Inf(1)
	kc = crossing{k: len(w)}
	var prev complex128
	var prevM float64
	for k := range w {
		L := lti.Mul(c[k], P[k])
		m := float64(real(L)*real(L)) + float64(imag(L)*imag(L)) - 1
		if k > 0 {
			if (prevM >= 0) != (m >= 0) {
				t := prevM / (prevM - m)
				Lc := prev + lti.Mul(complex(t, 0), L-prev)
				v := 180 + lti.Phase(Lc)*180/math.Pi
				if v > 180 {
					v -= 360
				}
				if math.Abs(v) < math.Abs(pm) {
					pm = v
				}
				if kc.k == len(w) {
					kc = crossing{k - 1, t}
				}
			}
			if (imag(prev) >= 0) != (imag(L) >= 0) {
				t := imag(prev) / (imag(prev) - imag(L))
				re := real(prev) + float64(t*(real(L)-real(prev)))
				if re < 0 {
					g := -20 * lti.Log10(-re)
					if math.Abs(g) < math.Abs(gm) {
						gm = g
					}
				}
			}
		}
		prev, prevM = L, m
	}
	return pm, gm, kc
}

// freqOK reports whether the margins and the noise gain pass at x, and
// the relative violation when not.
func (sr *searcher) freqOK(x float64) (bool, float64, string) {
	pm, gm, noise, _ := sr.freqFigures(x, false)
	return sr.freqVerdict(x, pm, gm, noise)
}

// freqPass is the verdict of freqOK alone, which may stop at the first
// plant that fails a margin (freqFigures).
func (sr *searcher) freqPass(x float64) bool {
	pm, gm, noise, stopped := sr.freqFigures(x, true)
	if stopped {
		return false
	}
	ok, _, _ := sr.freqVerdict(x, pm, gm, noise)
	return ok
}

// freqVerdict judges the frequency figures at x (see freqOK).
func (sr *searcher) freqVerdict(x, pm, gm, noise float64) (bool, float64, string) {
	s := sr.p.Spec
	pm, gm, noise = snap(pm), snap(gm), snap(noise)
	v, why := 0.0, ""
	if s.MinPhaseMargin > 0 && !(pm >= s.MinPhaseMargin) {
		v += relShort(pm, s.MinPhaseMargin)
		why = "phase_margin"
	}
	if s.MinGainMargin > 0 && !(gm >= s.MinGainMargin) {
		v += relShort(gm, s.MinGainMargin)
		why = "gain_margin"
	}
	if !(noise <= sr.noiseB) {
		v += noise/sr.noiseB - 1
		why = "noise_gain"
	}
	if sr.ratioB > 0 {
		if lim := sr.ratioB * sr.fam.gain(sr.th, x); !(noise <= lim) {
			v += noise/lim - 1
			why = "noise_gain"
		}
	}
	return v == 0, v, why
}

// relShort is the relative shortfall of v below the limit (1 when v is
// not a number).
func relShort(v, limit float64) float64 {
	if math.IsNaN(v) {
		return 1
	}
	return math.Max(0, (limit-v)/limit)
}

// screen judges the shape u by the frequency checks alone: the largest x
// they allow, found in closed form for Ms and by bisection for the
// margins and the noise gain.
func (sr *searcher) screen(u []float64) *point {
	k := key(u) + strconv.FormatFloat(sr.noiseB, 'g', -1, 64)
	if pt, ok := sr.cache[k]; ok {
		return pt
	}
	pt := &point{u: slices.Clone(u), th: sr.theta(u)}
	sr.cache[k] = pt
	sr.basis(pt.th)
	lo, xms, ok := sr.msBound()
	if ok && lo > 0 {
		// Ms fails at x = 0: the line starts at lo, refined between grid
		// points and rounded up.
		lo = snapUp(sr.loExact(lo))
		ok = lo < xms
	}
	if !ok {
		pt.why, pt.fviol = "max_sensitivity", 1
		return pt
	}
	if lo > 0 {
		// No plant's Nyquist curve crosses the Ms circle, and so −1, on
		// [lo, xms]: one gain in it tells the stability of all, at each
		// plant. An interval past one where Ms fails is often that of a
		// loop unstable throughout (its curve circles −1 at a distance),
		// which the search would judge in vain. So lo itself (admissible,
		// loExact's bound lying inside Ms) is tested exactly at the
		// nominal plant; the others are tested by judgeAt where a design
		// passes. A test that cannot be made (an error) shuts the shape
		// too: the screen has no error to return, and a shape whose
		// stability is unknown cannot give a design.
		st, err := sr.L.Stable(sr.fam.ctrl(pt.th, lo), 0)
		if err != nil || !st {
			pt.why, pt.fviol = "stable", 1
			return pt
		}
	}
	pt.xlo = lo
	cap := 1e4 * sr.fam.xRef
	x := math.Min(xms, cap)
	if !(x > lo) {
		// The interval starts past the cap of an unbounded x.
		pt.why, pt.fviol = "max_sensitivity", 1
		return pt
	}
	if !sr.freqPass(x) {
		// The margins and the noise gain are assumed to improve as x falls
		// (less integral or proportional action): bisect on [small, x].
		small := math.Max(math.Min(x*1e-4, sr.fam.xRef*1e-4), lo)
		okS, vS, whyS := sr.freqOK(small)
		if !okS {
			pt.why, pt.fviol = whyS, vS
			return pt
		}
		lo, hi := small, x
		for i := 0; i < 40 && hi/lo > 1.005; i++ {
			m := math.Sqrt(lo * hi)
			if sr.freqPass(m) {
				lo = m
			} else {
				hi = m
			}
		}
		x = lo
	}
	if xms > 0 && !math.IsInf(xms, 1) && x > float64(xms*(1-msNear)) {
		// Ms may bind (the margins' bisection can stop just below the
		// grid's bound, above the exact one): its bound between grid
		// points, where x = 0 itself can exceed Ms.
		if x = math.Min(x, sr.msExact(pt.xlo, xms)); !(x > pt.xlo) {
			pt.why, pt.fviol = "max_sensitivity", 1
			return pt
		}
	}
	// Ten digits: the last bits of x depend on the CPU (fused
	// multiply-adds), and the search must take the same path everywhere.
	pt.xf = snap(x)
	x = pt.xf
	pt.noise = sr.noiseAt(x)
	return pt
}

// shrinkSteps are the fractions of the frequency checks' largest gain that
// judge tries, in turn, when the time checks fail there: the time checks
// are not monotone in the gain (a settling time jumps when a ripple leaves
// the band), so the line is sampled finely near the top and down to
// 2.5 % of it.
func shrinkSteps() []float64 {
	return []float64{1, 0.93, 0.86, 0.79, 0.72, 0.64, 0.55, 0.45, 0.35, 0.25, 0.17, 0.1, 0.05, 0.025}
}

// judge makes the full judgment of shape pt at gain x: stability at every
// plant by the exact test, then the time checks. With shrink, a gain that
// fails the time checks is lowered along shrinkSteps until it passes; the
// first that passes is returned (the largest passing gain of the steps).
func (sr *searcher) judge(pt *point, x float64, shrink bool, worth func(x float64) bool) (cand, error) {
	if !(pt.xf > 0) {
		return cand{pt: pt, x: x, settle: math.NaN(), viol: 1 + pt.fviol, fails: []string{pt.why}}, nil
	}
	sr.basis(pt.th)
	steps := []float64{1}
	switch {
	case shrink && sr.fine:
		// Looking for a small feasible set: the line of x finely, down to
		// 1 % (64 steps of ×0.93).
		steps = steps[:0]
		for f := 1.0; f > 0.01; f *= 0.93 {
			steps = append(steps, f)
		}
	case shrink:
		steps = shrinkSteps()
	}
	var c, low cand
	stuck, probed := 0, false
	if pt.stuckTop && x < pt.xf {
		stuck = 1
	}
	if len(steps) > 1 && x*steps[len(steps)-1] < pt.xlo {
		// The line starts above 0: its ladder ends at the start (and
		// where x is below it, the ladder is the start alone: the line's
		// gains from its start up to x were judged from its top).
		// The start's step lies a hair above it, so that x times it
		// cannot round below; the steps at or below it go.
		at := float64(pt.xlo/x) * (1 + 1e-12)
		k := 0
		for k < len(steps) && steps[k] > at {
			k++
		}
		steps = append(steps[:k:k], at)
	}
	for i, f := range steps {
		if probed && i == len(steps)-1 {
			// Judged already, by the probe.
			c = low
		} else {
			var err error
			if c, err = sr.judgeAt(pt, x*f); err != nil {
				return c, err
			}
		}
		// Before the first passing design, a line that cannot settle at
		// stuckRun gains in a row is judged at its lowest gain, and gives
		// up unless that one settles (see stuckRun).
		if !c.ok && !sr.haveOK && !sr.fine && !probed {
			stuck++
			if !sr.stuck {
				stuck = 0
			}
			if stuck >= stuckRun && i+2 < len(steps) {
				var err error
				if low, err = sr.judgeAt(pt, x*steps[len(steps)-1]); err != nil {
					return low, err
				}
				if !low.ok && sr.stuck {
					return c, nil
				}
				probed = true
			}
		}
		if c.ok {
			if i == 0 {
				return c, nil
			}
			// Between the last failing gain and this one a larger passing
			// gain may lie: three probes, from the top.
			lo, hi := x*f, x*steps[i-1]
			for _, t := range []float64{0.75, 0.5, 0.25} {
				cp, err := sr.judgeAt(pt, lo*lti.Pow(hi/lo, t))
				if err != nil {
					return c, err
				}
				if cp.ok {
					return cp, nil
				}
			}
			return c, nil
		}
		if worth != nil && i+1 < len(steps) && !worth(x*steps[i+1]) {
			return c, nil
		}
	}
	return c, nil
}

// stuckRun is how many gains in a row down a shape's line of x may fail
// without settling (searcher.stuck) before the line is judged at its
// lowest gain (of the ladder, or the line's start where that lies above)
// and, unless that one settles, gives up, while no passing
// design is known: then every failure is simulated over its whole record
// and scored, the most expensive judgment. A shape whose proportional and
// derivative gains are too low to settle within four times the settling
// limit, or that drives the loop unstable, mostly settles at no lower
// gain either; where it does (an integrating plant whose slow integral
// tail shrinks with Ki), it settles at the lowest. On the reference
// airframes and the examples the search ends at the same designs, and at
// the same closest design of an infeasible spec, with 31 % fewer
// judgments on the demo quadrotor's roll (1 253 against 1 817).
const stuckRun = 4

// judgeAt judges shape pt at gain x (its basis set): stability at every
// plant by the exact test, then the time checks.
func (sr *searcher) judgeAt(pt *point, x float64) (cand, error) {
	k := seenKey{pt, math.Float64bits(x)}
	if c, ok := sr.seen[k]; ok {
		// Noted when it was judged; a lookup costs no budget.
		return c, nil
	}
	if x < pt.xlo {
		// Below the line's admissible interval: Ms fails (msBound), and
		// at every lower gain too. Scored as a shut shape is, and neither
		// judged (no budget) nor noted: it is no near miss.
		sr.stuck = true
		return cand{pt: pt, x: x, settle: math.NaN(), viol: 2, fails: []string{"max_sensitivity"}}, nil
	}
	if sr.fine {
		sr.fineLeft--
	}
	c := cand{pt: pt, x: x, settle: math.NaN()}
	c.ctrl = sr.fam.ctrl(pt.th, x)
	c.gain = sr.fam.gain(pt.th, x)
	c.noise = sr.noiseAt(x)
	// The time checks first: most candidates fail them, and an unstable
	// loop cannot pass them (its response leaves the band), so the exact
	// stability test is needed only for a candidate that passes, where it
	// rules out a slowly growing mode that the record would not show.
	b, v, fails, settle, err := sr.timeChecks(c.ctrl)
	if err != nil {
		return c, err
	}
	c.ctrl.B, c.viol, c.fails, c.settle = b, v, fails, settle
	if len(fails) == 0 {
		for i := 0; i < sr.ncorn; i++ {
			ok, err := sr.L.Stable(c.ctrl, i)
			if err != nil {
				return c, err
			}
			if !ok {
				c.viol, c.fails = 10, []string{"stable"}
				break
			}
		}
	}
	c.ok = len(c.fails) == 0
	// A pass is a pass whenever it is judged again; so is a failure once
	// a passing design is known, when failures are no longer scored. A
	// failure before that is scored at the plant that failed last, which
	// depends on the order of the search, and is judged afresh.
	if c.ok || sr.haveOK {
		sr.seen[k] = c
	}
	sr.note(c)
	return c, nil
}

// seenKey names a judgment: the shape (the search keeps one point per
// shape) and the gain, bit for bit.
type seenKey struct {
	pt *point
	x  uint64
}

// note keeps the closest candidate, the best passing one and the reach.
func (sr *searcher) note(c cand) {
	if c.ok {
		sr.passing = append(sr.passing, c)
	}
	if c.ok && c.noise <= sr.noiseB && (!sr.haveOK || c.gain > sr.bestOK.gain) {
		sr.bestOK, sr.haveOK = c, true
	}
	if !sr.haveClosest || c.viol < sr.closest.viol {
		sr.closest, sr.haveClosest = c, true
	}
	if c.pt != nil {
		if k := key(c.pt.u); !sr.fine {
			if o, ok := sr.nearest[k]; !ok || c.viol < o.viol {
				sr.nearest[k] = c
			}
		}
	}
	if onlySettling(c.fails) && !math.IsNaN(c.settle) {
		i, _ := slices.BinarySearchFunc(sr.reachers, c.settle, func(a cand, t float64) int { return cmp.Compare(a.settle, t) })
		if i < reachKeep {
			sr.reachers = slices.Insert(sr.reachers, i, c)
			if len(sr.reachers) > reachKeep {
				sr.reachers = sr.reachers[:reachKeep]
			}
		}
	}
}

// reachKeep is how many of the fastest-settling candidates are verified
// at every plant for the settling time an infeasible verdict reports.
const reachKeep = 4

// reachAll returns the settling time the form reaches with every other
// check met, verified at every plant, and the design that reaches it: the
// least, over the candidates kept in reachers, of settleAll (+Inf when
// none meets the overshoot at every plant). During the search a failing
// candidate's settling is taken from two plants only (the one that failed
// and the nominal), a guide that can be far too optimistic for the
// verdict.
func (sr *searcher) reachAll() (Controller, float64, bool, error) {
	var at Controller
	best, slow := math.Inf(1), false
	for _, c := range sr.reachers {
		b, t, slowOnly, err := sr.settleDetail(c.ctrl)
		if err != nil {
			return at, 0, false, err
		}
		if t < best {
			at, best = c.ctrl, t
			at.B = b
		}
		slow = slow || slowOnly
	}
	return at, best, slow, nil
}

// byReach returns the candidates kept in reachers ordered by the settling
// time each reaches at every plant (settleAll), least first; those that
// reach none keep their order after the others. The two-plant figure that
// ranks reachers during the search can favour a candidate much slower at
// the other plants, and a search for a small feasible set that starts
// from it looks in the wrong place (a lead of a random airframe, whose
// feasible set lay beside the fastest candidate at every plant, was
// called infeasible).
func (sr *searcher) byReach() ([]cand, error) {
	ts := make([]float64, len(sr.reachers))
	idx := make([]int, len(sr.reachers))
	for i, c := range sr.reachers {
		_, t, err := sr.settleAll(c.ctrl)
		if err != nil {
			return nil, fmt.Errorf("settling of a near miss at every plant: %w", err)
		}
		ts[i], idx[i] = t, i
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmpFloat(ts[a], ts[b]) })
	out := make([]cand, len(idx))
	for i, j := range idx {
		out[i] = sr.reachers[j]
	}
	return out, nil
}

// settleAll returns the settling time controller c reaches with one
// admitted setpoint weight for all plants: over the weights that hold the
// hold rate and meet the overshoot limit (and, without an integral, the
// steady error) at every plant and settle within the record, the least of
// the slowest settling time over every plant, and that weight; +Inf when
// no weight does.
func (sr *searcher) settleAll(c Controller) (float64, float64, error) {
	b, t, _, err := sr.settleDetail(c)
	return b, t, err
}

// settleDetail is settleAll, and whether an admitted weight meets every
// condition of it at every plant but settling within the record (slowOnly):
// the controller's response is only too slow for the record.
func (sr *searcher) settleDetail(c Controller) (float64, float64, bool, error) {
	s := sr.p.Spec
	bh := sr.holdWeight(c)
	slow := make([]float64, len(sr.bs))
	ok := make([]bool, len(sr.bs))
	calm := make([]bool, len(sr.bs))
	for j, w := range sr.bs {
		ok[j] = w >= bh-1e-12
		calm[j] = ok[j]
	}
	for i := 0; i < sr.ncorn; i++ {
		e, err := sr.L.Step(c, i)
		if err != nil {
			return 0, 0, false, err
		}
		if !c.Form.HasIntegral() && s.MaxSteadyError > 0 && math.Abs(1-e.Final1) > s.MaxSteadyError {
			return c.B, math.Inf(1), false, nil
		}
		y0, y1 := make([]float64, e.N), make([]float64, e.N)
		e.Respond(y0, y1)
		for j, w := range sr.bs {
			if !calm[j] {
				continue
			}
			f := e.Final0 + float64(w*(e.Final1-e.Final0))
			if !(f > 0) || math.IsInf(f, 0) {
				ok[j], calm[j] = false, false
				continue
			}
			st := weightedSettle(y0, y1, w, e.H, f, s.Band)
			if !(st.Overshoot <= s.Overshoot) {
				ok[j], calm[j] = false, false
				continue
			}
			if !st.Settled {
				ok[j] = false
				continue
			}
			slow[j] = math.Max(slow[j], st.Settling)
		}
	}
	b, best, slowOnly := c.B, math.Inf(1), false
	for j, w := range sr.bs {
		if ok[j] && slow[j] < best {
			b, best = w, slow[j]
		}
		slowOnly = slowOnly || calm[j] && !ok[j]
	}
	return b, best, slowOnly, nil
}

func onlySettling(fails []string) bool {
	return len(fails) == 1 && fails[0] == "settling_time"
}

// holdWeight returns the least setpoint weight with which the integrator
// holds the spec's hold_rate at every plant: at steady state it carries
// (1/G(0) + (1 − b)·Kp)·r (H(0) = 1; 1/G(0) = 0 for a plant that
// integrates), so b ≥ 1 − (IL/r − 1/G(0))/Kp; > 1 when no weight can.
// Where a plant's own steady gain cannot hold r with the integrator at
// its limit (IL/r < 1/|G(0)|: HoldReach), no controller holds it, and
// the search leaves the hold rate out (−Inf) and designs for the other
// checks: the final verification fails hold_rate whatever the design,
// and a search that scored every candidate by that one miss reported an
// arbitrary, even unstable, closest design.
func (sr *searcher) holdWeight(c Controller) float64 {
	r := sr.p.Spec.HoldRate
	il := sr.p.Ctrl.IntegratorLimit
	if !c.Form.HasIntegral() || !(r > 0) || !(il > 0) {
		return math.Inf(-1)
	}
	need := math.Inf(-1)
	if sr.holdBeyond {
		return need
	}
	for _, room := range sr.rooms {
		if c.Kp > 0 {
			need = math.Max(need, 1-room/c.Kp)
		}
	}
	return need
}

// weightWindow is a necessary condition on the setpoint weight b for a
// response that meets the time spec (newWeightWindow; newSureWindow makes
// a sufficient one): the interval [lo, hi] (within the admitted [bmin,
// bmax]) of weights whose response, at every sample seen so far, is at
// most (1 + os)·F, and inside the settling band at every sample after Ts.
//
// A response that meets the spec has overshoot ≤ os and settling time
// ≤ Ts; its last sample outside the band is then at or before Ts (the
// interpolated exit is after that sample), so every passing weight is in
// the window, and only those need a step summary. Each sample gives
// linear inequalities in b: with d = y1 − y0 and F(b) = F0 + b·dF > 0,
// the peak bound y ≤ (1 + os)·F reads b·(d − (1 + os)·dF) ≤ (1 + os)·F0
// − y0, and the band |y − F| ≤ band·F reads b·(d − (1 + band)·dF) ≤
// (1 + band)·F0 − y0 and −b·(d − (1 − band)·dF) ≤ y0 − (1 − band)·F0. Their
// intersection is an interval, kept in one pass.
type weightWindow struct {
	lo, hi float64
	k0     int // first sample held to the band
	f0, df float64
	// The products of the inequalities that do not change from sample to
	// sample, each rounded on its own (see window): (1 + os)·dF,
	// (1 + os)·F0 and so on.
	osDF, osF0, hiDF, hiF0, loDF, loF0 float64
	// ok is false where the test does not apply: a final value not
	// positive over the admitted weights, a non-finite sample, or (for
	// the sure window) a record too short to call a response settled.
	ok bool
	// mag is the largest magnitude of the final values and of the
	// samples of y0 and y1 − y0 seen, and room the sure window's margin
	// in the units of the response (see newSureWindow): the window is
	// sure only while the rounding of its inequalities, a few units in
	// the last place of mag, stays far inside room.
	mag, room float64
}

func newWeightWindow(e *Evaluation, s airframe.Spec, bmin, bmax float64) weightWindow {
	w, _, _ := window(e, bmin, bmax, s.Overshoot, s.Band)
	if t := s.SettlingTime / e.H; t < float64(e.N) {
		w.k0 = int(math.Floor(t)) + 1
	}
	return w
}

// window returns the window of weights in [bmin, bmax] under the
// overshoot os and the band, with no sample seen and every sample held
// to the band (k0 = N; the caller sets k0), and the final values at bmin
// and bmax; ok says whether both are positive and finite.
func window(e *Evaluation, bmin, bmax, os, band float64) (w weightWindow, fmin, fmax float64) {
	w = weightWindow{lo: bmin, hi: bmax, f0: e.Final0, df: e.Final1 - e.Final0, k0: e.N}
	fmin, fmax = w.f0+float64(bmin*w.df), w.f0+float64(bmax*w.df)
	w.ok = fmin > 0 && fmax > 0 && !math.IsInf(fmin, 0) && !math.IsInf(fmax, 0)
	osHi, bandHi, bandLo := 1+os, 1+band, 1-band
	w.osDF, w.osF0 = float64(osHi*w.df), float64(osHi*w.f0)
	w.hiDF, w.hiF0 = float64(bandHi*w.df), float64(bandHi*w.f0)
	w.loDF, w.loF0 = float64(bandLo*w.df), float64(bandLo*w.f0)
	return w, fmin, fmax
}

// newSureWindow returns the window of the weights that surely meet the
// time spec at this plant, with no step summary: every sample at most
// (1 + os·(1 − 1e-6))·F and every sample from k0 on inside the band
// narrowed to band·(1 − 1e-6), where k0 is the last sample with k0·h ≤
// Ts·(1 − 1e-8). Such a response has an overshoot below os and its last
// sample outside the band before k0, so its interpolated exit at or
// before k0·h ≤ Ts: timeMet holds. The margins, a millionth of os and of
// the band times the least final value (room), must exceed the rounding
// of the inequalities and of the step summary by far: surely asks for
// room > 1e-13 times the largest magnitude in play (mag; a few units in
// the last place of it are some 1e-16 of it), and a spec whose os or
// band is below 1e-6 gets no sure window.
func newSureWindow(e *Evaluation, s airframe.Spec, bmin, bmax float64) weightWindow {
	const tight = 1 - 1e-6
	w, fmin, fmax := window(e, bmin, bmax, float64(s.Overshoot*tight), float64(s.Band*tight))
	w.ok = w.ok && s.Overshoot >= 1e-6 && s.Band >= 1e-6
	// The constant products of the inequalities round by a unit in the
	// last place of F0 and dF too.
	w.mag = math.Max(math.Max(math.Abs(fmin), math.Abs(fmax)), math.Max(math.Abs(w.f0), math.Abs(w.df)))
	w.room = float64(1e-6*math.Min(s.Overshoot, s.Band)) * math.Min(fmin, fmax)
	if t := float64(s.SettlingTime*(1-1e-8)) / e.H; t < float64(e.N) {
		w.k0 = max(int(math.Floor(t)), 0)
	}
	// A response counts as settled only with its exit in the first 90 %
	// of the record, as lti.SettleExit computes it: its exit is at most
	// k0·h (rounded up or down alike); the search's records are four
	// settling times long, far past that.
	if float64(float64(w.k0)*e.H) > 0.9*float64(float64(e.N-1)*e.H) {
		w.ok = false
	}
	return w
}

// surely reports whether b is inside the window, with no slack: see
// newSureWindow.
func (w *weightWindow) surely(b float64) bool {
	return w.ok && b >= w.lo && b <= w.hi && float64(1e-13*w.mag) < w.room
}

// addBoth narrows w and the sure window v by sample k of the responses
// for b = 0 and 1, with one test that both are finite (x − x is 0 for a
// finite x and NaN for NaN and ±Inf); v also keeps the largest magnitude
// it has seen.
func (w *weightWindow) addBoth(v *weightWindow, k int, y0, y1 float64) {
	d := y1 - y0
	if !(y0-y0 == 0 && d-d == 0) {
		w.ok, v.ok = false, false
		return
	}
	w.narrow(k, y0, d)
	v.narrow(k, y0, d)
	// Both are finite here: plain comparisons (math.Max also orders NaN
	// and ±0, at a cost in this loop).
	if a := math.Abs(y0); a > v.mag {
		v.mag = a
	}
	if a := math.Abs(d); a > v.mag {
		v.mag = a
	}
}

// narrow applies the inequalities of sample k, y0 and d = y1 − y0 finite.
func (w *weightWindow) narrow(k int, y0, d float64) {
	w.bound(d-w.osDF, w.osF0-y0)
	if k >= w.k0 {
		w.bound(d-w.hiDF, w.hiF0-y0)
		w.bound(-(d - w.loDF), y0-w.loF0)
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

// fastTimeChecks is timeChecks once a passing design is known, when a
// failing candidate's violation no longer matters: only the weights
// still passing at every plant so far are followed, each plant's
// responses stop as soon as the weight window admits none of them, and a
// weight is summarized only when the window admits it and the sure
// window (newSureWindow) does not already hold it.
func (sr *searcher) fastTimeChecks(c Controller, bh float64) (b float64, ok bool, err error) {
	s := sr.p.Spec
	alive := sr.alive[:0]
	for j, w := range sr.bs {
		if w >= bh-1e-12 {
			alive = append(alive, j)
		}
	}
	sr.alive = alive
	for n := 0; n < sr.ncorn && len(alive) > 0; n++ {
		// The plant that failed last goes first: a failure is most often
		// at the same corner, and ends the judgment early.
		i := (n + sr.lastFail) % sr.ncorn
		e, err := sr.L.Step(c, i)
		if err != nil {
			return 0, false, err
		}
		r := sr.run(i, e)
		y0, y1 := r.y0, r.y1
		bmin, bmax := sr.bs[alive[len(alive)-1]], sr.bs[alive[0]]
		w := newWeightWindow(&e, s, bmin, bmax)
		sure := newSureWindow(&e, s, bmin, bmax)
		admits := func() bool {
			for _, j := range alive {
				if w.admits(sr.bs[j]) {
					return true
				}
			}
			return false
		}
		stopped := false
		for k := 0; k < e.N; {
			if w.ok && !admits() {
				stopped = true
				break
			}
			m := min(k+respondChunk, e.N)
			e.Respond(y0[k:m], y1[k:m])
			for ; k < m; k++ {
				if w.ok {
					w.addBoth(&sure, k, y0[k], y1[k])
				}
			}
			r.k = k
		}
		if stopped {
			sr.lastFail = i
			return 0, false, nil
		}
		// The admitted weights of a positive final value: those the sure
		// window holds pass; the others are summarized together.
		sc := &sr.score
		sc.grow(len(alive))
		held, ws, fs := alive[:0], sc.ws[:0], sc.fs[:0]
		for _, j := range alive {
			bj := sr.bs[j]
			if w.ok && !w.admits(bj) {
				continue
			}
			f := e.Final0 + float64(bj*(e.Final1-e.Final0))
			if !(f > 0) || math.IsInf(f, 0) {
				continue
			}
			held = append(held, j)
			if !sure.surely(bj) {
				ws, fs = append(ws, bj), append(fs, f)
			}
		}
		sts := sc.sts[:len(ws)]
		weightedSettles(y0, y1, ws, fs, e.H, s.Band, sts)
		next := held[:0]
		m := 0
		for _, j := range held {
			if sure.surely(sr.bs[j]) {
				next = append(next, j)
				continue
			}
			if timeMet(s, sts[m]) {
				next = append(next, j)
			}
			m++
		}
		alive = next
		if len(alive) == 0 {
			sr.lastFail = i
		}
		if !c.Form.HasIntegral() && s.MaxSteadyError > 0 && math.Abs(1-e.Final1) > s.MaxSteadyError {
			sr.lastFail = i
			return 0, false, nil
		}
	}
	if len(alive) == 0 {
		return 0, false, nil
	}
	return sr.bs[alive[0]], true, nil
}

// respondChunk is how many samples fastTimeChecks simulates between looks
// at the weight window.
const respondChunk = 32

// timeChecks runs the setpoint step at every plant and returns the largest
// weight b that meets the overshoot and settling time everywhere (and the
// hold rate), or the failures with their violation; then the steady error
// and the disturbance recovery.
func (sr *searcher) timeChecks(c Controller) (b, viol float64, fails []string, settle float64, err error) {
	s := sr.p.Spec
	sr.stuck = false
	bh := sr.holdWeight(c)
	settle = math.NaN()
	if bh > 1 {
		return 1, 1, []string{"hold_rate"}, settle, nil
	}
	// The verdict: every plant, every admitted weight (fastTimeChecks),
	// then the disturbance recovery at every plant.
	sr.judged++
	b, ok, err := sr.fastTimeChecks(c, bh)
	if err != nil {
		return b, 0, nil, settle, err
	}
	if ok {
		if s.DisturbanceRecovery > 0 {
			for i := 0; i < sr.ncorn; i++ {
				v, err := sr.recoveryMiss(c, i)
				if err != nil {
					return b, viol, fails, settle, err
				}
				if v != 0 {
					return b, v, []string{"disturbance_recovery"}, settle, nil
				}
			}
		}
		return b, 0, nil, settle, nil
	}
	if sr.haveOK {
		// A failure is not scored: a passing design is known.
		return 1, math.Inf(1), []string{"settling_time"}, settle, nil
	}
	// A failure before the first passing design is scored, to guide the
	// search toward the feasible set: the violation of the best admitted
	// weight at the plant that failed and the nominal one, on every
	// eighth weight (fourth when looking for a small feasible set). The
	// score is a guide, never a verdict.
	bs := sr.bs
	if len(bs) > 5 {
		k := 8
		if sr.fine {
			k = 4
		}
		bs = sr.score.bs[:0]
		for j := 0; j < len(sr.bs); j += k {
			bs = append(bs, sr.bs[j])
		}
		sr.score.bs = bs
	}
	nb := len(bs)
	sc := &sr.score
	sc.grow(nb)
	worst, slow, osOK, unsettled := sc.worst[:nb], sc.slow[:nb], sc.osOK[:nb], sc.unsettled[:nb]
	for j := range nb {
		worst[j], slow[j], osOK[j], unsettled[j] = 0, 0, true, false
	}
	steady := 0.0
	plants := []int{sr.lastFail}
	if sr.lastFail != 0 {
		plants = append(plants, 0)
	}
	for _, i := range plants {
		// The verdict's run of this plant, continued to the end of its
		// record (the same samples as a new one), or a new run.
		r := sr.ran(i)
		if r == nil {
			e, err := sr.L.Step(c, i)
			if err != nil {
				return 0, 0, nil, settle, err
			}
			r = sr.run(i, e)
		}
		e, y0, y1 := r.e, r.y0, r.y1
		if r.k < e.N {
			e.Respond(y0[r.k:], y1[r.k:])
			r.k = e.N
		}
		// The weights of a positive final value are summarized together.
		ws, fs, idx := sc.ws[:0], sc.fs[:0], sc.idx[:0]
		for j, w := range bs {
			f := e.Final0 + float64(w*(e.Final1-e.Final0))
			if !(f > 0) || math.IsInf(f, 0) {
				worst[j] = math.Inf(1)
				continue
			}
			ws, fs, idx = append(ws, w), append(fs, f), append(idx, j)
		}
		sts := sc.sts[:len(ws)]
		weightedSettles(y0, y1, ws, fs, e.H, s.Band, sts)
		for m, st := range sts {
			j := idx[m]
			worst[j] = math.Max(worst[j], timeViolation(s, true, st))
			unsettled[j] = unsettled[j] || !st.Settled
			if !(st.Overshoot <= s.Overshoot) {
				osOK[j] = false
			}
			slow[j] = math.Max(slow[j], st.Settling)
		}
		if !c.Form.HasIntegral() {
			steady = math.Max(steady, math.Abs(1-e.Final1))
		}
	}
	bestV, bestJ := math.Inf(1), -1
	for j, w := range bs {
		if w < bh-1e-12 {
			continue
		}
		if worst[j] < bestV || bestJ < 0 {
			bestV, bestJ = worst[j], j
		}
		if osOK[j] && (math.IsNaN(settle) || slow[j] < settle) {
			settle = slow[j]
		}
	}
	if bestJ < 0 {
		return 1, 1, []string{"hold_rate"}, settle, nil
	}
	// A failure at other plants or weights than those scored here still
	// counts: at least a small violation.
	b, viol = bs[bestJ], math.Max(bestV, 1e-3)
	sr.stuck = unsettled[bestJ] || viol >= 1e6
	if !osOK[bestJ] {
		fails = append(fails, "overshoot")
	}
	if slow[bestJ] > s.SettlingTime || math.IsInf(worst[bestJ], 1) || len(fails) == 0 {
		fails = append(fails, "settling_time")
	}
	if !c.Form.HasIntegral() && s.MaxSteadyError > 0 && steady > s.MaxSteadyError {
		viol += steady/s.MaxSteadyError - 1
		fails = append(fails, "steady_error")
	}
	if s.DisturbanceRecovery > 0 && !math.IsInf(viol, 1) {
		// A miss of the step is scored on the load step too, at the same
		// plants: without it, a gain too low to recover from a load
		// in time looked as close as one that does (a random pid of our
		// own: Ki 0.06, recovering never, scored 0.001 like Ki 2, which
		// recovers; the search for a small feasible set went down to the
		// former).
		for _, i := range plants {
			v, err := sr.recoveryMiss(c, i)
			if err != nil {
				return b, viol, fails, settle, err
			}
			if v != 0 {
				viol += v
				fails = append(fails, "disturbance_recovery")
				break
			}
		}
	}
	return b, viol, fails, settle, nil
}

// recoveryMiss returns how far controller c misses disturbance_recovery
// at plant i: 0 when the load step's deviation recovers in time, its
// relative excess when later, 1 when never (NaN, a miss, where the
// recovery time is not a number).
func (sr *searcher) recoveryMiss(c Controller, i int) (float64, error) {
	s := sr.p.Spec
	r, err := sr.L.Disturb(c, i, 4*math.Max(s.DisturbanceRecovery, s.SettlingTime))
	if err != nil {
		return 0, err
	}
	d := Disturbance(r, 1)
	switch {
	case d.Recovery <= s.DisturbanceRecovery:
		return 0, nil
	case math.IsInf(d.Recovery, 1):
		return 1, nil
	}
	return d.Recovery/s.DisturbanceRecovery - 1, nil
}

// timeViolation scores how far a step misses the time spec: the sum of
// the relative excesses of overshoot and settling time (plus one when the
// response does not settle within its record); 0 when met, +Inf when the
// loop is unstable.
func timeViolation(s airframe.Spec, stable bool, st lti.StepInfo) float64 {
	if !stable || math.IsNaN(st.Overshoot) || math.IsNaN(st.Settling) {
		return math.Inf(1)
	}
	// Ten digits, as the search's other figures (see screen).
	st.Overshoot, st.Settling = snap(st.Overshoot), snap(st.Settling)
	v := math.Max(0, st.Overshoot/s.Overshoot-1) + math.Max(0, st.Settling/s.SettlingTime-1)
	if !st.Settled {
		v += 1
	}
	return v
}

// timeMet reports whether timeViolation(s, true, st) is 0 (both are
// non-negative terms), without the cost of snap where the figure is far
// enough from its bound that snapping cannot move it across (withinSnapped).
func timeMet(s airframe.Spec, st lti.StepInfo) bool {
	if math.IsNaN(st.Overshoot) || math.IsNaN(st.Settling) || !st.Settled {
		return false
	}
	return withinSnapped(st.Overshoot, s.Overshoot) && withinSnapped(st.Settling, s.SettlingTime)
}

// withinSnapped reports whether math.Max(0, snap(v)/lim − 1) is 0. snap
// rounds to ten significant digits, a relative change of at most 5e-10,
// so a v below lim·(1 − 1e-8) passes and one above lim·(1 + 1e-8) fails
// without it; in between, and for values outside the usual range, the
// expression of timeViolation decides.
func withinSnapped(v, lim float64) bool {
	if v >= 0 && lim > 0 && !math.IsInf(v, 0) && !math.IsInf(lim, 0) {
		if v <= lim*(1-1e-8) {
			return true
		}
		if v >= lim*(1+1e-8) {
			return false
		}
	}
	return math.Max(0, snap(v)/lim-1) == 0
}

// gridPoints returns the shapes of the coarse grid.
func (sr *searcher) gridPoints() [][]float64 {
	f := sr.fam
	pts := [][]float64{{}}
	for d := range f.ref {
		var next [][]float64
		for _, p := range pts {
			for i := 0; i < f.steps[d]; i++ {
				u := f.lo[d] + (f.hi[d]-f.lo[d])*float64(i)/float64(f.steps[d]-1)
				next = append(next, append(slices.Clone(p), u))
			}
		}
		pts = next
	}
	if f.edge != nil {
		pts = append(pts, slices.Clone(f.edge))
	}
	return pts
}

// ratioEdge returns log10 of the shape r a hair inside the noise-ratio
// bound r ≤ lim, where the noise gain computed on the sampled loop still
// meets it after rounding.
func ratioEdge(lim float64) float64 {
	return lti.Log10(lim * (1 - 1e-9))
}

// denseGrid returns the shapes of a grid k times as dense as the coarse
// one in each parameter (for a two-parameter shape, twice as dense: the
// cost grows with the square), without the coarse grid's own points.
func (sr *searcher) denseGrid(k int) [][]float64 {
	f := sr.fam
	if len(f.ref) == 2 {
		k = 2
	}
	pts := [][]float64{{}}
	for d := range f.ref {
		n := (f.steps[d]-1)*k + 1
		var next [][]float64
		for _, p := range pts {
			for i := 0; i < n; i++ {
				u := f.lo[d] + (f.hi[d]-f.lo[d])*float64(i)/float64(n-1)
				next = append(next, append(slices.Clone(p), u))
			}
		}
		pts = next
	}
	var out [][]float64
	for _, u := range pts {
		coarse := true
		for d := range u {
			i := float64((u[d] - f.lo[d]) / (f.hi[d] - f.lo[d]) * float64(f.steps[d]-1))
			if math.Abs(i-math.Round(i)) > 1e-9 {
				coarse = false
			}
		}
		if !coarse {
			out = append(out, u)
		}
	}
	return out
}

// gridStep is the coarse grid's spacing in decades, per parameter.
func (sr *searcher) gridStep() []float64 {
	f := sr.fam
	st := make([]float64, len(f.ref))
	for d := range st {
		st[d] = (f.hi[d] - f.lo[d]) / float64(f.steps[d]-1)
	}
	return st
}

// Result is the outcome of the search.
type Result struct {
	Ctrl Controller // the design, with its setpoint weight
	Met  bool       // false: no design passed; Ctrl is the closest one
	// NoiseBound is the noise-gain bound in force: the file's, or the
	// default (KneeNoise); +Inf when none applied.
	NoiseBound float64
	// Fails names the checks the closest design misses, when not Met.
	Fails []string
	// Reach is the least settling time over the envelope seen with every
	// other check met, verified at every plant with one setpoint weight
	// (NaN when none); when the closest design misses only the settling
	// time, it is the design of this figure.
	Reach float64
	// Record is the time (s) by which none of the near misses the search
	// kept (every other check met at the plants it scored) had settled,
	// where one of them met the overshoot at every plant and was only too
	// slow for the records (Reach NaN): 90 % of the records' span, where a
	// response counts as settled (lti.StepMetrics); 0 otherwise.
	Record float64
	// Evaluations counts the full judgments, for benchmarks.
	Evaluations int
	// Alternates are other designs the search found passing, largest
	// load-rejection gain first (at most maxAlternates): the search judges
	// the frequency checks on its grid, and where the exact verification
	// finds Ctrl short by a hair and a lower gain does not mend it, one of
	// these may pass.
	Alternates []Controller
}

// Search finds the design of p's form on the loops L (see the top of this
// file). g0 and w0 set the scale of the search: a controller gain of g0
// puts the crossover near w0.
func Search(p airframe.Axis, L Loops, g0, w0 float64) (Result, error) {
	if !(g0 > 0) || math.IsInf(g0, 0) || !(w0 > 0) || math.IsInf(w0, 0) {
		return Result{}, fmt.Errorf("search scale: gain %g at %g rad/s is not usable", g0, w0)
	}
	sr := newSearcher(p, L, g0, w0)
	res := Result{NoiseBound: math.Inf(1), Reach: math.NaN()}
	evals := 0
	judge := func(pt *point, x float64, shrink bool, worth func(x float64) bool) (cand, error) {
		evals++
		return sr.judge(pt, x, shrink, worth)
	}
	grid := sr.gridPoints()
	step := sr.gridStep()

	var best cand
	ok := false
	// The first design: for a form with an integral, the knee of the
	// trade-off between load rejection and noise (the largest Ki/N²);
	// for the others, the least noise gain. Without max_noise_gain in the
	// file it sets the default bound; with it, it seeds the search under
	// that bound (it passes there too), which makes a small feasible set
	// no harder to find than under the default.
	explicit := p.Spec.MaxNoiseGain > 0
	var first, alt cand
	found, refined := false, false
	var err error
	if p.Ctrl.Form.HasIntegral() {
		first, found, err = sr.maximize(grid, step, judge, sr.perNoisePower(), nil)
	} else {
		first, found, err = sr.leastNoise(grid, step, judge)
		if err == nil && !found {
			// No line's scan from below passes: the feasible set, if
			// any, is small. The search for the largest load-rejection
			// gain has the search for a small feasible set (under the
			// noise-to-gain ratio the scan has too); a design it finds
			// stands for the least noise gain, the set leaving little
			// room for a lower one.
			first, found, err = sr.maximize(grid, step, judge, sr.loadGain(), nil)
		}
	}
	if err != nil {
		return res, err
	}
	switch {
	case explicit:
		res.NoiseBound = p.Spec.MaxNoiseGain
		sr.ratioB = 0
	case found && p.Ctrl.Form.HasIntegral():
		if best, err = sr.kneeDesign(first, step, judge); err != nil {
			return res, err
		}
		if alt, err = sr.widen(best, grid, step, judge); err != nil {
			return res, err
		}
		res.NoiseBound = sr.noiseB
		ok, refined = true, true
	case found:
		res.NoiseBound = NoiseFactor * first.noise
		sr.noiseB, sr.ratioB = res.NoiseBound, 0
	}
	// Without a design and without a bound of the file, a second search
	// would look under the same constraints again: nothing to find.
	if !ok && (found || explicit) {
		var seed *cand
		if found {
			sr.bestOK, sr.haveOK = first, true
			seed = &first
		}
		if best, ok, err = sr.maximize(grid, step, judge, sr.loadGain(), seed); err != nil {
			return res, err
		}
	}
	if explicit && p.Ctrl.Form.HasIntegral() {
		// The design the default bound would give, where it meets the
		// file's bound (see freeDesign), against the search's own,
		// both refined.
		if ok {
			if best, err = sr.refine(best, step, judge); err != nil {
				return res, err
			}
		}
		fd, fdOK, err := sr.freeDesign(g0, w0, func() { evals++ })
		if err != nil {
			return res, err
		}
		if fdOK && (!ok || fd.gain > best.gain) {
			if fd, err = sr.refine(fd, step, judge); err != nil {
				return res, err
			}
		}
		switch {
		case fdOK && (!ok || fd.gain > best.gain):
			alt, best, ok = best, fd, true
		case fdOK:
			alt = fd
		}
		refined = true
	}
	res.Evaluations = evals
	if !ok {
		if !sr.haveClosest {
			res.Fails = sr.shut
			return res, nil
		}
		res.Ctrl = sr.closest.ctrl
		res.Fails = sr.closest.fails
		at, reach, slow, err := sr.reachAll()
		if err != nil {
			return res, err
		}
		if math.IsInf(reach, 1) && slow {
			// Said only where a near miss's response meets every
			// condition at every plant but settling within the record,
			// whose length does not depend on the controller.
			e, err := sr.L.Step(sr.reachers[0].ctrl, 0)
			if err != nil {
				return res, err
			}
			// Settled means inside the band from 90 % of the record on
			// (lti.StepMetrics).
			res.Record = 0.9 * float64(float64(e.N-1)*e.H)
		}
		if !math.IsInf(reach, 1) {
			res.Reach = reach
			// When the closest design misses only the settling time too,
			// the faster of the two, judged at every plant, is reported.
			if onlySettling(res.Fails) {
				_, t, err := sr.settleAll(res.Ctrl)
				if err != nil {
					return res, err
				}
				if reach < t {
					res.Ctrl = at
				}
			}
		}
		return res, nil
	}
	if !refined {
		if best, err = sr.refine(best, step, judge); err != nil {
			return res, err
		}
	}
	if best, err = sr.finish(best, step, judge); err != nil {
		return res, err
	}
	if alt.ok {
		// The last stages end at different designs from different
		// starts (the knee's design and widen's, or the search's own
		// and the default's under a bound of the file): the tie-break's
		// rule between the two, against the best gain of every passing
		// design under the bound, and the check for a design that beats
		// the one taken, among those the second judged too.
		a, err := sr.finish(alt, step, judge)
		if err != nil {
			return res, err
		}
		best = sr.undominated(tieBreak(best, a, sr.bestGain()))
	}
	res.Evaluations = evals
	// A hold rate beyond any controller fails the design whatever it is:
	// the search designed for the other checks, and the design is not
	// met (holdWeight).
	res.Ctrl, res.Met = best.ctrl.Snap(), !sr.holdBeyond || !p.Ctrl.Form.HasIntegral()
	if !res.Met {
		res.Fails = []string{"hold_rate"}
	}
	if sr.ratioB > 0 {
		res.NoiseBound = sr.ratioB * best.gain
	}
	res.Alternates = sr.alternates(best, res.NoiseBound)
	return res, nil
}

// finish is the last stages of a design c that passes: the refinement
// with the fine setpoint weights (refineWeights), the tie-break toward
// less noise (quietestAbove), the ride on a pid's noise bound (rideUp)
// and the check that no design the search judged beats it in gain and
// noise both (undominated).
func (sr *searcher) finish(c cand, step []float64, judge judgeFunc) (cand, error) {
	c, err := sr.refineWeights(c, step, judge)
	if err != nil {
		return c, err
	}
	quiet, err := sr.quietestAbove(c, step, judge)
	if err != nil {
		return c, err
	}
	if c, err = sr.rideUp(c, quiet, step, judge); err != nil {
		return c, err
	}
	return sr.undominated(c), nil
}

// bestGain is the largest gain of the passing designs judged under the
// noise bound in force: the best the search found.
func (sr *searcher) bestGain() float64 {
	g := 0.0
	for _, c := range sr.passing {
		if c.noise <= sr.noiseB && c.gain > g {
			g = c.gain
		}
	}
	return g
}

// cmpNoise compares the noise gains n and m: −1 when n is lower by more
// than 1e-6 (relative), +1 when higher by more, 0 when they tie. Noise
// gains that close are one figure to a reviewer, and their order would
// hang on the rounding of the grid's interpolation.
func cmpNoise(n, m float64) int {
	switch {
	case n < m*(1-1e-6):
		return -1
	case n > m*(1+1e-6):
		return 1
	}
	return 0
}

// tieBreak returns, of two finished designs a and b, the one of less
// noise gain among those within NearBest of top, the best gain found (the
// tie-break's rule; noise gains tie as cmpNoise has it, and the larger
// gain wins a tie, a where equal), else the one of larger gain.
func tieBreak(a, b cand, top float64) cand {
	floor := top * (1 - NearBest)
	aIn, bIn := !(a.gain < floor), !(b.gain < floor)
	switch {
	case aIn && bIn:
		if d := cmpNoise(b.noise, a.noise); d < 0 || d == 0 && b.gain > a.gain {
			return b
		}
		return a
	case bIn:
		return b
	case aIn:
		return a
	}
	if b.gain > a.gain {
		return b
	}
	return a
}

// quietestAbove is quietest (the least noise gain among designs within
// NearBest of the best), with the line of the quietest design's own
// shape then scanned from its top down to the best's gain (scanLine): the
// quietest shape is a neighbour the refinement did not scan, and its line
// can pass again above the best, past a failing band. Where it does, the
// design found there is refined, and the quietest taken again (at most
// maxRounds times). On the compliant joint of the reference the
// quietest shape passed at Ki 0.533–0.543 (b 0.92), above the best's
// 0.519 and 6 % above the design's 0.509.
func (sr *searcher) quietestAbove(best cand, step []float64, judge judgeFunc) (cand, error) {
	for range maxRounds {
		q, err := sr.quietest(best, step, judge)
		if err != nil || q.pt == nil {
			return q, err
		}
		up, ok, err := sr.scanLine(q.pt, best.gain, judge)
		if err != nil {
			return q, err
		}
		if !ok {
			return q, nil
		}
		if best, err = sr.refine(up, step, judge); err != nil {
			return best, err
		}
	}
	return sr.quietest(best, step, judge)
}

// refine raises the passing design c's load-rejection gain locally: the
// polish's local grids, then a scan of the lines above it (scanAbove) and
// the polish again from what that finds.
func (sr *searcher) refine(c cand, step []float64, judge judgeFunc) (cand, error) {
	c, err := sr.polish(c, step, judge)
	if err != nil {
		return c, err
	}
	better, err := sr.scanAbove(c, step, judge)
	if err != nil || !(better.gain > c.gain) {
		return c, err
	}
	return sr.polish(better, step, judge)
}

// maxRounds bounds the refinements of quietestAbove and of
// whileRaising (refineWeights, rideFrom).
const maxRounds = 3

// refineWeights refines the passing design c again with the setpoint
// weights five times as dense as the search's (steps of 0.005 instead of
// 0.025). The step response is linear in b, y = y0 + b·(y1 − y0), and the
// weights that settle in time at a given gain can form a window narrower
// than the coarse steps, one that moves with the gain: the passing set is
// then a diagonal ridge in (Ki, b) that the coarse weights see as dots
// along each line of Ki, a per cent wide and some per cent apart, which
// the line scans step over. With the fine weights the ridge is nearly
// continuous (a random pi of our own went from Ki 1.364 at b 0.675 to
// 1.429 at b 0.65, against a brute force's 1.454 on the coarse weights;
// the refinement passes 1.458, and the tie-break toward less noise,
// quietest, takes 1.429).
// The search itself keeps the coarse weights: they cost a fifth of the
// step summaries, and the ridge is refined from where it ends. A design
// that no weight of the fine set passes is kept as it is.
func (sr *searcher) refineWeights(c cand, step []float64, judge judgeFunc) (cand, error) {
	if len(sr.bs) < 2 || c.pt == nil {
		return c, nil // the file's weight, or b = 1 for forms without an integral
	}
	sr.bs = evenWeights(fineWeights)
	// The judgments so far chose among the coarse weights.
	clear(sr.seen)
	f, err := judge(c.pt, c.x, false, nil)
	if err != nil || !f.ok {
		return c, err
	}
	// Refined again while that raises the gain: the ridge can lead on
	// past where one refinement ends.
	return whileRaising(f, func(c cand) (cand, error) { return sr.refine(c, step, judge) })
}

// whileRaising applies step to c again while that raises the gain, at
// most maxRounds times, and returns the last design that raised it
// (c where none did, or where step fails).
func whileRaising(c cand, step func(cand) (cand, error)) (cand, error) {
	for range maxRounds {
		next, err := step(c)
		if err != nil || !(next.gain > c.gain) {
			return c, err
		}
		c = next
	}
	return c, nil
}

// kneeDesign returns the design of the default noise bound from the knee
// k of the trade-off between load rejection and noise (the largest
// Ki/N²), and sets that bound (sr.noiseB): the knee's design is also the
// design of the largest Ki under its own noise gain, since a design of
// more Ki and no more noise would have a larger Ki/N². The knee's own
// line is first scanned above it for a window its search stepped over
// (scanKnee; the bound would end that line at the knee), and the knee
// the scan leaves sets the bound and is refined (refine). Where the scan
// moved the knee and k meets that bound, k is refined too and the better
// design kept: the local steps that end at a local best from one need
// not from the other (the review golden's demo pan: Ki 0.0953 from k,
// 0.0852 from the scanned knee). The tie-break toward less noise
// (quietestAbove) is left to the caller.
func (sr *searcher) kneeDesign(k cand, step []float64, judge judgeFunc) (cand, error) {
	first, err := sr.scanKnee(k, judge)
	if err != nil {
		return first, err
	}
	sr.noiseB = first.noise * (1 + 1e-9)
	best, err := sr.refine(first, step, judge)
	if err != nil || first.x == k.x || !(k.noise <= sr.noiseB) {
		return best, err
	}
	c, err := sr.refine(k, step, judge)
	if err == nil && c.gain > best.gain {
		best = c
	}
	return best, err
}

// widen returns the design of the largest gain under the bound the knee
// set, searched over the whole grid from the knee's design best
// (maximize) and refined, where it beats best; a zero cand (ok false)
// where it does not.
func (sr *searcher) widen(best cand, grid [][]float64, step []float64, judge judgeFunc) (cand, error) {
	w, ok, err := sr.maximize(grid, step, judge, sr.loadGain(), &best)
	if err != nil || !ok || !(w.gain > best.gain) {
		return cand{}, err
	}
	if w, err = sr.refine(w, step, judge); err != nil || !(w.gain > best.gain) {
		return cand{}, err
	}
	return w, nil
}

// freeDesign returns the design the default noise bound would give
// (kneeDesign on a searcher without the file's bound), judged again under
// the file's bound when it meets it, else the first design of its shape's
// line that passes from the top the bound allows down by the line
// search's steps; and where the default bound's design is above the
// file's bound, also the passing design of the largest gain that the
// default search judged under the file's bound, after its last stages
// (finish), the better of the two (found false when neither passes).
// Under the file's bound the searches take other paths through the grid:
// on a reference airframe (winch_slow_pid of package discrete) a bound
// 1 % looser than the default one designed Ki 1.59, where the default's
// design has 4.39. The search keeps the better of this and its own design
// under the bound, so a bound at least as loose as the default never
// designs a lower Ki than the default (but for the tie-break toward less
// noise), and a bound that the default's own design meets is never
// called infeasible. tick counts each judgment.
func (sr *searcher) freeDesign(g0, w0 float64, tick func()) (cand, bool, error) {
	q := sr.p
	q.Spec.MaxNoiseGain = 0
	free := newSearcher(q, sr.L, g0, w0)
	judge := func(pt *point, x float64, shrink bool, worth func(x float64) bool) (cand, error) {
		tick()
		return free.judge(pt, x, shrink, worth)
	}
	step := free.gridStep()
	k, ok, err := free.maximize(free.gridPoints(), step, judge, free.perNoisePower(), nil)
	if err != nil || !ok {
		return cand{}, false, err
	}
	if k, err = free.kneeDesign(k, step, judge); err != nil {
		return cand{}, false, err
	}
	best, ok, err := sr.freeJudge(k, sr.bs, tick)
	if err != nil || k.noise <= sr.noiseB {
		return best, ok, err
	}
	// The default bound's design is above the file's bound: its last
	// stages, and the passing design of the largest gain the default
	// search judged under the file's bound, with the fine setpoint
	// weights finish leaves it. A bound a little tighter than the default
	// is met by the quieter designs the default search finds on its way:
	// on random campaigns of our own, a bound 0.1 % below the default on
	// camp90_37_roll (whose design has 2.4 % less noise than the default
	// bound) and one 3 % below it on camp71_58 (whose design, 5.8 % below
	// the bound, meets it) found no design at all before.
	if _, err := free.finish(k, step, judge); err != nil {
		return cand{}, false, err
	}
	found := false
	var under cand
	for _, c := range free.passing {
		if c.noise <= sr.noiseB && (!found || c.gain > under.gain) {
			under, found = c, true
		}
	}
	if !found {
		return best, ok, nil
	}
	c, cok, err := sr.freeJudge(under, free.bs, tick)
	if err != nil || !cok || ok && !(c.gain > best.gain) {
		return best, ok, err
	}
	return c, true, nil
}

// freeJudge judges the default search's design k on the bounded searcher
// with the setpoint weights ws: at its own gain where it meets the file's
// bound, else down its shape's line from the top the bound allows. The
// judgment is not kept in the searcher's cache, which holds judgments
// made with its own weights.
func (sr *searcher) freeJudge(k cand, ws []float64, tick func()) (cand, bool, error) {
	pt := sr.screen(k.pt.u)
	exact := k.noise <= sr.noiseB
	if exact && k.x > pt.xf && (pt.xf > 0 || pt.why == "noise_gain") {
		// screen's bisection of the noise bound ends up to 0.5 % below
		// where the bound is reached, and it shuts a shape whose noise
		// gain at a small x is above the bound, where the noise gain can
		// fall as x grows (the lowest crossover moves up): a design
		// whose noise is the bound itself (a file that pins the reported
		// default) lies above the point's xf, or on a shape the noise
		// bound shut, and is checked exactly at its own x (its Ms bound
		// holds, the same on both searchers). On camp90_37_roll of a
		// random campaign of our own, the default bound pinned in the
		// file shut the knee's shape, and the search found no design at
		// all.
		sr.basis(pt.th)
		if ok, _, _ := sr.freqOK(k.x); ok {
			at := *pt
			at.xf, at.why, at.fviol, at.stuckTop = k.x, "", 0, false
			at.noise = sr.noiseAt(k.x)
			pt = &at
		}
	}
	if !(pt.xf > 0) {
		return cand{}, false, nil
	}
	x := pt.xf
	if exact {
		x = math.Min(k.x, pt.xf)
	}
	tick()
	bs, seen := sr.bs, sr.seen
	sr.bs, sr.seen = ws, map[seenKey]cand{}
	c, err := sr.judge(pt, x, !exact, nil)
	sr.bs, sr.seen = bs, seen
	if err != nil || !c.ok || !(c.noise <= sr.noiseB) {
		return cand{}, false, err
	}
	return c, true, nil
}

// maxAlternates bounds Result.Alternates.
const maxAlternates = 16

// alternates returns up to maxAlternates other passing designs under the
// noise bound nb, in order of their load-rejection gain, largest first
// (see Result.Alternates).
func (sr *searcher) alternates(best cand, nb float64) []Controller {
	cs := slices.Clone(sr.passing)
	slices.SortStableFunc(cs, func(a, b cand) int { return cmpFloat(b.gain, a.gain) })
	var out []Controller
	for _, c := range cs {
		if len(out) == maxAlternates {
			break
		}
		ctl := c.ctrl.Snap()
		if c.noise > nb || ctl == best.ctrl.Snap() || slices.Contains(out, ctl) {
			continue
		}
		out = append(out, ctl)
	}
	return out
}

// judgeFunc judges shape pt at gain x (see searcher.judge); worth says
// whether a design of the shape at a lower gain could still beat the best
// (nil: always).
type judgeFunc func(pt *point, x float64, shrink bool, worth func(x float64) bool) (cand, error)

// leastNoise finds the least noise gain with which a form without an
// integral meets every other check. Its noise gain grows with x (Kp, or
// K), so on each shape the line of x is scanned upward from 1 % of the
// frequency checks' largest x, by factors of 1.15, to the first x that
// passes, and the step below it is bisected (in log x, four times); a
// pattern search over the shapes goes down from the best. Then the same
// again by factors of 1.03, judging only where the noise gain lies within
// a factor 1.3 below the least found. The default bound is NoiseFactor
// times this noise gain, so a coarse scan loosens it: the least lies
// where a line's passing window (the step response leaves the settling
// band on either side of it) narrows to a few per cent of x, which
// coarser steps jump over. On the demo rover's pd, steps of 1.15 alone
// found a least noise gain 30 % above a brute-force grid's, and steps of
// 1.03 over each whole line cost three times the judgments
// (TestLeastNoiseAgainstBruteForce).
func (sr *searcher) leastNoise(grid [][]float64, step []float64, judge judgeFunc) (cand, bool, error) {
	var best cand
	have := false
	// up judges shape pt from below by factors of ratio, from the first
	// x whose noise gain reaches floor; it stops once the noise gain
	// reaches the best one's.
	up := func(pt *point, ratio, floor float64) (cand, bool, error) {
		if !(pt.xf > 0) {
			return cand{}, false, nil
		}
		sr.basis(pt.th)
		lo := 0.0 // the last x judged that failed
		for x := pt.xf * 0.01; x <= pt.xf*(1+1e-9); x *= ratio {
			if x < pt.xlo {
				continue // below the line's start: Ms fails
			}
			n := sr.noiseAt(x)
			if have && n >= best.noise {
				return cand{}, false, nil
			}
			if n < floor {
				continue
			}
			c, err := judge(pt, x, false, nil)
			if err != nil {
				return c, false, err
			}
			sr.basis(pt.th)
			if !c.ok {
				lo = x
				continue
			}
			for k := 0; k < 4 && lo > 0; k++ {
				mid := math.Sqrt(lo * c.x)
				m, err := judge(pt, mid, false, nil)
				if err != nil {
					return m, false, err
				}
				sr.basis(pt.th)
				if m.ok {
					c = m
				} else {
					lo = mid
				}
			}
			return c, true, nil
		}
		return cand{}, false, nil
	}
	// scan runs up over the grid and a pattern search from the best.
	scan := func(ratio float64, floor func() float64) error {
		for _, u := range grid {
			c, ok, err := up(sr.screen(u), ratio, floor())
			if err != nil {
				return err
			}
			if ok && (!have || c.noise < best.noise) {
				best, have = c, true
			}
		}
		if !have {
			return nil
		}
		return sr.pattern(best.pt.u, step, func(u []float64) (bool, error) {
			c, ok, err := up(sr.screen(u), ratio, floor())
			if err != nil || !ok || c.noise >= best.noise*(1-1e-6) {
				return false, err
			}
			best = c
			return true, nil
		})
	}
	if err := scan(leastCoarse, func() float64 { return 0 }); err != nil || !have {
		return best, have, err
	}
	// Then finely, within leastBand below the best noise gain.
	err := scan(leastFine, func() float64 { return best.noise / leastBand })
	return best, true, err
}

// The scans of leastNoise: by factors of leastCoarse over each whole
// line, then by leastFine where the noise gain is within a factor
// leastBand below the least found.
const (
	leastCoarse = 1.15
	leastFine   = 1.03
	leastBand   = 1.3
)

// objective scores a passing design: the search keeps the largest score.
// upper bounds the score of any design on the shape pt (at most its
// frequency-checks gain xf, at least the lowest noise gain of its line).
type objective struct {
	score func(c cand) float64
	upper func(pt *point) float64
	// at bounds the score of a design of shape pt at gain x or below.
	at func(pt *point, x float64) float64
}

// loadGain is the design objective: the load-rejection gain.
func (sr *searcher) loadGain() objective {
	return objective{
		score: func(c cand) float64 { return c.gain },
		upper: func(pt *point) float64 { return sr.fam.gain(pt.th, pt.xf) },
		at:    func(pt *point, x float64) float64 { return sr.fam.gain(pt.th, x) },
	}
}

// perNoisePower scores the load-rejection gain per unit of noise power,
// J/N²: the default noise bound of a form with an integral is the noise
// gain of the design that maximizes it (see KneeNoise).
func (sr *searcher) perNoisePower() objective {
	// The noise gain barely changes with x on a shape (the integral's
	// share of |C| above the crossover is small), so J(x)/N(xf)² bounds
	// the score closely.
	return objective{
		score: func(c cand) float64 { return c.gain / (c.noise * c.noise) },
		upper: func(pt *point) float64 { return sr.fam.gain(pt.th, pt.xf) / (pt.noise * pt.noise) },
		at:    func(pt *point, x float64) float64 { return sr.fam.gain(pt.th, x) / (pt.noise * pt.noise) },
	}
}

// maximize finds the passing design of the largest score: the grid's
// shapes in order of their upper bound, judged until no remaining shape
// could beat the best, then (when none passes) a search down the
// violation from the closest shape, then a pattern search up from the
// best.
func (sr *searcher) maximize(grid [][]float64, step []float64, judge judgeFunc, obj objective, seed *cand) (cand, bool, error) {
	var pts []*point
	for _, u := range grid {
		pt := sr.screen(u)
		if pt.xf > 0 {
			pts = append(pts, pt)
		} else if !slices.Contains(sr.shut, pt.why) {
			sr.shut = append(sr.shut, pt.why)
		}
	}
	slices.SortStableFunc(pts, func(a, b *point) int { return cmpFloat(obj.upper(b), obj.upper(a)) })
	var best cand
	have := false
	if seed != nil {
		best, have = *seed, true
	}
	// Two passes: each shape at its largest x first (one time check
	// each), which usually finds a passing design and so a bound to prune
	// with; then the shapes that could still beat it, down their line of
	// x.
	failed := make([]bool, len(pts))
	for i, pt := range pts {
		if have && obj.upper(pt) <= obj.score(best) {
			break
		}
		c, err := judge(pt, pt.xf, false, nil)
		if err != nil {
			return best, false, err
		}
		failed[i] = !c.ok
		pt.stuckTop = !c.ok && !sr.haveOK && !sr.fine && sr.stuck
		if c.ok && (!have || obj.score(c) > obj.score(best)) {
			best, have = c, true
		}
	}
	lined := 0
	for i, pt := range pts {
		if have && (obj.upper(pt) <= obj.score(best) || lined >= maxLined) {
			break
		}
		if !failed[i] {
			continue
		}
		lined++
		worth := func(x float64) bool { return !have || obj.at(pt, x) > obj.score(best) }
		if !worth(pt.xf * shrinkSteps()[1]) {
			continue
		}
		c, err := judge(pt, pt.xf*shrinkSteps()[1], true, worth)
		if err != nil {
			return best, false, err
		}
		if c.ok && (!have || obj.score(c) > obj.score(best)) {
			best, have = c, true
		}
	}
	if !have {
		// No shape of the grid passes: the feasible set, if any, is small.
		// Search down the violation from the closest shape, and again from
		// where that search ends when it stalls (a few rounds).
		sr.fine = true
		defer func() { sr.fine = false }()
		sr.fineLeft = fineBudget
		// From the closest shape of the grid, and then from the next
		// closest ones that are not its neighbours: the violation can
		// lead into a basin of near misses far from a small feasible set
		// that a worse shape of the grid lies next to.
		// Each descent has an equal share of the budget but lastRescue,
		// and the denser grid below what they leave.
		starts := sr.descentStarts(pts, maxDescents)
		share := (fineBudget - lastRescue) / (len(starts) + 1)
		for _, st := range starts {
			if sr.haveOK {
				break
			}
			left := sr.fineLeft
			sr.fineLeft = share
			err := sr.descend(st, step, judge)
			sr.fineLeft = left - (share - sr.fineLeft)
			if err != nil {
				return best, false, err
			}
		}
		// Then the shape and the gain together around the closest design
		// and the fastest-settling one with every other check met (where
		// only the settling time fails, the set often lies beside the
		// latter), with at most a quarter of the budget.
		var near []cand
		if sr.haveClosest && sr.closest.pt != nil {
			near = append(near, sr.closest)
		}
		var rs []cand
		var err error
		if !sr.haveOK {
			if rs, err = sr.byReach(); err != nil {
				return best, false, err
			}
		}
		for _, c := range rs {
			if len(near) < 3 && c.pt != nil && !slices.ContainsFunc(near, func(q cand) bool { return q.pt == c.pt && q.x == c.x }) {
				near = append(near, c)
			}
		}
		// The near misses it judges on the way are not kept (aside).
		err = sr.aside(func() error {
			for _, c := range near {
				if sr.haveOK {
					break
				}
				if err := sr.rescue(c, step, judge, fineBudget/4/len(near)); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			return best, false, err
		}
		if !sr.haveOK {
			// Then a grid of three times the density, each shape judged on
			// the fine line of x.
			// It stops at lastRescue left (give or take a line), for the
			// walk along a valley from the candidate that settles fastest
			// at every plant (valley).
			for _, u := range sr.denseGrid(3) {
				if sr.fineLeft <= lastRescue {
					break
				}
				pt := sr.screen(u)
				if !(pt.xf > 0) {
					continue
				}
				if _, err := judge(pt, pt.xf, true, nil); err != nil {
					return best, false, err
				}
				if sr.haveOK {
					break
				}
			}
		}
		if !sr.haveOK {
			rs, err := sr.byReach()
			if err != nil {
				return best, false, err
			}
			if len(rs) > 0 && rs[0].pt != nil {
				if err := sr.aside(func() error { return sr.valley(rs[0], step, judge) }); err != nil {
					return best, false, err
				}
			}
		}
		if !sr.haveOK {
			return best, false, nil
		}
		best, have = sr.bestOK, true
	}
	move := func(u []float64) (bool, error) {
		pt := sr.screen(u)
		if !(pt.xf > 0) || obj.upper(pt) <= obj.score(best)*(1+1e-6) {
			return false, nil
		}
		// Climb from the gain that just beats the best: the neighbour of
		// a ridge passes there or not at all, where a descent from the top
		// of its line would step over the narrow band above the best.
		target := obj.score(best) * (1 + 1e-4)
		// (From the line's start where that lies above.)
		x0 := math.Max(target/obj.at(pt, 1), pt.xlo)
		if !(x0 > 0) || x0 > pt.xf {
			return false, nil
		}
		c, err := sr.climb(pt, x0, judge)
		if err != nil {
			return false, err
		}
		if !c.ok {
			// Or higher up its line, past a failing band.
			worth := func(x float64) bool { return obj.at(pt, x) > obj.score(best)*(1+1e-6) }
			if c, err = judge(pt, pt.xf, true, worth); err != nil {
				return false, err
			}
		}
		if !c.ok || obj.score(c) <= obj.score(best)*(1+1e-6) {
			return false, nil
		}
		best = c
		return true, nil
	}
	// From the best grid shape, and from the next two best distinct ones:
	// the passing set can have several local optima.
	seeds := []cand{best}
	for _, c := range sr.passing {
		if len(seeds) == 3 {
			break
		}
		dup := false
		for _, q := range seeds {
			if key(q.pt.u) == key(c.pt.u) {
				dup = true
			}
		}
		if !dup && obj.score(c) > 0.8*obj.score(best) {
			seeds = append(seeds, c)
		}
	}
	for _, sd := range seeds {
		if err := sr.pattern(sd.pt.u, step, move); err != nil {
			return best, true, err
		}
	}
	return best, true, nil
}

// aside runs f, a search for a small feasible set from near misses, and
// unless it finds a passing design restores the closest design and the
// fastest-settling ones to what they were: a failing candidate's settling
// time is judged at two plants only, and the local variants of a near
// miss, fast there, would crowd out the candidates an infeasible verdict
// reports.
func (sr *searcher) aside(f func() error) error {
	closest, reachers := sr.closest, slices.Clone(sr.reachers)
	err := f()
	if !sr.haveOK {
		sr.closest, sr.reachers = closest, reachers
	}
	return err
}

// lastRescue is the budget of the search for a small feasible set kept
// for its last stage, the walk along a valley (an eighth of fineBudget):
// the descents share the rest, and the rescues and the denser grid stop
// where it begins. The walk also takes what they leave above it.
const lastRescue = fineBudget / 8

// maxDescents is how many shapes of the grid the search for a small
// feasible set descends the violation from.
const maxDescents = 3

// descentStarts returns up to n judged shapes of pts, in order of their
// least violation seen, each more than one grid step (in some coordinate)
// from those before it.
func (sr *searcher) descentStarts(pts []*point, n int) []cand {
	var cs []cand
	for _, pt := range pts {
		if c, ok := sr.nearest[key(pt.u)]; ok {
			cs = append(cs, c)
		}
	}
	slices.SortStableFunc(cs, func(a, b cand) int { return cmpFloat(a.viol, b.viol) })
	step := sr.gridStep()
	var out []cand
	for _, c := range cs {
		if len(out) == n {
			break
		}
		far := true
		for _, o := range out {
			near := true
			for d := range c.pt.u {
				if math.Abs(c.pt.u[d]-o.pt.u[d]) > step[d]*(1+1e-9) {
					near = false
				}
			}
			if near {
				far = false
				break
			}
		}
		if far && !math.IsInf(c.viol, 1) {
			out = append(out, c)
		}
	}
	return out
}

// descend searches down the violation from cl, and again from where that
// search ends when it stalls (a few rounds), until a design passes or the
// budget of the search for a small feasible set is spent.
func (sr *searcher) descend(cl cand, step []float64, judge judgeFunc) error {
	for round := 0; round < 3 && !sr.haveOK && sr.fineLeft > 0; round++ {
		start := cl.viol
		err := sr.pattern(cl.pt.u, step, func(u []float64) (bool, error) {
			if sr.haveOK || sr.fineLeft <= 0 {
				return false, nil
			}
			pt := sr.screen(u)
			c, err := judge(pt, pt.xf, true, nil)
			if err != nil || !(c.viol < cl.viol) {
				return false, err
			}
			cl = c
			return true, nil
		})
		if err != nil {
			return err
		}
		if !(cl.viol < start) {
			break
		}
	}
	return nil
}

// rescue searches for a small feasible set from a near miss cl (the
// closest design seen, or a fast-settling one), with at most budget
// judgments and leaving at least lastRescue of the search's: local grids
// in the shape and the gain together (polish's, but down the violation,
// to polishStep), then a fine scan of the near
// miss's own line of x. The descents move the shape alone and search
// each shape's line of x from the top by steps; a feasible set a per
// cent wide in both (random airframes of our own had such sets, found by
// the brute-force reference, with the closest design a fraction of a per
// cent from them) lies between their steps.
func (sr *searcher) rescue(cl cand, step []float64, judge judgeFunc, budget int) error {
	stop := max(sr.fineLeft-budget, lastRescue)
	done := func() bool { return sr.haveOK || sr.fineLeft <= stop }
	lower := func(c, cur cand) bool { return c.viol < cur.viol }
	if _, err := sr.localGrids(cl, step, judge, lower, nil, done, math.MaxInt); err != nil || sr.haveOK {
		return err
	}
	// Then the near miss's own line of x, finely: a window of passing x
	// a per cent or two wide beside it (the settling time jumps where a
	// ripple of the response leaves the band) lies across the descent's
	// path, which a local grid's first step jumps over (a p, whose only
	// parameter is x, had one 2 % above its closest design).
	pt := cl.pt
	sr.basis(pt.th)
	lo, hi := cl.x/rescueSpan, math.Min(cl.x*rescueSpan, pt.xf)
	for x := lo; x <= hi && !done(); x *= rescueStep {
		if _, err := judge(pt, x, false, nil); err != nil {
			return err
		}
	}
	return nil
}

// valley searches for a small feasible set from the near miss cl along a
// valley of the violation that runs obliquely to the axes of the shape
// and the gain, with the rest of the budget: each shape is scored by the
// least violation over a scan of its line of x around the gain of the
// current one (±30 % by 2 %, then ±2 % by 0.4 % around the least), and
// the shape moves a step along one coordinate while that score falls
// (not straight back), the step halved when no move does (down to
// polishStep); a lead's pole stays left of its zero. A local grid steps
// along the diagonals of its three points per parameter and misses such
// a valley: on a lead of a random airframe of our own (the reference's
// joint_valley_lead; a brute-force scan by discrete.Assess) the set
// passes at pole/zero 1.34 for lead gains K 1000–1050, at 1.353 for
// 1020–1160 and at 1.40 for 1080–1120, beside a closest design at
// (1.27, 931), and neither the local grids nor the descents' lines of
// x by 7 % steps reached it.
func (sr *searcher) valley(cl cand, step []float64, judge judgeFunc) error {
	done := func() bool { return sr.haveOK || sr.fineLeft <= 0 }
	score := func(u []float64, x0 float64) (cand, error) {
		pt := sr.screen(u)
		best := cand{pt: pt, x: x0, viol: math.Inf(1)}
		if !(pt.xf > 0) {
			return best, nil
		}
		sr.basis(pt.th)
		scan := func(lo, hi, f float64) error {
			for x := lo; x <= hi && !done(); x *= f {
				c, err := judge(pt, x, false, nil)
				if err != nil {
					return err
				}
				if c.viol < best.viol {
					best = c
				}
			}
			return nil
		}
		if err := scan(x0/valleySpan, math.Min(x0*valleySpan, pt.xf), valleyStep); err != nil || math.IsInf(best.viol, 1) {
			return best, err
		}
		x := best.x
		return best, scan(x/valleyStep, math.Min(x*valleyStep, pt.xf), valleyFine)
	}
	cur, err := score(cl.pt.u, cl.x)
	if err != nil || math.IsInf(cur.viol, 1) {
		return err
	}
	d := make([]float64, len(step))
	for i := range d {
		d[i] = step[i] / 4
	}
	// The move just made, not undone by the next (the shape it left
	// scored higher): coordinate back, sign back.
	back, backSg := -1, 0.0
	for !done() {
		moved := false
		for i := range d {
			for _, sg := range []float64{1, -1} {
				if moved || done() || (i == back && sg == backSg) {
					continue
				}
				u := slices.Clone(cur.pt.u)
				u[i] += float64(sg * d[i])
				if sr.belowFloor(u) {
					continue
				}
				c, err := score(u, cur.x)
				if err != nil {
					return err
				}
				if c.viol < cur.viol {
					cur, moved = c, true
					back, backSg = i, -sg
				}
			}
		}
		if moved {
			continue
		}
		back = -1
		if halve(d, polishStep) {
			return nil
		}
	}
	return nil
}

// valleySpan, valleyStep and valleyFine set valley's scan of a shape's
// line of x: ±30 % by 2 % (27 judgments), then the 2 % around the least
// by 0.4 % (10 more).
const (
	valleySpan = 1.3
	valleyStep = 1.02
	valleyFine = 1.004
)

// rescueSpan and rescueStep are the span (a factor either side) and the
// step of rescue's scan of a near miss's line of x: 180 judgments.
const (
	rescueSpan = 1.25
	rescueStep = 1.0025
)

// climb judges shape pt at x0 and, when it passes, climbs its line of x by
// factors of 1.08 up to the frequency checks' largest x, then narrows the
// step past the last passing x by three bisections. It returns the largest
// passing design found (a failing one when x0 fails).
func (sr *searcher) climb(pt *point, x0 float64, judge judgeFunc) (cand, error) {
	best, err := judge(pt, x0, false, nil)
	if err != nil || !best.ok {
		return best, err
	}
	x := x0
	fail := math.NaN()
	for x < pt.xf {
		next := math.Min(x*1.08, pt.xf)
		c, err := judge(pt, next, false, nil)
		if err != nil {
			return best, err
		}
		if !c.ok {
			fail = next
			break
		}
		best, x = c, next
	}
	for i := 0; i < 3 && !math.IsNaN(fail); i++ {
		m := math.Sqrt(x * fail)
		c, err := judge(pt, m, false, nil)
		if err != nil {
			return best, err
		}
		if c.ok {
			best, x = c, m
		} else {
			fail = m
		}
	}
	return best, nil
}

// polish climbs from the best design over local grids in the shape and
// the gain together, as a dense reference search would: the passing set
// of the time checks is jagged (a settling time jumps where a ripple
// leaves the band), and a better design can sit beside the best one at a
// gain its line search stepped over. Each local grid has three points per
// parameter (the centre and a step either side, in log units); it is laid
// again around each better design found, and at half the step when none,
// down to polishStep (localGrids). Only points whose gain beats the best
// are judged.
func (sr *searcher) polish(best cand, step []float64, judge judgeFunc) (cand, error) {
	beats := func(c, cur cand) bool { return c.ok && c.gain > cur.gain*(1+1e-6) }
	skip := func(pt *point, x float64, cur cand) bool { return sr.fam.gain(pt.th, x) <= cur.gain*(1+1e-6) }
	return sr.localGrids(best, step, judge, beats, skip, nil, 60)
}

// localGrids walks from c over local grids in the shape and the gain
// together: three points per parameter (the centre and a step either
// side, in log units; a quarter of the pattern search's step in the
// shape, 0.02 decades in the gain), each point that better finds better
// than the current one becoming the current one, the grid laid again
// around the current one after a move and at half the step when none,
// down to polishStep, for at most grids grids. skip (nil: none) leaves a
// point unjudged; done (nil: never) ends the walk. It returns the current
// design at the end.
func (sr *searcher) localGrids(c cand, step []float64, judge judgeFunc, better func(c, cur cand) bool,
	skip func(pt *point, x float64, cur cand) bool, done func() bool, grids int) (cand, error) {
	n := len(c.pt.u)
	h := make([]float64, n+1)
	for d := 0; d < n; d++ {
		h[d] = step[d] / 4
	}
	h[n] = 0.02 // the gain, in decades (4.7 %)
	for g := 0; g < grids && (done == nil || !done()); g++ {
		moved := false
		for _, dir := range cube(n + 1) {
			if done != nil && done() {
				return c, nil
			}
			u := slices.Clone(c.pt.u)
			for d := 0; d < n; d++ {
				u[d] += float64(dir[d] * h[d])
			}
			if sr.belowFloor(u) {
				continue
			}
			x := c.x * lti.Pow(10, dir[n]*h[n])
			pt := sr.screen(u)
			if skip != nil && skip(pt, x, c) {
				continue
			}
			if !(pt.xf > 0) || x > pt.xf {
				// Riding changes n alone, which the gain x of a pid
				// does not depend on: skip has judged the ridden point.
				if !sr.riding {
					continue
				}
				if pt = sr.ride(u, x); pt == nil {
					continue
				}
			}
			sr.basis(pt.th)
			cd, err := judge(pt, x, false, nil)
			if err != nil {
				return c, err
			}
			if better(cd, c) {
				c, moved = cd, true
			}
		}
		if !moved && halve(h, polishStep) {
			break
		}
	}
	return c, nil
}

// ride returns the shape of a pid whose frequency checks admit gain x,
// found from u by lowering the high-frequency gain n (the shape's first
// parameter) until the noise gain at x meets the noise bound, or nil
// where that does not apply or does not succeed. Under a noise bound the
// best designs of a pid hug it: their n is as large as the bound allows
// at their derivative share and Ki, and that largest n changes with the
// derivative share. The local grids' steps move n and the share together
// in a fixed ratio and cannot follow that edge where it runs almost
// along the share's axis: on lift_filtered_pid among the reference
// airframes of package discrete the best designs lie within 0.01 decade
// of n of the bound over a decade of the share. Each step rescales n by
// the ratio of the noise gain to the bound (the noise gain above the
// crossover is about proportional to n) and 1e-4 decade more per step,
// so that the rounding of the noise gain cannot leave it a hair above
// the bound step after step, at most rideSteps times, each rescaled
// shape screened; n is rounded to 1e-6 decade, the resolution of the
// search's shapes (key), so that the shape does not depend on the last
// bits of the noise gain.
func (sr *searcher) ride(u []float64, x float64) *point {
	if !sr.rides() || !(x > 0) {
		return nil
	}
	v := slices.Clone(u)
	pt := sr.screen(v)
	if pt.xf >= x {
		return nil // admitted as it is: not a case for riding
	}
	for i := 0; i < rideSteps; i++ {
		sr.basis(pt.th)
		nz := sr.noiseAt(x)
		if !(nz > sr.noiseB) || math.IsInf(nz, 0) {
			return nil // held back by another check
		}
		step := lti.Log10(nz/sr.noiseB) + float64(1e-4*float64(i+1))
		v[0] = math.Round(float64((v[0]-step)*1e6)) / 1e6
		if v[0] < u[0]-rideSpan {
			return nil
		}
		if pt = sr.screen(v); pt.xf >= x {
			return pt
		}
	}
	return nil
}

// rideSteps bounds ride's rescalings of n, and rideSpan (decades) how far
// below the shape it started from it may go.
const (
	rideSteps = 4
	rideSpan  = 0.1
)

// rideFrom polishes c with the local grids riding the noise bound, again
// while that raises the gain (at most maxRounds times).
func (sr *searcher) rideFrom(c cand, step []float64, judge judgeFunc) (cand, error) {
	sr.riding = true
	defer func() { sr.riding = false }()
	return whileRaising(c, func(c cand) (cand, error) { return sr.polish(c, step, judge) })
}

// rides reports whether ride applies: a pid under a noise bound.
func (sr *searcher) rides() bool {
	return sr.p.Ctrl.Form == airframe.FormPID && !math.IsInf(sr.noiseB, 1)
}

// rideUp is the last stage of a pid's search under a noise bound: the
// polish again from the design c, its local grids riding the bound (see
// ride), while that raises the gain (at most maxRounds times).
// The tie-break toward less noise is applied to what that finds (quiet
// is the tie-break's design from c): quiet stays where it is within
// NearBest of the best gain found and has less noise. Only this stage
// rides, so that a design the bound does not hold back keeps the path,
// and the design, it had without riding: on 102 random airframes of our
// own with pid axes, riding in every polish changed 35 designs, 16 of
// them down by up to 1.7 % (one with 5 % more noise), where riding last
// raised 9 of them (by up to 5 %) and lowered none (and on 15 more, 2,
// by 19.6 % and 10 %).
func (sr *searcher) rideUp(c, quiet cand, step []float64, judge judgeFunc) (cand, error) {
	if !sr.rides() || c.pt == nil {
		return quiet, nil
	}
	r, err := sr.rideFrom(c, step, judge)
	if err != nil || !(r.gain > c.gain*(1+1e-6)) {
		return quiet, err
	}
	q, err := sr.quietestAbove(r, step, judge)
	if err != nil {
		return quiet, err
	}
	top := math.Max(r.gain, q.gain)
	if quiet.gain >= (1-NearBest)*top && quiet.noise < q.noise {
		return quiet, nil
	}
	return q, nil
}

// undominated returns best, or a passing design the search judged under
// the noise bound in force that dominates it: at least its gain with less
// noise, or more gain with no more noise (noise gains within a millionth
// are a tie: designs against the bound differ in their last digits). The
// tie-break's search (quietest) walks from the best design over its
// neighbours at 98 % of its gain, and can end on a design that one the
// search passed on its way, on another shape, beats in both: on a
// campaign of 216 random airframes of our own with pi or pid axes this
// changed 18 designs and none for the worse: up to 2.0 % more gain at the
// same noise gain, or up to 1.5 % less noise at no less gain. Forms with
// an integral only: the bound of the others moves with their gain.
func (sr *searcher) undominated(best cand) cand {
	if !sr.p.Ctrl.Form.HasIntegral() {
		return best
	}
	q := best
	for _, c := range sr.passing {
		if !c.ok || c.pt == nil || !(c.noise <= sr.noiseB) {
			continue
		}
		// Ties are taken against best too, so that a chain of them
		// cannot drift above its noise.
		d := cmpNoise(c.noise, q.noise)
		if d < 0 && c.gain >= q.gain || d == 0 && cmpNoise(c.noise, best.noise) <= 0 && c.gain > q.gain {
			q = c
		}
	}
	return q
}

// scanAbove looks for a passing window above the best design that the
// steps of the line searches skipped: on the best design's shape and its
// two neighbours in each shape parameter (an eighth of the pattern
// search's step), each line of x from the top the frequency checks allow
// down to the best's gain (scanLine); the first that passes on a line is
// the largest there. The passing set of the time
// checks can be a window a few per cent wide in the gain above a failing
// band (a settling time jumps where a ripple leaves the band), which the
// line searches' steps of 7 and 8 % step over (on arm_narrow_pi among the
// reference airframes of package discrete a window 2 % wide lies 13 %
// above the best design they found). It returns the best design found,
// best itself when none beats it.
func (sr *searcher) scanAbove(best cand, step []float64, judge judgeFunc) (cand, error) {
	n := len(best.pt.u)
	shapes := [][]float64{slices.Clone(best.pt.u)}
	for d := 0; d < n; d++ {
		for _, sg := range []float64{-1, 1} {
			u := slices.Clone(best.pt.u)
			u[d] += float64(sg * step[d] / 8)
			if sr.belowFloor(u) {
				continue
			}
			shapes = append(shapes, u)
		}
	}
	out := best
	for _, u := range shapes {
		pt := sr.screen(u)
		if !(pt.xf > 0) {
			continue
		}
		c, ok, err := sr.scanLine(pt, out.gain, judge)
		if err != nil {
			return out, err
		}
		if ok {
			out = c
		}
	}
	return out, nil
}

// scanLine judges pt's line of x from the top the frequency checks allow
// down, by the steps of lineStep, while the load-rejection gain stays
// above floor, and returns the first design that passes (the largest on
// the line that the steps see), if any.
func (sr *searcher) scanLine(pt *point, floor float64, judge judgeFunc) (cand, bool, error) {
	x := pt.xf
	for i := 0; i < maxScan+maxCoarseScan && sr.fam.gain(pt.th, x) > floor*(1+1e-6); i, x = i+1, x*lineStep(i) {
		c, err := judge(pt, x, false, nil)
		if err != nil || c.ok {
			return c, err == nil, err
		}
	}
	return cand{}, false, nil
}

// scanKnee scans the knee's line of x (its shape, without a noise bound)
// down to the knee (scanLine). The first design that passes is the
// largest on the line; it replaces the knee when its Ki/N² is larger.
// The passing set in Ki on one shape can be several windows: on
// joint_compliant (a lightly damped joint among the reference airframes
// of package discrete) the knee's shape passes at Ki 0.154 and again at
// 0.322–0.332 (setpoint weight 0.95), past a failing band the line
// searches' steps of 7 % and 8 % cannot see across, and a neighbouring
// shape at 0.33–0.34 with less noise.
func (sr *searcher) scanKnee(knee cand, judge judgeFunc) (cand, error) {
	pt := sr.screen(knee.pt.u)
	if !(pt.xf > knee.x) {
		return knee, nil
	}
	c, ok, err := sr.scanLine(pt, knee.gain, judge)
	if score := sr.perNoisePower().score; err != nil || !ok || !(score(c) > score(knee)) {
		return knee, err
	}
	return c, nil
}

// lineStep is the factor from the i-th gain of a line's scan (scanLine)
// to the next: scanStep for the first maxScan gains, then
// coarseScanStep.
func lineStep(i int) float64 {
	if i < maxScan {
		return scanStep
	}
	return coarseScanStep
}

// coarseScanStep and maxCoarseScan are the step of a line's scan below
// its first maxScan gains (1.5 %: it finds every window at least 1.6 %
// wide) and the most gains it judges there (with the first maxScan, to
// 96 % below the top).
const (
	coarseScanStep = 0.985
	maxCoarseScan  = 192
)

// scanStep and maxScan are the first step of scanLine (0.5 %, a quarter
// of the narrowest window seen) and the most gains judged by it (to 27 %
// below the top).
const (
	scanStep = 0.995
	maxScan  = 64
)

// polishStep is the last step of polish, in decades (0.23 %): a third of
// nearStep, since the passing set's ridges are narrower than the pattern
// search's last step.
const polishStep = 0.001

// halve halves every step of h and reports whether all are now below
// least.
func halve(h []float64, least float64) bool {
	small := true
	for d := range h {
		h[d] /= 2
		if h[d] >= least {
			small = false
		}
	}
	return small
}

// cube returns the points of {−1, 0, 1}ⁿ but the origin.
func cube(n int) [][]float64 {
	pts := [][]float64{{}}
	for d := 0; d < n; d++ {
		var next [][]float64
		for _, p := range pts {
			for _, v := range []float64{-1, 0, 1} {
				next = append(next, append(slices.Clone(p), v))
			}
		}
		pts = next
	}
	var out [][]float64
	for _, p := range pts {
		zero := true
		for _, v := range p {
			zero = zero && v == 0
		}
		if !zero {
			out = append(out, p)
		}
	}
	return out
}

// quietest applies the tie-break: among designs whose gain is at least
// (1 − NearBest) of the best, the least noise gain, by a pattern search
// over the shape with the gain held at that floor.
func (sr *searcher) quietest(best cand, step []float64, judge judgeFunc) (cand, error) {
	floor := (1 - NearBest) * best.gain
	at := func(pt *point) (float64, bool) {
		// The x that gives the floor's gain on this shape.
		g1 := sr.fam.gain(pt.th, 1)
		if !(g1 > 0) {
			return 0, false
		}
		// (At least the line's start: above it the gain is larger, and
		// still within the band where the start is below the best's.)
		x := math.Max(floor/g1, pt.xlo)
		return x, x <= pt.xf
	}
	// The best shape itself at the floor's gain.
	if x, ok := at(best.pt); ok {
		c, err := judge(best.pt, x, false, nil)
		if err != nil {
			return best, err
		}
		if c.ok && c.noise <= best.noise {
			best = c
		}
	}
	err := sr.pattern(best.pt.u, step, func(u []float64) (bool, error) {
		pt := sr.screen(u)
		x, ok := at(pt)
		if !ok {
			return false, nil
		}
		// The noise gain barely depends on x; a shape that is not
		// quieter at its largest x is not worth a judgment.
		sr.basis(pt.th)
		if n := sr.noiseAt(x); n >= best.noise*(1-1e-6) {
			return false, nil
		}
		c, err := judge(pt, x, false, nil)
		if err != nil || !c.ok || c.noise >= best.noise*(1-1e-6) {
			return false, err
		}
		best = c
		return true, nil
	})
	return best, err
}

// pattern runs a compass search from u: it tries each parameter a step up
// and down (the steps start at half the grid's spacing), moves on the
// first improvement (try reports one), and halves the steps when none
// improves, down to nearStep decades.
func (sr *searcher) pattern(u []float64, grid []float64, try func(u []float64) (bool, error)) error {
	if len(u) == 0 {
		return nil
	}
	cur := slices.Clone(u)
	h := make([]float64, len(u))
	for d := range h {
		h[d] = grid[d] / 2
	}
	for iter := 0; iter < 400; iter++ {
		moved := false
		for _, dir := range directions(len(cur)) {
			if moved {
				break
			}
			v := slices.Clone(cur)
			for d := range v {
				v[d] += float64(dir[d] * h[d])
			}
			if sr.belowFloor(v) {
				continue
			}
			ok, err := try(v)
			if err != nil {
				return err
			}
			if ok {
				cur, moved = v, true
			}
		}
		if moved {
			continue
		}
		if halve(h, nearStep) {
			return nil
		}
	}
	return nil
}

// directions are the moves of the pattern search: each parameter up and
// down, and in two dimensions the four diagonals, which follow a ridge
// that runs across the axes.
func directions(n int) [][]float64 {
	var ds [][]float64
	for d := 0; d < n; d++ {
		for _, sgn := range []float64{1, -1} {
			v := make([]float64, n)
			v[d] = sgn
			ds = append(ds, v)
		}
	}
	if n == 2 {
		ds = append(ds, []float64{1, 1}, []float64{1, -1}, []float64{-1, 1}, []float64{-1, -1})
	}
	return ds
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// belowFloor reports whether shape u lies below the family's floor: a
// lead's pole must stay left of its zero.
func (sr *searcher) belowFloor(u []float64) bool {
	for d, f := range sr.fam.floor {
		if u[d] < f {
			return true
		}
	}
	return false
}
