package discrete

import (
	"math"
	"math/cmplx"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

//go:generate go run locusmith/discrete/internal/pairgen/gen

// linearCtrl is the unsaturated controller as a state-space system with two
// inputs, setpoint r and measurement y:
//
//	xc[k+1] = Ac xc + Br r + By y,  u = Cc xc + Dr r + Dy y.
//
// States (those the form uses, in this order): integrator s, derivative
// filter ud, previous derivative input vp; or the lead state x.
type linearCtrl struct {
	M      int
	Ac     []float64
	Br, By []float64
	Cc     []float64
	Dr, Dy float64
}

// linearize writes the equations of Coeffs (see its doc) as a linear
// system, for poles and margins; saturation and the integrator clamp are
// left out, as they do not act on a small step.
func linearize(k Coeffs) linearCtrl {
	if k.Form == airframe.FormLead {
		// ul = B0 e + x; x' = B1 e − A1 ul = (B1 − A1 B0) e − A1 x.
		buf := make([]float64, 4) // one allocation for the four vectors
		buf[0], buf[1], buf[2], buf[3] = -k.A1, k.B1-float64(k.A1*k.B0), -(k.B1 - float64(k.A1*k.B0)), 1
		return linearCtrl{M: 1, Ac: buf[0:1:1], Br: buf[1:2:2], By: buf[2:3:3], Cc: buf[3:4:4], Dr: k.B0, Dy: -k.B0}
	}
	if len(k.DSections) > 0 {
		return linearizeDerivative(k) // dfilter.go
	}
	hasI, hasD := k.Form.HasIntegral(), k.Form.HasDerivative()
	m := 0
	is, id, iv := -1, -1, -1
	if hasI {
		is = m
		m++
	}
	if hasD {
		id, iv = m, m+1
		m += 2
	}
	buf := make([]float64, m*m+3*m) // one allocation for the four
	c := linearCtrl{M: m, Ac: buf[: m*m : m*m], Br: buf[m*m : m*m+m : m*m+m], By: buf[m*m+m : m*m+2*m : m*m+2*m],
		Cc: buf[m*m+2*m : m*m+3*m : m*m+3*m]}
	c.Dr, c.Dy = k.KpB, -k.Kp
	if hasI {
		c.Ac[is*m+is] = 1
		c.Br[is], c.By[is] = k.G01, -k.G01
		c.Cc[is] = 1
		c.Dr += k.G0
		c.Dy -= k.G0
	}
	if hasD {
		ar, ay := 0.0, -1.0
		if k.DerivativeOnError {
			ar = 1
		}
		// ud' = Ad ud − Bd vp + Bd (ar r + ay y); vp' = ar r + ay y.
		c.Ac[id*m+id] = k.Ad
		c.Ac[id*m+iv] = -k.Bd
		c.Br[id], c.By[id] = k.Bd*ar, k.Bd*ay
		c.Br[iv], c.By[iv] = ar, ay
		c.Cc[id] = k.Ad
		c.Cc[iv] = -k.Bd
		c.Dr += float64(k.Bd * ar)
		c.Dy += float64(k.Bd * ay)
	}
	return c
}

// directSetpoint is linearize(k).Dr, the controller's direct gain from
// the setpoint, by the same operations; the only field of linearize(k)
// that depends on k.KpB.
func directSetpoint(k Coeffs) float64 {
	if k.Form == airframe.FormLead {
		return k.B0
	}
	if len(k.DSections) > 0 {
		return linearize(k).Dr
	}
	dr := k.KpB
	if k.Form.HasIntegral() {
		dr += k.G0
	}
	if k.Form.HasDerivative() {
		ar := 0.0
		if k.DerivativeOnError {
			ar = 1
		}
		dr += float64(k.Bd * ar)
	}
	return dr
}

// closedLoop is the linear sampled loop, state X = [plant; compute-delay
// registers; controller], input r, output the true rate. It serves the
// poles and the final value; responses come from simulate, which steps
// the same equations without the dense matrix.
type closedLoop struct {
	N  int
	A  []float64
	B  []float64
	Cy []float64
}

// newClosedLoop closes the loop of plant pl, controller c and compute delay
// d (the command computed at t_k is applied over [t_(k+d), t_(k+d+1))),
// with the plant's whole-sample delay added to d.
func newClosedLoop(pl Plant, c linearCtrl, d int) closedLoop {
	B := setpointInput(pl, c, d)
	d += pl.Delay
	np, m := pl.N, c.M
	n := np + d + m
	buf := make([]float64, n*n+2*n) // one allocation for A, Cy and urow
	L := closedLoop{N: n, A: buf[: n*n : n*n], Cy: buf[n*n : n*n+n : n*n+n]}
	ic := np + d // first controller state
	// u = Cc xc + Dr r + Dy·Cm·xp, as a row over X.
	urow := buf[n*n+n : n*n+2*n : n*n+2*n]
	for j := 0; j < np; j++ {
		urow[j] = c.Dy * pl.Cm[j]
	}
	for j := 0; j < m; j++ {
		urow[ic+j] = c.Cc[j]
	}
	// Plant: xp' = Ap xp + Bp ua.
	for i := 0; i < np; i++ {
		copy(L.A[i*n:i*n+np], pl.A[i*np:(i+1)*np])
		if d == 0 {
			for j := 0; j < n; j++ {
				L.A[i*n+j] += float64(pl.B[i] * urow[j])
			}
		} else {
			L.A[i*n+np+d-1] += pl.B[i]
		}
		L.Cy[i] = pl.Cy[i]
	}
	// Delay registers: q1' = u, qi' = q(i−1).
	if d > 0 {
		copy(L.A[np*n:np*n+n], urow)
		for i := 1; i < d; i++ {
			L.A[(np+i)*n+np+i-1] = 1
		}
	}
	// Controller: xc' = Ac xc + Br r + By Cm xp.
	for i := 0; i < m; i++ {
		r := ic + i
		for j := 0; j < m; j++ {
			L.A[r*n+ic+j] = c.Ac[i*m+j]
		}
		for j := 0; j < np; j++ {
			L.A[r*n+j] += float64(c.By[i] * pl.Cm[j])
		}
	}
	L.B = B
	return L
}

// setpointInput returns the input vector of the closed loop of
// newClosedLoop for the setpoint. The rest of the loop does not depend on
// the controller's direct setpoint gain c.Dr, so loops that differ only in
// the setpoint weight share A and differ here.
func setpointInput(pl Plant, c linearCtrl, d int) []float64 {
	d += pl.Delay
	np, m := pl.N, c.M
	B := make([]float64, np+d+m)
	if d == 0 {
		for i := 0; i < np; i++ {
			B[i] = pl.B[i] * c.Dr
		}
	} else {
		B[np] = c.Dr
	}
	copy(B[np+d:], c.Br[:m])
	return B
}

// poles returns the closed-loop poles in z.
func (L closedLoop) poles() ([]complex128, error) {
	return lti.Disc{N: L.N, A: L.A, B: L.B, C: L.Cy, T: 1}.Poles()
}

// simulate runs the linear loop (controller c, compute delay d, plant pl
// with its whole-sample delay) for a unit setpoint step, writing the true
// rate into y and, if u is not nil, the command. The delays are a ring
// buffer, so a long delay costs nothing per sample.
func simulate(pl Plant, c linearCtrl, d int, y, u []float64) {
	newStepper(pl, c, d).run(y, u)
}

// stepper is the state of a unit-step simulation of the linear loop that
// can be continued: run fills the next samples, so a search can stop a
// response as soon as it has seen enough.
type stepper struct {
	pl      Plant
	c       linearCtrl
	x, xn   []float64 // plant state, now and next
	xc, xcn []float64 // controller state
	ring    []float64 // commands of the last D samples
	k       int       // samples run so far
}

func newStepper(pl Plant, c linearCtrl, d int) *stepper {
	D := d + pl.Delay
	np, m := pl.N, c.M
	buf := make([]float64, 2*np+2*m+D+1)
	return &stepper{pl: pl, c: c, x: buf[:np], xn: buf[np : 2*np],
		xc: buf[2*np : 2*np+m], xcn: buf[2*np+m : 2*np+2*m], ring: buf[2*np+2*m:]}
}

// run writes the true rate of the next len(y) samples into y and, if u is
// not nil, the command.
func (s *stepper) run(y, u []float64) {
	pl, c := &s.pl, &s.c
	np, m := pl.N, c.M
	x, xn, xc, xcn, ring := s.x, s.xn, s.xc, s.xcn, s.ring
	pa, pb, cm, cy := pl.A[:np*np], pl.B[:np], pl.Cm[:np], pl.Cy[:np]
	ca, cb, cby, cc := c.Ac[:m*m], c.Br[:m], c.By[:m], c.Cc[:m]
	dr, dy := c.Dr, c.Dy
	// Slot w takes this sample's command; slot r (the next one) still
	// holds the command of D samples ago.
	w := s.k % len(ring)
	for t := range y {
		var ym, yt float64
		for j, v := range x[:np] {
			ym += float64(cm[j] * v)
			yt += float64(cy[j] * v)
		}
		y[t] = yt
		cmd := dr + float64(dy*ym)
		for j, v := range xc[:m] {
			cmd += float64(cc[j] * v)
		}
		if u != nil {
			u[t] = cmd
		}
		for i := range xcn[:m] {
			acc := cb[i] + float64(cby[i]*ym)
			for j, a := range ca[i*m : i*m+m] {
				acc += float64(a * xc[j])
			}
			xcn[i] = acc
		}
		xc, xcn = xcn, xc
		ring[w] = cmd
		r := w + 1
		if r == len(ring) {
			r = 0
		}
		ua := ring[r]
		w = r
		for i := range xn[:np] {
			acc := float64(pb[i] * ua)
			for j, a := range pa[i*np : i*np+np] {
				acc += float64(a * x[j])
			}
			xn[i] = acc
		}
		x, xn = xn, x
	}
	s.k += len(y)
	s.x, s.xn, s.xc, s.xcn = x, xn, xc, xcn
}

// pairStepper runs two unit-step simulations of loops that differ only
// in the controller's direct setpoint gain (Dr: the setpoint weight's
// share of Kp) in one pass, which halves the loop overhead that dominates
// these small state spaces; each lane computes exactly what stepper does.
// Plants of up to 8 states with controllers of up to 3 run in unrolled
// kernels with the state in scalars (pairkernels_gen.go, about twice as
// fast), larger ones in the loops of run.
type pairStepper struct {
	pl    Plant
	x, xn [2][]float64
	ctrl  pairCtrl
	k     int
	// chain is the feedback filter chain run section by section (see
	// runChain), nil without one; sec holds its states, lane by lane (the
	// last states of the plant's, which x then leaves at zero).
	chain []chainSection
	sec   [2][]float64
	// rows are the spans of nonzero entries of the plant matrix that the
	// loops multiply (pl.A, or pl.unf.A before a chain), when the loops
	// run it and the spans gain (see sparseRows); nil otherwise.
	rows *sparseRows
}

// sparseRows holds, for each row i of an n×n matrix, the span of
// columns lo[i] ≤ j < hi[i] outside which its entries are zero. The plant
// of a cascade realization (lti.ZPK.CascadeSS) is block lower triangular,
// and so is its matrix exponential: about half its entries lie right of
// the spans, and the dense loops multiply them for nothing.
type sparseRows struct {
	lo, hi []int
}

// sparseOf returns the spans of the n×n matrix a, or nil when they cover
// more than three quarters of it (the dense loops are then as fast).
func sparseOf(a []float64, n int) *sparseRows {
	r := &sparseRows{lo: make([]int, n), hi: make([]int, n)}
	cover := 0
	for i := range n {
		row := a[i*n : i*n+n]
		lo, hi := 0, n
		for lo < n && row[lo] == 0 {
			lo++
		}
		for hi > lo && row[hi-1] == 0 {
			hi--
		}
		r.lo[i], r.hi[i] = lo, hi
		cover += hi - lo
	}
	if 4*cover > 3*n*n {
		return nil
	}
	return r
}

// chainSection is one filter section in the state-space form of
// SectionSS, with states s[at:at+n]: out = d·v + s₀;
// s₀' = a₀₀·s₀ + a₀₁·s₁ + b₀·v; s₁' = a₁₀·s₀ + b₁·v (n = 2), or
// s₀' = a₀₀·s₀ + b₀·v (n = 1).
type chainSection struct {
	at, n                 int
	a00, a01, a10, b0, b1 float64
	d                     float64
}

// pairCtrl is the controller and the command delay line of both lanes.
type pairCtrl struct {
	c       linearCtrl
	dr      [2]float64
	xc, xcn [2][]float64
	ring    [2][]float64 // commands of the last D samples
	w       int          // ring slot of this sample's command
}

// newPairStepper starts the two loops of controllers c0 and c1, which
// differ only in Dr (c0's other coefficients serve both).
func newPairStepper(pl Plant, c0, c1 linearCtrl, d int) *pairStepper {
	D := d + pl.Delay
	np, m := pl.N, c0.M
	s := &pairStepper{pl: pl, ctrl: pairCtrl{c: c0, dr: [2]float64{c0.Dr, c1.Dr}}}
	w := 2*np + 2*m + D + 1
	all := make([]float64, 2*w) // one allocation for both lanes
	for l := range 2 {
		buf := all[l*w : l*w+w : l*w+w]
		s.x[l], s.xn[l] = buf[:np], buf[np:2*np]
		s.ctrl.xc[l], s.ctrl.xcn[l] = buf[2*np:2*np+m], buf[2*np+m:2*np+2*m]
		s.ctrl.ring[l] = buf[2*np+2*m:]
	}
	a, n := pl.A, pl.N
	if s.chain = chainOf(pl); s.chain != nil {
		ns := pl.N - pl.unf.N
		buf := make([]float64, 2*ns)
		s.sec = [2][]float64{buf[:ns:ns], buf[ns:]}
		a, n = pl.unf.A, pl.unf.N
	}
	// The unrolled kernels take the plants of up to 8 states (before a
	// chain, if any); the loops take the rest.
	if n > 8 {
		s.rows = sparseOf(a, n)
	}
	return s
}

// chainOf returns the filter sections of pl in the order the measured
// rate runs through them, with the index of each one's first state in
// the sections' own state (pairStepper.sec), or
// nil when pl has none (or its states do not follow the layout of
// withSection, which the dense loops of run then handle).
func chainOf(pl Plant) []chainSection {
	if len(pl.Sections) == 0 {
		return nil
	}
	n0 := pl.unf.N
	if len(pl.unf.C) != n0 || len(pl.unf.A) != n0*n0 || len(pl.unf.B) != n0 {
		return nil
	}
	at := 0
	cs := make([]chainSection, 0, len(pl.Sections))
	for _, q := range pl.Sections {
		a, b, c, d := SectionSS(q)
		sec := chainSection{at: at, n: len(c), a00: a[0], b0: b[0], d: d}
		if sec.n == 2 {
			sec.a01, sec.a10, sec.b1 = a[1], a[2], b[1]
		}
		cs = append(cs, sec)
		at += sec.n
	}
	if n0+at != pl.N {
		return nil
	}
	return cs
}

// step takes the measured rates of both lanes, updates the controllers and
// returns the commands that reach the plants now, those of D samples ago.
func (p *pairCtrl) step(ym0, ym1 float64) (ua0, ua1 float64) {
	c := &p.c
	m := c.M
	ca, cb, cby, cc := c.Ac[:m*m], c.Br[:m], c.By[:m], c.Cc[:m]
	xc0, xc1, xcn0, xcn1 := p.xc[0][:m], p.xc[1][:m], p.xcn[0][:m], p.xcn[1][:m]
	cmd0, cmd1 := p.dr[0]+float64(c.Dy*ym0), p.dr[1]+float64(c.Dy*ym1)
	for j, a := range cc {
		cmd0 += float64(a * xc0[j])
		cmd1 += float64(a * xc1[j])
	}
	for i := range m {
		acc0 := cb[i] + float64(cby[i]*ym0)
		acc1 := cb[i] + float64(cby[i]*ym1)
		for j, a := range ca[i*m : i*m+m] {
			acc0 += float64(a * xc0[j])
			acc1 += float64(a * xc1[j])
		}
		xcn0[i], xcn1[i] = acc0, acc1
	}
	p.xc, p.xcn = p.xcn, p.xc
	ring0, ring1 := p.ring[0], p.ring[1][:len(p.ring[0])]
	ring0[p.w], ring1[p.w] = cmd0, cmd1
	// The next slot still holds the command of D samples ago.
	p.w++
	if p.w == len(ring0) {
		p.w = 0
	}
	return ring0[p.w], ring1[p.w]
}

// run writes the true rate of the next len(y0) samples of the two loops
// into y0 and y1 (len(y1) = len(y0)).
func (s *pairStepper) run(y0, y1 []float64) {
	if s.chain != nil {
		s.runChain(y0, y1)
		return
	}
	if pairKernel(s, y0, y1) {
		return
	}
	pl := &s.pl
	np := pl.N
	pa, pb, cm, cy := pl.A[:np*np], pl.B[:np], pl.Cm[:np], pl.Cy[:np]
	x0, x1, xn0, xn1 := s.x[0][:np], s.x[1][:np], s.xn[0][:np], s.xn[1][:np]
	y1 = y1[:len(y0)]
	for t := range y0 {
		ym0, ym1 := pairDot(cm, x0, x1)
		y0[t], y1[t] = pairDot(cy, x0, x1)
		ua0, ua1 := s.ctrl.step(ym0, ym1)
		s.update(pa, pb, x0, x1, xn0, xn1, ua0, ua1)
		x0, xn0, x1, xn1 = xn0, x0, xn1, x1
	}
	s.k += len(y0)
	s.x, s.xn = [2][]float64{x0, x1}, [2][]float64{xn0, xn1}
}

// update is pairUpdate, over each row's span of the plant matrix a when
// the stepper has them (rows). Skipping a zero product changes no sum
// while the states are finite (x + 0 = x; at most the sign of a zero sum
// differs); a diverging response that reaches an infinite state can turn
// NaN in other rows than the dense loops', and fails either way.
func (s *pairStepper) update(a, b, x0, x1, xn0, xn1 []float64, ua0, ua1 float64) {
	r := s.rows
	if r == nil {
		pairUpdate(a, b, x0, x1, xn0, xn1, ua0, ua1)
		return
	}
	n := len(b)
	for i := range n {
		acc0, acc1 := float64(b[i]*ua0), float64(b[i]*ua1)
		lo, hi := r.lo[i], r.hi[i]
		row := a[i*n+lo : i*n+hi]
		s0, s1 := x0[lo:hi], x1[lo:hi]
		s0, s1 = s0[:len(row)], s1[:len(row)]
		for j, v := range row {
			acc0 += float64(v * s0[j])
			acc1 += float64(v * s1[j])
		}
		xn0[i], xn1[i] = acc0, acc1
	}
}

// runChain is run for a plant with a feedback filter chain: the plant
// before the chain as a dense state space, then the sections on the
// measured rate (chainPair), as the code runs the chain. The dense loops
// of run on the whole state would multiply the zeros above the chain's
// diagonal blocks and repeat the measured rate's row in every section's;
// here a sample costs the plant's square plus a few operations a
// section. The two agree to rounding (the same equations, associated
// otherwise). Plants of up to 8 states before the chain with controllers
// of up to 3 run in unrolled kernels (chain<p>x<m> of pairkernels_gen.go).
func (s *pairStepper) runChain(y0, y1 []float64) {
	if !chainKernel(s, y0, y1) {
		s.runChainLoops(y0, y1)
	}
}

// runChainLoops is runChain in loops, for any size; the kernels compute
// exactly what it does.
func (s *pairStepper) runChainLoops(y0, y1 []float64) {
	pl := &s.pl
	n0 := pl.unf.N
	pa, pb, cm, cy := pl.unf.A[:n0*n0], pl.unf.B[:n0], pl.unf.C[:n0], pl.Cy[:n0]
	x0, x1, xn0, xn1 := s.x[0][:n0], s.x[1][:n0], s.xn[0][:n0], s.xn[1][:n0]
	chain, sec0, sec1 := s.chain, s.sec[0], s.sec[1]
	y1 = y1[:len(y0)]
	for t := range y0 {
		ym0, ym1 := pairDot(cm, x0, x1)
		y0[t], y1[t] = pairDot(cy, x0, x1)
		ym0, ym1 = chainPair(chain, sec0, sec1, ym0, ym1)
		ua0, ua1 := s.ctrl.step(ym0, ym1)
		s.update(pa, pb, x0, x1, xn0, xn1, ua0, ua1)
		x0, xn0, x1, xn1 = xn0, x0, xn1, x1
	}
	s.k += len(y0)
	s.x, s.xn = [2][]float64{x0, x1}, [2][]float64{xn0, xn1}
}

// pairDot returns c·x0 and c·x1, summed from +0 in order.
func pairDot(c, x0, x1 []float64) (float64, float64) {
	var v0, v1 float64
	x0, x1 = x0[:len(c)], x1[:len(c)]
	for j, a := range c {
		v0 += float64(a * x0[j])
		v1 += float64(a * x1[j])
	}
	return v0, v1
}

// pairUpdate writes the next plant states of both lanes, xn = A·x + B·ua,
// each row summed from the input's term in order (len(b) states).
func pairUpdate(a, b, x0, x1, xn0, xn1 []float64, ua0, ua1 float64) {
	n := len(b)
	for i := range n {
		acc0, acc1 := float64(b[i]*ua0), float64(b[i]*ua1)
		for j, v := range a[i*n : i*n+n] {
			acc0 += float64(v * x0[j])
			acc1 += float64(v * x1[j])
		}
		xn0[i], xn1[i] = acc0, acc1
	}
}

// chainPair runs the measured rates ym0 and ym1 of both lanes through the
// filter sections, whose states are s0 and s1 (updated in place), and
// returns the filtered rates.
func chainPair(chain []chainSection, s0, s1 []float64, ym0, ym1 float64) (float64, float64) {
	for i := range chain {
		c := &chain[i]
		k := c.at
		s00, s10 := s0[k], s1[k]
		if c.n == 2 {
			s01, s11 := s0[k+1], s1[k+1]
			s0[k] = float64(c.b0*ym0) + float64(c.a00*s00) + float64(c.a01*s01)
			s1[k] = float64(c.b0*ym1) + float64(c.a00*s10) + float64(c.a01*s11)
			s0[k+1] = float64(c.b1*ym0) + float64(c.a10*s00)
			s1[k+1] = float64(c.b1*ym1) + float64(c.a10*s10)
		} else {
			s0[k] = float64(c.b0*ym0) + float64(c.a00*s00)
			s1[k] = float64(c.b0*ym1) + float64(c.a00*s10)
		}
		ym0 = float64(c.d*ym0) + s00
		ym1 = float64(c.d*ym1) + s10
	}
	return ym0, ym1
}

// dcGain returns the final value of the true rate after a unit setpoint
// step, (Cy (I − A)⁻¹ B), or NaN when I − A is singular.
func (L closedLoop) dcGain() float64 {
	dc, _ := L.dcGains(L.B)
	return dc
}

// finalValues returns the final values of the true rate after a unit
// setpoint step for the loops of c0 and c1 on plant pl (with any compute
// delay), where c1 differs from c0 in its setpoint input alone (NaN where the
// loop has a pole at z = 1). At z = 1 every delay is 1: in a steady state
// each delay register holds the command, so the final values are those of
// the loop without the delays, and their cost does not grow with the
// delay (the delayed loop's elimination grows with its cube).
func finalValues(pl Plant, c0, c1 linearCtrl) (float64, float64) {
	pl.Delay = 0
	return newClosedLoop(pl, c0, 0).dcGains(setpointInput(pl, c1, 0))
}

// dcGains returns the final values Cy (I − A)⁻¹ b of the true rate for the
// loop's own input B and for b1 (a loop that differs only in the setpoint
// input), by one real Gaussian elimination with both right-hand sides: the
// operations of the resolvent at z = 1 (lti.Disc.Eval), in real arithmetic
// and for two inputs at once. NaN where I − A is singular or not finite.
func (L closedLoop) dcGains(b1 []float64) (float64, float64) {
	n := L.N
	nan := math.NaN()
	const small = 16
	var buf [small * (small + 2)]float64
	var vbuf [2 * small]float64
	w := n + 2
	var m, v []float64
	if n <= small {
		m, v = buf[:n*w], vbuf[:2*n]
	} else {
		m, v = make([]float64, n*w), make([]float64, 2*n)
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			m[i*w+j] = -L.A[i*n+j]
		}
		m[i*w+i]++
		m[i*w+n], m[i*w+n+1] = L.B[i], b1[i]
	}
	for col := 0; col < n; col++ {
		p, best := col, -1.0
		for r := col; r < n; r++ {
			if a := math.Abs(m[r*w+col]); a > best {
				p, best = r, a
			}
		}
		if !(best > 0) || math.IsInf(best, 0) {
			return nan, nan
		}
		if p != col {
			for j := col; j < w; j++ {
				m[p*w+j], m[col*w+j] = m[col*w+j], m[p*w+j]
			}
		}
		inv := 1 / m[col*w+col]
		m[col*w+col] = inv
		for r := col + 1; r < n; r++ {
			f := m[r*w+col] * inv
			if f == 0 {
				continue
			}
			for j := col + 1; j < w; j++ {
				m[r*w+j] -= float64(f * m[col*w+j])
			}
		}
	}
	var dc [2]float64
	for k := range 2 {
		x := v[k*n : k*n+n]
		for i := n - 1; i >= 0; i-- {
			s := m[i*w+n+k]
			for j := i + 1; j < n; j++ {
				s -= float64(m[i*w+j] * x[j])
			}
			x[i] = s * m[i*w+i]
			dc[k] += float64(L.Cy[i] * x[i])
		}
		if math.IsNaN(dc[k]) || math.IsInf(dc[k], 0) {
			dc[k] = nan
		}
	}
	return dc[0], dc[1]
}

