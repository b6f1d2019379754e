package discrete

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// InputError is a numeric setting the realization cannot work with: bad
// input (exit status 2 in the CLI), naming the airframe key.
type InputError struct {
	Key   string // e.g. "numeric.input_full_scale"
	Value string // the value as given
	Msg   string // what is wrong and what is allowed
}

func (e *InputError) Error() string {
	return fmt.Sprintf("%s = %s: %s", e.Key, e.Value, e.Msg)
}

// Coefficient is one row of the coefficient table of a realization.
type Coefficient struct {
	Name string
	// Value is the coefficient as designed and Quantized as the generated
	// code holds it, both in the units of Coeffs (gains in command per
	// rate unit, limits in command units).
	Value, Quantized float64
	// RelError is (Quantized − Value)/Value; 0 when Value is 0.
	RelError float64
	// Format is "float32", "float64", or "Qm.n" for fixed point: m integer
	// and n fractional bits, sign not counted, m + n = bits − 1 (common
	// practice; m is negative for a coefficient below 2^−1 that keeps all
	// its bits fractional, so that the word holds the most precision).
	Format string
	// The fixed-point fields (zero for float types): Scaled is the value
	// in raw units (a gain times in_fs/out_fs, a limit over out_fs), Raw
	// the integer in the word, FracBits n and Bits the word's width.
	Scaled   float64
	Raw      int64
	FracBits int
	Bits     int
}

// Range is one row of the range table: a state or intermediate of the
// integer controller, its proved bound and the capacity of its word.
type Range struct {
	Name   string
	Format string // Qm.n relative to the full scale of the signal it carries
	// Bound is the largest |value| proved from the input ranges, in
	// integer units of the word; Capacity is 2^(bits−1) − 1.
	Bound, Capacity float64
	// HeadroomBits is log2(Capacity/Bound) (capped at the word's bits);
	// negative when the bound exceeds the capacity.
	HeadroomBits float64
	// Saturated says the arithmetic saturates at this point because the
	// bound exceeds the capacity: no wrap-around, and Note says what it
	// does. A negative headroom that is not Saturated is a possible
	// overflow and fails the "overflow" check.
	Saturated bool
	Note      string
}

// Realization is the numeric realization of one axis's controller.
type Realization struct {
	Type airframe.NumericType
	// W is the data word's width for fixed point (16, 32); 0 for float.
	W                               int
	InputFullScale, OutputFullScale float64
	Coefficients                    []Coefficient
	// Ranges is the range table (fixed point only).
	Ranges []Range
	// Fixed is the bit-exact integer controller (fixed point only).
	Fixed *Fixed
	// QuantizedCoeffs are the coefficients as the code holds them,
	// converted back to real values, and Quantized the discrete
	// verification with them (nil for float64, whose coefficients are the
	// reference's own).
	QuantizedCoeffs Coeffs
	Quantized       *Verification
	// quantizedPlant is the sampled plant with the filter chain's
	// sections rounded as the code holds them (nil: the design's plant).
	quantizedPlant *Plant
	// Fixed point only: ReferenceStep is the setpoint step against whose
	// settling band the input resolution is judged (see RealizeNumeric),
	// InputResolutionBits log2(band·ReferenceStep/LSB_in) and
	// OutputResolutionBits log2(band·min(|Lo|, Hi)/LSB_out).
	ReferenceStep                             float64
	InputResolutionBits, OutputResolutionBits float64
	// Fixed point only, against the float64 reference model on the
	// standard excitation (see Accuracy): the largest output error and the
	// signal-to-quantization-noise ratio, and the peak-to-peak output
	// after the excitation with zero input (RestLSB) and its stated bound.
	MaxErrorLSB, SQNRdB, RestLSB, RestBoundLSB float64
	// FilterNoiseLSB is, for a fixed-point filter chain, the proved bound
	// of its rounding error at its output (against the same chain in
	// exact arithmetic with the quantized coefficients), in input LSB,
	// before the output is rounded to the input LSB for the controller;
	// 0 without a chain.
	FilterNoiseLSB float64
	// DFilterNoiseLSB is, for fixed-point derivative filters, the proved
	// bound of the rounding error of the D path (the derivative's own
	// filter and the sections) at the last section's output, against the
	// same path in exact arithmetic with the quantized coefficients, in
	// output LSB; 0 without them. The limit_cycle bound takes the part of
	// it that remains at rest.
	DFilterNoiseLSB float64
	// Checks are "overflow" (fixed point), "filter_rounding" (fixed point
	// with a filter chain), the spec checks with quantized coefficients
	// ("quantized_<metric>", float32 and fixed point) and "limit_cycle"
	// (fixed point); Warnings explain failures.
	Checks   []synth.Check
	Warnings []string
}

// coefKind says how a coefficient is scaled into raw units.
type coefKind int

const (
	kindGain   coefKind = iota // rate → command: times in_fs/out_fs
	kindPure                   // dimensionless
	kindLimit                  // command: over out_fs, Q0.(w−1) data word
	kindILimit                 // integrator limit, in the integrator's format
)

// coefSpec describes one coefficient of Coeffs as the form uses it.
type coefSpec struct {
	name   string
	kind   coefKind
	val    func(*Coeffs) *float64
	q      func(*Fixed) *QCoeff // nil for the limits
	linear bool                 // enters the linear loop (poles, step, margins)
}

// coefSpecs lists the coefficients the form of k uses, in the order of the
// reference model.
func coefSpecs(k *Coeffs) []coefSpec {
	lim := []coefSpec{
		{name: "Lo", kind: kindLimit, val: func(c *Coeffs) *float64 { return &c.Lo }},
		{name: "Hi", kind: kindLimit, val: func(c *Coeffs) *float64 { return &c.Hi }},
	}
	if k.Form == airframe.FormLead {
		return append([]coefSpec{
			{"B0", kindGain, func(c *Coeffs) *float64 { return &c.B0 }, func(f *Fixed) *QCoeff { return &f.B0 }, true},
			{"B1", kindGain, func(c *Coeffs) *float64 { return &c.B1 }, func(f *Fixed) *QCoeff { return &f.B1 }, true},
			{"A1", kindPure, func(c *Coeffs) *float64 { return &c.A1 }, func(f *Fixed) *QCoeff { return &f.A1 }, true},
		}, lim...)
	}
	cs := []coefSpec{
		{"KpB", kindGain, func(c *Coeffs) *float64 { return &c.KpB }, func(f *Fixed) *QCoeff { return &f.KpB }, true},
		{"Kp", kindGain, func(c *Coeffs) *float64 { return &c.Kp }, func(f *Fixed) *QCoeff { return &f.Kp }, true},
	}
	if k.Form.HasIntegral() {
		cs = append(cs,
			coefSpec{"G0", kindGain, func(c *Coeffs) *float64 { return &c.G0 }, func(f *Fixed) *QCoeff { return &f.G0 }, true},
			coefSpec{"G01", kindGain, func(c *Coeffs) *float64 { return &c.G01 }, func(f *Fixed) *QCoeff { return &f.G01 }, true})
		if k.AntiWindup == AWBackcalc {
			cs = append(cs, coefSpec{"Kt", kindPure, func(c *Coeffs) *float64 { return &c.Kt }, func(f *Fixed) *QCoeff { return &f.Kt }, false})
		}
	}
	if k.Form.HasDerivative() {
		cs = append(cs,
			coefSpec{"Ad", kindPure, func(c *Coeffs) *float64 { return &c.Ad }, func(f *Fixed) *QCoeff { return &f.Ad }, true},
			coefSpec{"Bd", kindGain, func(c *Coeffs) *float64 { return &c.Bd }, func(f *Fixed) *QCoeff { return &f.Bd }, true})
	}
	cs = append(cs, lim...)
	if k.Form.HasIntegral() {
		cs = append(cs, coefSpec{name: "IL", kind: kindILimit, val: func(c *Coeffs) *float64 { return &c.IL }})
	}
	return cs
}

