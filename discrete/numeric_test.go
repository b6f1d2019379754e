package discrete

import (
	"errors"
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

// TestQuantizedCoefficientRounding: every coefficient's raw word is its
// raw-unit value rounded half up at its fractional bits, computed exactly
// with math/big; it fits the word; and its format is the most precise the
// word allows (one more fractional bit would not fit), unless capped at
// 2w − 2 (shift range) or, for a limit, saturated at the word's top
// (Q0.(w−1) data, common practice). Q-format notation Qm.n with
// m + n = bits − 1 is common practice.
func TestQuantizedCoefficientRounding(t *testing.T) {
	for _, c := range numCases(t) {
		w := c.re.W
		for _, co := range c.re.Coefficients {
			want := bigRoundHalfUp(co.Scaled, co.FracBits)
			if co.Name == "IL" {
				want = bigRoundHalfUp(co.Scaled, co.FracBits) // Q in the integrator's word
			}
			bits := co.Bits
			limit := co.Name == "Lo" || co.Name == "Hi"
			if limit {
				want = big.NewInt(clampBig(want, bits))
			}
			if !want.IsInt64() || want.Int64() != co.Raw {
				t.Errorf("%s: %s raw %d, exact rounding %s", c.name, co.Name, co.Raw, want)
			}
			if !fitsBits(co.Raw, bits) {
				t.Errorf("%s: %s raw %d does not fit %d bits", c.name, co.Name, co.Raw, bits)
			}
			if !limit && co.Name != "IL" && co.FracBits < 2*w-2 && co.Scaled != 0 {
				if next := bigRoundHalfUp(co.Scaled, co.FracBits+1); next.IsInt64() && fitsBits(next.Int64(), bits) {
					t.Errorf("%s: %s at %s: one more fractional bit (%s) would still fit", c.name, co.Name, co.Format, next)
				}
			}
			if want := "Q" + itoa(bits-1-co.FracBits) + "." + itoa(co.FracBits); co.Format != want {
				t.Errorf("%s: %s format %s, want %s", c.name, co.Name, co.Format, want)
			}
			// The quantized value is the raw word back in design units.
			if back := math.Ldexp(float64(co.Raw), -co.FracBits); math.Abs(back-co.Scaled) > math.Ldexp(1, -co.FracBits) && !limit {
				t.Errorf("%s: %s quantized %g far from %g", c.name, co.Name, back, co.Scaled)
			}
			if co.Value != 0 && math.Abs(co.RelError-(co.Quantized-co.Value)/co.Value) > 1e-15 {
				t.Errorf("%s: %s rel error %g", c.name, co.Name, co.RelError)
			}
		}
	}
}

func itoa(i int) string { return big.NewInt(int64(i)).String() }

// TestFloatRealization: float32 coefficients are the IEEE 754 binary32
// roundings of the design's (relative error ≤ 2^−24, half an ulp), float64
// ones are exact, and float32 re-verifies the loop with its coefficients.
func TestFloatRealization(t *testing.T) {
	for _, nt := range []airframe.NumericType{airframe.Float32, airframe.Float64} {
		d, err := DesignAxis(numProblem(airframe.FormPID), airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: nt})
		if err != nil {
			t.Fatal(err)
		}
		re := d.Num
		if re == nil || len(re.Coefficients) == 0 || re.Fixed != nil || len(re.Ranges) != 0 {
			t.Fatalf("%s: realization %+v", nt, re)
		}
		for _, c := range re.Coefficients {
			if c.Format != string(nt) {
				t.Errorf("%s: %s format %q", nt, c.Name, c.Format)
			}
			lim := 0.0
			if nt == airframe.Float32 {
				lim = 0x1p-24
			}
			if math.Abs(c.RelError) > lim {
				t.Errorf("%s: %s relative error %g > %g", nt, c.Name, c.RelError, lim)
			}
			if nt == airframe.Float32 && c.Quantized != float64(float32(c.Value)) {
				t.Errorf("%s: %s quantized %v", nt, c.Name, c.Quantized)
			}
		}
		if (re.Quantized != nil) != (nt == airframe.Float32) {
			t.Errorf("%s: quantized verification present: %v", nt, re.Quantized != nil)
		}
		if nt == airframe.Float32 {
			n := 0
			for _, c := range re.Checks {
				if strings.HasPrefix(c.Name, "quantized_") {
					n++
				}
			}
			if n < 3 {
				t.Errorf("float32: %d quantized checks", n)
			}
		}
	}
}

