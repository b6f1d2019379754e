package lti

import (
	"math"
	"math/cmplx"
)

// Margins of a loop transfer L(jω) (negative feedback, 1+L = 0 at the edge
// of stability).
type Margins struct {
	GainDB         float64 // gain margin, dB: −20log10|L| at the phase crossover with the smallest |margin|; +Inf if no phase crossover
	PhaseCrossover float64 // rad/s of that crossover; NaN if none
	PhaseDeg       float64 // phase margin, degrees: 180 + ∠L wrapped into (−180,180] at the gain crossover with the smallest |margin|; +Inf if |L| never crosses 1
	Crossover      float64 // gain crossover of that margin, rad/s; NaN if none
	DelayMargin    float64 // PhaseDeg (in rad)/Crossover, s; +Inf if no gain crossover (negative when PhaseDeg < 0)

	GainCrossovers  []float64 // every gain crossover (|L| = 1) found, ascending, rad/s
	PhaseCrossovers []float64 // every phase crossover (∠L = −180° + k·360°) found, ascending, rad/s
}

// marginPoint is one frequency sample: ln ω, L, unwrapped phase (rad).
type marginPoint struct {
	lw float64
	L  complex128
	ph float64
	ok bool // L finite and non-zero
}

// UnknownMargins is Margins with every figure NaN: margins that were not
// or could not be computed.
func UnknownMargins() Margins {
	nan := math.NaN()
	return Margins{GainDB: nan, PhaseCrossover: nan, PhaseDeg: nan, Crossover: nan, DelayMargin: nan}
}

func finiteNZ(z complex128) bool {
	return z != 0 && !cmplx.IsNaN(z) && !cmplx.IsInf(z)
}

// LoopMargins computes gain, phase and delay margins of the loop frequency
// function L (any function of ω: a continuous loop with an exact e^{−jωτ}
// factor, or a discrete loop evaluated at z = e^{jωT}).
//
// Method: L is evaluated on n log-spaced frequencies on [wmin, wmax] (n < 2
// is raised to 2). The phase is unwrapped continuously from the lowest
// frequency: every grid interval is split at its (geometric) midpoint, and
// wherever either half changes the phase by more than 60°, or the phase
// slope (per ln ω) measured on the previous accepted piece predicts more
// than 60° over it, the interval is split again (recursively, down to 2^-40
// of the interval), so fast phase roll-off such as a transport delay does
// not alias the unwrapping even on a coarse grid. Refinement stops after
// 64·n+100000 extra evaluations. No finite sampling is fool-proof (a phase
// turning by an exact multiple of 2π over both halves of an interval would
// still be missed), so choose n to resolve L reasonably, e.g. 50–100 points
// per decade. The initial branch is chosen from the low-frequency slope: if
// |L| falls like ω^−m the first phase is put on the branch nearest −90°·m (a
// type-m loop starts at −90°·m); this choice changes neither margin, since
// both are branch-independent.
//
// Every sign change of ln|L| (gain crossover) and every crossing of the
// unwrapped phase through −180° + k·360° for any integer k (phase crossover)
// is bracketed and refined in log ω by the Illinois variant of false
// position (crossing) to 1e-11 relative in ω or to the rounding of L.
//
//   - Gain margin at a phase crossover ω_p: −20·log10|L(jω_p)| dB. Of several,
//     the one with the smallest absolute value is reported (ties: the lowest
//     frequency). Thus a conditionally stable loop whose phase crosses −180°
//     upward at low frequency, where |L| > 1, reports the negative
//     (gain-reduction) margin if that is the closer one.
//   - Phase margin at a gain crossover ω_c: 180° + ∠L(jω_c) wrapped into
//     (−180°, 180°]. Of several, the one with the smallest |PM| is reported
//     (ties: lowest frequency), and DelayMargin = PM[rad]/ω_c for it.
//
// All crossings are also returned in GainCrossovers/PhaseCrossovers. The
// margins say how far the loop is from instability only if the closed loop
// is stable; check the closed-loop poles separately. Invalid ranges (wmin
// <= 0, wmax <= wmin, non-finite) return NaN for every field. Frequencies
// where L is 0, NaN or Inf are skipped.
func LoopMargins(L func(w float64) complex128, wmin, wmax float64, n int) Margins {
	return LoopMarginsFalling(L, wmin, wmax, n, math.Inf(1))
}

