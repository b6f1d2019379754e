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
	"locusmith/synth"
)

// fixedFilterCases designs axes with a feedback filter chain in q15 and
// q31 (demo data: the invented axis of filterAxis): a PID behind a notch
// and a second-order lowpass in both types, a PI behind a section of
// every kind (full and partial notch, second- and first-order lowpass), a
// lead behind a notch and a first-order lowpass, and a PD with the
// derivative on the error behind a first-order lowpass. Made once per
// test binary and shared (no test changes them).
func fixedFilterCases(t testing.TB) []numCase {
	t.Helper()
	return ffMemo.get(t, makeFixedFilterCases)
}

func makeFixedFilterCases() ([]numCase, error) {
	notch := airframe.Filter{Kind: airframe.FilterNotch, At: "feedback", Hz: 118, WidthHz: 30}
	lp2 := airframe.Filter{Kind: airframe.FilterLowpass, At: "feedback", Hz: 180, Order: 2, Damping: 1 / math.Sqrt2}
	partial := airframe.Filter{Kind: airframe.FilterNotch, At: "feedback", Hz: 300, WidthHz: 60, DepthDB: 20}
	lp1 := airframe.Filter{Kind: airframe.FilterLowpass, At: "feedback", Hz: 250, Order: 1}
	type variant struct {
		name    string
		nt      airframe.NumericType
		form    airframe.Form
		doe     bool
		filters []airframe.Filter
	}
	vs := []variant{
		{"q15/pid/notch+lp2", airframe.Q15, airframe.FormPID, false, []airframe.Filter{notch, lp2}},
		{"q31/pid/notch+lp2", airframe.Q31, airframe.FormPID, false, []airframe.Filter{notch, lp2}},
		{"q15/pi/four", airframe.Q15, airframe.FormPI, false, []airframe.Filter{notch, lp2, partial, lp1}},
		{"q31/lead/notch+lp1", airframe.Q31, airframe.FormLead, false, []airframe.Filter{notch, lp1}},
		{"q15/pd/doe/lp1", airframe.Q15, airframe.FormPD, true, []airframe.Filter{lp1}},
	}
	var cs []numCase
	for _, v := range vs {
		p := filterAxis()
		p.Ctrl.Form, p.Ctrl.DerivativeOnError, p.Filters = v.form, v.doe, v.filters
		p.Ctrl.LeadZero, p.Ctrl.Refine, p.Ctrl.ThirdPole, p.Ctrl.AntiWindup = -20, true, 5, "backcalc"
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: v.nt, InputFullScale: 20, OutputFullScale: 0.5})
		if err != nil {
			return nil, fmt.Errorf("%s: %w", v.name, err)
		}
		if len(d.Num.Fixed.Sections) != len(v.filters) {
			return nil, fmt.Errorf("%s: %d sections realized for %d filters", v.name, len(d.Num.Fixed.Sections), len(v.filters))
		}
		cs = append(cs, numCase{v.name, d, d.Num})
	}
	return cs, nil
}

// chainReset is Reset of the filter chain in exact arithmetic: every
// section at its steady state for m.
func (o *oracle) chainReset(m *big.Int) {
	o.F = nil
	for _, q := range o.f.Sections {
		in, out := new(big.Int).Lsh(m, uint(q.FIn)), new(big.Int).Lsh(m, uint(q.F))
		st := [4]*big.Int{in, bi(0), out, bi(0)}
		if q.Second {
			st[1], st[3] = new(big.Int).Set(in), new(big.Int).Set(out)
		}
		o.F = append(o.F, st)
	}
}

// chainStep runs the filter chain in exact arithmetic on y and returns its
// output at the input LSB, recording every product, partial sum and
// output under the names of the range table.
func (o *oracle) chainStep(y *big.Int) *big.Int {
	f := o.f
	if len(f.Sections) == 0 {
		return y
	}
	y = o.sectionsStep("filter", f.Sections, &o.F, y)
	out := rsh(y, f.Sections[len(f.Sections)-1].F)
	o.rec("filter chain output y (the controller's measurement)", out)
	return out
}

