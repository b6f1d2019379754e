package review

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// Comparison is what changed between two versions of an airframe file:
// the inputs (the decoded TOML, key by key) and the results (the design
// report's figures, axis by axis), with the changes for the worse flagged
// as regressions.
type Comparison struct {
	Old         string         `json:"old"` // the files as named on the command line
	New         string         `json:"new"`
	Airframe    [2]string      `json:"airframe"` // old and new airframe names
	Inputs      []InputChange  `json:"inputs"`
	Results     []ResultChange `json:"results"`
	Regressions int            `json:"regressions"`
}

// InputChange is one key of the airframe file whose value differs. Old
// or New is nil when the key is absent on that side (the default then
// applies).
type InputChange struct {
	Key string  `json:"key"`
	Old *string `json:"old"`
	New *string `json:"new"`
}

// ResultChange is one figure of the design that differs, as the JSON
// report of `design --json` writes it (ten significant digits). Key is
// the report's path below the axis, e.g. "discrete.phase_margin_deg";
// "checks.overshoot.ok" for a check, "envelope.corners.(gain ×0.9).
// overshoot" for a figure at a plant of the envelope,
// "envelope.worst.overshoot" for its worst over the envelope's plants,
// "warnings" for a warning that appeared or went. Regression says the change is for the worse by more
// than RegressionTolerance, and Why says how.
type ResultChange struct {
	Axis       string  `json:"axis"`
	Key        string  `json:"key"`
	Old        *string `json:"old"`
	New        *string `json:"new"`
	Regression bool    `json:"regression"`
	Why        string  `json:"why,omitempty"`
}

// RegressionTolerance is the relative change below which a figure that
// moved the wrong way is listed but not flagged: 0.1 % of its size is far
// below anything a reviewer acts on (a settling time is resolved to 0.5 %
// of the spec) and far above the floating-point noise between machines.
const RegressionTolerance = 1e-3

// Compare compares the designs of two versions of an airframe file.
func Compare(oldName string, oldA *discrete.Airframe, newName string, newA *discrete.Airframe) (*Comparison, error) {
	if oldA == nil || newA == nil || oldA.File == nil || newA.File == nil {
		return nil, fmt.Errorf("compare: missing design")
	}
	c := &Comparison{Old: oldName, New: newName, Airframe: [2]string{oldA.File.Airframe, newA.File.Airframe}}
	c.Inputs = diffInputs(flattenTOML("", oldA.File.Raw), flattenTOML("", newA.File.Raw))
	ro, err := flatResults(oldA)
	if err != nil {
		return nil, err
	}
	rn, err := flatResults(newA)
	if err != nil {
		return nil, err
	}
	c.Results = diffResults(ro, rn)
	for _, r := range c.Results {
		if r.Regression {
			c.Regressions++
		}
	}
	return c, nil
}

// flattenTOML writes a decoded TOML tree as key path → value text.
// Tables nest into dotted paths; arrays are written whole, in TOML syntax,
// since their elements (a pole list) only mean something together.
func flattenTOML(prefix string, m map[string]any) map[string]string {
	out := map[string]string{}
	for k, v := range m {
		key := k
		if prefix != "" {
			key = prefix + "." + k
		}
		if sub, ok := v.(map[string]any); ok {
			for kk, vv := range flattenTOML(key, sub) {
				out[kk] = vv
			}
			continue
		}
		out[key] = tomlText(v)
	}
	return out
}

// tomlText writes a TOML value compactly: numbers in their shortest
// round-trip form, strings quoted, arrays bracketed.
func tomlText(v any) string {
	switch x := v.(type) {
	case string:
		return strconv.Quote(x)
	case bool:
		return strconv.FormatBool(x)
	case int64:
		return strconv.FormatInt(x, 10)
	case int:
		return strconv.Itoa(x)
	case float64:
		return strconv.FormatFloat(x, 'g', -1, 64)
	case []any:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = tomlText(e)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case map[string]any:
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = k + " = " + tomlText(x[k])
		}
		return "{" + strings.Join(parts, ", ") + "}"
	}
	return fmt.Sprint(v)
}