// RealizeNumeric realizes the designed controller d in d.Numeric's type.
//
// float32 and float64: the coefficient table (each coefficient rounded to
// the type) and, for float32, the discrete verification again with the
// rounded coefficients.
//
// q15 and q31 (w = 16, 32): raw scaling raw = value/full_scale·2^(w−1),
// saturated (common practice; the input full scale for setpoint and
// measurement, the output full scale for the command), so a gain K of
// Coeffs acts in raw units as K·in_fs/out_fs. Each coefficient takes the
// most fractional bits n its w-bit word allows (round-half-up of
// value·2^n must fit; n ≤ 2w − 2 so that every shift stays inside the
// accumulator). The states and the sum get their formats from their proved
// bounds: the most fractional bits (at most w) that keep the bound within
// the accumulator. Every product is rounded once, half up, into the
// format of the value it feeds: add-then-shift, written so that it cannot
// overflow (RoundShift), the cheapest exact rule C states in one
// expression; its bias is +2^−(n+1) of the result's LSB when n bits are
// dropped (+¼ LSB for one bit), far below an output LSB at the shifts the
// formats give. The bounds, all in integer units and including the
// rounding of every product (round-half-up errs by at most ½):
//
//   - the filter chain's products, partial sums and outputs, and its
//     output to the controller: ℓ1 norms of their paths from the input
//     and from each section's rounding (FixedSection, filterBounds); the
//     controller's measurement y is then bounded by the chain's output
//     instead of the input full scale;
//   - e = r − y: 2^w − 1 (with a chain, 2^(w−1) + max|y|); each product
//     K·x: |K_raw|·max|x|;
//   - the integrator: its clamp ±IL; its update S + inc by interval sums,
//     with saturating adds where that exceeds the word (exact under the
//     clamp that follows when the word holds 2·IL: a saturated sum is
//     beyond ±IL on the same side as the exact one);
//   - the derivative state: the ℓ1 norm of the impulse response of
//     Bd(1 − z⁻¹)/(1 − Ad·z⁻¹), |Bd|·(1 + |1 − Ad|/(1 − |Ad|)), times
//     max|v|, plus the rounding errors through 1/(1 − Ad·z⁻¹),
//     1/(1 − |Ad|) (Oppenheim & Schafer, Discrete-Time Signal Processing,
//     ℓ1 overflow scaling, from memory);
//   - the lead output: the ℓ1 norm of (B0 + B1·z⁻¹)/(1 + A1·z⁻¹) times
//     max|e|, plus 1.5/(1 − |A1|) of rounding and the reset value;
//   - the sum before saturation: the interval sum of its terms; the output:
//     its limits; Reset's output − (KpB − Kp)·measured likewise.
//
// A bound beyond its word that saturation cannot make exact (a state or
// the sum, even with no fractional bits) is a possible wrap-around: the
// failing check "overflow" and a warning naming the variable, its bound,
// its capacity and a way out.
//
// The realization then re-runs Verify with the quantized coefficients
// converted back to real values; a spec metric or stability that fails
// only with them is a failing check "quantized_<metric>" whose warning
// names the coefficient responsible: the one whose quantization alone
// moves the metric furthest toward failure (each tried alone).
//
// Bad input (an *InputError): a fixed-point type without finite positive
// full scales, an output limit beyond the output full scale, or a full
// scale that leaves fewer than 4 bits of resolution for the smallest step
// the spec needs. That step: the spec is a statement about the step
// response, which the loop follows linearly up to the reference step
// A_ref = min(|Lo|, Hi)/max|u of a unit step| (the largest step that does
// not saturate the command, capped at the input full scale); its settling
// band ±band·A_ref is the coarsest band the spec asks the loop to hold,
// so it must span at least 2^4 input LSB; and the command must resolve
// band·min(|Lo|, Hi) with 2^4 output LSB. Smaller steps need finer
// resolution still; failing this lenient test means no linear step's
// settling can be seen by the fixed-point controller at all.
func RealizeNumeric(d *Design) (*Realization, error) {
	if d == nil {
		return nil, fmt.Errorf("numeric realization: no design")
	}
	switch d.Numeric.Type {
	case airframe.Float32, airframe.Float64:
		return realizeFloat(d)
	case airframe.Q15:
		return realizeFixed(d, 16, true)
	case airframe.Q31:
		return realizeFixed(d, 32, true)
	}
	return nil, &InputError{Key: "numeric.type", Value: strconv.Quote(string(d.Numeric.Type)),
		Msg: `must be one of "float32", "float64", "q15", "q31"`}
}

// realizeFloat rounds the coefficients to float32 or float64.
func realizeFloat(d *Design) (*Realization, error) {
	t := d.Numeric.Type
	re := &Realization{Type: t, InputFullScale: d.Numeric.InputFullScale, OutputFullScale: d.Numeric.OutputFullScale}
	kq := d.Coeffs
	for _, cs := range coefSpecs(&d.Coeffs) {
		v := *cs.val(&d.Coeffs)
		q := v
		if t == airframe.Float32 {
			q = float64(float32(v))
		}
		*cs.val(&kq) = q
		re.Coefficients = append(re.Coefficients, Coefficient{Name: cs.name, Value: v, Quantized: q, RelError: relErr(q, v), Format: string(t)})
	}
	// The filter sections' coefficients, as the code holds them: the
	// feedback chain's (F1_B0 …), and the derivative filters' (D1_B0 …),
	// which are part of the controller's coefficients. With float32 the
	// loop is verified again with them rounded too (a narrow notch far
	// below Nyquist has poles close to the unit circle, where the
	// rounding of A1 and A2 moves them most).
	qs := re.roundSections("F", d.Plant.Sections)
	if len(qs) > 0 && t == airframe.Float32 {
		pl := d.Plant.WithSections(qs)
		re.quantizedPlant = &pl
	}
	kq.DSections = re.roundSections("D", d.Coeffs.DSections)
	re.QuantizedCoeffs = kq
	if t == airframe.Float32 {
		if err := re.verifyQuantized(d, 0); err != nil {
			return nil, err
		}
	}
	return re, nil
}

// Check returns the realization's check named name, and whether it made
// one (filter_rounding, for one, is made only for a chain whose bounds
// hold).
func (re *Realization) Check(name string) (synth.Check, bool) {
	for _, c := range re.Checks {
		if c.Name == name {
			return c, true
		}
	}
	return synth.Check{}, false
}

// RoundingProof says how the rounding bounds of a fixed-point filter
// chain stand: "proved" when the overflow check passes, else that they
// hold only without overflow, which the bounds of this design do not
// prove (a wrapped sum breaks every bound derived from the sums).
func (re *Realization) RoundingProof() string {
	if c, ok := re.Check("overflow"); ok && c.OK {
		return "proved"
	}
	return "holds only without overflow, not proved here"
}

