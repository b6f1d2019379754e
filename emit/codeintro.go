package emit

import (
	"fmt"
	"math"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
)

// The comment at the top of every generated file, after the "Code
// generated" line: input hash, airframe, loop, the design summary of every
// axis, the arithmetic, the safety caution. Everything is derived from the
// design and escaped; no time, host or absolute path.

const introWidth = 74

// codeNum formats a setting or a gain of the summary with four
// significant digits; a value that is not finite reads "none".
func codeNum(x float64) string { return codeDigits(x, 4) }

// codeMetric formats a figure of the verification (target, overshoot,
// settling, margins) with three significant digits. The summary is part of
// the generated file, which must be the same on every CPU; these figures
// come from simulations and frequency sweeps whose last digits can differ
// between architectures (fused multiply-add), more so for a badly scaled
// plant, and three digits are what a reviewer reads anyway.
func codeMetric(x float64) string { return codeDigits(x, 3) }

func codeDigits(x float64, n int) string {
	switch {
	case math.IsNaN(x), math.IsInf(x, 0):
		return "none"
	case x == 0:
		return "0"
	}
	return fmt.Sprintf("%.*g", n, x)
}

func codeIntro(a *discrete.Airframe, u *codeUnit, unmet []string) []string {
	f := a.File
	var l []string
	add := func(s string) { l = append(l, commentLines(s, introWidth)...) }
	indent := func(s string) {
		for _, x := range commentLines(s, introWidth-2) {
			l = append(l, "  "+x)
		}
	}
	blank := func() { l = append(l, "") }
	blank()
	l = append(l, inputLines(f)...)
	desc := ""
	if strings.TrimSpace(f.Description) != "" {
		desc = ": " + f.Description
	}
	add("Airframe " + f.Airframe + desc)
	add(fmt.Sprintf("Rate loop at %s Hz (T = %s s), compute delay %d sample%s; %s.",
		codeNum(f.Loop.Hz), codeNum(1/f.Loop.Hz), f.Loop.ComputeDelay, plural(f.Loop.ComputeDelay), numericPhrase(f.Numeric)))
	if len(unmet) > 0 {
		blank()
		add("WARNING: GENERATED WITH --allow-unmet. THIS AIRFRAME FAILS ITS DESIGN CHECKS:")
		for _, m := range unmet {
			indent(m)
		}
		add("Do not fly this code.")
	}
	for i, x := range a.Axes {
		blank()
		axisSummary(add, indent, u, x, u.Axes[i])
	}
	blank()
	for _, p := range apiText(u) {
		add(p)
	}
	blank()
	add("CAUTION: these controllers are computed from a model; model-based results do not replace flight testing. Bench-test with the propellers off, make the first flight tethered, follow local aviation rules, and have the design reviewed by a qualified person before flight.")
	return l
}

// inputLines writes the input's hash: of its values, not of its bytes,
// so that a comment, the layout or the order of keys can change without
// changing a byte of the generated files (airframe.File.CanonicalSHA256).
func inputLines(f *airframe.File) []string {
	l := []string{"Input SHA-256: " + commentText(f.CanonicalSHA256())}
	return append(l, commentLines("(of the input's values in locusmith's canonical form, so comments, layout and the order of keys do not change it)", introWidth)...)
}

// codeIntroShort is the comment of the files that do not carry the design
// summary (the C source, the vector programs, the qemu-arm stub): the
// input hash, the airframe, and where the summary, the API and the
// cautions are. An airframe generated with --allow-unmet says so in every
// file.
func codeIntroShort(a *discrete.Airframe, u *codeUnit, unmet []string) []string {
	f := a.File
	var l []string
	add := func(s string) { l = append(l, commentLines(s, introWidth)...) }
	l = append(l, "")
	l = append(l, inputLines(f)...)
	add("Airframe " + f.Airframe + ": the design summary, the API and the cautions are in " + u.MainFile + ".")
	if len(unmet) > 0 {
		add("WARNING: GENERATED WITH --allow-unmet. THIS AIRFRAME FAILS ITS DESIGN CHECKS (see " + u.MainFile + "). Do not fly this code.")
	}
	return l
}