func diffInputs(o, n map[string]string) []InputChange {
	keys := unionKeys(o, n)
	var out []InputChange
	for _, k := range keys {
		ov, oin := o[k]
		nv, nin := n[k]
		if oin && nin && ov == nv {
			continue
		}
		ch := InputChange{Key: k}
		if oin {
			ch.Old = &ov
		}
		if nin {
			ch.New = &nv
		}
		out = append(out, ch)
	}
	return out
}

func unionKeys(ms ...map[string]string) []string {
	set := map[string]bool{}
	for _, m := range ms {
		for k := range m {
			set[k] = true
		}
	}
	keys := make([]string, 0, len(set))
	for k := range set {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// axisResults is one axis's flattened report: figure path → JSON value
// text, and its warnings.
type axisResults struct {
	vals     map[string]string
	warnings []string
}

// flatResults flattens the JSON report of every axis of a: objects nest
// into dotted paths, arrays of objects with a "name" are keyed by it
// (checks, coefficients, ranges) and the envelope's plants by the plant
// ("envelope.corners.(gain ×0.9).overshoot"), other arrays (poles,
// limits) are kept whole. The nominal plant of the envelope is left out:
// its figures are the discrete section's. The worst of each figure over
// the envelope's plants is added as "envelope.worst.FIGURE".
func flatResults(a *discrete.Airframe) (map[string]axisResults, error) {
	rep := JSON([]*discrete.Airframe{a})
	if len(rep.Airframes) != 1 {
		return nil, fmt.Errorf("compare: no report for %s", a.File.Path)
	}
	out := map[string]axisResults{}
	for _, ax := range rep.Airframes[0].Axes {
		warnings := ax.Warnings
		ax.Warnings = nil
		data, err := json.Marshal(ax)
		if err != nil {
			return nil, fmt.Errorf("compare: %w", err)
		}
		var tree map[string]any
		if err := json.Unmarshal(data, &tree); err != nil {
			return nil, fmt.Errorf("compare: %w", err)
		}
		delete(tree, "axis")
		vals := map[string]string{}
		flattenJSON("", tree, vals)
		if _, ok := tree["numeric"]; !ok {
			addNumeric(a, ax.Axis, vals)
		}
		addWorst(ax.Envelope, vals)
		out[ax.Axis] = axisResults{vals: vals, warnings: warnings}
	}
	return out, nil
}

// addNumeric adds the numeric realization's quantized coefficients and
// range headroom under the keys of the JSON report (README)
// (numeric.coefficients.NAME.quantized, numeric.ranges.NAME.headroom_bits),
// for as long as the report does not carry them itself.
func addNumeric(a *discrete.Airframe, axis string, vals map[string]string) {
	for _, x := range a.Axes {
		if x.Name != axis || x.Design == nil || x.Design.Num == nil {
			continue
		}
		re := x.Design.Num
		vals["numeric.type"] = strconv.Quote(string(re.Type))
		for _, c := range re.Coefficients {
			vals["numeric.coefficients."+c.Name+".quantized"] = num10(c.Quantized)
			if c.Format != "" {
				vals["numeric.coefficients."+c.Name+".format"] = strconv.Quote(c.Format)
			}
		}
		for _, r := range re.Ranges {
			vals["numeric.ranges."+r.Name+".headroom_bits"] = num10(r.HeadroomBits)
		}
	}
}

// addWorst adds the worst of each figure over the envelope's plants: the
// largest overshoot, settling time and Ms, the least margins. These are
// what compare judges the envelope by, once per figure, rather than
// plant by plant (a change of the design moves every plant alike).
func addWorst(e *EnvelopeReport, vals map[string]string) {
	if e == nil {
		return
	}
	type figure struct {
		name  string
		upper bool // larger is worse
		get   func(c CornerReport) *float64
	}
	for _, f := range []figure{
		{"overshoot", true, func(c CornerReport) *float64 { return c.Overshoot }},
		{"settling_time", true, func(c CornerReport) *float64 { return c.SettlingTime }},
		{"phase_margin_deg", false, func(c CornerReport) *float64 { return c.PhaseMarginDeg }},
		{"gain_margin_db", false, func(c CornerReport) *float64 { return c.GainMarginDB }},
		{"max_sensitivity", true, func(c CornerReport) *float64 { return c.MaxSensitivity }},
	} {
		var w *float64
		for _, c := range e.Corners {
			if v := f.get(c); v != nil && (w == nil || f.upper && *v > *w || !f.upper && *v < *w) {
				w = v
			}
		}
		if w != nil {
			vals["envelope.worst."+f.name] = num10(*w)
		}
	}
}

// num10 writes x with the report's ten significant digits.
func num10(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "null"
	}
	v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'e', SignificantDigits-1, 64), 64)
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func flattenJSON(prefix string, v any, out map[string]string) {
	join := func(k string) string {
		if prefix == "" {
			return k
		}
		return prefix + "." + k
	}
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			flattenJSON(join(k), e, out)
		}
	case []any:
		keys := make([]string, len(x))
		named := len(x) > 0
		for i, e := range x {
			m, ok := e.(map[string]any)
			if !ok {
				named = false
				break
			}
			if keys[i], ok = elementKey(m); !ok {
				named = false
				break
			}
		}
		if !named {
			b, _ := json.Marshal(x)
			out[prefix] = string(b)
			return
		}
		for i, e := range x {
			if keys[i] == nominalKey {
				continue
			}
			for k, f := range e.(map[string]any) {
				if !elementField(k) {
					flattenJSON(join(keys[i]+"."+k), f, out)
				}
			}
		}
	default:
		b, _ := json.Marshal(x)
		out[prefix] = string(b)
	}
}

