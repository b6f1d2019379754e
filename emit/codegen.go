package emit

import (
	"bytes"
	"errors"
	"fmt"
	"go/format"
	"strings"
	"text/template"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/internal/version"
	"locusmith/templates"
)

// Lang is the language of generated controller code.
type Lang string

// The languages.
const (
	LangC  Lang = "c"
	LangGo Lang = "go"
)

// CodeOptions choose what GenerateCode produces.
type CodeOptions struct {
	Lang Lang
	// HeaderOnly (C) puts everything into <airframe>_rate.h as static
	// inline functions, instead of a header and a source file.
	HeaderOnly bool
	// Vectors adds the test-vector program: <airframe>_rate_vectors.c, or
	// <airframe>rate_vectors_test.go.
	Vectors bool
	// AllowUnmet generates an airframe whose checks fail, and says so in
	// the header; without it such an airframe gives an *UnmetError.
	AllowUnmet bool
}

// Source is one generated file: a base name (no directory) and its
// content.
type Source struct {
	Name string
	Data []byte
}

// UnmetError says that an airframe was not generated because a check
// failed or an axis could not be designed.
type UnmetError struct {
	Airframe string
	File     string
	Reasons  []string // one line each, from Unmet
}

func (e *UnmetError) Error() string {
	return fmt.Sprintf("%s: airframe %s not generated: %s", e.File, e.Airframe, strings.Join(e.Reasons, "; "))
}

// DesignFailedError says that an axis has no design at all, so there is
// nothing to generate even with AllowUnmet.
type DesignFailedError struct {
	Airframe, Axis string
	Err            error
}

func (e *DesignFailedError) Error() string {
	return fmt.Sprintf("airframe %s: axis %s has no design: %v", e.Airframe, e.Axis, e.Err)
}

func (e *DesignFailedError) Unwrap() error { return e.Err }

// CodeGenerator renders controller source from design results. It holds
// the parsed templates and no other state; one generator can render any
// number of airframes, also concurrently.
type CodeGenerator struct {
	tmpl *template.Template
}

// NewCodeGenerator parses the code templates (templates/code_*.tmpl).
func NewCodeGenerator() (*CodeGenerator, error) {
	t, err := template.New("code").Option("missingkey=error").Funcs(codeFixedFuncs()).ParseFS(templates.FS, "code_*.tmpl")
	if err != nil {
		return nil, fmt.Errorf("parse code templates: %w", err)
	}
	return &CodeGenerator{tmpl: t}, nil
}

// GenerateCode renders the controller source of one airframe with a new
// CodeGenerator; see CodeGenerator.Generate.
func GenerateCode(a *discrete.Airframe, o CodeOptions) ([]Source, []string, error) {
	g, err := NewCodeGenerator()
	if err != nil {
		return nil, nil, err
	}
	return g.Generate(a, o)
}

// Generate renders the controller source of one airframe: C
// <airframe>_rate.h and <airframe>_rate.c (or the header alone with
// HeaderOnly), or the Go file <airframe>rate.go of package <airframe>rate,
// and the vector program with Vectors. It returns the files in a fixed
// order and warnings about names. Nothing is written.
//
// It fails with an *UnmetError when a check failed and AllowUnmet is not
// set, a *DesignFailedError when an axis has no design, a *NameError when a
// name cannot be used, and an error for an option it does not know.
func (g *CodeGenerator) Generate(a *discrete.Airframe, o CodeOptions) ([]Source, []string, error) {
	srcs, warns, _, err := g.generate(a, o)
	return srcs, warns, err
}

// generate is Generate, also returning the template data.
func (g *CodeGenerator) generate(a *discrete.Airframe, o CodeOptions) ([]Source, []string, *codeUnit, error) {
	u, err := newCodeUnit(a, o)
	if err != nil {
		return nil, nil, nil, err
	}
	warns, err := checkNames(u)
	if err != nil {
		return nil, nil, nil, err
	}
	srcs, err := g.render(u)
	if err != nil {
		return nil, nil, nil, fmt.Errorf("airframe %s: %w", u.Airframe, err)
	}
	return srcs, warns, u, nil
}

