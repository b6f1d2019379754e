package review

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"
	"strings"
	"sync"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/internal/version"
	"locusmith/synth"
)

// Page is the data of the Markdown template (templates/report.md.tmpl).
// Every number is already formatted: the template only lays out, and
// every piece of free text (the file's description, warnings, errors) is
// already escaped for Markdown.
type Page struct {
	Airframe    string
	Version     string
	File        string // the input path as given
	SHA256      string
	Description string
	LoopHz      string
	Period      string
	Delay       string // the compute delay, "1 sample"
	Numeric     string
	OK          bool
	Summary     []SummaryRow
	// SummaryChecks are the checks of every axis, each at its worst plant
	// of the envelope.
	SummaryChecks []SummaryCheck
	Axes          []AxisPage
	Cautions      []string
}

// SummaryRow is one axis in the summary table: its form, its result and
// its gains.
type SummaryRow struct {
	Axis, Form, Status, Gains string
}

// SummaryCheck is one check of one axis in the summary.
type SummaryCheck struct {
	Axis string
	CheckRow
}

// AxisPage is the section of one axis.
type AxisPage struct {
	Name  string
	Error string // the design failed; nothing else is filled
	Job   string
	Form  string
	// Controller describes the structure: form, derivative, weight,
	// anti-windup, discretization.
	Controller string
	Plant      []string // lines: transfer function, poles, zeros, delay
	Sensor     []string
	Spec       []Row
	Targets    []string // the target derivation, line by line
	Working    Working
	Gains      []Row
	Coeffs     []Row
	Metrics    []MetricRow
	Checks     []CheckRow
	// Phase is where the loop's phase goes at the crossover: the filters,
	// the sampling and the delays, and what is left as margin.
	Phase      []Row
	PhaseTotal string
	// ChainPhase is the feedback filter chain's share of it, the
	// filters together, and its gain at the crossover ("" without a
	// chain or a crossover).
	ChainPhase string
	// Chain compares the design with the axis designed again without
	// its filter chain: what the chain buys (nil without a chain, or
	// when the comparison was not designed).
	Chain    []ChainRow
	Envelope *EnvelopePage
	CPoles   string
	DPoles   string
	Fixed    *FixedPoint
	Plots    []Plot
	Notes    []string
	Warnings []string
	OK       bool
}

// Row is a name and a value (and, in some tables, a unit or note).
type Row struct {
	Name, Value, Note string
}

// MetricRow is one line of the metrics table.
type MetricRow struct {
	Name, Spec, Continuous, Discrete, Fixed, Status string
}

// CheckRow is one check: its worst value over the envelope's plants, the
// limit, the result and the plant where the value is worst.
type CheckRow struct {
	Name, Value, Limit, Status, Worst string
}

// EnvelopePage is the sampled loop at every plant of the final
// verification.
type EnvelopePage struct {
	Intervals string // "gain ×[0.9, 1.1], lag ×[1, 1], delay +[0, 0] s"
	Count     int
	Plants    []EnvelopeRow
}

// EnvelopeRow is one plant of the envelope and the loop's figures there.
type EnvelopeRow struct {
	Kind                                         string // nominal, corner, between
	Gain, Lag, Delay                             string
	Stable                                       string
	Overshoot, Settling, PhaseMargin, GainMargin string
	Ms, Mt, Peak, Recovery                       string
}

// Working is the root-locus placement, for checking by hand.
type Working struct {
	Target   string
	Terms    []Term
	Sum      string // the loop angle and how it adds up
	Deficit  string
	Whose    string // whose angle and magnitude are shown: "the designed controller", "the textbook placement"
	Supplied string // what that controller supplies: ∠C(s*)
	Mag      string // |L(s*)|
	Needed   string // 1/|L(s*)|
	Got      string // |C(s*)|
	Residual string
	Extra    []string // the form's extra condition (PID third pole, lead zero)
}

// Term is one row of the angle table.
type Term struct {
	Kind, Of, At, Angle, Distance string
}

// FixedPoint is the fixed-point table of an axis.
type FixedPoint struct {
	Type string
	// Fixed: an integer realization (the section is "Fixed point");
	// otherwise the coefficients in floating point.
	Fixed  bool
	Coeffs []FixedCoeff
	Ranges []FixedRange
	Note   string
}

// FixedCoeff is one quantized coefficient.
type FixedCoeff struct{ Name, Value, Quantized, Format, RelError string }

// FixedRange is one proved signal range.
type FixedRange struct{ Name, Bound, Capacity, Headroom string }

// Plot is one figure of an axis: the SVG it is in, or why it is missing.
type Plot struct {
	Kind, File, Caption, Note, Missing string
}

// cautions are the safety notes every report carries (a function, so
// that no report shares a slice with another).
func cautions() []string {
	return []string{
		"These results are model-based: they are only as good as the plant, sensor and delay models in the airframe file, and they do not replace flight testing.",
		"Bench-test the generated controller with the propellers off (or the actuator disconnected) before anything can move: check signs, limits and the response to a rate step.",
		"Make the first flight tethered or otherwise restrained, with a way to cut power at once.",
		"Follow the local aviation rules, and have the design and the generated code reviewed by a qualified person before flight.",
	}
}

// model builds the report data and renders the plots of an airframe.
func model(a *discrete.Airframe) (*Page, []builtFigure) {
	f := a.File
	r := &Page{
		Airframe:    f.Airframe,
		Version:     version.Version,
		File:        mdCode(airframe.SafeText(f.Path)),
		SHA256:      f.SHA256,
		Description: mdText(f.Description),
		LoopHz:      g(f.Loop.Hz, 6),
		Period:      g(1/f.Loop.Hz, 4),
		Delay:       plural(f.Loop.ComputeDelay, "sample"),
		Numeric:     string(f.Numeric.Type),
		OK:          a.OK(),
		Cautions:    cautions(),
	}
	// The axes are independent: their plots are drawn concurrently and
	// collected in the file's axis order, so the output does not depend
	// on the scheduling.
	type result struct {
		ar   AxisPage
		figs []builtFigure
	}
	res := make([]result, len(a.Axes))
	var wg sync.WaitGroup
	for i, x := range a.Axes {
		wg.Add(1)
		go func() {
			defer wg.Done()
			defer func() {
				if p := recover(); p != nil {
					res[i] = result{ar: AxisPage{Name: x.Name, Error: mdText(fmt.Sprintf("the report of this axis failed (a bug; please report it with the input file): %v", p))}}
				}
			}()
			ar, fs := axisModel(f.Airframe, x)
			res[i] = result{ar, fs}
		}()
	}
	wg.Wait()
	var figs []builtFigure
	for i, x := range a.Axes {
		figs = append(figs, res[i].figs...)
		r.Axes = append(r.Axes, res[i].ar)
		r.Summary = append(r.Summary, summaryRow(x, res[i].ar))
		for _, c := range res[i].ar.Checks {
			r.SummaryChecks = append(r.SummaryChecks, SummaryCheck{Axis: x.Name, CheckRow: c})
		}
	}
	return r, figs
}

