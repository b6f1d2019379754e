package review

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"
)

// compareBase is the base airframe of the revision pairs (demo data,
// testdata/compare/base.toml); every pair edits one thing.
func compareBase(t *testing.T) string {
	t.Helper()
	data, err := os.ReadFile(filepath.Join("testdata", "compare", "base.toml"))
	if err != nil {
		t.Fatal(err)
	}
	return string(data)
}

// edit replaces old by new in s, once, and fails when old is not there
// (an edit that silently does nothing would compare a file with itself).
func edit(t *testing.T, s, old, new string) string {
	t.Helper()
	if !strings.Contains(s, old) {
		t.Fatalf("edit: %q not in the airframe", old)
	}
	return strings.Replace(s, old, new, 1)
}

func compareTexts(t *testing.T, oldText, newText string) *Comparison {
	t.Helper()
	c, err := Compare("old.toml", sharedText(t, "old.toml", oldText), "new.toml", sharedText(t, "new.toml", newText), 0, 0)
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

func keysOf(c *Comparison, class string) []string {
	var ks []string
	for _, r := range c.Results {
		if r.Class == class {
			ks = append(ks, r.Key)
		}
	}
	return ks
}

func textOf(t *testing.T, c *Comparison) string {
	t.Helper()
	var b bytes.Buffer
	if err := c.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// The same file compares equal: nothing listed, no regression.
func TestCompareSame(t *testing.T) {
	base := compareBase(t)
	c := compareTexts(t, base, base)
	if len(c.Inputs) != 0 || len(c.Results) != 0 || c.Regressions != 0 || c.Improvements != 0 {
		t.Errorf("identical files: %d inputs, %d results, %d regressions, %d improvements", len(c.Inputs), len(c.Results), c.Regressions, c.Improvements)
	}
	out := textOf(t, c)
	for _, want := range []string{"roll  met    → met     no regressions, no improvements", "inputs: unchanged", "results: unchanged", "\nno regressions\n"} {
		if !strings.Contains(out, want) {
			t.Errorf("text lacks %q:\n%s", want, out)
		}
	}
}

// The revision pairs, each with its expected verdict; the whole text and
// JSON are golden files (testdata/compare/NAME.txt, .json; -update
// rewrites them). The verdicts follow from the rules of Comparison and
// the figures of the two designs, which the design tests hold to their
// references; what each pair must show is written beside it.
func TestComparePairs(t *testing.T) {
	base := compareBase(t)
	noLowpass := edit(t, base, "[axes.roll.sensor]\nlowpass_hz = 100.0\n\n", "")
	for _, tc := range []struct {
		name     string
		old, new string
		before   bool // the axis met its spec before
		now      bool
		// regressed and improved are keys that must be judged so;
		// clean: no regression at all.
		regressed, improved []string
		clean               bool
	}{{
		// A retune that gets nothing worse: the gyro lowpass raised from
		// 50 to 100 Hz costs less phase at the crossover, so the same
		// checks hold with a larger Ki (0.3361 → 0.3671) and a lower
		// noise gain (0.3428 → 0.326): the load step's integrated error
		// falls by 7.1 %, past the 5 % that makes an improvement. (From
		// 60 Hz it fell by 4.5 % and the noise gain by 4.0 %, neither
		// an improvement, once the last stages ran from two starts.)
		name: "gyro_lowpass_raised", old: edit(t, base, "lowpass_hz = 100.0", "lowpass_hz = 50.0"), new: base,
		before: true, now: true, clean: true, improved: []string{"discrete.disturbance.iae"},
	}, {
		// A retune that regresses a margin: with the settling limit
		// relaxed from 0.15 to 0.2 s the design spends the slack on a
		// lower noise gain, and the overshoot comes closer to its limit
		// by more than 5 % of it; load rejection gets worse.
		name: "settling_relaxed", old: base, new: edit(t, base, "settling_time = 0.15", "settling_time = 0.2"),
		before: true, now: true, regressed: []string{"checks.overshoot", objectiveKey}, improved: []string{"checks.noise_gain"},
	}, {
		// A check newly failing: with a phase margin of 89° the closest
		// design cannot settle in time.
		name: "phase_margin_unreachable", old: base, new: edit(t, base, "min_phase_margin = 40.0", "min_phase_margin = 89.0"),
		before: true, now: false, regressed: []string{"checks.settling_time"},
	}, {
		// The envelope widened from ±10 % to ±30 % plant gain: every
		// check still holds, with more margin, but only with a far smaller
		// integral gain: load rejection is the regression.
		name: "envelope_widened", old: base, new: edit(t, base, "[axes.roll.control]", "[axes.roll.envelope]\ngain_scale = [0.7, 1.3]\n\n[axes.roll.control]"),
		before: true, now: true, regressed: []string{objectiveKey},
	}, {
		// A filter added: a 100 Hz gyro lowpass where there was none
		// lowers the noise gain and costs load rejection (its phase lag
		// at the crossover leaves less room for the integral gain).
		name: "gyro_lowpass_added", old: noLowpass, new: base,
		before: true, now: true, regressed: []string{objectiveKey}, improved: []string{"checks.noise_gain"},
	}, {
		// A notch added to the filter chain at 150 Hz, well above the
		// crossover (42 rad/s, 6.7 Hz): its phase lag there, about
		// 2·ζ·(f/f0)/(1 − (f/f0)²) rad with ζ = width/(2·f0) (the notch's
		// low-frequency phase, from its transfer function), 0.7°, is
		// taken up by the redesign: every check holds, the phase margin
		// where it was (40.21° → 40.15°, within 5 % of its 40° limit
		// before and after), and nothing regresses. Its keys are compared
		// one by one, under the index the file's messages use
		// (axes.roll.filter[0].hz).
		name: "notch_added", old: base, new: base + "\n[[axes.roll.filter]]\nkind = \"notch\"\nat = \"feedback\"\nhz = 150.0\nwidth_hz = 40.0\n",
		before: true, now: true, clean: true,
	}, {
		// The form changed from a PI, which cannot meet the settling
		// limit over the envelope, to a PID, which can.
		name: "form_pi_to_pid", old: edit(t, base, `form = "pid"`, `form = "pi"`), new: base,
		before: false, now: true, improved: []string{"checks.settling_time"},
	}} {
		t.Run(tc.name, func(t *testing.T) {
			c, err := Compare(tc.name+"_old.toml", sharedText(t, "old.toml", tc.old), tc.name+"_new.toml", sharedText(t, "new.toml", tc.new), 0, 0)
			if err != nil {
				t.Fatal(err)
			}
			if len(c.Verdict) != 1 || *c.Verdict[0].MetBefore != tc.before || *c.Verdict[0].MetNow != tc.now {
				t.Errorf("verdict %+v, want met %v → %v", c.Verdict, tc.before, tc.now)
			}
			reg, imp := keysOf(c, Regression), keysOf(c, Improvement)
			for _, k := range tc.regressed {
				if !slices.Contains(reg, k) {
					t.Errorf("%s is not a regression; the regressions: %q", k, reg)
				}
			}
			for _, k := range tc.improved {
				if !slices.Contains(imp, k) {
					t.Errorf("%s is not an improvement; the improvements: %q", k, imp)
				}
			}
			if tc.clean && len(reg) > 0 {
				t.Errorf("regressions %q, want none", reg)
			}
			if c.Regressions != len(reg) || c.Improvements != len(imp) {
				t.Errorf("counted %d regressions and %d improvements, listed %d and %d", c.Regressions, c.Improvements, len(reg), len(imp))
			}
			out := textOf(t, c)
			js, err := json.MarshalIndent(c, "", "  ")
			if err != nil {
				t.Fatal(err)
			}
			checkGolden(t, filepath.Join("testdata", "compare", tc.name+".txt"), []byte(out))
			checkGolden(t, filepath.Join("testdata", "compare", tc.name+".json"), append(js, '\n'))
		})
	}
}

// checkGolden compares got with the file, or rewrites it with -update.
func checkGolden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run with -update to create it)", err)
	}
	if diff := cmp.Diff(string(want), string(got)); diff != "" {
		t.Errorf("%s differs (-want +got):\n%s", path, diff)
	}
}

