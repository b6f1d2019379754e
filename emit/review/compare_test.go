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

// A spec the design can no longer meet makes a check newly fail.
func TestCompareFlagsNewlyFailingCheck(t *testing.T) {
	strict := strings.Replace(compareDemo, "min_phase_margin = 40.0", "min_phase_margin = 89.0", 1)
	c := compareTexts(t, compareDemo, strict)
	r := findResult(c, "roll", "checks.phase_margin.ok")
	if r == nil || !r.Regression || !strings.Contains(r.Why, "phase_margin newly fails") {
		t.Fatalf("check not flagged: %+v\n%+v", r, c.Results)
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
