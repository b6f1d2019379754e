package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

// runCLI runs the command in-process and returns its exit status, stdout
// and stderr.
func runCLI(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &out, &errb)
	if strings.Contains(errb.String(), "internal error") {
		t.Fatalf("locusmith %s: a panic was recovered (a bug):\n%s", strings.Join(args, " "), errb.String())
	}
	return code, out.String(), errb.String()
}

// examples returns the demo airframes, relative to the repository root.
func examples(t *testing.T) []string {
	t.Helper()
	paths, err := filepath.Glob("../../examples/*.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) < 3 {
		t.Fatalf("want at least 3 example airframes in examples/, found %d", len(paths))
	}
	return paths
}

// valid is a small airframe that designs and passes; malformed cases are
// edits of it, so that each case has exactly the one problem it names.
const valid = `airframe = "testcraft"
description = "demo data: test airframe"
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

// edit returns valid with old replaced by new (exactly once).
func edit(t *testing.T, old, new string) string {
	t.Helper()
	if strings.Count(valid, old) != 1 {
		t.Fatalf("edit: %q must occur exactly once in the valid airframe", old)
	}
	return strings.Replace(valid, old, new, 1)
}

func writeFile(t *testing.T, dir, name, content string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestValidBaseDesigns(t *testing.T) {
	p := writeFile(t, t.TempDir(), "ok.toml", valid)
	code, out, errs := runCLI(t, "design", p)
	if code != exitOK {
		t.Fatalf("design of the valid base airframe: exit %d, want 0\nstdout:\n%s\nstderr:\n%s", code, out, errs)
	}
}

// TestMalformedFiles: every malformed file is exit 2, and stderr names the
// file and the key (or, for a problem of the whole file, what is wrong).
func TestMalformedFiles(t *testing.T) {
	cases := []struct {
		name    string
		content string
		want    []string // substrings of stderr besides the file name
	}{
		{"unknown top key", edit(t, "compute_delay = 1\n", "compute_delay = 1\nloop_rate = 3\n"), []string{"loop_rate", "unknown key"}},
		{"unknown spec key", edit(t, "overshoot = 0.10\n", "overshoot = 0.10\nrise_time = 0.01\n"), []string{"axes.roll.spec.rise_time", "unknown key"}},
		{"wrong type loop_hz", edit(t, "loop_hz = 1000.0", `loop_hz = "fast"`), []string{"loop_hz", "number"}},
		{"wrong type refine", edit(t, `form = "pid"`, "form = \"pid\"\nrefine = \"yes\""), []string{"axes.roll.control.refine"}},
		{"missing airframe", edit(t, "airframe = \"testcraft\"\n", ""), []string{"airframe", "required"}},
		{"missing loop_hz", edit(t, "loop_hz = 1000.0\n", ""), []string{"loop_hz", "required"}},
		{"missing spec", edit(t, "[axes.roll.spec]\nsettling_time = 0.15\novershoot = 0.10\nmin_phase_margin = 40.0\n", ""), []string{"axes.roll.spec", "required"}},
		{"nan overshoot", edit(t, "overshoot = 0.10", "overshoot = nan"), []string{"axes.roll.spec.overshoot", "nan"}},
		{"inf settling", edit(t, "settling_time = 0.15", "settling_time = inf"), []string{"axes.roll.spec.settling_time", "inf"}},
		{"zero motor_tau", edit(t, "motor_tau = 0.03", "motor_tau = 0.0"), []string{"axes.roll.plant.motor_tau", "> 0"}},
		{"negative motor_tau", edit(t, "motor_tau = 0.03", "motor_tau = -0.03"), []string{"axes.roll.plant.motor_tau", "> 0"}},
		{"zero loop_hz", edit(t, "loop_hz = 1000.0", "loop_hz = 0.0"), []string{"loop_hz", "> 0"}},
		{"negative loop_hz", edit(t, "loop_hz = 1000.0", "loop_hz = -1000.0"), []string{"loop_hz", "> 0"}},
		{"overshoot above 1", edit(t, "overshoot = 0.10", "overshoot = 1.4"), []string{"axes.roll.spec.overshoot = 1.4", "(0, 1)"}},
		{"overshoot zero", edit(t, "overshoot = 0.10", "overshoot = 0.0"), []string{"axes.roll.spec.overshoot", "(0, 1)"}},
		{"zero settling", edit(t, "settling_time = 0.15", "settling_time = 0.0"), []string{"axes.roll.spec.settling_time", "> 0"}},
		{"negative settling", edit(t, "settling_time = 0.15", "settling_time = -0.15"), []string{"axes.roll.spec.settling_time", "> 0"}},
		{"path in airframe name", edit(t, `airframe = "testcraft"`, `airframe = "../../etc/x"`), []string{"airframe", "[a-z][a-z0-9_]"}},
		{"upper-case airframe name", edit(t, `airframe = "testcraft"`, `airframe = "TestCraft"`), []string{"airframe", "[a-z][a-z0-9_]"}},
		{"keyword airframe name", edit(t, `airframe = "testcraft"`, `airframe = "static"`), []string{"airframe", "keyword"}},
		{"bad axis name", strings.ReplaceAll(valid, "axes.roll.", "axes.Roll."), []string{"axes.Roll", "[a-z][a-z0-9_]"}},
		{"unknown form", edit(t, `form = "pid"`, `form = "pidf"`), []string{"axes.roll.control.form", "pidf"}},
		{"unknown numeric type", edit(t, `type = "float32"`, `type = "float16"`), []string{"numeric.type", "float16"}},
		{"unknown discretize", edit(t, `form = "pid"`, "form = \"pid\"\ndiscretize = \"matched\""), []string{"axes.roll.control.discretize", "matched"}},
		{"unknown antiwindup", edit(t, `form = "pid"`, "form = \"pid\"\nantiwindup = \"reset\""), []string{"axes.roll.control.antiwindup", "reset"}},
		{"both plant forms", edit(t, "motor_tau = 0.03\n", "motor_tau = 0.03\ngain = 5.0\npoles = [0.0]\n"), []string{"axes.roll.plant", "both"}},
		{"improper plant", edit(t, "effectiveness = 2400.0\nmotor_tau = 0.03\n", "gain = 5.0\npoles = [-1.0]\nzeros = [-2.0, -3.0]\n"), []string{"axes.roll.plant.zeros", "improper"}},
		{"pair of three", edit(t, "effectiveness = 2400.0\nmotor_tau = 0.03\n", "gain = 5.0\npoles = [0.0, [-1.0, 2.0, 3.0]]\n"), []string{"axes.roll.plant.poles[1]", "pair"}},
		{"pair with negative im", edit(t, "effectiveness = 2400.0\nmotor_tau = 0.03\n", "gain = 5.0\npoles = [0.0, [-1.0, -2.0]]\n"), []string{"axes.roll.plant.poles[1]", "im"}},
		{"inverted limits", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [0.5, -0.5]"), []string{"axes.roll.control.output_limit", "low < high"}},
		{"zero-width limits", edit(t, "output_limit = [-0.5, 0.5]", "output_limit = [0.0, 0.0]"), []string{"axes.roll.control.output_limit", "low < high"}},
		{"negative compute delay", edit(t, "compute_delay = 1", "compute_delay = -1"), []string{"compute_delay", "0..4"}},
		{"compute delay beyond 4", edit(t, "compute_delay = 1", "compute_delay = 5"), []string{"compute_delay", "0..4"}},
		{"negative tracking time", edit(t, `form = "pid"`, "form = \"pid\"\ntracking_time = -0.1"), []string{"axes.roll.control.tracking_time", "≥ 0"}},
		{"zero integrator limit", edit(t, `form = "pid"`, "form = \"pid\"\nintegrator_limit = 0.0"), []string{"axes.roll.control.integrator_limit", "> 0"}},
		{"zero derivative filter", edit(t, `form = "pid"`, "form = \"pid\"\nderivative_lowpass_hz = 0.0"), []string{"axes.roll.control.derivative_lowpass_hz", "> 0"}},
		{"derivative filter above nyquist", edit(t, `form = "pid"`, "form = \"pid\"\nderivative_lowpass_hz = 600.0"), []string{"axes.roll.control.derivative_lowpass_hz", "Nyquist"}},
		{"negative sensor lowpass", edit(t, "lowpass_hz = 100.0", "lowpass_hz = -100.0"), []string{"axes.roll.sensor.lowpass_hz", "> 0"}},
		{"empty axes", "airframe = \"x\"\nloop_hz = 100.0\n[axes]\n", []string{"axes", "at least one axis"}},
		{"duplicate axis", valid + "\n[axes.roll.spec]\nsettling_time = 0.2\n", []string{"syntax error"}},
		{"empty file", "", []string{"empty file"}},
		{"whitespace only", "  \n\t\n", []string{"empty file"}},
		{"binary junk", "\x7fELF\x02\x01\x01\x00\x00\x00\xff\xfe", []string{"not a text file"}},
		{"invalid utf-8", "airframe = \"\xff\xfe\"\n", []string{"not a text file"}},
		{"toml syntax error", "airframe = \"x\nloop_hz = ", []string{"syntax error", "line"}},
	}
	if len(cases) < 20 {
		t.Fatalf("the issue asks for at least 20 malformed files, have %d", len(cases))
	}
	dir := t.TempDir()
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			p := writeFile(t, dir, "case"+strings.Repeat("_", i%3)+string(rune('a'+i%26))+".toml", tc.content)
			code, out, errs := runCLI(t, "design", p)
			if code != exitUsage {
				t.Fatalf("exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, exitUsage, out, errs)
			}
			if !strings.Contains(errs, p+": ") {
				t.Errorf("stderr does not name the file %s:\n%s", p, errs)
			}
			for _, w := range tc.want {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errs)
				}
			}
			if out != "" {
				t.Errorf("stdout not empty for an invalid file:\n%s", out)
			}
		})
	}
}

func TestUnreadableFile(t *testing.T) {
	p := filepath.Join(t.TempDir(), "missing.toml")
	code, _, errs := runCLI(t, "design", p)
	if code != exitUsage || !strings.Contains(errs, p) {
		t.Fatalf("exit %d, stderr %q; want exit 2 naming %s", code, errs, p)
	}
	dir := t.TempDir()
	code, _, errs = runCLI(t, "design", dir)
	if code != exitUsage || !strings.Contains(errs, dir) {
		t.Fatalf("design of a directory: exit %d, stderr %q; want exit 2 naming it", code, errs)
	}
}

// TestManyFiles: each file is designed or reported on its own, and the
// exit status is the worst of them.
func TestManyFiles(t *testing.T) {
	dir := t.TempDir()
	good := writeFile(t, dir, "good.toml", valid)
	bad := writeFile(t, dir, "bad.toml", edit(t, "overshoot = 0.10", "overshoot = 1.4"))
	worse := writeFile(t, dir, "worse.toml", "not toml at all [")
	code, out, errs := runCLI(t, "design", bad, good, worse)
	if code != exitUsage {
		t.Fatalf("exit %d, want 2", code)
	}
	if !strings.Contains(out, "airframe testcraft") || !strings.Contains(out, good) {
		t.Errorf("the valid file's table is missing from stdout:\n%s", out)
	}
	for _, p := range []string{bad, worse} {
		if !strings.Contains(errs, p+": ") {
			t.Errorf("stderr does not report %s:\n%s", p, errs)
		}
	}
	code, out, _ = runCLI(t, "design", "--json", bad, good)
	if code != exitUsage {
		t.Fatalf("--json: exit %d, want 2", code)
	}
	var r struct {
		Airframes []struct{ File string } `json:"airframes"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatalf("--json output with a bad file is not JSON: %v\n%s", err, out)
	}
	if len(r.Airframes) != 1 || r.Airframes[0].File != good {
		t.Errorf("--json airframes = %+v, want only %s", r.Airframes, good)
	}
}

