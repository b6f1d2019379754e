package discrete

import (
	"fmt"
	"math"
	"math/big"
	"math/cmplx"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// fixedDFilterCases designs axes with derivative filters in q15 and q31
// (demo data: the invented axis of filterAxis): a PID with a second-order
// lowpass and a partial notch on the derivative in both types, the same
// behind the feedback notch and lowpass in q31, and a PD with the
// derivative on the error and a full notch on it in q15. Made once per
// test binary and shared (no test changes them).
func fixedDFilterCases(t testing.TB) []numCase {
	t.Helper()
	return dfMemo.get(t, makeFixedDFilterCases)
}

func makeFixedDFilterCases() ([]numCase, error) {
	lp2 := airframe.Filter{Kind: airframe.FilterLowpass, At: "derivative", Hz: 80, Order: 2, Damping: 1 / math.Sqrt2}
	partial := airframe.Filter{Kind: airframe.FilterNotch, At: "derivative", Hz: 150, WidthHz: 40, DepthDB: 12}
	notch := airframe.Filter{Kind: airframe.FilterNotch, At: "derivative", Hz: 200, WidthHz: 50}
	type variant struct {
		name     string
		nt       airframe.NumericType
		form     airframe.Form
		doe      bool
		feedback bool
		dfilters []airframe.Filter
	}
	vs := []variant{
		{"q15/pid/lp2+partial", airframe.Q15, airframe.FormPID, false, false, []airframe.Filter{lp2, partial}},
		{"q31/pid/lp2+partial", airframe.Q31, airframe.FormPID, false, false, []airframe.Filter{lp2, partial}},
		{"q31/pid/chain/lp2", airframe.Q31, airframe.FormPID, false, true, []airframe.Filter{lp2}},
		{"q15/pd/doe/notch", airframe.Q15, airframe.FormPD, true, false, []airframe.Filter{notch}},
	}
	var cs []numCase
	for _, v := range vs {
		p := filterAxis()
		if !v.feedback {
			p.Filters = nil
		}
		p.Ctrl.Form, p.Ctrl.DerivativeOnError, p.Ctrl.DerivativeFilters = v.form, v.doe, v.dfilters
		p.Ctrl.Refine, p.Ctrl.AntiWindup = true, "backcalc"
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: v.nt, InputFullScale: 20, OutputFullScale: 0.5})
		if err != nil {
			return nil, fmt.Errorf("%s: %w", v.name, err)
		}
		if len(d.Num.Fixed.DSections) != len(v.dfilters) {
			return nil, fmt.Errorf("%s: %d derivative sections realized for %d filters", v.name, len(d.Num.Fixed.DSections), len(v.dfilters))
		}
		cs = append(cs, numCase{v.name, d, d.Num})
	}
	return cs, nil
}