// The rules of a regression, one check at a time. The slacks are worked
// by hand from the definition (Comparison): slack = (limit − value)/limit
// for an upper limit, (value − limit)/limit for a lower one.
func TestRegressionRules(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	ck := func(name string, value, limit float64, ok bool) map[string]CheckReport {
		return map[string]CheckReport{name: {Name: name, Value: f(value), Limit: f(limit), OK: ok}}
	}
	for _, tc := range []struct {
		what       string
		name       string
		o, n       map[string]CheckReport
		derived    bool
		tol, floor float64
		want       string
	}{
		// The audit's case: 1.95 % → 1.99 % against 10 % moves the slack
		// from 0.805 to 0.801, 0.4 % of the limit.
		{"overshoot within tolerance", "overshoot", ck("overshoot", 0.0195, 0.10, true), ck("overshoot", 0.0199, 0.10, true), false, 0.05, 0.05, Neutral},
		// The audit's other case: hold rate 48 → 22 rad/s against 20:
		// slack 1.4 → 0.1.
		{"hold rate fell", "hold_rate", ck("hold_rate", 48, 20, true), ck("hold_rate", 22, 20, true), false, 0.05, 0.05, Regression},
		{"hold rate rose", "hold_rate", ck("hold_rate", 22, 20, true), ck("hold_rate", 48, 20, true), false, 0.05, 0.05, Improvement},
		// 50° → 44° against 40°: slack 0.25 → 0.10.
		{"phase margin down", "phase_margin", ck("phase_margin", 50, 40, true), ck("phase_margin", 44, 40, true), false, 0.05, 0.05, Regression},
		{"phase margin down, wider tolerance", "phase_margin", ck("phase_margin", 50, 40, true), ck("phase_margin", 44, 40, true), false, 0.2, 0.05, Neutral},
		// 43° → 41.6°: slack 0.075 → 0.04, into the floor.
		{"into the floor", "phase_margin", ck("phase_margin", 43, 40, true), ck("phase_margin", 41.6, 40, true), false, 0.05, 0.05, Regression},
		// Within the floor already, 0.284 % → 0.351 %: not closer.
		{"within the floor, not closer", "settling_time", ck("settling_time", 0.14957, 0.15, true), ck("settling_time", 0.14947, 0.15, true), false, 0.05, 0.05, Neutral},
		// Within the floor, 3 % → 1 %: closer by 2 % of the limit.
		{"within the floor, closer", "settling_time", ck("settling_time", 0.1455, 0.15, true), ck("settling_time", 0.1485, 0.15, true), false, 0.05, 0.05, Regression},
		{"newly fails", "settling_time", ck("settling_time", 0.14, 0.15, true), ck("settling_time", 0.151, 0.15, false), false, 0.05, 0.05, Regression},
		{"newly passes", "settling_time", ck("settling_time", 0.151, 0.15, false), ck("settling_time", 0.14, 0.15, true), false, 0.05, 0.05, Improvement},
		// Ms 1.5 → 1.6 against 1.7: slack 0.118 → 0.059.
		{"sensitivity peak up", "max_sensitivity", ck("max_sensitivity", 1.5, 1.7, true), ck("max_sensitivity", 1.6, 1.7, true), false, 0.05, 0.05, Regression},
		// Disturbance recovery 0.18 → 0.2 s against 0.25: 0.28 → 0.2.
		{"recovery slower", "disturbance_recovery", ck("disturbance_recovery", 0.18, 0.25, true), ck("disturbance_recovery", 0.2, 0.25, true), false, 0.05, 0.05, Regression},
		// The pole radius of "stable" is pass or fail only.
		{"stable, radius moves", "stable", ck("stable", 0.98, 1, true), ck("stable", 0.998, 1, true), false, 0.05, 0.05, Neutral},
		{"stable, now unstable", "stable", ck("stable", 0.98, 1, true), ck("stable", 1.01, 1, false), false, 0.05, 0.05, Regression},
		// The saturated step's recovery is pass or fail only: its limit
		// is the record's length, not a spec.
		{"saturated step slower, recovered", "saturated_recovery", ck("saturated_recovery", 0.2, 4.9, true), ck("saturated_recovery", 0.9, 4.9, true), false, 0.05, 0.05, Neutral},
		{"saturated step no longer recovers", "saturated_recovery", ck("saturated_recovery", 0.2, 4.9, true), ck("saturated_recovery", math.Inf(1), 4.9, false), false, 0.05, 0.05, Regression},
		{"quantized check, slack only", "quantized_overshoot", ck("quantized_overshoot", 0.0002, 0.10, true), ck("quantized_overshoot", 0.015, 0.10, true), false, 0.05, 0.05, Neutral},
		{"quantized check, newly fails", "quantized_overshoot", ck("quantized_overshoot", 0.05, 0.10, true), ck("quantized_overshoot", 0.11, 0.10, false), false, 0.05, 0.05, Regression},
		// The headroom in bits: a bit lost, half a bit, below one.
		{"headroom down a bit", "overflow", ck("overflow", 3, 0, true), ck("overflow", 1.9, 0, true), false, 0.05, 0.05, Regression},
		{"headroom down half a bit", "overflow", ck("overflow", 3, 0, true), ck("overflow", 2.5, 0, true), false, 0.05, 0.05, Neutral},
		{"headroom below a bit", "overflow", ck("overflow", 1.2, 0, true), ck("overflow", 0.8, 0, true), false, 0.05, 0.05, Regression},
		{"headroom up", "overflow", ck("overflow", 1, 0, true), ck("overflow", 2.5, 0, true), false, 0.05, 0.05, Improvement},
		// A noise gain held to the design's own bound, judged against its
		// old value: 0.30 → 0.33 is up 10 %, 0.30 → 0.31 up 3.3 %.
		{"derived noise up", "noise_gain", ck("noise_gain", 0.30, 0.30, true), ck("noise_gain", 0.33, 0.33, true), true, 0.05, 0.05, Regression},
		{"derived noise up a little", "noise_gain", ck("noise_gain", 0.30, 0.30, true), ck("noise_gain", 0.31, 0.31, true), true, 0.05, 0.05, Neutral},
		{"derived noise down", "noise_gain", ck("noise_gain", 0.30, 0.30, true), ck("noise_gain", 0.20, 0.20, true), true, 0.05, 0.05, Improvement},
		// The file's own noise limit, judged like any limit: 0.2 → 0.3
		// against 0.4, slack 0.5 → 0.25.
		{"file's noise limit", "noise_gain", ck("noise_gain", 0.2, 0.4, true), ck("noise_gain", 0.3, 0.4, true), false, 0.05, 0.05, Regression},
		{"check added, failing", "overshoot", map[string]CheckReport{}, ck("overshoot", 0.2, 0.1, false), false, 0.05, 0.05, Regression},
		{"check added, passing", "overshoot", map[string]CheckReport{}, ck("overshoot", 0.02, 0.1, true), false, 0.05, 0.05, Neutral},
		{"check gone", "overshoot", ck("overshoot", 0.02, 0.1, true), map[string]CheckReport{}, false, 0.05, 0.05, Neutral},
	} {
		ch, changed := judgeCheck(tc.name, tc.o, tc.n, tc.derived, tc.tol, tc.floor)
		if !changed {
			t.Errorf("%s: not listed as a change", tc.what)
			continue
		}
		if ch.Class != tc.want {
			t.Errorf("%s: %s (%s), want %s", tc.what, ch.Class, ch.Why, tc.want)
		}
	}
	// An unchanged check is not listed.
	same := ck("overshoot", 0.02, 0.1, true)
	if ch, changed := judgeCheck("overshoot", same, same, false, 0.05, 0.05); changed {
		t.Errorf("unchanged check listed: %+v", ch)
	}
}

