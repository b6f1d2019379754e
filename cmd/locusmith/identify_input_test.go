package main

import (
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestIdentifyNewInputErrors: bad delimiters, a missing excitation
// column, a constant or barely varying command, a bad unit, mode count or
// crossover, and standard input twice each exit 2 with a message naming
// the file or flag, the value and what is allowed, and print nothing on
// stdout.
func TestIdentifyNewInputErrors(t *testing.T) {
	p := modeTruth
	p.modeHz = 0
	tm, u, y, r := simLog(t, p, 1000, 2000, 0.008, 0.05, 0.02, 4)
	dir := t.TempDir()
	good := writeSimCSV(t, dir, "good.csv", ",", 1, tm, u, y, r)
	semi := writeSimCSV(t, dir, "semi.csv", ";", 1, tm, u, y, r)
	rows := func(name string, f func(i int) string) string {
		var b strings.Builder
		b.WriteString("time,command,rate\n")
		for i := range 300 {
			b.WriteString(strconv.Itoa(i) + "e-3," + f(i) + ",0\n")
		}
		path := filepath.Join(dir, name)
		if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		return path
	}
	constant := rows("constant.csv", func(int) string { return "0.2" })
	step := rows("step.csv", func(i int) string {
		if i >= 100 && i < 150 {
			return "0.3"
		}
		return "0"
	})
	cases := []struct {
		name string
		args []string
		want []string
	}{
		{"two-character delimiter", []string{"--delimiter", ";;", good}, []string{`--delimiter ";;": must be one character`}},
		{"comment delimiter", []string{"--delimiter", "#", good}, []string{`--delimiter "#": cannot be '#'`}},
		{"wrong delimiter", []string{semi}, []string{"semi.csv:2:", `no column "time"`, "--delimiter"}},
		{"missing excitation column", []string{"--excitation", "inject", good}, []string{"good.csv:2:", `no excitation column "inject"`, `"time", "command", "rate", "exc"`, "--excitation"}},
		{"constant command", []string{constant}, []string{"constant.csv:2:", `column "command" is constant (0.2`, "doublets", "chirp"}},
		{"one step", []string{step}, []string{"step.csv:2:", `changes value only 2 time(s)`, "too little excitation", "doublets"}},
		{"rate unit", []string{"--rate-unit", "rpm", good}, []string{`--rate-unit "rpm": must be rad/s or deg/s`}},
		{"modes", []string{"--modes", "9", good}, []string{"--modes 9: must be 0 to 4"}},
		{"crossover", []string{"--crossover-hz", "-3", good}, []string{"--crossover-hz -3: must be a positive"}},
		{"stdin twice", []string{"-", "-"}, []string{"standard input (-) given 2 times"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, out, errs := runCLI(t, append([]string{"identify"}, c.args...)...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d\n%s", code, exitUsage, errs)
			}
			for _, w := range c.want {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr %q lacks %q", errs, w)
				}
			}
			if out != "" {
				t.Errorf("bad input printed output: %q", out)
			}
		})
	}
}

// TestIdentifyDelimiters: the same log written with ';' and with tabs is
// read with --delimiter and gives the output of the ',' log, byte for
// byte but for the file's name.
func TestIdentifyDelimiters(t *testing.T) {
	p := modeTruth
	p.modeHz = 0
	tm, u, y, r := simLog(t, p, 1000, 4000, 0.008, 0.05, 0.02, 5)
	dir := t.TempDir()
	_, want, errs := runCLI(t, "identify", "--modes", "0", writeSimCSV(t, dir, "a.csv", ",", 1, tm, u, y, r))
	if want == "" {
		t.Fatalf("the ',' log failed: %s", errs)
	}
	for _, d := range []struct{ flag, sep string }{{";", ";"}, {`\t`, "\t"}} {
		code, got, errs := runCLI(t, "identify", "--modes", "0", "--delimiter", d.flag, writeSimCSV(t, dir, "a.csv", d.sep, 1, tm, u, y, r))
		if code != exitOK || got != want {
			t.Errorf("--delimiter %q: exit %d\n%s\ngot\n%s\nwant\n%s", d.flag, code, errs, got, want)
		}
	}
}

// TestIdentifyNaNRow: a log with a NaN row is fitted in two parts, and
// stderr says so.
func TestIdentifyNaNRow(t *testing.T) {
	p := modeTruth
	p.modeHz = 0
	tm, u, y, r := simLog(t, p, 1000, 6000, 0.008, 0.05, 0.02, 6)
	path := writeSimCSV(t, t.TempDir(), "nan.csv", ",", 1, tm, u, y, r)
	data, _ := os.ReadFile(path)
	lines := strings.Split(string(data), "\n")
	lines[1000] = "0.998,NaN,NaN,0"
	if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runCLI(t, "identify", "--modes", "0", path)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	if !strings.Contains(errs, "1 row(s) with NaN skipped") || !strings.Contains(out, "in 2 segment(s)") {
		t.Errorf("the NaN row did not split the log:\n%s\n%s", out, errs)
	}
}

// TestIdentifyHelpNew: the help names the new flags and the unit rule.
func TestIdentifyHelpNew(t *testing.T) {
	_, out, _ := runCLI(t, "identify", "-h")
	for _, want := range []string{"--excitation", "--rate-unit", "--delimiter", "--modes", "--crossover-hz", "rad/s", "H1", "[axes.NAME.envelope]", "[[axes.NAME.filter]]"} {
		if !strings.Contains(out, want) {
			t.Errorf("help lacks %q", want)
		}
	}
}

// TestRateUnitWarning: the thresholds on hand-made rates: 35 rad/s
// (2000 °/s = 34.9 rad/s, the largest common gyro full scale, from
// memory) for a rad/s log, 0.5 °/s for a °/s log (the rate as read,
// converted to rad/s).
func TestRateUnitWarning(t *testing.T) {
	for _, c := range []struct {
		peak float64 // rad/s after conversion
		unit string
		warn bool
	}{
		{34.9, "rad/s", false},
		{-36, "rad/s", true},
		{0.4 * math.Pi / 180, "deg/s", true},
		{0.6 * math.Pi / 180, "deg/s", false},
		{100, "deg/s", false},
	} {
		got := rateUnitWarning([]float64{0, c.peak, 0.1 * c.peak}, c.unit)
		if (got != "") != c.warn {
			t.Errorf("peak %g rad/s read as %s: warning %q, want one: %v", c.peak, c.unit, got, c.warn)
		}
	}
}
