package review

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot/plotter"

	"locusmith/internal/pyref"
)

// chainScript computes the filter chain's response in SciPy, from the
// filters' settings, without the project's coefficients: each discrete
// section designed as in filterScript (signal.iirnotch for a full notch,
// signal.butter for a lowpass, signal.bilinear of the prewarped prototype
// for a partial notch), its response by signal.freqz at the plotted
// frequencies; each continuous counterpart as the analog filter
// (signal.butter(..., analog=True) for a lowpass, whose damping is the
// Butterworth 1/√2 here, and (s² + 2ζz·ω0·s + ω0²)/(s² + 2ζp·ω0·s + ω0²)
// with ζp = width/(2·f0), the analog notch whose −3 dB width is width,
// for a notch), its response by signal.freqs. The chain's magnitude is
// that of the product, its phase the sum of the sections' angles (the
// plot's convention: each section's principal phase).
const chainScript = `
import sys, json
import numpy as np
from scipy import signal
d = json.load(sys.stdin)
fs = d["fs"]
def sections(f):
    if f["kind"] == "notch":
        w0 = 2 * np.pi * f["hz"]
        zp = f["width_hz"] / (2 * f["hz"])
        zz = zp * 10 ** (-f["depth_db"] / 20) if f.get("depth_db") else 0.0
        ca = ([1, 2 * zz * w0, w0 * w0], [1, 2 * zp * w0, w0 * w0])
        if not f.get("depth_db"):
            b, a = signal.iirnotch(f["hz"], f["hz"] / f["width_hz"], fs=fs)
        else:
            wp = 2 * fs * np.tan(np.pi * f["hz"] / fs)
            zpd = np.tan(np.pi * f["width_hz"] / fs) / np.sin(2 * np.pi * f["hz"] / fs)
            zzd = zpd * 10 ** (-f["depth_db"] / 20)
            b, a = signal.bilinear([1, 2 * zzd * wp, wp * wp], [1, 2 * zpd * wp, wp * wp], fs=fs)
    else:
        b, a = signal.butter(f["order"], f["hz"], fs=fs)
        ca = signal.butter(f["order"], 2 * np.pi * f["hz"], analog=True)
    return (b, a), ca
def resp(hs):
    h = np.prod(hs, axis=0)
    # -Infinity (a full notch's centre) is not JSON: the floor of -1000
    # dB stands for it, and the check compares only above -100 dB.
    return {"db": list(np.maximum(20 * np.log10(np.abs(h)), -1000)), "deg": list(np.degrees(np.sum(np.angle(hs), axis=0)))}
secs = [sections(f) for f in d["filters"]]
out = {}
for key, ws in (("disc", d["disc"]), ("cont", d["cont"]), ("wc", [d["wc"]])):
    hs = []
    for (b, a), (cb, ca) in secs:
        if key == "cont":
            hs.append(signal.freqs(cb, ca, worN=ws)[1])
        else:
            hs.append(signal.freqz(b, a, worN=np.array(ws) / (2 * np.pi), fs=fs)[1])
    out[key] = resp(np.array(hs))
json.dump(out, sys.stdout)
`

// legendSeen returns the series of the legend entry whose label starts
// with prefix, per panel.
func legendSeen(t *testing.T, f *figure, prefix string) (entry, map[int]plotter.XYs) {
	t.Helper()
	for _, e := range f.legend {
		if strings.HasPrefix(e.label, prefix) {
			pts := map[int]plotter.XYs{}
			for _, s := range e.seen {
				pts[s.panel] = append(pts[s.panel], s.pts...)
			}
			return e, pts
		}
	}
	t.Fatalf("no legend entry %q in %v", prefix, f.legend)
	return entry{}, nil
}

