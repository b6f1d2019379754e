package review

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
)

// chainPoint is the filter chain's response at one frequency: its
// magnitude in dB and its phase in degrees, NaN where the phase is not
// defined (on a full notch's zero).
type chainPoint struct {
	db, deg float64
}

// tinyGain is the magnitude below which a section is taken to sit on its
// zero: its phase there is the angle of rounding noise, not of the filter.
const tinyGain = 1e-9

// discreteChain returns the response of the sections qs, run at the
// sample period T, at w rad/s: F(e^(jωT)) = Π qₖ(e^(jωT)), as the
// sampled loop's checks see it (discrete.Plant.Filter). The phase is the
// sum of the sections' own phases, each in (−180°, 180°]: a lowpass's lag
// then reads continuously down to −180° per second-order section, and a
// full notch keeps the 180° jump at its centre that its zero on the unit
// circle makes, rather than an unwrapping that would carry it on as a lag.
func discreteChain(qs []lti.Biquad, w, T float64) chainPoint {
	z := lti.Cis(float64(w * T))
	v, ph := complex(1, 0), 0.0
	for _, q := range qs {
		h := q.Eval(z)
		v = lti.Mul(v, h)
		if lti.Abs(h) < tinyGain {
			ph = math.NaN()
		}
		ph += lti.Phase(h)
	}
	return newChainPoint(v, ph)
}

// offPanelDB stands for −∞ dB (a full notch's centre, evaluated exactly
// on its zero): far below any panel, so that the curve is drawn down
// through the panel's floor there rather than broken off above it.
const offPanelDB = -400

// newChainPoint is the point of the response v with phase ph (rad).
func newChainPoint(v complex128, ph float64) chainPoint {
	db := float64(20 * lti.Log10(lti.Abs(v)))
	if math.IsInf(db, -1) {
		db = offPanelDB
	}
	return chainPoint{db: db, deg: float64(ph * (180 / math.Pi))}
}

// continuousChain is discreteChain for the continuous counterparts zs
// (airframe.Filter.ZPK) at s = jω: what the continuous-loop figures use.
func continuousChain(zs []lti.ZPK, w float64) chainPoint {
	s := complex(0, w)
	v, ph := complex(1, 0), 0.0
	for _, k := range zs {
		h := k.Eval(s)
		v = lti.Mul(v, h)
		if lti.Abs(h) < tinyGain {
			ph = math.NaN()
		}
		ph += lti.Phase(h)
	}
	return newChainPoint(v, ph)
}

// chainGrid is the frequency grid of the chain's plot: n points spaced
// evenly in log ω from lo to hi, with the filters' centres and cutoffs
// (ws) put in, so that a partial notch's depth and a lowpass's −3 dB
// point are drawn where they are, not between grid points.
func chainGrid(lo, hi float64, n int, ws []float64) []float64 {
	out := make([]float64, 0, n+len(ws))
	r := hi / lo
	for i := 0; i < n; i++ {
		out = append(out, float64(lo*lti.Pow(r, float64(i)/float64(n-1))))
	}
	out[n-1] = hi
	for _, w := range ws {
		if w > lo && w < hi {
			out = append(out, w)
		}
	}
	slices.Sort(out)
	return slices.Compact(out)
}

// chainPieces returns the polylines of a curve: a point whose value is
// not finite ends a piece, and so does a step of more than jump between
// neighbours (a full notch's phase at its centre), which would otherwise
// be drawn as a vertical stroke no filter has.
func chainPieces(ws, vs []float64, jump float64) []plotter.XYs {
	var out []plotter.XYs
	var cur plotter.XYs
	flush := func() {
		if len(cur) >= 2 {
			out = append(out, cur)
		}
		cur = nil
	}
	for i, w := range ws {
		v := vs[i]
		if !isFinite(v) {
			flush()
			continue
		}
		if n := len(cur); n > 0 && math.Abs(v-cur[n-1].Y) > jump {
			flush()
		}
		cur = append(cur, plotter.XY{X: w, Y: v})
	}
	flush()
	return out
}

// filterOmega is the frequency a filter is marked at: its cutoff or
// centre, in rad/s.
func filterOmega(f airframe.Filter) float64 { return float64(2 * math.Pi * f.Hz) }