func summaryRow(x discrete.Outcome, ar AxisPage) SummaryRow {
	row := SummaryRow{Axis: x.Name, Form: ar.Form, Status: "met", Gains: "–"}
	if x.Err != nil || x.Design == nil || x.Design.Cont == nil {
		row.Status = "**not designed**"
		return row
	}
	d := x.Design
	var failed []string
	for _, c := range d.Checks {
		if !c.OK {
			failed = append(failed, strings.ReplaceAll(c.Name, "_", " "))
		}
	}
	if len(failed) > 0 {
		row.Status = "**FAIL**: " + strings.Join(failed, ", ")
	}
	row.Gains = gainsText(d.Cont.Ctrl)
	return row
}

// gainsText writes a controller's gains on one line: "Kp = 0.02654,
// Ki = 0.3468, Kd = 0.0003764, b = 0.1".
func gainsText(k synth.Controller) string {
	if k.Form == airframe.FormLead {
		return fmt.Sprintf("K = %s, zero %s rad/s, pole %s rad/s", g4(k.K), g4(k.Zero), g4(k.Pole))
	}
	s := "Kp = " + g4(k.Kp)
	if k.Form.HasIntegral() {
		s += ", Ki = " + g4(k.Ki)
	}
	if k.Form.HasDerivative() {
		s += ", Kd = " + g4(k.Kd) + ", Tf = " + sec(k.Tf)
	}
	return s + ", b = " + g(k.B, 4)
}

func axisModel(airframe string, x discrete.Outcome) (AxisPage, []builtFigure) {
	ar := AxisPage{Name: x.Name}
	if x.Err != nil || x.Design == nil || x.Design.Cont == nil {
		msg := "no design"
		if x.Err != nil {
			msg = strings.TrimPrefix(x.Err.Error(), "axis "+x.Name+": ")
		}
		ar.Error = mdText(msg)
		return ar, nil
	}
	d := x.Design
	p := d.Problem
	c := d.Cont
	ar.OK = d.OK()
	ar.Form = string(p.Ctrl.Form)
	ar.Job = jobOf(x.Name, d)
	ar.Controller = formText(d)
	ar.Plant = plantLines(p)
	ar.Sensor = sensorLines(p)
	ar.Spec, ar.Targets = specRows(d)
	ar.Working = workingOf(d)
	ar.Gains = gainRows(c)
	ar.Coeffs = coeffRows(d)
	ar.Metrics, ar.Checks = metricRows(d)
	ar.Phase, ar.PhaseTotal = phaseBudget(d)
	ar.ChainPhase = chainPhase(d)
	ar.Chain = chainRows(d)
	ar.Envelope = envelopePage(d)
	ar.CPoles = polesText(c.Verif.Poles, "")
	ar.DPoles = zPolesText(d.Verif.Poles, d.Plant.T)
	ar.Fixed = fixedOf(d)
	for _, w := range dedup(d.Warnings) {
		ar.Warnings = append(ar.Warnings, mdText(sentence(w)))
	}
	pa, notes := newPlotAxis(x)
	figs, plots := axisFigures(airframe, pa)
	ar.Plots = plots
	for _, n := range notes {
		ar.Notes = append(ar.Notes, mdText(sentence(n)))
	}
	return ar, figs
}

// jobOf says what the loop does, in a reviewer's words.
func jobOf(name string, d *discrete.Design) string {
	about := map[string]string{
		"roll":  "the body rate about the roll (longitudinal) axis",
		"pitch": "the body rate about the pitch (lateral) axis",
		"yaw":   "the body rate about the yaw (vertical) axis",
	}[name]
	if about == "" {
		about = "the rate of axis " + mdText(name)
	}
	k := d.Coeffs
	return fmt.Sprintf("The **%s** loop makes %s follow its setpoint: every %s s it reads the rate setpoint r and the measured rate y, and commands the actuator with u in [%s, %s].",
		mdText(name), about, g(d.Plant.T, 4), g(k.Lo, 4), g(k.Hi, 4))
}

// formText describes the controller structure.
func formText(d *discrete.Design) string {
	p, c, k := d.Problem, d.Cont.Ctrl, d.Coeffs
	var parts []string
	switch c.Form {
	case airframe.FormP:
		parts = append(parts, "P controller")
	case airframe.FormPI:
		parts = append(parts, "PI controller")
	case airframe.FormPD, airframe.FormPID:
		on := "on the measurement (no derivative kick on a setpoint step)"
		if c.DerivativeOnError {
			on = "on the error"
		}
		parts = append(parts, fmt.Sprintf("%s controller with the derivative filtered at %s Hz (Tf = %s s), %s",
			strings.ToUpper(string(c.Form)), g(p.Ctrl.DerivativeLowpassHz, 4), g(c.Tf, 4), on))
		if fs := p.Ctrl.DerivativeFilters; len(fs) > 0 {
			ds := make([]string, len(fs))
			for i, f := range fs {
				ds[i] = f.Describe()
			}
			parts = append(parts, "the derivative term then through "+strings.Join(ds, ", then ")+" (on the derivative alone)")
		}
	case airframe.FormLead:
		parts = append(parts, "lead compensator K(s − z)/(s − p) on the error")
	}
	if c.Form != airframe.FormLead {
		parts = append(parts, fmt.Sprintf("setpoint weight b = %s on the P term", g(c.B, 3)))
	}
	if c.Form.HasIntegral() {
		aw := string(k.AntiWindup)
		if k.AntiWindup == discrete.AWBackcalc {
			aw = fmt.Sprintf("back-calculation with tracking time Tt = %s s", g(k.Tt, 4))
		} else if k.AntiWindup == discrete.AWClamp {
			aw = "conditional integration (clamping)"
		}
		parts = append(parts, "anti-windup: "+aw, "integrator limit ±"+g(k.IL, 4))
	}
	m := string(k.Method)
	if k.PrewarpOmega > 0 {
		m += fmt.Sprintf(" prewarped at %s rad/s", g(k.PrewarpOmega, 4))
	}
	parts = append(parts, "discretized by "+m+" at "+g(d.Loop.Hz, 6)+" Hz")
	if c.Form.HasDerivative() && k.DerivativeMethod != "" && k.DerivativeMethod != k.Method {
		parts = append(parts, "derivative by "+string(k.DerivativeMethod))
	}
	return strings.Join(parts, "; ") + "."
}