// The design's objective: the load step's IAE judged against its old
// value.
func TestObjectiveRule(t *testing.T) {
	for _, tc := range []struct {
		o, n any
		want string
	}{
		{0.147, 0.232, Regression}, // up 58 %
		{0.147, 0.150, Neutral},    // up 2 %
		{0.232, 0.147, Improvement},
		{0.147, nil, Neutral}, // absent on one side: listed, not judged
	} {
		ch := ResultChange{Key: objectiveKey, Old: tc.o, New: tc.n, Class: Neutral}
		judgeObjective(&ch, 0.05)
		if ch.Class != tc.want {
			t.Errorf("IAE %v → %v: %s, want %s", tc.o, tc.n, ch.Class, tc.want)
		}
	}
}

// Keys are full paths, sorted; a key present on one side only is listed
// with the other side absent; arrays are compared whole and kept as
// arrays, numbers as numbers.
func TestCompareInputs(t *testing.T) {
	base := compareBase(t)
	edited := edit(t, base, "output_limit = [-0.5, 0.5]", "output_limit = [-0.4, 0.5]\nsetpoint_weight = 0.7")
	edited = edit(t, edited, "[axes.roll.sensor]\nlowpass_hz = 100.0\n", "")
	c := compareTexts(t, base, edited)
	var keys []string
	for _, in := range c.Inputs {
		keys = append(keys, in.Key)
	}
	want := []string{"axes.roll.control.output_limit", "axes.roll.control.setpoint_weight", "axes.roll.sensor.lowpass_hz"}
	if !slices.Equal(keys, want) {
		t.Fatalf("keys %q, want %q", keys, want)
	}
	js, err := json.Marshal(c.Inputs)
	if err != nil {
		t.Fatal(err)
	}
	wantJS := `[{"key":"axes.roll.control.output_limit","old":[-0.5,0.5],"new":[-0.4,0.5]},` +
		`{"key":"axes.roll.control.setpoint_weight","old":null,"new":0.7},` +
		`{"key":"axes.roll.sensor.lowpass_hz","old":100,"new":null}]`
	if string(js) != wantJS {
		t.Errorf("inputs as JSON:\n%s\nwant\n%s", js, wantJS)
	}
	out := textOf(t, c)
	for _, want := range []string{"axes.roll.control.output_limit     [-0.5, 0.5] → [-0.4, 0.5]", "axes.roll.control.setpoint_weight  (absent) → 0.7", "axes.roll.sensor.lowpass_hz        100 → (absent)"} {
		if !strings.Contains(out, want) {
			t.Errorf("text lacks %q:\n%s", want, out)
		}
	}
}

