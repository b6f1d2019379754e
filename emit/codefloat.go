package emit

import (
	"fmt"
	"math"
	"strconv"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
)

// codeNumeric is the arithmetic of the generated code: the sample type's
// names and how constants and test vectors are made for it.
type codeNumeric struct {
	kind  airframe.NumericType
	t     string // sample type
	zero  string // its zero literal
	wide  string // fixed point: accumulator type
	bits  int
	fixed bool
}

// newCodeNumeric returns the arithmetic of numeric type t in language l.
func newCodeNumeric(t airframe.NumericType, l Lang) (codeNumeric, error) {
	n := codeNumeric{kind: t}
	c := l == LangC
	switch t {
	case airframe.Float32:
		n.bits = 32
		n.t, n.zero = pick(c, "float", "float32"), pick(c, "0.0f", "0")
	case airframe.Float64:
		n.bits = 64
		n.t, n.zero = pick(c, "double", "float64"), pick(c, "0.0", "0")
	case airframe.Q15, airframe.Q31:
		return newCodeFixedNumeric(t, l)
	default:
		return n, fmt.Errorf("unknown numeric type %q: must be float32, float64, q15 or q31", t)
	}
	return n, nil
}

func pick(c bool, a, b string) string {
	if c {
		return a
	}
	return b
}

// consts fills the named constants of axis ax.
func (n codeNumeric) consts(u *codeUnit, ax *codeAxis, d *discrete.Design) error {
	switch n.kind {
	case airframe.Float32:
		return floatConsts[float32](u, ax, d)
	case airframe.Float64:
		return floatConsts[float64](u, ax, d)
	}
	return fixedConsts(u, ax, d)
}

// vectors runs the reference model on the standard excitation.
func (n codeNumeric) vectors(u *codeUnit, ax *codeAxis, d *discrete.Design) ([]codeVector, error) {
	switch n.kind {
	case airframe.Float32:
		return floatVectors[float32](u, d)
	case airframe.Float64:
		return floatVectors[float64](u, d)
	}
	return fixedVectors(u, ax, d)
}

// codeParams returns the parameters of the float reference model of d
// exactly as the generated code holds them: the controller's
// coefficients and the filter sections rounded to T, each −0 made +0.
func codeParams[T discrete.Float](d *discrete.Design) discrete.Params[T] {
	p := discrete.ParamsOf[T](codeCoeffs(d.Coeffs))
	p.Sections = discrete.SectionsOf[T](codeSections(d.Plant.Sections))
	return p
}

// codeSections returns the filter sections with −0 made +0.
func codeSections(qs []lti.Biquad) []lti.Biquad {
	out := make([]lti.Biquad, len(qs))
	for i, q := range qs {
		out[i] = lti.Biquad{B0: plusZero(q.B0), B1: plusZero(q.B1), B2: plusZero(q.B2), A1: plusZero(q.A1), A2: plusZero(q.A2)}
	}
	return out
}

// codeCoeffs returns the coefficients as the generated code and the
// reference model both use them: with −0 made +0 (a Go constant cannot be
// −0, see plusZero).
func codeCoeffs(k discrete.Coeffs) discrete.Coeffs {
	for _, p := range []*float64{&k.Kp, &k.KpB, &k.G0, &k.G01, &k.Ad, &k.Bd, &k.B0, &k.B1, &k.A1, &k.Lo, &k.Hi, &k.IL, &k.Kt} {
		*p = plusZero(*p)
	}
	if len(k.DSections) > 0 {
		k.DSections = codeSections(k.DSections) // a copy: Coeffs share theirs
	}
	return k
}

// floatLit formats a value of the sample type as a literal of the unit's
// language.
func floatLit[T discrete.Float](u *codeUnit, x T) (string, error) {
	var bits int
	switch any(x).(type) {
	case float32:
		bits = 32
	default:
		bits = 64
	}
	if u.Lang == LangGo {
		return goFloat(float64(x), bits)
	}
	if bits == 32 {
		return cFloat32(float32(x))
	}
	return cFloat64(float64(x))
}

