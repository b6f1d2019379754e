package discrete

import (
	"fmt"
	"math"
	"math/big"
	"math/rand/v2"
	"sync"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// numProblem is an invented rate loop (demo data): an integrating plant
// with a motor lag, a gyro lowpass and a transport delay.
func numProblem(form airframe.Form) airframe.Axis {
	tau := 0.03
	return airframe.Axis{Name: "roll",
		Plant:  airframe.Plant{Model: lti.ZPK{Gain: 2000 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: 0.002},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08, MinPhaseMargin: 40, MinGainMargin: 6},
		Ctrl: airframe.Control{Form: form, Refine: true, ThirdPole: 5, LeadZero: -20, DerivativeLowpassHz: 125,
			OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "backcalc", Discretize: "tustin"},
	}
}

// numCase is one fixed-point realization under test.
type numCase struct {
	name string
	d    *Design
	re   *Realization
}

// numCases designs every form, anti-windup and derivative placement at
// q15 and q31, and the 8-bit analogue of a PID. The designs are made once
// per test binary and shared by the tests that read them (none changes
// them): each design is a pure function of its inputs.
func numCases(t testing.TB) []numCase {
	t.Helper()
	return numMemo.get(t, makeNumCases)
}

// caseMemo makes a set of cases once per test binary, for every test that
// reads them.
type caseMemo struct {
	once sync.Once
	cs   []numCase
	err  error
}

// get returns the cases, made by mk on the first call, or fails t.
func (m *caseMemo) get(t testing.TB, mk func() ([]numCase, error)) []numCase {
	t.Helper()
	m.once.Do(func() { m.cs, m.err = mk() })
	if m.err != nil {
		t.Fatal(m.err)
	}
	return m.cs
}

var numMemo, ffMemo, dfMemo caseMemo

func makeNumCases() ([]numCase, error) {
	var cs []numCase
	type variant struct {
		form airframe.Form
		aw   string
		doe  bool
		fin  float64
	}
	var vs []variant
	for _, f := range airframe.Forms() {
		vs = append(vs, variant{f, "backcalc", false, 100})
	}
	vs = append(vs, variant{airframe.FormPID, "clamp", false, 100}, variant{airframe.FormPI, "none", false, 100},
		variant{airframe.FormPID, "backcalc", true, 20}, variant{airframe.FormPD, "none", true, 20})
	for _, nt := range []airframe.NumericType{airframe.Q15, airframe.Q31} {
		for _, v := range vs {
			p := numProblem(v.form)
			p.Ctrl.AntiWindup, p.Ctrl.DerivativeOnError = v.aw, v.doe
			d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: nt, InputFullScale: v.fin, OutputFullScale: 1})
			if err != nil {
				return nil, fmt.Errorf("%s %s: %w", nt, v.form, err)
			}
			cs = append(cs, numCase{fmt.Sprintf("%s/%s/%s/doe=%v", nt, v.form, v.aw, v.doe), d, d.Num})
		}
	}
	// The 8-bit analogues, without the resolution rule (Q0.7 data cannot
	// resolve these loops): the q15 PID's design, a PID at 4 kHz and the
	// lead, whose quantized loops fail their spec.
	eight := []struct {
		name string
		form airframe.Form
		hz   float64
	}{{"q7/pid/backcalc", airframe.FormPID, 1000}, {"q7/pid@4kHz/backcalc", airframe.FormPID, 4000}, {"q7/lead", airframe.FormLead, 1000}}
	for _, e := range eight {
		d, err := DesignAxis(numProblem(e.form), airframe.Loop{Hz: e.hz, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q15, InputFullScale: 100, OutputFullScale: 1})
		if err != nil {
			return nil, err
		}
		re, err := realizeFixed(d, 8, false)
		if err != nil {
			return nil, err
		}
		cs = append(cs, numCase{e.name, d, re})
	}
	return cs, nil
}