// ctrlPolys returns the controller's feedback path C_fb = Nc/Dc as
// polynomials in z (ascending powers), written from the difference
// equations of Coeffs independently of the project's state-space loop:
// C_fb = Kp + G0 + G01/(z − 1) + Bd(z − 1)/(z − Ad), lead
// (B0·z + B1)/(z + A1).
func ctrlPolys(k Coeffs) (nc, dc lti.Poly) {
	zm1 := lti.Poly{-1, 1}
	if k.Form == airframe.FormLead {
		return lti.Poly{k.B1, k.B0}, lti.Poly{k.A1, 1}
	}
	dc = lti.Poly{1}
	if k.Form.HasIntegral() {
		dc = lti.PolyMul(dc, zm1)
	}
	if k.Form.HasDerivative() {
		dc = lti.PolyMul(dc, lti.Poly{-k.Ad, 1})
	}
	nc = dc.Scale(k.Kp)
	if k.Form.HasIntegral() {
		nc = lti.PolyAdd(nc, dc.Scale(k.G0))
		rest := lti.Poly{k.G01}
		if k.Form.HasDerivative() {
			rest = lti.Poly{-k.Ad * k.G01, k.G01}
		}
		nc = lti.PolyAdd(nc, rest)
	}
	if k.Form.HasDerivative() {
		zz := zm1
		if k.Form.HasIntegral() {
			zz = lti.PolyMul(zm1, zm1)
		}
		nc = lti.PolyAdd(nc, zz.Scale(k.Bd))
	}
	return nc, dc
}

// plantScript evaluates the sampled plant P(z) = C(zI − A)⁻¹B and its
// derivative P'(z) = −C(zI − A)⁻²B at complex points with NumPy.
const plantScript = `
import json, sys
import numpy as np
out = []
for c in json.load(sys.stdin):
    n = c["n"]
    A = np.array(c["A"]).reshape(n, n)
    B = np.array(c["B"]).reshape(n, 1)
    C = np.array(c["C"]).reshape(1, n)
    res = []
    for re, im in c["z"]:
        M = (re + 1j * im) * np.eye(n) - A
        x = np.linalg.solve(M, B)
        p = (C @ x)[0, 0]
        dp = -(C @ np.linalg.solve(M, x))[0, 0]
        res.append([p.real, p.imag, dp.real, dp.imag])
    out.append(res)
json.dump(out, sys.stdout)
`

