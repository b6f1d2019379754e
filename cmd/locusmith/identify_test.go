package main

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
)

// identifyLog writes a demo log (demo data: an invented bench test) of
// the plant eff/(s(tau·s+1)) with a delay of d whole samples at 1 kHz,
// driven by random doublets, with a gyro bias and white noise, and returns
// its path. The plant is simulated with the ZOH equivalent of the
// handbook (Franklin, Powell & Workman, Digital Control of Dynamic
// Systems, ZOH table, from memory): with a = e^(−T/τ),
//
//	m[k+1] = a·m[k] + (1 − a)·v[k],
//	ω[k+1] = ω[k] + eff·(τ(1 − a)·m[k] + (T − τ(1 − a))·v[k]),
//
// v[k] = u[k − d]. The numerics proper are checked against SciPy in
// internal/ident; here the point is the command line.
func identifyLog(t *testing.T, eff, tau float64, d int, seconds float64) string {
	t.Helper()
	const T = 0.001
	n := int(seconds / T)
	rng := rand.New(rand.NewPCG(5, 6))
	u := make([]float64, n)
	for k := 0; k < n; {
		k += 50 + rng.IntN(200)
		a := 0.1 + 0.3*rng.Float64()
		if rng.IntN(2) == 0 {
			a = -a
		}
		w := 3 + rng.IntN(40)
		for j := 0; j < 2*w && k < n; j++ {
			if j < w {
				u[k] = a
			} else {
				u[k] = -a
			}
			k++
		}
	}
	a := math.Exp(-T / tau)
	var m, w float64
	var b strings.Builder
	b.WriteString("# demo data: bench log of an invented airframe\ntime,command,rate,extra\n")
	for k := 0; k < n; k++ {
		y := w + 0.7 + 0.5*rng.NormFloat64()
		b.WriteString(strconv.FormatFloat(float64(k)*T, 'g', -1, 64) + "," + strconv.FormatFloat(u[k], 'g', -1, 64) + "," +
			strconv.FormatFloat(y, 'g', -1, 64) + ",0\n")
		v := 0.0
		if k-d >= 0 {
			v = u[k-d]
		}
		m, w = a*m+(1-a)*v, w+eff*(tau*(1-a)*m+(T-tau*(1-a))*v)
	}
	p := filepath.Join(t.TempDir(), "bench.csv")
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestIdentifyRoundTrip identifies a demo log, pastes the printed section
// into the valid airframe in place of its plant, and checks that the
// airframe loads and designs with the identified values (within 5 % of the
// simulated plant, the accuracy the identification guarantees at this
// noise level: the noise is 0.5 against a rate of tens).
func TestIdentifyRoundTrip(t *testing.T) {
	log := identifyLog(t, 2400, 0.03, 2, 20)
	dir := t.TempDir()
	code, out, errs := runCLI(t, "identify", "--axis", "roll", "--plots", dir, log)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for _, want := range []string{"[axes.roll.plant]", "effectiveness = ", "motor_tau = ", "delay = ",
		"normalized RMS error", "VAF", "95 % confidence intervals", "held out", "propellers off"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "roll_identify.svg")); err != nil {
		t.Errorf("plot not written: %v", err)
	}
	plant := regexp.MustCompile(`(?s)\[axes\.roll\.plant\].*?\n\n`)
	src := plant.ReplaceAllString(valid, out+"\n")
	f, err := airframe.Parse("pasted.toml", []byte(src))
	if err != nil {
		t.Fatalf("the pasted section does not load: %v\n%s", err, src)
	}
	got := map[string]float64{}
	for _, key := range []string{"effectiveness", "motor_tau", "delay"} {
		m := regexp.MustCompile(`(?m)^` + key + ` = (\S+)$`).FindStringSubmatch(out)
		if m == nil {
			t.Fatalf("no %s line", key)
		}
		got[key], _ = strconv.ParseFloat(m[1], 64)
	}
	for key, want := range map[string]float64{"effectiveness": 2400, "motor_tau": 0.03, "delay": 0.002} {
		if rel := got[key]/want - 1; math.Abs(rel) > 0.05 {
			t.Errorf("%s = %g, simulated %g", key, got[key], want)
		}
	}
	if p := f.Axes[0].Plant.Delay; math.Abs(p-got["delay"]) > 1e-12 {
		t.Errorf("airframe delay %g, printed %g", p, got["delay"])
	}
	if code, _, errs := runCLI(t, "design", identifyTempFile(t, src)); code == exitUsage {
		t.Errorf("design of the pasted airframe: exit %d\n%s", code, errs)
	}
}