// TestFixedDFilterBitExactAndWithinBounds drives the integer controllers
// with derivative filters with the hostile input of the PID tests: the
// model must match the exact math/big oracle bit for bit, section state
// for section state (so no word ever wrapped), and every product, partial
// sum and output of the derivative sections must stay within the range
// table's proved bound, which must name it; every check of the proof
// (overflow, limit_cycle) and of the quantized loop must pass.
func TestFixedDFilterBitExactAndWithinBounds(t *testing.T) {
	n := 20000
	if testing.Short() {
		n = 4000
	}
	for _, c := range fixedDFilterCases(t) {
		if !c.d.OK() {
			t.Fatalf("%s: unmet: %v", c.name, c.d.Warnings)
		}
		for _, want := range []string{"overflow", "limit_cycle", "quantized_stable", "quantized_overshoot", "quantized_settling_time"} {
			found := false
			for _, ck := range c.re.Checks {
				found = found || ck.Name == want && ck.OK
			}
			if !found {
				t.Errorf("%s: check %s missing or failing: %v", c.name, want, c.re.Warnings)
			}
		}
		o := excite(t, c, n, func(i int, s *FixedState, o *oracle) {
			for k := range c.re.Fixed.DSections {
				for j := 0; j < 4; j++ {
					if o.D != nil && s.D[k][j] != o.D[k][j].Int64() {
						t.Fatalf("%s: sample %d: derivative filter %d state %d = %d, exact %v", c.name, i, k+1, j, s.D[k][j], o.D[k][j])
					}
				}
			}
		})
		bounds := map[string]Range{}
		for _, r := range c.re.Ranges {
			bounds[r.Name] = r
		}
		seen := 0
		for name, m := range o.max {
			r, ok := bounds[name]
			if !ok {
				t.Errorf("%s: the range table has no row %q", c.name, name)
				continue
			}
			if strings.HasPrefix(name, "derivative filter") {
				seen++
			}
			if v, _ := new(big.Float).SetInt(m).Float64(); v > r.Bound {
				t.Errorf("%s: %s reached %g > proved bound %g", c.name, name, v, r.Bound)
			}
		}
		want := 0
		for _, q := range c.re.Fixed.DSections {
			want += map[bool]int{true: 9, false: 5}[q.Second]
		}
		if seen != want {
			t.Errorf("%s: %d derivative filter rows reached, want %d", c.name, seen, want)
		}
	}
}

// dStage is the derivative's own filter as the quantized controller runs
// it, in output LSB per input LSB: Ud = ad·Ud + bd·(v − vp).
func dStage(f *Fixed) (bd, ad float64) {
	return math.Ldexp(float64(f.Bd.Raw), -f.Bd.Frac), math.Ldexp(float64(f.Ad.Raw), -f.Ad.Frac)
}

// floatDPathNodes runs the quantized D path of f in float64, exactly the
// structure of the integer code without its roundings, on the derivative
// input v (input LSB; the history before v[0] is v[0]), and returns every
// node of the derivative sections (each partial sum, named as in the
// range table) at every sample, in output LSB: the direct simulation of
// the structure, independent of the transfer-function algebra of
// chainGains.
func floatDPathNodes(f *Fixed, v []float64) map[string][]float64 {
	out := map[string][]float64{}
	type state struct{ x1, x2, y1, y2 float64 }
	st := make([]state, len(f.DSections))
	bd, ad := dStage(f)
	ud, vp := 0.0, 0.0
	for i, x := range v {
		if i == 0 {
			vp = x
		}
		ud = ad*ud + bd*(x-vp)
		vp = x
		x := ud
		for k := range f.DSections {
			q := &f.DSections[k]
			b := q.Biquad()
			ts := q.terms()
			coef := map[string]float64{"B0": b.B0, "B1": b.B1, "B2": b.B2, "A1": b.A1, "A2": b.A2}
			val := map[string]float64{"x": x, "x1": st[k].x1, "x2": st[k].x2, "y1": st[k].y1, "y2": st[k].y2}
			sum := 0.0
			for j, t := range ts {
				p := coef[t.name] * val[t.operand()]
				if t.input || j == 0 {
					sum += p
				} else {
					sum -= p
				}
				if j > 0 {
					name := chainPartialName("derivative filter", k, ts, j)
					out[name] = append(out[name], sum)
				}
			}
			st[k] = state{x, st[k].x1, sum, st[k].y1}
			x = sum
		}
	}
	return out
}

// dPathRadius is the largest pole radius of the quantized D path.
func dPathRadius(f *Fixed) float64 {
	_, ad := dStage(f)
	rho := math.Abs(ad)
	for _, q := range f.DSections {
		rho = math.Max(rho, sectionRadius(q.Biquad()))
	}
	return rho
}