// TestPoleShiftMatchesSensitivity compares the shift of the closed-loop
// poles caused by coefficient quantization (the project's verification
// with quantized coefficients against the design's) with the first-order
// estimate from the characteristic polynomial A(z) = Dp·(Dc·z^d + Nc·P):
// for a root p, dp ≈ −Σ_k (∂A/∂a_k)(p)·δa_k / A'(p) (Oppenheim & Schafer,
// sensitivity of the roots of a polynomial to its coefficients, from
// memory), which at a closed-loop pole (where Dc·z^d + Nc·P = 0 and
// Dp ≠ 0) is the same with F = Dc·z^d + Nc·P in place of A. The plant
// P and P' come from NumPy's linear solver at each pole.
func TestPoleShiftMatchesSensitivity(t *testing.T) {
	var cs []numCase
	for _, c := range numCases(t) {
		if c.re.W != 8 { // the 8-bit shifts are too large for a first-order estimate
			cs = append(cs, c)
		}
	}
	var in []map[string]any
	var poles [][]complex128
	for _, c := range cs {
		pl := c.d.Plant
		var ps []complex128
		var zs [][2]float64
		for _, p := range c.d.Verif.Poles {
			if cmplx.Abs(p) > 1e-6 { // compute-delay and filter-memory poles sit at the origin
				ps = append(ps, p)
				zs = append(zs, [2]float64{real(p), imag(p)})
			}
		}
		poles = append(poles, ps)
		in = append(in, map[string]any{"n": pl.N, "A": pl.A, "B": pl.B, "C": pl.Cm, "z": zs})
	}
	var ref [][][4]float64
	pyref.Run(t, plantScript, in, &ref)
	ver, _ := pyref.Versions()
	checked := 0
	for i, c := range cs {
		k, d := c.d.Coeffs, c.d.Loop.ComputeDelay+c.d.Plant.Delay
		nc, dc := ctrlPolys(k)
		type part struct {
			da     float64
			dn, dd lti.Poly // ∂Nc/∂a_k, ∂Dc/∂a_k
		}
		var parts []part
		for _, sp := range coefSpecs(&k) {
			if !sp.linear {
				continue
			}
			var co Coefficient
			for _, x := range c.re.Coefficients {
				if x.Name == sp.name {
					co = x
				}
			}
			// Nc and Dc are affine in each coefficient alone, so the
			// difference at a_k = 1 and a_k = 0 is the exact derivative.
			k1, k0 := k, k
			*sp.val(&k1), *sp.val(&k0) = 1, 0
			n1, d1 := ctrlPolys(k1)
			n0, d0 := ctrlPolys(k0)
			parts = append(parts, part{co.Quantized - co.Value, lti.PolyAdd(n1, n0.Scale(-1)), lti.PolyAdd(d1, d0.Scale(-1))})
		}
		zd := func(z complex128, m int) complex128 {
			v := complex(1, 0)
			for j := 0; j < m; j++ {
				v *= z
			}
			return v
		}
		for j, p := range poles[i] {
			r := ref[i][j]
			P, dP := complex(r[0], r[1]), complex(r[2], r[3])
			// The design's pole is a root of F (this checks ctrlPolys and
			// the project's closed loop against NumPy's plant): relative
			// residual 1e-9, far above float64 rounding of these few terms.
			f := dc.Eval(p)*zd(p, d) + nc.Eval(p)*P
			if scale := cmplx.Abs(dc.Eval(p)*zd(p, d)) + cmplx.Abs(nc.Eval(p)*P); cmplx.Abs(f) > 1e-9*scale {
				t.Errorf("%s: design pole %v: |F(p)| = %g of %g", c.name, p, cmplx.Abs(f), scale)
				continue
			}
			df := dc.Deriv().Eval(p)*zd(p, d) + nc.Deriv().Eval(p)*P + nc.Eval(p)*dP
			if d > 0 {
				df += dc.Eval(p) * complex(float64(d), 0) * zd(p, d-1)
			}
			var num complex128
			for _, pt := range parts {
				num += (pt.dd.Eval(p)*zd(p, d) + pt.dn.Eval(p)*P) * complex(pt.da, 0)
			}
			est := -num / df
			act, sep := nearest(c.re.Quantized.Poles, p), math.Inf(1)
			for _, q := range c.d.Verif.Poles {
				if q != p {
					sep = math.Min(sep, cmplx.Abs(q-p))
				}
			}
			if sep < 1e3*cmplx.Abs(est) {
				continue // near a multiple root: first order does not hold
			}
			// The neglected second-order term is about |dp|²/sep ≤ 0.1 %
			// of |dp|; 2 % more covers the eigenvalue solver's accuracy
			// relative to such tiny shifts, plus 1e-13 absolute.
			if d := cmplx.Abs((act - p) - est); d > 0.02*cmplx.Abs(est)+1e-13 {
				t.Errorf("%s: pole %v moved by %v, first-order estimate %v (%s)", c.name, p, act-p, est, ver)
			}
			checked++
		}
	}
	if checked < 20 {
		t.Errorf("only %d poles compared", checked)
	}
}

func nearest(ps []complex128, p complex128) complex128 {
	best := complex(math.Inf(1), 0)
	for _, q := range ps {
		if cmplx.Abs(q-p) < cmplx.Abs(best-p) {
			best = q
		}
	}
	return best
}