// oracle is an independent implementation of the operation sequence of
// Fixed in exact math/big arithmetic: nothing wraps, so a model that
// matches it bit for bit never overflowed its words. It records the
// largest |value| of every intermediate, under the names of the range
// table, and checks that the saturating integrator update equals the
// exact clamp(S + inc, ±IL) (the claim that makes it exact).
type oracle struct {
	t                *testing.T
	f                *Fixed
	S, Ud, Vp, E, Uu *big.Int
	Ua               *big.Int
	Pending, Fresh   bool
	max              map[string]*big.Int
	F                [][4]*big.Int // the filter sections' X1, X2, Y1, Y2 (fixedfilter_test.go)
	D                [][4]*big.Int // the derivative sections' (dfixed_test.go)
}

func newOracle(t *testing.T, f *Fixed) *oracle {
	return &oracle{t: t, f: f, max: map[string]*big.Int{},
		S: bi(0), Ud: bi(0), Vp: bi(0), E: bi(0), Uu: bi(0), Ua: bi(0)}
}

func bi(x int64) *big.Int { return big.NewInt(x) }

func (o *oracle) rec(name string, v *big.Int) {
	a := new(big.Int).Abs(v)
	if m, ok := o.max[name]; !ok || a.Cmp(m) > 0 {
		o.max[name] = a
	}
}

// floorDiv2 returns floor(v/2^n) (Euclidean division by a positive
// divisor is the floor).
func floorDiv2(v *big.Int, n int) *big.Int {
	d := new(big.Int).Lsh(bi(1), uint(n))
	q, m := new(big.Int), new(big.Int)
	q.DivMod(v, d, m)
	return q
}

// rsh is round-half-up of v·2^−n: floor((v + 2^(n−1))/2^n); n ≤ 0 is exact.
func rsh(v *big.Int, n int) *big.Int {
	if n <= 0 {
		return new(big.Int).Lsh(v, uint(-n))
	}
	return floorDiv2(new(big.Int).Add(v, new(big.Int).Lsh(bi(1), uint(n-1))), n)
}

func (o *oracle) mul(name string, k QCoeff, x *big.Int) *big.Int {
	c := bi(k.Raw)
	p := new(big.Int).Mul(c, x)
	if k.Wide {
		w := o.f.W
		hi := floorDiv2(x, w)
		lo := new(big.Int).Sub(x, new(big.Int).Lsh(hi, uint(w)))
		ch, cl := new(big.Int).Mul(c, hi), new(big.Int).Mul(c, lo)
		if k.Shift <= w {
			o.rec(name+" (product)", new(big.Int).Lsh(ch, uint(w-k.Shift)))
		} else {
			o.rec(name+" (product)", new(big.Int).Add(ch, floorDiv2(cl, w)))
		}
		o.rec(name+" (product)", cl)
	} else {
		o.rec(name+" (product)", p)
	}
	return rsh(p, k.Shift)
}

func clampBI(x, lo, hi *big.Int) *big.Int {
	if x.Cmp(lo) < 0 {
		return new(big.Int).Set(lo)
	}
	if x.Cmp(hi) > 0 {
		return new(big.Int).Set(hi)
	}
	return new(big.Int).Set(x)
}

func (o *oracle) satA(x *big.Int) *big.Int {
	hi := new(big.Int).Sub(new(big.Int).Lsh(bi(1), uint(2*o.f.W-1)), bi(1))
	lo := new(big.Int).Neg(new(big.Int).Add(hi, bi(1)))
	return clampBI(x, lo, hi)
}

func (o *oracle) satD(x int32) *big.Int {
	hi := int64(1)<<(o.f.W-1) - 1
	return clampBI(bi(int64(x)), bi(-hi-1), bi(hi))
}