// roundSections returns the sections qs as the code holds them (rounded
// to float32 for that type) and adds their coefficients to the table,
// named <tag><n>_B0 …; a first-order section has no B2 or A2 row.
func (re *Realization) roundSections(tag string, qs []lti.Biquad) []lti.Biquad {
	var out []lti.Biquad
	for i, q := range qs {
		r := q
		for _, c := range []struct {
			name     string
			v        float64
			dst      *float64
			optional bool
		}{{"B0", q.B0, &r.B0, false}, {"B1", q.B1, &r.B1, false}, {"B2", q.B2, &r.B2, true}, {"A1", q.A1, &r.A1, false}, {"A2", q.A2, &r.A2, true}} {
			qv := c.v
			if re.Type == airframe.Float32 {
				qv = float64(float32(c.v))
			}
			*c.dst = qv
			if c.optional && q.B2 == 0 && q.A2 == 0 {
				continue
			}
			re.Coefficients = append(re.Coefficients, Coefficient{Name: fmt.Sprintf("%s%d_%s", tag, i+1, c.name), Value: c.v, Quantized: qv, RelError: relErr(qv, c.v), Format: string(re.Type)})
		}
		out = append(out, r)
	}
	return out
}

func relErr(q, v float64) float64 {
	if v == 0 {
		return 0
	}
	return (q - v) / v
}

// fixedPlan is the state of a fixed-point realization in progress.
type fixedPlan struct {
	d          *Design
	w          int
	m          float64 // 2^(w−1): the largest |raw input|
	capA, capD float64 // 2^(2w−1) − 1, 2^(w−1) − 1
	fin, fout  float64
	f          Fixed
	specs      []coefSpec
	scaled     []float64 // each coefficient in raw units
	overflow   []string  // possible wrap-arounds
	// gains are the ℓ1 gains of the filter chain's paths (chainGains),
	// and noise the bound of the chain's rounding at its output in input
	// LSB at the chosen formats (filterBounds).
	gains []sectionGains
	noise float64
	// dgains are the ℓ1 gains of the D path: the derivative's own stage
	// (derivativeStage) then the derivative sections; drest the bound of
	// the D path's output at rest and dnoise of its rounding, in output
	// LSB (dfilterBounds).
	dgains        []sectionGains
	drest, dnoise float64
}

// scale returns the factor from a coefficient of kind k to raw units.
func (p *fixedPlan) scale(k coefKind) float64 {
	switch k {
	case kindGain:
		return p.fin / p.fout
	case kindLimit, kindILimit:
		return 1 / p.fout
	}
	return 1
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }

// qFormat returns "Qm.n" for n fractional bits in a word of bits bits.
func qFormat(bits, n int) string { return fmt.Sprintf("Q%d.%d", bits-1-n, n) }

// quantCoeff returns the raw word and the most fractional bits n ≤ nmax
// with which round-half-up(x·2^n) fits a signed word of w bits.
func quantCoeff(x float64, w, nmax int) (raw int64, n int) {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, min(w-1, nmax)
	}
	_, e := math.Frexp(x) // |x| ∈ [2^(e−1), 2^e)
	n = min(w-1-e, nmax)
	for {
		r, sat := ToWord(x, n, w)
		if !sat {
			return r, n
		}
		n--
	}
}

// realizeFixed realizes d with w-bit data and 2w-bit accumulators; the
// tests turn the resolution rule off to study the 8-bit analogue.
func realizeFixed(d *Design, w int, checkResolution bool) (*Realization, error) {
	num := d.Numeric
	for _, fs := range []struct {
		key string
		v   float64
	}{{"numeric.input_full_scale", num.InputFullScale}, {"numeric.output_full_scale", num.OutputFullScale}} {
		if !(fs.v > 0) || math.IsInf(fs.v, 0) {
			return nil, &InputError{Key: fs.key, Value: fmtNum(fs.v), Msg: fmt.Sprintf("must be a finite number > 0 for type = %q", num.Type)}
		}
	}
	k := d.Coeffs
	if lim := math.Max(math.Abs(k.Lo), math.Abs(k.Hi)); lim > num.OutputFullScale {
		return nil, &InputError{Key: "numeric.output_full_scale", Value: fmtNum(num.OutputFullScale),
			Msg: fmt.Sprintf("must be ≥ the largest |output limit| %s of axis %s: the command word cannot hold the limit", fmtNum(lim), d.Problem.Name)}
	}
	p := &fixedPlan{d: d, w: w, m: math.Ldexp(1, w-1), capA: math.Ldexp(1, 2*w-1) - 1, capD: math.Ldexp(1, w-1) - 1,
		fin: num.InputFullScale, fout: num.OutputFullScale}
	re := &Realization{Type: num.Type, W: w, InputFullScale: p.fin, OutputFullScale: p.fout}
	if err := p.resolution(re); err != nil && checkResolution {
		return nil, err
	}
	p.quantize()
	if len(p.f.Sections) > 0 {
		qs := make([]lti.Biquad, len(p.f.Sections))
		for i := range p.f.Sections {
			qs[i] = p.f.Sections[i].Biquad()
		}
		p.gains = chainGains(qs)
		pl := d.Plant.WithSections(qs)
		re.quantizedPlant = &pl
	}
	if len(p.f.DSections) > 0 {
		qs := []lti.Biquad{p.derivativeStage()}
		for i := range p.f.DSections {
			qs = append(qs, p.f.DSections[i].Biquad())
		}
		p.dgains = chainGains(qs)
	}
	re.Ranges = p.chooseFormats()
	re.Fixed = &p.f
	re.QuantizedCoeffs = p.quantizedCoeffs()
	re.Coefficients = p.table()

	minHead := math.Inf(1)
	for _, r := range re.Ranges {
		if !r.Saturated {
			minHead = math.Min(minHead, r.HeadroomBits)
		}
	}
	re.FilterNoiseLSB = p.noise
	re.DFilterNoiseLSB = p.dnoise
	re.Checks = append(re.Checks, synth.Check{Name: "overflow", Limit: 0, Value: minHead, OK: len(p.overflow) == 0})
	re.Warnings = append(re.Warnings, p.overflow...)
	if len(p.f.Sections) > 0 && len(p.overflow) == 0 {
		// The chain's rounding must stay below half an input LSB at its
		// output: the rounded output of a chain at rest is then exactly
		// 0 (the limit_cycle bound of the controller holds) and exactly
		// the measurement after _reset (no step at engagement).
		ok := p.noise < 0.5
		re.Checks = append(re.Checks, synth.Check{Name: "filter_rounding", Limit: 0.5, Value: p.noise, Upper: true, OK: ok})
		if !ok {
			way := "wider notches or higher cutoffs (poles further from the unit circle)"
			if w < 32 {
				way = "numeric.type = \"q31\", or " + way
			}
			re.Warnings = append(re.Warnings, fmt.Sprintf("filter_rounding: the filter chain's rounding can reach %s input LSB at its output (proved bound), not below half an LSB: at rest its output need not round to 0, and the controller may integrate what it leaves; way out: %s", fmtNum(p.noise), way))
		}
	}
	if err := re.verifyQuantized(d, w); err != nil {
		return nil, err
	}
	if len(p.overflow) == 0 {
		acc := Accuracy(d, re)
		re.MaxErrorLSB, re.SQNRdB, re.RestLSB = acc.MaxErrorLSB, acc.SQNRdB, acc.RestLSB
		re.RestBoundLSB = p.restBound()
		ok := re.RestLSB <= re.RestBoundLSB
		re.Checks = append(re.Checks, synth.Check{Name: "limit_cycle", Limit: re.RestBoundLSB, Value: re.RestLSB, Upper: true, OK: ok})
		if !ok {
			re.Warnings = append(re.Warnings, fmt.Sprintf("limit_cycle: with zero input after the excitation the command still moves by %s LSB peak to peak (stated bound %s LSB)", fmtNum(re.RestLSB), fmtNum(re.RestBoundLSB)))
		}
	}
	return re, nil
}