// GenerateAll renders several airframes of one call. Besides the errors of
// Generate, it rejects two airframes of the same name (they would write the
// same files) and C names that two airframes both generate (the later
// airframe gets the error). An airframe that fails does not stop the
// others: errs[i] is the error of as[i], and srcs[i] its files.
func (g *CodeGenerator) GenerateAll(as []*discrete.Airframe, o CodeOptions) (srcs [][]Source, warns []string, errs []error) {
	srcs = make([][]Source, len(as))
	errs = make([]error, len(as))
	b := g.NewBatch(o)
	for i, a := range as {
		var w []string
		srcs[i], w, errs[i] = b.Add(a)
		warns = append(warns, w...)
	}
	return srcs, warns, errs
}

// Batch renders the airframes of one call one at a time, in the order
// they come, keeping of each only its name and the C names it declares:
// enough to reject an airframe name or a C name that an earlier airframe
// of the call already took, and little enough that a caller streaming the
// designs holds one airframe at a time, whatever their number.
type Batch struct {
	g     *CodeGenerator
	o     CodeOptions
	first map[string]string // airframe name → file path
	owner map[string]string // C identifier → airframe
}

// NewBatch starts a batch with options o.
func (g *CodeGenerator) NewBatch(o CodeOptions) *Batch {
	return &Batch{g: g, o: o, first: map[string]string{}, owner: map[string]string{}}
}

// Add renders airframe a (see Generate) and checks its names against the
// airframes added before it.
func (b *Batch) Add(a *discrete.Airframe) ([]Source, []string, error) {
	if a == nil || a.File == nil {
		return nil, nil, errors.New("no airframe")
	}
	name := a.File.Airframe
	if prev, ok := b.first[name]; ok {
		return nil, nil, &NameError{Airframe: name, Name: name, Reason: fmt.Sprintf("%s and %s both name this airframe; their files would overwrite each other", displayPath(prev), displayPath(a.File.Path))}
	}
	b.first[name] = a.File.Path
	srcs, warns, u, err := b.g.generate(a, b.o)
	if err != nil {
		return nil, nil, err
	}
	if err := claimNames(b.owner, u); err != nil {
		return nil, warns, err
	}
	return srcs, warns, nil
}

// SourceNames returns the names of the files Generate writes for
// airframe name with options o, in Generate's order.
func SourceNames(airframe string, o CodeOptions) []string {
	var ns []string
	for _, f := range sourceFiles(airframe, o) {
		ns = append(ns, f.name)
	}
	return ns
}

// sourceFiles lists the files of an airframe and their templates.
func sourceFiles(airframe string, o CodeOptions) []struct{ name, tmpl string } {
	type f = struct{ name, tmpl string }
	var fs []f
	switch o.Lang {
	case LangC:
		fs = append(fs, f{airframe + "_rate.h", "code_c_header"})
		if !o.HeaderOnly {
			fs = append(fs, f{airframe + "_rate.c", "code_c_source"})
		}
		if o.Vectors {
			fs = append(fs, f{airframe + "_rate_vectors.c", "code_c_vectors"}, f{airframe + "_rate_vectors_qemu.c", "code_c_vectors_qemu"})
		}
	case LangGo:
		fs = append(fs, f{airframe + "rate.go", "code_go"})
		if o.Vectors {
			fs = append(fs, f{airframe + "rate_vectors_test.go", "code_go_vectors"})
		}
	}
	return fs
}