// infeasible is a PI on a slow yaw plant whose textbook target (settling
// 0.25 s at 10 % overshoot) needs a negative integral gain, placed without
// refinement: the form cannot reach the spec.
const infeasible = `airframe = "sluggish"
description = "demo data: an impossible spec"
loop_hz = 1000.0

[axes.yaw.plant]
effectiveness = 300.0
motor_tau = 0.035
delay = 0.002

[axes.yaw.sensor]
lowpass_hz = 100.0

[axes.yaw.spec]
settling_time = 0.25
overshoot = 0.10

[axes.yaw.control]
form = "pi"
refine = false
`

func TestInfeasibleSpec(t *testing.T) {
	p := writeFile(t, t.TempDir(), "sluggish.toml", infeasible)
	code, out, errs := runCLI(t, "design", p)
	if code != exitUnmet {
		t.Fatalf("exit %d, want 1\nstdout:\n%s\nstderr:\n%s", code, out, errs)
	}
	if !strings.Contains(errs, p+": axis yaw: ") || !strings.Contains(errs, "pi cannot place the target pole") {
		t.Errorf("stderr does not say which axis and why:\n%s", errs)
	}
	if !strings.Contains(out, "axis yaw  form pi  FAIL") || !strings.Contains(out, "cannot design") {
		t.Errorf("the table does not show the failure:\n%s", out)
	}
	code, out, _ = runCLI(t, "design", "--json", p)
	if code != exitUnmet {
		t.Fatalf("--json: exit %d, want 1", code)
	}
	var r struct {
		Airframes []struct {
			OK   bool `json:"ok"`
			Axes []struct {
				OK    bool   `json:"ok"`
				Error string `json:"error"`
			} `json:"axes"`
		} `json:"airframes"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatal(err)
	}
	if a := r.Airframes[0]; a.OK || a.Axes[0].OK || !strings.Contains(a.Axes[0].Error, "cannot place") {
		t.Errorf("JSON does not report the infeasible axis: %+v", r)
	}
}

// TestUnmetSpecExit1: a design that completes but misses a check is exit 1
// and stderr names the check.
func TestUnmetSpecExit1(t *testing.T) {
	// A phase margin of 85° cannot be had together with this settling time.
	p := writeFile(t, t.TempDir(), "strict.toml", edit(t, "min_phase_margin = 40.0", "min_phase_margin = 85.0"))
	code, out, errs := runCLI(t, "design", p)
	if code != exitUnmet {
		t.Fatalf("exit %d, want 1\nstdout:\n%s\nstderr:\n%s", code, out, errs)
	}
	// The design may give up the margin or the step spec (the search
	// reports the closest design): either way stderr names a failed check
	// with its value and limit.
	named := regexp.MustCompile(`axis roll: [a-z][^\n]* [<>≥] [^\n]*\(sampled loop`)
	if !named.MatchString(errs) || !strings.Contains(out, "FAIL") {
		t.Errorf("the failed check is not named:\nstdout:\n%s\nstderr:\n%s", out, errs)
	}
}

// TestEmitJSONUnmet: emit --json prints the JSON report of a design that
// fails its checks as design --json does, byte for byte and with the same
// exit status 1, whether or not --allow-unmet writes its code; without it
// nothing is written. A file that does not load stops the run with no
// JSON at all.
func TestEmitJSONUnmet(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "strict.toml", edit(t, "min_phase_margin = 40.0", "min_phase_margin = 85.0"))
	dcode, want, _ := runCLI(t, "design", "--json", p)
	if dcode != exitUnmet {
		t.Fatalf("design --json: exit %d, want 1", dcode)
	}
	for _, allow := range []bool{false, true} {
		out := filepath.Join(dir, fmt.Sprint("gen-", allow))
		args := []string{"emit", "-o", out, "--json", p}
		if allow {
			args = append(args, "--allow-unmet")
		}
		code, got, errs := runCLI(t, args...)
		if code != exitUnmet {
			t.Errorf("emit --json (allow-unmet %v): exit %d, want 1\n%s", allow, code, errs)
		}
		if got != want {
			t.Errorf("emit --json (allow-unmet %v) differs from design --json:\n%s", allow, firstDiff(want, got))
		}
		es, _ := os.ReadDir(out)
		if written := len(es) > 0; written != allow {
			t.Errorf("emit --json (allow-unmet %v): %d files written", allow, len(es))
		}
	}
	// A file that does not load refuses the run before any design: exit
	// 2, no JSON, nothing written (design --json prints the others).
	bad := writeFile(t, dir, "bad.toml", edit(t, "loop_hz = 1000.0", "loop_hz = -1.0"))
	out := filepath.Join(dir, "gen-bad")
	code, got, errs := runCLI(t, "emit", "-o", out, "--json", bad, p)
	if code != exitUsage || got != "" || !strings.Contains(errs, "nothing written") {
		t.Errorf("emit --json with a bad file: exit %d, stdout %q, stderr %q; want 2, none, nothing written", code, got, errs)
	}
}

func TestExamplesDesign(t *testing.T) {
	for _, p := range examples(t) {
		t.Run(filepath.Base(p), func(t *testing.T) {
			data, err := os.ReadFile(p)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(data), `description = "demo data: `) {
				t.Errorf("%s: the description must start with \"demo data: \"", p)
			}
			code, out, errs := runCLI(t, "design", p)
			if code != exitOK {
				t.Fatalf("exit %d, want 0\nstdout:\n%s\nstderr:\n%s", code, out, errs)
			}
			if errs != "" {
				t.Errorf("stderr not empty for a passing design:\n%s", errs)
			}
			for _, bad := range []string{"NaN", "%!", "FAIL"} {
				if strings.Contains(out, bad) {
					t.Errorf("table contains %q:\n%s", bad, out)
				}
			}
		})
	}
	args := append([]string{"design"}, examples(t)...)
	if code, _, errs := runCLI(t, args...); code != exitOK {
		t.Fatalf("design examples/*.toml: exit %d\n%s", code, errs)
	}
}