// feedback returns the controller's feedback path C_fb(z) = u/(−y) from
// the coefficients, with q = z⁻¹:
//
//	PID family: Kp + G0 + G01·q/(1 − q) + Bd·(1 − q)/(1 − Ad·q)
//	lead:       (B0 + B1·q)/(1 + A1·q)
//
// (the terms the form lacks are zero). It equals the linearized model's
// transfer function (a test checks it) at a fraction of the cost.
func feedback(k Coeffs, z complex128) complex128 {
	n, d := feedbackRatio(k, lti.Div(1, z))
	return lti.Div(n, d)
}

// feedbackRatio returns C_fb as a ratio n/d at q = z⁻¹, each side kept as
// products of the factors (1 − q), (1 − Ad·q), so that a frequency sweep
// needs one complex division and no cancellation between expanded
// coefficients near z = 1:
//
//	PID family: n = (Kp + G0)·(1 − q)·(1 − Ad·q) + G01·q·(1 − Ad·q) + Bd·(1 − q)²
//	            d = (1 − q)·(1 − Ad·q)   (each factor only with its term)
//	lead:       n = B0 + B1·q,  d = 1 + A1·q
func feedbackRatio(k Coeffs, q complex128) (n, d complex128) {
	if k.Form == airframe.FormLead {
		return complex(k.B0, 0) + lti.Mul(complex(k.B1, 0), q), 1 + lti.Mul(complex(k.A1, 0), q)
	}
	if len(k.DSections) > 0 {
		return feedbackRatioDerivative(k, q) // dfilter.go
	}
	hasI, hasD := k.Form.HasIntegral(), k.Form.HasDerivative()
	fi, fd := complex(1, 0), complex(1, 0) // the integral's and the derivative's denominators
	if hasI {
		fi = 1 - q
	}
	if hasD {
		fd = 1 - lti.Mul(complex(k.Ad, 0), q)
	}
	p := complex(k.Kp, 0)
	if hasI {
		p += complex(k.G0, 0)
	}
	n = lti.Mul(lti.Mul(p, fi), fd)
	if hasI {
		n += lti.Mul(lti.Mul(complex(k.G01, 0), q), fd)
	}
	if hasD {
		n += lti.Mul(lti.Mul(complex(k.Bd, 0), 1-q), fi)
	}
	return n, lti.Mul(fi, fd)
}

