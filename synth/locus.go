package synth

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Locus is the root locus of the loop with the designed controller form:
// the roots of
//
//	Den(s) + k·Num(s) = 0,   Num/Den = C(s)·G(s)·H(s),
//
// as the overall gain k scales the designed controller from 0 to KMax. The
// controller's zeros and poles stay where the design put them; k = 1 is the
// design. The transport delay enters through its (PadeOrder, PadeOrder)
// Padé approximant, so the locus has a branch for every pole of the
// rational loop, the approximant's included.
//
// Every branch is a continuous path: the roots are tracked by continuation
// in k (see RootLocus), so Branches[b][i] and Branches[b][i+1] are the same
// root at neighbouring gains, never a re-ordering of the root list.
type Locus struct {
	// Num and Den are the rational loop; Den + k·Num is the closed-loop
	// characteristic polynomial at gain k (k = 1: the design's).
	Num, Den lti.Poly
	// Poles and Zeros are the open-loop poles (k = 0 ends of the branches)
	// and the finite open-loop zeros, in lti.SortRoots order.
	Poles, Zeros []complex128
	// PadeOrder is the order of the delay's approximant; 0 when the loop
	// has no delay.
	PadeOrder int
	// KMax is the largest gain tracked.
	KMax float64
	// Gains are the tracked gains, ascending from 0 to KMax; 1 is one of
	// them, at index Design.
	Gains  []float64
	Design int
	// Branches[b][i] is the root of branch b at Gains[i]; branch b starts
	// at Poles[b].
	Branches [][]complex128
}

// Locus step control. A step from k to k+Δk is accepted when every root
// moves by at most locusStepRel of max(|r|, the locus's scale floor) and
// by less than half its distance to the nearest other root (so that the
// minimum-distance assignment cannot confuse two roots); otherwise Δk is
// halved. After a step that used under a quarter of the allowance, Δk
// doubles. Below locusMinStep·KMax a step is accepted regardless: that only
// happens where two roots collide (a breakaway or break-in point), where
// they move like √(k − k_b) and any step overshoots the collision.
const (
	locusStepRel = 0.02
	locusMinStep = 1e-7
	// locusMaxSteps bounds the work on any input; the step control needs a
	// few hundred steps on the loops of a rate controller.
	locusMaxSteps = 20000
)

// RootLocus returns the root locus of the loop C·G·H of problem p with the
// controller c scaled by k ∈ [0, kmax] (kmax ≥ 1; 10 shows the design well
// inside the picture). The delay is replaced by its PadeOrder approximant.
func RootLocus(p airframe.Axis, c Controller, kmax float64) (*Locus, error) {
	cl, err := newClosedLoop(p, c)
	if err != nil {
		return nil, err
	}
	// The same products, in the same order, as the characteristic
	// polynomial of newClosedLoop, so Den + 1·Num is that polynomial.
	den := lti.PolyMul(lti.PolyMul(cl.c.Den, cl.g.Den), cl.h.Den).Trim()
	num := lti.PolyMul(lti.PolyMul(cl.c.Num, cl.g.Num), cl.h.Num).Trim()
	l, err := LoopLocus(num, den, kmax)
	if err != nil {
		return nil, fmt.Errorf("root locus: %w", err)
	}
	if p.Plant.Delay > 0 {
		l.PadeOrder = PadeOrder
	}
	return l, nil
}