// floatBits is the bit pattern of x as a hexadecimal literal.
func floatBits[T discrete.Float](u *codeUnit, x T) string {
	switch v := any(x).(type) {
	case float32:
		if u.Lang == LangC {
			return fmt.Sprintf("0x%08xu", math.Float32bits(v))
		}
		return fmt.Sprintf("0x%08x", math.Float32bits(v))
	case float64:
		if u.Lang == LangC {
			return fmt.Sprintf("UINT64_C(0x%016x)", math.Float64bits(v))
		}
		return fmt.Sprintf("0x%016x", math.Float64bits(v))
	}
	return ""
}

// floatConsts declares the constants of a float controller: Coeffs rounded
// to T exactly as discrete.ParamsOf rounds them for the reference model.
func floatConsts[T discrete.Float](u *codeUnit, ax *codeAxis, d *discrete.Design) error {
	p := codeParams[T](d)
	var err error
	add := func(dst *string, c, g string, v T, doc string) {
		if err != nil {
			return
		}
		lit, e := floatLit(u, v)
		if e != nil {
			err = fmt.Errorf("constant %s: %w", g, e)
			return
		}
		*dst = constName(u, ax, c, g)
		ax.Consts = append(ax.Consts, codeConst{Name: *dst, Value: lit, Doc: doc, Type: u.T})
	}
	if ax.Lead {
		add(&ax.B0, "B0", "B0", p.B0, "lead: weight of the current error")
		add(&ax.B1, "B1", "B1", p.B1, "lead: weight of the last error")
		add(&ax.A1, "A1", "A1", p.A1, "lead: weight of the last unsaturated output")
	} else {
		add(&ax.Kp, "KP", "Kp", p.Kp, "P gain on the measurement")
		add(&ax.KpB, "KPB", "KpB", p.KpB, "P gain on the setpoint (setpoint weight b times Kp)")
		if ax.HasI {
			add(&ax.G0, "G0", "G0", p.G0, "integral: weight of the current error")
			add(&ax.G01, "G01", "G01", p.G01, "integral: state increment per unit error")
			if ax.AWBackcalc {
				add(&ax.Kt, "KT", "Kt", p.Kt, "anti-windup back-calculation gain T/Tt")
			}
			add(&ax.IL, "INTEGRATOR_LIMIT", "IntegratorLimit", p.IL, "largest |integrator state|, command units")
		}
		if ax.HasD {
			add(&ax.Ad, "AD", "Ad", p.Ad, "derivative filter: pole")
			add(&ax.Bd, "BD", "Bd", p.Bd, "derivative filter: gain")
		}
	}
	add(&ax.Lo, "OUTPUT_LO", "OutputLo", p.Lo, "lowest command")
	add(&ax.Hi, "OUTPUT_HI", "OutputHi", p.Hi, "highest command")
	// section names filter n's coefficients (prefix F or D) and adds
	// them to f.
	section := func(f *codeFilter, prefix, what string, q discrete.Section[T]) {
		c, g := fmt.Sprintf("%s%d_", prefix, f.N), fmt.Sprintf("%s%d", prefix, f.N)
		what = fmt.Sprintf("%s %d", what, f.N)
		add(&f.B0, c+"B0", g+"B0", q.B0, what+": weight of the input")
		add(&f.B1, c+"B1", g+"B1", q.B1, what+": weight of the last input")
		if q.Second {
			add(&f.B2, c+"B2", g+"B2", q.B2, what+": weight of the input two steps back")
		}
		add(&f.A1, c+"A1", g+"A1", q.A1, what+": feedback of the last output")
		if q.Second {
			add(&f.A2, c+"A2", g+"A2", q.A2, what+": feedback of the output two steps back")
		}
	}
	for i, q := range p.Sections {
		f := codeFilter{N: i + 1, Second: q.Second, S1: fmt.Sprintf("f%ds1", i+1), S2: fmt.Sprintf("f%ds2", i+1)}
		if i < len(d.Problem.Filters) {
			f.Doc = commentText(d.Problem.Filters[i].Describe())
		}
		section(&f, "F", "filter", q)
		ax.Filters = append(ax.Filters, f)
	}
	for i, q := range p.DSections {
		f := codeFilter{N: i + 1, Second: q.Second, S1: fmt.Sprintf("d%ds1", i+1), S2: fmt.Sprintf("d%ds2", i+1)}
		if fs := d.Problem.Ctrl.DerivativeFilters; i < len(fs) {
			f.Doc = commentText(fs[i].Describe())
		}
		section(&f, "D", "derivative filter", q)
		ax.DFilters = append(ax.DFilters, f)
	}
	return err
}