// TF returns the linear controller as polynomials in z over a common
// denominator: the feedback path C(z) = Num/Den from the measurement
// (u = F·r − C·y) and the setpoint path F(z) = SetNum/Den, read off the
// difference equations of Coeffs:
//
//	integral    I(z) = G0 + G01·z⁻¹/(1 − z⁻¹) = (G0·z + G01 − G0)/(z − 1)
//	derivative  D(z) = Bd·(1 − z⁻¹)/(1 − Ad·z⁻¹) = Bd·(z − 1)/(z − Ad)
//	C = Kp + I + D,  F = KpB + I (+ D with the derivative on the error)
//	lead        C = F = (B0 + B1·z⁻¹)/(1 + A1·z⁻¹) = (B0·z + B1)/(z + A1)
func (k Coeffs) TF() (num, setNum, den lti.Poly) {
	if k.Form == airframe.FormLead {
		n := lti.Poly{k.B1, k.B0}
		return n, n, lti.Poly{k.A1, 1}
	}
	if len(k.DSections) > 0 {
		return k.tfDerivative() // dfilter.go
	}
	den = lti.Poly{1}
	iDen, dDen := lti.Poly{-1, 1}, lti.Poly{-k.Ad, 1}
	hasI, hasD := k.Form.HasIntegral(), k.Form.HasDerivative()
	if hasI {
		den = lti.PolyMul(den, iDen)
	}
	if hasD {
		den = lti.PolyMul(den, dDen)
	}
	// Each term over the common denominator: term·den/own denominator.
	num, setNum = den.Scale(k.Kp), den.Scale(k.KpB)
	if hasI {
		t := lti.Poly{k.G01 - k.G0, k.G0}
		if hasD {
			t = lti.PolyMul(t, dDen)
		}
		num, setNum = lti.PolyAdd(num, t), lti.PolyAdd(setNum, t)
	}
	if hasD {
		t := lti.Poly{-k.Bd, k.Bd}
		if hasI {
			t = lti.PolyMul(t, iDen)
		}
		num = lti.PolyAdd(num, t)
		if k.DerivativeOnError {
			setNum = lti.PolyAdd(setNum, t)
		}
	}
	return num, setNum, den
}

