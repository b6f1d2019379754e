package review

import (
	"bufio"
	"cmp"
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

// Comparison is what changed between two versions of an airframe file,
// judged against the spec: first the verdict of each axis (did it meet
// every check before, does it now, and how many regressions), then the
// inputs (the decoded TOML, key by key), then the results, each change
// classed as a regression, an improvement or neither.
//
// A regression is a check that newly fails, or the distance of a check's
// value to its limit (its slack, as a fraction of the limit) shrinking by
// more than Tolerance, or falling below Floor; an improvement is the
// reverse. Two figures are judged against their old value instead, by the
// same Tolerance: the load step's integrated error (the design's
// objective, which has no limit) and a noise gain held to the design's own
// bound rather than the file's. The other figures (gains, poles,
// crossovers, the plants of the envelope one by one) are listed as other
// changes: a retune moves them all, and they are not what the design is
// held to.
//
// The JSON form is a contract (README, "compare --json"): numbers are
// JSON numbers, and the fields below are its schema.
type Comparison struct {
	Old      string    `json:"old"` // the files as named on the command line
	New      string    `json:"new"`
	Airframe [2]string `json:"airframe"` // old and new airframe names
	// Tolerance and Floor are the thresholds the regressions were judged
	// by, as fractions of a check's limit.
	Tolerance float64       `json:"tolerance"`
	Floor     float64       `json:"floor"`
	Verdict   []AxisVerdict `json:"verdict"`
	Inputs    []InputChange `json:"inputs"`
	// Filters are the filters of the feedback chains added, removed or
	// changed, on the axes of both versions.
	Filters []FilterChange `json:"filters"`
	Results []ResultChange `json:"results"`
	// Regressions and Improvements count the axes' together.
	Regressions  int `json:"regressions"`
	Improvements int `json:"improvements"`
}

// AxisVerdict is one axis: whether it met every check before and now (nil
// where the axis does not exist on that side), and its regressions.
type AxisVerdict struct {
	Axis         string `json:"axis"`
	MetBefore    *bool  `json:"met_before"`
	MetNow       *bool  `json:"met_now"`
	Regressions  int    `json:"regressions"`
	Improvements int    `json:"improvements"`
}

// InputChange is one key of the airframe file whose value differs. Old
// or New is absent (null) when the key is absent on that side (the default
// then applies); values are the TOML values (numbers, strings, booleans,
// arrays).
type InputChange struct {
	Key string `json:"key"`
	Old any    `json:"old"`
	New any    `json:"new"`
}

// FilterChange is a filter of an axis's feedback chain that was added,
// removed or changed, by its place in the chain (Filter 1 is the first
// the measured rate passes, axes.NAME.filter[0] in the file). The
// settings are those the design ran (a centre or cutoff with hz = "auto"
// as placed or chosen), which the changed inputs alone do not show: an
// "auto" that moves is the same input. Old and New describe the filter
// (null where it is absent), Fields name the settings that differ (for a
// change), and the phases are the filter's at the crossover of the
// nominal sampled loop of each version (null where absent).
type FilterChange struct {
	Axis        string   `json:"axis"`
	Filter      int      `json:"filter"`
	Change      string   `json:"change"` // "added", "removed" or "changed"
	Old         *string  `json:"old"`
	New         *string  `json:"new"`
	Fields      []string `json:"fields,omitempty"`
	OldPhaseDeg *float64 `json:"old_phase_at_crossover_deg"`
	NewPhaseDeg *float64 `json:"new_phase_at_crossover_deg"`
	// keys are the prefixes of the results that belong to a filter added
	// or removed as a whole (its place in the filters list, its section's
	// coefficients and ranges), which the text counts instead of listing.
	keys []string
}

// The changes of a filter.
const (
	FilterAdded   = "added"
	FilterRemoved = "removed"
	FilterChanged = "changed"
)

// The classes of a result change.
const (
	Regression  = "regression"
	Improvement = "improvement"
	Neutral     = "other"
)

// ResultChange is one figure of the design that differs, keyed by the path
// of `design --json` below the axis ("discrete.crossover"); a check is
// "checks.NAME" with its value, limit and slack. Old or New is null where
// the figure is absent on that side.
type ResultChange struct {
	Axis string `json:"axis"`
	Key  string `json:"key"`
	Old  any    `json:"old"`
	New  any    `json:"new"`
	// Limit is a check's limit (the new one); OldSlack and NewSlack its
	// distance from the value, as a fraction of the limit (negative: the
	// check fails).
	Limit    *float64 `json:"limit,omitempty"`
	OldSlack *float64 `json:"old_slack,omitempty"`
	NewSlack *float64 `json:"new_slack,omitempty"`
	Class    string   `json:"class"`
	Why      string   `json:"why,omitempty"`
}

// DefaultTolerance is the default of --tolerance: a check's slack may
// shrink by up to 5 % of its limit before compare calls it a regression
// (an overshoot from 1.95 % to 1.99 % against a 10 % limit is 0.4 % of the
// limit: a retune's noise, not a regression).
const DefaultTolerance = 0.05

// DefaultFloor is the default of the floor: a check that comes within 5 %
// of its limit, from farther, is a regression whatever the tolerance; so
// is one that already was within the floor and comes closer by more than
// a hundredth of the limit.
const DefaultFloor = 0.05

// Compare compares the designs of two versions of an airframe file, with
// the regression thresholds tol and floor (fractions of a limit; ≤ 0:
// the defaults).
func Compare(oldName string, oldA *discrete.Airframe, newName string, newA *discrete.Airframe, tol, floor float64) (*Comparison, error) {
	if oldA == nil || newA == nil || oldA.File == nil || newA.File == nil {
		return nil, fmt.Errorf("compare: missing design")
	}
	if !(tol > 0) {
		tol = DefaultTolerance
	}
	if !(floor > 0) {
		floor = DefaultFloor
	}
	c := &Comparison{Old: oldName, New: newName, Airframe: [2]string{oldA.File.Airframe, newA.File.Airframe},
		Tolerance: tol, Floor: floor, Verdict: []AxisVerdict{}, Inputs: []InputChange{}, Results: []ResultChange{}}
	c.Inputs = diffInputs(flattenTOML("", oldA.File.Raw), flattenTOML("", newA.File.Raw))
	c.Filters = diffFilters(oldA, newA)
	ro, err := flatResults(oldA)
	if err != nil {
		return nil, err
	}
	rn, err := flatResults(newA)
	if err != nil {
		return nil, err
	}
	c.Verdict, c.Results = judge(ro, rn, tol, floor)
	for _, v := range c.Verdict {
		c.Regressions += v.Regressions
		c.Improvements += v.Improvements
	}
	return c, nil
}

// flattenTOML writes a decoded TOML tree as key path → value. Tables nest
// into dotted paths; arrays are kept whole, since their elements (a pole
// list) only mean something together.
func flattenTOML(prefix string, m map[string]any) map[string]any {
	out := map[string]any{}
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
		// An array of tables (the filter chain) is compared key by key,
		// each table under its index as the file's messages name it
		// (axes.roll.filter[0].hz), not as one opaque array.
		if arr, ok := v.([]any); ok && len(arr) > 0 && allTables(arr) {
			for i, e := range arr {
				for kk, vv := range flattenTOML(fmt.Sprintf("%s[%d]", key, i), e.(map[string]any)) {
					out[kk] = vv
				}
			}
			continue
		}
		out[key] = v
	}
	return out
}