// TestJSONContract checks the keys the README's JSON report promises, and
// relations between the reported numbers that hold by definition.
func TestJSONContract(t *testing.T) {
	for _, p := range examples(t) {
		t.Run(filepath.Base(p), func(t *testing.T) {
			code, out, errs := runCLI(t, "design", "--json", p)
			if code != exitOK {
				t.Fatalf("exit %d\n%s", code, errs)
			}
			if strings.Contains(out, "NaN") || strings.Contains(out, "Inf") {
				t.Fatalf("JSON contains NaN or Inf:\n%s", out)
			}
			if !strings.HasSuffix(out, "}\n") || !strings.HasPrefix(out, "{\n  \"version\"") {
				t.Errorf("JSON must be indented by 2 spaces and end in a newline")
			}
			var r map[string]any
			if err := json.Unmarshal([]byte(out), &r); err != nil {
				t.Fatalf("not JSON: %v", err)
			}
			need(t, r, "version", "airframes")
			for _, a := range r["airframes"].([]any) {
				am := a.(map[string]any)
				need(t, am, "airframe", "file", "loop_hz", "ok", "axes")
				for _, x := range am["axes"].([]any) {
					xm := x.(map[string]any)
					need(t, xm, "axis", "form", "ok", "target", "continuous", "discrete", "checks")
					need(t, obj(t, xm, "target"), "zeta", "omega_n", "pole")
					form := airframe.Form(xm["form"].(string))
					c := obj(t, xm, "continuous")
					need(t, c, "series", "steady_state_error", "closed_loop_poles", "overshoot", "settling_time", "rise_time", "phase_margin_deg", "crossover", "delay_margin")
					need(t, obj(t, c, "series"), "gain", "zeros", "poles")
					for _, k := range []string{"kp", "ki", "kd", "derivative_tau", "setpoint_weight"} {
						_, has := c[k]
						applies := form != airframe.FormLead && (k == "kp" || k == "setpoint_weight" ||
							(k == "ki" && form.HasIntegral()) || (k != "ki" && form.HasDerivative()))
						if has != applies {
							t.Errorf("%s form %s: continuous.%s present = %v, want %v", xm["axis"], form, k, has, applies)
						}
					}
					d := obj(t, xm, "discrete")
					need(t, d, "method", "closed_loop_poles", "stability_margin", "overshoot", "settling_time", "phase_margin_deg", "saturated",
						"max_sensitivity", "max_complementary", "noise_gain", "disturbance")
					need(t, obj(t, d, "saturated"), "amplitude", "overshoot", "settled")
					need(t, obj(t, d, "disturbance"), "step", "peak", "iae")
					if form.HasIntegral() {
						need(t, obj(t, d, "saturated"), "antiwindup", "overshoot_no_antiwindup", "integrator_peak")
					} else if _, has := d["hold_rate"]; has {
						t.Errorf("%s form %s: discrete.hold_rate present without an integrator", xm["axis"], form)
					}
					checkNumeric(t, xm)
					for _, ck := range xm["checks"].([]any) {
						need(t, ck.(map[string]any), "name", "limit", "value", "ok", "worst")
						need(t, obj(t, ck.(map[string]any), "worst"), "gain_scale", "lag_scale", "delay_add")
					}
					checkRelations(t, xm)
					checkEnvelope(t, xm)
				}
			}
		})
	}
}