// floatModel adapts the float reference model to the excitation driver
// and records the vectors.
type floatModel[T discrete.Float] struct {
	u   *codeUnit
	p   discrete.Params[T]
	s   discrete.State[T]
	out []codeVector
	err error
}

func (m *floatModel[T]) lit(x T) string {
	if !(x-x == 0) {
		return nonFiniteLit(m.u, float64(x))
	}
	s, err := floatLit(m.u, x)
	if err != nil && m.err == nil {
		m.err = err
	}
	return s
}

// q rounds an input to the sample type; −0 becomes +0 so that the Go
// literal (which cannot be −0) carries the same value. NaN and the
// infinities stay what they are.
func (m *floatModel[T]) q(x float64) T { return T(plusZero(float64(T(x)))) }

// nonFiniteLit is the literal of NaN or an infinity in the unit's
// language and sample type: C's NAN and INFINITY (<math.h>, C99 7.12),
// of type float, cast for double; Go's math.NaN and math.Inf, converted
// for float32. A NaN input's sign and payload do not matter: the
// controller only tests it and holds its command.
func nonFiniteLit(u *codeUnit, x float64) string {
	var name string
	switch {
	case math.IsNaN(x):
		name = map[Lang]string{LangC: "NAN", LangGo: "math.NaN()"}[u.Lang]
	case x > 0:
		name = map[Lang]string{LangC: "INFINITY", LangGo: "math.Inf(1)"}[u.Lang]
	default:
		name = map[Lang]string{LangC: "INFINITY", LangGo: "math.Inf(-1)"}[u.Lang]
	}
	if u.Lang == LangC {
		if u.Bits == 64 {
			name = "(double)" + name
		}
		if x < 0 {
			name = "(-" + name + ")"
		}
		return name
	}
	if u.Bits == 32 {
		return "float32(" + name + ")"
	}
	return name
}

func (m *floatModel[T]) reset(out, meas float64, why string) {
	o, y := m.q(out), m.q(meas)
	discrete.Reset(&m.p, &m.s, o, y)
	m.out = append(m.out, codeVector{Op: vecReset, A: m.lit(o), B: m.lit(y), Want: "0", Comment: why})
}

func (m *floatModel[T]) step(r, y float64) float64 {
	rr, yy := m.q(r), m.q(y)
	got := discrete.Step(&m.p, &m.s, rr, yy)
	m.out = append(m.out, codeVector{Op: vecStep, A: m.lit(rr), B: m.lit(yy), Want: floatBits(m.u, got)})
	return float64(got)
}

func (m *floatModel[T]) applied(a float64) {
	aa := m.q(a)
	discrete.Applied(&m.p, &m.s, aa)
	m.out = append(m.out, codeVector{Op: vecApplied, A: m.lit(aa), B: m.lit(0), Want: "0"})
}

func (m *floatModel[T]) inputLimit() float64 { return math.Inf(1) }

// nonFinite is true: float inputs can be NaN or infinite, and the
// excitation includes such inputs.
func (m *floatModel[T]) nonFinite() bool { return true }

// faults records a check of the model's fault count.
func (m *floatModel[T]) faults(why string) {
	m.out = append(m.out, codeVector{Op: vecFaults, A: m.lit(0), B: m.lit(0), Want: strconv.FormatUint(uint64(m.s.Faults), 10), Comment: why})
}

// floatVectors runs the float reference model (discrete.Step) on the
// standard excitation.
func floatVectors[T discrete.Float](u *codeUnit, d *discrete.Design) ([]codeVector, error) {
	m := &floatModel[T]{u: u, p: codeParams[T](d)}
	if err := excite(d, m); err != nil {
		return nil, err
	}
	if m.err != nil {
		return nil, m.err
	}
	return m.out, nil
}