// TestFixedDFilterWorstCase drives each node of the derivative sections
// (every partial sum and output) with its brute-force worst-case input:
// the derivative input v at full scale with the sign of the node's
// impulse response from v, reversed in time (Oppenheim & Schafer, ℓ1
// scaling: x[N−j] = sign h[j] makes the node at N equal Σ|h[j]|·max|x|,
// the largest it can be; from memory). The impulse response comes from a
// float64 simulation of the structure (floatDPathNodes), not from the
// transfer functions of the proof. The exact integer controller (the
// math/big oracle), reset so that the history before the sequence is its
// first value, must keep the node within the proved bound and come within
// its allowance of it: the data word reaches one extreme one unit short
// of the other (up to ‖h‖₁ units), the roundings may work against the
// input (twice the noise part of the bound), and the response beyond N.
func TestFixedDFilterWorstCase(t *testing.T) {
	for _, c := range fixedDFilterCases(t) {
		f := c.re.Fixed
		if len(f.Sections) > 0 {
			continue // the measurement is the chain's output, not the input
		}
		bounds := map[string]Range{}
		for _, r := range c.re.Ranges {
			bounds[r.Name] = r
		}
		n := decaySamples(dPathRadius(f), 1e-13)
		imp := make([]float64, n+2)
		imp[1] = 1 // a unit pulse of v after one sample at 0
		hs := floatDPathNodes(f, imp)
		m := int64(1) << (f.W - 1)
		for name, h := range hs {
			r, ok := bounds[name]
			if !ok {
				t.Fatalf("%s: no range row %q", c.name, name)
			}
			var k int
			if _, err := fmt.Sscanf(name, "derivative filter %d", &k); err != nil {
				t.Fatal(err)
			}
			fk := f.DSections[k-1].F
			// h[1+j] is the node's response j samples after the pulse;
			// v[N−j] = sign·vmax, v[N] last.
			l1 := 0.0
			sgn := make([]int, n+1)
			for j := 0; j <= n; j++ {
				v := h[1+j]
				l1 += math.Abs(v)
				switch {
				case v > 0:
					sgn[n-j] = 1
				case v < 0:
					sgn[n-j] = -1
				}
			}
			o := newOracle(t, f)
			// v = −y (measurement) or e = r − y (error): the extremes of
			// v are ±m (−m − 1 + 1) and ±(2m − 1).
			in := func(s int) (r, y int32) {
				if f.DerivativeOnError {
					switch s {
					case 1:
						return int32(m - 1), int32(-m)
					case -1:
						return int32(-m), int32(m - 1)
					}
					return 0, 0
				}
				switch s {
				case 1:
					return 0, int32(-m)
				case -1:
					return 0, int32(m - 1)
				}
				return 0, 0
			}
			r0, y0 := in(sgn[0])
			o.reset(0, y0)
			vmax := float64(m)
			if f.DerivativeOnError {
				vmax = float64(2*m - 1)
				o.step(r0, y0) // primes vp with the first error
			}
			for _, s := range sgn {
				o.step(in(s))
			}
			got, _ := new(big.Float).SetInt(o.max[name]).Float64()
			lin := float64(l1*vmax) * math.Ldexp(1, fk)
			noise := r.Bound - lin // the roundings' part of the bound
			slack := l1*math.Ldexp(1, fk) + 2*noise + 1e-12*lin + r.Bound*0x1p-50 + r.Bound*2*l1Margin
			if got > r.Bound || got < r.Bound-slack {
				t.Errorf("%s: %s: worst case %g, bound %g (allowance %g below it)", c.name, name, got, r.Bound, slack)
			}
			if got < 0.999*r.Bound {
				t.Errorf("%s: %s: worst case %g is not within 0.1 %% of the bound %g", c.name, name, got, r.Bound)
			}
		}
	}
}