// The envelope's plants are keyed by the plant, the nominal one left to
// the discrete section; the checks are judged apart from the figures.
func TestCompareEnvelopeKeys(t *testing.T) {
	base := compareBase(t)
	r, err := flatResults(sharedText(t, "demo.toml", base))
	if err != nil {
		t.Fatal(err)
	}
	vals := r["roll"].vals
	for _, k := range []string{"envelope.corners.(gain ×0.9).overshoot", "envelope.corners.(gain ×1.1).max_sensitivity",
		"envelope.corners.(gain ×0.95).stable", "envelope.gain_scale", "discrete.max_sensitivity", objectiveKey} {
		if _, ok := vals[k]; !ok {
			t.Errorf("key %q missing", k)
		}
	}
	for k := range vals {
		if strings.Contains(k, nominalKey) || strings.HasPrefix(k, "checks.") || strings.HasPrefix(k, "envelope.corners.") && strings.HasSuffix(k, ".gain_scale") {
			t.Errorf("unexpected key %q", k)
		}
	}
	if _, ok := r["roll"].checks["max_sensitivity"]; !ok {
		t.Errorf("checks: %v", r["roll"].checks)
	}
	// The plants of a widened envelope are new: listed, neither
	// regression nor improvement, and summed up in the text.
	wider := edit(t, base, "[axes.roll.control]", "[axes.roll.envelope]\ngain_scale = [0.8, 1.2]\n\n[axes.roll.control]")
	c := compareTexts(t, base, wider)
	if ch := findResult(c, "roll", "envelope.corners.(gain ×0.8).overshoot"); ch == nil || ch.Old != nil || ch.Class != Neutral {
		t.Errorf("new plant: %+v", ch)
	}
	if out := textOf(t, c); !strings.Contains(out, "figures of the envelope's plants (see --json)") || strings.Contains(out, "envelope.corners.") {
		t.Errorf("the plants are not summed up:\n%s", out)
	}
}

