package review

import (
	"math"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/pyref"
)

// filtersAirframe is an invented axis (demo data) with a full notch, a
// partial notch and lowpasses of both orders in its feedback chain.
const filtersAirframe = `airframe = "filtered"
description = "demo data: invented axis with a feedback filter chain"
loop_hz = 1000.0
[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = 0.002
[axes.roll.sensor]
lowpass_hz = 100.0
[axes.roll.spec]
settling_time = 0.15
overshoot = 0.10
[axes.roll.control]
output_limit = [-0.5, 0.5]
[[axes.roll.filter]]
kind = "notch"
hz = 118.0
width_hz = 30.0
[[axes.roll.filter]]
kind = "lowpass"
hz = 180.0
[[axes.roll.filter]]
kind = "lowpass"
hz = 300.0
order = 1
[[axes.roll.filter]]
kind = "notch"
hz = 60.0
width_hz = 12.0
depth_db = 15.0
`

// filterScript designs each filter in SciPy: signal.iirnotch (Q =
// centre/width) for a full notch, signal.butter for the lowpasses, and
// for the partial notch the bilinear transform (signal.bilinear with
// fs, after prewarping the analog prototype's centre, ω0 = 2·fs·tan(π·f0/fs))
// of (s² + 2ζz·ω0·s + ω0²)/(s² + 2ζp·ω0·s + ω0²) with ζp from the
// discrete width (the full notch's, the same poles: ζp = tan(π·w/fs) /
// sin(2π·f0/fs)) and ζz = ζp·10^(−depth/20); then the phase of each at
// the crossover by signal.freqz.
const filterScript = `
import sys, json
import numpy as np
from scipy import signal
d = json.load(sys.stdin)
fs = d["fs"]
out = []
for f in d["filters"]:
    if f["kind"] == "notch" and not f.get("depth_db"):
        b, a = signal.iirnotch(f["hz"], f["hz"] / f["width_hz"], fs=fs)
    elif f["kind"] == "notch":
        w0 = 2 * fs * np.tan(np.pi * f["hz"] / fs)
        zp = np.tan(np.pi * f["width_hz"] / fs) / np.sin(2 * np.pi * f["hz"] / fs)
        zz = zp * 10 ** (-f["depth_db"] / 20)
        b, a = signal.bilinear([1, 2 * zz * w0, w0 * w0], [1, 2 * zp * w0, w0 * w0], fs=fs)
    else:
        b, a = signal.butter(f["order"], f["hz"], fs=fs)
    b, a = np.concatenate([b / a[0], np.zeros(3 - len(b))]), np.concatenate([a / a[0], np.zeros(3 - len(a))])
    _, h = signal.freqz(b, a, worN=[d["wc"] / (2 * np.pi)], fs=fs)
    out.append({"b": list(b), "a": list(a), "phase": float(np.degrees(np.angle(h[0])))})
json.dump(out, sys.stdout)
`

// TestFilterReportAgainstSciPy checks the JSON report's filter list: the
// settings as given (defaults applied), the coefficients against SciPy
// 1.10's own designs and the phase at the crossover against its freqz.
func TestFilterReportAgainstSciPy(t *testing.T) {
	f, err := airframe.Parse("filtered.toml", []byte(filtersAirframe))
	if err != nil {
		t.Fatal(err)
	}
	a := discrete.DesignAirframe(f)
	r := JSON([]*discrete.Airframe{a}).Airframes[0].Axes[0]
	if r.Error != "" {
		t.Fatal(r.Error)
	}
	fs := r.Filters
	if len(fs) != 4 || fs[0].Kind != "notch" || fs[1].Order != 2 || fs[1].Damping == nil || fs[2].Order != 1 || fs[2].Damping != nil ||
		fs[0].DepthDB != nil || fs[3].DepthDB == nil || *fs[3].DepthDB != 15 || fs[0].WidthHz == nil || fs[1].WidthHz != nil {
		t.Fatalf("filters %+v", fs)
	}
	wc := *r.Discrete.Crossover
	type in struct {
		Kind    string  `json:"kind"`
		Hz      float64 `json:"hz"`
		WidthHz float64 `json:"width_hz,omitempty"`
		DepthDB float64 `json:"depth_db,omitempty"`
		Order   int     `json:"order,omitempty"`
	}
	var ins []in
	for _, x := range f.Axes[0].Filters {
		ins = append(ins, in{string(x.Kind), x.Hz, x.WidthHz, x.DepthDB, x.Order})
	}
	var ref []struct {
		B, A  []float64
		Phase float64
	}
	pyref.Run(t, filterScript, map[string]any{"fs": 1000.0, "wc": wc, "filters": ins}, &ref)
	for i, x := range fs {
		// Coefficients: the report's 10 significant digits against
		// SciPy's double-precision design (5e-10 of the largest).
		for j := 0; j < 3; j++ {
			if math.Abs(x.B[j]-ref[i].B[j]) > 5e-10*2 || math.Abs(x.A[j]-ref[i].A[j]) > 5e-10*2 {
				t.Errorf("filter %d: b %v a %v, SciPy b %v a %v", i+1, x.B, x.A, ref[i].B, ref[i].A)
				break
			}
		}
		// Phase: 10 digits of a value of a few degrees; 1e-7 degree
		// covers the rounding of the crossover itself.
		if x.PhaseAtCrossoverDeg == nil || math.Abs(*x.PhaseAtCrossoverDeg-ref[i].Phase) > 1e-7 {
			t.Errorf("filter %d: phase at the crossover %v°, SciPy %g°", i+1, x.PhaseAtCrossoverDeg, ref[i].Phase)
		}
	}
	t.Logf("crossover %.4g rad/s; phases %.3g°, %.3g°, %.3g°, %.3g°", wc, ref[0].Phase, ref[1].Phase, ref[2].Phase, ref[3].Phase)
	// The table lists the same filters with the same phases (four
	// digits), and the review's phase budget has a row per filter.
	var b strings.Builder
	if err := WriteTable(&b, a); err != nil {
		t.Fatal(err)
	}
	for i, x := range f.Axes[0].Filters {
		want := x.Describe() + ": phase " + tabDeg(*fs[i].PhaseAtCrossoverDeg) + " at the crossover"
		if !strings.Contains(b.String(), want) {
			t.Errorf("table lacks %q:\n%s", want, b.String())
		}
	}
	rows, _ := phaseBudget(a.Axes[0].Design)
	n := 0
	for _, r := range rows {
		if strings.HasPrefix(r.Name, "feedback filter ") {
			n++
		}
	}
	if n != 4 {
		t.Errorf("phase budget has %d filter rows, want 4: %v", n, rows)
	}
}