// render executes the templates of the unit's language.
func (g *CodeGenerator) render(u *codeUnit) ([]Source, error) {
	var out []Source
	o := CodeOptions{Lang: u.Lang, HeaderOnly: u.HeaderOnly, Vectors: u.Vectors}
	for _, f := range sourceFiles(u.Airframe, o) {
		var b bytes.Buffer
		if err := g.tmpl.ExecuteTemplate(&b, f.tmpl, u); err != nil {
			return nil, fmt.Errorf("render %s: %w", f.name, err)
		}
		data := b.Bytes()
		if u.Lang == LangGo {
			fd, err := format.Source(data)
			if err != nil {
				return nil, fmt.Errorf("format %s: %w", f.name, err)
			}
			data = fd
		}
		out = append(out, Source{Name: f.name, Data: data})
	}
	if u.Lang == LangC {
		setStamps(u, out)
	}
	return out, nil
}

// codeUnit is the data the templates render: one airframe, every value
// already formatted for the target language, every piece of user text
// already escaped.
type codeUnit struct {
	Version    string
	Lang       Lang
	HeaderOnly bool
	Vectors    bool
	Airframe   string // the airframe name, a checked identifier
	Numeric    airframe.NumericType
	Fixed      bool
	// T is the sample type (float, double, int16_t, int32_t; Go float32,
	// float64, int16, int32), Zero its zero literal.
	T, Zero string
	// Wide is the fixed-point accumulator type; StateT the type of the
	// states (Wide for fixed point, T for float); Bits the sample width.
	Wide, StateT string
	Bits         int
	// Helper names of the fixed-point code (see codefixed.go).
	Rsh, Mul, MulW, SatAdd, SatShl string
	// Which of them the axes use (an unused static function is a warning).
	UsesMul, UsesMulW, UsesSatAdd, UsesSatShl bool
	// Test vectors: the type of the expected value in C and Go (the bit
	// pattern of a float, or the fixed-point sample), the printf width of
	// a bit pattern in hex digits, and the math function giving the bits.
	WantC, WantGo, HexWidth, GoBits string
	// C names: the header file, its include guard, the clamp helper, and
	// "static inline " for the header-only variant.
	Header, Guard, Clamp, Linkage string
	// StampMacro is the C macro of the content stamp (see stamp.go) and
	// Stamp its value, shared by the header and the source file.
	StampMacro, Stamp string
	// NoContract is the macro that opens every float function of the
	// header-only variant (it turns floating-point contraction off where a
	// pragma can do so in a function body).
	NoContract string
	// QemuSys and QemuHeap are the static names of the qemu-arm start-up
	// stub of the vector program.
	QemuSys, QemuHeap string
	// GoPackage is <airframe>rate with the underscores of the airframe
	// name dropped (Go package names carry none); MainFile the file that
	// holds the design summary (the C header or the Go file).
	GoPackage, MainFile string
	// FirstLine is the "Code generated" line; Intro the comment lines after
	// it (without the comment marker, "" for an empty comment line) in the
	// file that carries the design summary, IntroShort those of the other
	// files, which point to it.
	FirstLine         string
	Intro, IntroShort []string
	Axes              []*codeAxis
}

// codeAxis is one axis.
type codeAxis struct {
	U      *codeUnit // the airframe, for the templates
	Name   string    // axis name
	Prefix string    // C: <airframe>_<axis>
	GoType string    // Go: the axis name with its first letter upper-cased
	// Structure of the controller (see discrete.Coeffs).
	Lead, HasI, HasD, DOnError, AWClamp, AWBackcalc bool
	// HasE, HasUU and HasPending say which state fields the fixed-point
	// form uses (the last error, the last unsaturated command, the flag of
	// the deferred update); the float code updates its state eagerly and
	// has none of them. HasInc (float, conditional integration) is the
	// increment of the last step, which the applied function may withdraw;
	// HasFaults (float) the counter of non-finite inputs.
	HasE, HasUU, HasPending, HasInc, HasFaults bool
	// Consts are the named constants in declaration order; the fields
	// below hold the names of those the form uses ("" otherwise).
	Consts                                   []codeConst
	Kp, KpB, G0, G01, Kt, Ad, Bd, B0, B1, A1 string
	Lo, Hi, IL                               string
	Doc                                      []string // comment lines for the type
	ResetDoc                                 []string // comment lines for the reset function
	AppliedDoc                               []string // comment lines for the applied function
	Vectors                                  []codeVector
	VectorsName                              string
	Fx                                       *codeFixed // fixed-point details; nil for float
	// Filters is the feedback filter chain, in the order it runs.
	Filters []codeFilter
	// DFilters are the derivative filters, in the order
	// they run on the filtered derivative.
	DFilters []codeFilter
}

