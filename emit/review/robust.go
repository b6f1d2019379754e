package review

import (
	"fmt"
	"image/color"
	"math"
	"math/cmplx"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// The evidence that the design holds where it flies: the setpoint step at
// every plant of the envelope, the load-disturbance step, and the
// sensitivity functions. The responses are the final verification's own
// (discrete.CornerFigures.Y and YD, kept when the design keeps its
// traces), so the plots show the figures the checks were made on.

var (
	// colSky is Okabe–Ito's sky blue, for the plants around the nominal.
	colSky = color.RGBA{0x56, 0xB4, 0xE9, 0xFF}
	// colRange is the shade of the range over the envelope's plants,
	// translucent so that the spec's shading shows through.
	colRange = color.NRGBA{0x00, 0x72, 0xB2, 0x30}

	styleNominal = lineStyle(colBlue, 1.9, dashSolid)
	styleCorner  = lineStyle(colSky, 0.8, dashSolid)
	styleRecover = lineStyle(colVermilion, 1.1, dashLong)
)

// envTrace is one plant's response, scaled.
type envTrace struct {
	c   airframe.Corner
	y   []float64
	box bool // a corner of the envelope's box, drawn as a thin line
}

// envTraces returns the responses get picks (Y or YD) of the plants of
// the final verification, each scaled by k, the nominal plant first; the
// plants whose loop is unstable; and how many stable plants had no trace
// (dropped with the design's traces).
func envTraces(d *discrete.Design, get func(discrete.CornerFigures) []float64, k float64) (ts []envTrace, unstable []airframe.Corner, missing int) {
	box := d.Problem.Envelope.Corners()
	for _, f := range d.Envelope {
		y := get(f)
		switch {
		case !f.Stable:
			unstable = append(unstable, f.Corner)
			continue
		case len(y) < 2:
			missing++
			continue
		}
		s := make([]float64, len(y))
		for i, v := range y {
			s[i] = v * k
		}
		ts = append(ts, envTrace{c: f.Corner, y: s, box: slices.Contains(box, f.Corner)})
	}
	return ts, unstable, missing
}

// rangeBand returns the polygon of the range over the traces, min to
// max at each sample k·h up to end, in time unit u; nil with fewer than
// two traces.
func rangeBand(ts []envTrace, h, end float64, u tunit) plotter.XYs {
	if len(ts) < 2 {
		return nil
	}
	n := len(ts[0].y)
	for _, t := range ts {
		n = min(n, len(t.y))
	}
	var hi, lo plotter.XYs
	for k := 0; k < n; k++ {
		t := float64(k) * h
		if t > end*(1+1e-9) {
			break
		}
		a, b := math.Inf(1), math.Inf(-1)
		for _, tr := range ts {
			if v := tr.y[k]; isFinite(v) {
				a, b = math.Min(a, v), math.Max(b, v)
			}
		}
		if a > b {
			continue
		}
		lo = append(lo, plotter.XY{X: u.scale * t, Y: a})
		hi = append(hi, plotter.XY{X: u.scale * t, Y: b})
	}
	if len(hi) < 2 {
		return nil
	}
	slices.Reverse(lo)
	return append(hi, lo...)
}

// drawEnvelope draws the traces: the range over every plant shaded, the
// corners of the envelope's box as thin lines, the nominal plant (the
// first trace when ts[0] is nominal) bold on top. It adds their legend
// entries to f.
func drawEnvelope(p *plot.Plot, f *figure, ts []envTrace, h, end float64, u tunit) {
	if band := rangeBand(ts, h, end, u); band != nil {
		if poly, err := plotter.NewPolygon(band); err == nil {
			poly.Color = colRange
			poly.LineStyle.Width = 0
			p.Add(poly)
			f.addSeen([]seen{pointsIn(0, band)}, fmt.Sprintf("range over the %d plants verified", len(ts)), thumbFill{colRange, lineStyle(colRange, 0, dashSolid)})
		}
	}
	var corners []seen
	for _, t := range ts {
		if t.box && t.c != airframe.Nominal() {
			pts := sampled(t.y, h*u.scale, end*u.scale)
			addLine(p, pts, styleCorner)
			corners = append(corners, lineIn(0, pts))
		}
	}
	if len(corners) > 0 {
		f.addSeen(corners, fmt.Sprintf("corners of the envelope (%d plants)", len(corners)), thumbLine(styleCorner))
	}
	if len(ts) > 0 && ts[0].c == airframe.Nominal() {
		pts := sampled(ts[0].y, h*u.scale, end*u.scale)
		addLine(p, pts, styleNominal)
		f.addSeen([]seen{lineIn(0, pts)}, "nominal plant", thumbLine(styleNominal))
	}
}

// cornerList names plants, "gain ×0.9; gain ×1.1, lag ×2".
func cornerList(cs []airframe.Corner) string {
	s := ""
	for i, c := range cs {
		if i > 0 {
			s += "; "
		}
		s += mdCorner(c)
	}
	return s
}

// envelopeNote says what the plot leaves out: unstable plants and plants
// without a trace.
func envelopeNote(unstable []airframe.Corner, missing int) string {
	s := ""
	if len(unstable) > 0 {
		s = "Unstable, not drawn: " + cornerList(unstable) + "."
	}
	if missing > 0 {
		if s != "" {
			s += " "
		}
		s += fmt.Sprintf("%s without a recorded response.", plural(missing, "plant"))
	}
	return s
}

// envelopeStepFigure draws the unit setpoint step at every plant of the
// envelope against the spec's overshoot limit and settling band.
func envelopeStepFigure(a *plotAxis) (*figure, error) {
	d := a.d
	if len(d.Envelope) < 2 {
		return nil, nil // the nominal plant only: the step plot shows it
	}
	ts, unstable, missing := envTraces(d, func(f discrete.CornerFigures) []float64 { return f.Y }, 1)
	if len(ts) == 0 {
		return nil, fmt.Errorf("no plant of the envelope has a stable recorded response")
	}
	spec := d.Problem.Spec
	T := d.Plant.T
	var settled []float64
	record := math.Inf(1)
	for _, f := range d.Envelope {
		if f.Stable {
			settled = append(settled, f.Step.Settling)
		}
	}
	for _, t := range ts {
		record = math.Min(record, float64(len(t.y)-1)*T)
	}
	tEnd := stepHorizon(spec.SettlingTime, settled, record)
	final := d.Envelope[0].Step.Final
	if !isFinite(final) || final == 0 {
		final = 1
	}
	tu := timeUnit(tEnd)
	p := newPlot(fmt.Sprintf("%s: unit setpoint step over the plant envelope", a.name), tu.label(), "rate / setpoint (–)")
	sl := drawSpec(p, spec, final, tEnd, tu)
	f := &figure{rows: 1, cols: 1, panels: []*plot.Plot{p}, panelH: stepPanelH}
	drawEnvelope(p, f, ts, T, tEnd, tu)
	addSpecLegend(f, spec, tu, sl)
	ymax, ymin := final*(1+spec.Overshoot), 0.0
	for _, t := range ts {
		for k, v := range t.y {
			if float64(k)*T > tEnd {
				break
			}
			if isFinite(v) {
				ymax, ymin = math.Max(ymax, v), math.Min(ymin, v)
			}
		}
	}
	p.X.Min, p.X.Max = 0, tEnd*tu.scale
	p.Y.Min, p.Y.Max = ymin*1.1, ymax*1.08
	f.note = fmt.Sprintf("Sampled loop at %g Hz with the design's controller at every plant of the final verification (%s).",
		d.Loop.Hz, envelopeText(d.Problem.Envelope))
	if n := envelopeNote(unstable, missing); n != "" {
		f.note += " " + n
	}
	return f, nil
}

// envelopeText writes the envelope's intervals, "gain ×[0.9, 1.1], lag
// ×[1, 1], delay +[0, 0] s".
func envelopeText(e airframe.Envelope) string {
	e = e.Normalized()
	return fmt.Sprintf("gain ×[%s, %s], lag ×[%s, %s], delay +[%s, %s] s",
		g4(e.GainScale[0]), g4(e.GainScale[1]), g4(e.LagScale[0]), g4(e.LagScale[1]), g4(e.DelayAdd[0]), g4(e.DelayAdd[1]))
}

// disturbanceFigure draws the true rate after the spec's load step at the
// plant input, at every plant of the envelope, with the nominal plant's
// 2 % recovery band and recovery time, and the spec's recovery limit.
func disturbanceFigure(a *plotAxis) (*figure, error) {
	d := a.d
	if len(d.Envelope) == 0 {
		return nil, nil
	}
	nom := d.Envelope[0]
	step := nom.Disturbance.Step
	if !(step != 0) || !isFinite(step) {
		return nil, nil
	}
	ts, unstable, missing := envTraces(d, func(f discrete.CornerFigures) []float64 { return f.YD }, step)
	if len(ts) == 0 {
		return nil, fmt.Errorf("no plant of the envelope has a stable recorded load-step response")
	}
	spec := d.Problem.Spec
	T := d.Plant.T
	// The span: the slowest recovery shown and the spec's limit, or twice
	// the settling time for a loop that keeps an offset, within the record;
	// the whole record when an integrator has not recovered within it.
	end := 2 * spec.SettlingTime
	integral := d.Problem.Ctrl.Form.HasIntegral()
	for _, f := range d.Envelope {
		switch r := f.Disturbance.Recovery; {
		case f.Stable && isFinite(r):
			end = math.Max(end, 1.3*r)
		case f.Stable && integral:
			end = math.Inf(1)
		}
	}
	if dr := spec.DisturbanceRecovery; dr > 0 {
		end = math.Max(end, 1.3*dr)
	}
	record := math.Inf(1)
	for _, t := range ts {
		record = math.Min(record, float64(len(t.y)-1)*T)
	}
	end = math.Min(end, record)

	tu := timeUnit(end)
	p := newPlot(fmt.Sprintf("%s: load step of %s at the plant input", a.name, g(step, 4)), tu.label(), "rate deviation (rad/s)")
	f := &figure{rows: 1, cols: 1, panels: []*plot.Plot{p}, panelH: stepPanelH}
	ms := tu.scale
	te := end * ms
	zero := lineStyle(colGrey, 0.9, dashSolid)
	addLine(p, plotter.XYs{{X: 0, Y: 0}, {X: 2 * te, Y: 0}}, zero)
	// The nominal plant's recovery band: within 2 % of its peak.
	band := synth.RecoveryBand * nom.Disturbance.Peak
	if nom.Stable && band > 0 && isFinite(band) {
		if box, err := plotter.NewPolygon(plotter.XYs{{X: 0, Y: -band}, {X: 2 * te, Y: -band}, {X: 2 * te, Y: band}, {X: 0, Y: band}}); err == nil {
			box.Color = colSpecFill
			box.LineStyle.Width = 0
			p.Add(box)
		}
		addLine(p, plotter.XYs{{X: 0, Y: band}, {X: 2 * te, Y: band}}, styleBand)
		addLine(p, plotter.XYs{{X: 0, Y: -band}, {X: 2 * te, Y: -band}}, styleBand)
	}
	drawEnvelope(p, f, ts, T, end, tu)
	ymin, ymax := -2*band, 2*band
	for _, t := range ts {
		for k, v := range t.y {
			if float64(k)*T > end {
				break
			}
			if isFinite(v) {
				ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
			}
		}
	}
	// float64() keeps Go from fusing a multiply-add where a value reaches
	// the SVG (the same bytes on every architecture).
	pad := float64(0.08 * (ymax - ymin))
	if !(pad > 0) {
		pad = 1
	}
	y0, y1 := ymin-pad, ymax+pad
	far := float64(10 * pad)
	if nom.Stable && band > 0 && isFinite(band) {
		f.add(fmt.Sprintf("recovery band ±%s %% of the nominal peak %s rad/s", g(100*synth.RecoveryBand, 3), g(nom.Disturbance.Peak, 4)), thumbFill{colSpecFill, styleBand})
	}
	if r := nom.Disturbance.Recovery; nom.Stable && isFinite(r) {
		pts := plotter.XYs{{X: r * ms, Y: y0 - far}, {X: r * ms, Y: y1 + far}}
		addLine(p, pts, styleRecover)
		f.addSeen([]seen{lineIn(0, pts)}, "nominal recovery "+tu.text(r), thumbLine(styleRecover))
	}
	if dr := spec.DisturbanceRecovery; dr > 0 {
		lim := lineStyle(colLimit, 1.1, dashLong)
		pts := plotter.XYs{{X: dr * ms, Y: y0 - far}, {X: dr * ms, Y: y1 + far}}
		addLine(p, pts, lim)
		f.addSeen([]seen{lineIn(0, pts)}, "spec: recovered by "+tu.text(dr), thumbLine(lim))
	}
	// The ranges last: adding a line widens them to its data.
	p.X.Min, p.X.Max = 0, te
	p.Y.Min, p.Y.Max = y0, y1
	f.note = fmt.Sprintf("A step of %s (command units) added to the command at the plant input, sampled loop at %g Hz; %s.",
		g(step, 4), d.Loop.Hz, disturbanceText(nom, integral))
	if n := envelopeNote(unstable, missing); n != "" {
		f.note += " " + n
	}
	return f, nil
}

// disturbanceText states the nominal plant's load-step figures; integral
// says whether the controller has integral action to remove the offset.
func disturbanceText(n discrete.CornerFigures, integral bool) string {
	if !n.Stable {
		return "the nominal loop is unstable"
	}
	ds := n.Disturbance
	s := fmt.Sprintf("nominal peak %s rad/s, IAE %s rad, ", g(ds.Peak, 4), g(ds.IAE, 4))
	if isFinite(ds.Recovery) {
		return s + "recovered after " + sec(ds.Recovery)
	}
	if integral {
		return s + fmt.Sprintf("not recovered within the record: the deviation ends at %s rad/s", g(ds.Final, 4))
	}
	return s + fmt.Sprintf("not recovered: the deviation ends at %s rad/s (no integral action against a load)", g(ds.Final, 4))
}

// sensitivityFigure draws the sampled loop's sensitivity functions at the
// nominal plant from a low frequency up to Nyquist: |S| = |1/(1 + L)|
// (how disturbances and plant changes pass), |T| = |L/(1 + L)| (how the
// measurement and its noise reach the rate) with the Ms bound, and below
// |C·S|, the gain from measurement noise to the command, with |C| and the
// noise-gain bound.
func sensitivityFigure(a *plotAxis) (*figure, error) {
	d := a.d
	if len(d.Envelope) == 0 || !d.Envelope[0].Stable {
		return nil, fmt.Errorf("the nominal sampled loop is unstable: its sensitivity functions do not describe it")
	}
	ny := math.Pi / d.Plant.T
	wc := d.Verif.Margins.Crossover
	if !isFinite(wc) || !(wc > 0) {
		wc = d.Cont.Target.OmegaN
	}
	lo := math.Pow(10, math.Floor(math.Log10(wc/100)))
	hi := 0.999 * ny
	if !(lo < hi) {
		lo = hi / 1e3
	}
	ws := logGrid(lo, hi, 800)
	sDB, tDB, csDB, cDB, ms, wms, mt, wmt := sensitivityCurves(d, a.dloop, ws)
	db := func(x float64) float64 { return float64(20 * math.Log10(x)) }
	// The peaks as the verification refined them (between grid points).
	if v := d.Envelope[0].Ms; isFinite(v) {
		ms = v
	}
	if v := d.Envelope[0].Mt; isFinite(v) {
		mt = v
	}
	top := newPlot(fmt.Sprintf("%s: sensitivity functions of the sampled loop, nominal plant", a.name), "", "magnitude (dB)")
	bottom := newPlot("", "frequency ω (rad/s)", "command per rad/s (dB)")
	xmax := 1.3 * ny
	for _, pl := range []*plot.Plot{top, bottom} {
		pl.X.Scale = plot.LogScale{}
		pl.X.Tick.Marker = logTicks{}
	}
	sSty := lineStyle(colBlue, 1.8, dashSolid)
	tSty := lineStyle(colVermilion, 1.5, dashLong)
	csSty := lineStyle(colPurple, 1.8, dashSolid)
	cSty := lineStyle(colGrey, 1.1, dashShort)
	nySty := lineStyle(colGrey, 1, dashFine)
	boundSty := lineStyle(colLimit, 1.1, dashDot)
	zero := lineStyle(colGrey, 0.9, dashSolid)
	for _, pl := range []*plot.Plot{top, bottom} {
		addLine(pl, plotter.XYs{{X: ny, Y: -1e4}, {X: ny, Y: 1e4}}, nySty)
	}
	addLine(top, plotter.XYs{{X: lo, Y: 0}, {X: xmax, Y: 0}}, zero)
	f := &figure{rows: 2, cols: 1, panels: []*plot.Plot{top, bottom}, panelH: bodePanelH, hz: map[int]bool{0: true}}
	// The top panel from 60 dB below 0 (a deep |S| at low frequency says
	// only that the integrator works) to above the peaks and the bound.
	tMin, tMax := -60.0, math.Max(db(ms), db(mt))+4
	if b := d.Problem.Spec.MaxSensitivity; b > 0 {
		addLine(top, plotter.XYs{{X: lo, Y: db(b)}, {X: xmax, Y: db(b)}}, boundSty)
		tMax = math.Max(tMax, db(b)+4)
	}
	addLine(top, finiteXYs(ws, tDB), tSty)
	addLine(top, finiteXYs(ws, sDB), sSty)
	peak := glyph(thickRing{}, colBlack, 3.5)
	addPoints(top, plotter.XYs{{X: wms, Y: db(ms)}, {X: wmt, Y: db(mt)}}, peak)
	f.addSeen([]seen{lineIn(0, finiteXYs(ws, sDB))}, fmt.Sprintf("|S| = |1/(1 + L)|, peak Ms = %s at %s", g(ms, 4), radsHz(wms)), thumbLine(sSty))
	f.addSeen([]seen{lineIn(0, finiteXYs(ws, tDB))}, fmt.Sprintf("|T| = |L/(1 + L)|, peak Mt = %s at %s", g(mt, 4), radsHz(wmt)), thumbLine(tSty))
	if b := d.Problem.Spec.MaxSensitivity; b > 0 {
		f.addSeen([]seen{lineIn(0, plotter.XYs{{X: lo, Y: db(b)}, {X: xmax, Y: db(b)}})}, fmt.Sprintf("bound Ms ≤ %s (%s dB)", g(b, 4), g(db(b), 3)), thumbLine(boundSty))
	}
	f.addSeen([]seen{pointsIn(0, plotter.XYs{{X: wms, Y: db(ms)}, {X: wmt, Y: db(mt)}})}, "peaks", thumbGlyph(peak))

	addLine(bottom, finiteXYs(ws, cDB), cSty)
	addLine(bottom, finiteXYs(ws, csDB), csSty)
	csName, cName := "|C·S|, measurement noise → command", "|C|, the controller alone"
	if len(d.Plant.Sections) > 0 {
		csName, cName = "|C·F·S|, measurement noise → command", "|C·F|, the controller behind the filter chain"
	}
	f.addSeen([]seen{lineIn(1, finiteXYs(ws, csDB))}, csName, thumbLine(csSty))
	f.addSeen([]seen{lineIn(1, finiteXYs(ws, cDB))}, fmt.Sprintf("%s: noise gain %s above the crossover", cName, g(d.NoiseGain, 4)), thumbLine(cSty))
	ymin, ymax := math.Inf(1), math.Inf(-1)
	for _, v := range append(slices.Clone(csDB), cDB...) {
		if isFinite(v) {
			ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
		}
	}
	for _, c := range d.Checks {
		if c.Name == "noise_gain" && c.Limit > 0 && isFinite(c.Limit) {
			pts := plotter.XYs{{X: lo, Y: db(c.Limit)}, {X: xmax, Y: db(c.Limit)}}
			addLine(bottom, pts, boundSty)
			f.addSeen([]seen{lineIn(1, pts)}, fmt.Sprintf("noise-gain bound %s", g(c.Limit, 4)), thumbLine(boundSty))
			ymax = math.Max(ymax, db(c.Limit))
		}
	}
	if !isFinite(ymin) {
		ymin, ymax = -40, 0
	}
	// An integrator's climb at low frequency would flatten the rest:
	// at most 60 dB below the top.
	ymin = math.Max(ymin, ymax-60)
	// The ranges last: adding a line widens them to its data.
	for _, pl := range []*plot.Plot{top, bottom} {
		pl.X.Min, pl.X.Max = lo, xmax
	}
	top.Y.Min, top.Y.Max = tMin, tMax
	bottom.Y.Min, bottom.Y.Max = ymin-5, ymax+5
	f.add(fmt.Sprintf("Nyquist frequency π/T = %s", radsHz(ny)), thumbLine(nySty))
	f.note = "1/Ms is the least distance of the loop's Nyquist curve to −1: the bound guarantees a gain margin of at least Ms/(Ms − 1) and a phase margin of at least 2·asin(1/(2·Ms))."
	return f, nil
}

// sensitivityCurves returns, on ws, |S|, |T|, |C·F·S| and |C·F| in dB of
// the nominal sampled loop l of design d (F the filter chain, 1 without
// one), and the peaks of |S| and |T| on the grid with their frequencies.
func sensitivityCurves(d *discrete.Design, l discreteLoop, ws []float64) (sDB, tDB, csDB, cDB []float64, ms, wms, mt, wmt float64) {
	sDB, tDB, csDB, cDB = make([]float64, len(ws)), make([]float64, len(ws)), make([]float64, len(ws)), make([]float64, len(ws))
	db := func(x float64) float64 { return float64(20 * math.Log10(x)) }
	for i, w := range ws {
		L := l.at(w)
		sn, cs := math.Sincos(w * l.T)
		z := complex(cs, sn)
		// Measurement noise passes the filter chain before the
		// controller: the noise gain is |C·F| (NoiseGain), and noise
		// reaches the command through C·F·S.
		C := l.ctrl.Num.Eval(z) / l.ctrl.Den.Eval(z) * d.Plant.Filter(z)
		S := 1 / (1 + L)
		sv, tv := cmplx.Abs(S), cmplx.Abs(L*S)
		sDB[i], tDB[i], csDB[i], cDB[i] = db(sv), db(tv), db(cmplx.Abs(C*S)), db(cmplx.Abs(C))
		if sv > ms {
			ms, wms = sv, w
		}
		if tv > mt {
			mt, wmt = tv, w
		}
	}
	return sDB, tDB, csDB, cDB, ms, wms, mt, wmt
}