// TestResponsibleCoefficient spoils one coefficient of an otherwise exact
// realization and expects the quantized check to fail and name it.
func TestResponsibleCoefficient(t *testing.T) {
	d, err := DesignAxis(numProblem(airframe.FormPID), airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Float64})
	if err != nil {
		t.Fatal(err)
	}
	if !d.OK() {
		t.Fatalf("the demo design fails: %+v", d.Checks)
	}
	for _, spoil := range []string{"Kp", "Bd", "G01"} {
		re := &Realization{Type: airframe.Q15}
		kq := d.Coeffs
		for _, cs := range coefSpecs(&d.Coeffs) {
			v := *cs.val(&d.Coeffs)
			q := v
			if cs.name == spoil {
				q = v * 1.6 // far more than any quantization: the loop breaks
			}
			*cs.val(&kq) = q
			re.Coefficients = append(re.Coefficients, Coefficient{Name: cs.name, Value: v, Quantized: q, Format: "Q1.14"})
		}
		re.QuantizedCoeffs = kq
		if err := re.verifyQuantized(d, 16); err != nil {
			t.Fatal(err)
		}
		failed := false
		for _, c := range re.Checks {
			failed = failed || !c.OK
		}
		if !failed {
			t.Fatalf("%s × 1.6: every quantized check passes", spoil)
		}
		if len(re.Warnings) == 0 || !strings.Contains(re.Warnings[0], "responsible coefficient: "+spoil+" ") {
			t.Errorf("%s × 1.6: warnings %q", spoil, re.Warnings)
		}
	}
}

// TestEightBitAnalogueFailsQuantized: the 8-bit analogues (Q0.7 data) of
// a lead at 1 kHz and a PID at 4 kHz (demo data) cannot hold the design:
// a quantized check fails, and the warning
// names a coefficient whose quantization alone moves that metric toward
// failure more than any other's, checked here by quantizing each alone.
func TestEightBitAnalogueFailsQuantized(t *testing.T) {
	n := 0
	for _, c := range numCases(t) {
		if c.re.W == 8 && strings.HasPrefix(c.name, "q7/lead") || strings.HasPrefix(c.name, "q7/pid@4kHz") {
			eightBitNamesResponsible(t, c)
			n++
		}
	}
	if n != 2 {
		t.Fatalf("%d 8-bit cases", n)
	}
}

func eightBitNamesResponsible(t *testing.T, c numCase) {
	var failed *synth.Check
	for i, ck := range c.re.Checks {
		if strings.HasPrefix(ck.Name, "quantized_") && !ck.OK {
			failed = &c.re.Checks[i]
			break
		}
	}
	if failed == nil {
		t.Fatalf("%s: no quantized check fails at 8 bits: %+v", c.name, c.re.Checks)
	}
	var named string
	for _, w := range c.re.Warnings {
		if strings.HasPrefix(w, failed.Name+":") {
			if i := strings.Index(w, "responsible coefficient: "); i >= 0 {
				named = strings.Fields(w[i+len("responsible coefficient: "):])[0]
			}
		}
	}
	if named == "" {
		t.Fatalf("%s: no responsible coefficient named: %q", c.name, c.re.Warnings)
	}
	// Quantize each linear coefficient alone, as an independent loop here.
	viol := map[string]float64{}
	for _, cs := range coefSpecs(&c.d.Coeffs) {
		if !cs.linear {
			continue
		}
		k := c.d.Coeffs
		for _, co := range c.re.Coefficients {
			if co.Name == cs.name {
				*cs.val(&k) = co.Quantized
			}
		}
		v, err := Verify(c.d.Problem, c.d.Plant, k, c.d.Loop.ComputeDelay)
		if err != nil {
			t.Fatal(err)
		}
		for _, ck := range quantizedChecks(c.d.Problem.Spec, v) {
			if ck.Name == failed.Name {
				x := ck.Value - ck.Limit
				if !ck.Upper {
					x = -x
				}
				if !ck.OK && !(x > 0) {
					x = math.Inf(1)
				}
				viol[cs.name] = x
			}
		}
	}
	for name, x := range viol {
		if x > viol[named] {
			t.Errorf("%s: %s names %s (%g), but %s alone goes further (%g)", c.name, failed.Name, named, viol[named], name, x)
		}
	}
}