// codeFilter is one section of the feedback filter chain or of the
// derivative filters: the names of its constants and states, whether it
// has the second state, and its description for the comment.
type codeFilter struct {
	N                  int // 1-based position in the chain
	B0, B1, B2, A1, A2 string
	S1, S2             string // float: state field names (transposed direct form II)
	Second             bool
	Doc                string
	// Fixed point (direct form I): the state field names of the last
	// inputs and outputs, and the products and formats; nil for float.
	X1, X2, Y1, Y2 string
	Fx             *codeFilterFx
}

// codeFilterFx is the fixed-point arithmetic of one filter section (see
// discrete.FixedSection): the product of each coefficient, the fractional
// bits of its input and output below the input LSB (a derivative
// section's: below the output LSB), and the literals 2^FIn and 2^F (""
// for 0) with which _reset scales the measurement (feedback sections
// only: the derivative sections start at 0).
type codeFilterFx struct {
	B0, B1, B2, A1, A2 codeQ
	FIn, F             int
	Pow2In, Pow2Out    string
}

// codeConst is one named constant.
type codeConst struct {
	Name, Value, Doc string
	Type             string // Go: the constant's type
	Pad              string // C: spaces that align the values
}

// codeVector is one entry of a test-vector table: Op 0 steps with
// setpoint A and measurement B and expects Want; Op 1 calls _applied with
// A; Op 2 calls _reset with output A and measurement B; Op 3 (float)
// checks that the fault count is Want. A and B are literals of the sample
// type; Want is the expected output's bit pattern (floats) or value
// (fixed point), or the fault count.
type codeVector struct {
	Op      int
	A, B    string
	Want    string
	Comment string
}

// Vector operations.
const (
	vecStep    = 0
	vecApplied = 1
	vecReset   = 2
	vecFaults  = 3
)