// resolution applies the resolution rules (see RealizeNumeric).
func (p *fixedPlan) resolution(re *Realization) error {
	d, k := p.d, p.d.Coeffs
	lim := math.Min(math.Abs(k.Lo), math.Abs(k.Hi))
	if !(lim > 0) {
		lim = math.Max(math.Abs(k.Lo), math.Abs(k.Hi))
	}
	band := d.Problem.Spec.Band
	peak := d.Verif.Saturated.LinearPeakCommand
	aref := p.fin
	if peak > 0 && !math.IsInf(peak, 0) {
		aref = math.Min(lim/peak, p.fin)
	}
	re.ReferenceStep = aref
	lsbIn, lsbOut := p.fin/p.m, p.fout/p.m
	re.InputResolutionBits = lti.Log2(band * aref / lsbIn)
	re.OutputResolutionBits = lti.Log2(band * lim / lsbOut)
	if !(band > 0) || !(lim > 0) {
		return nil
	}
	// The decisions compare the spans with 2^4 LSB directly (exact), the
	// bits are for the report. q15 can move to q31; q31 has no wider type.
	wider := ""
	if p.d.Numeric.Type == airframe.Q15 {
		wider = ", or q31"
	}
	if band*aref/lsbIn < 16 {
		return &InputError{Key: "numeric.input_full_scale", Value: fmtNum(p.fin), Msg: fmt.Sprintf(
			"leaves %.1f bits (< 4) of resolution for the smallest step the spec needs on axis %s: the settling band ±%s of the reference step %s (the largest the loop follows without saturating the command) spans %.3g LSB of %s; use a full scale of at most %s%s",
			re.InputResolutionBits, d.Problem.Name, fmtNum(band*aref), fmtNum(aref), band*aref/lsbIn, fmtNum(lsbIn), fmtNum(band*aref*p.m/16), wider)}
	}
	if band*lim/lsbOut < 16 {
		return &InputError{Key: "numeric.output_full_scale", Value: fmtNum(p.fout), Msg: fmt.Sprintf(
			"leaves %.1f bits (< 4) of command resolution on axis %s: the band ±%s of the output limit %s spans %.3g LSB of %s; use a full scale of at most %s%s",
			re.OutputResolutionBits, d.Problem.Name, fmtNum(band*lim), fmtNum(lim), band*lim/lsbOut, fmtNum(lsbOut), fmtNum(band*lim*p.m/16), wider)}
	}
	return nil
}

// quantize fills the coefficients of p.f (except IL, which depends on the
// integrator's format) at their most precise formats, and the filter
// sections' (quantizeSection).
func (p *fixedPlan) quantize() {
	k := p.d.Coeffs
	p.f = Fixed{Type: p.d.Numeric.Type, W: p.w, Form: k.Form, AntiWindup: k.AntiWindup, DerivativeOnError: k.DerivativeOnError}
	for _, q := range p.d.Plant.Sections {
		p.f.Sections = append(p.f.Sections, quantizeSection(q, p.w))
	}
	if k.Form.HasDerivative() {
		for _, q := range k.DSections {
			p.f.DSections = append(p.f.DSections, quantizeSection(q, p.w))
		}
	}
	p.specs = coefSpecs(&k)
	p.scaled = make([]float64, len(p.specs))
	for i, cs := range p.specs {
		x := *cs.val(&k) * p.scale(cs.kind)
		p.scaled[i] = x
		switch cs.kind {
		case kindLimit:
			raw, _ := ToWord(x, p.w-1, p.w)
			if cs.name == "Lo" {
				p.f.Lo = raw
			} else {
				p.f.Hi = raw
			}
		case kindILimit:
		default:
			q := cs.q(&p.f)
			q.Raw, q.Frac = quantCoeff(x, p.w, 2*p.w-2)
		}
	}
}

// entry collects one range row and what governs it.
type entry struct {
	Range
	gov *int // the format whose reduction lowers the bound; nil: none
}

// ceilLog2 returns ⌈log2 x⌉ for x > 0, from the binary exponent (exact on
// every platform, unlike math.Log2 rounded up).
func ceilLog2(x float64) int {
	f, e := math.Frexp(x) // x = f·2^e, f ∈ [½, 1)
	if f == 0.5 {
		return e - 1
	}
	return e
}

func headroom(bound, capacity float64, bits int) float64 {
	h := float64(bits)
	if bound >= 1 {
		h = math.Min(lti.Log2(capacity/bound), h)
	}
	return h
}

// fits reports whether bound ≤ capacity, with 2^−40 of relative margin
// for the float64 evaluation of the bound (a handful of operations, each
// with relative error ≤ 2^−53).
func fits(bound, capacity float64) bool { return bound*(1+0x1p-40) <= capacity }

// rnd is the bound of round(|K|·x·2^−sh): exact for sh ≤ 0, ½ more else.
func rnd(c int64, x float64, sh int) float64 {
	v := float64(math.Abs(float64(c)) * x * math.Ldexp(1, -sh))
	if sh > 0 {
		v += 0.5
	}
	return v
}

// half is the rounding bound of rsh(·, n).
func half(n int) float64 {
	if n > 0 {
		return 0.5
	}
	return 0
}

// chooseFormats picks FS, FD and FU from the bounds, sets the shifts and
// the Wide and saturation flags, and returns the range table. It starts
// from the most fractional bits and lowers a format by as many bits as
// its worst bound exceeds the word, until every bound fits or a format
// would go below zero (a possible overflow).
func (p *fixedPlan) chooseFormats() []Range {
	f := &p.f
	w := p.w
	f.FS, f.FD, f.FU = w, w, w
	if f.Form.HasIntegral() {
		f.FS = min(f.FS, max(f.G01.Frac, 0))
		if f.AntiWindup == AWBackcalc {
			f.FS = min(f.FS, max(f.Kt.Frac, 0))
		}
	}
	if f.Form.HasDerivative() {
		f.FD = min(f.FD, max(f.Bd.Frac, 0))
	}
	for k := range f.Sections {
		f.Sections[k].F = w
	}
	for k := range f.DSections {
		f.DSections[k].F = w
	}
	var es []entry
	for iter := 0; iter < (4+len(f.Sections)+len(f.DSections))*w; iter++ {
		// Each section's output keeps at most N + FIn fractional bits, so
		// that its products shift right (see FixedSection).
		fin := 0
		for k := range f.Sections {
			q := &f.Sections[k]
			q.FIn = fin
			q.F = min(q.F, q.N+fin)
			fin = q.F
		}
		if f.Form.HasIntegral() {
			f.FU = min(f.FU, f.FS)
		}
		if f.Form.HasDerivative() {
			// The derivative sections likewise, from Ud's format FD on
			// (below the output LSB); the sum takes the last one's
			// output with a right shift.
			fin := f.FD
			for k := range f.DSections {
				q := &f.DSections[k]
				q.FIn = fin
				q.F = min(q.F, q.N+fin)
				fin = q.F
			}
			f.FU = min(f.FU, f.FD, f.dChainF())
		}
		es = p.bounds()
		worst, by := -1, 0.0
		for i, e := range es {
			// A filter section without a bound (not stable with its
			// quantized coefficients) takes everything after it: no
			// format mends that, and the others still get theirs.
			if len(f.Sections)+len(f.DSections) > 0 && math.IsInf(e.Bound, 1) {
				continue
			}
			if e.gov != nil && !e.Saturated && !fits(e.Bound, e.Capacity) {
				if x := e.Bound / e.Capacity; x > by {
					worst, by = i, x
				}
			}
		}
		if worst < 0 {
			break
		}
		g := es[worst].gov
		if *g == 0 {
			break
		}
		*g = max(0, *g-max(1, ceilLog2(by)))
	}
	rs := make([]Range, len(es))
	unbounded := false
	for i, e := range es {
		rs[i] = e.Range
		if !e.Saturated && !fits(e.Bound, e.Capacity) {
			// A filter section without a bound leaves everything after
			// it without one: its first row says why, once.
			if math.IsInf(e.Bound, 1) {
				if unbounded {
					continue
				}
				unbounded = true
			}
			p.overflow = append(p.overflow, p.overflowMsg(e.Range))
		}
	}
	return rs
}