// checkNumeric checks the numeric section of one axis: its keys, and its
// numbers against their definitions.
func checkNumeric(t *testing.T, x map[string]any) {
	t.Helper()
	n := obj(t, x, "numeric")
	need(t, n, "type", "coefficients")
	typ := n["type"].(string)
	fixed := typ == "q15" || typ == "q31"
	bits := map[string]int{"q15": 16, "q31": 32}[typ]
	for _, c := range n["coefficients"].([]any) {
		cm := c.(map[string]any)
		need(t, cm, "name", "value", "quantized", "format", "rel_error")
		v, q, re := cm["value"].(float64), cm["quantized"].(float64), cm["rel_error"].(float64)
		if v != 0 {
			// rel_error = (quantized − value)/value. value and quantized
			// are each rounded to 10 significant digits, a relative error
			// of at most 5e-10 each (half a unit of the 10th digit of a
			// number whose first digit is 1), so the recomputed ratio is
			// within 1e-9 (plus second-order terms) of the exact one.
			if got := (q - v) / v; math.Abs(got-re) > 1.01e-9 {
				t.Errorf("%s: rel_error %g, (quantized − value)/value = %g", cm["name"], re, got)
			}
		}
		if !fixed {
			if cm["format"] != typ {
				t.Errorf("%s: format %v, want %s", cm["name"], cm["format"], typ)
			}
			continue
		}
		need(t, cm, "frac_bits", "raw", "bits")
		// A coefficient's word is the data word or a wider accumulator.
		w := int(cm["bits"].(float64))
		if w < bits {
			t.Errorf("%s: %d-bit word, narrower than the %d-bit data word", cm["name"], w, bits)
		}
		// Qm.n: m integer and n fractional bits, the sign not counted, so
		// m + n = bits − 1 (common practice; README, "[numeric]").
		var m, nb int
		if _, err := fmt.Sscanf(cm["format"].(string), "Q%d.%d", &m, &nb); err != nil || m+nb != w-1 || float64(nb) != cm["frac_bits"].(float64) {
			t.Errorf("%s: format %v with frac_bits %v is not Qm.n with m + n = %d", cm["name"], cm["format"], cm["frac_bits"], w-1)
		}
		if raw := cm["raw"].(float64); raw < -math.Ldexp(1, w-1) || raw > math.Ldexp(1, w-1)-1 {
			t.Errorf("%s: raw %v does not fit a signed %d-bit word", cm["name"], raw, w)
		}
	}
	if fixed {
		need(t, n, "ranges", "word_bits", "input_full_scale", "output_full_scale")
		for _, g := range n["ranges"].([]any) {
			gm := g.(map[string]any)
			need(t, gm, "name", "bound", "capacity", "headroom_bits")
			// headroom_bits = log2(capacity/bound) (discrete.Range), to
			// the 10 digits the report keeps, except where capped at the
			// word's width.
			b, c, h := gm["bound"].(float64), gm["capacity"].(float64), gm["headroom_bits"].(float64)
			if b > 0 && h < 31 {
				near(t, "headroom_bits of "+gm["name"].(string), h, math.Log2(c/b), 1e-8)
			}
		}
	}
}