// Filter changes are listed place by place, with the settings the design
// ran and each filter's phase at the crossover (the JSON report's, which
// TestFilterReportAgainstSciPy holds to SciPy): a notch added, the same
// notch moved and a lowpass added behind it, a lowpass's order changed,
// the notch removed; and the chain's figures are results keyed by place
// (filters[0].hz), not one opaque array.
func TestCompareFilters(t *testing.T) {
	base := compareBase(t)
	notch := func(hz string) string {
		return "\n[[axes.roll.filter]]\nkind = \"notch\"\nhz = " + hz + "\nwidth_hz = 40.0\n"
	}
	const lowpass = "\n[[axes.roll.filter]]\nkind = \"lowpass\"\nhz = 300.0\n"
	withNotch := base + notch("150.0")
	moved := base + notch("160.0") + lowpass
	firstOrder := base + notch("160.0") + strings.Replace(lowpass, "hz = 300.0", "hz = 300.0\norder = 1", 1)
	withDeriv := withNotch + "\n[[axes.roll.filter]]\nkind = \"lowpass\"\nat = \"derivative\"\nhz = 80.0\n"
	const dlp = "lowpass 80 Hz, order 2, damping 0.7071, on the derivative"
	phaseOf := func(text string, i int) *float64 {
		return jsonFilters(sharedText(t, "f.toml", text).Axes[0].Design)[i].PhaseAtCrossoverDeg
	}
	str := func(s string) *string { return &s }
	const n150, n160 = "notch 150 Hz, -3 dB width 40 Hz", "notch 160 Hz, -3 dB width 40 Hz"
	const lp2, lp1 = "lowpass 300 Hz, order 2, damping 0.7071", "lowpass 300 Hz, order 1"
	for _, tc := range []struct {
		name     string
		old, new string
		want     []FilterChange
		text     []string
	}{{
		name: "notch added", old: base, new: withNotch,
		want: []FilterChange{{Axis: "roll", Filter: 1, Change: FilterAdded, New: str(n150), NewPhaseDeg: phaseOf(withNotch, 0)}},
		text: []string{"filter chain changed (1):\n  roll filter 1 added: " + n150 + "; phase at the crossover "},
	}, {
		name: "notch moved, lowpass added", old: withNotch, new: moved,
		want: []FilterChange{
			{Axis: "roll", Filter: 1, Change: FilterChanged, Old: str(n150), New: str(n160), Fields: []string{"hz"}, OldPhaseDeg: phaseOf(withNotch, 0), NewPhaseDeg: phaseOf(moved, 0)},
			{Axis: "roll", Filter: 2, Change: FilterAdded, New: str(lp2), NewPhaseDeg: phaseOf(moved, 1)},
		},
		text: []string{"  roll filter 1 changed (hz): " + n150 + " → " + n160 + "; phase at the crossover ", "  roll filter 2 added: " + lp2 + ";"},
	}, {
		name: "lowpass order", old: moved, new: firstOrder,
		want: []FilterChange{{Axis: "roll", Filter: 2, Change: FilterChanged, Old: str(lp2), New: str(lp1), Fields: []string{"order", "damping"}, OldPhaseDeg: phaseOf(moved, 1), NewPhaseDeg: phaseOf(firstOrder, 1)}},
		text: []string{"  roll filter 2 changed (order, damping): " + lp2 + " → " + lp1 + ";"},
	}, {
		name: "notch removed", old: withNotch, new: base,
		want: []FilterChange{{Axis: "roll", Filter: 1, Change: FilterRemoved, Old: str(n150), OldPhaseDeg: phaseOf(withNotch, 0)}},
		text: []string{"  roll filter 1 removed: " + n150 + "; phase at the crossover "},
	}, {
		// A derivative filter is numbered after the feedback chain, as
		// in the JSON's filters list.
		name: "derivative lowpass added", old: withNotch, new: withDeriv,
		want: []FilterChange{{Axis: "roll", Filter: 2, Change: FilterAdded, New: str(dlp), NewPhaseDeg: phaseOf(withDeriv, 1)}},
		text: []string{"  roll filter 2 added: " + dlp + ";"},
	}, {
		// A feedback filter added ahead of a derivative one moves the
		// latter's place in the list, not its chain: one change.
		name: "feedback lowpass added before a derivative one", old: withDeriv, new: withNotch + lowpass + withDeriv[len(withNotch):],
		want: []FilterChange{{Axis: "roll", Filter: 2, Change: FilterAdded, New: str(lp2), NewPhaseDeg: phaseOf(withNotch+lowpass+withDeriv[len(withNotch):], 1)}},
		text: []string{"filter chain changed (1):\n  roll filter 2 added: " + lp2 + ";"},
	}, {
		name: "unchanged", old: moved, new: moved,
		want: []FilterChange{},
	}} {
		t.Run(tc.name, func(t *testing.T) {
			c := compareTexts(t, tc.old, tc.new)
			if diff := cmp.Diff(tc.want, c.Filters, cmpopts.IgnoreUnexported(FilterChange{})); diff != "" {
				t.Errorf("filter changes (-want +got):\n%s", diff)
			}
			out := textOf(t, c)
			for _, w := range tc.text {
				if !strings.Contains(out, w) {
					t.Errorf("text lacks %q:\n%s", w, out)
				}
			}
			if len(tc.want) == 0 && strings.Contains(out, "filter chain changed") {
				t.Errorf("no change, but the text lists one:\n%s", out)
			}
		})
	}
	// The figures of the chain are results by place; a moved notch moves
	// its centre and coefficients.
	c := compareTexts(t, withNotch, moved)
	if ch := findResult(c, "roll", "filters[0].hz"); ch == nil || ch.Old != 150.0 || ch.New != 160.0 || ch.Class != Neutral {
		t.Errorf("filters[0].hz: %+v", ch)
	}
	if ch := findResult(c, "roll", "filters[1].kind"); ch == nil || ch.Old != nil || ch.New != "lowpass" {
		t.Errorf("filters[1].kind: %+v", ch)
	}
	if ch := findResult(compareTexts(t, withNotch, withDeriv), "roll", "filters[1].at"); ch == nil || ch.Old != nil || ch.New != "derivative" {
		t.Errorf("filters[1].at with a derivative filter added: %+v", ch)
	}
	for _, k := range []string{"filters[0].b", "filters[0].phase_at_crossover_deg"} {
		if findResult(c, "roll", k) == nil {
			t.Errorf("%s not among the results", k)
		}
	}
	if findResult(c, "roll", "filters") != nil {
		t.Error("the chain is compared as one array")
	}
	// The text tells an added filter once, in the chain's changes: its
	// figures are counted among the other changes, not listed; a filter
	// changed in place keeps its figures listed.
	out := textOf(t, c)
	if strings.Contains(out, "filters[1].") || !strings.Contains(out, "figures of the filters added or removed") || !strings.Contains(out, "roll filters[0].hz") {
		t.Errorf("an added filter's figures are listed, or a changed one's are not:\n%s", out)
	}
	// In fixed point the section's coefficients and ranges too, numbered
	// within its own chain (F2_, "filter 2 "), the moved filter's kept.
	q15 := func(s string) string {
		return edit(t, s, `type = "float32"`, "type = \"q15\"\ninput_full_scale = 20.0\noutput_full_scale = 1.0")
	}
	cq := compareTexts(t, q15(withNotch), q15(moved))
	if len(cq.Filters) != 2 {
		t.Fatalf("q15: filter changes %+v", cq.Filters)
	}
	outq := textOf(t, cq)
	if strings.Contains(outq, "numeric.coefficients.F2_") || strings.Contains(outq, "numeric.ranges.filter 2 ") ||
		findResult(cq, "roll", "numeric.coefficients.F2_B0.value") == nil || !strings.Contains(outq, "numeric.coefficients.F1_") {
		t.Errorf("q15: the added section's figures are listed (or absent from the results), or the moved one's are not listed:\n%s", outq)
	}

	// A notch with hz = "auto" follows the mode it is placed on: the
	// demo gimbal's mount mode moved from |p| = 500 to 442.3 rad/s
	// changes no filter key of the file, but the notch the design runs
	// moves from 79.6 Hz (500/2π, the README's figure) to 70.4 Hz.
	gpath := "../../examples/gimbal.toml"
	data, err := os.ReadFile(gpath)
	if err != nil {
		t.Fatal(err)
	}
	g := edit(t, string(data), "[-25.0, 499.4]", "[-25.0, 441.6]")
	gc, err := Compare("gimbal.toml", sharedDesign(t, gpath), "moved.toml", sharedText(t, "moved.toml", g), 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, in := range gc.Inputs {
		if strings.Contains(in.Key, "filter") {
			t.Errorf("input %s changed", in.Key)
		}
	}
	if len(gc.Filters) != 1 || gc.Filters[0].Change != FilterChanged || !slices.Equal(gc.Filters[0].Fields, []string{"hz", "width_hz"}) ||
		!strings.HasPrefix(*gc.Filters[0].Old, "notch 79.6 Hz (auto)") || !strings.HasPrefix(*gc.Filters[0].New, "notch 70.4 Hz (auto)") {
		t.Errorf("the moved auto notch: %+v", gc.Filters)
	}
}
