package emit

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
)

// Fixed-point code: the integer controller discrete.Fixed, statement for
// statement (its doc lists the operation sequence). The data word D
// (int16_t for q15, int32_t for q31) carries the setpoint, the measurement
// and the command; the accumulator word A (int32_t, int64_t) the states
// and the sums. Helpers, each the C expression of the discrete package's
// qmath.go helper of the same name:
//
//	rsh(x, n)        RoundShift: (x >> n) + ((x >> (n−1)) & 1), x for n = 0
//	mul(c, x, sh)    MulRound: rsh((A)c * x, sh), or (A)c * x * 2^−sh for sh < 0
//	mulw(c, x, sh)   MulWide: the product formed from the halves of x
//	satadd(a, b)     SatAdd: a + b saturated to A
//	satshl(x, n)     SatShiftLeft: x·2^n saturated to A
//	clamp(x, lo, hi) Clamp: x < lo ? lo : (x > hi ? hi : x)
//
// No division, no floating point, no signed overflow (the realization
// proves every intermediate inside its word). Two properties of the
// target are assumed, as is common practice for fixed-point C and as the
// discrete package states: >> of a negative value shifts arithmetically
// (the generated C checks it at compile time), and & acts on the two's
// complement bits (guaranteed for the exact-width types, C99 7.18.1.1).

// codeFixed holds the fixed-point details of an axis for the templates.
type codeFixed struct {
	summary string
	// FU, FS, FD: fractional bits of the sum, the integrator and the
	// derivative state below the output LSB; ShS = FS − FU, ShD = FD − FU.
	FU, FS, FD, ShS, ShD int
	SatInc, SatInt       bool
	// The products, one per coefficient the form uses.
	KpB, Kp, G0, G01, Kt, Ad, Bd, B0, B1, A1 codeQ
	// Pow2FU is the accumulator literal 2^FU.
	Pow2FU string
	// ChainF is the fractional bits of the filter chain's output (its
	// last section's F), rounded away before the controller; 0 without a
	// chain.
	ChainF int
	// ShDF is the shift of the D term into the sum with derivative
	// filters: the last derivative section's F − FU.
	ShDF int
	// Proved says that the overflow check passes: the bounds of the
	// ranges, and the rounding bounds derived from them, hold.
	Proved bool
}

// codeQ is one coefficient's product: the helper that forms it, the
// constant's name and the shift.
type codeQ struct {
	Fn    string
	Name  string
	Shift int
}

// codeDFI is one fixed-point filter section as the templates code_c_dfi
// and code_go_dfi write it: the section, the variable it filters (In),
// the temporary of its output (Out), in C of the accumulator's type
// (Acc), and the indentation of its lines, so that the feedback chain and
// the derivative filters share one text.
type codeDFI struct {
	codeFilter
	Acc, In, Out, Ind string
}

// codeFixedFuncs are the template functions of the fixed-point templates.
func codeFixedFuncs() map[string]any {
	return map[string]any{
		// mul renders the product of coefficient q and operand x.
		"mul": func(q codeQ, x string) (string, error) {
			if q.Fn == "" {
				return "", fmt.Errorf("product with a coefficient the form does not use (operand %s)", x)
			}
			return fmt.Sprintf("%s(%s, %s, %d)", q.Fn, q.Name, x, q.Shift), nil
		},
		// rsh renders x rounded and shifted right by n (x itself for 0).
		"rsh": func(u *codeUnit, x string, n int) (string, error) {
			switch {
			case n == 0:
				return x, nil
			case n < 0:
				return "", fmt.Errorf("negative format shift %d of %s", n, x)
			}
			return fmt.Sprintf("%s(%s, %d)", u.Rsh, x, n), nil
		},
		// mul2 and mul2m1 are 2w and 2w − 1 for the accumulator's width.
		"mul2":   func(w int) int { return 2 * w },
		"mul2m1": func(w int) int { return 2*w - 1 },
		// satshl renders x shifted left by n with saturation (x for 0).
		"satshl": func(u *codeUnit, x string, n int) (string, error) {
			switch {
			case n == 0:
				return x, nil
			case n < 0:
				return "", fmt.Errorf("negative format shift %d of %s", n, x)
			}
			return fmt.Sprintf("%s(%s, %d)", u.SatShl, x, n), nil
		},
		// dfi is the argument of the direct-form-I section templates
		// (code_c_dfi, code_go_dfi): section f run on the value of in
		// into the temporary out (of C type acc), its lines indented by
		// ind.
		"dfi": func(f codeFilter, acc, in, out, ind string) codeDFI {
			return codeDFI{codeFilter: f, Acc: acc, In: in, Out: out, Ind: ind}
		},
		// add renders a + b, saturating when sat is set.
		"add": func(u *codeUnit, sat bool, a, b string) string {
			if sat {
				return fmt.Sprintf("%s(%s, %s)", u.SatAdd, a, b)
			}
			return a + " + " + b
		},
	}
}