// characteristic returns Dc·Dp·z^D + Nc·Np, whose roots are the closed-loop
// poles of the loop's transfer functions (D: compute plus whole-sample
// delay), or nil when the plant's transfer function is not available.
func characteristic(pl Plant, k Coeffs, d int) lti.Poly {
	if pl.den == nil {
		return nil
	}
	nc, _, dc := k.TF()
	zd := make(lti.Poly, d+pl.Delay+1)
	zd[len(zd)-1] = 1
	return lti.PolyAdd(lti.PolyMul(lti.PolyMul(dc, pl.den), zd), lti.PolyMul(nc, pl.num))
}

// schurStable reports whether every root of p lies strictly inside the
// unit circle, by the Schur–Cohn step-down recursion (Jury's test; Åström
// & Wittenmark, Computer-Controlled Systems, from memory): with
// p*(z) = zⁿp(1/z), p is stable iff |p₀| < |pₙ| and
// (pₙ·p(z) − p₀·p*(z))/z is stable. O(n²), against O(n³) for eigenvalues.
func schurStable(p lti.Poly) bool {
	p = p.Trim()
	var abuf, qbuf [32]float64
	a, qs := abuf[:0], qbuf[:0]
	if len(p) > len(abuf) {
		a, qs = make([]float64, 0, len(p)), make([]float64, 0, len(p))
	}
	a = append(a, p...)
	for n := len(a) - 1; n > 0; n-- {
		if !(math.Abs(a[0]) < math.Abs(a[n])) {
			return false
		}
		q := qs[:n]
		scale := 0.0
		for i := 0; i < n; i++ {
			q[i] = float64(a[n]*a[i+1]) - float64(a[0]*a[n-1-i])
			scale = math.Max(scale, math.Abs(q[i]))
		}
		if !(scale > 0) || math.IsInf(scale, 0) {
			return false
		}
		for i := range q {
			q[i] /= scale
		}
		a, qs = q, a[:0]
	}
	return len(a) == 1 && a[0] != 0
}