// allTables reports whether every element of arr is a table.
func allTables(arr []any) bool {
	for _, e := range arr {
		if _, ok := e.(map[string]any); !ok {
			return false
		}
	}
	return true
}

// same reports whether two decoded values are equal, by their JSON text.
func same(a, b any) bool {
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	return string(ja) == string(jb)
}

func diffInputs(o, n map[string]any) []InputChange {
	out := []InputChange{}
	for _, k := range unionKeys(o, n) {
		ov, oin := o[k]
		nv, nin := n[k]
		if oin && nin && same(ov, nv) {
			continue
		}
		out = append(out, InputChange{Key: k, Old: ov, New: nv})
	}
	return out
}

func unionKeys[V any](ms ...map[string]V) []string {
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

// chainOf returns the filters of each axis of a in the order of the JSON
// report's filters list (the feedback chain, then the derivative
// filters), as the design ran them (Design.Problem: an automatic cutoff
// chosen), or as the file gives them when the axis did not design, with
// each filter's phase at the crossover (nil without a design or a
// crossover).
func chainOf(a *discrete.Airframe) map[string][]chainFilter {
	out := map[string][]chainFilter{}
	all := func(p airframe.Axis) []airframe.Filter {
		return append(append([]airframe.Filter(nil), p.Filters...), p.Ctrl.DerivativeFilters...)
	}
	for _, ax := range a.File.Axes {
		var fs []chainFilter
		for _, f := range all(ax) {
			fs = append(fs, chainFilter{f: f})
		}
		out[ax.Name] = fs
	}
	for _, x := range a.Axes {
		if x.Design == nil {
			continue
		}
		var fs []chainFilter
		rs := jsonFilters(x.Design)
		for i, f := range all(x.Design.Problem) {
			cf := chainFilter{f: f}
			if i < len(rs) {
				cf.phase = rs[i].PhaseAtCrossoverDeg
			}
			fs = append(fs, cf)
		}
		out[x.Name] = fs
	}
	return out
}

// chainFilter is a filter of a chain and its phase at the crossover.
type chainFilter struct {
	f     airframe.Filter
	phase *float64
}

// describe is the filter's description, marked when it acts on the
// derivative alone.
func (c chainFilter) describe() string {
	if c.f.At == airframe.FilterAtDerivative {
		return c.f.Describe() + ", on the derivative"
	}
	return c.f.Describe()
}

// filterFields returns the settings of a filter by the names of the JSON
// report (FilterReport), in its order; a setting that does not apply to
// the kind is absent, as there.
func filterFields(f airframe.Filter) [][2]string {
	num := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	out := [][2]string{{"kind", string(f.Kind)}, {"at", f.At}, {"hz", num(f.Hz)}}
	if f.Kind == airframe.FilterNotch {
		out = append(out, [2]string{"width_hz", num(f.WidthHz)})
		if f.DepthDB > 0 {
			out = append(out, [2]string{"depth_db", num(f.DepthDB)})
		}
	}
	if f.Order > 0 {
		out = append(out, [2]string{"order", strconv.Itoa(f.Order)})
	}
	if f.Order == 2 {
		out = append(out, [2]string{"damping", num(f.Damping)})
	}
	return append(out, [2]string{"auto", strconv.FormatBool(f.AutoHz)}, [2]string{"goal", f.Goal})
}

// changedFields names the settings in which two filters differ (a
// setting present on one side only differs too).
func changedFields(o, n airframe.Filter) []string {
	of, nf := filterFields(o), filterFields(n)
	val := func(fs [][2]string, k string) (string, bool) {
		for _, f := range fs {
			if f[0] == k {
				return f[1], true
			}
		}
		return "", false
	}
	var out []string
	for _, k := range []string{"kind", "at", "hz", "width_hz", "depth_db", "order", "damping", "auto", "goal"} {
		ov, oin := val(of, k)
		nv, nin := val(nf, k)
		if oin != nin || ov != nv {
			out = append(out, k)
		}
	}
	return out
}

// diffFilters lists the filters added, removed or changed on the axes
// both versions have (an axis added or removed is a result of its own,
// with every filter it has): place by place within each chain, the
// feedback chain and the derivative filters, so that a filter added to
// one chain does not move the other's; each is numbered by its place in
// the JSON report's filters list (of the new version, of the old one for
// a filter removed).
func diffFilters(oldA, newA *discrete.Airframe) []FilterChange {
	out := []FilterChange{}
	oc, nc := chainOf(oldA), chainOf(newA)
	for _, ax := range unionKeys(oc, nc) {
		os, oin := oc[ax]
		ns, nin := nc[ax]
		if !oin || !nin {
			continue
		}
		var chs []FilterChange
		for _, at := range []string{airframe.FilterAtFeedback, airframe.FilterAtDerivative} {
			oi, ni := placesAt(os, at), placesAt(ns, at)
			for j := 0; j < max(len(oi), len(ni)); j++ {
				var ch FilterChange
				if j < len(oi) {
					d := os[oi[j]].describe()
					ch.Old, ch.OldPhaseDeg, ch.Filter = &d, os[oi[j]].phase, oi[j]+1
				}
				if j < len(ni) {
					d := ns[ni[j]].describe()
					ch.New, ch.NewPhaseDeg, ch.Filter = &d, ns[ni[j]].phase, ni[j]+1
				}
				ch.Axis = ax
				switch {
				case ch.Old == nil:
					ch.Change = FilterAdded
					ch.keys = sectionKeys(ns, ni[j])
				case ch.New == nil:
					ch.Change = FilterRemoved
					ch.keys = sectionKeys(os, oi[j])
				default:
					ch.Fields = changedFields(os[oi[j]].f, ns[ni[j]].f)
					if len(ch.Fields) == 0 {
						continue
					}
					ch.Change = FilterChanged
				}
				chs = append(chs, ch)
			}
		}
		slices.SortStableFunc(chs, func(a, b FilterChange) int { return cmp.Compare(a.Filter, b.Filter) })
		out = append(out, chs...)
	}
	return out
}

// placesAt returns the places in fs of the filters at at, in order.
func placesAt(fs []chainFilter, at string) []int {
	var out []int
	for i, f := range fs {
		if f.f.At == at {
			out = append(out, i)
		}
	}
	return out
}

// sectionKeys returns the prefixes of the results of filter i of chain
// fs: filters[i] of the JSON report's list, and the section's
// coefficients (F<k>_, D<k>_) and ranges ("filter k …", "derivative
// filter k …") of the numeric realization, numbered within its own chain.
func sectionKeys(fs []chainFilter, i int) []string {
	k := 1
	for _, f := range fs[:i] {
		if f.f.At == fs[i].f.At {
			k++
		}
	}
	coef, rng := "F", "filter"
	if fs[i].f.At == airframe.FilterAtDerivative {
		coef, rng = "D", "derivative filter"
	}
	return []string{fmt.Sprintf("filters[%d].", i), fmt.Sprintf("numeric.coefficients.%s%d_", coef, k), fmt.Sprintf("numeric.ranges.%s %d ", rng, k)}
}

// axisResults is one axis's report: its figures flattened (path → value,
// the checks apart), its checks by name, and its warnings.
type axisResults struct {
	ok bool
	// userNoise: the noise-gain limit is the file's max_noise_gain, not
	// the bound the search derived for this design.
	userNoise bool
	vals      map[string]any
	checks    map[string]CheckReport
	warnings  []string
}

// flatResults flattens the JSON report of every axis of a: objects nest
// into dotted paths, arrays of objects with a "name" are keyed by it
// (coefficients, ranges) and the envelope's plants by the plant
// ("envelope.corners.(gain ×0.9).overshoot"), other arrays (poles, limits)
// are kept whole. The nominal plant of the envelope is left out: its
// figures are the discrete section's. The checks are kept apart.
func flatResults(a *discrete.Airframe) (map[string]axisResults, error) {
	rep := JSON([]*discrete.Airframe{a})
	if len(rep.Airframes) != 1 {
		return nil, fmt.Errorf("compare: no report for %s", a.File.Path)
	}
	userNoise := map[string]bool{}
	for _, x := range a.Axes {
		if x.Design != nil {
			userNoise[x.Name] = x.Design.Problem.Spec.MaxNoiseGain > 0
		}
	}
	out := map[string]axisResults{}
	for _, ax := range rep.Airframes[0].Axes {
		r := axisResults{ok: ax.OK, userNoise: userNoise[ax.Axis], checks: map[string]CheckReport{}, warnings: ax.Warnings}
		for _, c := range ax.Checks {
			r.checks[c.Name] = c
		}
		ax.Warnings, ax.Checks = nil, nil
		data, err := json.Marshal(ax)
		if err != nil {
			return nil, fmt.Errorf("compare: %w", err)
		}
		var tree map[string]any
		if err := json.Unmarshal(data, &tree); err != nil {
			return nil, fmt.Errorf("compare: %w", err)
		}
		delete(tree, "axis")
		delete(tree, "ok")
		r.vals = map[string]any{}
		flattenJSON("", tree, r.vals)
		out[ax.Axis] = r
	}
	return out, nil
}

func flattenJSON(prefix string, v any, out map[string]any) {
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
		if prefix == "filters" {
			// The filters by place (filters[0].hz): the feedback
			// chain, then the derivative filters, as the filter
			// changes number them.
			for i, e := range x {
				flattenJSON(fmt.Sprintf("%s[%d]", prefix, i), e, out)
			}
			return
		}
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
			out[prefix] = x
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
		out[prefix] = x
	}
}