func (o *oracle) reset(output, measured int32) {
	f := o.f
	o.S, o.Ud, o.Vp, o.E, o.Uu, o.Ua = bi(0), bi(0), bi(0), bi(0), bi(0), bi(0)
	o.Pending, o.Fresh = false, false
	o.D = nil
	out, m := o.satD(output), o.satD(measured)
	o.chainReset(m)
	if f.Form == airframe.FormLead {
		o.S = new(big.Int).Lsh(out, uint(f.FU))
		return
	}
	if f.Form.HasIntegral() {
		q := new(big.Int).Sub(new(big.Int).Lsh(out, uint(f.FU)),
			new(big.Int).Sub(o.mul("KpB·r", f.KpB, m), o.mul("Kp·y", f.Kp, m)))
		o.rec("reset: output − (KpB − Kp)·measured", q)
		o.S = clampBI(new(big.Int).Lsh(q, uint(f.FS-f.FU)), bi(-f.IL), bi(f.IL))
	}
	if f.Form.HasDerivative() {
		if f.DerivativeOnError {
			o.Fresh = true
		} else {
			o.Vp = new(big.Int).Neg(m)
		}
	}
}

func (o *oracle) step(r32, y32 int32) int64 {
	f := o.f
	r, y := o.satD(r32), o.chainStep(o.satD(y32))
	var uu, e *big.Int
	if f.Form == airframe.FormLead {
		if o.Pending {
			o.S = new(big.Int).Sub(o.mul("B1·E", f.B1, o.E), o.mul("A1·ul", f.A1, o.Uu))
			o.rec("lead state x", o.S)
		}
		e = new(big.Int).Sub(r, y)
		o.rec("error e = r − y", e)
		uu = new(big.Int).Add(o.mul("B0·e", f.B0, e), o.S)
		o.rec("lead output ul (before saturation)", uu)
	} else {
		if o.Pending && f.Form.HasIntegral() {
			inc := o.mul("integrator increment G01·E", f.G01, o.E)
			incExact := new(big.Int).Set(inc)
			switch f.AntiWindup {
			case AWClamp:
				ur := rsh(o.Uu, f.FU)
				if o.Ua.Cmp(ur) < 0 && o.E.Sign() > 0 || o.Ua.Cmp(ur) > 0 && o.E.Sign() < 0 {
					inc, incExact = bi(0), bi(0)
				}
			case AWBackcalc:
				du := new(big.Int).Sub(o.Ua, rsh(o.Uu, f.FU))
				o.rec("tracking error du = ua − uu", du)
				bc := o.mul("Kt·du", f.Kt, du)
				o.rec("back-calculation term", bc)
				incExact.Add(inc, bc)
				o.rec("integrator increment inc", incExact)
				inc = new(big.Int).Set(incExact)
				if f.SatInc {
					inc = o.satA(inc)
				}
			}
			s := new(big.Int).Add(o.S, inc)
			o.rec("integrator S + inc (before the clamp)", new(big.Int).Add(o.S, incExact))
			if f.SatInt {
				s = o.satA(s)
			}
			il := bi(f.IL)
			neg := new(big.Int).Neg(il)
			exact := clampBI(new(big.Int).Add(o.S, incExact), neg, il)
			o.S = clampBI(s, neg, il)
			if o.S.Cmp(exact) != 0 {
				o.t.Fatalf("saturating integrator update %v ≠ exact clamp %v", o.S, exact)
			}
			o.rec("integrator S", o.S)
		}
		e = new(big.Int).Sub(r, y)
		o.rec("error e = r − y", e)
		uu = new(big.Int).Sub(o.mul("KpB·r", f.KpB, r), o.mul("Kp·y", f.Kp, y))
		o.rec("sum before saturation uu", uu)
		if f.Form.HasIntegral() {
			uu.Add(uu, rsh(o.S, f.FS-f.FU))
			o.rec("sum before saturation uu", uu)
			uu.Add(uu, o.mul("G0·e", f.G0, e))
			o.rec("sum before saturation uu", uu)
		}
		if f.Form.HasDerivative() {
			v := new(big.Int).Neg(y)
			if f.DerivativeOnError {
				v = new(big.Int).Set(e)
			}
			if o.Fresh {
				o.Vp, o.Fresh = new(big.Int).Set(v), false
			}
			dv := new(big.Int).Sub(v, o.Vp)
			o.rec("derivative input change v − v_prev", dv)
			o.Ud = new(big.Int).Add(o.mul("Ad·Ud", f.Ad, o.Ud), o.mul("Bd·Δv", f.Bd, dv))
			o.rec("derivative state Ud", o.Ud)
			o.Vp = v
			d := o.dchainStep(o.Ud)
			uu.Add(uu, rsh(d, f.dChainF()-f.FU))
			o.rec("sum before saturation uu", uu)
		}
	}
	cmd := rsh(uu, f.FU)
	o.rec("command before saturation", cmd)
	u := clampBI(cmd, bi(f.Lo), bi(f.Hi))
	o.E, o.Uu, o.Ua, o.Pending = e, uu, u, true
	return u.Int64()
}