// newCodeUnit builds the template data of airframe a.
func newCodeUnit(a *discrete.Airframe, o CodeOptions) (*codeUnit, error) {
	if a == nil || a.File == nil {
		return nil, errors.New("no airframe")
	}
	f := a.File
	u := &codeUnit{
		Version: version.Version, Lang: o.Lang, HeaderOnly: o.HeaderOnly, Vectors: o.Vectors,
		Airframe: f.Airframe, Numeric: f.Numeric.Type,
	}
	switch o.Lang {
	case LangC, LangGo:
	default:
		return nil, fmt.Errorf("unknown language %q: must be c or go", o.Lang)
	}
	if o.HeaderOnly && o.Lang != LangC {
		return nil, errors.New("header-only output is a C variant; it does not apply to Go")
	}
	if len(a.Axes) == 0 {
		return nil, fmt.Errorf("%s: airframe %s has no axes", displayPath(f.Path), f.Airframe)
	}
	for _, x := range a.Axes {
		if x.Design == nil {
			err := x.Err
			if err == nil {
				err = errors.New("no design")
			}
			return nil, &DesignFailedError{Airframe: f.Airframe, Axis: x.Name, Err: err}
		}
	}
	unmet := a.Unmet()
	if len(unmet) > 0 && !o.AllowUnmet {
		return nil, &UnmetError{Airframe: f.Airframe, File: displayPath(f.Path), Reasons: unmet}
	}
	u.Header = f.Airframe + "_rate.h"
	u.Guard = strings.ToUpper(f.Airframe) + "_RATE_H"
	u.Clamp = f.Airframe + "_clamp"
	u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl = f.Airframe+"_rsh", f.Airframe+"_mul", f.Airframe+"_mulw", f.Airframe+"_satadd", f.Airframe+"_satshl"
	if o.Lang == LangGo {
		u.Clamp, u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl = "clamp", "rsh", "mul", "mulw", "satadd", "satshl"
	}
	if o.HeaderOnly {
		u.Linkage = "static inline "
	}
	u.StampMacro = strings.ToUpper(f.Airframe) + "_RATE_STAMP"
	u.Stamp = stampZero
	u.NoContract = strings.ToUpper(f.Airframe) + "_RATE_NO_CONTRACT"
	u.QemuSys, u.QemuHeap = f.Airframe+"_qemu_syscall", f.Airframe+"_qemu_heap"
	u.GoPackage = strings.ReplaceAll(f.Airframe, "_", "") + "rate"
	u.MainFile = u.Header
	if o.Lang == LangGo {
		u.MainFile = f.Airframe + "rate.go"
	}
	num, err := newCodeNumeric(u.Numeric, o.Lang)
	if err != nil {
		return nil, err
	}
	u.T, u.Zero, u.Wide, u.Bits, u.Fixed = num.t, num.zero, num.wide, num.bits, num.fixed
	u.StateT = u.T
	if u.Fixed {
		u.StateT = u.Wide
	}
	switch {
	case u.Fixed:
		u.WantC, u.WantGo = num.t, num.t
	case u.Bits == 32:
		u.WantC, u.WantGo, u.HexWidth, u.GoBits = "uint32_t", "uint32", "08", "Float32bits"
	default:
		u.WantC, u.WantGo, u.HexWidth, u.GoBits = "uint64_t", "uint64", "016", "Float64bits"
	}
	for _, x := range a.Axes {
		ax, err := newCodeAxis(u, num, x)
		if err != nil {
			return nil, err
		}
		u.Axes = append(u.Axes, ax)
	}
	u.FirstLine = fmt.Sprintf("// Code generated by locusmith %s from %s; DO NOT EDIT.", version.Version, displayPath(f.Path))
	u.Intro = codeIntro(a, u, unmet)
	u.IntroShort = codeIntroShort(a, u, unmet)
	return u, nil
}

// newCodeAxis builds the template data of one axis.
func newCodeAxis(u *codeUnit, num codeNumeric, x discrete.Outcome) (*codeAxis, error) {
	d := x.Design
	k := d.Coeffs
	ax := &codeAxis{
		U:      u,
		Name:   x.Name,
		Prefix: u.Airframe + "_" + x.Name,
		GoType: strings.ToUpper(x.Name[:1]) + x.Name[1:],
	}
	switch k.Form {
	case airframe.FormP, airframe.FormPI, airframe.FormPD, airframe.FormPID, airframe.FormLead:
	default:
		return nil, fmt.Errorf("axis %s: unknown controller form %q", x.Name, k.Form)
	}
	ax.Lead = k.Form == airframe.FormLead
	ax.HasI = k.Form.HasIntegral()
	ax.HasD = k.Form.HasDerivative()
	ax.DOnError = ax.HasD && k.DerivativeOnError
	if ax.HasI {
		switch k.AntiWindup {
		case discrete.AWNone:
		case discrete.AWClamp:
			ax.AWClamp = true
		case discrete.AWBackcalc:
			ax.AWBackcalc = true
		default:
			return nil, fmt.Errorf("axis %s: unknown anti-windup %q", x.Name, k.AntiWindup)
		}
	}
	if u.Fixed {
		ax.HasE = ax.HasI || ax.Lead
		ax.HasPending = ax.HasE
		ax.HasUU = ax.Lead || ax.AWClamp || ax.AWBackcalc
	} else {
		ax.HasInc = ax.AWClamp
		ax.HasFaults = true
	}
	ax.VectorsName = "vectors" + ax.GoType
	if u.Lang == LangC {
		ax.VectorsName = ax.Prefix + "_vectors"
	}
	if err := num.consts(u, ax, d); err != nil {
		return nil, fmt.Errorf("axis %s: %w", x.Name, err)
	}
	// The docs after the constants, which fill the filter chain that the
	// reset's doc describes.
	ax.Doc = axisDoc(u, x, ax)
	ax.ResetDoc = resetDoc(u, ax)
	ax.AppliedDoc = appliedDoc(u, ax)
	if u.Lang == LangC {
		w := 0
		for _, c := range ax.Consts {
			w = max(w, len(c.Name))
		}
		for i := range ax.Consts {
			ax.Consts[i].Pad = strings.Repeat(" ", w-len(ax.Consts[i].Name))
		}
	}
	if u.Vectors {
		vs, err := num.vectors(u, ax, d)
		if err != nil {
			return nil, fmt.Errorf("axis %s: test vectors: %w", x.Name, err)
		}
		ax.Vectors = vs
	}
	return ax, nil
}