// apiText is the paragraphs of the header that say how the functions (C)
// or methods (Go) are called, what a non-finite input does, and what the
// arithmetic guarantees.
func apiText(u *codeUnit) []string {
	var p []string
	if u.Lang == LangGo {
		p = append(p, "Per axis: Reset(output, measured) before the first Step and on every engagement (bumpless: the next command starts from output, the derivative from measured); Step(setpoint, measured) once per loop period; Applied(command) after the mixer when it changed the command (the axes with anti-windup correct their integrator from it; see each Applied).")
	} else {
		p = append(p, "Per axis: _reset(s, output, measured) before the first step and on every engagement (bumpless: the next command starts from output, the derivative from measured); _step(s, setpoint, measured) once per loop period; _applied(s, command) after the mixer when it changed the command (the axes with anti-windup correct their integrator from it; see each _applied).")
	}
	switch {
	case u.Fixed:
		p = append(p, "Inputs are raw integers of the data word: they cannot be NaN or infinite, and the arithmetic saturates instead of overflowing, so no input can put the state out of range; there is no fault counter.")
	case u.Lang == LangGo:
		p = append(p, "Non-finite inputs: a setpoint or measurement that is NaN or infinite leaves the state untouched; Step returns the last command again (that of the last finite step, or the one given to Applied or Reset) and counts the fault. Applied ignores a non-finite command and counts it; Reset takes a non-finite output or measured as 0 and counts one fault. Faults() returns the count since the last Reset (it stops at the largest uint32): read it to detect a failing sensor or estimator.")
	default:
		p = append(p, "Non-finite inputs: a setpoint or measurement that is NaN or infinite leaves the state untouched; _step returns the last command again (that of the last finite step, or the one given to _applied or _reset) and adds one to s->faults, which stops at UINT32_MAX. _applied ignores a non-finite command and counts it; _reset clears s->faults, and takes a non-finite output or measured as 0 and counts one fault. Read s->faults to detect a failing sensor or estimator.")
	}
	switch {
	case u.Fixed:
		p = append(p, "Integer arithmetic only, bit-exact with locusmith's reference model on every conforming compiler; the test vectors (--vectors) check it.")
	case u.Lang == LangC:
		p = append(p, "Bit-exact with locusmith's reference model: the generated code turns floating-point contraction off for its own functions (a pragma for GCC, Clang and ISO C compilers), so a*b + c is never fused into one rounding whatever the -std= or -ffp-contract flags, except Clang's explicit -ffp-contract=fast, which overrides every pragma; it stops the build with #error under -ffast-math or -ffinite-math-only and where FLT_EVAL_METHOD is not 0. The test vectors (--vectors) check it on the target.")
	default:
		p = append(p, "Bit-exact with locusmith's reference model on every architecture: each product is converted explicitly, which rules out fused multiply-add (The Go Programming Language Specification, \"Floating-point operators\"); the test vectors (--vectors) check it.")
	}
	return p
}

// numericPhrase names the arithmetic of the generated code.
func numericPhrase(n airframe.Numeric) string {
	switch n.Type {
	case airframe.Float32:
		return "float32 arithmetic"
	case airframe.Float64:
		return "float64 arithmetic"
	}
	return fmt.Sprintf("%s fixed point (input full scale %s, output full scale %s)", n.Type, codeNum(n.InputFullScale), codeNum(n.OutputFullScale))
}