// checkRelations verifies numbers of one axis against their definitions.
func checkRelations(t *testing.T, x map[string]any) {
	t.Helper()
	tg := obj(t, x, "target")
	zeta, wn := tg["zeta"].(float64), tg["omega_n"].(float64)
	pole := tg["pole"].([]any)
	// s* = −ζωn + jωn√(1−ζ²) (README, target pole; Ogata, second-order
	// system, from memory). Tolerance: both sides are rounded to 10
	// significant digits, so 1e-8 relative is generous.
	near(t, "target.pole[0]", pole[0].(float64), -zeta*wn, 1e-8)
	near(t, "target.pole[1]", pole[1].(float64), wn*math.Sqrt(1-zeta*zeta), 1e-8)
	d := obj(t, x, "discrete")
	maxAbs := 0.0
	for _, p := range d["closed_loop_poles"].([]any) {
		re, im := p.([]any)[0].(float64), p.([]any)[1].(float64)
		maxAbs = math.Max(maxAbs, math.Hypot(re, im))
	}
	// Stability margin is defined as 1 − max|z| (README, "The JSON report"); the poles are
	// rounded to 10 digits, so agreement to 1e-8 is expected.
	near(t, "discrete.stability_margin", d["stability_margin"].(float64), 1-maxAbs, 1e-8)
	for _, sec := range []map[string]any{obj(t, x, "continuous"), d} {
		// Delay margin = PM (rad)/ωc (Franklin, Powell & Emami-Naeini,
		// from memory).
		pm, wc, dm := sec["phase_margin_deg"].(float64), sec["crossover"].(float64), sec["delay_margin"].(float64)
		near(t, "delay_margin", dm, pm*math.Pi/180/wc, 1e-8)
	}
}