// nominalKey is the key of the envelope's nominal plant.
const nominalKey = "(nominal plant)"

// elementKey returns what names an element of a report array: its "name"
// (a coefficient, a range), or the plant of an envelope corner,
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

// upperCheck reports whether the check named name holds its value at or
// below its limit (overshoot, settling, Ms, …) rather than at or above
// (the margins, the hold rate, the headroom).
func upperCheck(name string) bool {
	switch strings.TrimPrefix(name, "quantized_") {
	case "phase_margin", "gain_margin", "hold_rate", "overflow":
		return false
	}
	return true
}

// slack is the distance of a check's value to its limit as a fraction of
// the limit (of 1 for a limit of 0: the headroom's bits), positive when
// the check passes by that much.
func slack(name string, value, limit float64) float64 {
	scale := math.Abs(limit)
	if scale == 0 {
		scale = 1
	}
	if upperCheck(name) {
		return (limit - value) / scale
	}
	return (value - limit) / scale
}

// judge compares the axes' results: the verdicts, and every change
// classed.
func judge(o, n map[string]axisResults, tol, floor float64) ([]AxisVerdict, []ResultChange) {
	verdicts := []AxisVerdict{}
	out := []ResultChange{}
	for _, ax := range unionKeys(o, n) {
		ao, oin := o[ax]
		an, nin := n[ax]
		v := AxisVerdict{Axis: ax}
		if oin {
			v.MetBefore = &ao.ok
		}
		if nin {
			v.MetNow = &an.ok
		}
		add := func(ch ResultChange) {
			ch.Axis = ax
			switch ch.Class {
			case Regression:
				v.Regressions++
			case Improvement:
				v.Improvements++
			}
			out = append(out, ch)
		}
		switch {
		case !nin:
			add(ResultChange{Key: "axis", Old: "designed", Class: Regression, Why: "axis removed"})
		case !oin:
			ch := ResultChange{Key: "axis", New: "designed", Class: Neutral, Why: "axis added"}
			if !an.ok {
				ch.Class, ch.Why = Regression, "axis added, and it does not meet its spec"
			}
			add(ch)
		default:
			if e, ok := an.vals["error"]; ok {
				if _, was := ao.vals["error"]; !was {
					add(ResultChange{Key: "error", New: e, Class: Regression, Why: "the axis no longer designs"})
				}
			}
			for _, name := range unionKeys(ao.checks, an.checks) {
				derived := name == "noise_gain" && !(ao.userNoise && an.userNoise)
				if ch, changed := judgeCheck(name, ao.checks, an.checks, derived, tol, floor); changed {
					add(ch)
				}
			}
			for _, k := range unionKeys(ao.vals, an.vals) {
				ov, ok1 := ao.vals[k]
				nv, ok2 := an.vals[k]
				if k == "error" || ok1 && ok2 && same(ov, nv) {
					continue
				}
				ch := ResultChange{Key: k, Old: ov, New: nv, Class: Neutral}
				if k == objectiveKey {
					judgeObjective(&ch, tol)
				}
				add(ch)
			}
			for _, w := range ao.warnings {
				if !slices.Contains(an.warnings, w) {
					add(ResultChange{Key: "warning", Old: w, Class: Neutral, Why: "warning gone"})
				}
			}
			for _, w := range an.warnings {
				if !slices.Contains(ao.warnings, w) {
					add(ResultChange{Key: "warning", New: w, Class: Neutral, Why: "new warning"})
				}
			}
		}
		verdicts = append(verdicts, v)
	}
	return verdicts, out
}