// chainFigure draws the feedback filter chain's own magnitude and phase
// from well below the crossover to Nyquist: the discrete sections as the
// sampled loop runs them (the design's coefficients), the continuous
// counterparts as a thin second curve (on to past Nyquist, where the two
// part), the crossover of the nominal sampled loop with the chain's phase
// and gain there, and each filter's centre or cutoff. An axis without a
// chain has no such plot (nil).
func chainFigure(a *plotAxis) (*figure, error) {
	d := a.d
	fs := d.Problem.Filters
	if len(fs) == 0 {
		return nil, nil
	}
	qs := d.Plant.Sections
	if len(qs) != len(fs) {
		return nil, fmt.Errorf("the filter chain has %d sections for %d filters", len(qs), len(fs))
	}
	zs := make([]lti.ZPK, len(fs))
	for i, f := range fs {
		z, err := f.ZPK()
		if err != nil {
			return nil, fmt.Errorf("filter %d: %w", i+1, err)
		}
		zs[i] = z
	}
	T := d.Plant.T
	ny := math.Pi / T
	wc := d.Verif.Margins.Crossover
	hasWc := isFinite(wc) && wc > 0
	low := ny
	if hasWc {
		low = wc
	}
	var marks []float64
	for _, f := range fs {
		w := filterOmega(f)
		marks = append(marks, w)
		low = math.Min(low, w)
	}
	lo := lti.Pow(10, math.Floor(lti.Log10(low/10)))
	xmax := float64(1.3 * ny)
	// The discrete curve stops just short of Nyquist, where a lowpass's
	// Tustin zero at z = −1 sends the magnitude to −∞.
	dws := chainGrid(lo, float64(0.999*ny), 700, append(slices.Clone(marks), wc))
	cws := chainGrid(lo, xmax, 760, append(slices.Clone(marks), wc))
	dDB, dDeg := make([]float64, len(dws)), make([]float64, len(dws))
	for i, w := range dws {
		p := discreteChain(qs, w, T)
		dDB[i], dDeg[i] = p.db, p.deg
	}
	cDB, cDeg := make([]float64, len(cws)), make([]float64, len(cws))
	for i, w := range cws {
		p := continuousChain(zs, w)
		cDB[i], cDeg[i] = p.db, p.deg
	}

	mag := newPlot(fmt.Sprintf("%s: feedback filter chain F", a.name), "", "magnitude (dB)")
	phs := newPlot("", "frequency ω (rad/s)", "phase (deg)")
	for _, pl := range []*plot.Plot{mag, phs} {
		pl.X.Scale = plot.LogScale{}
		pl.X.Tick.Marker = logTicks{}
	}
	discSty := lineStyle(colBlue, 1.8, dashSolid)
	contSty := lineStyle(colVermilion, 0.9, dashLong)
	markSty := lineStyle(colGreen, 1, dashDot)
	xSty := lineStyle(colBlack, 1, dashShort)
	nySty := lineStyle(colGrey, 1, dashFine)
	zero := lineStyle(colGrey, 0.9, dashSolid)

	// The ranges: the magnitude from 0 dB down to the deepest point
	// drawn, at most 60 dB (a full notch's centre and a lowpass near
	// Nyquist go on to −∞); the phase on multiples of 45°.
	magLo, magHi, phLo, phHi := 0.0, 0.0, 0.0, 0.0
	for _, c := range []struct{ db, deg []float64 }{{dDB, dDeg}, {cDB, cDeg}} {
		for i := range c.db {
			if isFinite(c.db[i]) && c.db[i] > offPanelDB {
				magLo, magHi = math.Min(magLo, c.db[i]), math.Max(magHi, c.db[i])
			}
			if isFinite(c.deg[i]) {
				phLo, phHi = math.Min(phLo, c.deg[i]), math.Max(phHi, c.deg[i])
			}
		}
	}
	magLo, magHi = math.Max(magLo, -60)-4, magHi+4
	phLo, phHi = math.Floor(phLo/45)*45-45, math.Ceil(phHi/45)*45+45
	phStep := 45.0
	if phHi-phLo > 540 {
		phStep = 90
	}

	for _, pl := range []*plot.Plot{mag, phs} {
		addLine(pl, plotter.XYs{{X: ny, Y: -1e4}, {X: ny, Y: 1e4}}, nySty)
	}
	addLine(mag, plotter.XYs{{X: lo, Y: 0}, {X: xmax, Y: 0}}, zero)
	addLine(phs, plotter.XYs{{X: lo, Y: 0}, {X: xmax, Y: 0}}, zero)

	f := &figure{rows: 2, cols: 1, panels: []*plot.Plot{mag, phs}, panelH: bodePanelH, hz: map[int]bool{0: true}}
	// Each filter's centre or cutoff, numbered at the foot of the
	// magnitude panel as the legend and the report number them.
	for i, w := range marks {
		ln := plotter.XYs{{X: w, Y: -1e4}, {X: w, Y: 1e4}}
		addLine(mag, ln, markSty)
		addLine(phs, ln, markSty)
		addLabel(mag, w, magLo, fmt.Sprintf("%d", i+1), colGreen, 4, 3)
	}

	// The thin continuous curve over the discrete one, so that it shows
	// where the two agree.
	var cMag, cPh, dMag, dPh []seen
	for _, p := range chainPieces(dws, dDB, math.Inf(1)) {
		addLine(mag, p, discSty)
		dMag = append(dMag, lineIn(0, p))
	}
	for _, p := range chainPieces(dws, dDeg, 90) {
		addLine(phs, p, discSty)
		dPh = append(dPh, lineIn(1, p))
	}
	for _, p := range chainPieces(cws, cDB, math.Inf(1)) {
		addLine(mag, p, contSty)
		cMag = append(cMag, lineIn(0, p))
	}
	for _, p := range chainPieces(cws, cDeg, 90) {
		addLine(phs, p, contSty)
		cPh = append(cPh, lineIn(1, p))
	}
	f.addSeen(append(dMag, dPh...), fmt.Sprintf("discrete chain F(e^(jωT)) at %g Hz, as the code runs it", d.Loop.Hz), thumbLine(discSty))
	f.addSeen(append(cMag, cPh...), "continuous counterparts F(jω)", thumbLine(contSty))

	if hasWc {
		p := discreteChain(qs, wc, T)
		ln := plotter.XYs{{X: wc, Y: -1e4}, {X: wc, Y: 1e4}}
		addLine(mag, ln, xSty)
		addLine(phs, ln, xSty)
		dot := glyph(thickRing{}, colBlack, 3.5)
		addPoints(mag, plotter.XYs{{X: wc, Y: p.db}}, dot)
		addPoints(phs, plotter.XYs{{X: wc, Y: p.deg}}, dot)
		addLabelAlign(phs, wc, p.deg, "∠F = "+degs(p.deg), colBlack, -6, -14, draw.XRight)
		f.addSeen([]seen{lineIn(0, plotter.XYs{{X: wc, Y: magLo}, {X: wc, Y: magHi}})},
			fmt.Sprintf("gain crossover ωc = %s of the sampled loop: |F| = %s, ∠F = %s", radsHz(wc), dbs(p.db), degs(p.deg)), thumbLine(xSty), thumbGlyph(dot))
	}
	for i, w := range marks {
		f.addSeen([]seen{lineIn(0, plotter.XYs{{X: w, Y: magLo}, {X: w, Y: magHi}})},
			fmt.Sprintf("%d: %s, at %s", i+1, fs[i].Describe(), radsHz(w)), thumbLine(markSty))
	}
	f.addSeen([]seen{lineIn(0, plotter.XYs{{X: ny, Y: magLo}, {X: ny, Y: magHi}})}, fmt.Sprintf("Nyquist frequency π/T = %s", radsHz(ny)), thumbLine(nySty))

	// The ranges last: adding a line widens them to its data.
	for _, pl := range []*plot.Plot{mag, phs} {
		pl.X.Min, pl.X.Max = lo, xmax
	}
	mag.Y.Min, mag.Y.Max = magLo, magHi
	phs.Y.Min, phs.Y.Max = phLo, phHi
	phs.Y.Tick.Marker = stepTicks(phStep)
	mag.Title.Padding = vg.Points(6)
	f.note = "The discrete chain is the product of the sections' responses with the design's coefficients (before rounding to the numeric type); its phase is the sum of theirs, so a full notch's phase jumps by 180° at its centre. The continuous counterparts are the analog filters before the Tustin transform (prewarped at each centre and cutoff), which the continuous-loop figures use."
	return f, nil
}

// chainAtCrossover returns the discrete chain's gain (dB) and phase (deg)
// at the crossover of the nominal sampled loop; ok is false without a
// chain or a crossover.
func chainAtCrossover(d *discrete.Design) (db, deg float64, ok bool) {
	wc := d.Verif.Margins.Crossover
	if len(d.Plant.Sections) == 0 || !isFinite(wc) || !(wc > 0) {
		return 0, 0, false
	}
	p := discreteChain(d.Plant.Sections, wc, d.Plant.T)
	return p.db, p.deg, true
}