// newCodeFixedNumeric returns the fixed-point arithmetic of t in l.
func newCodeFixedNumeric(t airframe.NumericType, l Lang) (codeNumeric, error) {
	n := codeNumeric{kind: t, fixed: true, zero: "0"}
	c := l == LangC
	switch t {
	case airframe.Q15:
		n.bits = 16
		n.t, n.wide = pick(c, "int16_t", "int16"), pick(c, "int32_t", "int32")
	case airframe.Q31:
		n.bits = 32
		n.t, n.wide = pick(c, "int32_t", "int32"), pick(c, "int64_t", "int64")
	default:
		return n, fmt.Errorf("numeric type %q is not fixed point", t)
	}
	return n, nil
}

// intLit is the literal of integer v of a word of bits bits: in C with
// the type's cast (or INT64_C), written so that the most negative value is
// a valid constant expression; in Go a plain number (the constant's
// declaration gives it its type).
func intLit(u *codeUnit, v int64, bits int) string {
	if u.Lang == LangGo {
		return strconv.FormatInt(v, 10)
	}
	typ := fmt.Sprintf("int%d_t", bits)
	if bits == 64 {
		if v == math.MinInt64 {
			return "(-INT64_C(9223372036854775807) - 1)"
		}
		return "INT64_C(" + strconv.FormatInt(v, 10) + ")"
	}
	if bits == 32 && v == math.MinInt32 {
		return "((int32_t)(-2147483647 - 1))"
	}
	return fmt.Sprintf("((%s)%d)", typ, v)
}