// LoopMarginsFalling is LoopMargins for a loop whose |L(jω)| does not
// increase above wf (a rational loop well above its poles and zeros, with
// or without a transport delay; see synth's margin span for the bound).
// Above wf the sweep ends at the first grid frequency where |L| < 1 and
// −20·log10|L| exceeds the smallest |gain margin| found so far: no gain
// crossover lies beyond (|L| stays below 1), and every phase crossover
// beyond has a larger gain margin, so none of them could be reported. The
// margins are those of LoopMargins; the crossover lists end there. A
// delay's ever faster phase makes the top of a sweep its dearest part.
func LoopMarginsFalling(L func(w float64) complex128, wmin, wmax float64, n int, wf float64) Margins {
	nan := math.NaN()
	if L == nil || !(wmin > 0) || !(wmax > wmin) || math.IsInf(wmax, 0) {
		return UnknownMargins()
	}
	if n < 2 {
		n = 2
	}
	eval := func(lw float64) complex128 { return L(exp(lw)) }
	l0, l1 := Log(wmin), Log(wmax)
	// Grid points are evaluated when the sweep reaches them.
	grid := make([]marginPoint, n)
	done := 0
	at := func(i int) marginPoint {
		for ; done <= i; done++ {
			lw := l0 + (l1-l0)*float64(done)/float64(n-1)
			if done == n-1 {
				lw = l1
			}
			z := eval(lw)
			grid[done] = marginPoint{lw: lw, L: z, ok: finiteNZ(z)}
		}
		return grid[i]
	}

	// Initial branch from the low-frequency slope.
	first := -1
	for i := range grid {
		if at(i).ok {
			first = i
			break
		}
	}
	m := Margins{GainDB: math.Inf(1), PhaseCrossover: nan, PhaseDeg: math.Inf(1), Crossover: nan, DelayMargin: math.Inf(1)}
	if first < 0 {
		return m
	}
	ph0 := Phase(grid[first].L)
	for j := first + 1; j < n; j++ {
		if at(j).ok {
			slope := (Log(Abs(grid[j].L)) - Log(Abs(grid[first].L))) / (grid[j].lw - grid[first].lw)
			typ := math.Round(-slope)
			if math.Abs(typ) <= 8 {
				target := float64(-typ * math.Pi / 2)
				ph0 += float64(2 * math.Pi * math.Round((target-ph0)/(2*math.Pi)))
			}
			break
		}
	}

	// The refined, unwrapped samples are produced in ascending frequency
	// and each consecutive pair is examined for crossings as it appears,
	// so no list of them is kept.
	wrapDeg := func(x float64) float64 { return x - float64(360*math.Ceil((x-180)/360)) }
	bestGM, bestPM := math.Inf(1), math.Inf(1)
	var tail marginPoint // the last sample produced
	pair := func(a, b marginPoint) {
		if !a.ok || !b.ok {
			return
		}
		// Gain crossover.
		ga, gb := Log(Abs(a.L)), Log(Abs(b.L))
		if (ga >= 0) != (gb >= 0) {
			lw := crossing(a.lw, b.lw, func(x float64) float64 { return Log(Abs(eval(x))) })
			w := exp(lw)
			z := eval(lw)
			ph := a.ph + Phase(Mul(z, cmplx.Conj(a.L)))
			pm := wrapDeg(180 + ph*180/math.Pi)
			m.GainCrossovers = append(m.GainCrossovers, w)
			if math.Abs(pm) < math.Abs(bestPM) {
				bestPM = pm
				m.PhaseDeg, m.Crossover = pm, w
				m.DelayMargin = pm * math.Pi / 180 / w
			}
		}
		// Phase crossover through −π + 2πk.
		qa := math.Floor((a.ph + math.Pi) / (2 * math.Pi))
		qb := math.Floor((b.ph + math.Pi) / (2 * math.Pi))
		if qa != qb {
			lvl := -math.Pi + float64(2*math.Pi*math.Max(qa, qb))
			aL, aph := a.L, a.ph
			lw := crossing(a.lw, b.lw, func(x float64) float64 {
				return aph + Phase(Mul(eval(x), cmplx.Conj(aL))) - lvl
			})
			w := exp(lw)
			gm := -20 * Log10(Abs(eval(lw)))
			m.PhaseCrossovers = append(m.PhaseCrossovers, w)
			if math.Abs(gm) < math.Abs(bestGM) {
				bestGM = gm
				m.GainDB, m.PhaseCrossover = gm, w
			}
		}
	}
	emit := func(ps ...marginPoint) {
		for _, p := range ps {
			pair(tail, p)
			tail = p
		}
	}
	grid[first].ph = ph0
	tail = grid[first]
	const maxStep = math.Pi / 3
	// Refinement budget: beyond it intervals are accepted unrefined (the
	// scan is then as good as the grid allows) so a pathological L cannot
	// make the scan run away.
	budget := 64*n + 100000
	var refine func(a, b marginPoint, depth int)
	slope := 0.0 // dφ/d(ln ω) of the last accepted sub-interval
	refine = func(a, b marginPoint, depth int) {
		// a is already unwrapped and produced; produce b (unwrapped) after
		// the midpoint and any further points needed. The midpoint is always
		// evaluated so that a phase change of ≈2πk between a and b (which
		// the end points alone cannot reveal) is caught by the halves, and
		// the interval is also split when the phase slope of the previous
		// sub-interval predicts more than maxStep over it (a transport delay
		// turns the phase ever faster in log ω).
		if !b.ok {
			emit(b)
			return
		}
		if budget <= 0 {
			b.ph = a.ph + Phase(Mul(b.L, cmplx.Conj(a.L)))
			emit(b)
			return
		}
		mid := 0.5 * (a.lw + b.lw)
		z := eval(mid)
		mp := marginPoint{lw: mid, L: z, ok: finiteNZ(z)}
		if !mp.ok {
			b.ph = a.ph + Phase(Mul(b.L, cmplx.Conj(a.L)))
			emit(mp, b)
			return
		}
		d1 := Phase(Mul(z, cmplx.Conj(a.L)))
		d2 := Phase(Mul(b.L, cmplx.Conj(z)))
		mp.ph = a.ph + d1
		budget--
		if depth < 40 && budget > 0 && (math.Abs(d1) > maxStep || math.Abs(d2) > maxStep || math.Abs(slope)*(b.lw-a.lw) > maxStep) {
			refine(a, mp, depth+1)
			refine(tail, b, depth+1)
			return
		}
		b.ph = mp.ph + d2
		if b.lw > a.lw {
			slope = (d1 + d2) / (b.lw - a.lw)
		}
		emit(mp, b)
	}
	last := tail
	lwf := Log(wf)
	for j := first + 1; j < n; j++ {
		if last.ok && last.lw >= lwf && !math.IsInf(bestGM, 1) {
			if a := Abs(last.L); a < 1 && -20*Log10(a) > math.Abs(bestGM) {
				break
			}
		}
		b := at(j)
		if !b.ok {
			emit(b)
			continue
		}
		refine(last, b, 0)
		last = tail
	}
	return m
}