// TestNumericInputErrors: the bad numeric settings are *InputError with
// the key.
func TestNumericInputErrors(t *testing.T) {
	base := numProblem(airframe.FormPID)
	cases := []struct {
		name string
		num  airframe.Numeric
		key  string
		msg  string
	}{
		{"input full scale too coarse", airframe.Numeric{Type: airframe.Q15, InputFullScale: 20000, OutputFullScale: 1}, "numeric.input_full_scale", "bits (< 4) of resolution"},
		{"output full scale too coarse", airframe.Numeric{Type: airframe.Q15, InputFullScale: 100, OutputFullScale: 2000}, "numeric.output_full_scale", "bits (< 4) of command resolution"},
		{"q31 input full scale too coarse", airframe.Numeric{Type: airframe.Q31, InputFullScale: 1e9, OutputFullScale: 1}, "numeric.input_full_scale", "bits (< 4) of resolution"},
		{"q31 output full scale too coarse", airframe.Numeric{Type: airframe.Q31, InputFullScale: 100, OutputFullScale: 1e8}, "numeric.output_full_scale", "bits (< 4) of command resolution"},
		{"limit beyond output full scale", airframe.Numeric{Type: airframe.Q31, InputFullScale: 100, OutputFullScale: 0.5}, "numeric.output_full_scale", "cannot hold the limit"},
		{"zero full scale", airframe.Numeric{Type: airframe.Q15, InputFullScale: 0, OutputFullScale: 1}, "numeric.input_full_scale", "finite number > 0"},
		{"infinite full scale", airframe.Numeric{Type: airframe.Q31, InputFullScale: 100, OutputFullScale: math.Inf(1)}, "numeric.output_full_scale", "finite number > 0"},
		{"NaN full scale", airframe.Numeric{Type: airframe.Q31, InputFullScale: math.NaN(), OutputFullScale: 1}, "numeric.input_full_scale", "finite number > 0"},
		{"unknown type", airframe.Numeric{Type: "q7"}, "numeric.type", "must be one of"},
	}
	for _, tc := range cases {
		_, err := DesignAxis(base, airframe.Loop{Hz: 1000, ComputeDelay: 1}, tc.num)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%s: error %v, want an *InputError", tc.name, err)
			continue
		}
		if ie.Key != tc.key || !strings.Contains(ie.Msg, tc.msg) || !strings.Contains(err.Error(), tc.key+" = ") {
			t.Errorf("%s: %v", tc.name, err)
		}
		// The wider type is a remedy only from q15.
		if strings.Contains(tc.msg, "bits (< 4)") && strings.HasSuffix(ie.Msg, ", or q31") != (tc.num.Type == airframe.Q15) {
			t.Errorf("%s: %q: suggests q31 from %s", tc.name, ie.Msg, tc.num.Type)
		}
	}
	// The 20000 rad/s q15 case in numbers: LSB 20000/2^15 ≈ 0.61, against
	// the settling band of the reference step (common practice: a 4-bit
	// margin is 16 LSB).
	d, err := DesignAxis(base, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q31, InputFullScale: 20000, OutputFullScale: 1})
	if err != nil {
		t.Fatal(err)
	}
	re := d.Num
	want := math.Log2(base.Spec.Band * re.ReferenceStep / (20000 / math.Ldexp(1, 31)))
	if math.Abs(re.InputResolutionBits-want) > 1e-12 || want-16 >= 4 {
		t.Errorf("q31 resolution %g bits, want %g (and below 4 bits at q15)", re.InputResolutionBits, want)
	}
	if lin := d.Verif.Saturated.LinearPeakCommand; math.Abs(re.ReferenceStep-math.Min(1/lin, 20000)) > 1e-12*re.ReferenceStep {
		t.Errorf("reference step %g, want min(|limit|/peak, full scale) = %g", re.ReferenceStep, math.Min(1/lin, 20000))
	}
}