// objectiveKey is the figure the design maximizes, load rejection: the
// integrated error after a load step at the plant input on the nominal
// plant. It has no limit in the file, so it is judged against its old
// value.
const objectiveKey = "discrete.disturbance.iae"

// judgeObjective classes a change of the load-step IAE: up by more than
// tol of its old value is a regression (the loop rejects a gust or a CG
// offset worse), down by more is an improvement.
func judgeObjective(ch *ResultChange, tol float64) {
	o, ok1 := ch.Old.(float64)
	n, ok2 := ch.New.(float64)
	if !ok1 || !ok2 || !(o > 0) {
		return
	}
	switch r := (n - o) / o; {
	case r > tol:
		ch.Class, ch.Why = Regression, fmt.Sprintf("load rejection worse: the load step's integrated error up by %s", pctText(r))
	case r < -tol:
		ch.Class, ch.Why = Improvement, fmt.Sprintf("load rejection better: the load step's integrated error down by %s", pctText(-r))
	}
}

// judgeCheck classes the change of one check (see Comparison).
// A derived check's limit is not the file's but the design's own (the
// noise bound the search chose, where the design sits by construction):
// its value is judged against its old value instead.
func judgeCheck(name string, o, n map[string]CheckReport, derived bool, tol, floor float64) (ResultChange, bool) {
	co, oin := o[name]
	cn, nin := n[name]
	ch := ResultChange{Key: "checks." + name, Class: Neutral}
	if oin && co.Value != nil {
		ch.Old = *co.Value
	}
	if nin && cn.Value != nil {
		ch.New = *cn.Value
	}
	if nin {
		ch.Limit = cn.Limit
	}
	switch {
	case !oin:
		ch.Why = "check added"
		if !cn.OK {
			ch.Class, ch.Why = Regression, "check added, and it fails"
		}
		return ch, true
	case !nin:
		ch.Why = "check no longer applies"
		return ch, true
	case co.OK && !cn.OK:
		ch.Class, ch.Why = Regression, "check newly fails"
	case !co.OK && cn.OK:
		ch.Class, ch.Why = Improvement, "check newly passes"
	}
	if co.Value == nil || cn.Value == nil || co.Limit == nil || cn.Limit == nil {
		if ch.Class == Neutral && same(ch.Old, ch.New) {
			return ch, false
		}
		return ch, true
	}
	switch {
	case name == "stable" || name == "sampling" || name == "saturated_recovery" || strings.HasPrefix(name, "quantized_"):
		// Pass or fail only. The value of "stable" is a pole radius, which
		// sits near 1 for every loop with an integrator; a quantized
		// check repeats, on the nominal plant, a check judged above over
		// the envelope, and counting its slack again would count one
		// change twice; the saturated step's limit is the length of its
		// record, not a spec, so the distance to it means nothing.
	case derived:
		if ch.Class == Neutral && *co.Value > 0 {
			switch r := (*cn.Value - *co.Value) / *co.Value; {
			case r > tol:
				ch.Class, ch.Why = Regression, fmt.Sprintf("up by %s (the bound is the design's own, not the file's)", pctText(r))
			case r < -tol:
				ch.Class, ch.Why = Improvement, fmt.Sprintf("down by %s", pctText(-r))
			}
		}
	case name == "overflow":
		// The headroom, in bits: a bit lost halves the margin to overflow
		// whatever the tolerance.
		so, sn := *co.Value-*co.Limit, *cn.Value-*cn.Limit
		if ch.Class == Neutral {
			switch {
			case so-sn >= 1:
				ch.Class, ch.Why = Regression, fmt.Sprintf("headroom down by %s bits", synth.G4(so-sn))
			case sn < 1 && so >= 1:
				ch.Class, ch.Why = Regression, "headroom below one bit"
			case sn-so >= 1:
				ch.Class, ch.Why = Improvement, fmt.Sprintf("headroom up by %s bits", synth.G4(sn-so))
			}
		}
	default:
		so, sn := slack(name, *co.Value, *co.Limit), slack(name, *cn.Value, *cn.Limit)
		ch.OldSlack, ch.NewSlack = &so, &sn
		if ch.Class == Neutral {
			switch {
			case so-sn > tol:
				ch.Class, ch.Why = Regression, fmt.Sprintf("closer to its limit by %s of it", pctText(so-sn))
			case sn < floor && (so >= floor || so-sn > 0.01):
				ch.Class, ch.Why = Regression, fmt.Sprintf("within %s of its limit", pctText(floor))
			case sn-so > tol:
				ch.Class, ch.Why = Improvement, fmt.Sprintf("farther from its limit by %s of it", pctText(sn-so))
			}
		}
	}
	if ch.Class == Neutral && *co.Value == *cn.Value && *co.Limit == *cn.Limit {
		return ch, false
	}
	return ch, true
}