// overflowMsg says which variable may wrap around and the ways out.
func (p *fixedPlan) overflowMsg(r Range) string {
	if strings.HasPrefix(r.Name, "filter ") {
		return p.sectionOverflowMsg(r, "filter", p.d.Problem.Filters, p.f.Sections, p.filterWayOut())
	}
	if strings.HasPrefix(r.Name, "derivative filter ") {
		return p.sectionOverflowMsg(r, "derivative filter", p.d.Problem.Ctrl.DerivativeFilters, p.f.DSections, p.dfilterWayOut())
	}
	var outs []string
	if strings.HasPrefix(r.Name, "integrator") {
		outs = append(outs, fmt.Sprintf("a smaller control.integrator_limit (now %s, %s times the output full scale)", fmtNum(p.d.Coeffs.IL), fmtNum(p.d.Coeffs.IL/p.fout)))
	}
	if p.w < 32 {
		outs = append(outs, "numeric.type = \"q31\" (32-bit data, 64-bit accumulators)")
	}
	if !strings.HasPrefix(r.Name, "integrator") {
		outs = append(outs, fmt.Sprintf("a smaller numeric.input_full_scale or a larger numeric.output_full_scale (gains act in raw units times in_fs/out_fs = %s)", fmtNum(p.fin/p.fout)),
			"lower gains")
	}
	return fmt.Sprintf("overflow: %s can reach %s but its %s word holds %s (%s); way out: %s",
		r.Name, fmtNum(r.Bound), bitsName(r.Capacity), fmtNum(r.Capacity), r.Format, strings.Join(outs, ", or "))
}

func bitsName(capacity float64) string {
	return fmt.Sprintf("%d-bit", int(math.Round(lti.Log2(capacity+1)))+1)
}

// wideBound returns the largest intermediate of MulWide(c, x, sh) for
// |x| ≤ xb: ch·2^(w−sh) (sh ≤ w) or ch + (cl >> w), and cl itself.
func wideBound(c int64, xb float64, sh, w int) float64 {
	ac := math.Abs(float64(c))
	hi := math.Floor(xb/math.Ldexp(1, w)) + 1
	cl := ac * (math.Ldexp(1, w) - 1)
	if sh <= w {
		return math.Max(ac*hi*math.Ldexp(1, w-sh), cl)
	}
	return math.Max(float64(ac*hi)+math.Ldexp(1, w-1), cl)
}

// product sets K's shift and Wide flag for operand bound xb into target
// format frac bits ft (operand frac bits fx), and returns the row of the
// product and the bound of the rounded term.
func (p *fixedPlan) product(name string, k *QCoeff, xb float64, fx, ft int, gov *int) (entry, float64) {
	k.Shift = k.Frac + fx - ft
	pb := math.Abs(float64(k.Raw)) * xb
	k.Wide = !fits(pb, p.capA) && k.Shift >= 0 && k.Shift <= 2*p.w-2
	if k.Wide {
		pb = wideBound(k.Raw, xb, k.Shift, p.w)
	}
	e := entry{Range: Range{Name: name + " (product)", Format: qFormat(2*p.w, k.Frac+fx+p.w-1), Bound: pb, Capacity: p.capA}, gov: gov}
	if k.Wide {
		e.Note = "split multiply (MulWide)"
	}
	return e, rnd(k.Raw, xb, k.Shift)
}