// TestFixedDFilterAgainstSciPy holds the D paths against SciPy
// (scipy.signal, with the version pyref.Versions reports), with the
// script of the feedback chain (fixedFilterScript) on the chain of the
// derivative's own filter, bd·(1 − z⁻¹)/(1 − ad·z⁻¹), and the derivative
// sections:
//
//   - every ℓ1 norm of the proof (the D path's chainGains) against the
//     impulse response summed by signal.lfilter: the proof's norm is the
//     summed one times 1 + l1Margin, to 10^−9;
//   - every derivative-section row of the range table against its bound
//     assembled from SciPy's norms, to 2·10^−6;
//   - each quantized section's frequency response against the designed
//     one (signal.freqz), within the bound of its coefficient changes,
//     and its DC gain exactly 1;
//   - the integer D path's output (the last section's output state)
//     against signal.lfilter of the quantized path on v = −y, a chirp and
//     full-scale noise: within the proved rounding bound
//     (Realization.DFilterNoiseLSB), plus lfilter's own float64 rounding.
func TestFixedDFilterAgainstSciPy(t *testing.T) {
	cases := fixedDFilterCases(t)
	type in struct {
		Q        [][6]float64 `json:"q"`
		Designed [][5]float64 `json:"designed"`
		U        []float64    `json:"u"`
	}
	var ins []in
	var ys [][]int32
	const nu = 3000
	for _, c := range cases {
		f := c.re.Fixed
		var x in
		bd, ad := dStage(f)
		x.Q = append(x.Q, [6]float64{bd, -bd, 0, -ad, 0, 0})
		x.Designed = append(x.Designed, [5]float64{bd, -bd, 0, -ad, 0})
		for i, q := range f.DSections {
			b := q.Biquad()
			sec := 0.0
			if q.Second {
				sec = 1
			}
			x.Q = append(x.Q, [6]float64{b.B0, b.B1, b.B2, b.A1, b.A2, sec})
			dq := c.d.Coeffs.DSections[i]
			x.Designed = append(x.Designed, [5]float64{dq.B0, dq.B1, dq.B2, dq.A1, dq.A2})
		}
		// A chirp from 0 at 0.7 of full scale, then full-scale noise (a
		// fixed xorshift); v = −y for the derivative on the measurement,
		// v = e = −y with the setpoint at 0 on the error.
		m := float64(int64(1) << (c.re.W - 1))
		var rng uint32 = 0x2545f491
		var y []int32
		for i := 0; i < nu; i++ {
			var v float64
			if i < nu/2 {
				ph := math.Pi * float64(i) * float64(i) / float64(nu)
				v = 0.7 * m * math.Sin(ph)
			} else {
				rng ^= rng << 13
				rng ^= rng >> 17
				rng ^= rng << 5
				v = float64(int32(rng)) / (1 << 31) * m
			}
			r := int32(math.Max(-m, math.Min(m-1, math.Round(v))))
			y = append(y, r)
			x.U = append(x.U, -float64(r))
		}
		ins = append(ins, x)
		ys = append(ys, y)
	}
	var outs []struct {
		Lin   [][]float64              `json:"lin"`
		Noise [][][]float64            `json:"noise"`
		W     []float64                `json:"w"`
		Freqz []map[string][]pyComplex `json:"freqz"`
		Y     []float64                `json:"y"`
	}
	pyref.Run(t, fixedFilterScript, ins, &outs)
	ver, _ := pyref.Versions()
	t.Logf("reference: %s", ver)
	for ci, c := range cases {
		f, out := c.re.Fixed, outs[ci]
		bd, ad := dStage(f)
		qs := []lti.Biquad{{B0: bd, B1: -bd, A1: -ad}}
		for _, q := range f.DSections {
			qs = append(qs, q.Biquad())
		}
		gs := chainGains(qs)
		for k := range gs {
			for i := range gs[k].lin {
				check := func(what string, got, want float64) {
					if want == 0 {
						if got != 0 {
							t.Errorf("%s: stage %d sum %d %s: %g, SciPy 0", c.name, k, i, what, got)
						}
						return
					}
					if r := got/want - 1; r < l1Margin-1e-9 || r > l1Margin+1e-9 {
						t.Errorf("%s: stage %d sum %d %s: ℓ1 %.12g, SciPy %.12g (ratio − 1 = %.3g, want %g)", c.name, k, i, what, got, want, r, l1Margin)
					}
				}
				check("from v", gs[k].lin[i], out.Lin[k][i])
				for j := range gs[k].noise[i] {
					check(fmt.Sprintf("from stage %d's rounding", j), gs[k].noise[i][j], out.Noise[k][i][j])
				}
			}
		}
		// The range rows, from SciPy's norms: v's bound times the path,
		// Ud's two roundings and each section's through theirs.
		m := math.Ldexp(1, f.W-1)
		vmax := m
		if f.DerivativeOnError {
			vmax = 2*m - 1
		}
		if len(f.Sections) > 0 {
			for _, r := range c.re.Ranges {
				if r.Name == "filter chain output y (the controller's measurement)" {
					vmax = r.Bound
				}
			}
		}
		pre := half(f.Ad.Shift) + half(f.Bd.Shift)
		es := make([]float64, len(f.DSections))
		for k := range f.DSections {
			for _, t := range f.DSections[k].terms() {
				if t.k.Shift > 0 {
					es[k] += 0.5
				}
			}
		}
		rows := map[string]float64{}
		for _, r := range c.re.Ranges {
			rows[r.Name] = r.Bound
		}
		for k := range f.DSections {
			q := &f.DSections[k]
			ts := q.terms()
			direct := 0.0
			for i := range out.Lin[k+1] {
				if i == 0 && ts[0].k.Shift > 0 {
					direct += 0.5
				}
				if ts[i+1].k.Shift > 0 {
					direct += 0.5
				}
				want := out.Lin[k+1][i] * vmax * math.Ldexp(1, q.F)
				want += out.Noise[k+1][i][0] * pre * math.Ldexp(1, q.F-f.FD)
				for j := 0; j < k; j++ {
					want += out.Noise[k+1][i][j+1] * es[j] * math.Ldexp(1, q.F-f.DSections[j].F)
				}
				want += out.Noise[k+1][i][k+1]*es[k] + direct
				name := chainPartialName("derivative filter", k, ts, i+1)
				got, ok := rows[name]
				if !ok || math.Abs(got/want-1) > 2e-6 || got < want {
					t.Errorf("%s: %s: bound %.10g, from SciPy's ℓ1 norms %.10g", c.name, name, got, want)
				}
			}
		}
		// Frequency responses of the sections.
		for k := range f.DSections {
			fz := out.Freqz[k+1]
			d, q := c.d.Coeffs.DSections[k], f.DSections[k].Biquad()
			db := math.Abs(q.B0-d.B0) + math.Abs(q.B1-d.B1) + math.Abs(q.B2-d.B2)
			da := math.Abs(q.A1-d.A1) + math.Abs(q.A2-d.A2)
			for i, w := range out.W {
				hd, hq := fz["d"][i].c(), fz["q"][i].c()
				z := cmplx.Exp(complex(0, -w))
				aq := cmplx.Abs(1 + complex(q.A1, 0)*z + complex(q.A2, 0)*z*z)
				lim := (db+cmplx.Abs(hd)*da)/aq*(1+1e-9) + 1e-13
				if e := cmplx.Abs(hq - hd); e > lim {
					t.Errorf("%s: derivative filter %d at ω = %.4g: |Hq − H| = %.3g > %.3g", c.name, k+1, w, e, lim)
				}
				if e := cmplx.Abs(d.Eval(cmplx.Exp(complex(0, w))) - hd); e > 1e-9*math.Max(1, cmplx.Abs(hd)) {
					t.Errorf("%s: derivative filter %d at ω = %.4g: lti %v, SciPy %v", c.name, k+1, w, d.Eval(cmplx.Exp(complex(0, w))), hd)
				}
			}
			if dc := fz["q"][0].c(); cmplx.Abs(dc-1) > 1e-12 {
				t.Errorf("%s: derivative filter %d: quantized DC gain %v, want 1", c.name, k+1, dc)
			}
		}
		if len(f.Sections) > 0 {
			continue // SciPy's input is v itself; here the chain would stand between
		}
		// The integer D path against lfilter.
		var s FixedState
		f.Reset(&s, 0, 0)
		last := len(f.DSections) - 1
		fl := math.Ldexp(1, -f.DSections[last].F)
		worst := 0.0
		for i, y := range ys[ci] {
			f.Step(&s, 0, y)
			worst = math.Max(worst, math.Abs(float64(s.D[last][2])*fl-out.Y[i]))
		}
		// lfilter's own rounding: float64 (2^−53 relative) on terms of a
		// few full scales times the path's gain (the last ℓ1 gain of the
		// range table, in output LSB per input LSB), some ten operations
		// a sample per stage, through recursions of ℓ1 gain below 2^8:
		// below 2^−40 of the full scale times that gain, as for the
		// feedback chain (TestFixedFilterAgainstSciPy).
		lim := c.re.DFilterNoiseLSB + math.Ldexp(m*gs[len(gs)-1].lin[len(gs[len(gs)-1].lin)-1], -40)
		if worst > lim {
			t.Errorf("%s: integer D path vs SciPy: %.4g LSB > proved rounding bound %.4g", c.name, worst, lim)
		}
		t.Logf("%s: integer D path vs SciPy lfilter: %.4g output LSB (proved rounding bound %.4g)", c.name, worst, c.re.DFilterNoiseLSB)
	}
}