// nominalKey is the key of the envelope's nominal plant.
const nominalKey = "(nominal plant)"

// elementKey returns what names an element of a report array: its "name"
// (a check, a coefficient, a range), or the plant of an envelope corner,
// "(gain ×0.9, delay +0.001 s)".
func elementKey(m map[string]any) (string, bool) {
	if n, ok := m["name"].(string); ok {
		return n, true
	}
	g, ok1 := m["gain_scale"].(float64)
	l, ok2 := m["lag_scale"].(float64)
	d, ok3 := m["delay_add"].(float64)
	if !ok1 || !ok2 || !ok3 {
		return "", false
	}
	return "(" + synth.CornerText(airframe.Corner{GainScale: g, LagScale: l, DelayAdd: d}) + ")", true
}

// elementField reports whether k is a field that names its element
// rather than a figure of it.
func elementField(k string) bool {
	switch k {
	case "name", "gain_scale", "lag_scale", "delay_add":
		return true
	}
	return false
}

func diffResults(o, n map[string]axisResults) []ResultChange {
	axes := map[string]bool{}
	for k := range o {
		axes[k] = true
	}
	for k := range n {
		axes[k] = true
	}
	names := make([]string, 0, len(axes))
	for k := range axes {
		names = append(names, k)
	}
	sort.Strings(names)
	var out []ResultChange
	for _, ax := range names {
		ao, oin := o[ax]
		an, nin := n[ax]
		switch {
		case !nin:
			out = append(out, ResultChange{Axis: ax, Key: "axis", Old: str("designed"), Regression: true, Why: "axis removed"})
			continue
		case !oin:
			out = append(out, ResultChange{Axis: ax, Key: "axis", New: str("designed"), Why: "axis added"})
			if an.vals["ok"] == "false" {
				out[len(out)-1].Regression, out[len(out)-1].Why = true, "axis added, and it does not meet its spec"
			}
			continue
		}
		for _, k := range unionKeys(ao.vals, an.vals) {
			if strings.HasPrefix(k, "checks.") && (strings.HasSuffix(k, ".value") || strings.HasSuffix(k, ".limit")) {
				// A check's value is a metric listed under its own key,
				// its limit an input; its ok flag is what it adds.
				continue
			}
			ov, ok1 := ao.vals[k]
			nv, ok2 := an.vals[k]
			if ok1 && ok2 && ov == nv {
				continue
			}
			ch := ResultChange{Axis: ax, Key: k}
			if ok1 {
				ch.Old = str(ov)
			}
			if ok2 {
				ch.New = str(nv)
			}
			ch.Regression, ch.Why = regression(k, ch.Old, ch.New)
			if plant, ok := cornerPrefix(k); ok {
				// A plant the envelope no longer holds has no figures to
				// be worse: the envelope changed (an input).
				if _, kept := an.vals[plant+".stable"]; !kept {
					ch.Regression, ch.Why = false, "plant no longer in the envelope"
				}
			}
			out = append(out, ch)
		}
		for _, w := range ao.warnings {
			if !slices.Contains(an.warnings, w) {
				out = append(out, ResultChange{Axis: ax, Key: "warnings", Old: str(w), Why: "warning gone"})
			}
		}
		for _, w := range an.warnings {
			if !slices.Contains(ao.warnings, w) {
				out = append(out, ResultChange{Axis: ax, Key: "warnings", New: str(w), Why: "new warning"})
			}
		}
	}
	return out
}