// fixedConsts declares the raw constants of a fixed-point controller and
// fills ax.Fx from the realization.
func fixedConsts(u *codeUnit, ax *codeAxis, d *discrete.Design) error {
	if d.Num == nil || d.Num.Fixed == nil {
		return fmt.Errorf("no fixed-point realization for %s", d.Numeric.Type)
	}
	f := d.Num.Fixed
	if f.W != u.Bits {
		return fmt.Errorf("realization has %d-bit words, the code %d", f.W, u.Bits)
	}
	w := f.W
	fx := &codeFixed{FU: f.FU, FS: f.FS, FD: f.FD, ShS: f.FS - f.FU, ShD: f.FD - f.FU, SatInc: f.SatInc, SatInt: f.SatInt,
		Proved: d.Num.RoundingProof() == "proved"}
	for _, sh := range []int{f.FU, f.FS, f.FD} {
		if sh < 0 || sh > w {
			return fmt.Errorf("format shift %d outside [0, %d]", sh, w)
		}
	}
	if ax.HasI && fx.ShS < 0 || ax.HasD && fx.ShD < 0 {
		return fmt.Errorf("state format below the sum's (FS %d, FD %d, FU %d)", f.FS, f.FD, f.FU)
	}
	formats := map[string]string{}
	for _, c := range d.Num.Coefficients {
		formats[c.Name] = fmt.Sprintf("%s = %s", c.Format, codeNum(c.Scaled))
	}
	mulFn := func(q discrete.QCoeff) string {
		if q.Wide {
			return u.MulW
		}
		return u.Mul
	}
	var err error
	add := func(dst *string, q *codeQ, role string, c, g string, src discrete.QCoeff, doc string) {
		if err != nil {
			return
		}
		if src.Raw < math.MinInt32 || src.Raw > math.MaxInt32 || (w == 16 && (src.Raw < math.MinInt16 || src.Raw > math.MaxInt16)) {
			err = fmt.Errorf("coefficient %s raw %d does not fit %d bits", role, src.Raw, w)
			return
		}
		*dst = constName(u, ax, c, g)
		if q != nil {
			*q = codeQ{Fn: mulFn(src), Name: *dst, Shift: src.Shift}
			if src.Wide {
				u.UsesMulW = true
			} else {
				u.UsesMul = true
			}
		}
		if f := formats[role]; f != "" {
			doc += "; " + f
		}
		ax.Consts = append(ax.Consts, codeConst{Name: *dst, Value: intLit(u, src.Raw, w), Doc: doc, Type: u.T})
	}
	if ax.Lead {
		add(&ax.B0, &fx.B0, "B0", "B0", "B0", f.B0, "lead: weight of the current error")
		add(&ax.B1, &fx.B1, "B1", "B1", "B1", f.B1, "lead: weight of the last error")
		add(&ax.A1, &fx.A1, "A1", "A1", "A1", f.A1, "lead: weight of the last unsaturated output")
	} else {
		add(&ax.Kp, &fx.Kp, "Kp", "KP", "Kp", f.Kp, "P gain on the measurement")
		add(&ax.KpB, &fx.KpB, "KpB", "KPB", "KpB", f.KpB, "P gain on the setpoint")
		if ax.HasI {
			add(&ax.G0, &fx.G0, "G0", "G0", "G0", f.G0, "integral: weight of the current error")
			add(&ax.G01, &fx.G01, "G01", "G01", "G01", f.G01, "integral: state increment per unit error")
			if ax.AWBackcalc {
				add(&ax.Kt, &fx.Kt, "Kt", "KT", "Kt", f.Kt, "anti-windup back-calculation gain T/Tt")
			}
		}
		if ax.HasD {
			add(&ax.Ad, &fx.Ad, "Ad", "AD", "Ad", f.Ad, "derivative filter: pole")
			add(&ax.Bd, &fx.Bd, "Bd", "BD", "Bd", f.Bd, "derivative filter: gain")
		}
	}
	add(&ax.Lo, nil, "Lo", "OUTPUT_LO", "OutputLo", discrete.QCoeff{Raw: f.Lo}, "lowest command, raw")
	add(&ax.Hi, nil, "Hi", "OUTPUT_HI", "OutputHi", discrete.QCoeff{Raw: f.Hi}, "highest command, raw")
	if n := len(f.Sections); n > 0 {
		fx.ChainF = f.Sections[n-1].F
	}
	if ax.HasI {
		if f.IL < 0 || f.IL > (int64(1)<<(2*w-1))-1 {
			return fmt.Errorf("integrator limit %d does not fit the %d-bit accumulator", f.IL, 2*w)
		}
		ax.IL = constName(u, ax, "INTEGRATOR_LIMIT", "IntegratorLimit")
		ax.Consts = append(ax.Consts, codeConst{Name: ax.IL, Value: intLit(u, f.IL, 2*w), Type: u.Wide,
			Doc: fmt.Sprintf("largest |integrator state|, %d fractional bits below the output LSB", f.FS)})
		if fx.ShS > 0 {
			u.UsesSatShl = true
		}
	}
	if ax.HasI && (fx.SatInt || ax.AWBackcalc && fx.SatInc) {
		u.UsesSatAdd = true
	}
	// section names filter n's coefficients (prefix F or D) and adds
	// them to cf.
	section := func(cf *codeFilter, prefix, what string, q *discrete.FixedSection) {
		c, g := fmt.Sprintf("%s%d_", prefix, cf.N), fmt.Sprintf("%s%d", prefix, cf.N)
		what = fmt.Sprintf("%s %d", what, cf.N)
		add(&cf.B0, &cf.Fx.B0, c+"B0", c+"B0", g+"B0", q.B0, what+": weight of the input")
		add(&cf.B1, &cf.Fx.B1, c+"B1", c+"B1", g+"B1", q.B1, what+": weight of the last input")
		if q.Second {
			add(&cf.B2, &cf.Fx.B2, c+"B2", c+"B2", g+"B2", q.B2, what+": weight of the input two steps back")
		}
		add(&cf.A1, &cf.Fx.A1, c+"A1", c+"A1", g+"A1", q.A1, what+": feedback of the last output")
		if q.Second {
			add(&cf.A2, &cf.Fx.A2, c+"A2", c+"A2", g+"A2", q.A2, what+": feedback of the output two steps back")
		}
	}
	if len(f.Sections) != len(d.Plant.Sections) {
		return fmt.Errorf("the realization has %d filter sections, the design %d", len(f.Sections), len(d.Plant.Sections))
	}
	for i := range f.Sections {
		q := &f.Sections[i]
		if q.FIn < 0 || q.F < 0 || q.F > 2*w-2 {
			return fmt.Errorf("filter %d: format shifts FIn %d, F %d", i+1, q.FIn, q.F)
		}
		n := i + 1
		cf := codeFilter{N: n, Second: q.Second, X1: fmt.Sprintf("f%dx1", n), X2: fmt.Sprintf("f%dx2", n), Y1: fmt.Sprintf("f%dy1", n), Y2: fmt.Sprintf("f%dy2", n),
			Fx: &codeFilterFx{FIn: q.FIn, F: q.F}}
		if i < len(d.Problem.Filters) {
			cf.Doc = commentText(d.Problem.Filters[i].Describe())
		}
		if q.FIn > 0 {
			cf.Fx.Pow2In = pow2Lit(u, q.FIn)
		}
		if q.F > 0 {
			cf.Fx.Pow2Out = pow2Lit(u, q.F)
		}
		section(&cf, "F", "filter", q)
		ax.Filters = append(ax.Filters, cf)
	}
	if n := len(f.DSections); n > 0 && n != len(d.Coeffs.DSections) {
		return fmt.Errorf("the realization has %d derivative sections, the design %d", n, len(d.Coeffs.DSections))
	}
	for i := range f.DSections {
		q := &f.DSections[i]
		// Each section's output format is the next one's input; only the
		// last one's reaches the sum, shifted right to its format FU.
		last := i == len(f.DSections)-1
		if q.FIn < 0 || q.F < 0 || q.F > 2*w-2 || last && q.F < f.FU {
			return fmt.Errorf("derivative filter %d: format shifts FIn %d, F %d (sum %d)", i+1, q.FIn, q.F, f.FU)
		}
		n := i + 1
		cf := codeFilter{N: n, Second: q.Second, X1: fmt.Sprintf("d%dx1", n), X2: fmt.Sprintf("d%dx2", n), Y1: fmt.Sprintf("d%dy1", n), Y2: fmt.Sprintf("d%dy2", n),
			Fx: &codeFilterFx{FIn: q.FIn, F: q.F}}
		if fs := d.Problem.Ctrl.DerivativeFilters; i < len(fs) {
			cf.Doc = commentText(fs[i].Describe())
		}
		section(&cf, "D", "derivative filter", q)
		ax.DFilters = append(ax.DFilters, cf)
	}
	if n := len(f.DSections); n > 0 {
		fx.ShDF = f.DSections[n-1].F - f.FU
	}
	if err != nil {
		return err
	}
	fx.Pow2FU = pow2Lit(u, f.FU)
	fx.summary = fixedSummary(u, d)
	ax.Fx = fx
	return nil
}