// TestFixedDFilterRounding compares the integer D path with the same path
// (the quantized coefficients, exact in binary) evaluated in math/big
// floating point of 256 bits, whose own rounding is nil at this scale, on
// full-scale noise, a full-scale square wave and a chirp of the
// measurement: the difference at the last section's output is the
// integer path's rounding alone and must stay within its proved bound
// (Realization.DFilterNoiseLSB), in q15 and in q31; and the bound is not
// vacuous: within a factor 100 of what the excitation reaches.
func TestFixedDFilterRounding(t *testing.T) {
	for _, c := range fixedDFilterCases(t) {
		f := c.re.Fixed
		if len(f.Sections) > 0 {
			continue // the D path's input is then the chain's rounded output
		}
		m := int64(1) << (f.W - 1)
		const prec = 256
		nf := func(x float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(x) }
		mul := func(a, b *big.Float) *big.Float { return new(big.Float).SetPrec(prec).Mul(a, b) }
		type st struct{ x1, x2, y1, y2 *big.Float }
		ss := make([]st, len(f.DSections))
		for k := range ss {
			ss[k] = st{nf(0), nf(0), nf(0), nf(0)}
		}
		bd, ad := dStage(f)
		ud, vp := nf(0), nf(0)
		var s FixedState
		f.Reset(&s, 0, 0)
		last := len(f.DSections) - 1
		var rng uint32 = 99
		worst := 0.0
		for i := 0; i < 4000; i++ {
			var u int64
			switch {
			case i < 1000:
				rng ^= rng << 13
				rng ^= rng >> 17
				rng ^= rng << 5
				u = int64(int32(rng) >> (32 - f.W))
			case i < 2000:
				u = map[bool]int64{true: m - 1, false: -m}[i/37%2 == 0]
			default:
				u = int64(0.9 * float64(m) * math.Sin(float64(i*i)*1e-3))
			}
			f.Step(&s, 0, int32(u))
			v := nf(float64(-u)) // −y, and e = −y with the setpoint at 0
			if i == 0 && f.DerivativeOnError {
				vp = v // Reset primes the error's history at the first step
			}
			dv := new(big.Float).SetPrec(prec).Sub(v, vp)
			ud = new(big.Float).SetPrec(prec).Add(mul(nf(ad), ud), mul(nf(bd), dv))
			vp = v
			x := ud
			for k := range f.DSections {
				b := f.DSections[k].Biquad()
				y := mul(nf(b.B0), x)
				y.Add(y, mul(nf(b.B1), ss[k].x1))
				y.Add(y, mul(nf(b.B2), ss[k].x2))
				y.Sub(y, mul(nf(b.A1), ss[k].y1))
				y.Sub(y, mul(nf(b.A2), ss[k].y2))
				ss[k] = st{x, ss[k].x1, y, ss[k].y1}
				x = y
			}
			got := new(big.Float).SetPrec(prec).SetInt64(s.D[last][2])
			got.SetMantExp(got, -f.DSections[last].F)
			d, _ := new(big.Float).Sub(got, x).Float64()
			worst = math.Max(worst, math.Abs(d))
		}
		if worst > c.re.DFilterNoiseLSB || worst < c.re.DFilterNoiseLSB/100 {
			t.Errorf("%s: integer D path vs exact: %.4g output LSB, proved bound %.4g", c.name, worst, c.re.DFilterNoiseLSB)
		}
		t.Logf("%s: rounding %.4g output LSB, proved bound %.4g", c.name, worst, c.re.DFilterNoiseLSB)
	}
}