// excite drives the model and the oracle with hostile input: independent
// full-range random samples, full-scale jumps held for a while (the
// derivative filter's worst case), small random walks, random Applied
// values anywhere in the data word and occasional resets.
func excite(t *testing.T, c numCase, n int, each func(i int, fx *FixedState, o *oracle)) *oracle {
	f := c.re.Fixed
	o := newOracle(t, f)
	var s FixedState
	rng := rand.New(rand.NewPCG(7, uint64(len(c.name))))
	hi := int64(1)<<(f.W-1) - 1
	word := func() int32 { return int32(rng.Int64N(2*hi+2) - hi - 1) }
	var r, y int32
	for i := 0; i < n; i++ {
		switch phase := i / 500 % 4; phase {
		case 0:
			r, y = word(), word()
		case 1: // jumps between the extremes every 50 samples
			if i%50 == 0 {
				r, y = int32(hi), int32(-hi-1)
				if i/50%2 == 1 {
					r, y = y, r
				}
			}
		case 2:
			r += int32(rng.IntN(7) - 3)
			y += int32(rng.IntN(7) - 3)
			r, y = int32(Clamp(int64(r), -hi-1, hi)), int32(Clamp(int64(y), -hi-1, hi))
		case 3:
			y = word()
		}
		if rng.IntN(997) == 0 {
			out, meas := word(), word()
			f.Reset(&s, out, meas)
			o.reset(out, meas)
		}
		got := f.Step(&s, r, y)
		want := o.step(r, y)
		if int64(got) != want {
			t.Fatalf("%s: sample %d: Step = %d, exact = %d", c.name, i, got, want)
		}
		if s.S != o.S.Int64() || s.Ud != o.Ud.Int64() || s.Uu != o.Uu.Int64() {
			t.Fatalf("%s: sample %d: state differs from the exact one", c.name, i)
		}
		if rng.IntN(3) == 0 {
			a := word()
			f.Applied(&s, a)
			o.Ua = o.satD(a)
		}
		if each != nil {
			each(i, &s, o)
		}
	}
	return o
}

// TestFixedBitExactAndWithinBounds checks the integer model against the
// exact oracle on hostile input, and every intermediate against the proved
// bound of the range table (which must name each of them).
func TestFixedBitExactAndWithinBounds(t *testing.T) {
	t.Parallel()
	n := 20000
	if testing.Short() {
		n = 4000
	}
	for _, c := range numCases(t) {
		for _, ck := range c.re.Checks {
			if ck.Name == "overflow" && !ck.OK {
				t.Fatalf("%s: unexpected overflow: %v", c.name, c.re.Warnings)
			}
		}
		o := excite(t, c, n, nil)
		bounds := map[string]Range{}
		for _, r := range c.re.Ranges {
			bounds[r.Name] = r
		}
		for name, m := range o.max {
			r, ok := bounds[name]
			if !ok {
				t.Errorf("%s: the range table has no row %q", c.name, name)
				continue
			}
			if v, _ := new(big.Float).SetInt(m).Float64(); v > r.Bound {
				t.Errorf("%s: %s reached %g > proved bound %g", c.name, name, v, r.Bound)
			}
		}
	}
}