// bounds computes every bound at the current formats.
func (p *fixedPlan) bounds() []entry {
	f := &p.f
	w, m, capA, capD := p.w, p.m, p.capA, p.capD
	emax := 2*m - 1
	accFmt := func(fr int) string { return qFormat(2*w, w-1+fr) }
	var es []entry
	add := func(e entry) { es = append(es, e) }
	row := func(name, format string, bound, capacity float64, gov *int) entry {
		return entry{Range: Range{Name: name, Format: format, Bound: bound, Capacity: capacity}, gov: gov}
	}
	// The measurement the controller gets: the raw input, or the filter
	// chain's output (its ℓ1 gain may take it beyond the data word).
	ymax, noise := p.filterBounds(func(e entry) { es = append(es, e) })
	p.noise = noise
	if len(f.Sections) > 0 {
		emax = m + ymax
	}
	add(row("error e = r − y", accFmt(0), emax, capA, nil))
	var uu, ul float64 // sum bound (FU units)
	if f.Form == airframe.FormLead {
		b0 := math.Ldexp(float64(f.B0.Raw), -(f.B0.Frac - f.FU))
		b1 := math.Ldexp(float64(f.B1.Raw), -(f.B1.Frac - f.FU))
		a1 := math.Ldexp(float64(f.A1.Raw), -f.A1.Frac)
		ul = math.Inf(1)
		if math.Abs(a1) < 1 {
			l1 := math.Abs(b0) + math.Abs(b1-float64(a1*b0))/(1-math.Abs(a1))
			ul = float64(l1*emax) + 1.5/(1-math.Abs(a1)) + float64(m*math.Ldexp(1, f.FU))
		}
		e0, _ := p.product("B0·e", &f.B0, emax, 0, f.FU, nil)
		e1, _ := p.product("B1·E", &f.B1, emax, 0, f.FU, nil)
		ea, _ := p.product("A1·ul", &f.A1, ul, f.FU, f.FU, &f.FU)
		add(e0)
		add(e1)
		add(ea)
		xb := ul + rnd(f.B0.Raw, emax, f.B0.Shift)
		add(row("lead state x", accFmt(f.FU), xb, capA, &f.FU))
		uu = ul
	} else {
		eKpB, tKpB := p.product("KpB·r", &f.KpB, m, 0, f.FU, nil)
		eKp, tKp := p.product("Kp·y", &f.Kp, ymax, 0, f.FU, nil)
		add(eKpB)
		add(eKp)
		uu = tKpB + tKp
		var ils float64
		if f.Form.HasIntegral() {
			r := row("reset: output − (KpB − Kp)·measured", accFmt(f.FU), float64(m*math.Ldexp(1, f.FU))+tKpB+tKp, capA, &f.FU)
			r.Note = "then shifted to the integrator's format with saturation, exact under its clamp"
			add(r)
			// A limit the word cannot hold must not pass as its
			// saturated value: the bound is the limit itself.
			raw, _ := ToWord(p.scaledOf("IL"), w-1+f.FS, 2*w)
			f.IL = raw
			ils = math.Max(float64(raw), math.Ldexp(p.scaledOf("IL"), w-1+f.FS))
			uu += float64(ils*math.Ldexp(1, f.FU-f.FS)) + half(f.FS-f.FU)
			eG0, tG0 := p.product("G0·e", &f.G0, emax, 0, f.FU, nil)
			add(eG0)
			uu += tG0
		}
		var ud float64
		if f.Form.HasDerivative() {
			vmax, dv := m, 2*m-1
			if len(f.Sections) > 0 {
				vmax, dv = ymax, 2*ymax
			}
			if f.DerivativeOnError {
				vmax, dv = emax, 2*emax
			}
			add(row("derivative input change v − v_prev", accFmt(0), dv, capA, nil))
			a := math.Ldexp(float64(f.Ad.Raw), -f.Ad.Frac)
			eBd, tBd := p.product("Bd·Δv", &f.Bd, dv, 0, f.FD, &f.FD)
			add(eBd)
			bd := math.Ldexp(float64(f.Bd.Raw), -f.Bd.Shift)
			ud = math.Inf(1)
			if math.Abs(a) < 1 {
				l1 := math.Abs(bd) * (1 + math.Abs(1-a)/(1-math.Abs(a)))
				ud = float64(l1*vmax) + 1/(1-math.Abs(a))
			}
			ud = math.Max(ud, tBd)
			eAd, _ := p.product("Ad·Ud", &f.Ad, ud, f.FD, f.FD, &f.FD)
			add(eAd)
			r := row("derivative state Ud", accFmt(f.FD), ud, capA, &f.FD)
			r.Note = "ℓ1 norm of Bd(1 − z⁻¹)/(1 − Ad·z⁻¹) times max|v|, plus rounding"
			add(r)
			p.drest = 0
			if len(f.DSections) > 0 {
				// The D term that joins the sum is the last derivative
				// section's output.
				ud, p.drest, p.dnoise = p.dfilterBounds(add, vmax, ud)
			}
			fd := f.dChainF()
			uu += float64(ud*math.Ldexp(1, f.FU-fd)) + half(fd-f.FU)
		}
		if f.Form.HasIntegral() {
			// The integrator rows need the sum's bound (for du).
			uuLSB := float64(uu*math.Ldexp(1, -f.FU)) + half(f.FU)
			eG01, tG01 := p.product("integrator increment G01·E", &f.G01, emax, 0, f.FS, &f.FS)
			add(eG01)
			inc := tG01
			if f.AntiWindup == AWBackcalc {
				du := m + uuLSB
				add(row("tracking error du = ua − uu", accFmt(0), du, capA, nil))
				eKt, tKt := p.product("Kt·du", &f.Kt, du, 0, f.FS, &f.FS)
				add(eKt)
				r := row("back-calculation term", accFmt(f.FS), tKt, capA, &f.FS)
				add(r)
				inc += tKt
				f.SatInc = !fits(inc, capA)
				r = row("integrator increment inc", accFmt(f.FS), inc, capA, nil)
				if f.SatInc {
					r.Saturated, r.Note = true, "saturating add; exact under the clamp to ±IL"
					inc = capA + 1
				}
				add(r)
			}
			f.SatInt = !fits(ils+inc, capA)
			r := row("integrator S + inc (before the clamp)", accFmt(f.FS), ils+inc, capA, nil)
			if f.SatInt {
				r.Saturated, r.Note = true, "saturating add; exact under the clamp to ±IL"
			}
			add(r)
			r = row("integrator S", accFmt(f.FS), ils, capA, &f.FS)
			r.Note = "clamped to ±IL"
			if f.SatInc || f.SatInt {
				// Saturation is exact under the clamp only if the word
				// holds twice the limit.
				r.Bound = 2 * ils
				r.Note = "clamped to ±IL; 2·IL must fit for the saturating update"
			}
			add(r)
		}
	}
	r := row("sum before saturation uu", accFmt(f.FU), uu, capA, &f.FU)
	if f.Form == airframe.FormLead {
		r.Name = "lead output ul (before saturation)"
		r.Note = "ℓ1 norm of (B0 + B1·z⁻¹)/(1 + A1·z⁻¹) times max|e|, plus rounding and the reset value"
	}
	add(r)
	cmd := float64(uu*math.Ldexp(1, -f.FU)) + half(f.FU)
	r = row("command before saturation", qFormat(2*w, w-1), cmd, capD, nil)
	if !fits(cmd, capD) {
		r.Saturated, r.Note = true, "clamped to the output limits [Lo, Hi]"
	}
	add(r)
	for i := range es {
		es[i].HeadroomBits = headroom(es[i].Bound, es[i].Capacity, int(math.Round(lti.Log2(es[i].Capacity+1)))+1)
	}
	return es
}

// scaledOf returns the raw-unit value of the named coefficient.
func (p *fixedPlan) scaledOf(name string) float64 {
	for i, cs := range p.specs {
		if cs.name == name {
			return p.scaled[i]
		}
	}
	return 0
}

// quantizedCoeffs converts the raw coefficients back to real values.
func (p *fixedPlan) quantizedCoeffs() Coeffs {
	kq := p.d.Coeffs
	for _, cs := range p.specs {
		*cs.val(&kq) = p.quantizedValue(cs)
	}
	if len(p.f.DSections) > 0 {
		kq.DSections = make([]lti.Biquad, len(p.f.DSections)) // not the design's
		for i := range p.f.DSections {
			kq.DSections[i] = p.f.DSections[i].Biquad()
		}
	}
	return kq
}

func (p *fixedPlan) quantizedValue(cs coefSpec) float64 {
	switch cs.kind {
	case kindLimit:
		raw := p.f.Lo
		if cs.name == "Hi" {
			raw = p.f.Hi
		}
		return FromRaw(raw, p.w) * p.fout
	case kindILimit:
		return math.Ldexp(float64(p.f.IL), -(p.w-1+p.f.FS)) * p.fout
	}
	q := cs.q(&p.f)
	return math.Ldexp(float64(q.Raw), -q.Frac) / p.scale(cs.kind)
}

// table returns the coefficient rows.
func (p *fixedPlan) table() []Coefficient {
	var rows []Coefficient
	for i, cs := range p.specs {
		v := *cs.val(&p.d.Coeffs)
		c := Coefficient{Name: cs.name, Value: v, Quantized: p.quantizedValue(cs), Scaled: p.scaled[i], Bits: p.w}
		switch cs.kind {
		case kindLimit:
			c.Raw, c.FracBits = p.f.Lo, p.w-1
			if cs.name == "Hi" {
				c.Raw = p.f.Hi
			}
		case kindILimit:
			c.Raw, c.FracBits, c.Bits = p.f.IL, p.w-1+p.f.FS, 2*p.w
		default:
			q := cs.q(&p.f)
			c.Raw, c.FracBits = q.Raw, q.Frac
		}
		c.Format = qFormat(c.Bits, c.FracBits)
		c.RelError = relErr(c.Quantized, v)
		rows = append(rows, c)
	}
	return append(rows, p.sectionTable()...)
}

// restBound is the stated bound of the zero-input output movement: the
// deadband of a first-order recursion x ← round(a·x), |x| ≤ ½/(1 − |a|)
// quanta (Jackson's deadband effect; Oppenheim & Schafer, zero-input limit
// cycles, from memory), seen at the output through the state's format,
// twice (a negative pole may alternate its sign) plus one LSB for the
// output rounding. Forms without a recursive filter state hold still.
func (p *fixedPlan) restBound() float64 {
	f := &p.f
	var a float64
	var fr int
	switch {
	case f.Form == airframe.FormLead:
		a, fr = float64(f.A1.Raw)*math.Ldexp(1, -f.A1.Frac), f.FU
	case f.Form.HasDerivative() && len(f.DSections) > 0:
		// Ud's deadband and the sections' own roundings through their
		// paths to the D term (dfilterBounds).
		return math.Ceil(float64(2*p.drest)) + 1
	case f.Form.HasDerivative():
		a, fr = float64(f.Ad.Raw)*math.Ldexp(1, -f.Ad.Frac), f.FD
	default:
		return 0
	}
	db := 0.5 / (1 - math.Abs(a))
	return math.Ceil(float64(2*db*math.Ldexp(1, -fr))) + 1
}