// TestFixedDFilterEngagementAndRest: after Reset with any measurement
// held constant, the D path stays at exactly 0 (its input, the
// derivative of a constant, is 0 from the first step: no derivative kick,
// and the sections start at their rest), so a PID's first command is the
// reset's output; and at rest after full-scale noise the D term settles
// within its proved rest bound (half the limit_cycle bound less its one
// LSB of output rounding).
func TestFixedDFilterEngagementAndRest(t *testing.T) {
	for _, c := range fixedDFilterCases(t) {
		f := c.re.Fixed
		hi := int32(1)<<(f.W-1) - 1
		for _, y := range []int32{-hi - 1, -12345, -1, 0, 1, 777, hi / 3, hi} {
			var s FixedState
			out := hi / 5
			f.Reset(&s, out, y)
			for i := 0; i < 200; i++ {
				u := f.Step(&s, y, y)
				if s.Ud != 0 || s.D != ([airframe.MaxFilters][4]int64{}) {
					t.Fatalf("%s: measured %d held: D path state %d %v at step %d", c.name, y, s.Ud, s.D, i)
				}
				if i == 0 && f.Form.HasIntegral() && len(f.Sections) == 0 && u != out {
					t.Errorf("%s: reset to %d at measured %d: first command %d", c.name, out, y, u)
				}
			}
		}
		var s FixedState
		f.Reset(&s, 0, 0)
		var rng uint32 = 12345
		for i := 0; i < 500; i++ {
			rng ^= rng << 13
			rng ^= rng >> 17
			rng ^= rng << 5
			f.Step(&s, 0, int32(rng)>>(32-f.W))
		}
		n := decaySamples(dPathRadius(f), 1e-12)
		for _, q := range f.Sections {
			n = max(n, decaySamples(sectionRadius(q.Biquad()), 1e-12))
		}
		last := len(f.DSections) - 1
		fl := math.Ldexp(1, -f.DSections[last].F)
		peak := 0.0
		for i := 0; i < 2*n; i++ {
			f.Step(&s, 0, 0)
			if i >= n {
				peak = math.Max(peak, math.Abs(float64(s.D[last][2])*fl))
			}
		}
		if lim := (c.re.RestBoundLSB - 1) / 2; peak > lim {
			t.Errorf("%s: D term at rest %g output LSB > rest bound %g", c.name, peak, lim)
		}
		t.Logf("%s: D term at rest %g output LSB, limit cycle bound %g LSB", c.name, peak, c.re.RestBoundLSB)
	}
}

