package synth

import (
	"fmt"
	"math"
	"strings"

	"locusmith/airframe"
)

// Check is one pass/fail comparison against the spec.
type Check struct {
	Name  string  // e.g. "overshoot"
	Limit float64 // the spec's bound
	Value float64 // what the design achieves
	Upper bool    // true when Value must not exceed Limit, false when it must reach it
	OK    bool
	// Worst is the plant of the envelope where Value is worst (the
	// nominal plant for a check of the controller alone).
	Worst airframe.Corner
}

// SpecChecks compares the achieved figures with the spec.
func SpecChecks(s airframe.Spec, stable bool, maxRe, overshoot, settling, pm, gm float64) []Check {
	cs := []Check{
		{Name: "stable", Limit: 0, Value: maxRe, Upper: true, OK: stable},
		{Name: "overshoot", Limit: s.Overshoot, Value: overshoot, Upper: true, OK: stable && overshoot <= s.Overshoot},
		{Name: "settling_time", Limit: s.SettlingTime, Value: settling, Upper: true, OK: stable && settling <= s.SettlingTime},
	}
	if s.MinPhaseMargin > 0 {
		cs = append(cs, Check{Name: "phase_margin", Limit: s.MinPhaseMargin, Value: pm, OK: stable && pm >= s.MinPhaseMargin})
	}
	if s.MinGainMargin > 0 {
		cs = append(cs, Check{Name: "gain_margin", Limit: s.MinGainMargin, Value: gm, OK: stable && gm >= s.MinGainMargin})
	}
	return cs
}

// String states a check in one line with its units, as the table and
// the generated code's header list a failed one, naming the plant of the
// envelope where the value is worst when that is not the nominal plant:
// "overshoot 12.5 % > 10 % (sampled loop, gain ×1.1)".
func (c Check) String() string {
	rel := "<"
	switch {
	case c.Name == "stable" || c.Name == "sampling":
		rel = "≥"
	case c.Upper:
		rel = ">"
	}
	what := map[string]string{
		"stable":               "sampled loop unstable: max |z|",
		"sampling":             "fastest dynamics / Nyquist",
		"overshoot":            "overshoot",
		"settling_time":        "settling time",
		"phase_margin":         "phase margin",
		"gain_margin":          "gain margin",
		"max_sensitivity":      "sensitivity peak Ms",
		"steady_error":         "steady-state error",
		"hold_rate":            "holdable rate",
		"disturbance_recovery": "load-disturbance recovery",
		"noise_gain":           "noise gain (command per rad/s)",
		"saturated_recovery":   "recovery from the saturating step",
	}[c.Name]
	if what == "" {
		what = c.Name
	}
	where := "sampled loop"
	if c.Worst != (airframe.Corner{}) && c.Worst != airframe.Nominal() {
		where += ", " + CornerText(c.Worst)
	}
	if c.Name == "stable" && math.IsNaN(c.Value) {
		// The winding-number test of a long delay gives a verdict, no
		// radius.
		s := "sampled loop unstable: a closed-loop pole on or outside the unit circle"
		if where != "sampled loop" {
			s += " (" + strings.TrimPrefix(where, "sampled loop, ") + ")"
		}
		return s
	}
	switch strings.TrimPrefix(c.Name, "quantized_") {
	case "overshoot", "settling_time", "phase_margin", "gain_margin":
		if !c.OK && (c.Upper && c.Value <= c.Limit || !c.Upper && c.Value >= c.Limit) {
			// The figure meets its limit, and the check fails because
			// the loop is unstable (SpecChecks): a margin read off the
			// loop of an unstable plant ("phase margin 128.1° <
			// 52.16°" read as a contradiction).
			return fmt.Sprintf("%s %s, but the loop is unstable (%s)", what, CheckValue(c.Name, c.Value), where)
		}
	}
	return fmt.Sprintf("%s %s %s %s (%s)", what, CheckValue(c.Name, c.Value), rel, CheckValue(c.Name, c.Limit), where)
}

// CornerText names a plant of the envelope by what moves it from the
// nominal plant, "gain ×0.9, delay +0.001 s", or "nominal plant".
func CornerText(c airframe.Corner) string {
	var parts []string
	if c.GainScale != 1 && c.GainScale != 0 {
		parts = append(parts, "gain ×"+G4(c.GainScale))
	}
	if c.LagScale != 1 && c.LagScale != 0 {
		parts = append(parts, "lag ×"+G4(c.LagScale))
	}
	if c.DelayAdd != 0 {
		sign := "+"
		if c.DelayAdd < 0 {
			sign = "-" // as G4 writes a negative number
		}
		parts = append(parts, "delay "+sign+G4(math.Abs(c.DelayAdd))+" s")
	}
	if len(parts) == 0 {
		return "nominal plant"
	}
	return strings.Join(parts, ", ")
}

// CheckValue formats a value or limit of the check named name in its
// unit, with four significant digits (enough to compare with a hand
// calculation, few enough that the last bits of a floating-point result
// never show). The quantized_ checks (the spec checks with quantized
// coefficients) share the units of the spec checks.
func CheckValue(name string, v float64) string {
	switch strings.TrimPrefix(name, "quantized_") {
	case "overflow":
		return G4(v) + " bits"
	case "limit_cycle", "filter_rounding":
		return G4(v) + " LSB"
	case "overshoot":
		return finiteOr(v, func(v float64) string {
			if math.Abs(v) < 1e-9 {
				v = 0
			}
			return G4(100*v) + " %"
		})
	case "settling_time":
		return finiteOr(v, func(v float64) string { return G4(v) + " s" })
	case "phase_margin":
		return finiteOr(v, func(v float64) string { return G4(v) + "°" })
	case "gain_margin":
		return finiteOr(v, func(v float64) string { return G4(v) + " dB" })
	case "steady_error":
		// A fraction of the setpoint, like the overshoot.
		return finiteOr(v, func(v float64) string {
			if math.Abs(v) < 1e-9 {
				v = 0
			}
			return G4(100*v) + " %"
		})
	case "hold_rate":
		if math.IsInf(v, 1) {
			return "unbounded" // the integrator holds any rate
		}
		return finiteOr(v, func(v float64) string { return G4(v) + " rad/s" })
	case "disturbance_recovery":
		return finiteOr(v, func(v float64) string { return G4(v) + " s" })
	case "saturated_recovery":
		if math.IsInf(v, 1) {
			return "never" // wound up, stuck at a limit, or cycling
		}
		return finiteOr(v, func(v float64) string { return G4(v) + " s" })
	}
	// max_sensitivity (Ms, dimensionless), noise_gain (command per
	// rad/s, a unit too long for a table cell) and sampling: plain.
	return G4(v)
}

// G4 formats x with four significant digits (%.4g); "n/a" for NaN, "inf"
// and "-inf" for the infinities, and "0" for both zeros.
func G4(x float64) string {
	switch {
	case math.IsNaN(x):
		return "n/a"
	case math.IsInf(x, 1):
		return "inf"
	case math.IsInf(x, -1):
		return "-inf"
	case x == 0:
		return "0" // also −0
	}
	return fmt.Sprintf("%.4g", x)
}

// finiteOr formats a finite x with f and anything else as "none" (no
// crossover, no settling).
func finiteOr(x float64, f func(float64) string) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "none"
	}
	return f(x)
}