// TestDerivativeL1BoundReached drives the derivative filter with the
// brute-force worst case, the sign of its impulse response reversed in
// time (v = −V for a long time, then +V), and checks that the closed-form
// ℓ1 norm |Bd|·(1 + |1 − Ad|/(1 − |Ad|)) is reached, not only respected:
// by the float filter against the ℓ1 norm summed term by term (Oppenheim
// & Schafer, ℓ1 scaling: the bound is attained by x[n−k] = sign h[k],
// from memory), and by the integer state against the range table's bound,
// up to one input step of Bd (the data word reaches −2^(w−1) but only
// 2^(w−1) − 1) and the rounding allowance 1/(1 − Ad).
func TestDerivativeL1BoundReached(t *testing.T) {
	for _, c := range numCases(t) {
		k, f := c.d.Coeffs, c.re.Fixed
		if !k.Form.HasDerivative() || k.DerivativeOnError {
			continue
		}
		// Float: the impulse response h0 = Bd, hj = Bd(Ad − 1)Ad^(j−1).
		const n = 4000
		l1, h := math.Abs(k.Bd), k.Bd*(k.Ad-1)
		sign := func(x float64) float64 {
			if x < 0 {
				return -1
			}
			return 1
		}
		v := make([]float64, n+1) // v[n−j] = sign(h_j)
		v[n] = sign(k.Bd)
		for j := 1; j <= n; j++ {
			l1 += math.Abs(h)
			v[n-j] = sign(h)
			h *= k.Ad
		}
		ud, vp := 0.0, v[0]
		for i := 0; i <= n; i++ {
			ud = k.Ad*ud + k.Bd*(v[i]-vp)
			vp = v[i]
		}
		closed := math.Abs(k.Bd) * (1 + math.Abs(1-k.Ad)/(1-math.Abs(k.Ad)))
		// 1e-12 relative: n = 4000 terms of a geometric series summed in
		// float64 (each add errs by ≤ 2^−53 relative).
		if math.Abs(ud-l1) > 1e-12*l1 || math.Abs(closed-l1) > 1e-12*l1 {
			t.Errorf("%s: worst-case output %g, ℓ1 summed %g, closed form %g", c.name, ud, l1, closed)
		}
		// Integer: y = max for a while, then min (v = −y jumps from −max to
		// +2^(w−1)).
		hi := int32(1)<<(f.W-1) - 1
		var s FixedState
		f.Reset(&s, 0, hi)
		peak := int64(0)
		for i := 0; i < 200; i++ {
			y := hi
			if i == 199 {
				y = -hi - 1
			}
			f.Step(&s, 0, y)
			peak = max(peak, s.Ud)
		}
		var bound float64
		for _, r := range c.re.Ranges {
			if r.Name == "derivative state Ud" {
				bound = r.Bound
			}
		}
		b := math.Abs(float64(f.Bd.Raw)) * math.Ldexp(1, -f.Bd.Shift)
		a := float64(f.Ad.Raw) * math.Ldexp(1, -f.Ad.Frac)
		// The bound is a float64 (q31: near 2^62, spaced 1024 apart), so
		// its own rounding, 2^−50 relative, is allowed too.
		allowed := b + 1/(1-a) + 1 + bound*0x1p-50
		if slack := bound - float64(peak); slack < 0 || slack > allowed {
			t.Errorf("%s: integer worst case %d vs bound %g (slack %g, allowed %g)", c.name, peak, bound, slack, allowed)
		}
	}
}

// roundingBound is the largest output difference, in output LSB, between
// the integer model and the float64 model with the same (quantized)
// coefficients after n samples, from the rounding errors alone, each
// propagated by the ℓ1 norm of its path to the output (round-off as
// bounded injections, Oppenheim & Schafer, from memory): ½ for the output
// rounding; ½·2^−FU per rounded term of the sum; the derivative state's
// rounding (≤ 1 unit of FD per sample) through 1/(1 − Ad); the lead
// state's (≤ 1.5 units of FU) through 1/(1 − |A1|); and the integrator's
// (≤ 1 unit of FS per sample), which is not forgotten: n·2^−FS. Valid
// while the anti-windup does not act (the excitation stays linear).
// 10^−3 LSB more covers the float64 reference's own rounding (relative
// 2^−52 of terms up to 2^31·in_fs/out_fs·gain LSB in q31: below 10^−4).
func roundingBound(f *Fixed, n int) float64 {
	b := 0.5 + 1e-3 + 5*0.5*math.Ldexp(1, -f.FU)
	switch {
	case f.Form == airframe.FormLead:
		a := float64(f.A1.Raw) * math.Ldexp(1, -f.A1.Frac)
		b += 1.5 * math.Ldexp(1, -f.FU) / (1 - math.Abs(a))
	case f.Form.HasDerivative():
		a := float64(f.Ad.Raw) * math.Ldexp(1, -f.Ad.Frac)
		b += math.Ldexp(1, -f.FD) / (1 - math.Abs(a))
	}
	if f.Form.HasIntegral() {
		b += float64(n) * math.Ldexp(1, -f.FS)
	}
	return b
}