// verifyQuantized runs Verify with re.QuantizedCoeffs and adds the
// quantized_<metric> checks; w is the data width (0: float32).
func (re *Realization) verifyQuantized(d *Design, w int) error {
	kq := re.QuantizedCoeffs
	pl := d.Plant
	if re.quantizedPlant != nil {
		pl = *re.quantizedPlant
	}
	v, err := verify(d.Problem, pl, kq, d.Loop.ComputeDelay, 0)
	if err != nil {
		return fmt.Errorf("verification with quantized coefficients: %w", err)
	}
	re.Quantized = &v
	qc := quantizedChecks(d.Problem.Spec, v)
	base := quantizedChecks(d.Problem.Spec, d.Verif)
	for i, c := range qc {
		re.Checks = append(re.Checks, c)
		if c.OK || !base[i].OK || !v.Stable && c.Name != qc[0].Name {
			// An unstable quantized loop is told by its stability check
			// alone: its margins and step figures mean nothing.
			continue
		}
		name, detail := re.responsible(d, c.Name)
		msg := fmt.Sprintf("%s: with the %s coefficients %s is %s against the limit %s (%s without quantization)",
			c.Name, re.Type, strings.TrimPrefix(c.Name, "quantized_"), fmtNum(c.Value), fmtNum(c.Limit), fmtNum(base[i].Value))
		if name != "" {
			msg += fmt.Sprintf("; responsible coefficient: %s (%s)", name, detail)
		}
		if w > 0 && w < 32 {
			msg += "; way out: numeric.type = \"q31\", or a design less sensitive to that coefficient"
		} else {
			msg += "; way out: a wider numeric type, or a design less sensitive to that coefficient"
		}
		re.Warnings = append(re.Warnings, msg)
	}
	return nil
}

// quantizedChecks are the spec checks of a verification, named
// quantized_<metric>.
func quantizedChecks(s airframe.Spec, v Verification) []synth.Check {
	cs := synth.SpecChecks(s, v.Stable, 0, v.Step.Overshoot, v.Step.Settling, v.Margins.PhaseDeg, v.Margins.GainDB)
	cs[0] = synth.Check{Name: "stable", Limit: 1, Value: 1 - v.StabilityMargin, Upper: true, OK: v.Stable}
	for i := range cs {
		cs[i].Name = "quantized_" + cs[i].Name
	}
	return cs
}

// responsible quantizes one linear coefficient at a time and returns the
// one that moves the failing check furthest toward (or past) its limit.
func (re *Realization) responsible(d *Design, check string) (string, string) {
	best, bestName, detail := math.Inf(-1), "", ""
	byName := map[string]Coefficient{}
	for _, c := range re.Coefficients {
		byName[c.Name] = c
	}
	for _, cs := range coefSpecs(&d.Coeffs) {
		c, ok := byName[cs.name]
		if !cs.linear || !ok || c.Quantized == c.Value {
			continue
		}
		k := d.Coeffs
		*cs.val(&k) = c.Quantized
		v, err := Verify(d.Problem, d.Plant, k, d.Loop.ComputeDelay)
		if err != nil {
			continue
		}
		for _, ch := range quantizedChecks(d.Problem.Spec, v) {
			if ch.Name != check {
				continue
			}
			// Violation: how far past the limit, in the failing direction.
			viol := ch.Value - ch.Limit
			if !ch.Upper {
				viol = ch.Limit - ch.Value
			}
			if !ch.OK && !(viol > 0) {
				viol = math.Inf(1) // unstable: Value may be meaningless
			}
			if viol > best {
				best, bestName = viol, cs.name
				how := "alone it still meets the limit; it moves the metric the most"
				if !ch.OK {
					how = "quantizing it alone fails the check"
				}
				detail = fmt.Sprintf("%s → %s as %s; %s", fmtNum(c.Value), fmtNum(c.Quantized), c.Format, how)
			}
		}
	}
	return bestName, detail
}

// Lengths of the standard excitation (see Accuracy): the chirp has
// 2^chirpLog2 samples.
const (
	chirpLog2      = 10
	noiseSamples   = 300
	minRestSamples = 500
)

// pow2Below returns the largest power of two ≤ x > 0 (x itself otherwise).
// The excitation's amplitudes are rounded so: a last-bit difference in
// how a platform computes x cannot change the raw input samples.
func pow2Below(x float64) float64 {
	if !(x > 0) || math.IsInf(x, 0) {
		return x
	}
	_, e := math.Frexp(x) // x ∈ [2^(e−1), 2^e)
	return math.Ldexp(1, e-1)
}

// rootPow2 returns x^(2^−n) by n square roots, which IEEE 754 rounds
// exactly on every platform (math.Pow may differ in the last bit).
func rootPow2(x float64, n int) float64 {
	for i := 0; i < n; i++ {
		x = math.Sqrt(x)
	}
	return x
}

// detSin is sin(x) computed identically on every platform: reduction to
// [−π/2, π/2] and the Taylor polynomial to x^15 (error below 1e-10 there,
// ample for an excitation), every product converted explicitly so that no
// compiler fuses it with an add (math.Sin may be fused on some CPUs).
func detSin(x float64) float64 {
	n := math.Round(x / (2 * math.Pi))
	r := x - float64(n*(2*math.Pi))
	switch {
	case r > math.Pi/2:
		r = math.Pi - r
	case r < -math.Pi/2:
		r = -math.Pi - r
	}
	r2 := float64(r * r)
	p := -1.0 / 1307674368000 // −1/15!
	for _, c := range []float64{1.0 / 6227020800, -1.0 / 39916800, 1.0 / 362880, -1.0 / 5040, 1.0 / 120, -1.0 / 6, 1} {
		p = float64(p*r2) + c
	}
	return float64(p * r)
}

// AccuracyResult is the comparison of the integer controller with the
// float64 reference model on the standard excitation.
type AccuracyResult struct {
	// MaxErrorLSB is the largest |u_fixed − u_float| in output LSB, and
	// SQNRdB is 10·log10(Σ u_float² / Σ (u_fixed − u_float)²), both over
	// the whole excitation, the zero-input tail included.
	MaxErrorLSB, SQNRdB float64
	// RestLSB is the peak-to-peak of the integer command over the second
	// half of the zero-input tail.
	RestLSB float64
	// Samples is the length of the excitation.
	Samples int
}