func str(s string) *string { return &s }

// cornerPrefix returns the key of the envelope plant that key is a figure
// of, "envelope.corners.(gain ×0.9)".
func cornerPrefix(key string) (string, bool) {
	if !strings.HasPrefix(key, "envelope.corners.(") {
		return "", false
	}
	i := strings.LastIndexByte(key, '.')
	return key[:i], true
}

// regression classifies a changed figure by its key:
//
//   - margins (phase, gain, delay, the discrete stability margin) and
//     fixed-point headroom must not go down;
//   - overshoot, settling and recovery times must not go up;
//   - a check, the axis or the saturated step's settling that was ok and
//     is not, or an axis that now fails to design, is a regression.
//
// A figure that disappears where it existed (a margin that is now
// undefined because the loop went unstable) counts as worse, as does one
// that became infinite in the bad direction.
func regression(key string, oldV, newV *string) (bool, string) {
	leaf := key[strings.LastIndexByte(key, '.')+1:]
	switch {
	case key == "error":
		if newV != nil && oldV == nil {
			return true, "the axis no longer designs"
		}
		return false, ""
	case leaf == "ok" || leaf == "settled" || leaf == "settled_no_antiwindup":
		if oldV != nil && *oldV == "true" && (newV == nil || *newV == "false") {
			if key == "ok" {
				return true, "the axis no longer meets its spec"
			}
			if strings.HasPrefix(key, "checks.") {
				return true, "check " + strings.TrimSuffix(strings.TrimPrefix(key, "checks."), ".ok") + " newly fails"
			}
			return true, "the saturated step no longer settles"
		}
		return false, ""
	}
	if strings.HasPrefix(key, "checks.") || strings.HasPrefix(key, "textbook.") {
		// A check's value is judged by its ok flag; the textbook
		// placement is not the design.
		return false, ""
	}
	switch {
	case strings.HasPrefix(key, "envelope.corners."):
		// Listed plant by plant, judged by the worst over the plants.
		return false, ""
	case strings.HasPrefix(key, "envelope.") && !strings.HasPrefix(key, "envelope.worst."):
		// The envelope's intervals are inputs.
		return false, ""
	}
	if leaf == "hold_rate" && newV == nil {
		// Absent: unbounded, or no integrator to hold with.
		return false, ""
	}
	higherBetter := map[string]string{
		"phase_margin_deg": "phase margin down",
		"gain_margin_db":   "gain margin down",
		"delay_margin":     "delay margin down",
		"stability_margin": "stability margin (1 − max|z|) down",
		"headroom_bits":    "headroom down",
		"hold_rate":        "holdable rate down",
	}
	lowerBetter := map[string]string{
		"overshoot":                   "overshoot up",
		"settling_time":               "settling time up",
		"recovery_time":               "recovery after saturation slower",
		"overshoot_no_antiwindup":     "",
		"recovery_time_no_antiwindup": "",
		"max_sensitivity":             "sensitivity peak Ms up",
		"max_complementary":           "complementary sensitivity peak Mt up",
		"noise_gain":                  "noise gain up",
		"peak":                        "load-disturbance peak up",
		"iae":                         "load-disturbance IAE up",
	}
	if strings.Contains(key, "disturbance.") {
		// The load step is an input; its recovery is not the saturated
		// step's.
		lowerBetter["step"], lowerBetter["recovery_time"] = "", "load-disturbance recovery slower"
	}
	why, dir := "", 0.0
	if w, ok := higherBetter[leaf]; ok {
		why, dir = w, +1
	} else if w, ok := lowerBetter[leaf]; ok && w != "" {
		why, dir = w, -1
	}
	if why == "" {
		return false, ""
	}
	if strings.HasPrefix(key, "envelope.worst.") {
		why += " (worst over the envelope)"
	}
	return worse(oldV, newV, dir, why)
}

