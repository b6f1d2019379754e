package review

import (
	"bytes"
	"strings"
	"testing"
)

// compareDemo is a one-axis airframe (demo data) whose edits below each
// change one thing.
const compareDemo = `airframe = "compare_demo"
description = "demo data: compare tests"
loop_hz = 1000.0
compute_delay = 1

[numeric]
type = "float32"

[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002

[axes.roll.sensor]
lowpass_hz = 100.0

[axes.roll.spec]
settling_time = 0.15
overshoot = 0.10
min_phase_margin = 40.0

[axes.roll.control]
form = "pid"
output_limit = [-0.5, 0.5]
`

func compareTexts(t *testing.T, oldText, newText string) *Comparison {
	t.Helper()
	c, err := Compare("old.toml", designText(t, "old.toml", oldText), "new.toml", designText(t, "new.toml", newText))
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func findResult(c *Comparison, axis, key string) *ResultChange {
	for i, r := range c.Results {
		if r.Axis == axis && r.Key == key {
			return &c.Results[i]
		}
	}
	return nil
}

// The same file compares equal: nothing listed, no regression.
func TestCompareSame(t *testing.T) {
	c := compareTexts(t, compareDemo, compareDemo)
	if len(c.Inputs) != 0 || len(c.Results) != 0 || c.Regressions != 0 {
		t.Errorf("identical files: %d inputs, %d results, %d regressions changed", len(c.Inputs), len(c.Results), c.Regressions)
	}
	var b bytes.Buffer
	if err := c.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"inputs: unchanged", "results: unchanged", "no regressions"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("text lacks %q:\n%s", want, b.String())
		}
	}
}

// A longer transport delay costs phase at the crossover (−ω·Δτ, the delay
// margin's definition; Franklin, Powell & Emami-Naeini, from memory): the
// phase margin drops and compare flags it. The reverse change is not a
// regression of the margin.
func TestCompareFlagsMarginDrop(t *testing.T) {
	longer := strings.Replace(compareDemo, "delay = 0.002", "delay = 0.004", 1)
	c := compareTexts(t, compareDemo, longer)
	if len(c.Inputs) != 1 || c.Inputs[0].Key != "axes.roll.plant.delay" || *c.Inputs[0].Old != "0.002" || *c.Inputs[0].New != "0.004" {
		t.Fatalf("inputs: %+v", c.Inputs)
	}
	pm := findResult(c, "roll", "discrete.phase_margin_deg")
	if pm == nil {
		t.Fatalf("the discrete phase margin did not change: %+v", c.Results)
	}
	if !pm.Regression || !strings.Contains(pm.Why, "phase margin down") {
		t.Errorf("phase margin %s → %s not flagged: %+v", *pm.Old, *pm.New, pm)
	}
	if c.Regressions == 0 {
		t.Error("no regression counted")
	}
	back := compareTexts(t, longer, compareDemo)
	if r := findResult(back, "roll", "discrete.phase_margin_deg"); r == nil || r.Regression {
		t.Errorf("the margin going up is flagged: %+v", r)
	}
	var b bytes.Buffer
	if err := c.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "axes.roll.plant.delay  0.002 → 0.004") || !strings.Contains(b.String(), "REGRESSION: phase margin down") {
		t.Errorf("text:\n%s", b.String())
	}
}

// A spec the design can no longer meet makes a check newly fail: which
// one is the search's choice (it reports the closest design), so every
// check that was ok and is not must be flagged under its own name, and
// there must be one.
func TestCompareFlagsNewlyFailingCheck(t *testing.T) {
	strict := strings.Replace(compareDemo, "min_phase_margin = 40.0", "min_phase_margin = 89.0", 1)
	c := compareTexts(t, compareDemo, strict)
	failed := 0
	for _, r := range c.Results {
		name, ok := strings.CutSuffix(strings.TrimPrefix(r.Key, "checks."), ".ok")
		if !strings.HasPrefix(r.Key, "checks.") || !ok || *r.Old != "true" {
			continue
		}
		failed++
		if !r.Regression || !strings.Contains(r.Why, "check "+name+" newly fails") {
			t.Errorf("check %s: %+v, want a regression naming it", name, r)
		}
	}
	if failed == 0 {
		t.Fatalf("no check newly fails: %+v", c.Results)
	}
	if ok := findResult(c, "roll", "ok"); ok == nil || !ok.Regression {
		t.Errorf("the axis's ok flag is not flagged: %+v", ok)
	}
}

