package main

import (
	"math"
	"math/cmplx"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
)

// minimalAirframe is the least airframe file an identified section is
// pasted into (demo data: an invented airframe).
const minimalAirframe = `airframe = "sim"
description = "demo data: invented, for the identify tests"
loop_hz = 1000.0

[axes.roll.spec]
settling_time = 0.15
overshoot = 0.1

`

// modeTruth is the simulated airframe of the mode tests: a frame mode at
// 60 Hz with damping 0.05 on a 20 ms motor lag, 2 ms delay (demo data).
var modeTruth = simPlant{eff: 2400, tau: 0.02, delay: 0.002, modeHz: 60, zeta: 0.05}

// findFloat returns the number that follows re's one group in s.
func findFloats(t *testing.T, s, re string) []float64 {
	t.Helper()
	m := regexp.MustCompile(re).FindStringSubmatch(s)
	if m == nil {
		t.Fatalf("no match of %s in\n%s", re, s)
	}
	var out []float64
	for _, g := range m[1:] {
		v, err := strconv.ParseFloat(g, 64)
		if err != nil {
			t.Fatalf("%q: %v", g, err)
		}
		out = append(out, v)
	}
	return out
}

// TestIdentifyFrameMode: a closed-loop log (30 s at 1 kHz, excitation
// injected at the plant input, proportional feedback) of a plant with a
// frame mode → identify prints the mode with the simulated truth (60 Hz,
// damping 0.05) inside its 95 % intervals, says the closed-loop
// estimator made the estimate, suggests a notch on the mode, and its
// output, pasted into an airframe, parses: with the physical plant and
// the notch, and with the commented zpk plant in its place, whose pole
// pair is the printed mode.
func TestIdentifyFrameMode(t *testing.T) {
	tm, u, y, r := simLog(t, modeTruth, 1000, 30000, 0.008, 0.05, 0.02, 1)
	path := writeSimCSV(t, t.TempDir(), "frame.csv", ",", 1, tm, u, y, r)
	plots := t.TempDir()
	code, out, errs := runCLI(t, "identify", "--excitation", "exc", "--plots", plots, path)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for _, f := range []string{"roll_identify.svg", "roll_frequency.svg"} {
		if b, err := os.ReadFile(filepath.Join(plots, f)); err != nil || !strings.Contains(string(b), "<svg") {
			t.Errorf("plot %s not written: %v", f, err)
		}
	}
	for _, want := range []string{"closed loop, indirect: H = Pry/Pru", "Closed-loop estimator", "rate was in rad/s"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	m := findFloats(t, out, `mode 1: (\S+) Hz \[(\S+), (\S+)\], damping (\S+) \[(\S+), (\S+)\]`)
	if !(m[1] <= modeTruth.modeHz && modeTruth.modeHz <= m[2]) || !(m[4] <= modeTruth.zeta && modeTruth.zeta <= m[5]) {
		t.Errorf("mode %v Hz, damping %v: the truth %g Hz, %g is outside the intervals", m[:3], m[3:], modeTruth.modeHz, modeTruth.zeta)
	}
	if strings.Contains(out, "mode 2:") {
		t.Errorf("a second mode printed for a plant with one:\n%s", out)
	}

	// The notch: on the mode, at least as wide as its interval.
	f, err := airframe.Parse("pasted.toml", []byte(minimalAirframe+out))
	if err != nil {
		t.Fatalf("the output does not parse as an airframe: %v\n%s", err, out)
	}
	fl := f.Axes[0].Filters
	if len(fl) != 1 || fl[0].At != "feedback" {
		t.Fatalf("filters %+v, want one notch on the feedback", fl)
	}
	if math.Abs(fl[0].Hz-m[0]) > 0.5 || fl[0].WidthHz < m[2]-m[1] {
		t.Errorf("notch at %g Hz, %g Hz wide; the mode is at %g Hz [%g, %g]", fl[0].Hz, fl[0].WidthHz, m[0], m[1], m[2])
	}

	// The zpk alternative in place of the physical plant.
	lines := strings.Split(out, "\n")
	var zpk []string
	in := false
	for _, l := range lines {
		switch {
		case l == "# [axes.roll.plant]":
			in = true
		case in && !regexp.MustCompile(`^# (gain|poles|zeros|delay) = `).MatchString(l):
			in = false
		}
		if in {
			zpk = append(zpk, strings.TrimPrefix(l, "# "))
		}
	}
	if len(zpk) != 5 {
		t.Fatalf("zpk block %q, want a header and four keys", zpk)
	}
	phys := regexp.MustCompile(`(?m)^\[axes\.roll\.plant\]\neffectiveness = .*\nmotor_tau = .*\ndelay = .*\n`)
	if len(phys.FindAllString(out, -1)) != 1 {
		t.Fatalf("not one physical plant in\n%s", out)
	}
	src := minimalAirframe + phys.ReplaceAllString(out, strings.Join(zpk, "\n")+"\n")
	fz, err := airframe.Parse("zpk.toml", []byte(src))
	if err != nil {
		t.Fatalf("the zpk plant does not parse: %v\n%s", err, src)
	}
	var pair bool
	for _, p := range fz.Axes[0].Plant.Model.Poles {
		w := cmplx.Abs(p)
		if imag(p) > 0 && math.Abs(w/(2*math.Pi)/m[0]-1) < 1e-4 && math.Abs(-real(p)/w/m[3]-1) < 1e-3 {
			pair = true
		}
	}
	if !pair {
		t.Errorf("zpk poles %v lack the mode's pair (%g Hz, damping %g)", fz.Axes[0].Plant.Model.Poles, m[0], m[3])
	}
	// Against the simulated truth: the zpk plant's delay within a quarter
	// sample (the low-order fit alone, which takes part of the mode's
	// phase for delay, is 1.2 ms off here), and its magnitude at 20, 40
	// and 60 Hz within 5 %.
	if d := fz.Axes[0].Plant.Delay; math.Abs(d-modeTruth.delay) > 0.25e-3 {
		t.Errorf("zpk delay %g s, simulated %g", d, modeTruth.delay)
	}
	for _, hz := range []float64{20, 40, 60} {
		s := complex(0, 2*math.Pi*hz)
		got, want := cmplx.Abs(fz.Axes[0].Plant.Model.Eval(s)), cmplx.Abs(modeTruth.zpk().Eval(s))
		if math.Abs(got/want-1) > 0.05 {
			t.Errorf("|G(j·2π·%g)| of the zpk plant %g, simulated %g", hz, got, want)
		}
	}

	// Without the excitation the same log is estimated by H1, and the
	// output says so and why.
	code, out, errs = runCLI(t, "identify", path)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for _, want := range []string{"open loop, H1 = Puy/Puu", "H1 is biased", "--excitation"} {
		if !strings.Contains(out, want) {
			t.Errorf("output without --excitation lacks %q:\n%s", want, out)
		}
	}
	// --modes 0 turns the section off.
	if _, out, _ := runCLI(t, "identify", "--modes", "0", path); strings.Contains(out, "Frequency response") || strings.Contains(out, "filter") {
		t.Errorf("--modes 0 printed the mode section:\n%s", out)
	}
}

// TestIdentifyNoModeSaysWhy: a plant without a mode gives no mode, no
// notch, and a note on stderr saying why the best candidate was not kept.
func TestIdentifyNoModeSaysWhy(t *testing.T) {
	p := modeTruth
	p.modeHz = 0
	tm, u, y, r := simLog(t, p, 1000, 20000, 0.008, 0.05, 0.02, 2)
	path := writeSimCSV(t, t.TempDir(), "plain.csv", ",", 1, tm, u, y, r)
	code, out, errs := runCLI(t, "identify", "--excitation", "exc", path)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	if strings.Contains(out, "mode 1:") || strings.Contains(out, "[[axes.roll.filter]]") {
		t.Errorf("a mode or a notch for a plant without a mode:\n%s", out)
	}
	if !strings.Contains(errs, "no further") {
		t.Errorf("stderr does not say why no mode was kept:\n%s", errs)
	}
}

// TestIdentifyDegPerSec: the same log written in °/s (rate × 180/π) and
// read with --rate-unit deg/s gives the effectiveness of the rad/s log
// (to the 5 printed digits; the CSV holds 9), echoes the unit, and the
// °/s log read as rad/s gets a warning; the truth is the simulation
// (2400 within 5 %).
func TestIdentifyDegPerSec(t *testing.T) {
	p := modeTruth
	p.modeHz = 0
	tm, u, y, r := simLog(t, p, 1000, 20000, 0.008, 0.05, 0.02, 3)
	dir := t.TempDir()
	rad := writeSimCSV(t, dir, "rad.csv", ",", 1, tm, u, y, r)
	deg := writeSimCSV(t, dir, "deg.csv", ",", 180/math.Pi, tm, u, y, r)
	eff := func(args ...string) (float64, string, string) {
		code, out, errs := runCLI(t, append([]string{"identify", "--modes", "0"}, args...)...)
		if code != exitOK {
			t.Fatalf("%v: exit %d\n%s", args, code, errs)
		}
		return findFloats(t, out, `(?m)^effectiveness = (\S+)$`)[0], out, errs
	}
	er, _, errs := eff(rad)
	if strings.Contains(errs, "warning: the rate") {
		t.Errorf("a rad/s log read as rad/s warned: %s", errs)
	}
	ed, out, errs := eff("--rate-unit", "deg/s", deg)
	if math.Abs(ed/er-1) > 1e-4 || math.Abs(er/2400-1) > 0.05 {
		t.Errorf("effectiveness %g from the °/s log, %g from the rad/s log; simulated 2400", ed, er)
	}
	if !strings.Contains(out, "rate was in deg/s") || strings.Contains(errs, "warning: the rate") {
		t.Errorf("unit not echoed, or a warning for the right unit:\n%s\n%s", out, errs)
	}
	if _, _, errs = eff(deg); !strings.Contains(errs, "is the log in deg/s? (--rate-unit deg/s)") {
		t.Errorf("a °/s log read as rad/s: no warning:\n%s", errs)
	}
}

// TestIdentifyRange: three logs of one axis at different effectiveness
// and motor lag (as at three battery voltages; demo data) → the printed
// nominal plant and envelope parse as an airframe and contain each
// simulated truth, and the per-log estimates are in the comments.
func TestIdentifyRange(t *testing.T) {
	dir := t.TempDir()
	truths := []simPlant{{eff: 2000, tau: 0.025, delay: 0.002}, {eff: 2400, tau: 0.03, delay: 0.002}, {eff: 2800, tau: 0.035, delay: 0.003}}
	args := []string{"identify", "--axis", "roll"}
	for i, p := range truths {
		tm, u, y, r := simLog(t, p, 1000, 15000, 0.008, 0.05, 0.02, uint64(10+i))
		args = append(args, writeSimCSV(t, dir, "log"+strconv.Itoa(i+1)+".csv", ",", 1, tm, u, y, r))
	}
	code, out, errs := runCLI(t, args...)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for i := range truths {
		if !strings.Contains(out, "#   log"+strconv.Itoa(i+1)+".csv: effectiveness ") {
			t.Errorf("no per-log estimate of log%d.csv:\n%s", i+1, out)
		}
	}
	f, err := airframe.Parse("range.toml", []byte(minimalAirframe+out))
	if err != nil {
		t.Fatalf("the range does not parse: %v\n%s", err, out)
	}
	ax := f.Axes[0]
	pl := ax.Plant.Model // eff/tau / (s (s + 1/tau))
	var tau float64
	for _, p := range pl.Poles {
		if p != 0 {
			tau = -1 / real(p)
		}
	}
	eff := pl.Gain * tau
	e := ax.Envelope
	for i, p := range truths {
		if !(eff*e.GainScale[0] <= p.eff && p.eff <= eff*e.GainScale[1]) ||
			!(tau*e.LagScale[0] <= p.tau && p.tau <= tau*e.LagScale[1]) ||
			!(ax.Plant.Delay+e.DelayAdd[0] <= p.delay && p.delay <= ax.Plant.Delay+e.DelayAdd[1]) {
			t.Errorf("log %d: truth %+v outside the envelope: effectiveness %g × %v, motor_tau %g × %v, delay %g + %v",
				i+1, p, eff, e.GainScale, tau, e.LagScale, ax.Plant.Delay, e.DelayAdd)
		}
	}
}

// TestIdentifyModeCoverage: on 10 seeded closed-loop logs (30 s at
// 1 kHz, excitation injected) of invented plants with one frame mode at
// 40 to 130 Hz, damping 0.03 to 0.1, identify finds the mode with the
// simulated truth inside both 95 % intervals in at least 9.
func TestIdentifyModeCoverage(t *testing.T) {
	if testing.Short() {
		t.Skip("10 simulated logs; skipped with -short")
	}
	dir := t.TempDir()
	covered := 0
	for i := range 10 {
		p := modeTruth
		p.modeHz = 40 + 10*float64(i)
		p.zeta = 0.03 + 0.01*float64(i%8)
		tm, u, y, r := simLog(t, p, 1000, 30000, 0.008, 0.05, 0.02, uint64(200+i))
		path := writeSimCSV(t, dir, "m"+strconv.Itoa(i)+".csv", ",", 1, tm, u, y, r)
		code, out, errs := runCLI(t, "identify", "--excitation", "exc", path)
		if code != exitOK {
			t.Fatalf("run %d: exit %d\n%s", i, code, errs)
		}
		if !strings.Contains(out, "mode 1:") {
			t.Logf("run %d (%g Hz, ζ %g): no mode; %s", i, p.modeHz, p.zeta, errs)
			continue
		}
		m := findFloats(t, out, `mode 1: (\S+) Hz \[(\S+), (\S+)\], damping (\S+) \[(\S+), (\S+)\]`)
		if m[1] <= p.modeHz && p.modeHz <= m[2] && m[4] <= p.zeta && p.zeta <= m[5] {
			covered++
		} else {
			t.Logf("run %d: truth %g Hz, ζ %g; printed %v", i, p.modeHz, p.zeta, m)
		}
	}
	if covered < 9 {
		t.Errorf("truth inside the intervals in %d of 10 logs, want at least 9", covered)
	}
}