// LoopLocus returns the root locus of Den + k·Num = 0 for k ∈ [0, kmax],
// tracked by continuation with an adaptive gain step:
//
//  1. the branches start at the roots of Den (k = 0);
//  2. at each trial gain the roots are computed afresh (companion-matrix
//     eigenvalues of the polynomial in the scaled variable s/ω0, ω0 the
//     geometric mean of the non-zero open-loop pole magnitudes, which keeps
//     the coefficients of order one);
//  3. the new roots are assigned to the branches by the minimum-distance
//     assignment (the Hungarian method on |r_new − r_old|), so a branch
//     never jumps to another root because the root list was re-ordered;
//  4. the step is accepted or halved by the rule of locusStepRel.
//
// The gains 1 (the design) and kmax are hit exactly. Num must have a lower
// degree than Den (a strictly proper loop) or the same degree with a
// leading coefficient that cannot cancel Den's for k ≥ 0; otherwise a root
// would pass through infinity and an error is returned.
func LoopLocus(num, den lti.Poly, kmax float64) (*Locus, error) {
	num, den = num.Trim(), den.Trim()
	if !num.IsFinite() || !den.IsFinite() || !(kmax >= 1) || math.IsInf(kmax, 0) {
		return nil, errors.New("loop or gain range not finite (kmax must be ≥ 1)")
	}
	n, m := len(den)-1, len(num)-1
	if n < 1 {
		return nil, errors.New("the loop has no poles")
	}
	if m < 0 {
		return nil, errors.New("the loop gain is zero")
	}
	if m > n {
		return nil, fmt.Errorf("improper loop: %d zeros, %d poles", m, n)
	}
	if m == n && num[m]/den[n] < 0 && -den[n]/num[m] <= kmax {
		return nil, fmt.Errorf("the leading coefficient vanishes at k = %.4g: a root passes through infinity", -den[n]/num[m])
	}
	poles, err := den.Roots()
	if err != nil {
		return nil, fmt.Errorf("open-loop poles: %w", err)
	}
	zeros, err := num.Roots()
	if err != nil {
		return nil, fmt.Errorf("open-loop zeros: %w", err)
	}
	l := &Locus{Num: num, Den: den, Poles: poles, Zeros: zeros, KMax: kmax}

	// Scale s = ω0·ŝ: coefficient i is multiplied by ω0^i.
	w0 := scaleOf(poles, zeros)
	sd, sn := scalePoly(den, w0), scalePoly(num, w0)
	q := make(lti.Poly, n+1)
	dq := make(lti.Poly, n)
	z := make([]complex128, n)
	// roots returns the roots at gain k: by Aberth's iteration started from
	// guess (the extrapolated branches, in s), or, when that does not
	// converge or no guess is given, as companion-matrix eigenvalues.
	roots := func(k float64, guess []complex128) ([]complex128, error) {
		for i := range q {
			q[i] = sd[i]
			if i <= m {
				q[i] += float64(k * sn[i])
			}
		}
		for i := 1; i <= n; i++ {
			dq[i-1] = float64(float64(i) * q[i])
		}
		if guess != nil {
			for i, g := range guess {
				z[i] = lti.Div(g, complex(w0, 0))
			}
			if aberth(q, dq, z) {
				r := make([]complex128, n)
				for i := range z {
					r[i] = lti.Mul(z[i], complex(w0, 0))
				}
				return r, nil
			}
		}
		r, err := q.Roots()
		if err != nil {
			return nil, err
		}
		if len(r) != n {
			return nil, fmt.Errorf("%d roots at k = %.4g, want %d", len(r), k, n)
		}
		for i := range r {
			r[i] = lti.Mul(r[i], complex(w0, 0))
		}
		return r, nil
	}
	// The scale floor: roots near the origin move by at most a fraction of
	// it per step, so a branch from an integrator is resolved too.
	floor := 0.0
	for _, r := range append(append([]complex128(nil), poles...), zeros...) {
		if a := lti.Abs(r); a > 0 && (floor == 0 || a < floor) {
			floor = a
		}
	}
	// A very slow pole or zero would make the floor tiny and the steps
	// needlessly short; a hundredth of the loop's scale is fine enough.
	floor = math.Max(floor, 0.01*w0)

	cur := append([]complex128(nil), poles...)
	l.Branches = make([][]complex128, n)
	for b := range l.Branches {
		l.Branches[b] = []complex128{cur[b]}
	}
	l.Gains = []float64{0}
	l.Design = -1
	k, dk := 0.0, kmax*1e-6
	cost := make([]float64, n*n)
	prev, prevK := []complex128(nil), 0.0
	guess := make([]complex128, n)
	for steps := 0; k < kmax; steps++ {
		if steps >= locusMaxSteps {
			return nil, fmt.Errorf("root locus did not reach k = %g in %d steps", kmax, locusMaxSteps)
		}
		kn := math.Min(k+dk, kmax)
		if k < 1 && kn > 1 {
			kn = 1
		}
		var g []complex128
		if prev != nil {
			// Linear extrapolation along each branch.
			f := complex((kn-k)/(k-prevK), 0)
			for i := range cur {
				guess[i] = cur[i] + lti.Mul(cur[i]-prev[i], f)
			}
			g = guess
		}
		r, err := roots(kn, g)
		if err != nil {
			return nil, err
		}
		for i, a := range cur {
			for j, b := range r {
				cost[i*n+j] = dist(b, a)
			}
		}
		asg := assign(n, cost)
		worst := 0.0
		for i, a := range cur {
			d := dist(r[asg[i]], a)
			sep := math.Inf(1)
			for j, b := range cur {
				if j != i {
					sep = math.Min(sep, dist(b, a))
				}
			}
			worst = math.Max(worst, d/(locusStepRel*math.Max(dist(a, 0), floor)))
			worst = math.Max(worst, d/(0.5*sep))
		}
		if worst > 1 && kn-k > locusMinStep*kmax {
			dk = (kn - k) / 2
			continue
		}
		if prev == nil {
			prev = make([]complex128, n)
		}
		copy(prev, cur)
		prevK = k
		for i := range cur {
			cur[i] = r[asg[i]]
			l.Branches[i] = append(l.Branches[i], cur[i])
		}
		l.Gains = append(l.Gains, kn)
		if kn == 1 {
			l.Design = len(l.Gains) - 1
		}
		// The step grows from the one just taken, or from the nominal one
		// when it was shortened to land on k = 1 or kmax.
		dk = math.Max(math.Min(dk, kn-k), locusMinStep*kmax)
		if worst < 0.25 {
			dk *= 2
		}
		k = kn
	}
	return l, nil
}