// checkEnvelope checks the envelope section of one axis: its keys, the
// nominal plant first and equal to the discrete section, every plant
// inside the intervals, each check's worst plant listed with the check's
// value, no plant worse than it, and the margins the sensitivity peak
// guarantees.
func checkEnvelope(t *testing.T, x map[string]any) {
	t.Helper()
	e := obj(t, x, "envelope")
	need(t, e, "gain_scale", "lag_scale", "delay_add", "corners")
	d := obj(t, x, "discrete")
	corners := e["corners"].([]any)
	if len(corners) == 0 {
		t.Fatalf("envelope.corners is empty")
	}
	iv := func(k string) (float64, float64) {
		a := e[k].([]any)
		return a[0].(float64), a[1].(float64)
	}
	type plant struct{ g, l, dl float64 }
	var plants []plant
	for i, c := range corners {
		cm := c.(map[string]any)
		need(t, cm, "gain_scale", "lag_scale", "delay_add", "stable")
		p := plant{cm["gain_scale"].(float64), cm["lag_scale"].(float64), cm["delay_add"].(float64)}
		plants = append(plants, p)
		for k, v := range map[string]float64{"gain_scale": p.g, "lag_scale": p.l, "delay_add": p.dl} {
			if lo, hi := iv(k); v < lo || v > hi {
				t.Errorf("corners[%d].%s = %v outside [%v, %v]", i, k, v, lo, hi)
			}
		}
		if cm["stable"] == true {
			need(t, cm, "overshoot", "settling_time", "phase_margin_deg", "max_sensitivity")
			// Ms bounds the margins: the Nyquist curve stays outside the
			// circle of radius 1/Ms about −1, so GM ≥ Ms/(Ms − 1) and
			// PM ≥ 2·asin(1/(2·Ms)) (Åström & Murray, Feedback Systems,
			// stability margins; from memory). Ms is a refined peak, good
			// to far better than 1e-6 relative, which the tolerance allows.
			ms := cm["max_sensitivity"].(float64)
			if gm, ok := cm["gain_margin_db"].(float64); ok && gm < 20*math.Log10(ms/(ms-1))-1e-6 {
				t.Errorf("corners[%d]: gain margin %v dB below the %v dB that Ms = %v guarantees", i, gm, 20*math.Log10(ms/(ms-1)), ms)
			}
			if pm, want := cm["phase_margin_deg"].(float64), 2*math.Asin(1/(2*ms))*180/math.Pi; pm < want-1e-6 {
				t.Errorf("corners[%d]: phase margin %v° below the %v° that Ms = %v guarantees", i, pm, want, ms)
			}
		}
	}
	if plants[0] != (plant{1, 1, 0}) {
		t.Errorf("corners[0] = %+v, want the nominal plant", plants[0])
	}
	if got, want := corners[0].(map[string]any)["max_sensitivity"], d["max_sensitivity"]; got != want {
		t.Errorf("corners[0].max_sensitivity %v, discrete.max_sensitivity %v: both are the nominal plant's", got, want)
	}
	// A check's value is its worst over the plants (README, "The JSON
	// report"): the plant it names holds that value and no plant is worse.
	field := map[string]string{"overshoot": "overshoot", "settling_time": "settling_time", "phase_margin": "phase_margin_deg",
		"gain_margin": "gain_margin_db", "max_sensitivity": "max_sensitivity"}
	for _, ck := range x["checks"].([]any) {
		cm := ck.(map[string]any)
		f, ok := field[cm["name"].(string)]
		v, has := cm["value"].(float64)
		if !ok || !has {
			continue
		}
		w := cm["worst"].(map[string]any)
		at := plant{w["gain_scale"].(float64), w["lag_scale"].(float64), w["delay_add"].(float64)}
		i := slices.Index(plants, at)
		if i < 0 {
			t.Errorf("check %s: worst plant %+v is not among the corners", cm["name"], at)
			continue
		}
		// Both sides are rounded to 10 significant digits (the corner's
		// overshoot to 10 digits of the unit step).
		near(t, "check "+cm["name"].(string)+" at its worst plant", corners[i].(map[string]any)[f].(float64), v, 1e-9)
		upper := cm["name"] != "phase_margin" && cm["name"] != "gain_margin"
		tol := 1e-9 * math.Max(1, math.Abs(v)) // as near's
		for j, c := range corners {
			u, ok := c.(map[string]any)[f].(float64)
			if ok && (upper && u > v+tol || !upper && u < v-tol) {
				t.Errorf("check %s = %v, but corners[%d] has %v: the check is not the worst", cm["name"], v, j, u)
			}
		}
	}
}

