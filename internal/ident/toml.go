package ident

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
)

// strconvG formats v with the given significant digits, shortest form.
func strconvG(v float64, digits int) string {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	s := strconv.FormatFloat(v, 'g', digits, 64)
	// Reparse and print shortest, so that 0.0250000 prints as 0.025.
	x, _ := strconv.ParseFloat(s, 64)
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// tomlFloat writes v as a TOML float with the given significant digits: a
// plain decimal between 1e-4 and 1e6, an exponent outside, always with a
// decimal point or an exponent so that it reads as a float.
func tomlFloat(v float64, digits int) string {
	x, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', digits, 64), 64)
	a := math.Abs(x)
	var s string
	if a == 0 || (a >= 1e-4 && a < 1e6) {
		s = strconv.FormatFloat(x, 'f', -1, 64)
	} else {
		s = strconv.FormatFloat(x, 'e', -1, 64)
	}
	if !strings.ContainsAny(s, ".eE") {
		s += ".0"
	}
	return s
}

// valueDigits is the number of significant digits printed for a value: one
// more than the interval resolves in the common case (±0.1 % needs four),
// capped so that the output stays readable.
func valueDigits(p Param) int {
	rel := p.RelHalfWidth()
	if !(rel > 0) || math.IsInf(rel, 0) {
		return 4
	}
	d := int(math.Ceil(-math.Log10(rel))) + 2
	return max(3, min(d, 7))
}

// TOML returns the section for the airframe file: [axes.AXIS.plant] (and
// [axes.AXIS.sensor] when a sensor was fitted), preceded by the fit's
// evidence as comments. source names the log in the comments.
func (r *Result) TOML(axis, source string) string {
	var b strings.Builder
	c := func(format string, a ...any) { fmt.Fprintf(&b, "# "+format+"\n", a...) }
	c("Identified by locusmith identify from %s: output-error fit of", commentSafe(source))
	if r.LowpassHz != nil {
		c("  effectiveness/(s·(motor_tau·s + 1))·e^(−s·delay) and a gyro lowpass,")
	} else {
		c("  effectiveness/(s·(motor_tau·s + 1))·e^(−s·delay),")
	}
	c("  %d samples at %s Hz in %d segment(s)%s.", r.FitSamples, strconvG(1/r.T, 6), r.Segments, r.resampledNote())
	hold := "no held-out data"
	if !math.IsNaN(r.HoldoutNRMSE) {
		hold = fmt.Sprintf("held out (%d samples): normalized RMS error %s %%, VAF %s %%",
			r.HoldoutSamples, strconvG(100*r.HoldoutNRMSE, 3), strconvG(100*r.HoldoutVAF, 4))
	}
	c("Fit: normalized RMS error %s %%, VAF %s %%; %s.", strconvG(100*r.NRMSE, 3), strconvG(100*r.VAF, 4), hold)
	c("95 %% confidence intervals (σ²(JᵀJ)⁻¹ at the optimum; white-noise assumption):")
	for _, p := range r.Params() {
		d := valueDigits(p)
		c("  %-14s %-10s [%s, %s]  ±%s %%", p.Name, strconvG(p.Value, d), strconvG(p.Lo, d), strconvG(p.Hi, d), strconvG(100*p.RelHalfWidth(), 2))
	}
	c("Nuisance, first segment: rate offset %s (initial rate + gyro bias), command trim %s.",
		strconvG(r.Offset, 4), strconvG(r.Trim, 4))
	for _, n := range r.Notes {
		c("Note: %s.", n)
	}
	for _, w := range r.Warnings {
		c("WARNING: %s", w)
	}
	c("Model-based: bench-test with propellers off and fly tethered first.")
	fmt.Fprintf(&b, "[axes.%s.plant]\n", axis)
	fmt.Fprintf(&b, "effectiveness = %s\n", tomlFloat(r.Effectiveness.Value, valueDigits(r.Effectiveness)))
	fmt.Fprintf(&b, "motor_tau = %s\n", tomlFloat(r.MotorTau.Value, valueDigits(r.MotorTau)))
	fmt.Fprintf(&b, "delay = %s\n", tomlFloat(r.Delay.Value, valueDigits(r.Delay)))
	if r.LowpassHz != nil {
		fmt.Fprintf(&b, "\n[axes.%s.sensor]\n", axis)
		fmt.Fprintf(&b, "lowpass_hz = %s\n", tomlFloat(r.LowpassHz.Value, valueDigits(*r.LowpassHz)))
	}
	return b.String()
}

func (r *Result) resampledNote() string {
	if r.Resampled {
		return ", resampled from irregular timestamps"
	}
	return ""
}

// commentSafe returns s as it may stand in a TOML comment and on a
// terminal: itself when it is printable text, else quoted with Go escapes.
// TOML allows no control character but tab in a comment, and a newline
// would end the comment and make the rest of s a line of TOML (a file
// named "x\n[axes.roll.plant]\ngain = 1" would inject keys); bidirectional
// controls would make the comment read other than it is.
func commentSafe(s string) string {
	for _, r := range s {
		if r == utf8RuneError || !unicode.IsPrint(r) && r != ' ' || bidiControl(r) {
			return strconv.Quote(s)
		}
	}
	return s
}

// utf8RuneError is what ranging over invalid UTF-8 yields.
const utf8RuneError = '\uFFFD'

// bidiControl reports whether r is a Unicode control of bidirectional
// text (the "Trojan Source" characters).
func bidiControl(r rune) bool {
	return r == 0x061C || r == 0x200E || r == 0x200F || 0x202A <= r && r <= 0x202E || 0x2066 <= r && r <= 0x2069
}