// aberth refines all roots z of the polynomial q (derivative dq) at once by
// the Aberth–Ehrlich iteration
//
//	z_i ← z_i − w_i,  w_i = (q/q′)(z_i) / (1 − (q/q′)(z_i)·Σ_{j≠i} 1/(z_i − z_j)),
//
// which converges cubically to simple roots from close starting points and
// keeps the approximations apart (the sum repels them), so it suits the
// continuation, whose guesses are the extrapolated branches. It reports
// false, leaving z unusable, when the guesses are too close to each other
// or it has not converged to 1e-12 relative within aberthSweeps sweeps
// (near a multiple root, where convergence is only linear; from the
// extrapolated guesses it takes two or three elsewhere); the caller then
// falls back to the eigenvalues.
func aberth(q, dq lti.Poly, z []complex128) bool {
	const aberthSweeps = 8
	n := len(z)
	for i := range z {
		for j := i + 1; j < n; j++ {
			if dist(z[i], z[j]) <= 1e-6*math.Max(dist(z[i], 0), 1e-3) {
				return false
			}
		}
	}
	for sweep := 0; sweep < aberthSweeps; sweep++ {
		done := true
		for i, zi := range z {
			p, dp := q.Eval(zi), dq.Eval(zi)
			if p == 0 {
				continue
			}
			if dp == 0 {
				return false
			}
			ratio := lti.Div(p, dp)
			// Σ 1/(z_i − z_j), with the reciprocal written out: Go's
			// complex division guards Inf and NaN and is several times
			// slower, and the guesses are distinct here.
			var sr, si float64
			for j, zj := range z {
				if j != i {
					dr, di := real(zi)-real(zj), imag(zi)-imag(zj)
					d2 := float64(dr*dr) + float64(di*di)
					sr += dr / d2
					si -= di / d2
				}
			}
			sum := complex(sr, si)
			w := lti.Div(ratio, 1-lti.Mul(ratio, sum))
			if cmplx.IsNaN(w) || cmplx.IsInf(w) {
				return false
			}
			z[i] = zi - w
			if dist(w, 0) > 1e-12*math.Max(dist(z[i], 0), 1e-3) {
				done = false
			}
		}
		if done {
			return true
		}
	}
	return false
}

// dist is |a − b| without math.Hypot's overflow guard, which the root
// magnitudes of a rate loop (far below 1e150) do not need.
func dist(a, b complex128) float64 {
	dr, di := real(a)-real(b), imag(a)-imag(b)
	return math.Sqrt(float64(dr*dr) + float64(di*di))
}