// sectionsStep runs the direct form I sections secs, with states *sts
// (zero when nil), on x in exact arithmetic and returns the last output
// in its format, recording every product and partial sum under the
// range table's names of the chain prefix.
func (o *oracle) sectionsStep(prefix string, secs []FixedSection, sts *[][4]*big.Int, y *big.Int) *big.Int {
	if *sts == nil {
		for range secs {
			*sts = append(*sts, [4]*big.Int{bi(0), bi(0), bi(0), bi(0)})
		}
	}
	for k := range secs {
		q := &secs[k]
		st := &(*sts)[k]
		ts := q.terms()
		var sum *big.Int
		for i, t := range ts {
			x := map[string]*big.Int{"x": y, "x1": st[0], "x2": st[1], "y1": st[2], "y2": st[3]}[t.operand()]
			p := o.mul(fmt.Sprintf("%s %d %s·%s", prefix, k+1, t.name, t.operand()), *t.k, x)
			switch {
			case i == 0:
				sum = p
			case t.input:
				sum = new(big.Int).Add(sum, p)
			default:
				sum = new(big.Int).Sub(sum, p)
			}
			if i > 0 {
				o.rec(chainPartialName(prefix, k, ts, i), sum)
			}
		}
		if q.Second {
			st[1], st[3] = st[0], st[2]
		}
		st[0], st[2] = y, sum
		y = sum
	}
	return y
}

// dchainStep runs the derivative sections on Ud in exact arithmetic and
// returns the D term in the format of the last (Ud without them).
func (o *oracle) dchainStep(ud *big.Int) *big.Int {
	if len(o.f.DSections) == 0 {
		return ud
	}
	return o.sectionsStep("derivative filter", o.f.DSections, &o.D, ud)
}