// pctText writes a fraction as a percentage, three significant digits
// (whole percent from 1000 %: no exponent in a reviewer's text).
func pctText(f float64) string {
	if math.Abs(f) >= 10 {
		return strconv.FormatFloat(100*f, 'f', 0, 64) + " %"
	}
	return strconv.FormatFloat(100*f, 'g', 3, 64) + " %"
}

// WriteText writes the comparison for a reader: the verdict of each axis
// first, then the changed inputs, then the regressions, the improvements
// and the other changes, with units and four significant digits; an
// array (the poles) is counted, not printed whole, and the plants of the
// envelope are summed up (the JSON form has them all).
func (c *Comparison) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	p := func(format string, a ...any) { fmt.Fprintf(bw, format+"\n", a...) }
	name := c.Airframe[1]
	if c.Airframe[0] != c.Airframe[1] {
		name = c.Airframe[0] + " → " + c.Airframe[1]
	}
	// The names come from the command line: quoted when they hold a
	// control or bidirectional character, so that they cannot drive the
	// terminal.
	p("compare %s → %s (airframe %s)", airframe.SafeText(c.Old), airframe.SafeText(c.New), name)
	p("  a regression: a check newly failing; a check's distance to its limit shrinking by more than %s of the limit, or to within %s of it;", pctText(c.Tolerance), pctText(c.Floor))
	p("  the load step's integrated error, or a noise gain held to the design's own bound, up by more than %s", pctText(c.Tolerance))
	p("")
	met := func(b *bool) string {
		switch {
		case b == nil:
			return "absent"
		case *b:
			return "met"
		}
		return "FAIL"
	}
	width := 0
	for _, v := range c.Verdict {
		width = max(width, len(v.Axis))
	}
	for _, v := range c.Verdict {
		p("  %-*s  %-6s → %-6s  %s, %s", width, v.Axis, met(v.MetBefore), met(v.MetNow), countText(v.Regressions, "regression"), countText(v.Improvements, "improvement"))
	}
	p("")
	if len(c.Inputs) == 0 {
		p("inputs: unchanged")
	} else {
		p("inputs changed (%d):", len(c.Inputs))
		kw := 0
		for _, ch := range c.Inputs {
			kw = max(kw, len(ch.Key))
		}
		for _, ch := range c.Inputs {
			p("  %-*s  %s → %s", kw, ch.Key, inputText(ch.Old), inputText(ch.New))
		}
	}
	if len(c.Filters) > 0 {
		p("")
		p("filter chain changed (%d):", len(c.Filters))
		for _, f := range c.Filters {
			p("  %s", filterChangeText(f))
		}
	}
	if len(c.Results) == 0 {
		p("")
		p("results: unchanged")
	}
	// The figures of a filter added or removed as a whole are told by the
	// filter chain's changes above; the text counts them.
	wholeOf := func(ch ResultChange) bool {
		for _, f := range c.Filters {
			if f.Axis != ch.Axis {
				continue
			}
			for _, k := range f.keys {
				if strings.HasPrefix(ch.Key, k) {
					return true
				}
			}
		}
		return false
	}
	for _, class := range []string{Regression, Improvement, Neutral} {
		var rows [][3]string
		plants, filters := 0, 0
		for _, ch := range c.Results {
			if ch.Class != class {
				continue
			}
			if strings.HasPrefix(ch.Key, "envelope.corners.") {
				plants++
				continue
			}
			if wholeOf(ch) {
				filters++
				continue
			}
			rows = append(rows, [3]string{ch.Axis, ch.Key, changeText(ch)})
		}
		if len(rows) == 0 && plants == 0 && filters == 0 {
			continue
		}
		title := map[string]string{Regression: "regressions", Improvement: "improvements", Neutral: "other changes"}[class]
		p("")
		p("%s (%d):", title, len(rows)+plants+filters)
		kw := 0
		for _, r := range rows {
			kw = max(kw, len(r[0])+1+len(r[1]))
		}
		for _, r := range rows {
			p("  %-*s  %s", kw, r[0]+" "+r[1], r[2])
		}
		if filters > 0 {
			p("  %d figures of the filters added or removed (see the filter chain's changes, and --json)", filters)
		}
		if plants > 0 {
			p("  %d figures of the envelope's plants (see --json)", plants)
		}
	}
	p("")
	p("%s", countText(c.Regressions, "regression"))
	return bw.Flush()
}