// TestFixedAgainstFloatModel compares the integer model with the float64
// reference model on the standard excitation: with the quantized
// coefficients the difference is rounding only and must stay within
// roundingBound; Realization's figures are against the unquantized
// coefficients, and its q31 error is dominated by the output rounding
// (½ LSB) and coefficient quantization in 31 bits.
func TestFixedAgainstFloatModel(t *testing.T) {
	for _, c := range numCases(t) {
		if c.re.W == 8 {
			continue // its coefficients are far from the design's: see the quantized checks
		}
		quant := *c.re
		dq := *c.d
		dq.Coeffs = c.re.QuantizedCoeffs
		acc := Accuracy(&dq, &quant)
		if bnd := roundingBound(c.re.Fixed, acc.Samples); acc.MaxErrorLSB > bnd {
			t.Errorf("%s: integer vs float64 with the quantized coefficients: %.3f LSB > rounding bound %.3f", c.name, acc.MaxErrorLSB, bnd)
		}
		// Against the unquantized reference. q15: the rounding bound plus
		// the coefficient quantization (relative error ≤ 2^−15 of terms up
		// to the full scale, a fraction of an LSB a sample, accumulated by
		// the slowest recursive state). q31: the same relative error
		// 2^−31 times 2^31 LSB per full scale. For a lead, its two
		// weighted terms are each off by at most half an LSB a sample (the
		// rounding of its coefficient, on a term of at most the full
		// scale), accumulated by its pole a: 2·½/(1 − |a|) LSB (36 for a
		// pole at 0.972); for the other forms, 8 LSB.
		limit := 8.0
		if c.d.Coeffs.Form == airframe.FormLead {
			limit = math.Max(limit, 1/(1-math.Abs(c.d.Coeffs.A1)))
		}
		if c.re.MaxErrorLSB > limit || c.re.SQNRdB < 60 {
			t.Errorf("%s: max error %.3f LSB (limit %.3g), SQNR %.1f dB", c.name, c.re.MaxErrorLSB, limit, c.re.SQNRdB)
		}
		if c.re.RestLSB > c.re.RestBoundLSB {
			t.Errorf("%s: rest %g LSB > bound %g", c.name, c.re.RestLSB, c.re.RestBoundLSB)
		}
	}
}