// Keys are full paths, sorted; a key present on one side only is listed
// with the other side absent; arrays are compared whole.
func TestCompareInputs(t *testing.T) {
	edited := strings.Replace(compareDemo, "output_limit = [-0.5, 0.5]", "output_limit = [-0.4, 0.5]\nsetpoint_weight = 0.7", 1)
	edited = strings.Replace(edited, "[axes.roll.sensor]\nlowpass_hz = 100.0\n", "", 1)
	c := compareTexts(t, compareDemo, edited)
	var keys []string
	for _, in := range c.Inputs {
		keys = append(keys, in.Key)
	}
	want := []string{"axes.roll.control.output_limit", "axes.roll.control.setpoint_weight", "axes.roll.sensor.lowpass_hz"}
	if strings.Join(keys, " ") != strings.Join(want, " ") {
		t.Fatalf("keys %q, want %q", keys, want)
	}
	if *c.Inputs[0].Old != "[-0.5, 0.5]" || *c.Inputs[0].New != "[-0.4, 0.5]" {
		t.Errorf("array change %+v", c.Inputs[0])
	}
	if c.Inputs[1].Old != nil || *c.Inputs[1].New != "0.7" {
		t.Errorf("added key %+v", c.Inputs[1])
	}
	if *c.Inputs[2].Old != "100" || c.Inputs[2].New != nil {
		t.Errorf("removed key %+v", c.Inputs[2])
	}
}

// The classification of single changes.
func TestRegressionRules(t *testing.T) {
	s := func(v string) *string { return &v }
	for _, c := range []struct {
		key      string
		old, new *string
		want     bool
	}{
		{"discrete.phase_margin_deg", s("45"), s("44"), true},
		{"discrete.phase_margin_deg", s("45"), s("44.99"), false}, // within 0.1 %
		{"discrete.phase_margin_deg", s("45"), s("50"), false},
		{"continuous.gain_margin_db", s("8"), nil, true}, // no longer defined
		{"discrete.overshoot", s("0.05"), s("0.06"), true},
		{"discrete.overshoot", s("0.06"), s("0.05"), false},
		{"discrete.settling_time", s("0.1"), s("0.12"), true},
		{"discrete.saturated.recovery_time", s("0.2"), s("0.3"), true},
		{"discrete.stability_margin", s("0.02"), s("0.01"), true},
		{"numeric.ranges.integrator S.headroom_bits", s("3"), s("1.5"), true},
		{"numeric.ranges.integrator S.headroom_bits", s("1.5"), s("3"), false},
		{"checks.overshoot.ok", s("true"), s("false"), true},
		{"checks.overshoot.ok", s("false"), s("true"), false},
		{"checks.overshoot.value", s("0.05"), s("0.07"), false}, // judged by ok
		{"ok", s("true"), s("false"), true},
		{"error", nil, s(`"infeasible"`), true},
		{"continuous.kp", s("0.02"), s("0.03"), false},
		{"textbook.overshoot", s("0.1"), s("0.3"), false},
		{"discrete.saturated.settled", s("true"), s("false"), true},
		{"discrete.max_sensitivity", s("1.5"), s("1.6"), true},
		{"discrete.max_sensitivity", s("1.6"), s("1.5"), false},
		{"discrete.max_complementary", s("1.2"), s("1.3"), true},
		{"discrete.noise_gain", s("0.5"), s("0.6"), true},
		{"discrete.hold_rate", s("13"), s("12"), true},
		{"discrete.hold_rate", s("13"), nil, false}, // unbounded now
		{"discrete.disturbance.peak", s("0.9"), s("1"), true},
		{"discrete.disturbance.iae", s("0.06"), s("0.05"), false},
		{"discrete.disturbance.recovery_time", s("0.18"), s("0.2"), true},
		{"discrete.disturbance.recovery_time", s("0.18"), nil, true}, // never recovers now
		{"discrete.disturbance.step", s("0.05"), s("0.1"), false},    // an input
		{"envelope.gain_scale", s("[0.9,1.1]"), s("[0.8,1.2]"), false},
		{"envelope.corners.(gain ×0.9).phase_margin_deg", s("41"), s("39"), false}, // judged by the worst
		{"envelope.worst.phase_margin_deg", s("41"), s("39"), true},
		{"envelope.worst.overshoot", s("0.09"), s("0.08"), false},
		{"envelope.worst.max_sensitivity", s("1.5"), s("1.6"), true},
		{"checks.overshoot.worst.gain_scale", s("0.9"), s("1.1"), false},
	} {
		if got, why := regression(c.key, c.old, c.new); got != c.want {
			t.Errorf("%s %v → %v: regression %v (%s), want %v", c.key, deref(c.old), deref(c.new), got, why, c.want)
		}
	}
}