// filterChangeText writes a filter change: "roll filter 1 added: notch
// 150 Hz, -3 dB width 40 Hz; phase at the crossover −0.7504°", a change
// with the settings that differ and both sides.
func filterChangeText(f FilterChange) string {
	desc := func(s *string) string {
		if s == nil {
			return "(absent)"
		}
		return *s
	}
	deg := func(v *float64) string {
		if v == nil {
			return "(none)"
		}
		return synth.G4(*v) + "°"
	}
	head := fmt.Sprintf("%s filter %d %s", f.Axis, f.Filter, f.Change)
	switch f.Change {
	case FilterAdded:
		return fmt.Sprintf("%s: %s; phase at the crossover %s", head, desc(f.New), deg(f.NewPhaseDeg))
	case FilterRemoved:
		return fmt.Sprintf("%s: %s; phase at the crossover %s", head, desc(f.Old), deg(f.OldPhaseDeg))
	}
	return fmt.Sprintf("%s (%s): %s → %s; phase at the crossover %s → %s", head, strings.Join(f.Fields, ", "), desc(f.Old), desc(f.New), deg(f.OldPhaseDeg), deg(f.NewPhaseDeg))
}

// countText writes "no regressions", "1 regression", "3 regressions".
func countText(n int, noun string) string {
	switch n {
	case 0:
		return "no " + noun + "s"
	case 1:
		return "1 " + noun
	}
	return strconv.Itoa(n) + " " + noun + "s"
}