// TestFixedDFilterUnprovable: a derivative notch so narrow that its
// poles round onto the unit circle in q15 (width 0.001 Hz at 1 kHz, as
// in TestFixedFilterUnstableQuantized) has no bound: the overflow check
// fails, once, with a warning that names the derivative filter and the
// quantity; in q31 the same notch is stable and proved, and the design
// meets every check (its decay, slower than the accuracy run's tail, is
// not taken for a limit cycle).
func TestFixedDFilterUnprovable(t *testing.T) {
	for _, tc := range []struct {
		nt airframe.NumericType
		ok bool
	}{{airframe.Q15, false}, {airframe.Q31, true}} {
		p := filterAxis()
		p.Filters = nil
		p.Ctrl.Refine = true
		p.Ctrl.DerivativeFilters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "derivative", Hz: 100, WidthHz: 0.001}}
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: tc.nt, InputFullScale: 20, OutputFullScale: 0.5})
		if err != nil {
			t.Fatal(err)
		}
		failed := false
		for _, ck := range d.Checks {
			if ck.Name == "overflow" {
				failed = !ck.OK
			}
		}
		n, named := 0, false
		for _, w := range d.Warnings {
			if strings.HasPrefix(w, "overflow:") {
				n++
			}
			named = named || strings.HasPrefix(w, "overflow: derivative filter 1 (notch 100 Hz, -3 dB width 0.001 Hz) is not stable with its q15 coefficients")
		}
		if failed == tc.ok || !tc.ok && (!named || n != 1) || tc.ok && (n != 0 || !d.OK()) {
			t.Errorf("%s: overflow failed %v, %d overflow warnings, named %v: %q", tc.nt, failed, n, named, d.Warnings)
		}
	}
}