// Accuracy runs the integer controller re.Fixed and the float64 reference
// model (Step[float64] on the unquantized coefficients and filter
// sections, fed the same quantized inputs converted back to real values)
// on the standard excitation, in four parts:
//
//  1. setpoint steps to +a, 0, −a, 0 with a the largest power of two up to
//     ½·ReferenceStep (so that the command stays within half its limit),
//     each 1.5·Ts long
//     (50 to 2000 samples), the measurement from the sampled plant driven
//     by the reference model (closed loop), quantized to the input LSB;
//  2. with zero setpoint, a logarithmic chirp of the measurement from
//     ωc/10 to 10·ωc (at most half of Nyquist), 1024 samples, of amplitude
//     0.4·min(|Lo|, Hi)/max|C(e^(jωT))| over the sweep so that the command
//     stays linear (at most half the input full scale), rounded down to a
//     power of two;
//  3. noise at the sensor's LSB: the raw measurement drawn uniformly from
//     {−1, 0, 1} (a fixed seed), 300 samples;
//  4. zero input, the filter chain (if any) put at rest first, until the
//     controller's slowest mode has decayed (20 time constants, 500 to
//     20000 samples).
//
// The outcome is deterministic and the same on every platform: the float
// arithmetic converts every product explicitly (no fused multiply-add),
// avoids functions whose last bit varies by CPU, and rounds amplitudes to
// powers of two. It returns a zero result when re is not a fixed-point
// realization.
func Accuracy(d *Design, re *Realization) AccuracyResult {
	var res AccuracyResult
	fx := re.Fixed
	if fx == nil || d == nil {
		return res
	}
	w := fx.W
	fin, fout := re.InputFullScale, re.OutputFullScale
	lsbOut := math.Ldexp(1, w-1) / fout // LSB per command unit
	k := d.Coeffs
	prm := ParamsOf[float64](k)
	prm.Sections = SectionsOf[float64](d.Plant.Sections)
	var st State[float64]
	var fs FixedState
	T := 1 / d.Loop.Hz
	var sumU2, sumE2 float64
	var last, lastFloat float64 // the latest commands, output LSB
	step := func(rr, yr int64) {
		u := fx.Step(&fs, int32(rr), int32(yr))
		uf := float64(Step(&prm, &st, float64(FromRaw(rr, w)*fin), float64(FromRaw(yr, w)*fin)) * lsbOut)
		e := float64(u) - uf
		res.MaxErrorLSB = math.Max(res.MaxErrorLSB, math.Abs(e))
		sumU2 += float64(uf * uf)
		sumE2 += float64(e * e)
		last, lastFloat = float64(u), uf
		res.Samples++
	}
	lim := math.Min(math.Abs(k.Lo), math.Abs(k.Hi))
	if !(lim > 0) {
		lim = math.Max(math.Abs(k.Lo), math.Abs(k.Hi))
	}

	// 1. Closed-loop setpoint steps (both controllers run the filter
	// chain themselves, on the measured rate before it).
	pl := d.Plant.Unfiltered()
	a := pow2Below(0.5 * re.ReferenceStep)
	n1 := min(max(int(math.Round(1.5*d.Problem.Spec.SettlingTime/T)), 50), 2000)
	x, xn := make([]float64, pl.N), make([]float64, pl.N)
	dl := d.Loop.ComputeDelay + pl.Delay // the plant's input is the command delayed by both
	q := make([]float64, dl+1)
	for i := 0; i < 4*n1; i++ {
		r := []float64{a, 0, -a, 0}[i/n1] // every change is a: the command stays linear
		var ym float64
		for j := range x {
			ym += float64(pl.Cm[j] * x[j])
		}
		step(ToRaw(r/fin, w), ToRaw(ym/fin, w))
		copy(q[1:], q[:dl])
		q[0] = lastFloat / lsbOut // the reference's command drives the plant
		for row := 0; row < pl.N; row++ {
			acc := float64(pl.B[row] * q[dl])
			for j, av := range pl.A[row*pl.N : (row+1)*pl.N] {
				acc += float64(av * x[j])
			}
			xn[row] = acc
		}
		x, xn = xn, x
	}

	// 2. Chirp of the measurement.
	wc := d.Verif.Margins.Crossover
	ny := math.Pi / T
	if !(wc > 0) || math.IsInf(wc, 0) {
		wc = ny / 20
	}
	w0, w1 := wc/10, math.Min(10*wc, ny/2)
	if w0 >= w1 {
		w0 = w1 / 10
	}
	cmax := 0.0
	for i, om, r := 0, w0, rootPow2(w1/w0, 8); i <= 256; i, om = i+1, om*r {
		z := lti.Cis(om * T)
		c := numericFeedback(k, z)
		if len(d.Plant.Sections) > 0 {
			c = lti.Mul(c, d.Plant.Filter(z)) // the chain is in the measurement's path
		}
		cmax = math.Max(cmax, lti.Abs(c))
	}
	amp := 0.5 * fin
	if cmax > 0 {
		amp = math.Min(amp, 0.4*lim/cmax)
	}
	amp = pow2Below(amp)
	// The instantaneous frequency grows by a constant ratio per sample
	// (a logarithmic sweep), and the phase is its running sum.
	ratio := rootPow2(w1/w0, chirpLog2)
	om, ph := w0, 0.0
	for i := 0; i < 1<<chirpLog2; i++ {
		step(0, ToRaw(amp*detSin(ph)/fin, w))
		ph += float64(om * T)
		om *= ratio
	}

	// 3. Noise at the sensor's LSB.
	rng := rand.New(rand.NewPCG(0x6c6f6375, 0x736d697468))
	for i := 0; i < noiseSamples; i++ {
		step(0, int64(rng.IntN(3))-1)
	}

	// 4. Zero input.
	const maxRest = 20000
	decay := func(slow float64) int { // slow^n ≤ e^−20, counted by multiplication
		n := 0
		for v := 1.0; v > 2.061153622438558e-09 && n < maxRest; n++ {
			v *= slow
		}
		return n
	}
	slow := 0.0
	switch {
	case k.Form == airframe.FormLead:
		slow = math.Abs(k.A1)
	case k.Form.HasDerivative():
		slow = math.Abs(k.Ad)
	}
	n4 := max(decay(slow), minRestSamples)
	// The derivative sections decay at the radius of their poles: the
	// tail waits for them when it can. A section slower than the longest
	// tail (a derivative notch far narrower than the loop rate resolves)
	// is put at rest first with the derivative, as the feedback chain
	// below: its linear decay is no limit cycle, and its rest is the
	// proved bound (dfilterBounds) that restBound states.
	dslow := 0.0
	for _, q := range k.DSections {
		dslow = math.Max(dslow, poleRadius(q))
	}
	if nd := decay(dslow); nd < maxRest {
		n4 = max(n4, nd)
	} else {
		fs.Ud, fs.Vp, fs.D = 0, 0, [airframe.MaxFilters][4]int64{}
		st.Ud, st.Vp, st.D = 0, 0, [airframe.MaxFilters][2]float64{}
	}
	// The filter chain at rest first, in both models: its own rest is
	// proved (its rounding stays below half an input LSB, so a chain at
	// rest gives exactly 0; the filter_rounding check), and a narrow
	// notch's linear decay, far slower than the controller's, is no limit
	// cycle.
	fs.F, st.F = [airframe.MaxFilters][4]int64{}, [airframe.MaxFilters][2]float64{}
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := 0; i < n4; i++ {
		step(0, 0)
		if i >= n4/2 {
			lo, hi = math.Min(lo, last), math.Max(hi, last)
		}
	}
	res.RestLSB = hi - lo
	res.SQNRdB = math.Inf(1)
	if sumE2 > 0 {
		res.SQNRdB = 10 * lti.Log10(sumU2/sumE2)
	}
	return res
}

// numericFeedback is the controller's feedback path C_fb(z) = u/(−y) of
// the coefficients k, with q = z⁻¹: Kp + G0 + G01·q/(1 − q) +
// Bd(1 − q)/(1 − Ad·q)·Nf(q)/Df(q) for the PID family (Nf/Df the
// derivative sections, 1 without), (B0 + B1·q)/(1 + A1·q) for lead.
func numericFeedback(k Coeffs, z complex128) complex128 {
	q := lti.Div(1, z)
	if k.Form == airframe.FormLead {
		return lti.Div(complex(k.B0, 0)+lti.Mul(complex(k.B1, 0), q), 1+lti.Mul(complex(k.A1, 0), q))
	}
	v := complex(k.Kp, 0)
	if k.Form.HasIntegral() {
		v += complex(k.G0, 0) + lti.Div(lti.Mul(complex(k.G01, 0), q), 1-q)
	}
	if k.Form.HasDerivative() {
		dt := lti.Div(lti.Mul(complex(k.Bd, 0), 1-q), 1-lti.Mul(complex(k.Ad, 0), q))
		if len(k.DSections) > 0 {
			nf, df := sectionsRatio(k.DSections, q)
			dt = lti.Mul(dt, lti.Div(nf, df))
		}
		v += dt
	}
	return v
}
