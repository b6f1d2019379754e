package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/internal/lti"
)

// TestIdentifyDesignEmitFlies is the whole job on a plant with a frame
// mode: a simulated closed-loop log of modeTruth (a 60 Hz mode, damping
// 0.05, demo data) → identify (the zpk plant with the mode, and the
// notch it suggests) → an airframe of those sections and a PID spec →
// emit (float32 C) → the emitted controller compiled with the host's C
// compiler and run, sample by sample, around the true plant (its exact
// zero-order-hold equivalent with the transport delay and one sample of
// compute delay, lti.ZOHDelay, checked against SciPy in internal/lti):
// the true rate's unit step meets the spec's overshoot and settling time
// (lti.StepMetrics, the definitions of the design's checks). The outside
// reference is the simulated plant itself, never seen by the design but
// through the log.
func TestIdentifyDesignEmitFlies(t *testing.T) {
	cc, err := exec.LookPath("gcc")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("gcc is required under CI")
		}
		t.Skip("gcc not found")
	}
	const fs = 1000.0
	tm, u, y, r := simLog(t, modeTruth, fs, 30000, 0.008, 0.05, 0.02, 1)
	dir := t.TempDir()
	path := writeSimCSV(t, dir, "frame.csv", ",", 1, tm, u, y, r)
	code, out, errs := runCLI(t, "identify", "--excitation", "exc", path)
	if code != exitOK {
		t.Fatalf("identify: exit %d\n%s", code, errs)
	}

	// The airframe: the identified zpk plant (with the mode) in place of
	// the physical one, the suggested notch, and the spec.
	var zpk []string
	in := false
	for _, l := range strings.Split(out, "\n") {
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
	phys := regexp.MustCompile(`(?m)^\[axes\.roll\.plant\]\neffectiveness = .*\nmotor_tau = .*\ndelay = .*\n`)
	if len(zpk) != 5 || len(phys.FindAllString(out, -1)) != 1 {
		t.Fatalf("identify printed no zpk plant with the mode, or not one physical plant:\n%s", out)
	}
	if !strings.Contains(out, "[[axes.roll.filter]]") {
		t.Fatalf("identify suggested no notch:\n%s", out)
	}
	const spec = `airframe = "sim"
description = "demo data: invented airframe with a frame mode, identified from a simulated log"
loop_hz = 1000.0
compute_delay = 1

[numeric]
type = "float32"

[axes.roll.spec]
settling_time = 0.2
overshoot = 0.1
min_phase_margin = 40.0

[axes.roll.control]
form = "pid"
output_limit = [-0.5, 0.5]

`
	src := spec + phys.ReplaceAllString(out, strings.Join(zpk, "\n")+"\n")
	af := filepath.Join(dir, "sim.toml")
	if err := os.WriteFile(af, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	gen := filepath.Join(dir, "gen")
	if code, _, errs := runCLI(t, "emit", "-o", gen, af); code != exitOK {
		t.Fatalf("emit: exit %d\n%s\n%s", code, errs, src)
	}

	// The true plant, sampled: x[k+1] = A x[k] + B u[k − D], y = C x.
	ss, err := modeTruth.zpk().CascadeSS()
	if err != nil {
		t.Fatal(err)
	}
	whole, frac := lti.SplitDelay(modeTruth.delay, 1/fs)
	dd, err := lti.ZOHDelay(ss, 1/fs, frac)
	if err != nil {
		t.Fatal(err)
	}
	arr := func(v []float64) string {
		var b strings.Builder
		for i, x := range v {
			if i > 0 {
				b.WriteString(", ")
			}
			b.WriteString(strconv.FormatFloat(x, 'g', 17, 64))
		}
		return b.String()
	}
	const steps = 1000
	harness := fmt.Sprintf(`#include <stdio.h>
#include "sim_rate.h"
#define N %d
#define D %d /* the plant's whole samples of delay and one of compute delay */
static const double A[N*N] = {%s};
static const double B[N] = {%s};
static const double C[N] = {%s};
int main(void) {
	double x[N] = {0}, nx[N];
	float hist[D + 1] = {0};
	sim_roll_state s;
	sim_roll_reset(&s, 0.0f, 0.0f);
	for (int k = 0; k < %d; k++) {
		double yv = 0;
		for (int i = 0; i < N; i++) yv += C[i] * x[i];
		printf("%%.17g\n", yv);
		float u = sim_roll_step(&s, 1.0f, (float)yv);
		for (int j = D; j > 0; j--) hist[j] = hist[j-1];
		hist[0] = u;
		for (int i = 0; i < N; i++) {
			double v = B[i] * hist[D];
			for (int j = 0; j < N; j++) v += A[i*N+j] * x[j];
			nx[i] = v;
		}
		for (int i = 0; i < N; i++) x[i] = nx[i];
	}
	return 0;
}
`, dd.N, whole+1, arr(dd.A), arr(dd.B), arr(dd.C), steps)
	if err := os.WriteFile(filepath.Join(gen, "harness.c"), []byte(harness), 0o644); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "fly")
	if msg, err := exec.Command(cc, "-std=c99", "-O2", "-Wall", "-I", gen, "-o", bin,
		filepath.Join(gen, "harness.c"), filepath.Join(gen, "sim_rate.c"), "-lm").CombinedOutput(); err != nil {
		t.Fatalf("compile: %v\n%s", err, msg)
	}
	res, err := exec.Command(bin).Output()
	if err != nil {
		t.Fatalf("run: %v", err)
	}
	var yt []float64
	for _, l := range strings.Fields(string(res)) {
		v, err := strconv.ParseFloat(l, 64)
		if err != nil {
			t.Fatal(err)
		}
		yt = append(yt, v)
	}
	st := lti.StepMetrics(yt, 1/fs, 1, 0.02)
	t.Logf("true plant, emitted controller: overshoot %.3g %%, settling %.4g s", 100*st.Overshoot, st.Settling)
	if !(st.Overshoot <= 0.1) || !(st.Settling <= 0.2) || !st.Settled {
		t.Errorf("the emitted controller on the true plant: overshoot %.3g %%, settling %.4g s (settled %v); the spec: 10 %%, 0.2 s\n%s",
			100*st.Overshoot, st.Settling, st.Settled, src)
	}
}