// axisSummary writes the design summary of one axis.
func axisSummary(add, indent func(string), u *codeUnit, x discrete.Outcome, ax *codeAxis) {
	d := x.Design
	c := d.Cont
	k := d.Coeffs
	form := string(k.Form)
	var gains string
	switch k.Form {
	case airframe.FormLead:
		gains = fmt.Sprintf("K = %s, zero %s rad/s, pole %s rad/s", codeNum(c.Ctrl.K), codeNum(c.Ctrl.Zero), codeNum(c.Ctrl.Pole))
	default:
		g := []string{"Kp = " + codeNum(c.Ctrl.Kp)}
		if k.Form.HasIntegral() {
			g = append(g, "Ki = "+codeNum(c.Ctrl.Ki))
		}
		if k.Form.HasDerivative() {
			g = append(g, "Kd = "+codeNum(c.Ctrl.Kd), "Tf = "+codeNum(c.Ctrl.Tf)+" s")
		}
		g = append(g, "b = "+codeNum(c.Ctrl.B))
		gains = strings.Join(g, ", ")
	}
	add(fmt.Sprintf("Axis %s: %s, %s.", x.Name, form, gains))
	var how []string
	how = append(how, "discretized "+string(k.Method))
	if k.PrewarpOmega > 0 {
		how[0] += " (prewarped at " + codeNum(k.PrewarpOmega) + " rad/s)"
	}
	if k.Form.HasDerivative() {
		on := "measurement"
		if k.DerivativeOnError {
			on = "error"
		}
		d := "derivative on the " + on
		if k.DerivativeMethod != "" && k.DerivativeMethod != k.Method {
			d += " (" + string(k.DerivativeMethod) + " difference)"
		}
		how = append(how, d)
	}
	if k.Form.HasIntegral() {
		aw := "anti-windup " + string(k.AntiWindup)
		if k.AntiWindup == discrete.AWBackcalc {
			aw += " (Tt = " + codeNum(k.Tt) + " s)"
		}
		how = append(how, aw, "integrator limit "+codeNum(k.IL))
	}
	how = append(how, fmt.Sprintf("output [%s, %s]", codeNum(k.Lo), codeNum(k.Hi)))
	indent(strings.Join(how, "; ") + ".")
	if fs := d.Problem.Filters; len(fs) > 0 {
		wc := d.Verif.Margins.Crossover
		var parts []string
		for i, f := range fs {
			t := fmt.Sprintf("%d. %s", i+1, f.Describe())
			if i < len(d.Plant.Sections) && wc > 0 && !math.IsInf(wc, 0) {
				t += fmt.Sprintf(" (phase %s deg at the crossover)", codeMetric(discrete.SectionPhaseDeg(d.Plant.Sections[i], wc, d.Loop.Hz)))
			}
			parts = append(parts, t)
		}
		indent("Feedback filter chain on the measured rate, before the controller: " + strings.Join(parts, "; ") + ".")
	}
	if fs := d.Problem.Ctrl.DerivativeFilters; len(fs) > 0 {
		wc := d.Verif.Margins.Crossover
		var parts []string
		for i, f := range fs {
			t := fmt.Sprintf("%d. %s", i+1, f.Describe())
			if i < len(k.DSections) && wc > 0 && !math.IsInf(wc, 0) {
				t += fmt.Sprintf(" (phase %s deg at the crossover)", codeMetric(discrete.SectionPhaseDeg(k.DSections[i], wc, d.Loop.Hz)))
			}
			parts = append(parts, t)
		}
		indent("Derivative filters on the derivative term alone, after its first-order lowpass: " + strings.Join(parts, "; ") + ".")
	}
	t := c.Target
	indent(fmt.Sprintf("Target: zeta = %s, wn = %s rad/s, s* = %s +/- j%s rad/s.", codeMetric(t.Zeta), codeMetric(t.OmegaN), codeMetric(real(t.Pole)), codeMetric(math.Abs(imag(t.Pole)))))
	v := d.Verif
	if !v.Stable {
		indent("Sampled loop: UNSTABLE.")
	} else {
		indent(fmt.Sprintf("Sampled loop: overshoot %s %%, settling %s s, phase margin %s deg, gain margin %s dB.",
			codeMetric(100*v.Step.Overshoot), codeMetric(v.Step.Settling), codeMetric(v.Margins.PhaseDeg), codeMetric(v.Margins.GainDB)))
	}
	if d.OK() {
		indent("Checks: all met.")
	} else {
		var bad []string
		for _, ch := range d.Checks {
			if !ch.OK {
				bad = append(bad, ch.Name)
			}
		}
		indent("Checks: FAILED " + strings.Join(bad, ", ") + ".")
	}
	if ax.Fx != nil {
		indent(ax.Fx.summary)
	} else {
		indent(fmt.Sprintf("Numeric: %s, coefficients rounded to nearest; no fixed-point formats or range limits.", d.Numeric.Type))
	}
}

// axisDoc is the comment of an axis's state type.
func axisDoc(u *codeUnit, x discrete.Outcome, ax *codeAxis) []string {
	form := map[airframe.Form]string{
		airframe.FormP: "P", airframe.FormPI: "PI", airframe.FormPD: "PD with filtered derivative",
		airframe.FormPID: "PID with filtered derivative", airframe.FormLead: "lead compensator",
	}[x.Design.Coeffs.Form]
	if u.Lang == LangGo {
		return commentLines(fmt.Sprintf("%s is the state of the %s rate controller of axis %s (%s). Call Reset before the first Step.", ax.GoType, u.Airframe, x.Name, form), introWidth)
	}
	return commentLines(fmt.Sprintf("State of the %s rate controller of axis %s (%s). Call %s_reset before the first step.", u.Airframe, x.Name, form, ax.Prefix), introWidth)
}