// TestOverflowCheckFails: an integrator limit far beyond what the 32-bit
// accumulator holds at q15 (demo data) fails the overflow check, and the
// warning names the variable, its bound and capacity and a way out.
func TestOverflowCheckFails(t *testing.T) {
	p := numProblem(airframe.FormPID)
	p.Ctrl.IntegratorLimit = 1e5
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q15, InputFullScale: 100, OutputFullScale: 1})
	if err != nil {
		t.Fatal(err)
	}
	var ok = true
	for _, c := range d.Checks {
		if c.Name == "overflow" {
			ok = c.OK
		}
	}
	if ok || d.OK() {
		t.Fatal("the over-ranged integrator passes the overflow check")
	}
	msg := strings.Join(d.Warnings, "\n")
	for _, want := range []string{"overflow: integrator S can reach", "32-bit word holds 2.14748e+09", "way out:", "control.integrator_limit", "q31"} {
		if !strings.Contains(msg, want) {
			t.Errorf("warnings lack %q:\n%s", want, msg)
		}
	}
	// q31 holds it.
	d, err = DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q31, InputFullScale: 100, OutputFullScale: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range d.Checks {
		if c.Name == "overflow" && !c.OK {
			t.Errorf("q31 overflows too: %v", d.Warnings)
		}
	}
}

// TestRangesConsistent: headroom is log2(capacity/bound), the saturated
// rows exceed their capacity, and every other row fits.
func TestRangesConsistent(t *testing.T) {
	for _, c := range numCases(t) {
		for _, r := range c.re.Ranges {
			bits := math.Round(math.Log2(r.Capacity+1)) + 1
			want := math.Min(math.Log2(r.Capacity/math.Max(r.Bound, 1)), bits)
			if math.Abs(r.HeadroomBits-want) > 1e-12 {
				t.Errorf("%s: %s headroom %g, want %g", c.name, r.Name, r.HeadroomBits, want)
			}
			if r.Saturated == (r.Bound <= r.Capacity) {
				t.Errorf("%s: %s bound %g capacity %g saturated %v", c.name, r.Name, r.Bound, r.Capacity, r.Saturated)
			}
		}
	}
}

// BenchmarkFixedAxis is the numeric realization of one q15 PID axis:
// scaling, formats and bounds, the quantized re-verification and the
// accuracy run against the float64 model (target ≤ 1 ms).
func BenchmarkFixedAxis(b *testing.B) {
	p := numProblem(airframe.FormPID)
	d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: airframe.Q15, InputFullScale: 100, OutputFullScale: 1})
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if _, err := RealizeNumeric(d); err != nil {
			b.Fatal(err)
		}
	}
}

// FuzzRealizeNumeric: any full scales, integrator limit and form give a
// realization or an error, never a panic, and a realization without a
// possible overflow runs its integer model bit for bit like the exact
// oracle on a short hostile sequence.
func FuzzRealizeNumeric(f *testing.F) {
	f.Add(100.0, 1.0, 1.0, uint8(3), true)
	f.Add(1e-3, 1e6, 1e5, uint8(4), false)
	f.Add(5000.0, 1.0, 0.5, uint8(1), true)
	f.Add(math.Inf(1), math.NaN(), -1.0, uint8(2), false)
	f.Fuzz(func(t *testing.T, fin, fout, il float64, form uint8, q31 bool) {
		p := numProblem(airframe.Forms()[int(form)%len(airframe.Forms())])
		if il > 0 && !math.IsInf(il, 0) {
			p.Ctrl.IntegratorLimit = il
		}
		nt := airframe.Q15
		if q31 {
			nt = airframe.Q31
		}
		d, err := DesignAxis(p, airframe.Loop{Hz: 1000, ComputeDelay: 1}, airframe.Numeric{Type: nt, InputFullScale: fin, OutputFullScale: fout})
		if err != nil {
			return
		}
		for _, c := range d.Num.Checks {
			if c.Name == "overflow" && !c.OK {
				return
			}
		}
		excite(t, numCase{name: "fuzz", d: d, re: d.Num}, 600, nil)
	})
}