// TestFixedFilterBitExactAndWithinBounds drives the integer controllers
// with filter chains with the hostile input of the PID tests (full-range
// random samples, jumps between the extremes, random walks, resets
// anywhere): the model must match the exact math/big oracle bit for bit,
// state for state (so no word ever wrapped), and every product, partial
// sum, filter state and controller intermediate must stay within the
// range table's proved bound, which must name it.
func TestFixedFilterBitExactAndWithinBounds(t *testing.T) {
	n := 20000
	if testing.Short() {
		n = 4000
	}
	for _, c := range fixedFilterCases(t) {
		for _, ck := range c.re.Checks {
			if (ck.Name == "overflow" || ck.Name == "limit_cycle" || ck.Name == "filter_rounding") && !ck.OK {
				t.Fatalf("%s: %s fails: %v", c.name, ck.Name, c.re.Warnings)
			}
		}
		o := excite(t, c, n, func(i int, s *FixedState, o *oracle) {
			for k := range c.re.Fixed.Sections {
				for j := 0; j < 4; j++ {
					if o.F != nil && s.F[k][j] != o.F[k][j].Int64() {
						t.Fatalf("%s: sample %d: filter %d state %d = %d, exact %v", c.name, i, k+1, j, s.F[k][j], o.F[k][j])
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
			if strings.HasPrefix(name, "filter") {
				seen++
			}
			if v, _ := new(big.Float).SetInt(m).Float64(); v > r.Bound {
				t.Errorf("%s: %s reached %g > proved bound %g", c.name, name, v, r.Bound)
			}
		}
		// Every filter row was exercised: five products and four sums of
		// a second-order section, three and two of a first-order one,
		// and the chain's output.
		want := 1
		for _, q := range c.re.Fixed.Sections {
			want += map[bool]int{true: 9, false: 5}[q.Second]
		}
		if seen != want {
			t.Errorf("%s: %d filter rows reached, want %d", c.name, seen, want)
		}
	}
}

// floatChainNodes runs the quantized chain of f in float64, exactly the
// structure of the integer code without its roundings, on the input u
// (raw units), and returns every node's value (the partial sums of each
// section, named as in the range table) at every sample: the direct
// simulation of the structure, independent of the transfer-function
// algebra of chainGains.
func floatChainNodes(f *Fixed, u []float64) map[string][]float64 {
	out := map[string][]float64{}
	type state struct{ x1, x2, y1, y2 float64 }
	st := make([]state, len(f.Sections))
	for _, x := range u {
		for k := range f.Sections {
			q := &f.Sections[k]
			b := q.Biquad()
			ts := q.terms()
			coef := map[string]float64{"B0": b.B0, "B1": b.B1, "B2": b.B2, "A1": b.A1, "A2": b.A2}
			val := map[string]float64{"x": x, "x1": st[k].x1, "x2": st[k].x2, "y1": st[k].y1, "y2": st[k].y2}
			sum := 0.0
			for i, t := range ts {
				p := coef[t.name] * val[t.operand()]
				if t.input || i == 0 {
					sum += p
				} else {
					sum -= p
				}
				if i > 0 {
					name := chainPartialName("filter", k, ts, i)
					out[name] = append(out[name], sum)
				}
			}
			st[k] = state{x, st[k].x1, sum, st[k].y1}
			x = sum
		}
	}
	return out
}

// TestFixedFilterWorstCase drives each node of each chain (every partial
// sum and output) with its brute-force worst-case input: the sign of the
// node's impulse response from the chain's input, reversed in time, at
// full scale (Oppenheim & Schafer, ℓ1 scaling: x[N−j] = sign h[j] makes
// the node at N equal Σ|h[j]|·max|x|, the largest it can be; from
// memory). The impulse response comes from a float64 simulation of the
// structure itself (floatChainNodes), not from the transfer functions of
// the proof. The exact integer chain must stay within the proved bound
// and come within its allowance of it: the data word reaches −2^(w−1)
// but only 2^(w−1) − 1 (up to ‖h‖₁ units), the roundings may work against
// the input (twice the noise part of the bound), and the response beyond
// N (below 10^−12 of it).
func TestFixedFilterWorstCase(t *testing.T) {
	for _, c := range fixedFilterCases(t) {
		f := c.re.Fixed
		bounds := map[string]Range{}
		for _, r := range c.re.Ranges {
			bounds[r.Name] = r
		}
		// The impulse responses, long enough for the slowest pole to
		// decay below 10^−13.
		rho := 0.0
		for _, q := range f.Sections {
			rho = math.Max(rho, sectionRadius(q.Biquad()))
		}
		n := decaySamples(rho, 1e-13)
		imp := make([]float64, n+1)
		imp[0] = 1
		hs := floatChainNodes(f, imp)
		m := int64(1) << (f.W - 1)
		for name, h := range hs {
			r, ok := bounds[name]
			if !ok {
				t.Fatalf("%s: no range row %q", c.name, name)
			}
			var k int
			if _, err := fmt.Sscanf(name, "filter %d", &k); err != nil {
				t.Fatal(err)
			}
			fk := f.Sections[k-1].F
			l1 := 0.0
			u := make([]int32, n+1)
			for j, v := range h {
				l1 += math.Abs(v)
				switch {
				case v > 0:
					u[n-j] = int32(m - 1)
				case v < 0:
					u[n-j] = int32(-m)
				}
			}
			o := newOracle(t, f)
			o.chainReset(bi(0))
			for _, x := range u {
				o.chainStep(bi(int64(x)))
			}
			got, _ := new(big.Float).SetInt(o.max[name]).Float64()
			lin := float64(l1*float64(m)) * math.Ldexp(1, fk)
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

// fixedFilterScript computes, for each chain (the quantized sections'
// coefficients), with NumPy's polynomial products and SciPy's
// signal.lfilter (an impulse long enough for the slowest pole to decay
// below 10^−16), the ℓ1 norm of every path of the proof (see chainGains:
// from the chain's input to each partial sum and output, and from each
// section's rounding to the partial sums of that section and the later
// ones); signal.freqz of each section, designed and quantized, on a grid;
// and the output of the quantized chain (lfilter section by section) for
// a given input.
const fixedFilterScript = `
import sys, json
import numpy as np
from scipy import signal
def l1(b, a, n):
    x = np.zeros(n); x[0] = 1.0
    return float(np.sum(np.abs(signal.lfilter(b, a, x))))
def run(d):
    secs = d["q"]
    B = [np.array(s[:3] if s[5] else s[:2]) for s in secs]
    A = [np.array([1.0] + (s[3:5] if s[5] else s[3:4])) for s in secs]
    rho = max(max(abs(np.roots(a))) if len(a) > 1 else 0 for a in A)
    n = 64 if rho == 0 else int(min(1 << 21, max(64, np.ceil(np.log(1e-16) / np.log(rho)))))
    lin, noise = [], []
    for k in range(len(secs)):
        bk, ak = B[k], A[k]
        nt = len(bk) + len(ak) - 1
        lk, nk = [], []
        for i in range(1, nt):
            bp = bk[:min(i + 1, len(bk))]
            na = i + 1 - len(bk)
            ap = np.concatenate([[0.0], ak[1:na + 1]]) if na > 0 else np.array([0.0])
            core = np.polysub(np.polymul(bp[::-1], ak[::-1]), np.polymul(ap[::-1], bk[::-1]))[::-1]
            # polynomials in z^-1: reversed for NumPy's descending powers
            num, den = core, np.array([1.0])
            for l in range(k):
                num = np.polymul(num[::-1], B[l][::-1])[::-1]
            for l in range(k + 1):
                den = np.polymul(den[::-1], A[l][::-1])[::-1]
            lk.append(l1(num, den, n))
            row = []
            for j in range(k):
                nm, dn = core, np.array([1.0])
                for l in range(j + 1, k):
                    nm = np.polymul(nm[::-1], B[l][::-1])[::-1]
                for l in range(j, k + 1):
                    dn = np.polymul(dn[::-1], A[l][::-1])[::-1]
                row.append(l1(nm, dn, n))
            row.append(l1(-ap, ak, n))
            nk.append(row)
        lin.append(lk); noise.append(nk)
    w = np.linspace(0, np.pi, 2049)
    fz = []
    for s, t in zip(d["designed"], secs):
        _, hd = signal.freqz(s[:3], [1.0, s[3], s[4]], worN=w)
        _, hq = signal.freqz(t[:3], [1.0, t[3], t[4]], worN=w)
        fz.append({"d": [[v.real, v.imag] for v in hd], "q": [[v.real, v.imag] for v in hq]})
    y = np.array(d["u"], dtype=float)
    for b, a in zip(B, A):
        y = signal.lfilter(b, a, y)
    return {"lin": lin, "noise": noise, "w": list(w), "freqz": fz, "y": list(y)}
json.dump([run(d) for d in json.load(sys.stdin)], sys.stdout)
`

// TestFixedFilterAgainstSciPy holds the filter chains against SciPy
// (scipy.signal, with the version pyref.Versions reports):
//
//   - every ℓ1 norm of the proof (chainGains) against the impulse response
//     summed by signal.lfilter: the proof's norm is the summed one times
//     1 + l1Margin, to 10^−9 (SciPy's own float64 sum of at most 2^21
//     terms agrees with an exact one to about 10^−12 relative);
//   - every filter row of the range table against its bound assembled
//     from SciPy's norms (ℓ1 of the input path times the full scale, plus
//     the roundings through their paths), to 2·10^−6;
//   - the quantized section's frequency response against the designed
//     one (signal.freqz of both): the difference is
//     (ΔB − H·ΔA)/A_q at every ω, so it is at most
//     (Σ|ΔB| + |H|·Σ|ΔA|)/|A_q| (the coefficient changes bounded one by
//     one), and the quantized section's DC gain is exactly 1;
//   - the integer chain's output (before its rounding to the input LSB)
//     against signal.lfilter of the quantized sections on the same input
//     (a chirp and full-scale noise): within the proved bound of its
//     rounding (Realization.FilterNoiseLSB), plus lfilter's own float64
//     rounding.
func TestFixedFilterAgainstSciPy(t *testing.T) {
	cases := fixedFilterCases(t)
	type in struct {
		Q        [][6]float64 `json:"q"`
		Designed [][5]float64 `json:"designed"`
		U        []int64      `json:"u"`
	}
	var ins []in
	const nu = 3000
	for _, c := range cases {
		var x in
		for i, q := range c.re.Fixed.Sections {
			b := q.Biquad()
			sec := 0.0
			if q.Second {
				sec = 1
			}
			x.Q = append(x.Q, [6]float64{b.B0, b.B1, b.B2, b.A1, b.A2, sec})
			dq := c.d.Plant.Sections[i]
			x.Designed = append(x.Designed, [5]float64{dq.B0, dq.B1, dq.B2, dq.A1, dq.A2})
		}
		// A chirp over the whole band at 0.7 of full scale, then
		// full-scale noise (a fixed xorshift).
		m := float64(int64(1) << (c.re.W - 1))
		var rng uint32 = 0x2545f491
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
			x.U = append(x.U, int64(math.Max(-m, math.Min(m-1, math.Round(v)))))
		}
		ins = append(ins, x)
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
		var qs []lti.Biquad
		for _, q := range f.Sections {
			qs = append(qs, q.Biquad())
		}
		gs := chainGains(qs)
		// The ℓ1 norms.
		for k := range gs {
			for i := range gs[k].lin {
				check := func(what string, got, want float64) {
					if want == 0 {
						if got != 0 {
							t.Errorf("%s: filter %d sum %d %s: %g, SciPy 0", c.name, k+1, i, what, got)
						}
						return
					}
					if r := got/want - 1; r < l1Margin-1e-9 || r > l1Margin+1e-9 {
						t.Errorf("%s: filter %d sum %d %s: ℓ1 %.12g, SciPy %.12g (ratio − 1 = %.3g, want %g)", c.name, k+1, i, what, got, want, r, l1Margin)
					}
				}
				check("from the input", gs[k].lin[i], out.Lin[k][i])
				for j := range gs[k].noise[i] {
					check(fmt.Sprintf("from filter %d's rounding", j+1), gs[k].noise[i][j], out.Noise[k][i][j])
				}
			}
		}
		// The range rows, assembled from SciPy's norms.
		m := math.Ldexp(1, f.W-1)
		es := make([]float64, len(f.Sections))
		for k := range f.Sections {
			q := &f.Sections[k]
			for _, t := range q.terms() {
				if t.k.Shift > 0 {
					es[k] += 0.5
				}
			}
		}
		rows := map[string]float64{}
		for _, r := range c.re.Ranges {
			rows[r.Name] = r.Bound
		}
		for k := range f.Sections {
			q := &f.Sections[k]
			ts := q.terms()
			direct := 0.0
			for i := range out.Lin[k] {
				if i == 0 && ts[0].k.Shift > 0 {
					direct += 0.5
				}
				if ts[i+1].k.Shift > 0 {
					direct += 0.5
				}
				want := out.Lin[k][i] * m * math.Ldexp(1, q.F)
				for j := 0; j < k; j++ {
					want += out.Noise[k][i][j] * es[j] * math.Ldexp(1, q.F-f.Sections[j].F)
				}
				want += out.Noise[k][i][k]*es[k] + direct
				name := chainPartialName("filter", k, ts, i+1)
				got, ok := rows[name]
				if !ok || math.Abs(got/want-1) > 2e-6 || got < want {
					t.Errorf("%s: %s: bound %.10g, from SciPy's ℓ1 norms %.10g", c.name, name, got, want)
				}
			}
		}
		// Frequency responses.
		for k, fz := range out.Freqz {
			d, q := c.d.Plant.Sections[k], f.Sections[k].Biquad()
			db := math.Abs(q.B0-d.B0) + math.Abs(q.B1-d.B1) + math.Abs(q.B2-d.B2)
			da := math.Abs(q.A1-d.A1) + math.Abs(q.A2-d.A2)
			worst := 0.0
			for i, w := range out.W {
				hd, hq := fz["d"][i].c(), fz["q"][i].c()
				z := cmplx.Exp(complex(0, -w))
				aq := cmplx.Abs(1 + complex(q.A1, 0)*z + complex(q.A2, 0)*z*z)
				lim := (db+cmplx.Abs(hd)*da)/aq*(1+1e-9) + 1e-13
				if e := cmplx.Abs(hq - hd); e > lim {
					t.Errorf("%s: filter %d at ω = %.4g: |Hq − H| = %.3g > %.3g", c.name, k+1, w, e, lim)
				} else {
					worst = math.Max(worst, e)
				}
				// SciPy's response of the designed section is the design's.
				if e := cmplx.Abs(d.Eval(cmplx.Exp(complex(0, w))) - hd); e > 1e-9*math.Max(1, cmplx.Abs(hd)) {
					t.Errorf("%s: filter %d at ω = %.4g: lti %v, SciPy %v", c.name, k+1, w, d.Eval(cmplx.Exp(complex(0, w))), hd)
				}
			}
			if dc := fz["q"][0].c(); cmplx.Abs(dc-1) > 1e-12 {
				t.Errorf("%s: filter %d: quantized DC gain %v, want 1", c.name, k+1, dc)
			}
			raw := f.Sections[k]
			if raw.B0.Raw+raw.B1.Raw+raw.B2.Raw != int64(1)<<raw.N+raw.A1.Raw+raw.A2.Raw {
				t.Errorf("%s: filter %d: B0 + B1 + B2 ≠ 2^N + A1 + A2 in integers", c.name, k+1)
			}
			t.Logf("%s: filter %d: largest |Hq − H| %.3g", c.name, k+1, worst)
		}
		// The integer chain against lfilter.
		var s FixedState
		last := len(f.Sections) - 1
		fl := math.Ldexp(1, -f.Sections[last].F)
		worst := 0.0
		for i, u := range ins[ci].U {
			f.Step(&s, 0, int32(u))
			e := math.Abs(float64(s.F[last][2])*fl - out.Y[i])
			worst = math.Max(worst, e)
		}
		// lfilter's own rounding: float64 (2^−53 relative) on terms of a
		// few full scales, some ten operations a sample per section,
		// through recursions of ℓ1 gain below 2^8: below 2^−40 of the
		// full scale (3·10^−8 LSB in q15; in q31, 2·10^−3 LSB, more than
		// the integer chain's own rounding, which TestFixedFilterRounding
		// checks against math/big instead).
		if lim := c.re.FilterNoiseLSB + math.Ldexp(m, -40); worst > lim {
			t.Errorf("%s: integer chain vs SciPy: %.4g LSB > proved rounding bound %.4g", c.name, worst, lim)
		}
		t.Logf("%s: integer chain vs SciPy lfilter: %.4g LSB (proved bound %.4g)", c.name, worst, c.re.FilterNoiseLSB)
	}
}

// decaySamples is the number of samples after which a pole of radius
// rho has decayed below tol, and at least 16 (more than the taps of any
// section's numerator).
func decaySamples(rho, tol float64) int {
	if !(rho > 0) {
		return 16
	}
	return max(16, int(math.Ceil(math.Log(tol)/math.Log(rho))))
}

// pyComplex decodes SciPy's [re, im] pairs.
type pyComplex [2]float64

func (c pyComplex) c() complex128 { return complex(c[0], c[1]) }

// TestFixedFilterRounding compares the integer chain with the same
// chain (the quantized coefficients, exact in binary) evaluated in
// math/big floating point of 256 bits, whose own rounding (2^−256
// relative) is nil at this scale, on full-scale noise, a full-scale
// square wave and a chirp: the difference at the last section's output,
// before its rounding to the input LSB, is the integer chain's rounding
// alone and must stay within its proved bound
// (Realization.FilterNoiseLSB), in q15 and in q31.
func TestFixedFilterRounding(t *testing.T) {
	for _, c := range fixedFilterCases(t) {
		f := c.re.Fixed
		m := int64(1) << (f.W - 1)
		const prec = 256
		nf := func(x float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(x) }
		type st struct{ x1, x2, y1, y2 *big.Float }
		ss := make([]st, len(f.Sections))
		for k := range ss {
			ss[k] = st{nf(0), nf(0), nf(0), nf(0)}
		}
		var s FixedState
		last := len(f.Sections) - 1
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
			x := nf(float64(u))
			for k := range f.Sections {
				b := f.Sections[k].Biquad()
				y := new(big.Float).SetPrec(prec).Mul(nf(b.B0), x)
				y.Add(y, new(big.Float).SetPrec(prec).Mul(nf(b.B1), ss[k].x1))
				y.Add(y, new(big.Float).SetPrec(prec).Mul(nf(b.B2), ss[k].x2))
				y.Sub(y, new(big.Float).SetPrec(prec).Mul(nf(b.A1), ss[k].y1))
				y.Sub(y, new(big.Float).SetPrec(prec).Mul(nf(b.A2), ss[k].y2))
				ss[k] = st{x, ss[k].x1, y, ss[k].y1}
				x = y
			}
			got := new(big.Float).SetPrec(prec).SetInt64(s.F[last][2])
			got.SetMantExp(got, -f.Sections[last].F)
			d, _ := new(big.Float).Sub(got, x).Float64()
			worst = math.Max(worst, math.Abs(d))
		}
		if worst > c.re.FilterNoiseLSB {
			t.Errorf("%s: integer chain vs exact: %.4g LSB > proved bound %.4g", c.name, worst, c.re.FilterNoiseLSB)
		}
		t.Logf("%s: rounding %.4g LSB, proved bound %.4g", c.name, worst, c.re.FilterNoiseLSB)
	}
}

// TestFixedFilterEngagement: after Reset with any measurement held
// constant, the chain passes it unchanged from the first step on (its DC
// gain is exactly 1 and it starts at its steady state; the proved
// rounding stays below half an LSB), so the command is the reset's output
// when the setpoint equals the measurement, as without a chain; and at
// rest after a full-scale excitation the chain's output returns to
// exactly 0.
func TestFixedFilterEngagement(t *testing.T) {
	for _, c := range fixedFilterCases(t) {
		f := c.re.Fixed
		if c.re.FilterNoiseLSB >= 0.5 {
			t.Fatalf("%s: rounding bound %g LSB is not below half an LSB", c.name, c.re.FilterNoiseLSB)
		}
		hi := int32(1)<<(f.W-1) - 1
		for _, y := range []int32{-hi - 1, -12345, -1, 0, 1, 777, hi / 3, hi} {
			var s FixedState
			out := int32(hi / 5)
			f.Reset(&s, out, y)
			o := newOracle(t, f)
			o.chainReset(bi(int64(y)))
			for i := 0; i < 300; i++ {
				if got := o.chainStep(bi(int64(y))); got.Int64() != int64(y) {
					t.Fatalf("%s: measured %d held: chain output %v at step %d", c.name, y, got, i)
				}
			}
			if f.Form.HasIntegral() || f.Form == airframe.FormLead {
				// The first command is the reset's output (bumpless),
				// when the output is within the limits.
				if u := f.Step(&s, y, y); u != out && f.Form != airframe.FormPD {
					t.Errorf("%s: reset to %d at measured %d: first command %d", c.name, out, y, u)
				}
			}
		}
		// At rest after full-scale noise.
		var s FixedState
		f.Reset(&s, 0, 0)
		var rng uint32 = 12345
		for i := 0; i < 500; i++ {
			rng ^= rng << 13
			rng ^= rng >> 17
			rng ^= rng << 5
			f.Step(&s, 0, int32(rng)>>(32-f.W))
		}
		o := newOracle(t, f)
		o.F = nil
		for k := range f.Sections {
			o.F = append(o.F, [4]*big.Int{bi(s.F[k][0]), bi(s.F[k][1]), bi(s.F[k][2]), bi(s.F[k][3])})
		}
		rho := 0.0
		for _, q := range f.Sections {
			rho = math.Max(rho, sectionRadius(q.Biquad()))
		}
		n := decaySamples(rho, 1e-12)
		var y *big.Int
		for i := 0; i < n; i++ {
			y = o.chainStep(bi(0))
		}
		if y.Sign() != 0 {
			t.Errorf("%s: chain output %v after %d samples at rest", c.name, y, n)
		}
	}
}

// TestFixedFilterUnstableQuantized: a notch so narrow that its poles
// round onto the unit circle in q15 (width 0.001 Hz at 1 kHz: the poles
// at 1 − 3·10^−6, the 14-bit A2 rounds to 1) has no bound: the overflow
// check fails and its warning names the section and the quantity; in q31
// the same notch is stable and proved.
func TestFixedFilterUnstableQuantized(t *testing.T) {
	q, err := lti.Notch(100, 0.001, math.Inf(1), 1000)
	if err != nil {
		t.Fatal(err)
	}
	if s := quantizeSection(q, 16); s.Stable() {
		t.Fatalf("q15 section %+v is stable", s.Biquad())
	}
	if s := quantizeSection(q, 32); !s.Stable() {
		t.Fatalf("q31 section %+v is not stable", s.Biquad())
	}
	p := filterAxis()
	p.Ctrl.Refine, p.Ctrl.ThirdPole = true, 5
	p.Filters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "feedback", Hz: 100, WidthHz: 0.001}}
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q15, InputFullScale: 20, OutputFullScale: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	var failed bool
	for _, ck := range d.Checks {
		if ck.Name == "overflow" {
			failed = !ck.OK
		}
	}
	var msg string
	n := 0
	for _, w := range d.Warnings {
		if strings.HasPrefix(w, "overflow: filter 1 (notch 100 Hz, -3 dB width 0.001 Hz) is not stable with its q15 coefficients") {
			msg = w
		}
		if strings.HasPrefix(w, "overflow:") {
			n++
		}
	}
	// One message: the rows after the unbounded section have no bound
	// either, for the same reason.
	if !failed || msg == "" || n != 1 || d.OK() {
		t.Errorf("q15: overflow failed %v, warning %q, %d overflow warnings, ok %v; warnings %q", failed, msg, n, d.OK(), d.Warnings)
	}
	// The chain's rounding bound is not called proved where the
	// overflow check fails (the report and the table print this).
	if got := d.Num.RoundingProof(); got != "holds only without overflow, not proved here" {
		t.Errorf("q15: the rounding bound reads %q", got)
	}
	t.Log(msg)
	d31, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q31, InputFullScale: 20, OutputFullScale: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	if c, ok := d31.Num.Check("overflow"); !ok || !c.OK || d31.Num.RoundingProof() != "proved" {
		t.Errorf("q31: overflow check %+v (present %v), the rounding bound reads %q", c, ok, d31.Num.RoundingProof())
	}
}

// TestQuantizeSection checks the quantization rule on the sections of
// every kind: one format for the five coefficients, the most fractional
// bits that fit the word (a larger format would not hold the largest
// coefficient), each within one unit of its rounding except B1, which
// carries the DC correction of at most 2 units, and B0 = B2 kept where
// the design has it (a full notch keeps its zeros on the unit circle).
func TestQuantizeSection(t *testing.T) {
	var qs []lti.Biquad
	for _, hz := range []float64{5, 40, 118, 300, 450} {
		n, _ := lti.Notch(hz, hz/4, math.Inf(1), 1000)
		pn, _ := lti.Notch(hz, hz/4, 20, 1000)
		l2, _ := lti.Lowpass2(hz, 0.3, 1000)
		l1, _ := lti.Lowpass1(hz, 1000)
		qs = append(qs, n, pn, l2, l1)
	}
	for _, w := range []int{16, 32} {
		for _, q := range qs {
			s := quantizeSection(q, w)
			big := math.Max(math.Max(math.Abs(q.B0), math.Abs(q.B1)), math.Max(math.Max(math.Abs(q.B2), math.Abs(q.A1)), math.Abs(q.A2)))
			hi := math.Ldexp(1, w-1) - 1
			for _, c := range []QCoeff{s.B0, s.B1, s.B2, s.A1, s.A2} {
				if c.Frac != s.N || math.Abs(float64(c.Raw)) > hi+1 {
					t.Errorf("w %d %+v: coefficient %+v, N %d", w, q, c, s.N)
				}
			}
			if math.Round(big*math.Ldexp(1, s.N+1)) <= hi && s.N < w-1 {
				t.Errorf("w %d %+v: N = %d, but N + 1 holds the largest coefficient %g", w, q, s.N, big)
			}
			b := s.Biquad()
			u := math.Ldexp(1, -s.N)
			for _, e := range []float64{b.B0 - q.B0, b.B2 - q.B2, b.A1 - q.A1, b.A2 - q.A2} {
				if math.Abs(e) > u/2 {
					t.Errorf("w %d %+v: rounding error %g > half a unit", w, q, e)
				}
			}
			if math.Abs(b.B1-q.B1) > 2.5*u {
				t.Errorf("w %d %+v: B1 moved by %g units", w, q, (b.B1-q.B1)/u)
			}
			if q.B0 == q.B2 && s.B0.Raw != s.B2.Raw {
				t.Errorf("w %d %+v: B0 ≠ B2 after quantization", w, q)
			}
			if s.B0.Raw+s.B1.Raw+s.B2.Raw != int64(1)<<s.N+s.A1.Raw+s.A2.Raw {
				t.Errorf("w %d %+v: DC gain not exactly 1", w, q)
			}
		}
	}
}

// sectionRadius returns the largest pole radius of q: √A2 for a complex
// pair, the larger root's magnitude for real poles, |A1| for a
// first-order section.
func sectionRadius(q lti.Biquad) float64 {
	if q.A2 == 0 {
		return math.Abs(q.A1)
	}
	d := q.A1*q.A1 - 4*q.A2
	if d < 0 {
		return math.Sqrt(q.A2)
	}
	r := math.Sqrt(d)
	return math.Max(math.Abs(-q.A1+r), math.Abs(-q.A1-r)) / 2
}

// TestNotchSuggestedFixedPoint: the notch suggestion works in fixed point
// as in float (TestNotchBuysGain): on the compliant plant without a
// filter the q15 PID misses the spec, and the design suggests the notch
// on the 40 Hz mode with the figures of the design that has it, whose
// q15 realization (the notch in direct form I with its proofs) meets
// every check; with the notch, nothing is suggested.
func TestNotchSuggestedFixedPoint(t *testing.T) {
	loop := airframe.Loop{Hz: 1000, ComputeDelay: 1}
	num := airframe.Numeric{Type: airframe.Q15, InputFullScale: 16, OutputFullScale: 0.5}
	p := compliantAxis()
	d0, err := DesignAxis(p, loop, num)
	if err != nil {
		t.Fatal(err)
	}
	p.Filters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "feedback", Hz: 40, WidthHz: 16}}
	d1, err := DesignAxis(p, loop, num)
	if err != nil {
		t.Fatal(err)
	}
	if d0.OK() || !d1.OK() {
		t.Fatalf("met without the notch %v, with it %v; want false, true (%q)", d0.OK(), d1.OK(), d1.Warnings)
	}
	want := fmt.Sprintf(`kind = "notch", hz = 40, width_hz = 16 (what hz = "auto" gives) the design meets every check (without it, it does not), Ki %.4g against %.4g now`, d1.Cont.Ctrl.Ki, d0.Cont.Ctrl.Ki)
	found, again := false, false
	for _, w := range d0.Warnings {
		found = found || strings.Contains(w, want)
	}
	for _, w := range d1.Warnings {
		again = again || strings.Contains(w, "no notch covers it")
	}
	if !found || again {
		t.Errorf("suggestion %q among %q: %v; suggested again with the notch: %v", want, d0.Warnings, found, again)
	}
}

// TestFixedFilterRoundingCheck: a notch low and narrow for q15 (10 Hz,
// 1 Hz wide at 1 kHz: poles 0.003 inside the circle at 0.063 rad, its
// recursion's ℓ1 gain above 3000) is stable once quantized, but its
// rounding, through that gain, can reach half an input LSB at the
// chain's output: the filter_rounding check fails with its warning; in
// q31 the same notch's rounding is far below it.
func TestFixedFilterRoundingCheck(t *testing.T) {
	for _, tc := range []struct {
		nt airframe.NumericType
		ok bool
	}{{airframe.Q15, false}, {airframe.Q31, true}} {
		p := filterAxis()
		p.Ctrl.Refine, p.Ctrl.ThirdPole = true, 5
		p.Filters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "feedback", Hz: 10, WidthHz: 1}}
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: tc.nt, InputFullScale: 20, OutputFullScale: 0.5})
		if err != nil {
			t.Fatal(err)
		}
		var ck *synth.Check
		for i := range d.Checks {
			if d.Checks[i].Name == "filter_rounding" {
				ck = &d.Checks[i]
			}
		}
		if ck == nil || ck.OK != tc.ok || ck.Value != d.Num.FilterNoiseLSB || ck.Limit != 0.5 {
			t.Fatalf("%s: check %+v, rounding bound %g", tc.nt, ck, d.Num.FilterNoiseLSB)
		}
		warned := false
		for _, w := range d.Warnings {
			warned = warned || strings.HasPrefix(w, "filter_rounding: the filter chain's rounding can reach")
		}
		if warned == tc.ok {
			t.Errorf("%s: warning %v; warnings %q", tc.nt, warned, d.Warnings)
		}
		t.Logf("%s: rounding bound %.4g input LSB", tc.nt, ck.Value)
	}
}
