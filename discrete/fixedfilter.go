package discrete

import (
	"fmt"
	"math"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// FixedSection is one section of the feedback filter chain of the integer
// controller, in direct form I:
//
//	v = mul(B0, x) + mul(B1, X1) + mul(B2, X2) − mul(A1, Y1) − mul(A2, Y2)
//
// with x the section's input, X1, X2 its last two inputs and Y1, Y2 its
// last two outputs, all accumulator words; the sum is evaluated left to
// right (C's and Go's order for a chain of + and −). A first-order section
// (Second false) has no B2, A2, X2, Y2.
//
// Why direct form I: its states are the section's own input and output,
// whose bounds are the ℓ1 gains of the chain up to them, and the
// recursion sees only the output; the transposed form II of the float
// code keeps two inner states whose gains to the input are larger for a
// lightly damped section. Each product is rounded once, half up, into the
// output's format, as every product of the integer controller
// (MulRound, or MulWide where the product needs more than the
// accumulator), so the sum needs no wider word.
//
// Formats. The five coefficients share one format, N fractional bits in
// the data word (Q(w−1−N).N): the most bits with which the largest of
// them fits, Q1.14 (q15) or Q1.30 (q31) for a section with |A1| near 2,
// Q0.15 or Q0.31 when every coefficient is below 1. One format per
// section, rather than one per coefficient, is what lets the
// quantization keep the DC gain at exactly 1 (see quantizeSection): the
// section's steady state is then the input itself, so Reset starts it
// there exactly and a constant measurement passes unchanged. The input
// carries FIn and the output F fractional bits below the input LSB (FIn
// is the previous section's F, 0 for the first); F is the most (at most
// w) that keep every partial sum and the output within the accumulator,
// and F ≤ N + FIn, so that every product shifts right: B's shift is
// N + FIn − F and A's N. The chain's output goes to the controller
// rounded to the input LSB (rsh by the last section's F).
type FixedSection struct {
	B0, B1, B2, A1, A2 QCoeff
	Second             bool
	N                  int // fractional bits of the coefficients
	FIn, F             int // fractional bits below the input LSB of the input and the output
}

// Stable reports whether the quantized section's poles lie strictly
// inside the unit circle (the Jury conditions, as lti.Biquad.Stable); a
// section no format could hold (N < 0) is not.
func (q *FixedSection) Stable() bool { return q.N >= 0 && q.Biquad().Stable() }

// Biquad returns the quantized section's real coefficients, Raw·2^−N.
func (q *FixedSection) Biquad() lti.Biquad {
	v := func(c QCoeff) float64 { return math.Ldexp(float64(c.Raw), -q.N) }
	return lti.Biquad{B0: v(q.B0), B1: v(q.B1), B2: v(q.B2), A1: v(q.A1), A2: v(q.A2)}
}

// terms returns the section's products in the order of the sum: the
// coefficient, whether it weights the input (B) or the output (A), and
// its delay in samples.
func (q *FixedSection) terms() []sectionTerm {
	if q.Second {
		return []sectionTerm{{&q.B0, "B0", true, 0}, {&q.B1, "B1", true, 1}, {&q.B2, "B2", true, 2}, {&q.A1, "A1", false, 1}, {&q.A2, "A2", false, 2}}
	}
	return []sectionTerm{{&q.B0, "B0", true, 0}, {&q.B1, "B1", true, 1}, {&q.A1, "A1", false, 1}}
}

type sectionTerm struct {
	k     *QCoeff
	name  string
	input bool // B·x (true) or A·y
	delay int
}

// operand names the state a term multiplies.
func (t sectionTerm) operand() string {
	v := "x"
	if !t.input {
		v = "y"
	}
	if t.delay > 0 {
		v += fmt.Sprint(t.delay)
	}
	return v
}

// quantizeSection quantizes q for w-bit words: all five coefficients with
// the most fractional bits n ≤ w − 1 with which every one fits, rounded
// half up, then B1 moved by the integer R = 2^n + A1 + A2 − (B0 + B1 + B2)
// (raw values; |R| ≤ 2, the sum of five roundings) so that
// (B0 + B1 + B2)/(1 + A1 + A2) is exactly 1 in integers: every section of
// the chain has unit DC gain by design (a lowpass, a notch), and keeping
// it exact means the integer section passes a constant unchanged (no
// steady-state error from the filter) and has the exact steady state that
// Reset starts it in. B1 takes the correction because moving it keeps
// B0 = B2 where the design has it (a full notch keeps its zeros on the
// unit circle, only their angle moving by about 2^−n). The poles are
// those of the rounded A1, A2. A section no format holds (a coefficient
// of 2^(w−1) or more: none of the chain's kinds, whose coefficients stay
// below 4) comes back with N = −1, which Stable reports.
func quantizeSection(q lti.Biquad, w int) FixedSection {
	s := FixedSection{Second: q.B2 != 0 || q.A2 != 0}
	xs := []float64{q.B0, q.B1, q.B2, q.A1, q.A2}
	big := 0.0
	for _, x := range xs {
		big = math.Max(big, math.Abs(x))
	}
	n := w - 1
	if big > 0 && !math.IsInf(big, 0) {
		_, e := math.Frexp(big) // big ∈ [2^(e−1), 2^e)
		n = min(w-1, w-1-e)
	}
	hi := int64(1)<<(w-1) - 1
	for ; n >= 0; n-- {
		var raw [5]int64
		ok := true
		for i, x := range xs {
			r, sat := ToWord(x, n, w)
			raw[i], ok = r, ok && !sat
		}
		if !ok {
			continue
		}
		r := int64(1)<<n + raw[3] + raw[4] - (raw[0] + raw[1] + raw[2])
		raw[1] += r
		if raw[1] > hi || raw[1] < -hi-1 {
			continue
		}
		s.N = n
		for i, c := range []*QCoeff{&s.B0, &s.B1, &s.B2, &s.A1, &s.A2} {
			*c = QCoeff{Raw: raw[i], Frac: n}
		}
		return s
	}
	s.N = -1
	return s
}

// sectionGains are the ℓ1 norms of the paths into one section, which do
// not depend on the formats: for each partial sum of the section's sum (the
// sum of its first i + 2 terms; the last is the output), lin is the ℓ1
// norm from the chain's input (in input LSB per input LSB) and noise[j]
// the ℓ1 norm from the rounding injected at section j's output (j before
// this one: through the sections in between; j this one: through its
// own output states, the current step's roundings counted apart).
type sectionGains struct {
	lin   []float64
	noise [][]float64
}

// poly is a polynomial in z⁻¹: p[i] is the coefficient of z^−i.
type poly []float64

func (p poly) mul(q poly) poly {
	r := make(poly, len(p)+len(q)-1)
	for i, a := range p {
		for j, b := range q {
			r[i+j] += float64(a * b)
		}
	}
	return r
}

func (p poly) sub(q poly) poly {
	r := make(poly, max(len(p), len(q)))
	copy(r, p)
	for i, b := range q {
		r[i] -= b
	}
	return r
}

// chainGains computes the gains of every section of the quantized chain
// qs (see sectionGains). With B_k and A_k the numerator and denominator
// of section k, P_k the chain through section k, and for the partial sum
// of the first terms Bp (its B terms) and Ap (its A terms, without the
// leading 1):
//
//	partial sum = Bp·x_k − Ap·y_k,  x_k = P_(k−1)·u,  y_k = P_k·u,
//
// so the path from the chain's input u is (Bp·A_k − Ap·B_k)·Π_(l<k) B_l /
// Π_(l≤k) A_l, and from the rounding e_j of an earlier section (which
// enters its output through 1/A_j) the same with the product over
// j < l < k and the denominators from j on; the section's own rounding
// reaches it through −Ap/A_k. For the output (all terms) the path from u
// is P_k itself. The standard worst-case (ℓ1) scaling of Jackson and of
// Oppenheim & Schafer, Discrete-Time Signal Processing (from memory):
// |v| ≤ ‖h_u→v‖₁·max|u| + Σ ‖h_e→v‖₁·max|e|.
func chainGains(qs []lti.Biquad) []sectionGains {
	num := func(q lti.Biquad) poly {
		if q.B2 == 0 && q.A2 == 0 {
			return poly{q.B0, q.B1}
		}
		return poly{q.B0, q.B1, q.B2}
	}
	den := func(q lti.Biquad) poly {
		if q.B2 == 0 && q.A2 == 0 {
			return poly{1, q.A1}
		}
		return poly{1, q.A1, q.A2}
	}
	gs := make([]sectionGains, len(qs))
	for k, q := range qs {
		bk, ak := num(q), den(q)
		nt := len(bk) + len(ak) - 1 // terms of the sum
		for i := 1; i < nt; i++ {
			// The first i+1 terms: the B terms, then the A terms.
			nb := min(i+1, len(bk))
			bp := append(poly(nil), bk[:nb]...)
			ap := poly{0}
			if i+1 > len(bk) {
				ap = append(poly{0}, ak[1:i+1-len(bk)+1]...)
			}
			core := bp.mul(ak).sub(ap.mul(bk))
			lin := core
			for l := 0; l < k; l++ {
				lin = lin.mul(num(qs[l]))
			}
			noise := make([]float64, k+1)
			for j := 0; j < k; j++ {
				p := core
				for l := j + 1; l < k; l++ {
					p = p.mul(num(qs[l]))
				}
				noise[j] = pathL1(p, qs[j:k+1])
			}
			noise[k] = pathL1(poly{0}.sub(ap), qs[k:k+1])
			gs[k].lin = append(gs[k].lin, pathL1(lin, qs[:k+1]))
			gs[k].noise = append(gs[k].noise, noise)
		}
	}
	return gs
}

// l1Margin is the relative allowance on a computed ℓ1 norm for its
// float64 evaluation: the impulse response runs through the sections one
// at a time (no expanded polynomial), each step rounding relative 2^−53,
// and the rounding a section's recursion accumulates is its ℓ1 gain times
// that per sample; over at most 2^20 samples and gains of 10^4 that stays
// near 10^−6 in the worst case, and is orders smaller in practice (the
// test against SciPy agrees to 10^−9).
const l1Margin = 1e-6

// pathL1 returns an upper bound of Σ|h[n]| for num(z⁻¹) in series with
// 1/A(z⁻¹) of each section of qs: the impulse response summed until the
// rest is below 10^−12 of the sum (or for 2^20 samples), plus a bound of
// the rest (restBound), times 1 + l1Margin. +Inf when a section is not
// stable.
func pathL1(num poly, qs []lti.Biquad) float64 {
	gain := make([]float64, len(qs)) // ‖1/A‖₁ bound of each stage
	for i, q := range qs {
		if !q.Stable() {
			return math.Inf(1)
		}
		gain[i] = stageGain(q)
	}
	st := make([][2]float64, len(qs)) // y[n], y[n−1] of each stage
	sum := 0.0
	const maxN = 1 << 20
	for n := 0; n < maxN; n++ {
		x := 0.0
		if n < len(num) {
			x = num[n]
		}
		for i, q := range qs {
			y := x - float64(q.A1*st[i][0]) - float64(q.A2*st[i][1])
			st[i] = [2]float64{y, st[i][0]}
			x = y
		}
		sum += math.Abs(x)
		if n < len(num)-1 {
			continue
		}
		if len(qs) == 0 {
			return sum
		}
		if n%64 == 0 || n == maxN-1 {
			rest := restBound(qs, st, gain)
			if rest <= 1e-12*sum || n == maxN-1 {
				return (sum + rest) * (1 + l1Margin)
			}
		}
	}
	return math.Inf(1)
}

// Every product of the bounds is converted explicitly: the formats come
// from them, and a fused multiply-add (arm64) must not move a bound across
// a word's capacity (see the Style section of DEVELOPERS.md).

// restBound bounds Σ_(k≥1)|h[n+k]| of stages qs in series once their
// input has ended, from their states st (y[n], y[n−1] of each): each
// stage's own response from its state, through the stages after it. A
// stage 1 + A1·z⁻¹ + A2·z⁻² continues from its state as
// y[n+1+k] = g[k]·y[n+1] − A2·g[k−1]·y[n], g the impulse response of
// 1/A, so its rest is at most ‖g‖₁·(|y[n+1]| + |A2|·|y[n]|) with
// y[n+1] = −A1·y[n] − A2·y[n−1]; each stage after it multiplies by at
// most its ‖1/A‖₁ (the ℓ1 norm of a convolution is at most the product).
func restBound(qs []lti.Biquad, st [][2]float64, gain []float64) float64 {
	rest := 0.0
	for i, q := range qs {
		next := math.Abs(float64(q.A1*st[i][0]) + float64(q.A2*st[i][1]))
		r := gain[i] * (next + float64(math.Abs(q.A2)*math.Abs(st[i][0])))
		for l := i + 1; l < len(qs); l++ {
			r *= gain[l]
		}
		rest += r
	}
	return rest * (1 + l1Margin)
}

// stageGain is an upper bound of ‖1/A‖₁ for a stable section's
// denominator, in closed form: 1/A = 1/(1 − p1·z⁻¹) · 1/(1 − p2·z⁻¹), so
// ‖1/A‖₁ ≤ 1/((1 − |p1|)(1 − |p2|)); for a complex pair r·e^(±jθ) the
// impulse response is r^k·sin((k + 1)θ)/sin θ, which also gives
// 1/((1 − r)·sin θ); a first-order section 1/(1 − |A1|) (Oppenheim &
// Schafer, second-order sections, from memory).
func stageGain(q lti.Biquad) float64 {
	if q.A2 == 0 {
		return 1 / (1 - math.Abs(q.A1))
	}
	d := float64(q.A1*q.A1) - float64(4*q.A2)
	if d >= 0 {
		r := math.Sqrt(d)
		// x/2 is a product too: converted, so that 1 − p is not fused.
		p1, p2 := float64(math.Abs(-q.A1+r)/2), float64(math.Abs(-q.A1-r)/2)
		return 1 / float64((1-p1)*(1-p2)) * (1 + l1Margin)
	}
	r := math.Sqrt(q.A2)
	sin := math.Sqrt(-d) / (2 * r) // sin θ, from r·sin θ = √(4·A2 − A1²)/2
	return math.Min(1/((1-r)*(1-r)), 1/((1-r)*sin)) * (1 + l1Margin)
}

// chainPartialName returns the range-table name of the partial sum of
// section k's terms ts up to term i in the chain named prefix ("filter"
// for the feedback chain, "derivative filter" for the D path): "filter 1
// sum B0·x + B1·x1", and for the last, the output, "filter 1 output y
// (states y1, y2)".
func chainPartialName(prefix string, k int, ts []sectionTerm, i int) string {
	if i == len(ts)-1 {
		if len(ts) == 3 {
			return fmt.Sprintf("%s %d output y (state y1)", prefix, k+1)
		}
		return fmt.Sprintf("%s %d output y (states y1, y2)", prefix, k+1)
	}
	s := fmt.Sprintf("%s %d sum ", prefix, k+1)
	for j := 0; j <= i; j++ {
		t := ts[j]
		switch {
		case j == 0:
		case t.input:
			s += " + "
		default:
			s += " − "
		}
		s += t.name + "·" + t.operand()
	}
	return s
}

// chainRun describes a run of direct form I sections for sectionBounds:
// the sections, the gains of the chain they are the end of (gains[off+k]
// belongs to secs[k]; the first off entries are stages before them, such
// as the derivative's own filter, whose rounding pre[j] enters at their
// output in a format of preF[j] fractional bits), the bound in of the
// chain's input (the unit of the gains' ℓ1 norms), and the bound x0 of
// the first section's input operand in its own integer units, with the
// format that governs it (nil: none).
type chainRun struct {
	prefix string
	secs   []FixedSection
	gains  []sectionGains
	off    int
	pre    []float64
	preF   []int
	in     float64
	x0     float64
	// ownGov makes each section's F govern its B products too: their
	// shift N + FIn − F grows as F falls, which brings a split product
	// (MulWide) of a wide operand within the accumulator. The D path
	// needs it, its input Ud spanning the accumulator; the feedback
	// chain's first input is a data word, whose products always fit.
	ownGov bool
}

// sectionBounds adds the rows of every product, partial sum and output of
// the sections of c to the range table at the current formats, and returns
// the rounding injected at each section's output per step (its own units)
// and the bound of each output (its own units).
func (p *fixedPlan) sectionBounds(c chainRun, add func(entry)) (es, yb []float64) {
	w, capA := p.w, p.capA
	accFmt := func(fr int) string { return qFormat(2*w, w-1+fr) }
	es = make([]float64, len(c.secs))
	yb = make([]float64, len(c.secs))
	unbounded := false // a section before is not stable
	for k := range c.secs {
		q := &c.secs[k]
		unbounded = unbounded || !q.Stable()
		ts := q.terms()
		// The shifts (product sets them too) decide which products round.
		rounded := make([]bool, len(ts))
		for i, t := range ts {
			sh := q.N
			if t.input {
				sh = q.N + q.FIn - q.F
			}
			rounded[i] = sh > 0
			if rounded[i] {
				es[k] += 0.5
			}
		}
		g := c.gains[c.off+k]
		bounds := make([]float64, len(ts)-1)
		direct := 0.0
		if rounded[0] {
			direct = 0.5
		}
		for i := range bounds {
			if rounded[i+1] {
				direct += 0.5
			}
			b := float64(g.lin[i]*c.in) * math.Ldexp(1, q.F)
			for j := 0; j < c.off; j++ {
				b += float64(float64(g.noise[i][j]*c.pre[j]) * math.Ldexp(1, q.F-c.preF[j]))
			}
			for j := 0; j < k; j++ {
				b += float64(float64(g.noise[i][c.off+j]*es[j]) * math.Ldexp(1, q.F-c.secs[j].F))
			}
			b += float64(g.noise[i][c.off+k]*es[k]) + direct
			if unbounded {
				b = math.Inf(1)
			}
			bounds[i] = b
		}
		yb[k] = bounds[len(bounds)-1]
		xb := c.x0
		var xgov *int
		if k > 0 {
			xb, xgov = yb[k-1], &c.secs[k-1].F
		}
		if c.ownGov {
			xgov = &q.F
		}
		for _, t := range ts {
			name := fmt.Sprintf("%s %d %s·%s", c.prefix, k+1, t.name, t.operand())
			var e entry
			if t.input {
				e, _ = p.product(name, t.k, xb, q.FIn, q.F, xgov)
			} else {
				e, _ = p.product(name, t.k, yb[k], q.F, q.F, &q.F)
			}
			add(e)
		}
		for i, b := range bounds {
			r := entry{Range: Range{Name: chainPartialName(c.prefix, k, ts, i+1), Format: accFmt(q.F), Bound: b, Capacity: capA}, gov: &q.F}
			if i == len(bounds)-1 {
				r.Note = "ℓ1 norm of the chain up to here times the input full scale, plus the roundings through their paths"
				if c.off > 0 {
					r.Note = "ℓ1 norm of the derivative and its filters up to here times max|v|, plus the roundings through their paths"
				}
				if !q.Stable() {
					r.Note = "not stable with its quantized coefficients: no bound"
				}
			}
			add(r)
		}
	}
	return es, yb
}

// filterBounds adds the rows of the filter chain to the range table at
// the current formats and returns the bound of the chain's output at the
// input LSB (what the controller gets as its measurement) and of its
// rounding noise there before the final rounding, both in input LSB.
// Without a chain it returns m and 0.
func (p *fixedPlan) filterBounds(add func(entry)) (ymax, noise float64) {
	f := &p.f
	if len(f.Sections) == 0 {
		return p.m, 0
	}
	es, yb := p.sectionBounds(chainRun{prefix: "filter", secs: f.Sections, gains: p.gains, in: p.m, x0: p.m}, add)
	last := len(f.Sections) - 1
	for j := range f.Sections {
		g := p.gains[last].noise[len(p.gains[last].noise)-1]
		v := float64(g[j] * es[j])
		if j == last {
			v += es[j] // the output's own roundings of the current step
		}
		noise += float64(v * math.Ldexp(1, -f.Sections[j].F))
	}
	ymax = float64(yb[last]*math.Ldexp(1, -f.Sections[last].F)) + half(f.Sections[last].F)
	r := entry{Range: Range{Name: "filter chain output y (the controller's measurement)", Format: qFormat(2*p.w, p.w-1), Bound: ymax, Capacity: p.capA}}
	r.Note = "the last section's output rounded to the input LSB"
	add(r)
	return ymax, noise
}

// derivativeStage is the derivative's own first-order filter as the
// first stage of the D path's chain, from its quantized coefficients:
// Ud/v = bd·(1 − z⁻¹)/(1 − ad·z⁻¹), with bd = Bd·2^−Frac in output LSB per
// input LSB (the format FD does not enter: it scales Ud's integer units,
// which the rows apply).
func (p *fixedPlan) derivativeStage() lti.Biquad {
	f := &p.f
	bd := math.Ldexp(float64(f.Bd.Raw), -f.Bd.Frac)
	ad := math.Ldexp(float64(f.Ad.Raw), -f.Ad.Frac)
	return lti.Biquad{B0: bd, B1: -bd, A1: -ad}
}

// dfilterBounds adds the rows of the derivative sections to the range
// table at the current formats and returns the bound of the last one's
// output (its own units, F below the output LSB), the bound of the D
// path's output at rest (zero input after any history, once the linear
// response has decayed) and the bound of its rounding error (against the
// same path in exact arithmetic with the quantized coefficients), both in
// output LSB. vmax bounds the derivative's input v and ud the state Ud
// (FD units).
//
// The path from v is the derivative's own stage followed by the
// sections: the ℓ1 norm of that product bounds every node for any v
// within ±vmax, the reset's history included (after Reset the first Δv is
// v − Vp with Vp = −measured, a value v had: the node at step n is then
// Σ c_k·v[k] over k ≥ −1, whose Σ|c_k| = Σ_(j≤n)|g[j] − g[j−1]| + |g[n]| is
// at most the ℓ1 norm of g·(1 − z⁻¹), g the path from Δv, because
// |g[n]| = |Σ_(j>n)(g[j] − g[j−1])|).
func (p *fixedPlan) dfilterBounds(add func(entry), vmax, ud float64) (yb, rest, noise float64) {
	f := &p.f
	eud := half(f.Ad.Shift) + half(f.Bd.Shift) // Ud's two rounded products
	es, ybs := p.sectionBounds(chainRun{prefix: "derivative filter", secs: f.DSections, gains: p.dgains, off: 1,
		pre: []float64{eud}, preF: []int{f.FD}, in: vmax, x0: ud, ownGov: true}, add)
	last := len(f.DSections) - 1
	g := p.dgains[last+1].noise[len(p.dgains[last+1].noise)-1]
	// At rest Bd·Δv = 0 is exact: Ud rounds only Ad·Ud.
	rest = float64(float64(g[0]*half(f.Ad.Shift)) * math.Ldexp(1, -f.FD))
	noise = float64(float64(g[0]*eud) * math.Ldexp(1, -f.FD))
	for j := range f.DSections {
		v := float64(g[j+1] * es[j])
		if j == last {
			v += es[j] // the output's own roundings of the current step
		}
		v = float64(v * math.Ldexp(1, -f.DSections[j].F))
		rest += v
		noise += v
	}
	return ybs[last], rest, noise
}

// sectionTable returns the coefficient rows of the filter sections,
// F<k>_B0 … F<k>_A2 as in the float table, then those of the derivative
// sections, D<k>_B0 …: designed, quantized (after the DC correction of
// B1), in the section's format.
func (p *fixedPlan) sectionTable() []Coefficient {
	var rows []Coefficient
	add := func(tag string, qs []FixedSection, ds []lti.Biquad) {
		for k := range qs {
			q := &qs[k]
			d := ds[k]
			for _, c := range []struct {
				name string
				v    float64
				k    *QCoeff
			}{{"B0", d.B0, &q.B0}, {"B1", d.B1, &q.B1}, {"B2", d.B2, &q.B2}, {"A1", d.A1, &q.A1}, {"A2", d.A2, &q.A2}} {
				if !q.Second && (c.name == "B2" || c.name == "A2") {
					continue // a first-order section has no B2, A2
				}
				qv := math.Ldexp(float64(c.k.Raw), -q.N)
				rows = append(rows, Coefficient{Name: fmt.Sprintf("%s%d_%s", tag, k+1, c.name), Value: c.v, Quantized: qv, RelError: relErr(qv, c.v),
					Format: qFormat(p.w, q.N), Scaled: c.v, Raw: c.k.Raw, FracBits: q.N, Bits: p.w})
			}
		}
	}
	add("F", p.f.Sections, p.d.Plant.Sections)
	add("D", p.f.DSections, p.d.Coeffs.DSections)
	return rows
}

// sectionOverflowMsg says which quantity of which section of a chain may
// wrap around, and the ways out: head names the chain's sections
// ("filter", "derivative filter"), fs and qs are the chain's filters and
// its sections as the code holds them.
func (p *fixedPlan) sectionOverflowMsg(r Range, head string, fs []airframe.Filter, qs []FixedSection, wayOut string) string {
	var k int
	name := r.Name
	if _, err := fmt.Sscanf(r.Name, head+" %d", &k); err == nil && k >= 1 && k <= len(fs) {
		what := " (" + fs[k-1].Describe() + ")"
		if k <= len(qs) && !qs[k-1].Stable() {
			return fmt.Sprintf("overflow: %s %d%s is not stable with its %s coefficients (poles on or outside the unit circle), so %s has no bound; way out: %s",
				head, k, what, p.d.Numeric.Type, r.Name, wayOut)
		}
		lead := fmt.Sprintf("%s %d", head, k)
		name = lead + what + name[len(lead):]
	}
	return fmt.Sprintf("overflow: %s can reach %s but its %s word holds %s (%s); way out: %s",
		name, fmtNum(r.Bound), bitsName(r.Capacity), fmtNum(r.Capacity), r.Format, wayOut)
}

func (p *fixedPlan) dfilterWayOut() string {
	s := fmt.Sprintf("a wider notch or a higher cutoff (poles further from the unit circle), or a smaller numeric.input_full_scale or a larger numeric.output_full_scale (the derivative's gain acts in raw units times in_fs/out_fs = %s)", fmtNum(p.fin/p.fout))
	if p.w < 32 {
		s = "numeric.type = \"q31\" (32-bit data, 64-bit accumulators), or " + s
	}
	return s
}

func (p *fixedPlan) filterWayOut() string {
	s := "a wider notch or a higher cutoff (poles further from the unit circle)"
	if p.w < 32 {
		s = "numeric.type = \"q31\" (32-bit data, 64-bit accumulators), or " + s
	}
	return s
}

// poleRadius returns the largest pole radius of section q: √A2 for a
// complex pair, the larger root's magnitude for real poles, |A1| for a
// first-order section. The accuracy run's zero-input tail lasts until
// the slowest pole of the controller has decayed.
func poleRadius(q lti.Biquad) float64 {
	if q.A2 == 0 {
		return math.Abs(q.A1)
	}
	d := float64(q.A1*q.A1) - float64(4*q.A2)
	if d < 0 {
		return math.Sqrt(q.A2)
	}
	r := math.Sqrt(d)
	return math.Max(math.Abs(-q.A1+r), math.Abs(-q.A1-r)) / 2
}