func near(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Max(1, math.Abs(want)) {
		t.Errorf("%s = %.12g, want %.12g", what, got, want)
	}
}

func need(t *testing.T, m map[string]any, keys ...string) {
	t.Helper()
	for _, k := range keys {
		if _, ok := m[k]; !ok {
			t.Errorf("key %q missing in %v", k, keysOf(m))
		}
	}
}

func obj(t *testing.T, m map[string]any, k string) map[string]any {
	t.Helper()
	o, ok := m[k].(map[string]any)
	if !ok {
		t.Fatalf("key %q: not an object in %v", k, keysOf(m))
	}
	return o
}

func keysOf(m map[string]any) []string {
	var ks []string
	for k := range m {
		ks = append(ks, k)
	}
	return ks
}

// TestJSONGolden compares the JSON report of each example byte for byte
// with testdata/design_<example>.json; -update rewrites them. It runs from
// the repository root so that the report names the files as a user would.
// The second design of each, for determinism, is emit --json's, which
// prints the same report.
func TestJSONGolden(t *testing.T) {
	paths := examples(t)
	t.Chdir("../..")
	for _, p := range paths {
		rel := filepath.ToSlash(strings.TrimPrefix(p, "../../"))
		name := strings.TrimSuffix(filepath.Base(p), ".toml")
		golden := filepath.Join("cmd", "locusmith", "testdata", "design_"+name+".json")
		t.Run(name, func(t *testing.T) {
			code, out, errs := runCLI(t, "design", "--json", rel)
			if code != exitOK {
				t.Fatalf("exit %d\n%s", code, errs)
			}
			// Determinism: a second run gives the same bytes; emit --json
			// prints what design --json does.
			ecode, again, eerrs := runCLI(t, "emit", "-o", t.TempDir(), "--json", rel)
			if ecode != exitOK {
				t.Fatalf("emit --json: exit %d\n%s", ecode, eerrs)
			}
			if again != out {
				t.Fatalf("emit --json %s differs from design --json:\n%s", rel, firstDiff(out, again))
			}
			if *update {
				if err := os.MkdirAll(filepath.Dir(golden), 0o755); err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(golden, []byte(out), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test ./cmd/locusmith -update to create it)", err)
			}
			if string(want) != out {
				t.Errorf("design --json %s differs from %s (run go test ./cmd/locusmith -update after checking the change):\n%s", rel, golden, firstDiff(string(want), out))
			}
		})
	}
}

// firstDiff shows the first differing line of two texts.
func firstDiff(a, b string) string {
	al, bl := strings.Split(a, "\n"), strings.Split(b, "\n")
	for i := 0; i < len(al) || i < len(bl); i++ {
		var x, y string
		if i < len(al) {
			x = al[i]
		}
		if i < len(bl) {
			y = bl[i]
		}
		if x != y {
			return "line " + strconv.Itoa(i+1) + ":\n- " + x + "\n+ " + y
		}
	}
	return "(no line differs)"
}