// inputText writes a TOML value of an input change.
func inputText(v any) string {
	if v == nil {
		return "(absent)"
	}
	return tomlText(v)
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

// changeText writes one result change: old → new in the figure's unit,
// the limit and slacks of a check, and why.
func changeText(ch ResultChange) string {
	unit := func(v any) string { return valueText(ch.Key, v) }
	s := unit(ch.Old) + " → " + unit(ch.New)
	if _, isArr := ch.New.([]any); isArr {
		s = fmt.Sprintf("(%s)", arrayText(ch.Old, ch.New))
	} else if _, isArr := ch.Old.([]any); isArr {
		s = fmt.Sprintf("(%s)", arrayText(ch.Old, ch.New))
	}
	if ch.Limit != nil {
		s += "  (limit " + unit(*ch.Limit)
		if ch.OldSlack != nil && ch.NewSlack != nil {
			s += "; margin to it " + pctText(*ch.OldSlack) + " → " + pctText(*ch.NewSlack)
		}
		s += ")"
	}
	if ch.Why != "" {
		s += ": " + ch.Why
	}
	return s
}

// arrayText says how an array changed: "4 values → 5 values".
func arrayText(o, n any) string {
	count := func(v any) string {
		a, ok := v.([]any)
		if !ok {
			return "absent"
		}
		return countText(len(a), "value")
	}
	co, cn := count(o), count(n)
	if co == cn {
		return cn + ", changed"
	}
	return co + " → " + cn
}

// valueText writes a figure of the key's kind with its unit and four
// significant digits (a check's in the check's unit).
func valueText(key string, v any) string {
	x, ok := v.(float64)
	if !ok {
		if v == nil {
			return "(absent)"
		}
		return tomlText(v)
	}
	if name, isCheck := strings.CutPrefix(key, "checks."); isCheck {
		if name == "saturated_recovery" {
			// A time, like the load-step recovery (synth.CheckValue
			// predates this check).
			return synth.CheckValue("disturbance_recovery", x)
		}
		return synth.CheckValue(name, x)
	}
	leaf := key[strings.LastIndexByte(key, '.')+1:]
	g := synth.G4(x)
	switch {
	case strings.HasSuffix(leaf, "_deg"):
		return g + "°"
	case strings.HasSuffix(leaf, "_db"):
		return g + " dB"
	case strings.Contains(leaf, "time") || leaf == "delay_margin" || leaf == "derivative_tau" || leaf == "tracking_time":
		return g + " s"
	case leaf == "hz" || strings.HasSuffix(leaf, "_hz"):
		return g + " Hz"
	case leaf == "crossover" || leaf == "omega_n" || leaf == "prewarp_omega":
		return g + " rad/s"
	case leaf == "overshoot" || strings.HasSuffix(leaf, "_error") || leaf == "overshoot_no_antiwindup":
		return synth.G4(100*x) + " %"
	case leaf == "hold_rate":
		return g + " rad/s"
	case leaf == "headroom_bits" || leaf == "input_resolution_bits" || leaf == "output_resolution_bits":
		return g + " bits"
	}
	return g
}
