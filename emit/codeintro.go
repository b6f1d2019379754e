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
	l = append(l, "Input SHA-256: "+commentText(f.SHA256))
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
	add("Per axis: _reset(s, output, measured) before the first step and on every engagement (bumpless: the next command starts from output, the derivative from measured); _step(s, setpoint, measured) once per loop period; _applied(s, command) after the mixer when it changed the command (anti-windup then works from the applied value).")
	switch {
	case u.Fixed:
		add("Integer arithmetic only, bit-exact with locusmith's reference model on every conforming compiler; the test vectors (--vectors) check it.")
	case u.Lang == LangC:
		add("Bit-exact with locusmith's reference model when compiled without floating-point contraction (ISO C mode such as -std=c99, or -ffp-contract=off) and with FLT_EVAL_METHOD == 0; the test vectors (--vectors) check it.")
	default:
		add("Bit-exact with locusmith's reference model on every architecture: each product is converted explicitly, which rules out fused multiply-add (The Go Programming Language Specification, \"Floating-point operators\"); the test vectors (--vectors) check it.")
	}
	blank()
	add("CAUTION: these controllers are computed from a model; model-based results do not replace flight testing. Bench-test with the propellers off, make the first flight tethered, follow local aviation rules, and have the design reviewed by a qualified person before flight.")
	return l
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
func axisDoc(u *codeUnit, x discrete.Outcome) []string {
	form := map[airframe.Form]string{
		airframe.FormP: "P", airframe.FormPI: "PI", airframe.FormPD: "PD with filtered derivative",
		airframe.FormPID: "PID with filtered derivative", airframe.FormLead: "lead compensator",
	}[x.Design.Coeffs.Form]
	return commentLines(fmt.Sprintf("State of the %s rate controller of axis %s (%s). Call reset before the first step.", u.Airframe, x.Name, form), introWidth)
}

// resetText says what an axis's reset does, for its doc comment.
func resetText(ax *codeAxis) string {
	var parts []string
	switch {
	case ax.Lead:
		return "sets the lead filter state to output, so that the next command is output at zero error (bumpless transfer); measured is not used."
	case ax.HasI:
		parts = append(parts, "makes the transfer bumpless: the next command is output when the setpoint equals measured (the integrator takes output minus the proportional part, within its limit)")
	default:
		parts = append(parts, "clears the state; output is not used (the form has no integrator)")
	}
	if ax.HasD {
		if ax.DOnError {
			parts = append(parts, "the derivative starts from the first step's error, so there is no derivative kick")
		} else {
			parts = append(parts, "the derivative starts from measured, so there is no derivative kick")
		}
	} else if !ax.HasI {
		parts[0] = "clears the state; output and measured are not used (a P controller has no memory)"
	}
	return strings.Join(parts, "; ") + "."
}

// resetDoc is the doc comment of the reset function of ax, for the
// function named name.
func resetDoc(name string, ax *codeAxis) []string {
	return commentLines(name+" "+resetText(ax), introWidth)
}

// plural is the "s" of a count other than one.
func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}