// crossing returns the zero of f on a bracket [a, b] where f changes sign,
// by the Illinois variant of false position: the bracket is kept, and
// halving the stored value at an end that is kept twice in a row makes the
// convergence superlinear (order ≈ 1.44) where plain false position would
// stall. It falls back to a bisection step when an interpolated point is
// not strictly inside, and stops when the bracket is below 1e-11 or a step
// moves less than 1e-15 relative, after at most 100 steps.
func crossing(a, b float64, f func(float64) float64) float64 {
	fa, fb := f(a), f(b)
	if math.IsNaN(fa) || math.IsNaN(fb) || fa == fb {
		return 0.5 * (a + b)
	}
	side := 0
	x := a
	for i := 0; i < 100 && b-a > 1e-11; i++ {
		xn := b - fb*(b-a)/(fb-fa)
		if !(xn > a && xn < b) {
			xn = 0.5 * (a + b)
		}
		step := math.Abs(xn - x)
		x = xn
		fx := f(x)
		if math.IsNaN(fx) {
			break
		}
		if fx == 0 {
			return x
		}
		if (fx >= 0) == (fa >= 0) {
			a, fa = x, fx
			if side == -1 {
				fb /= 2
			}
			side = -1
		} else {
			b, fb = x, fx
			if side == 1 {
				fa /= 2
			}
			side = 1
		}
		if step < 1e-15*math.Max(1, math.Abs(x)) {
			break
		}
	}
	return x
}

// GainCrossovers returns the frequencies in [wmin, wmax] where the squared
// loop gain mag2(ω) = |L(jω)|² crosses 1, found as LoopMargins finds its
// gain crossovers: sign changes of ln|L| on the log grid of n points and
// its midpoints, each refined by the same root finder. The magnitude alone
// is needed, so a transport delay can be left out, and no phase is
// unwrapped: a fraction of the cost of LoopMargins where only the crossover
// is wanted. The grid compares mag2 with 1 (logarithms only in the
// refinement) and steps ω by a constant ratio. Invalid ranges give nil.
func GainCrossovers(mag2 func(w float64) float64, wmin, wmax float64, n int) []float64 {
	if mag2 == nil || !(wmin > 0) || !(wmax > wmin) || math.IsInf(wmax, 0) {
		return nil
	}
	n = max(n, 2)
	f := func(lw float64) float64 { return 0.5 * Log(mag2(exp(lw))) }
	m := 2*n - 1
	l0, l1 := Log(wmin), Log(wmax)
	ratio := exp((l1 - l0) / float64(m-1))
	var out []float64
	ok := func(v float64) bool { return v > 0 && !math.IsInf(v, 0) }
	w, prevW, prev := wmin, 0.0, math.NaN()
	for i := 0; i < m; i++ {
		if i == m-1 {
			w = wmax
		}
		v := mag2(w)
		if !ok(v) {
			prev = math.NaN()
		} else {
			if ok(prev) && (prev >= 1) != (v >= 1) {
				out = append(out, exp(crossing(Log(prevW), Log(w), f)))
			}
			prevW, prev = w, v
		}
		w *= ratio
	}
	return out
}