// TestChainPlotAgainstSciPy draws the filter chain of the four-filter
// axis (a full notch, a partial notch, lowpasses of both orders) and holds
// every plotted point of both curves to SciPy 1.10's response of filters
// it designs from the same settings (chainScript): the discrete chain
// from a low frequency to just below Nyquist, the continuous one on to
// past it; and the crossover's figures on the plot and in the report to
// SciPy's chain at the crossover.
func TestChainPlotAgainstSciPy(t *testing.T) {
	a := sharedText(t, "filtered.toml", filtersAirframe)
	x := a.Axes[0]
	d := x.Design
	pa, _ := newPlotAxis(x)
	f, err := chainFigure(pa)
	if err != nil || f == nil {
		t.Fatalf("chain figure: %v", err)
	}
	if _, err := f.svg(); err != nil {
		t.Fatal(err)
	}
	_, disc := legendSeen(t, f, "discrete chain F(e^(jωT))")
	_, cont := legendSeen(t, f, "continuous counterparts F(jω)")
	ny := math.Pi / d.Plant.T
	wc := d.Verif.Margins.Crossover
	type in struct {
		Kind    string  `json:"kind"`
		Hz      float64 `json:"hz"`
		WidthHz float64 `json:"width_hz,omitempty"`
		DepthDB float64 `json:"depth_db,omitempty"`
		Order   int     `json:"order,omitempty"`
	}
	var ins []in
	for _, x := range d.Problem.Filters {
		ins = append(ins, in{string(x.Kind), x.Hz, x.WidthHz, x.DepthDB, x.Order})
	}
	xs := func(pts plotter.XYs) []float64 {
		out := make([]float64, len(pts))
		for i, p := range pts {
			out[i] = p.X
		}
		return out
	}
	// Panel 0 is the magnitude, panel 1 the phase; a full notch's centre
	// splits the phase curve, so the two panels need not hold the same
	// frequencies.
	type curve struct{ DB, Deg []float64 }
	var ref struct {
		Disc, Cont, Wc curve
	}
	req := map[string]any{"fs": d.Loop.Hz, "filters": ins, "wc": wc,
		"disc": append(xs(disc[0]), xs(disc[1])...), "cont": append(xs(cont[0]), xs(cont[1])...)}
	pyref.Run(t, chainScript, req, &ref)
	check := func(name string, pts map[int]plotter.XYs, r curve, top float64) {
		n0 := len(pts[0])
		if n0 < 500 || len(pts[1]) < 500 || len(r.DB) != n0+len(pts[1]) {
			t.Fatalf("%s: %d and %d points plotted, %d from SciPy", name, n0, len(pts[1]), len(r.DB))
		}
		lo, hi := math.Inf(1), 0.0
		worstDB, worstDeg := 0.0, 0.0
		for i, p := range pts[0] {
			lo, hi = math.Min(lo, p.X), math.Max(hi, p.X)
			// Within 1e-6 dB down to −100 dB: both are double-precision
			// evaluations of the same rational function, whose
			// coefficients (the project's and SciPy's designs) agree to
			// about 1e-15; below, the full notch's zero, the difference
			// of two nearly equal numbers, sets the last digits.
			if r.DB[i] > -100 {
				worstDB = math.Max(worstDB, math.Abs(p.Y-r.DB[i]))
			}
		}
		for i, p := range pts[1] {
			// Phase to 1e-6°, a section's angle being computed to about
			// 1e-13° away from its zero.
			worstDeg = math.Max(worstDeg, math.Abs(p.Y-r.Deg[n0+i]))
		}
		if worstDB > 1e-6 || worstDeg > 1e-6 {
			t.Errorf("%s: off SciPy by up to %.3g dB and %.3g°", name, worstDB, worstDeg)
		}
		// From a decade below the crossover and the lowest filter up to
		// the top asked.
		if lo > wc/10 || hi < top {
			t.Errorf("%s: plotted over %g … %g rad/s, want from below %g to %g", name, lo, hi, wc/10, top)
		}
		t.Logf("%s: %d points, %.4g … %.4g rad/s, off SciPy by ≤ %.2g dB, %.2g°", name, n0, lo, hi, worstDB, worstDeg)
	}
	check("discrete", disc, ref.Disc, 0.999*ny)
	check("continuous", cont, ref.Cont, 1.3*ny)

	// The crossover: its legend entry and the report's sentence give
	// SciPy's chain at ωc, to their four digits.
	wantDeg, wantDB := degs(ref.Wc.Deg[0]), dbs(ref.Wc.DB[0])
	e, _ := legendSeen(t, f, "gain crossover ωc")
	if !strings.Contains(e.label, "|F| = "+wantDB+", ∠F = "+wantDeg) {
		t.Errorf("crossover entry %q, SciPy |F| = %s, ∠F = %s", e.label, wantDB, wantDeg)
	}
	if got, want := chainPhase(d), wantDeg+", gain "+wantDB+" (its 4 filters together)"; got != want {
		t.Errorf("report: %q, want %q", got, want)
	}
	// The chain's phase is the sum of the filters' rows in the phase
	// budget (JSON's phase_at_crossover_deg, which TestFilterReportAgainstSciPy
	// holds to SciPy), to the 1e-6° of the check above.
	sum := 0.0
	for _, fr := range jsonFilters(d) {
		sum += *fr.PhaseAtCrossoverDeg
	}
	if math.Abs(sum-ref.Wc.Deg[0]) > 1e-6 {
		t.Errorf("filters' phases sum to %.9g°, SciPy's chain %.9g°", sum, ref.Wc.Deg[0])
	}
	// Each filter is marked at its centre or cutoff, numbered as in the
	// report.
	for i, x := range d.Problem.Filters {
		e, pts := legendSeen(t, f, fmt.Sprintf("%d: %s, at ", i+1, x.Describe()))
		if w := 2 * math.Pi * x.Hz; len(pts[0]) == 0 || math.Abs(pts[0][0].X-w) > 1e-9*w {
			t.Errorf("%s: marked at %v, want %g rad/s", e.label, pts[0], w)
		}
	}
	t.Logf("crossover %.4g rad/s: chain %s, %s", wc, wantDeg, wantDB)
}