// constName returns the language's name of constant role r of axis ax:
// C <AIRFRAME>_<AXIS>_<ROLE>, Go <Axis><Role>.
func constName(u *codeUnit, ax *codeAxis, c, g string) string {
	if u.Lang == LangGo {
		return ax.GoType + g
	}
	return strings.ToUpper(ax.Prefix) + "_" + c
}

// StepOps is the number of arithmetic operations one step of the
// controller with coefficients k needs, as the difference equations of
// discrete.Coeffs write them (the same for every numeric type; fixed point
// adds the rounding of each product): the yardstick for the instruction
// counts of the generated code.
//
// The sections of the feedback filter chain the step runs first add theirs
// (5 for a first-order section, 9 for a second-order one; see
// arithmeticOps).
func StepOps(k discrete.Coeffs, sections ...lti.Biquad) int {
	ax := &codeAxis{Lead: k.Form == airframe.FormLead, HasI: k.Form.HasIntegral(), HasD: k.Form.HasDerivative()}
	for _, q := range sections {
		ax.Filters = append(ax.Filters, codeFilter{Second: q.B2 != 0 || q.A2 != 0})
	}
	for _, q := range k.DSections {
		ax.DFilters = append(ax.DFilters, codeFilter{Second: q.B2 != 0 || q.A2 != 0})
	}
	ax.DOnError = ax.HasD && k.DerivativeOnError
	ax.AWClamp = ax.HasI && k.AntiWindup == discrete.AWClamp
	ax.AWBackcalc = ax.HasI && k.AntiWindup == discrete.AWBackcalc
	return arithmeticOps(ax)
}

// arithmeticOps counts the operations of one step: additions,
// subtractions, multiplications and negations, and the comparisons of the
// clamps and of conditional integration, one each.
func arithmeticOps(ax *codeAxis) int {
	const clampOps = 2 // two comparisons
	if ax.Lead {
		// x = B1·e − A1·ul (3), e = r − y (1), ul = B0·e + x (2), clamp.
		return 3 + 1 + 2 + clampOps
	}
	n := 0
	for _, f := range ax.Filters {
		// out = B0·w + s1 (2), s1 = B1·w − A1·out (+ s2) (3, 4), and for
		// a second-order section s2 = B2·w − A2·out (3).
		n += 5
		if f.Second {
			n += 4
		}
	}
	n += 3 // KpB·r − Kp·y
	if ax.HasI {
		n += 1 + 3 // e; + (s + G0·e)
		n++        // G01·e
		switch {
		case ax.AWClamp:
			n += 4 // four comparisons
		case ax.AWBackcalc:
			n += 3 // + Kt·(ua − uu)
		}
		n += 1 + clampOps // s + inc, clamp
	}
	if ax.HasD {
		if ax.DOnError && !ax.HasI {
			n++ // e
		}
		if !ax.DOnError {
			n++ // −y
		}
		n += 4 + 1 // Ad·ud + Bd·(v − vp); + ud
		for _, f := range ax.DFilters {
			n += 5 // as a feedback section
			if f.Second {
				n += 4
			}
		}
	}
	return n + clampOps
}