// TestSectionOverflowMessages: the overflow message of a section's
// quantity names the chain, the section with its figures, the bound and
// the word, and the chain's own ways out: the feedback chain's (a wider
// notch or a higher cutoff), the derivative chain's with its full-scale
// ratio too (the derivative's gain acts in raw units times in_fs/out_fs);
// q31 is offered below 32 bits only.
func TestSectionOverflowMessages(t *testing.T) {
	lp, err := lti.Lowpass2(200, 0.7071, 1000)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{16, 32} {
		p := filterAxis()
		p.Filters = []airframe.Filter{{Kind: airframe.FilterLowpass, At: "feedback", Hz: 200, Order: 2, Damping: 0.7071}}
		p.Ctrl.DerivativeFilters = []airframe.Filter{{Kind: airframe.FilterLowpass, At: "derivative", Hz: 200, Order: 2, Damping: 0.7071}}
		nt := airframe.Q15
		if w == 32 {
			nt = airframe.Q31
		}
		fp := &fixedPlan{d: &Design{Problem: p, Numeric: airframe.Numeric{Type: nt}}, w: w, fin: 20, fout: 0.5,
			f: Fixed{Sections: []FixedSection{quantizeSection(lp, w)}, DSections: []FixedSection{quantizeSection(lp, w)}}}
		q31 := `numeric.type = "q31" (32-bit data, 64-bit accumulators), or `
		if w == 32 {
			q31 = ""
		}
		for _, c := range []struct{ name, want string }{
			{"filter 1 sum", "overflow: filter 1 (" + p.Filters[0].Describe() + ") sum can reach 40000 but its 16-bit word holds 32767 (Q3.12); way out: " +
				q31 + "a wider notch or a higher cutoff (poles further from the unit circle)"},
			{"derivative filter 1 sum", "overflow: derivative filter 1 (" + p.Ctrl.DerivativeFilters[0].Describe() + ") sum can reach 40000 but its 16-bit word holds 32767 (Q3.12); way out: " +
				q31 + "a wider notch or a higher cutoff (poles further from the unit circle), or a smaller numeric.input_full_scale or a larger numeric.output_full_scale (the derivative's gain acts in raw units times in_fs/out_fs = 40)"},
		} {
			got := fp.overflowMsg(Range{Name: c.name, Bound: 40000, Capacity: 32767, Format: "Q3.12"})
			if got != c.want {
				t.Errorf("%d bits, %s:\n got %s\nwant %s", w, c.name, got, c.want)
			}
		}
	}
}