// scaleOf returns the geometric mean of the non-zero root magnitudes (1
// when there are none).
func scaleOf(sets ...[]complex128) float64 {
	s, c := 0.0, 0
	for _, rs := range sets {
		for _, r := range rs {
			if a := lti.Abs(r); a > 0 {
				s += lti.Log(a)
				c++
			}
		}
	}
	if c == 0 {
		return 1
	}
	return lti.Exp(s / float64(c))
}

// scalePoly returns the coefficients of p(ω0·ŝ).
func scalePoly(p lti.Poly, w0 float64) lti.Poly {
	q := make(lti.Poly, len(p))
	f := 1.0
	for i, c := range p {
		q[i] = float64(c * f)
		f *= w0
	}
	return q
}

// assign solves the n×n assignment problem for cost[i*n+j] (row i to
// column j) by the Hungarian method with potentials (Kuhn–Munkres,
// O(n³)), returning the column of each row. Ties go to the lowest column,
// which keeps the result deterministic.
func assign(n int, cost []float64) []int {
	const inf = math.MaxFloat64
	u := make([]float64, n+1)
	v := make([]float64, n+1)
	p := make([]int, n+1) // p[j]: row matched to column j (1-based), 0 none
	way := make([]int, n+1)
	minv := make([]float64, n+1)
	used := make([]bool, n+1)
	for i := 1; i <= n; i++ {
		p[0] = i
		j0 := 0
		for j := range minv {
			minv[j] = inf
			used[j] = false
		}
		for {
			used[j0] = true
			i0, delta, j1 := p[j0], inf, 0
			for j := 1; j <= n; j++ {
				if used[j] {
					continue
				}
				c := cost[(i0-1)*n+j-1] - u[i0] - v[j]
				if c < minv[j] {
					minv[j], way[j] = c, j0
				}
				if minv[j] < delta {
					delta, j1 = minv[j], j
				}
			}
			if j1 == 0 {
				// Only with NaN costs: match the rest arbitrarily.
				for j := 1; j <= n; j++ {
					if !used[j] {
						j1 = j
						break
					}
				}
				delta = 0
			}
			for j := 0; j <= n; j++ {
				if used[j] {
					u[p[j]] += delta
					v[j] -= delta
				} else {
					minv[j] -= delta
				}
			}
			j0 = j1
			if p[j0] == 0 {
				break
			}
		}
		for j0 != 0 {
			j1 := way[j0]
			p[j0] = p[j1]
			j0 = j1
		}
	}
	out := make([]int, n)
	for j := 1; j <= n; j++ {
		if p[j] > 0 {
			out[p[j]-1] = j - 1
		}
	}
	return out
}

// Asymptotes returns the root-locus asymptotes of the n − m branches that
// go to infinity as k → ∞: their centroid (Σp − Σz)/(n − m) on the real
// axis and their angles. For a loop whose leading coefficients have the
// same sign (the usual negative-feedback locus) the angles are
// (2q + 1)·180°/(n − m); with opposite signs (2q)·180°/(n − m),
// q = 0 … n − m − 1, in degrees in (−180°, 180°]. ok is false when no
// branch goes to infinity.
func (l *Locus) Asymptotes() (centroid float64, anglesDeg []float64, ok bool) {
	nm := len(l.Poles) - len(l.Zeros)
	if nm <= 0 {
		return 0, nil, false
	}
	var s float64
	for _, p := range l.Poles {
		s += real(p)
	}
	for _, z := range l.Zeros {
		s -= real(z)
	}
	centroid = s / float64(nm)
	off := 1.0
	if l.Num[len(l.Num)-1]/l.Den[len(l.Den)-1] < 0 {
		off = 0
	}
	for q := 0; q < nm; q++ {
		anglesDeg = append(anglesDeg, wrapDeg((2*float64(q)+off)*180/float64(nm)))
	}
	return centroid, anglesDeg, true
}

// At returns the roots of every branch at Gains[i].
func (l *Locus) At(i int) []complex128 {
	out := make([]complex128, len(l.Branches))
	for b, br := range l.Branches {
		out[b] = br[i]
	}
	return out
}