// sentence starts s with a capital, the page's style for a sentence or a
// "label: text" line (the stages write their warnings in lower case for
// the terminal). Only a first word of two or more lower-case ASCII
// letters (before any hyphen) is changed: a symbol such as z, ωc or Kp
// keeps its case.
func sentence(s string) string {
	n := 0
	for n < len(s) && s[n] >= 'a' && s[n] <= 'z' {
		n++
	}
	if n < 2 || n < len(s) && s[n] != ' ' && s[n] != '-' && s[n] != ':' && s[n] != ',' {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

func plantLines(p airframe.Axis) []string {
	m := p.Plant.Model
	tf := "G(s) = " + zpkText(m.Gain, m.Zeros, m.Poles)
	if p.Plant.Delay > 0 {
		tf += fmt.Sprintf(" · e^(−%s·s)", g(p.Plant.Delay, 4))
	}
	lines := []string{mdCode(tf)}
	lines = append(lines, "Poles: "+rootsText(m.Poles)+"; zeros: "+rootsText(m.Zeros))
	if p.Plant.Delay > 0 {
		lines = append(lines, fmt.Sprintf("Transport delay %s s (exact in the margins and the placement; Padé (%d,%d) in the closed-loop poles and the root locus)", g(p.Plant.Delay, 4), synth.PadeOrder, synth.PadeOrder))
	}
	return lines
}

func sensorLines(p airframe.Axis) []string {
	s := p.Sensor
	if len(s.Poles) == 0 && len(s.Zeros) == 0 && s.Gain == 1 {
		return []string{"Ideal: H(s) = 1"}
	}
	return []string{mdCode("H(s) = " + zpkText(s.Gain, s.Zeros, s.Poles)), "Poles: " + rootsText(s.Poles) + "; zeros: " + rootsText(s.Zeros)}
}

// zpkText writes k·Π(s − z)/Π(s − p) with real factors (s + a) and
// quadratic factors for pairs.
func zpkText(k float64, zs, ps []complex128) string {
	num, den := Factors(zs, g4, "·"), Factors(ps, g4, "·")
	s := g4(k)
	if num != "" {
		s += "·" + num
	}
	switch {
	case den == "":
	case strings.Contains(den, "·") || !strings.HasPrefix(den, "("):
		s += " / (" + den + ")"
	default:
		s += " / " + den
	}
	return s
}

func rootsText(rs []complex128) string {
	var out []string
	for _, r := range CanonicalRoots(rs) {
		if imag(r) != 0 {
			out = append(out, fmt.Sprintf("%s ± %sj", g4(real(r)), g4(imag(r))))
		} else {
			out = append(out, g4(real(r)))
		}
	}
	if len(out) == 0 {
		return "none"
	}
	return strings.Join(out, ", ")
}

func polesText(ps []complex128, unit string) string {
	return rootsText(ps) + unit
}

// zPolesText lists the z-plane poles with their s-plane equivalents
// ln(z)/T, which read like the continuous poles.
func zPolesText(ps []complex128, T float64) string {
	var out []string
	for _, z := range CanonicalRoots(ps) {
		var s string
		if imag(z) != 0 {
			s = fmt.Sprintf("%s ± %sj", g4(real(z)), g4(imag(z)))
		} else {
			s = g4(real(z))
		}
		if z != 0 {
			s += fmt.Sprintf(" (s = %s)", sEquiv(cmplx.Log(z)/complex(T, 0)))
		}
		out = append(out, s)
	}
	return strings.Join(out, "; ")
}

func sEquiv(s complex128) string {
	if math.Abs(imag(s)) <= 1e-9*math.Max(1, cmplx.Abs(s)) {
		return g4(real(s))
	}
	return fmt.Sprintf("%s ± %sj", g4(real(s)), g4(math.Abs(imag(s))))
}

func specRows(d *discrete.Design) ([]Row, []string) {
	s := d.Problem.Spec
	rows := []Row{
		{"settling time", "≤ " + sec(s.SettlingTime), fmt.Sprintf("to within ±%s %% of the final value", g(100*s.Band, 3))},
		{"overshoot", "≤ " + pct(s.Overshoot), ""},
	}
	if s.MinPhaseMargin > 0 {
		rows = append(rows, Row{"phase margin", "≥ " + degs(s.MinPhaseMargin), ""})
	}
	if s.MinGainMargin > 0 {
		rows = append(rows, Row{"gain margin", "≥ " + dbs(s.MinGainMargin), ""})
	}
	if s.MaxSensitivity > 0 {
		rows = append(rows, Row{"sensitivity peak Ms", "≤ " + g4(s.MaxSensitivity),
			fmt.Sprintf("max \\|1/(1 + L)\\|: gain margin ≥ %s, phase margin ≥ %s", g(s.MaxSensitivity/(s.MaxSensitivity-1), 3), degs(2*math.Asin(1/(2*s.MaxSensitivity))*180/math.Pi))})
	}
	if s.MaxSteadyError > 0 {
		rows = append(rows, Row{"steady-state error", "≤ " + pct(s.MaxSteadyError), "of a unit setpoint step"})
	}
	if s.HoldRate > 0 {
		rows = append(rows, Row{"hold rate", "≥ " + rads(s.HoldRate), "steady setpoint held with the integrator within its limit"})
	}
	if s.DisturbanceStep > 0 {
		rows = append(rows, Row{"load step", g4(s.DisturbanceStep), "command units, at the plant input (the disturbance figures' size)"})
	}
	if s.DisturbanceRecovery > 0 {
		rows = append(rows, Row{"load-step recovery", "≤ " + sec(s.DisturbanceRecovery), fmt.Sprintf("within ±%s %% of the deviation's peak from then on", g(100*synth.RecoveryBand, 3))})
	}
	if nb := noiseBound(d); isFinite(nb) {
		note := "the design's default"
		if s.MaxNoiseGain > 0 {
			note = "from the file"
		}
		gain := "\\|C\\|"
		if len(d.Plant.Sections) > 0 {
			gain = "\\|C·F\\| (the controller behind the filter chain)"
		}
		rows = append(rows, Row{"noise gain", "≤ " + g4(nb), "command per rad/s, " + gain + " between the crossover and Nyquist; " + note})
	}
	rows = append(rows, Row{"plant envelope", envelopeText(d.Problem.Envelope), "every check holds at every plant of the box"})
	var lines []string
	if t, err := synth.TargetFromSpec(s); err == nil {
		lnMp := math.Log(s.Overshoot)
		lines = append(lines,
			fmt.Sprintf("ζ = −ln Mp / √(π² + ln² Mp) = %s / √(%s + %s) = %s", g4(-lnMp), g4(math.Pi*math.Pi), g4(lnMp*lnMp), g4(t.Zeta)),
			fmt.Sprintf("σ = −ln(band·√(1 − ζ²)) / Ts = %s / %s = %s 1/s", g4(-math.Log(s.Band*math.Sqrt(1-t.Zeta*t.Zeta))), g4(s.SettlingTime), g4(t.Sigma)),
			fmt.Sprintf("ωn = σ/ζ = %s rad/s, s\\* = −σ + jωn√(1 − ζ²) = %s", g4(t.OmegaN), fmtC(t.Pole, 4)),
		)
	}
	c := d.Cont
	if c.Refined {
		what := "the design is the controller of the form with the best load-disturbance rejection that passes every check at every plant of the envelope; the target sets the scale of its search, and the placement there is the textbook design"
		if !c.Met {
			what = "no controller of the form passes every check over the envelope; the closest one found is reported"
		}
		lines = append(lines, "Search: "+what)
	}
	if c.TextbookErr != "" {
		lines = append(lines, "Textbook placement: "+mdText(c.TextbookErr))
	}
	return rows, lines
}

func workingOf(d *discrete.Design) Working {
	c := d.Cont
	w := c.Working
	p := d.Problem
	out := Working{Target: fmtC(w.Target, 5)}
	var zs, ps []float64
	for _, t := range w.Terms {
		tm := Term{Kind: t.Kind, Of: t.Of, At: fmtC(t.At, 5), Angle: g(t.AngleDeg, 5) + "°", Distance: g(t.Distance, 5)}
		switch t.Kind {
		case "delay":
			tm.At = "τ = " + g(real(t.At), 4) + " s"
			tm.Angle = fmt.Sprintf("−ωd·τ = %s°", g(t.AngleDeg, 5))
			tm.Distance = "–"
			zs = append(zs, t.AngleDeg)
		case "pole":
			ps = append(ps, t.AngleDeg)
		default:
			zs = append(zs, t.AngleDeg)
		}
		out.Terms = append(out.Terms, tm)
	}
	sum := "∠L(s\\*) = Σ∠zeros − Σ∠poles"
	if p.Plant.Delay > 0 {
		sum += " − ωd·τ"
	}
	sum += " = "
	if len(zs) > 0 {
		sum += signedSum(zs)
	} else {
		sum += "0°"
	}
	if len(ps) > 0 {
		sum += " − (" + signedSum(ps) + ")"
	}
	if p.Plant.Model.Gain*p.Sensor.Gain < 0 {
		sum += " + 180° (negative gain)"
	}
	out.Sum = sum + " = " + g(w.LoopAngleDeg, 5) + "°"
	out.Deficit = fmt.Sprintf("−180° − ∠L(s\\*) = %s°, wrapped to (−180°, 180°]: %s°", g(-180-w.LoopAngleDeg, 5), g(w.DeficiencyDeg, 5))
	// The working is the placement's: with refinement that is the
	// textbook controller, not the design, which the search chose.
	ctrl, residual := c.Ctrl, c.Verif.TargetResidual
	out.Whose = "the designed controller"
	if tb := c.Textbook; tb != nil {
		ctrl, residual = tb.Ctrl, tb.Verif.TargetResidual
		out.Whose = "the textbook placement (the design's gains, from the search, are below)"
	} else if c.Refined && c.TextbookErr != "" {
		out.Whose = "the designed controller (the form cannot place this target; the design is the search's)"
	}
	cs := ctrl.Eval(w.Target)
	out.Supplied = g(cmplx.Phase(cs)*180/math.Pi, 5) + "°"
	out.Mag = g(w.LoopMagnitude, 5)
	out.Needed = g(w.NeededGain, 5)
	out.Got = g(cmplx.Abs(cs), 5)
	out.Residual = g(residual, 3)
	if p.Plant.Delay > 0 {
		out.Residual += " (with the exact delay)"
	}
	switch ctrl.Form {
	case airframe.FormPID:
		s3 := -p.Ctrl.ThirdPole * c.Target.Sigma
		out.Extra = append(out.Extra, fmt.Sprintf("Third real closed-loop pole at third_pole·(−σ) = %s·(−%s) = %s: 1 + C(s3)·L(s3) = 0 is the third equation", g(p.Ctrl.ThirdPole, 3), g4(c.Target.Sigma), g4(s3)))
	case airframe.FormLead:
		out.Extra = append(out.Extra, fmt.Sprintf("The zero is fixed at %s; the pole %s is where a real pole subtends the remaining angle, and K = %s follows from the magnitude condition", g4(ctrl.Zero), g4(ctrl.Pole), g4(ctrl.K)))
	case airframe.FormP:
		out.Extra = append(out.Extra, "P has one gain: the target is where the locus crosses the damping line ζ, and Kp is the magnitude condition there")
	}
	return out
}

func gainRows(c *synth.Design) []Row {
	k := c.Ctrl
	var rows []Row
	if k.Form == airframe.FormLead {
		rows = append(rows, Row{"K", g(k.K, 6), ""}, Row{"zero", g(k.Zero, 6), "rad/s"}, Row{"pole", g(k.Pole, 6), "rad/s"})
	} else {
		rows = append(rows, Row{"Kp", g(k.Kp, 6), "command per rad/s"})
		if k.Form.HasIntegral() {
			rows = append(rows, Row{"Ki", g(k.Ki, 6), "command per rad"}, Row{"Ti = Kp/Ki", g(k.Ti(), 5), "s"})
		}
		if k.Form.HasDerivative() {
			rows = append(rows, Row{"Kd", g(k.Kd, 6), "command per rad/s²"}, Row{"Td = Kd/Kp", g(k.Td(), 5), "s"}, Row{"Tf", g(k.Tf, 5), "s (derivative filter)"})
		}
		rows = append(rows, Row{"b", g(k.B, 4), "setpoint weight"})
	}
	if z, err := k.Series(); err == nil {
		rows = append(rows, Row{"series form", mdCode("C(s) = " + zpkText(z.Gain, z.Zeros, z.Poles)), ""})
	}
	if tb := c.Textbook; tb != nil {
		t := tb.Ctrl
		s := fmt.Sprintf("Kp = %s", g4(t.Kp))
		if t.Form.HasIntegral() {
			s += ", Ki = " + g4(t.Ki)
		}
		if t.Form.HasDerivative() {
			s += ", Kd = " + g4(t.Kd)
		}
		if t.Form == airframe.FormLead {
			s = fmt.Sprintf("K = %s, pole %s", g4(t.K), g4(t.Pole))
		}
		note := "unrefined placement at the spec's target"
		if tb.Verif.Stable {
			note += fmt.Sprintf(": overshoot %s, settling %s (continuous)", pct(tb.Verif.Step.Overshoot), sec(tb.Verif.Step.Settling))
		} else {
			note += ": unstable"
		}
		rows = append(rows, Row{"textbook", s, note})
	}
	return rows
}

func coeffRows(d *discrete.Design) []Row {
	k := d.Coeffs
	var rows []Row
	add := func(name string, v float64, note string) { rows = append(rows, Row{name, g(v, 7), note}) }
	// section adds filter n's coefficients (names as in the generated
	// code: F for the feedback chain, D for the derivative path).
	section := func(prefix string, n int, q lti.Biquad, what string) {
		c := fmt.Sprintf("%s%d_", prefix, n)
		add(c+"B0", q.B0, what+": weight of the input")
		add(c+"B1", q.B1, "weight of the last input")
		if q.B2 != 0 || q.A2 != 0 {
			add(c+"B2", q.B2, "weight of the input two steps back")
		}
		add(c+"A1", q.A1, "feedback of the last output")
		if q.B2 != 0 || q.A2 != 0 {
			add(c+"A2", q.A2, "feedback of the output two steps back")
		}
	}
	for i, q := range d.Plant.Sections {
		what := fmt.Sprintf("filter %d", i+1)
		if i < len(d.Problem.Filters) {
			what += " (" + d.Problem.Filters[i].Describe() + ")"
		}
		section("F", i+1, q, what)
	}
	if k.Form == airframe.FormLead {
		add("B0", k.B0, "ul = B0·e + x")
		add("B1", k.B1, "x ← B1·e − A1·ul")
		add("A1", k.A1, "")
	} else {
		add("Kp", k.Kp, "on the measurement")
		add("KpB", k.KpB, "b·Kp, on the setpoint")
		if k.Form.HasIntegral() {
			add("G0", k.G0, "integral: current-error weight")
			add("G01", k.G01, "integral: state increment weight")
			if k.AntiWindup == discrete.AWBackcalc {
				add("Kt", k.Kt, "back-calculation gain T/Tt")
			}
			add("IL", k.IL, "integrator limit")
		}
		if k.Form.HasDerivative() {
			add("Ad", k.Ad, "derivative filter pole")
			add("Bd", k.Bd, "derivative filter gain")
			for i, q := range k.DSections {
				what := fmt.Sprintf("derivative filter %d", i+1)
				if fs := d.Problem.Ctrl.DerivativeFilters; i < len(fs) {
					what += " (" + fs[i].Describe() + ")"
				}
				section("D", i+1, q, what)
			}
		}
	}
	add("Lo", k.Lo, "output limit")
	add("Hi", k.Hi, "output limit")
	return rows
}

func metricRows(d *discrete.Design) ([]MetricRow, []CheckRow) {
	s := d.Problem.Spec
	cv, dv := d.Cont.Verif, d.Verif
	status := map[string]string{}
	var checks []CheckRow
	for _, c := range d.Checks {
		st := "ok"
		if !c.OK {
			st = "**FAIL**"
		}
		status[c.Name] = st
		checks = append(checks, checkRow(c, st))
	}
	step := func(ok bool, v float64, f func(float64) string) string {
		if !ok {
			return "unstable"
		}
		return f(v)
	}
	// The quantized column: the sampled loop with the coefficients as the
	// generated code holds them (float32 or fixed point).
	qv := d.Verif
	hasQ := d.Num != nil && d.Num.Quantized != nil
	if hasQ {
		qv = *d.Num.Quantized
	}
	qs := func(v string) string {
		if !hasQ {
			return "–"
		}
		return v
	}
	both := func(a, b string) string {
		if a == "" {
			return b
		}
		if b == "" || a == b {
			return a
		}
		return a + ", " + b
	}
	rows := []MetricRow{
		{"overshoot", "≤ " + pct(s.Overshoot), step(cv.Stable, cv.Step.Overshoot, pct), step(dv.Stable, dv.Step.Overshoot, pct), qs(step(qv.Stable, qv.Step.Overshoot, pct)), both(status["overshoot"], status["quantized_overshoot"])},
		{fmt.Sprintf("settling time (±%s %%)", g(100*s.Band, 3)), "≤ " + sec(s.SettlingTime), step(cv.Stable, cv.Step.Settling, sec), step(dv.Stable, dv.Step.Settling, sec), qs(step(qv.Stable, qv.Step.Settling, sec)), both(status["settling_time"], status["quantized_settling_time"])},
		{"rise time (10–90 %)", "–", step(cv.Stable, cv.Step.Rise, sec), step(dv.Stable, dv.Step.Rise, sec), qs(step(qv.Stable, qv.Step.Rise, sec)), ""},
		{"steady-state error", specOf(d, "steady_error"), step(cv.Stable, cv.SteadyStateError, pct), step(dv.Stable, dv.SteadyStateError, pct), qs(step(qv.Stable, qv.SteadyStateError, pct)), status["steady_error"]},
	}
	pmSpec, gmSpec := "–", "–"
	if s.MinPhaseMargin > 0 {
		pmSpec = "≥ " + degs(s.MinPhaseMargin)
	}
	if s.MinGainMargin > 0 {
		gmSpec = "≥ " + dbs(s.MinGainMargin)
	}
	rows = append(rows,
		MetricRow{"phase margin", pmSpec, degs(cv.Margins.PhaseDeg), degs(dv.Margins.PhaseDeg), qs(degs(qv.Margins.PhaseDeg)), both(status["phase_margin"], status["quantized_phase_margin"])},
		MetricRow{"gain margin", gmSpec, dbs(cv.Margins.GainDB), dbs(dv.Margins.GainDB), qs(dbs(qv.Margins.GainDB)), both(status["gain_margin"], status["quantized_gain_margin"])},
		MetricRow{"crossover", "–", rads(cv.Margins.Crossover), rads(dv.Margins.Crossover), qs(rads(qv.Margins.Crossover)), ""},
		MetricRow{"delay margin", "–", sec(cv.Margins.DelayMargin), sec(dv.Margins.DelayMargin), qs(sec(qv.Margins.DelayMargin)), ""},
		MetricRow{"stability", "poles inside", "max Re s = " + g4(maxRe(cv.Poles)), "max \\|z\\| = " + g(1-dv.StabilityMargin, 6), qs("max \\|z\\| = " + g(1-qv.StabilityMargin, 6)), both(status["stable"], status["quantized_stable"])},
	)
	rows = append(rows, robustRows(d, status)...)
	if sat := dv.Saturated; sat.Amplitude > 0 {
		ov := fmt.Sprintf("%s (no anti-windup: %s)", pct(sat.Overshoot), pct(sat.OvershootNone))
		rec := fmt.Sprintf("%s (no anti-windup: %s)", recovery(sat.Recovery, sat.Settled), recovery(sat.RecoveryNone, sat.SettledNone))
		if !d.Problem.Ctrl.Form.HasIntegral() {
			ov, rec = pct(sat.Overshoot), recovery(sat.Recovery, sat.Settled)
		}
		name := fmt.Sprintf("saturating step of %s", g(sat.Amplitude, 4))
		if !sat.Reached {
			// Said plainly: no step the loop can hold saturates the
			// command, so there is no windup to judge.
			rows = append(rows, MetricRow{"saturating step", "–", "–",
				fmt.Sprintf("limits not reached: the largest step tried, %s, commands a peak of %s within [%s, %s]",
					g(sat.Amplitude, 4), g(sat.Amplitude*sat.LinearPeakCommand, 3), g(d.Coeffs.Lo, 4), g(d.Coeffs.Hi, 4)), "–", ""})
			return rows, checks
		}
		rows = append(rows, MetricRow{name + ": overshoot", "–", "–", ov, "–", ""},
			MetricRow{name + ": recovery", "recovers", "–", rec, "–", status["saturated_recovery"]})
	}
	return rows, checks
}

// robustRows are the sampled loop's figures of the final verification at
// the nominal plant (the sensitivity peaks, the load step, the holdable
// rate) and the controller's noise gain; their checks judge the worst
// plant of the envelope (the checks table).
func robustRows(d *discrete.Design, status map[string]string) []MetricRow {
	if len(d.Envelope) == 0 {
		return nil
	}
	n := d.Envelope[0]
	st := func(x float64, f func(float64) string) string {
		if !n.Stable {
			return "unstable"
		}
		return f(x)
	}
	ds := n.Disturbance
	rows := []MetricRow{
		{"sensitivity peak Ms", specOf(d, "max_sensitivity"), "–", st(n.Ms, g4), "–", status["max_sensitivity"]},
		{"complementary sensitivity peak Mt", "–", "–", st(n.Mt, g4), "–", ""},
		{"noise gain (command per rad/s)", specOf(d, "noise_gain"), "–", g4(d.NoiseGain), "–", status["noise_gain"]},
	}
	if d.Problem.Ctrl.Form.HasIntegral() {
		hold := rads(n.HoldRate)
		if math.IsInf(n.HoldRate, 1) {
			hold = "unbounded"
		}
		rows = append(rows, MetricRow{"hold rate", specOf(d, "hold_rate"), "–", hold, "–", status["hold_rate"]})
	}
	load := fmt.Sprintf("load step of %s", g4(ds.Step))
	rec := st(ds.Recovery, sec)
	if n.Stable && !isFinite(ds.Recovery) {
		rec = fmt.Sprintf("none (ends at %s rad/s)", g4(ds.Final))
	}
	return append(rows,
		MetricRow{load + ": peak", "–", "–", st(ds.Peak, rads), "–", ""},
		MetricRow{load + ": IAE", "–", "–", st(ds.IAE, func(v float64) string { return g4(v) + " rad" }), "–", ""},
		MetricRow{load + ": recovery (±2 % of the peak)", specOf(d, "disturbance_recovery"), "–", rec, "–", status["disturbance_recovery"]},
	)
}

// phaseBudget is where the phase of the loop goes at the crossover ωc of
// the nominal sampled loop, term by term, against the margin left: the
// gyro's filter ∠H(jωc), the derivative filter's lag −atan(ωc·Tf) (what
// filtering costs against the ideal derivative), the zero-order hold's
// half-sample delay −ωc·T/2, the compute delay −ωc·d·T and the transport
// delay −ωc·τ (Franklin, Powell & Workman, Digital Control of Dynamic
// Systems, the hold as a delay of T/2, from memory). It returns nothing
// when the loop has no crossover.
func phaseBudget(d *discrete.Design) ([]Row, string) {
	wc := d.Verif.Margins.Crossover
	if !(wc > 0) || math.IsInf(wc, 0) {
		return nil, ""
	}
	p, T := d.Problem, d.Plant.T
	deg := 180 / math.Pi
	var rows []Row
	total := 0.0
	add := func(name string, rad float64, note string) {
		rows = append(rows, Row{name, degs(rad * deg), note})
		total += rad
	}
	if len(p.Sensor.Poles) > 0 || len(p.Sensor.Zeros) > 0 {
		add("gyro filter ∠H(jωc)", cmplx.Phase(p.Sensor.Eval(complex(0, wc))), "the sensor model")
	}
	for i, f := range p.Filters {
		if i < len(d.Plant.Sections) {
			add(fmt.Sprintf("feedback filter %d", i+1), discrete.SectionPhaseDeg(d.Plant.Sections[i], wc, d.Loop.Hz)/deg,
				f.Describe()+", ∠F(e^(jωc·T)) as it runs")
		}
	}
	if k := d.Cont.Ctrl; k.Form.HasDerivative() && k.Tf > 0 {
		add("derivative filter", -math.Atan(wc*k.Tf), fmt.Sprintf("−atan(ωc·Tf), filter at %s Hz", g4(1/(2*math.Pi*k.Tf))))
	}
	add("zero-order hold", -wc*T/2, "−ωc·T/2, half a sample")
	if n := d.Loop.ComputeDelay; n > 0 {
		add("compute delay", -wc*float64(n)*T, fmt.Sprintf("−ωc·%d·T", n))
	}
	if tau := p.Plant.Delay; tau > 0 {
		add("transport delay", -wc*tau, "−ωc·τ")
	}
	return rows, fmt.Sprintf("%s at the crossover %s (%s Hz); the phase margin left is %s", degs(total*deg), rads(wc), g4(wc/(2*math.Pi)), degs(d.Verif.Margins.PhaseDeg))
}

// chainPhase is the filter chain's phase at the crossover of the nominal
// sampled loop, all its filters together (the sum of their rows in the
// phase budget), and its gain there, which moves the crossover:
// "−6.1°, gain −0.1853 dB (its 2 filters together)". It is "" without a
// chain or a crossover.
func chainPhase(d *discrete.Design) string {
	db, deg, ok := chainAtCrossover(d)
	if !ok {
		return ""
	}
	who := "its one filter"
	if n := len(d.Plant.Sections); n > 1 {
		who = fmt.Sprintf("its %d filters together", n)
	}
	return fmt.Sprintf("%s, gain %s (%s)", degs(deg), dbs(db), who)
}

// ChainRow is a figure of the design with its filter chain and of the
// same axis designed without it.
type ChainRow struct {
	Name, With, Without string
}

// chainRows compares d with d.Unfiltered, the axis designed again
// without its filter chain: the verdict, the gains, and the worst value
// over the envelope of the checks the chain moves (the margins, Ms, the
// settling time), the noise gain and the nominal crossover.
func chainRows(d *discrete.Design) []ChainRow {
	if len(d.Problem.Filters) == 0 || (d.Unfiltered == nil && d.UnfilteredErr == nil) {
		return nil
	}
	verdict := func(d *discrete.Design) string {
		if d.OK() {
			return "met"
		}
		return "not met (" + strings.Join(d.FailedChecks(), ", ") + ")"
	}
	check := func(d *discrete.Design, name string) string {
		for _, c := range d.Checks {
			if c.Name == name {
				return synth.CheckValue(name, c.Value)
			}
		}
		return "–"
	}
	u := d.Unfiltered
	if u == nil {
		msg := mdText(discrete.Outcome{Name: d.Problem.Name, Err: d.UnfilteredErr}.ErrorText())
		return []ChainRow{{"spec", verdict(d), "no design: " + msg}}
	}
	rows := []ChainRow{
		{"spec", verdict(d), verdict(u)},
		{"gains", gainsText(d.Cont.Ctrl), gainsText(u.Cont.Ctrl)},
	}
	for _, c := range []struct{ label, name string }{
		{"phase margin (worst)", "phase_margin"},
		{"gain margin (worst)", "gain_margin"},
		{"sensitivity peak Ms (worst)", "max_sensitivity"},
		{"settling time (worst)", "settling_time"},
	} {
		rows = append(rows, ChainRow{c.label, check(d, c.name), check(u, c.name)})
	}
	return append(rows,
		ChainRow{"noise gain", g4(d.NoiseGain), g4(u.NoiseGain)},
		ChainRow{"crossover (nominal)", rads(d.Verif.Margins.Crossover), rads(u.Verif.Margins.Crossover)})
}

// specOf is the limit of the check named name, "≤ 1.7", or "–" when the
// design has no such check.
func specOf(d *discrete.Design, name string) string {
	for _, c := range d.Checks {
		if c.Name == name {
			rel := "≥ "
			if c.Upper {
				rel = "≤ "
			}
			return rel + checkText(c.Name, c.Limit)
		}
	}
	return "–"
}

// checkText formats a value of the check named name in the page's units.
func checkText(name string, v float64) string {
	switch strings.TrimPrefix(name, "quantized_") {
	case "overshoot", "steady_error":
		return pct(v)
	case "settling_time", "disturbance_recovery", "saturated_recovery":
		return sec(v)
	case "phase_margin":
		return degs(v)
	case "gain_margin":
		return dbs(v)
	case "hold_rate":
		return rads(v)
	case "stable":
		return "max \\|z\\| = " + g(v, 6)
	case "overflow":
		return fin(v, g4) + " bits"
	case "limit_cycle", "filter_rounding":
		return fin(v, g4) + " LSB"
	}
	return fin(v, g4)
}

// checkRow is a check as the page lists it: the worst value, the limit,
// the result, and the plant where the value is worst (the nominal plant,
// or none, for a check of the nominal loop or the controller alone).
func checkRow(c synth.Check, status string) CheckRow {
	r := CheckRow{Name: strings.ReplaceAll(c.Name, "_", " "), Value: checkText(c.Name, c.Value), Status: status, Worst: "–"}
	base, quantized := strings.CutPrefix(c.Name, "quantized_")
	switch {
	case base == "stable":
		r.Limit = "max \\|z\\| < 1"
	case base == "sampling":
		r.Limit = "< " + g4(c.Limit)
	case c.Upper:
		r.Limit = "≤ " + checkText(c.Name, c.Limit)
	default:
		r.Limit = "≥ " + checkText(c.Name, c.Limit)
	}
	if quantized {
		r.Worst = "nominal plant"
	}
	if c.Worst != (airframe.Corner{}) && c.Name != "noise_gain" {
		r.Worst = mdCorner(c.Worst)
		if r.Value == "0 %" {
			r.Worst = "every plant" // a nil worst: nil everywhere
		}
	}
	return r
}

// mdCorner names a plant of the envelope with the page's true minus sign.
func mdCorner(c airframe.Corner) string {
	return strings.ReplaceAll(synth.CornerText(c), "-", "−")
}

// noiseBound is the noise-gain bound in force (the noise_gain check's
// limit), or +Inf without one.
func noiseBound(d *discrete.Design) float64 {
	for _, c := range d.Checks {
		if c.Name == "noise_gain" {
			return c.Limit
		}
	}
	return math.Inf(1)
}

// envelopePage is the table of the plants of the final verification; nil
// when there is the nominal plant only.
func envelopePage(d *discrete.Design) *EnvelopePage {
	if len(d.Envelope) < 2 {
		return nil
	}
	box := d.Problem.Envelope.Corners()
	e := &EnvelopePage{Intervals: envelopeText(d.Problem.Envelope), Count: len(d.Envelope)}
	for _, f := range d.Envelope {
		c := f.Corner
		r := EnvelopeRow{Kind: "between", Gain: "×" + g4(c.GainScale), Lag: "×" + g4(c.LagScale), Delay: signedSec(c.DelayAdd),
			Stable: "yes", Overshoot: "–", Settling: "–", Ms: "–", Mt: "–", Peak: "–", Recovery: "–",
			PhaseMargin: degs(f.Margins.PhaseDeg), GainMargin: dbs(f.Margins.GainDB)}
		switch {
		case c == airframe.Nominal():
			r.Kind = "nominal"
		case slices.Contains(box, c):
			r.Kind = "corner"
		}
		if f.Stable {
			r.Overshoot, r.Settling, r.Ms, r.Mt = pct(f.Step.Overshoot), sec(f.Step.Settling), g4(f.Ms), g4(f.Mt)
			r.Peak, r.Recovery = rads(f.Disturbance.Peak), sec(f.Disturbance.Recovery)
			if !isFinite(f.Disturbance.Recovery) {
				r.Recovery = "none"
			}
		} else {
			r.Stable = "**no**"
		}
		e.Plants = append(e.Plants, r)
	}
	return e
}

// signedSec writes an added delay with its sign, "+0.001 s".
func signedSec(x float64) string {
	switch {
	case x > 0:
		return "+" + sec(x)
	case x < 0:
		return "−" + sec(-x)
	}
	return "0 s"
}

// signedSum writes angles as "a + b − c" in degrees.
func signedSum(xs []float64) string {
	var b strings.Builder
	for i, x := range xs {
		switch {
		case i == 0:
			b.WriteString(g(x, 4) + "°")
		case x < 0:
			b.WriteString(" − " + g(-x, 4) + "°")
		default:
			b.WriteString(" + " + g(x, 4) + "°")
		}
	}
	return b.String()
}

// recovery is the settling time of the saturating step, or "not settled".
func recovery(t float64, settled bool) string {
	if !settled {
		return "not settled"
	}
	return sec(t)
}

func maxRe(ps []complex128) float64 {
	m := math.Inf(-1)
	for _, p := range ps {
		m = math.Max(m, real(p))
	}
	return m
}

func dedup(ws []string) []string {
	var out []string
	for _, w := range ws {
		if !slices.Contains(out, w) {
			out = append(out, w)
		}
	}
	return out
}

// Number formats: four significant digits for figures a reviewer
// compares with a hand calculation; "–" for a value that does not exist
// (no crossover, unstable).
func g4(x float64) string { return g(x, 4) }

func fin(x float64, f func(float64) string) string {
	if !isFinite(x) {
		if math.IsInf(x, 1) {
			return "∞"
		}
		return "–"
	}
	return f(x)
}

// pct writes a fraction of the unit step in percent; a residue below
// 1e−9 of the step (floating-point noise in a steady-state error) is 0.
func pct(x float64) string {
	return fin(x, func(v float64) string {
		if math.Abs(v) < 1e-9 {
			v = 0
		}
		return g(100*v, 3) + " %"
	})
}
func sec(x float64) string  { return fin(x, func(v float64) string { return g(v, 4) + " s" }) }
func degs(x float64) string { return fin(x, func(v float64) string { return g(v, 4) + "°" }) }
func dbs(x float64) string  { return fin(x, func(v float64) string { return g(v, 4) + " dB" }) }
func rads(x float64) string { return fin(x, func(v float64) string { return g(v, 4) + " rad/s" }) }

func plural(n int, unit string) string {
	if n == 1 {
		return "1 " + unit
	}
	return fmt.Sprintf("%d %ss", n, unit)
}

// mdText escapes free text for Markdown: the characters that start
// emphasis, links, code, HTML or table cells are backslash-escaped and
// line breaks become spaces, so a description cannot change the report's
// structure.
func mdText(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '\\', '`', '*', '_', '[', ']', '<', '>', '|', '#', '{', '}', '!':
			b.WriteByte('\\')
			b.WriteRune(r)
		case '\n', '\r', '\t':
			b.WriteByte(' ')
		default:
			if r < 0x20 || r == 0x7f {
				continue
			}
			b.WriteRune(r)
		}
	}
	return b.String()
}

// mdCode writes s as inline code, with a fence longer than any run of
// backticks inside and pipes escaped (inside a table cell).
func mdCode(s string) string {
	s = strings.Map(func(r rune) rune {
		if r == '\n' || r == '\r' || r == '\t' {
			return ' '
		}
		return r
	}, s)
	run, longest := 0, 0
	for _, r := range s {
		if r == '`' {
			run++
			longest = max(longest, run)
		} else {
			run = 0
		}
	}
	fence := strings.Repeat("`", longest+1)
	pad := ""
	if strings.HasPrefix(s, "`") || strings.HasSuffix(s, "`") {
		pad = " "
	}
	return fence + pad + strings.ReplaceAll(s, "|", "\\|") + pad + fence
}