// worse reports whether the number moved against dir (+1: higher is
// better) by more than RegressionTolerance.
func worse(oldV, newV *string, dir float64, why string) (bool, string) {
	if oldV == nil {
		return false, ""
	}
	o, err := strconv.ParseFloat(*oldV, 64)
	if err != nil {
		return false, ""
	}
	if newV == nil {
		return true, why + " (no longer defined)"
	}
	n, err := strconv.ParseFloat(*newV, 64)
	if err != nil {
		return false, ""
	}
	d := (n - o) * dir
	if d < 0 && -d > RegressionTolerance*math.Max(math.Abs(o), math.Abs(n)) {
		return true, why
	}
	return false, ""
}

// WriteText writes the comparison for a reader: the changed inputs, the
// changed results with regressions marked, and the count.
func (c *Comparison) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, a ...any) { fmt.Fprintf(bw, format+"\n", a...) }
	p("compare %s → %s", c.Old, c.New)
	if c.Airframe[0] != c.Airframe[1] {
		p("  airframe %s → %s", c.Airframe[0], c.Airframe[1])
	} else {
		p("  airframe %s", c.Airframe[0])
	}
	val := func(s *string) string {
		if s == nil {
			return "(absent)"
		}
		return *s
	}
	p("")
	if len(c.Inputs) == 0 {
		p("inputs: unchanged")
	} else {
		p("inputs changed (%d):", len(c.Inputs))
		width := 0
		for _, ch := range c.Inputs {
			width = max(width, len(ch.Key))
		}
		for _, ch := range c.Inputs {
			p("  %-*s  %s → %s", width, ch.Key, val(ch.Old), val(ch.New))
		}
	}
	p("")
	if len(c.Results) == 0 {
		p("results: unchanged")
	} else {
		p("results changed (%d):", len(c.Results))
		width := 0
		for _, ch := range c.Results {
			width = max(width, len(ch.Axis)+1+len(ch.Key))
		}
		for _, ch := range c.Results {
			if ch.Key == "warnings" {
				if ch.New != nil {
					p("  %-*s  + %s", width, ch.Axis+" warning", *ch.New)
				} else {
					p("  %-*s  − %s", width, ch.Axis+" warning", val(ch.Old))
				}
				continue
			}
			mark := ""
			switch {
			case ch.Regression:
				mark = "   REGRESSION: " + ch.Why
			case ch.Why != "":
				mark = "   (" + ch.Why + ")"
			}
			p("  %-*s  %s → %s%s", width, ch.Axis+" "+ch.Key, val(ch.Old), val(ch.New), mark)
		}
	}
	p("")
	switch c.Regressions {
	case 0:
		p("no regressions")
	case 1:
		p("1 regression")
	default:
		p("%d regressions", c.Regressions)
	}
	return bw.Flush()
}