func TestUsageErrors(t *testing.T) {
	cases := []struct {
		args []string
		want string
	}{
		{nil, "Usage:"},
		{[]string{"fly"}, `unknown verb "fly"`},
		{[]string{"--json"}, "a verb must come first"},
		{[]string{"design"}, "no airframe file"},
		{[]string{"design", "--frobnicate", "x.toml"}, "unknown flag: --frobnicate"},
		{[]string{"design", "-q", "x.toml"}, "unknown shorthand flag"},
		{[]string{"design", "--json=maybe", "x.toml"}, "invalid argument"},
		{[]string{"version", "extra"}, "takes no arguments"},
		{[]string{"help", "fly"}, `unknown verb "fly"`},
		{[]string{"design", "-j", "0", "x.toml"}, "--jobs 0: must be at least 1"},
		{[]string{"emit", "-o", ".", "--jobs", "-2", "x.toml"}, "--jobs -2: must be at least 1"},
		{[]string{"emit", "-o", ".", "--json", "--check", "x.toml"}, "--json and --check"},
		{[]string{"report", "-o", ".", "-j", "0", "x.toml"}, "--jobs 0: must be at least 1"},
		{[]string{"design", "-j", "many", "x.toml"}, "invalid argument"},
		{[]string{"compare", "--tolerance", "0", "a.toml", "b.toml"}, "--tolerance 0: want a fraction of the limit in (0, 1]"},
		{[]string{"compare", "--floor", "1.5", "a.toml", "b.toml"}, "--floor 1.5: want a fraction of the limit in (0, 1]"},
		{[]string{"compare", "--tolerance", "NaN", "a.toml", "b.toml"}, "--tolerance NaN: want a fraction"},
		{[]string{"compare", "a.toml"}, "want OLD and NEW, got 1 argument"},
	}
	for _, tc := range cases {
		code, out, errs := runCLI(t, tc.args...)
		if code != exitUsage {
			t.Errorf("locusmith %v: exit %d, want 2", tc.args, code)
		}
		if !strings.Contains(errs, tc.want) {
			t.Errorf("locusmith %v: stderr %q lacks %q", tc.args, errs, tc.want)
		}
		if out != "" {
			t.Errorf("locusmith %v: usage error wrote to stdout: %q", tc.args, out)
		}
	}
}

// TestHelp: -h and --help on every verb exit 0 with the help on stdout.
func TestHelp(t *testing.T) {
	for _, v := range verbs() {
		for _, h := range []string{"-h", "--help"} {
			code, out, errs := runCLI(t, v.name, h)
			if code != exitOK || !isHelp(out, v.name) || errs != "" {
				t.Errorf("locusmith %s %s: exit %d, stdout %q, stderr %q; want exit 0 and the usage on stdout only", v.name, h, code, out, errs)
			}
		}
		code, out, _ := runCLI(t, "help", v.name)
		if code != exitOK || !isHelp(out, v.name) {
			t.Errorf("locusmith help %s: exit %d, stdout %q", v.name, code, out)
		}
	}
	for _, v := range []string{"design", "version"} {
		_, out, _ := runCLI(t, v, "--help")
		if !strings.Contains(out, "Examples:") || !strings.Contains(out, "-h, --help") {
			t.Errorf("locusmith %s --help lacks examples or the flag list:\n%s", v, out)
		}
	}
	for _, args := range [][]string{{"-h"}, {"--help"}, {"help"}} {
		code, out, _ := runCLI(t, args...)
		if code != exitOK || !strings.Contains(out, "Verbs:") {
			t.Errorf("locusmith %v: exit %d, stdout %q", args, code, out)
		}
	}
}

// isHelp reports whether out looks like the help of verb: a usage line
// that names the verb.
func isHelp(out, verb string) bool {
	return strings.Contains(strings.ToLower(out), "usage: locusmith "+verb)
}

func TestVersion(t *testing.T) {
	for _, args := range [][]string{{"version"}, {"--version"}} {
		code, out, _ := runCLI(t, args...)
		if code != exitOK || !regexp.MustCompile(`^locusmith \d+\.\d+\.\d+\n`).MatchString(out) {
			t.Errorf("locusmith %v: exit %d, stdout %q", args, code, out)
		}
	}
}

// Go builds one package per directory and emit writes a package per
// airframe, so several airframes in one Go run are a usage error: exit 2,
// nothing written, and the message says what to do instead.
func TestEmitGoOneAirframePerRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "gen")
	code, _, errs := runCLI(t, append([]string{"emit", "--lang", "go", "-o", dir}, examples(t)...)...)
	if code != exitUsage || !strings.Contains(errs, "one package per directory") || !strings.Contains(errs, "once per airframe") {
		t.Errorf("exit %d, stderr %q", code, errs)
	}
	if _, err := os.Stat(dir); !os.IsNotExist(err) {
		t.Errorf("output directory made or written: %v", err)
	}
	if code, _, errs := runCLI(t, "emit", "--lang", "go", "-o", dir, examples(t)[0]); code != exitOK {
		t.Errorf("one airframe: exit %d, stderr %q", code, errs)
	}
}