// loopMargins returns the margins of the sampled loop
// L(z) = C_fb(z)·P(z)·z^(−d) on the unit circle, z = e^(jωT), from a low
// frequency up to just below Nyquist π/T, on a grid of 20 points per
// decade: lti.LoopMargins adds every midpoint (40 per decade) and splits
// further wherever the phase turns by more than 60°.
func loopMargins(pl Plant, k Coeffs, d int, wlo float64) lti.Margins {
	T := pl.T
	ny := math.Pi / T
	lo := math.Min(wlo, ny/1e4)
	if k.Form.HasIntegral() && k.Kp > 0 && k.G01 > 0 {
		// Two decades below the integral zero Ki/Kp (G01 ≈ Ki·T).
		lo = math.Min(lo, k.G01/T/k.Kp/100)
	}
	n := int(math.Ceil(20*lti.Log10(ny/lo))) + 1
	// z⁻¹ = z̄ on the unit circle; the controller and the plant make one
	// rational function, C·P = (Nc·Np)/(Dc·Dp), with one division, and the
	// delay z^(−d−Delay) is a phase.
	delay := float64(d + pl.Delay)
	if pl.den == nil {
		return lti.LoopMargins(func(w float64) complex128 {
			z := complexExp(w * T)
			cn, cd := feedbackRatio(k, cmplx.Conj(z))
			return lti.Mul(lti.Mul(lti.Div(cn, cd), pl.evalMeasured(z)), complexExp(-delay*w*T))
		}, lo, ny*(1-1e-9), n)
	}
	return lti.LoopMargins(func(w float64) complex128 {
		z := complexExp(w * T)
		cn, cd := feedbackRatio(k, cmplx.Conj(z))
		return lti.Mul(lti.Div(lti.Mul(cn, pl.num.Eval(z)), lti.Mul(cd, pl.den.Eval(z))), complexExp(-delay*w*T))
	}, lo, ny*(1-1e-9), n)
}

// complexExp returns e^(jθ), the same bits on every CPU (lti.Cis).
func complexExp(theta float64) complex128 { return lti.Cis(theta) }