// TestResetAndAppliedMirrorModel runs the integer model and the float64
// model (quantized coefficients) side by side through Reset, a mixer that
// clips the command narrower than the axis limits (Applied) and back:
// they follow each other within the rounding bound while linear, and the
// anti-windup acts on the applied value in both.
func TestResetAndAppliedMirrorModel(t *testing.T) {
	for _, c := range numCases(t) {
		f := c.re.Fixed
		if c.re.W == 8 || c.d.Coeffs.AntiWindup != AWBackcalc || !f.Form.HasIntegral() {
			continue
		}
		k := c.re.QuantizedCoeffs
		prm := ParamsOf[float64](k)
		var st State[float64]
		var s FixedState
		w := f.W
		fin, fout := c.re.InputFullScale, c.re.OutputFullScale
		lsb := math.Ldexp(1, w-1) / fout
		out, meas := int32(0.1*lsb), ToRaw(5/fin, w) // inside the mixer's clip
		f.Reset(&s, out, int32(meas))
		Reset(&prm, &st, FromRaw(int64(out), w)*fout, FromRaw(meas, w)*fin)
		clip := 0.2 * fout // the mixer's limit, narrower than the axis's
		worst, worstSat := 0.0, 0.0
		for i := 0; i < 3000; i++ {
			r := 0.0
			if i >= 100 && i < 1500 {
				r = 0.8 * fin // far beyond what the clipped command can follow
			}
			y := 5 * math.Exp(-float64(i)/200)
			rr, yr := ToRaw(r/fin, w), ToRaw(y/fin, w)
			u := f.Step(&s, int32(rr), int32(yr))
			uf := Step(&prm, &st, FromRaw(rr, w)*fin, FromRaw(yr, w)*fin)
			if i < 100 {
				worst = math.Max(worst, math.Abs(float64(u)-uf*lsb))
			} else {
				worstSat = math.Max(worstSat, math.Abs(float64(u)-uf*lsb))
			}
			// Each model is told its own command as the mixer clips it.
			f.Applied(&s, int32(Clamp(int64(u), int64(-clip*lsb), int64(clip*lsb))))
			Applied(&prm, &st, math.Max(-clip, math.Min(uf, clip)))
		}
		// Reset rounds the two proportional products into FU: 2^−FU more.
		if bnd := roundingBound(f, 100) + math.Ldexp(1, -f.FU); worst > bnd {
			t.Errorf("%s: after Reset: %.3f LSB > %.3f", c.name, worst, bnd)
		}
		// Under the clipping mixer the back-calculation contracts the
		// integrator's error, δS ← (1 − Kt)·δS + ε, with ε ≤ 1 unit of FS
		// (the rounded G01 and Kt products) + ½·Kt LSB (the tracking error
		// rounded to the output LSB): |δS| ≤ (2^−FS + ½·Kt)/Kt LSB on top
		// of what the linear stretches accumulate, and one LSB more where
		// the two commands sit on either side of a rounding of the clamp.
		kt := math.Ldexp(float64(f.Kt.Raw), -f.Kt.Frac)
		t.Logf("%s: linear %.3f, with Applied %.3f (bound %.3f)", c.name, worst, worstSat, roundingBound(f, 3000)+(math.Ldexp(1, -f.FS)+0.5*kt)/kt+1)
		if bnd := roundingBound(f, 3000) + (math.Ldexp(1, -f.FS)+0.5*kt)/kt + 1; worstSat > bnd {
			t.Errorf("%s: with Applied: %.3f LSB > %.3f", c.name, worstSat, bnd)
		}
	}
}

// TestClampAntiWindupDecision checks conditional integration on its own:
// the increment is dropped exactly when the applied command is below the
// unsaturated one with a positive error (or above with a negative one).
func TestClampAntiWindupDecision(t *testing.T) {
	p := numProblem(airframe.FormPI)
	p.Ctrl.AntiWindup = "clamp"
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q15, InputFullScale: 100, OutputFullScale: 1})
	if err != nil {
		t.Fatal(err)
	}
	f := d.Num.Fixed
	for _, tc := range []struct {
		e, applied int32
		grows      bool
	}{{1000, 0, false}, {-1000, 0, false}, {1000, 32767, true}, {-1000, -32768, true}} {
		var s FixedState
		f.Step(&s, tc.e, 0) // uu ≈ (KpB + G0)·e·in/out, well inside the limits
		s0 := s.S
		f.Applied(&s, tc.applied)
		f.Step(&s, 0, 0)
		if moved := s.S != s0; moved != tc.grows {
			t.Errorf("e = %d, applied %d: integrator moved %v, want %v", tc.e, tc.applied, moved, tc.grows)
		}
	}
}

// TestFixedOddInput: arguments outside the q15 word are saturated to it,
// and an unsupported width returns zero without a panic.
func TestFixedOddInput(t *testing.T) {
	c := numCases(t)[3]
	f := *c.re.Fixed
	var s1, s2 FixedState
	if a, b := f.Step(&s1, 1<<20, -1<<20), f.Step(&s2, 32767, -32768); a != b {
		t.Errorf("out-of-range input: %d, saturated input: %d", a, b)
	}
	f.W = 12
	if got := f.Step(&s1, 1, 2); got != 0 {
		t.Errorf("unsupported width: %d", got)
	}
}