// resetText says what an axis's reset does, for its doc comment.
func resetText(u *codeUnit, ax *codeAxis) string {
	// unused names the arguments the fixed-point reset of the form does
	// not read (the float reset reads both: output is the command held
	// on a non-finite input, and both are checked for being finite).
	var first, unused string
	switch {
	case ax.Lead:
		first, unused = "sets the lead filter state to output, so that the next command is output at zero error (bumpless transfer)", "measured is not used"
	case ax.HasI:
		first = "makes the transfer bumpless: the next command is output when the setpoint equals measured (the integrator takes output minus the proportional part, within its limit)"
	case ax.HasD:
		first, unused = "clears the state (the form has no integrator)", "output is not used"
		if ax.DOnError {
			unused = "output and measured are not used"
		}
	default:
		first, unused = "clears the state (a P controller has no memory)", "output and measured are not used"
	}
	if len(ax.Filters) > 0 {
		// The chain reads measured.
		unused = strings.TrimPrefix(strings.ReplaceAll(unused, "output and measured are not used", "output is not used"), "measured is not used")
	}
	parts := []string{first}
	if len(ax.Filters) > 0 {
		parts = append(parts, "the feedback filters start at rest at measured, so the controller sees no step")
	}
	if ax.HasD {
		if ax.DOnError {
			parts = append(parts, "the derivative starts from the first step's error, so there is no derivative kick")
		} else {
			parts = append(parts, "the derivative starts from measured, so there is no derivative kick")
		}
		if len(ax.DFilters) > 0 {
			parts = append(parts, "the derivative filters start at rest at 0")
		}
	}
	switch {
	case ax.HasFaults:
		parts = append(parts, "output is also the command held on a non-finite input until the first step; the fault count starts at 0, or at 1 when output or measured is not finite, both being then taken as 0")
	case unused != "":
		parts = append(parts, unused)
	}
	return strings.Join(parts, "; ") + "."
}

// resetDoc is the doc comment of the reset function of ax.
func resetDoc(u *codeUnit, ax *codeAxis) []string {
	name := ax.Prefix + "_reset"
	if u.Lang == LangGo {
		name = "Reset"
	}
	return commentLines(name+" "+resetText(u, ax), introWidth)
}

// appliedDoc is the doc comment of the applied function of ax: what the
// applied command does for this axis's anti-windup, or that it has none.
func appliedDoc(u *codeUnit, ax *codeAxis) []string {
	name, step := ax.Prefix+"_applied", ax.Prefix+"_step"
	if u.Lang == LangGo {
		name, step = "Applied", "Step"
	}
	var t string
	switch {
	case !u.Fixed && ax.AWBackcalc:
		t = fmt.Sprintf("%s records the command actually applied, after a mixer changed it, and corrects the integrator for it: %s updated the integrator by back-calculation from the command it returned, and the correction adds the same gain times (applied - returned), within the integrator limit. Call it after %s, only when the mixer changed the command.", name, step, step)
	case !u.Fixed && ax.AWClamp:
		t = fmt.Sprintf("%s records the command actually applied, after a mixer changed it: when it is below the command %s returned while the integrator rose (or above it while the integrator fell), the actuator is saturated in the error's direction and the last integrator increment is withdrawn (conditional integration). Call it after %s, only when the mixer changed the command.", name, step, step)
	case u.Fixed && (ax.AWBackcalc || ax.AWClamp):
		t = fmt.Sprintf("%s records the command actually applied, after a mixer changed it; the anti-windup (%s) of the integrator update at the next %s works from it.", name, map[bool]string{true: "back-calculation", false: "conditional integration"}[ax.AWBackcalc], step)
	default:
		why := "this form has no integrator"
		if ax.HasI {
			why = "its integrator has no anti-windup (antiwindup = none)"
		} else if ax.Lead {
			why = "a lead compensator has no integrator"
		}
		if u.Fixed {
			t = fmt.Sprintf("%s records the command actually applied; it does not change the commands of this axis: %s.", name, why)
		} else {
			t = fmt.Sprintf("%s records the command actually applied; for this axis it only sets the command held on a non-finite input: %s.", name, why)
		}
	}
	return commentLines(t, introWidth)
}

// plural is the "s" of a count other than one.
func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}