// pow2Lit is the accumulator literal 2^n.
func pow2Lit(u *codeUnit, n int) string {
	if u.Lang == LangGo {
		return "(1 << " + strconv.Itoa(n) + ")"
	}
	return fmt.Sprintf("((%s)1 << %d)", u.Wide, n)
}

// fixedSummary is the numeric line of an axis's summary: formats and the
// smallest headroom of the range table.
func fixedSummary(u *codeUnit, d *discrete.Design) string {
	re := d.Num
	var cs []string
	for _, c := range re.Coefficients {
		cs = append(cs, c.Name+" "+c.Format)
	}
	head, what := math.Inf(1), ""
	var sat []string
	for _, r := range re.Ranges {
		if r.Saturated {
			sat = append(sat, r.Name)
			continue
		}
		if r.HeadroomBits < head {
			head, what = r.HeadroomBits, r.Name
		}
	}
	s := fmt.Sprintf("Numeric: %s (data %s, accumulators %s, raw = value/full scale*2^%d); formats %s; states: integrator %d, derivative %d, sum %d fractional bits below the output LSB",
		re.Type, u.T, u.Wide, re.W-1, strings.Join(cs, ", "), re.Fixed.FS, re.Fixed.FD, re.Fixed.FU)
	s += filterSummary(re)
	s += dfilterSummary(re)
	if what != "" {
		s += fmt.Sprintf("; minimum headroom %.3g bits (%s)", head, what)
	}
	if len(sat) > 0 {
		s += "; saturating: " + strings.Join(sat, ", ")
	}
	return s + "."
}

// filterSummary is the part of the numeric line about the filter chain:
// each section's coefficient format, its input and output formats and
// the proved bound of its output, then the chain's output and the proved
// bound of its rounding there ("" without a chain).
func filterSummary(re *discrete.Realization) string {
	f := re.Fixed
	if len(f.Sections) == 0 {
		return ""
	}
	var parts []string
	var chain float64
	for _, r := range re.Ranges {
		switch {
		case strings.HasPrefix(r.Name, "filter chain output"):
			chain = r.Bound
		case strings.HasPrefix(r.Name, "filter ") && strings.Contains(r.Name, " output y"):
			var k int
			if _, err := fmt.Sscanf(r.Name, "filter %d", &k); err != nil || k < 1 || k > len(f.Sections) {
				continue
			}
			q := f.Sections[k-1]
			parts = append(parts, fmt.Sprintf("%d. coefficients %s, input %d and output %d fractional bits below the input LSB, |output| <= %s x the input full scale",
				k, fmt.Sprintf("Q%d.%d", re.W-1-q.N, q.N), q.FIn, q.F, codeNum(math.Ldexp(r.Bound, -(q.F+re.W-1)))))
		}
	}
	s := fmt.Sprintf("; filter chain in direct form I, each product rounded once into its section's output format: %s; the chain's output, rounded to the input LSB for the controller, <= %s x the input full scale (l1 gain), its rounding error <= %s input LSB before that rounding, %s",
		strings.Join(parts, "; "), codeNum(math.Ldexp(chain, -(re.W-1))), codeMetric(re.FilterNoiseLSB), re.RoundingProof())
	// The verdict is the filter_rounding check's, made only when the
	// bounds hold (no overflow).
	if c, ok := re.Check("filter_rounding"); ok && c.OK {
		s += " (below half an LSB: no step at engagement, exactly 0 at rest)"
	} else if ok {
		s += " (NOT below half an LSB: the chain may leave a limit cycle at rest)"
	}
	return s
}