func deref(s *string) string {
	if s == nil {
		return "(absent)"
	}
	return *s
}

// The reasons name what moved: the load step's recovery is not the
// saturated step's, and the envelope's worst is not the nominal plant's.
func TestRegressionReasons(t *testing.T) {
	s := func(v string) *string { return &v }
	if _, why := regression("discrete.disturbance.recovery_time", s("0.18"), s("0.2")); why != "load-disturbance recovery slower" {
		t.Errorf("disturbance recovery: %q", why)
	}
	if _, why := regression("discrete.saturated.recovery_time", s("0.18"), s("0.2")); why != "recovery after saturation slower" {
		t.Errorf("saturated recovery: %q", why)
	}
	if _, why := regression("envelope.worst.max_sensitivity", s("1.5"), s("1.6")); why != "sensitivity peak Ms up (worst over the envelope)" {
		t.Errorf("worst over the envelope: %q", why)
	}
}

// The envelope's plants are compared plant by plant, keyed by the plant,
// the nominal one left to the discrete section, and by the worst of each
// figure over the plants; a check's worst plant is listed under the
// check.
func TestCompareEnvelopeKeys(t *testing.T) {
	r, err := flatResults(designText(t, "demo.toml", compareDemo))
	if err != nil {
		t.Fatal(err)
	}
	vals := r["roll"].vals
	for _, k := range []string{"envelope.corners.(gain ×0.9).overshoot", "envelope.corners.(gain ×1.1).max_sensitivity",
		"envelope.worst.overshoot", "envelope.worst.phase_margin_deg", "envelope.worst.max_sensitivity",
		"envelope.corners.(gain ×0.95).stable", "envelope.gain_scale", "checks.overshoot.worst.gain_scale",
		"discrete.max_sensitivity", "discrete.disturbance.peak"} {
		if _, ok := vals[k]; !ok {
			t.Errorf("key %q missing", k)
		}
	}
	// The worst Ms is the largest over the plants (the check's own
	// value, which is the worst by definition).
	a := designText(t, "demo.toml", compareDemo)
	for _, c := range a.Axes[0].Design.Checks {
		if c.Name == "max_sensitivity" && vals["envelope.worst.max_sensitivity"] != num10(c.Value) {
			t.Errorf("envelope.worst.max_sensitivity = %s, the check says %s", vals["envelope.worst.max_sensitivity"], num10(c.Value))
		}
	}
	for k := range vals {
		if k == "envelope.corners" || strings.Contains(k, "nominal") || strings.HasSuffix(k, ".gain_scale") && strings.HasPrefix(k, "envelope.corners.") {
			t.Errorf("unexpected key %q", k)
		}
	}
	// A change of the envelope changes the corners: the new plants are
	// listed as added, with no regression for what did not exist before.
	wider := strings.Replace(compareDemo, "[axes.roll.control]", "[axes.roll.envelope]\ngain_scale = [0.8, 1.2]\n\n[axes.roll.control]", 1)
	c := compareTexts(t, compareDemo, wider)
	if ch := findResult(c, "roll", "envelope.corners.(gain ×0.8).overshoot"); ch == nil || ch.Old != nil || ch.Regression {
		t.Errorf("new plant: %+v", ch)
	}
	// The reverse: the plant at gain ×0.8 goes, which is no regression.
	back := compareTexts(t, wider, compareDemo)
	if ch := findResult(back, "roll", "envelope.corners.(gain ×0.8).phase_margin_deg"); ch == nil || ch.New != nil || ch.Regression {
		t.Errorf("plant removed: %+v", ch)
	}
}