// TestDerivativeFilterReport: derivative filters follow the feedback chain
// in the JSON's filter list with "at": "derivative", their coefficients
// and phase against SciPy 1.10's own designs (filterScript), the
// coefficient table has their rows (D1_B0 …), and the text table lists
// them.
func TestDerivativeFilterReport(t *testing.T) {
	src := strings.SplitN(filtersAirframe, "[[axes.roll.filter]]", 2)[0] + `[[axes.roll.filter]]
kind = "lowpass"
hz = 180.0
[[axes.roll.filter]]
kind = "lowpass"
at = "derivative"
hz = 70.0
[[axes.roll.filter]]
kind = "notch"
at = "derivative"
hz = 160.0
width_hz = 40.0
depth_db = 10.0
`
	f, err := airframe.Parse("dfiltered.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	a := discrete.DesignAirframe(f)
	r := JSON([]*discrete.Airframe{a}).Airframes[0].Axes[0]
	if r.Error != "" {
		t.Fatal(r.Error)
	}
	fs := r.Filters
	if len(fs) != 3 || fs[0].At != "feedback" || fs[1].At != "derivative" || fs[2].At != "derivative" || fs[1].Order != 2 || fs[2].DepthDB == nil {
		t.Fatalf("filters %+v", fs)
	}
	wc := *r.Discrete.Crossover
	ins := []map[string]any{{"kind": "lowpass", "hz": 180.0, "order": 2}, {"kind": "lowpass", "hz": 70.0, "order": 2},
		{"kind": "notch", "hz": 160.0, "width_hz": 40.0, "depth_db": 10.0}}
	var ref []struct {
		B, A  []float64
		Phase float64
	}
	pyref.Run(t, filterScript, map[string]any{"fs": 1000.0, "wc": wc, "filters": ins}, &ref)
	for i, x := range fs {
		// As TestFilterReportAgainstSciPy: 10 digits against double
		// precision, and the phase to 1e-7 degree.
		for j := 0; j < 3; j++ {
			if math.Abs(x.B[j]-ref[i].B[j]) > 5e-10*2 || math.Abs(x.A[j]-ref[i].A[j]) > 5e-10*2 {
				t.Errorf("filter %d: b %v a %v, SciPy b %v a %v", i+1, x.B, x.A, ref[i].B, ref[i].A)
				break
			}
		}
		if x.PhaseAtCrossoverDeg == nil || math.Abs(*x.PhaseAtCrossoverDeg-ref[i].Phase) > 1e-7 {
			t.Errorf("filter %d: phase at the crossover %v°, SciPy %g°", i+1, x.PhaseAtCrossoverDeg, ref[i].Phase)
		}
	}
	names := map[string]bool{}
	for _, c := range r.Numeric.Coefficients {
		names[c.Name] = true
	}
	for _, n := range []string{"D1_B0", "D1_A2", "D2_B2", "D2_A1"} {
		if !names[n] {
			t.Errorf("coefficient %s missing: %v", n, names)
		}
	}
	var b strings.Builder
	if err := WriteTable(&b, a); err != nil {
		t.Fatal(err)
	}
	if want := "D2. " + f.Axes[0].Ctrl.DerivativeFilters[1].Describe() + ", on the derivative: phase"; !strings.Contains(b.String(), want) {
		t.Errorf("table lacks %q:\n%s", want, b.String())
	}
	// The review names them in the controller's description and lists
	// their coefficients in the table of the difference equations, as
	// the JSON gives them (held to SciPy above).
	pg, _ := model(a)
	ax := pg.Axes[0]
	for _, df := range f.Axes[0].Ctrl.DerivativeFilters {
		if !strings.Contains(ax.Controller, df.Describe()) {
			t.Errorf("the controller's description lacks %q: %s", df.Describe(), ax.Controller)
		}
	}
	rows := map[string]string{}
	for _, row := range ax.Coeffs {
		rows[row.Name] = row.Value
	}
	for i, x := range fs {
		c := []string{"F1_", "D1_", "D2_"}[i]
		for j, name := range []string{"B0", "B1", "B2"} {
			if got, want := rows[c+name], g(x.B[j], 7); got != want {
				t.Errorf("review row %s%s = %q, JSON %q", c, name, got, want)
			}
		}
		for j, name := range []string{"A1", "A2"} {
			if got, want := rows[c+name], g(x.A[j+1], 7); got != want {
				t.Errorf("review row %s%s = %q, JSON %q", c, name, got, want)
			}
		}
	}
}