func identifyTempFile(t *testing.T, content string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "pasted.toml")
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestIdentifyBadInput checks exit status 2 and a message naming the file
// and line for bad logs and bad flags.
func TestIdentifyBadInput(t *testing.T) {
	dir := t.TempDir()
	write := func(name, content string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	rows := func(n int, f func(i int) string) string {
		var b strings.Builder
		b.WriteString("time,command,rate\n")
		for i := 0; i < n; i++ {
			b.WriteString(f(i) + "\n")
		}
		return b.String()
	}
	good := func(i int) string { return strconv.Itoa(i) + "e-3," + strconv.Itoa(i%7) + ",0" }
	cases := []struct {
		name, content string
		args          []string
		want          string
	}{
		{"empty", "", nil, "empty.csv:1: no header row"},
		{"noheader", rows(300, good)[len("time,command,rate\n"):], nil, "noheader.csv:1: no header row"},
		{"nocolumn", strings.Replace(rows(300, good), "rate", "gyro", 1), nil, `nocolumn.csv:1: no column "rate"`},
		{"text", rows(300, func(i int) string {
			if i == 41 {
				return "0.041,abc,0"
			}
			return good(i)
		}), nil, `text.csv:43: column "command": "abc" is not a finite number`},
		{"backwards", rows(300, func(i int) string {
			if i == 99 {
				return "0.05,1,0"
			}
			return good(i)
		}), nil, "backwards.csv:101:"},
		{"short", rows(150, good), nil, "short.csv:151: only 150 samples; at least 200"},
		{"constant", rows(300, func(i int) string { return strconv.Itoa(i) + "e-3,0.25,0" }), nil, `constant.csv:2: column "command" is constant`},
		{"badaxis", rows(300, good), []string{"--axis", "Roll"}, "--axis"},
		{"badsat", rows(300, good), []string{"--saturation", "1,0"}, "--saturation"},
		{"badholdout", rows(300, good), []string{"--holdout", "1.5"}, "--holdout"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := write(c.name+".csv", c.content)
			args := append(append([]string{"identify"}, c.args...), p)
			code, out, errs := runCLI(t, args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d\nstdout %s\nstderr %s", code, exitUsage, out, errs)
			}
			if !strings.Contains(errs, c.want) {
				t.Errorf("stderr %q lacks %q", errs, c.want)
			}
			if out != "" {
				t.Errorf("bad input printed output: %q", out)
			}
		})
	}
	if code, _, _ := runCLI(t, "identify"); code != exitUsage {
		t.Errorf("no file: exit %d, want %d", code, exitUsage)
	}
	if code, _, _ := runCLI(t, "identify", filepath.Join(dir, "missing.csv")); code != exitUsage {
		t.Errorf("missing file: exit %d, want %d", code, exitUsage)
	}
}

// TestIdentifyHelp checks that -h prints the usage with examples and exits 0.
func TestIdentifyHelp(t *testing.T) {
	code, out, _ := runCLI(t, "identify", "-h")
	if code != exitOK {
		t.Fatalf("exit %d", code)
	}
	for _, want := range []string{"Usage: locusmith identify", "Examples:", "--sensor", "--holdout", "--saturation", "-o, --output", "propellers off"} {
		if !strings.Contains(out, want) {
			t.Errorf("help lacks %q", want)
		}
	}
}

// TestIdentifyOutputDir: -o DIR means where the verb's output goes, as on
// emit and report: the TOML is written into DIR as <axis>_identified.toml
// (the same bytes it prints without -o), nothing goes to stdout, and the
// plots need their own --plots.
func TestIdentifyOutputDir(t *testing.T) {
	log := identifyLog(t, 2400, 0.03, 2, 20)
	_, printed, _ := runCLI(t, "identify", "--axis", "pitch", "--modes", "0", log)
	dir := filepath.Join(t.TempDir(), "out")
	code, out, errs := runCLI(t, "identify", "--axis", "pitch", "--modes", "0", "-o", dir, log)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	if out != "" {
		t.Errorf("stdout with -o: %q", out)
	}
	data, err := os.ReadFile(filepath.Join(dir, "pitch_identified.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if string(data) != printed {
		t.Errorf("the file differs from what identify prints:\n%s\n---\n%s", data, printed)
	}
	if !strings.Contains(errs, "wrote "+filepath.Join(dir, "pitch_identified.toml")) {
		t.Errorf("stderr does not say what was written:\n%s", errs)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d files in %s, want the TOML alone (plots take --plots)", len(ents), dir)
	}
}

// TestIdentifyOutputDirUnwritable: -o naming a regular file (no directory
// can be made there) is exit 2 with the path named, and nothing on stdout.
func TestIdentifyOutputDirUnwritable(t *testing.T) {
	log := identifyLog(t, 2400, 0.03, 2, 20)
	blocker := filepath.Join(t.TempDir(), "file")
	if err := os.WriteFile(blocker, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runCLI(t, "identify", "--modes", "0", "-o", blocker, log)
	if code != exitUsage || out != "" || !strings.Contains(errs, blocker) {
		t.Errorf("exit %d, stdout %q, stderr %q; want exit 2 naming %s", code, out, errs, blocker)
	}
}

// TestIdentifyLogsDisagree: two logs of "one axis" whose effectiveness
// differs 480-fold cannot be one plant's range (the envelope's scales stop
// at ×0.1 and ×10): exit 1, the key named, nothing on stdout.
func TestIdentifyLogsDisagree(t *testing.T) {
	a := identifyLog(t, 2400, 0.03, 2, 20)
	b := identifyLog(t, 5, 0.03, 2, 20)
	code, out, errs := runCLI(t, "identify", a, b)
	if code != exitUnmet || out != "" || !strings.Contains(errs, "gain_scale") {
		t.Errorf("exit %d, stdout %q, stderr %q; want exit 1 naming gain_scale", code, out, errs)
	}
}