// dfilterSummary is the part of the numeric line about the derivative
// filters: each section's coefficient format, its input and output
// formats below the output LSB and the proved bound of its output, then
// the proved bound of the D path's rounding ("" without them).
func dfilterSummary(re *discrete.Realization) string {
	f := re.Fixed
	if len(f.DSections) == 0 {
		return ""
	}
	var parts []string
	for _, r := range re.Ranges {
		var k int
		if !strings.HasPrefix(r.Name, "derivative filter ") || !strings.Contains(r.Name, " output y") {
			continue
		}
		if _, err := fmt.Sscanf(r.Name, "derivative filter %d", &k); err != nil || k < 1 || k > len(f.DSections) {
			continue
		}
		q := f.DSections[k-1]
		parts = append(parts, fmt.Sprintf("%d. coefficients %s, input %d and output %d fractional bits below the output LSB, |output| <= %s x the output full scale",
			k, fmt.Sprintf("Q%d.%d", re.W-1-q.N, q.N), q.FIn, q.F, codeNum(math.Ldexp(r.Bound, -(q.F+re.W-1)))))
	}
	return fmt.Sprintf("; derivative filters in direct form I on the D term, each product rounded once into its section's output format, at rest 0: %s; the D term's rounding error <= %s output LSB (l1 bounds from the derivative's input; %s)",
		strings.Join(parts, "; "), codeMetric(re.DFilterNoiseLSB), re.RoundingProof())
}

// fixedModel adapts discrete.Fixed to the excitation driver.
type fixedModel struct {
	u         *codeUnit
	f         *discrete.Fixed
	s         discrete.FixedState
	w         int
	fin, fout float64
	out       []codeVector
}

func (m *fixedModel) raw(x, fs float64) int32 { return int32(discrete.ToRaw(x/fs, m.w)) }

func (m *fixedModel) lit(v int32) string { return strconv.FormatInt(int64(v), 10) }

func (m *fixedModel) reset(out, meas float64, why string) {
	o, y := m.raw(out, m.fout), m.raw(meas, m.fin)
	m.f.Reset(&m.s, o, y)
	m.out = append(m.out, codeVector{Op: vecReset, A: m.lit(o), B: m.lit(y), Want: "0", Comment: why})
}

func (m *fixedModel) step(r, y float64) float64 {
	rr, yy := m.raw(r, m.fin), m.raw(y, m.fin)
	got := m.f.Step(&m.s, rr, yy)
	m.out = append(m.out, codeVector{Op: vecStep, A: m.lit(rr), B: m.lit(yy), Want: m.lit(got)})
	return discrete.FromRaw(int64(got), m.w) * m.fout
}

func (m *fixedModel) applied(a float64) {
	aa := m.raw(a, m.fout)
	m.f.Applied(&m.s, aa)
	m.out = append(m.out, codeVector{Op: vecApplied, A: m.lit(aa), B: "0", Want: "0"})
}

func (m *fixedModel) inputLimit() float64 { return m.fin }

// nonFinite is false: raw integers cannot be NaN or infinite.
func (m *fixedModel) nonFinite() bool { return false }

func (m *fixedModel) faults(string) {}

// fixedVectors runs the bit-exact integer model on the standard
// excitation.
func fixedVectors(u *codeUnit, ax *codeAxis, d *discrete.Design) ([]codeVector, error) {
	if d.Num == nil || d.Num.Fixed == nil {
		return nil, fmt.Errorf("no fixed-point realization")
	}
	m := &fixedModel{u: u, f: d.Num.Fixed, w: d.Num.W, fin: d.Num.InputFullScale, fout: d.Num.OutputFullScale}
	if err := excite(d, m); err != nil {
		return nil, err
	}
	return m.out, nil
}
