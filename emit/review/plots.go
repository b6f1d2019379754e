package review

import (
	"cmp"
	"fmt"
	"image/color"
	"math"
	"math/cmplx"
	"slices"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// LocusGainMax is how far the root locus scales the designed controller:
// k from 0 to 10 times the design gain, which shows where the branches go
// past the design (towards instability, for a loop with delay).
const LocusGainMax = 10

// diamondGlyph is a hollow diamond, the marker of the target pole.
type diamondGlyph struct{}

func (diamondGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: vg.Points(1.6)})
	r := sty.Radius * 1.3
	var p vg.Path
	p.Move(vg.Point{X: pt.X, Y: pt.Y + r})
	p.Line(vg.Point{X: pt.X + r, Y: pt.Y})
	p.Line(vg.Point{X: pt.X, Y: pt.Y - r})
	p.Line(vg.Point{X: pt.X - r, Y: pt.Y})
	p.Close()
	c.Stroke(p)
}

// designGlyph is a filled square with a dark rim, the marker of the
// designed closed-loop poles: it must stand out from the open-loop poles
// and zeros and from the shaded guide behind it.
type designGlyph struct{}

func (designGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	r := sty.Radius
	sq := vg.Rectangle{Min: vg.Point{X: pt.X - r, Y: pt.Y - r}, Max: vg.Point{X: pt.X + r, Y: pt.Y + r}}
	c.SetColor(sty.Color)
	c.Fill(sq.Path())
	c.SetLineStyle(draw.LineStyle{Color: colBlack, Width: vg.Points(0.9)})
	c.Stroke(sq.Path())
}

// thickCross and thickRing are the × and ○ of the pole-zero convention,
// drawn bolder than gonum's, so they read at review size.
type thickCross struct{}

func (thickCross) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: vg.Points(1.6)})
	r := sty.Radius * 0.85
	var p vg.Path
	p.Move(vg.Point{X: pt.X - r, Y: pt.Y - r})
	p.Line(vg.Point{X: pt.X + r, Y: pt.Y + r})
	c.Stroke(p)
	var q vg.Path
	q.Move(vg.Point{X: pt.X - r, Y: pt.Y + r})
	q.Line(vg.Point{X: pt.X + r, Y: pt.Y - r})
	c.Stroke(q)
}

type thickRing struct{}

func (thickRing) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: vg.Points(1.6)})
	var p vg.Path
	p.Move(vg.Point{X: pt.X + sty.Radius, Y: pt.Y})
	p.Arc(pt, sty.Radius, 0, 2*math.Pi)
	p.Close()
	c.Stroke(p)
}

// Marker styles shared by the pole-zero pictures.
var (
	glyphPole      = glyph(thickCross{}, colBlack, 4.5)
	glyphZero      = glyph(thickRing{}, colBlack, 4)
	glyphPadePole  = glyph(thickCross{}, colGrey, 4)
	glyphPadeZero  = glyph(thickRing{}, colGrey, 3.5)
	glyphDesign    = glyph(designGlyph{}, colVermilion, 3.6)
	glyphTarget    = glyph(diamondGlyph{}, colGreen, 5)
	styleBranch    = lineStyle(colBlue, 1.5, dashSolid)
	styleAsymptote = lineStyle(colGrey, 0.9, dashShort)
	styleSpecEdge  = lineStyle(colSpecEdge, 1.1, dashLong)
)

// plotAxis holds what the plots of one axis need.
type plotAxis struct {
	name   string
	d      *discrete.Design
	locus  *synth.Locus // nil when it could not be computed
	specT  synth.Target // the spec's textbook target: the shaded region
	dloop  discreteLoop
	zmap   *zMap
	fixedY []float64 // fixed-point step over its amplitude at the samples, when available
	fixedA float64   // its amplitude
}

// window is an axis range of a plot.
type window struct{ x0, x1, y0, y1 float64 }

// fitAspect widens w so that one unit is as long on both axes for a data
// area of the given size (points): angles then read true, which the
// damping wedge needs.
//
// The y range grows about its centre; the x range about its centre too,
// or, with left, only to the left, into the stable half plane, where there
// is more to see than to the right.
func fitAspect(w window, dataW, dataH float64, left bool) window {
	sx, sy := w.x1-w.x0, w.y1-w.y0
	if !(dataW > 0 && dataH > 0 && sx > 0 && sy > 0) {
		return w
	}
	if sx/sy > dataW/dataH {
		ny := sx * dataH / dataW
		c := (w.y0 + w.y1) / 2
		w.y0, w.y1 = c-ny/2, c+ny/2
	} else if nx := sy * dataW / dataH; left {
		w.x0 = w.x1 - nx
	} else {
		c := (w.x0 + w.x1) / 2
		w.x0, w.x1 = c-nx/2, c+nx/2
	}
	return w
}

func (w window) apply(p *plot.Plot) {
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = w.x0, w.x1, w.y0, w.y1
}

// specRegion returns the polygon of the s-plane where a pole pair meets
// the spec's target: damping at least ζ (inside the wedge of half-angle
// acos ζ about the negative real axis) and decay rate at least σ (left of
// Re s = −σ), reaching out to x = far (< −σ).
func specRegion(t synth.Target, far float64) plotter.XYs {
	tan := math.Sqrt(1-t.Zeta*t.Zeta) / t.Zeta
	s := t.Sigma
	return plotter.XYs{{X: -s, Y: s * tan}, {X: far, Y: -far * tan}, {X: far, Y: far * tan}, {X: -s, Y: -s * tan}}
}

// locusFigure draws the root locus. wide shows every open-loop pole and
// zero; otherwise the window is the neighbourhood of the target, where the
// placement is decided.
func locusFigure(a *plotAxis, wide bool) (*figure, error) {
	l := a.locus
	c := a.d.Cont
	tg := c.Target
	design := c.Verif.Poles
	title := fmt.Sprintf("%s: root locus near the target", a.name)
	if wide {
		title = fmt.Sprintf("%s: root locus, all open-loop poles and zeros", a.name)
	}
	// One unit on both axes: a pole at s = −σ + jω decays at σ and
	// turns at ω, both in rad/s, and the plot keeps them at one scale.
	p := newPlot(title, "Re s (rad/s)", "Im s (rad/s)")

	// The window.
	var w window
	if wide {
		// Every open-loop pole and zero, the design's poles and the
		// locus's ends.
		x0, x1, y := -1.5*cmplx.Abs(tg.Pole), 0.0, 1.5*cmplx.Abs(tg.Pole)
		for _, set := range [][]complex128{l.Poles, l.Zeros, design, l.At(len(l.Gains) - 1)} {
			for _, z := range set {
				x0, x1, y = math.Min(x0, real(z)), math.Max(x1, real(z)), math.Max(y, math.Abs(imag(z)))
			}
		}
		m := 0.08 * math.Max(x1-x0, 2*y)
		w = window{x0 - m, x1 + m, -y - m, y + m}
	} else {
		r := 1.6 * cmplx.Abs(tg.Pole)
		// The corners of the spec region, so that the wedge shows.
		r = math.Max(r, 1.25*math.Hypot(a.specT.Sigma, a.specT.Sigma*math.Sqrt(1-a.specT.Zeta*a.specT.Zeta)/a.specT.Zeta))
		for _, z := range design {
			if cmplx.Abs(z) < 2.5*cmplx.Abs(tg.Pole) {
				r = math.Max(r, 1.15*cmplx.Abs(z))
			}
		}
		w = window{-1.5 * r, 0.3 * r, -1.05 * r, 1.05 * r}
	}

	// The second-order guide, behind everything.
	guide := specRegion(a.specT, w.x0-10*(w.x1-w.x0))
	region, err := plotter.NewPolygon(guide)
	if err == nil {
		region.Color = colSpecFill
		region.LineStyle = styleSpecEdge
		p.Add(region)
	}
	// Axes through the origin.
	axisSty := lineStyle(colGrey, 0.8, dashSolid)
	addLine(p, plotter.XYs{{X: w.x0, Y: 0}, {X: w.x1, Y: 0}}, axisSty)
	addLine(p, plotter.XYs{{X: 0, Y: w.y0}, {X: 0, Y: w.y1}}, axisSty)

	var asym []seen
	if wide {
		if cen, angs, ok := l.Asymptotes(); ok {
			far := 4 * (w.x1 - w.x0)
			for _, ang := range angs {
				th := ang * math.Pi / 180
				pts := plotter.XYs{{X: cen, Y: 0}, {X: cen + far*math.Cos(th), Y: far * math.Sin(th)}}
				addLine(p, pts, styleAsymptote)
				asym = append(asym, lineIn(0, pts))
			}
		}
	}
	var branches []seen
	for _, piece := range locusPieces(l.Branches, w) {
		pts := thinPath(piece, w)
		addLine(p, pts, styleBranch)
		branches = append(branches, lineIn(0, pts))
	}
	// Open-loop poles and zeros: the approximant's in grey.
	pade := padeRoots(a.d.Problem, l)
	var ps, zs, pps, pzs plotter.XYs
	for _, z := range l.Poles {
		if pade.isPole(z) {
			pps = append(pps, xy(z))
		} else {
			ps = append(ps, xy(z))
		}
	}
	for _, z := range l.Zeros {
		if pade.isZero(z) {
			pzs = append(pzs, xy(z))
		} else {
			zs = append(zs, xy(z))
		}
	}
	var dp plotter.XYs
	for _, z := range design {
		dp = append(dp, xy(z))
	}
	// The target first: the placement puts closed-loop poles on it, and
	// the filled squares then show inside the hollow diamonds. The
	// open-loop poles and zeros last: where a closed-loop pole sits on
	// one (a fast pole the loop hardly moves), the × or ○ shows on the
	// square.
	tgPts := plotter.XYs{xy(tg.Pole), xy(cmplx.Conj(tg.Pole))}
	addPoints(p, tgPts, glyphTarget)
	addPoints(p, dp, glyphDesign)
	addPoints(p, pps, glyphPadePole)
	addPoints(p, pzs, glyphPadeZero)
	addPoints(p, ps, glyphPole)
	addPoints(p, zs, glyphZero)
	if !wide {
		addLabel(p, real(tg.Pole), imag(tg.Pole), "s*", colGreen, 9, 5)
	}
	w.apply(p)

	f := &figure{rows: 1, cols: 1, panels: []*plot.Plot{p}, panelH: locusPanelH, equal: map[int]bool{0: true}}
	f.addSeen(branches, fmt.Sprintf("root locus, k = 0 … %g × design gain", l.KMax), thumbLine(styleBranch))
	f.addSeen([]seen{pointsIn(0, dp)}, "designed closed-loop poles (k = 1)", thumbGlyph(glyphDesign))
	f.addSeen([]seen{pointsIn(0, ps)}, "open-loop pole", thumbGlyph(glyphPole))
	f.addSeen([]seen{pointsIn(0, zs)}, "open-loop zero", thumbGlyph(glyphZero))
	f.addSeen([]seen{pointsIn(0, pps)}, "pole of the delay's Padé approximant", thumbGlyph(glyphPadePole))
	f.addSeen([]seen{pointsIn(0, pzs)}, "zero of the delay's Padé approximant", thumbGlyph(glyphPadeZero))
	f.addSeen([]seen{pointsIn(0, tgPts)}, fmt.Sprintf("textbook target s* = %s", fmtC(tg.Pole, 4)), thumbGlyph(glyphTarget))
	f.addSeen([]seen{lineIn(0, append(guide, guide[0]))}, fmt.Sprintf("second-order guide: ζ ≥ %.3g, σ ≥ %.4g rad/s", a.specT.Zeta, a.specT.Sigma), thumbFill{colSpecFill, styleSpecEdge})
	f.addSeen(asym, "asymptotes", thumbLine(styleAsymptote))
	f.note = guideNote + " The gain k scales the whole controller (zeros and poles fixed)."
	if l.PadeOrder > 0 {
		f.note += fmt.Sprintf(" The delay e^(−%gs) enters by its (%d,%d) Padé approximant.", a.d.Problem.Plant.Delay, l.PadeOrder, l.PadeOrder)
	}
	return f, nil
}

// guideNote says what the shaded region of the pole-zero plots is, so
// that a design with poles outside it is not read as failing.
const guideNote = "The shaded second-order guide is where a lone pole pair would meet the overshoot and settling limits (the textbook region), not a pass/fail bound: the design is judged by its checks on the sampled loop over the plant envelope, so its poles may sit outside the guide."

const (
	locusPanelH = 4.6 * vg.Inch
	stepPanelH  = 3.6 * vg.Inch
	bodePanelH  = 2.5 * vg.Inch
	satPanelH   = 2.5 * vg.Inch
	zPanelH     = 3.2 * vg.Inch
)

func xy(z complex128) plotter.XY { return plotter.XY{X: real(z), Y: imag(z)} }

// locusGrid is the resolution the locus is drawn at, as a fraction of the
// window: 1/4096 of a 6.5-inch figure is a tenth of a point.
const locusGrid = 4096

// locusPieces returns the root-locus branches as the pieces a reader
// sees, in an order that depends on nothing but their points, so that the
// SVG is the same on every CPU.
//
// Where two branches meet on the real axis (a break-in or breakaway
// point), the roots move like √(k − k₀), and which branch continues
// along which way depends on the last bits of the roots, which differ
// between CPUs (eigenvalues, fused multiply-adds): the same picture, but
// drawn as other polylines. So each point is rounded to 1/locusGrid of
// the window (a difference in the last digits of a root then does not
// reach the drawing), each branch is cut where it leaves or joins the
// real axis as drawn (a root within half a grid step of it is on it), a
// complex piece is ended on the axis at its own real part (the meeting
// point, to within a step of the tracking), and the pieces are sorted by
// their points.
func locusPieces(branches [][]complex128, w window) []plotter.XYs {
	gx, gy := (w.x1-w.x0)/locusGrid, (w.y1-w.y0)/locusGrid
	var pieces []plotter.XYs
	for _, br := range branches {
		var cur plotter.XYs
		prevOn := false
		for i, z := range br {
			if !isFinite(real(z)) || !isFinite(imag(z)) {
				continue
			}
			pt := plotter.XY{X: snapTo(real(z), gx), Y: snapTo(imag(z), gy)}
			onAxis := pt.Y == 0
			if i > 0 && len(cur) > 0 && prevOn != onAxis {
				if !onAxis {
					// Leaving the axis: the complex piece starts on it.
					pieces = appendPiece(pieces, cur)
					cur = plotter.XYs{{X: pt.X, Y: 0}}
				} else {
					// Joining it: the complex piece ends on it.
					cur = append(cur, plotter.XY{X: cur[len(cur)-1].X, Y: 0})
					pieces = appendPiece(pieces, cur)
					cur = nil
				}
			}
			cur = append(cur, pt)
			prevOn = onAxis
		}
		pieces = appendPiece(pieces, cur)
	}
	slices.SortFunc(pieces, comparePieces)
	return pieces
}

// appendPiece adds a piece of two points or more.
func appendPiece(pieces []plotter.XYs, p plotter.XYs) []plotter.XYs {
	if len(p) < 2 {
		return pieces
	}
	return append(pieces, p)
}

// comparePieces orders polylines by their points, x before y, then by
// length.
func comparePieces(a, b plotter.XYs) int {
	for i := 0; i < len(a) && i < len(b); i++ {
		if c := cmp.Compare(a[i].X, b[i].X); c != 0 {
			return c
		}
		if c := cmp.Compare(a[i].Y, b[i].Y); c != 0 {
			return c
		}
	}
	return cmp.Compare(len(a), len(b))
}

// snapTo rounds x to a multiple of the grid step g (x itself when g is
// not a positive finite number). A difference between two CPUs in the
// last bits of x then changes the result only when x lies within that
// difference of a half step, and the product is one IEEE operation,
// the same everywhere.
func snapTo(x, g float64) float64 {
	if !(g > 0) || math.IsInf(g, 0) {
		return x
	}
	return float64(math.Round(x/g) * g)
}

// thinPath drops points that are closer than 1/1500 of the window to the
// last point kept (and the runs far outside it), which keeps the SVG small
// without a visible change.
func thinPath(pts plotter.XYs, w window) plotter.XYs {
	if len(pts) < 3 {
		return pts
	}
	dx, dy := (w.x1-w.x0)/1500, (w.y1-w.y0)/1500
	out := plotter.XYs{pts[0]}
	for i := 1; i < len(pts)-1; i++ {
		q, last := pts[i], out[len(out)-1]
		if math.Abs(q.X-last.X) < dx && math.Abs(q.Y-last.Y) < dy {
			continue
		}
		out = append(out, q)
	}
	return append(out, pts[len(pts)-1])
}

// padeSet recognizes the approximant's poles and zeros among the loop's.
type padeSet struct{ poles, zeros []complex128 }

func padeRoots(p airframe.Axis, l *synth.Locus) padeSet {
	var s padeSet
	if l.PadeOrder == 0 {
		return s
	}
	pd := lti.Pade(p.Plant.Delay, l.PadeOrder)
	s.poles, _ = pd.Den.Roots()
	s.zeros, _ = pd.Num.Roots()
	return s
}

func near(a, b []complex128, z complex128) bool {
	for _, r := range a {
		if cmplx.Abs(r-z) <= 1e-6*math.Max(1, cmplx.Abs(z)) {
			return true
		}
	}
	return false
}

func (s padeSet) isPole(z complex128) bool { return near(s.poles, nil, z) }
func (s padeSet) isZero(z complex128) bool { return near(s.zeros, nil, z) }

// fmtC formats a complex number with n significant digits.
func fmtC(z complex128, n int) string {
	re, im := real(z), imag(z)
	if im == 0 {
		return g(re, n)
	}
	sign := "+"
	if im < 0 {
		sign, im = "−", -im
	}
	return fmt.Sprintf("%s %s %sj", g(re, n), sign, g(im, n))
}

// g formats x with n significant digits, a true minus sign and a short
// exponent (2e9, 1.5e−5); −0 is written 0.
func g(x float64, n int) string {
	if x == 0 {
		return "0"
	}
	s := strconv.FormatFloat(x, 'g', n, 64)
	if i := strings.IndexByte(s, 'e'); i >= 0 {
		mant, exp := s[:i], s[i+1:]
		neg := exp[0] == '-'
		exp = strings.TrimLeft(exp[1:], "0")
		if neg {
			exp = "-" + exp
		}
		s = mant + "e" + exp
	}
	return strings.ReplaceAll(s, "-", "−")
}

// --- step responses -------------------------------------------------------

// stepFigure draws the unit-step responses: continuous (the full-order
// loop), discrete at the samples, fixed point where used; with the spec's
// overshoot limit and settling band.
func stepFigure(a *plotAxis) (*figure, error) {
	d := a.d
	cv, dv := d.Cont.Verif, d.Verif
	spec := d.Problem.Spec
	T := d.Plant.T
	tEnd := stepHorizon(spec.SettlingTime, []float64{cv.Step.Settling, dv.Step.Settling}, math.Min(float64(len(cv.Y)-1)*cv.H, float64(len(dv.Y)-1)*T))
	tu := timeUnit(tEnd)
	p := newPlot(fmt.Sprintf("%s: response to a unit rate-setpoint step", a.name), tu.label(), "rate / setpoint (–)")
	final := dv.Step.Final
	if !isFinite(final) || final == 0 {
		final = 1
	}
	ymax := 1.0
	for _, y := range [][]float64{cv.Y, dv.Y, a.fixedY} {
		for _, v := range y {
			if isFinite(v) {
				ymax = math.Max(ymax, v)
			}
		}
	}
	ymax = math.Max(ymax, final*(1+spec.Overshoot)) * 1.08
	f := &figure{rows: 1, cols: 1, panels: []*plot.Plot{p}, panelH: stepPanelH}
	sl := drawSpec(p, spec, final, tEnd, tu)

	contPts := sampled(cv.Y, cv.H*tu.scale, tEnd*tu.scale)
	contSty := lineStyle(colBlue, 1.8, dashSolid)
	addLine(p, contPts, contSty)
	discPts := sampled(dv.Y, T*tu.scale, tEnd*tu.scale)
	discSty := lineStyle(colVermilion, 1.2, dashLong)
	every := markEvery(len(discPts), 90)
	discGlyph := glyph(draw.CircleGlyph{}, colVermilion, 1.9)
	addLine(p, discPts, discSty)
	addPoints(p, every.pick(discPts), discGlyph)
	f.addSeen([]seen{lineIn(0, contPts)}, "continuous (full order)", thumbLine(contSty))
	f.addSeen([]seen{lineIn(0, discPts)}, every.label(fmt.Sprintf("discrete at %g Hz", d.Loop.Hz)), thumbLine(discSty), thumbGlyph(discGlyph))
	if len(a.fixedY) > 0 {
		fixPts := sampled(a.fixedY, T*tu.scale, tEnd*tu.scale)
		fixSty := lineStyle(colGreen, 1.1, dashFine)
		fixGlyph := glyph(draw.TriangleGlyph{}, colGreen, 2.3)
		fe := markEvery(len(fixPts), 45)
		addLine(p, fixPts, fixSty)
		addPoints(p, fe.pick(fixPts), fixGlyph)
		f.addSeen([]seen{lineIn(0, fixPts)}, fe.label(fmt.Sprintf("%s integer controller, step of %s", d.Numeric.Type, g(a.fixedA, 3))), thumbLine(fixSty), thumbGlyph(fixGlyph))
	}
	addSpecLegend(f, spec, tu, sl)
	p.X.Min, p.X.Max = 0, tEnd*tu.scale
	p.Y.Min, p.Y.Max = 0, ymax
	if lo := minOf(cv.Y, dv.Y); lo < 0 {
		p.Y.Min = lo * 1.1
	}
	return f, nil
}

// tunit is the unit of a time axis: the factor from seconds and its name.
type tunit struct {
	scale float64
	name  string
}

// timeUnit picks the unit of a time axis from its span (s), so that the
// labels are small numbers: µs below 2 ms, ms below 2 s, s from there on
// (common practice: a 6 s record reads 0–6 s, not 0–6000 ms).
func timeUnit(span float64) tunit {
	switch {
	case span < 2e-3:
		return tunit{1e6, "µs"}
	case span < 2:
		return tunit{1e3, "ms"}
	}
	return tunit{1, "s"}
}

func (u tunit) label() string { return "time (" + u.name + ")" }

// text writes a time t (s) in the unit, four significant digits.
func (u tunit) text(t float64) string { return g(float64(t*u.scale), 4) + " " + u.name }

// stepHorizon is the time span of a step plot: twice the spec's settling
// time, or 1.3 times the slowest settling shown, within the record.
func stepHorizon(ts float64, settled []float64, record float64) float64 {
	t := 2 * ts
	for _, s := range settled {
		if isFinite(s) {
			t = math.Max(t, 1.3*s)
		}
	}
	if record > 0 {
		t = math.Min(t, record)
	}
	return t
}

func minOf(ys ...[]float64) float64 {
	m := 0.0
	for _, y := range ys {
		for _, v := range y {
			if isFinite(v) {
				m = math.Min(m, v)
			}
		}
	}
	return m
}

// sampled returns the points (k·h, y[k]) with k·h ≤ end.
func sampled(y []float64, h, end float64) plotter.XYs {
	out := make(plotter.XYs, 0, len(y))
	for k, v := range y {
		t := float64(k) * h
		if t > end*(1+1e-9) {
			break
		}
		if isFinite(v) {
			out = append(out, plotter.XY{X: t, Y: v})
		}
	}
	return out
}

// markStride marks every n-th sample when there are too many to tell
// apart, and says so in the legend.
type markStride int

func markEvery(n, most int) markStride {
	if n <= most {
		return 1
	}
	return markStride((n + most - 1) / most)
}

func (m markStride) pick(pts plotter.XYs) plotter.XYs {
	out := make(plotter.XYs, 0, len(pts)/int(m)+1)
	for i := 0; i < len(pts); i += int(m) {
		out = append(out, pts[i])
	}
	return out
}

func (m markStride) label(s string) string {
	switch m {
	case 1:
		return s + ", every sample marked"
	case 2:
		return s + ", every 2nd sample marked"
	case 3:
		return s + ", every 3rd sample marked"
	}
	return fmt.Sprintf("%s, every %dth sample marked", s, int(m))
}

var (
	// The overshoot limit and the output limits are both limits, drawn
	// in the limit colour; the overshoot limit dash-dotted, the output
	// limits double-dashed and heavier, so the two never read as one.
	styleOvershoot = lineStyle(colLimit, 1.1, dashDot)
	styleOutLimit  = lineStyle(colBlack, 1.4, []vg.Length{vg.Points(9), vg.Points(2.5), vg.Points(2.5), vg.Points(2.5), vg.Points(2.5), vg.Points(2.5)})
	styleBand      = lineStyle(colSpecEdge, 0.9, dashShort)
	styleTs        = lineStyle(colSpecEdge, 1.1, dashLong)
)

// specLines are the spec's lines drawn on a step panel, for the legend.
type specLines struct {
	panel     int
	band, ts  plotter.XYs
	overshoot plotter.XYs
}

// drawSpec draws the spec on a step plot in time unit u: the overshoot
// limit, and the settling band from the spec's settling time on (shaded:
// where the response must stay).
func drawSpec(p *plot.Plot, s airframe.Spec, final, tEnd float64, u tunit) specLines {
	ts := s.SettlingTime * u.scale
	te := tEnd * u.scale
	hi, lo := final*(1+s.Band), final*(1-s.Band)
	if box, err := plotter.NewPolygon(plotter.XYs{{X: ts, Y: lo}, {X: te * 2, Y: lo}, {X: te * 2, Y: hi}, {X: ts, Y: hi}}); err == nil {
		box.Color = colSpecFill
		box.LineStyle.Width = 0
		p.Add(box)
	}
	var sl specLines
	sl.band = plotter.XYs{{X: 0, Y: hi}, {X: te * 2, Y: hi}}
	addLine(p, sl.band, styleBand)
	addLine(p, plotter.XYs{{X: 0, Y: lo}, {X: te * 2, Y: lo}}, styleBand)
	sl.ts = plotter.XYs{{X: ts, Y: -10}, {X: ts, Y: 10 * (1 + final)}}
	addLine(p, sl.ts, styleTs)
	ov := final * (1 + s.Overshoot)
	sl.overshoot = plotter.XYs{{X: 0, Y: ov}, {X: te * 2, Y: ov}}
	addLine(p, sl.overshoot, styleOvershoot)
	return sl
}

func addSpecLegend(f *figure, s airframe.Spec, u tunit, sl specLines) {
	f.addSeen([]seen{lineIn(sl.panel, sl.overshoot)}, fmt.Sprintf("overshoot limit %s %%", g(100*s.Overshoot, 3)), thumbLine(styleOvershoot))
	f.addSeen([]seen{lineIn(sl.panel, sl.band), lineIn(sl.panel, sl.ts)}, fmt.Sprintf("settling band ±%s %% after %s", g(100*s.Band, 3), u.text(s.SettlingTime)), thumbFill{colSpecFill, styleBand}, thumbLine(styleTs))
}

// saturatedFigure draws the large step that saturates the command, with
// the configured anti-windup and without, normalized by the step
// amplitude, and the commands against the output limits. When no step the
// loop can hold reaches the limits (discrete.Saturated.Reached), it draws
// the one response and says so: there is no windup, so no comparison.
func saturatedFigure(a *plotAxis) (*figure, error) {
	d := a.d
	s := d.Verif.Saturated
	if !(s.Amplitude > 0) || len(s.Y) == 0 {
		return nil, nil
	}
	spec := d.Problem.Spec
	T := d.Plant.T
	integral := d.Problem.Ctrl.Form.HasIntegral()
	compare := integral && s.Reached && len(s.YNone) > 0
	tEnd := stepHorizon(spec.SettlingTime, []float64{s.Recovery, s.RecoveryNone}, float64(len(s.Y)-1)*T)
	if compare && !s.SettledNone || !s.Settled {
		// A response that does not recover is shown to the end of the
		// record, where the failure is plain.
		tEnd = float64(len(s.Y)-1) * T
	}
	tu := timeUnit(tEnd)
	aw := "anti-windup " + string(s.AntiWindup)
	if !integral {
		aw = "no integrator"
	}
	title := fmt.Sprintf("%s: saturating step (setpoint %s), %s", a.name, g(s.Amplitude, 4), aw)
	if !s.Reached {
		title = fmt.Sprintf("%s: largest step tried (setpoint %s) stays within the output limits", a.name, g(s.Amplitude, 4))
	}
	top := newPlot(title, "", "rate / setpoint (–)")
	final := s.Amplitude * d.Verif.Step.Final
	if !isFinite(final) || final == 0 {
		final = s.Amplitude
	}
	norm := func(y []float64) []float64 {
		out := make([]float64, len(y))
		for i, v := range y {
			out[i] = v / s.Amplitude
		}
		return out
	}
	f := &figure{rows: 2, cols: 1, panels: nil, panelH: satPanelH}
	sl := drawSpec(top, spec, final/s.Amplitude, tEnd, tu)
	awSty := lineStyle(colPurple, 1.8, dashSolid)
	noneSty := lineStyle(colOrange, 1.6, dashShort)
	var yNone, uNone plotter.XYs
	if compare {
		yNone = sampled(norm(s.YNone), T*tu.scale, tEnd*tu.scale)
		addLine(top, yNone, noneSty)
	}
	yAW := sampled(norm(s.Y), T*tu.scale, tEnd*tu.scale)
	addLine(top, yAW, awSty)
	bottom := newPlot("", tu.label(), "command u (–)")
	k := d.Coeffs
	hiLine := plotter.XYs{{X: 0, Y: k.Hi}, {X: tEnd * tu.scale * 2, Y: k.Hi}}
	loLine := plotter.XYs{{X: 0, Y: k.Lo}, {X: tEnd * tu.scale * 2, Y: k.Lo}}
	addLine(bottom, hiLine, styleOutLimit)
	addLine(bottom, loLine, styleOutLimit)
	if compare {
		uNone = sampled(s.UNone, T*tu.scale, tEnd*tu.scale)
		addLine(bottom, uNone, noneSty)
	}
	uAW := sampled(s.U, T*tu.scale, tEnd*tu.scale)
	addLine(bottom, uAW, awSty)
	ymax := 1 + spec.Overshoot
	ys := [][]float64{s.Y}
	if compare {
		ys = append(ys, s.YNone)
	}
	for _, y := range ys {
		for _, v := range y {
			if isFinite(v) {
				ymax = math.Max(ymax, v/s.Amplitude)
			}
		}
	}
	for _, pl := range []*plot.Plot{top, bottom} {
		pl.X.Min, pl.X.Max = 0, tEnd*tu.scale
	}
	lo := minOf(norm(s.Y))
	if compare {
		lo = math.Min(lo, minOf(norm(s.YNone)))
	}
	top.Y.Min, top.Y.Max = math.Min(0, lo*1.1), ymax*1.08
	span := k.Hi - k.Lo
	bottom.Y.Min, bottom.Y.Max = k.Lo-0.12*span, k.Hi+0.12*span
	f.panels = []*plot.Plot{top, bottom}
	switch {
	case compare:
		f.addSeen([]seen{lineIn(0, yAW), lineIn(1, uAW)}, fmt.Sprintf("with anti-windup (%s)", s.AntiWindup), thumbLine(awSty))
		f.addSeen([]seen{lineIn(0, yNone), lineIn(1, uNone)}, "without anti-windup", thumbLine(noneSty))
	case integral:
		f.addSeen([]seen{lineIn(0, yAW), lineIn(1, uAW)}, fmt.Sprintf("%s, anti-windup %s (not engaged)", d.Problem.Ctrl.Form, s.AntiWindup), thumbLine(awSty))
	default:
		f.addSeen([]seen{lineIn(0, yAW), lineIn(1, uAW)}, fmt.Sprintf("%s (no integrator to wind up)", d.Problem.Ctrl.Form), thumbLine(awSty))
	}
	f.addSeen([]seen{lineIn(1, hiLine), lineIn(1, loLine)}, fmt.Sprintf("output limits [%s, %s]", g(k.Lo, 4), g(k.Hi, 4)), thumbLine(styleOutLimit))
	addSpecLegend(f, spec, tu, sl)
	f.note = saturatedNote(d)
	if !s.Reached {
		f.caption = "Largest setpoint step tried (the output limits are not reached)"
	}
	return f, nil
}

// saturatedNote says what the saturating step shows: the step and why
// that size, whether it reached the limits, and whether it recovered.
func saturatedNote(d *discrete.Design) string {
	s, k := d.Verif.Saturated, d.Coeffs
	peak := s.Amplitude * s.LinearPeakCommand
	lim := fmt.Sprintf("[%s, %s]", g(k.Lo, 4), g(k.Hi, 4))
	var held string
	switch {
	case s.LimitedByFullScale:
		held = "the input full scale"
	case s.LimitedByReach:
		held = "90 % of the rate the integrator limit can hold"
	default:
		held = "the step the linear loop would follow only with twice the output limit"
	}
	if !s.Reached {
		return fmt.Sprintf("The output limits cannot be reached: the largest setpoint step tried, %s (%s), commands a peak of %s against the limits %s. There is no windup to show, so no anti-windup comparison is drawn. Discrete nonlinear controller at %g Hz.",
			g(s.Amplitude, 4), held, g(peak, 3), lim, d.Loop.Hz)
	}
	note := fmt.Sprintf("Discrete nonlinear controller at %g Hz. For this setpoint step of %s the linear loop would command a peak of %s against the limits %s.",
		d.Loop.Hz, g(s.Amplitude, 4), g(peak, 3), lim)
	switch {
	case s.LimitedByFullScale:
		note += " The step is held to the input full scale."
	case s.LimitedByReach:
		note += " The step is held to what the integrator limit can hold."
	}
	if !s.Settled {
		note += " The response with anti-windup does not recover within the record: the saturated-step check fails."
	} else if d.Problem.Ctrl.Form.HasIntegral() && !s.SettledNone {
		note += " Without anti-windup the response does not recover within the record."
	}
	return note
}

// --- frequency response ---------------------------------------------------

// bodeFigure draws the loop frequency response, continuous (exact delay)
// and discrete (up to Nyquist), with the crossover and both margins.
func bodeFigure(a *plotAxis) (*figure, error) {
	d := a.d
	cm, dm := d.Cont.Verif.Margins, d.Verif.Margins
	ny := math.Pi / d.Plant.T
	wc := cm.Crossover
	if !isFinite(wc) {
		wc = d.Cont.Target.OmegaN
	}
	lo := math.Pow(10, math.Floor(math.Log10(wc/100)))
	hi := math.Pow(10, math.Ceil(math.Log10(math.Max(3*ny, 100*wc))))
	ws := logGrid(lo, hi, 700)
	cl := contLoop(d.Problem, d.Cont.Ctrl)
	cv := make([]complex128, len(ws))
	for i, w := range ws {
		cv[i] = cl(w)
	}
	// The discrete response up to just below Nyquist: at π/T itself a
	// Tustin zero at z = −1 makes the phase jump.
	var dws []float64
	for _, w := range ws {
		if w < 0.995*ny {
			dws = append(dws, w)
		}
	}
	dws = append(dws, 0.995*ny)
	dvs := make([]complex128, len(dws))
	for i, w := range dws {
		dvs[i] = a.dloop.at(w)
	}
	start := lowPhase(ws, cv)
	cph, dph := unwrapDeg(cv, start), unwrapDeg(dvs, start)

	mag := newPlot(fmt.Sprintf("%s: loop frequency response L(jω) = C·G·H", a.name), "", "magnitude (dB)")
	mag.Title.Padding = vg.Points(6)
	phs := newPlot("", "frequency ω (rad/s)", "phase (deg)")
	for _, pl := range []*plot.Plot{mag, phs} {
		pl.X.Scale = plot.LogScale{}
		pl.X.Tick.Marker = logTicks{}
		pl.X.Min, pl.X.Max = lo, hi
	}
	db := func(vs []complex128) []float64 {
		out := make([]float64, len(vs))
		for i, v := range vs {
			out[i] = 20 * math.Log10(cmplx.Abs(v))
		}
		return out
	}
	cdb, ddb := db(cv), db(dvs)
	contSty := lineStyle(colBlue, 1.8, dashSolid)
	discSty := lineStyle(colVermilion, 1.5, dashLong)
	zero := lineStyle(colGrey, 0.9, dashSolid)
	addLine(mag, plotter.XYs{{X: lo, Y: 0}, {X: hi, Y: 0}}, zero)
	nySty := lineStyle(colGrey, 1, dashFine)
	for _, pl := range []*plot.Plot{mag, phs} {
		addLine(pl, plotter.XYs{{X: ny, Y: -1e4}, {X: ny, Y: 1e4}}, nySty)
	}
	addLine(mag, finiteXYs(ws, cdb), contSty)
	addLine(mag, finiteXYs(dws, ddb), discSty)

	// Magnitude range: from the margins' neighbourhood, clipped to ±80 dB
	// around 0 so that an integrator's low-frequency climb does not
	// flatten the crossover region.
	ymin, ymax := 0.0, 0.0
	for _, v := range append(append([]float64(nil), cdb...), ddb...) {
		if isFinite(v) {
			ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
		}
	}
	mag.Y.Min, mag.Y.Max = math.Max(ymin, -80)-5, math.Min(ymax, 80)+5
	magLo, magHi := mag.Y.Min, mag.Y.Max
	defer func() { mag.Y.Min, mag.Y.Max = magLo, magHi }()

	// The phase range: what matters is the crossover, where the phase
	// margin is read, and the −180° line it is read against; a quarter
	// turn beyond either, in steps of 45°, and never more than a turn and
	// a half (a delay's phase runs on without bound; the curve leaves the
	// panel there).
	crit := -180.0
	if ph, ok := crossPhase(cm, cl, cph, ws); ok {
		crit = -180 + 360*math.Round((ph+180)/360)
	}
	plo, phi := phaseRange(crit, []float64{phaseAt(cm, cl, cph, ws), phaseAt(dm, a.dloop.at, dph, dws)})
	critSty := lineStyle(colGrey, 0.9, dashSolid)
	for q := math.Ceil((plo + 180) / 360); -180+360*q <= phi; q++ {
		addLine(phs, plotter.XYs{{X: lo, Y: -180 + 360*q}, {X: hi, Y: -180 + 360*q}}, critSty)
	}
	cphPts, dphPts := finiteXYs(ws, cph), finiteXYs(dws, dph)
	addLine(phs, cphPts, contSty)
	addLine(phs, dphPts, discSty)
	phs.Y.Min, phs.Y.Max = plo, phi
	phs.Y.Tick.Marker = stepTicks(45)

	// Margins: the crossover, the phase margin at it and the gain margin
	// at the phase crossover, as bars from the curve to the critical
	// line, each with its value written beside it.
	// The bars are thick, solid for the continuous loop and finely dashed
	// for the discrete one, so that the two tell apart in greyscale.
	pmSty := func(c draw.LineStyle) draw.LineStyle {
		c.Width = vg.Points(2.6)
		if c.Dashes != nil {
			c.Dashes = []vg.Length{vg.Points(2), vg.Points(1.5)}
		}
		return c
	}
	xSty := func(c color.Color) draw.LineStyle { return lineStyle(c, 1, dashShort) }
	var xSeen, pmSeen, gmSeen []seen
	var xThumbs, barThumbs []plot.Thumbnailer
	gmShown := false
	type gmLabel struct {
		w float64
		s string
		c color.Color
	}
	var gmAt []gmLabel
	for i, m := range []struct {
		mg  marginsView
		sty draw.LineStyle
	}{
		{marginsView{cm, cl, cph, ws}, contSty},
		{marginsView{dm, a.dloop.at, dph, dws}, discSty},
	} {
		mk := m.mg
		if w := mk.m.Crossover; isFinite(w) && w > lo && w < hi {
			xl := plotter.XYs{{X: w, Y: mag.Y.Min}, {X: w, Y: mag.Y.Max}}
			addLine(mag, xl, xSty(m.sty.Color))
			xSeen = append(xSeen, lineIn(0, xl))
			xThumbs = append(xThumbs, thumbLine(xSty(m.sty.Color)))
			ph := unwrapAt(mk.L(w), mk.ph, mk.ws, w)
			critLine := -180 + 360*math.Round((ph+180)/360)
			bar := plotter.XYs{{X: w, Y: critLine}, {X: w, Y: ph}}
			addLine(phs, bar, pmSty(m.sty))
			pmSeen = append(pmSeen, lineIn(1, bar))
			// Below the critical line, right of the bar, where the curve
			// is not (it is above the line up to the crossover).
			addLabel(phs, w, critLine, "PM "+degs(mk.m.PhaseDeg), m.sty.Color, 6, -14-13*float64(i))
		}
		if w := mk.m.PhaseCrossover; isFinite(w) && w > lo && w < hi && isFinite(mk.m.GainDB) {
			gdb := 20 * math.Log10(cmplx.Abs(mk.L(w)))
			bar := plotter.XYs{{X: w, Y: gdb}, {X: w, Y: 0}}
			addLine(mag, bar, pmSty(m.sty))
			gmSeen = append(gmSeen, lineIn(0, bar))
			gmShown = true
			gmAt = append(gmAt, gmLabel{w, "GM " + dbs(mk.m.GainDB), m.sty.Color})
		}
		barThumbs = append(barThumbs, thumbLine(pmSty(m.sty)))
	}
	// The gain margins right of the rightmost bar, one over the other
	// above the 0 dB line: past the phase crossover the curves are below
	// −GM, so the labels stand clear of them.
	xr := 0.0
	for _, l := range gmAt {
		xr = math.Max(xr, l.w)
	}
	for i, l := range gmAt {
		addLabel(mag, xr, 0, l.s, l.c, 6, 4+13*float64(len(gmAt)-1-i))
	}
	f := &figure{rows: 2, cols: 1, panels: []*plot.Plot{mag, phs}, panelH: bodePanelH, hz: map[int]bool{0: true}}
	f.addSeen([]seen{lineIn(0, finiteXYs(ws, cdb)), lineIn(1, cphPts)}, "continuous, exact delay: "+marginText(cm), thumbLine(contSty))
	f.addSeen([]seen{lineIn(0, finiteXYs(dws, ddb)), lineIn(1, dphPts)}, fmt.Sprintf("discrete at %g Hz with compute delay: %s", d.Loop.Hz, marginText(dm)), thumbLine(discSty))
	if len(xSeen) > 0 {
		f.addSeen(xSeen, "gain crossover ωc (|L| = 0 dB), continuous and discrete", xThumbs...)
	}
	bars := "bars: phase margin at the crossover"
	if gmShown {
		bars += ", gain margin at the phase crossover"
	}
	f.addSeen(append(pmSeen, gmSeen...), bars, barThumbs...)
	// The labels and bars must not widen the ranges set above.
	phs.Y.Min, phs.Y.Max = plo, phi
	for _, pl := range []*plot.Plot{mag, phs} {
		pl.X.Min, pl.X.Max = lo, hi
	}
	nyPts := plotter.XYs{{X: ny, Y: -1e4}, {X: ny, Y: 1e4}}
	f.addSeen([]seen{lineIn(0, nyPts)}, fmt.Sprintf("Nyquist frequency π/T = %s", radsHz(ny)), thumbLine(nySty))
	return f, nil
}

// phaseAt is the unwrapped phase of a loop at its crossover; NaN without
// one.
func phaseAt(m lti.Margins, L func(float64) complex128, ph, ws []float64) float64 {
	if w := m.Crossover; isFinite(w) && w > 0 {
		return unwrapAt(L(w), ph, ws, w)
	}
	return math.NaN()
}

// crossPhase is phaseAt with whether there is a crossover.
func crossPhase(m lti.Margins, L func(float64) complex128, ph, ws []float64) (float64, bool) {
	v := phaseAt(m, L, ph, ws)
	return v, isFinite(v)
}

// phaseRange is the phase axis of a Bode plot: from a quarter turn below
// the lowest of the critical line crit and the phases at the crossovers
// to a quarter turn above the highest, on multiples of 45°, at most a
// full turn and a half (so the 45° ticks stay legible); without a
// crossover, crit ± 180°.
func phaseRange(crit float64, at []float64) (lo, hi float64) {
	lo, hi = crit, crit
	for _, v := range at {
		if isFinite(v) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
	}
	lo, hi = math.Floor((lo-90)/45)*45, math.Ceil((hi+90)/45)*45
	if hi-lo > 540 {
		// Keep the critical line and the side the crossover is on.
		lo, hi = math.Max(lo, crit-270), math.Min(hi, crit+270)
	}
	return lo, hi
}

// radsHz writes an angular frequency in rad/s and in Hz, "42.2 rad/s
// (6.716 Hz)": the airframe file gives its rates in Hz.
func radsHz(w float64) string {
	if !isFinite(w) {
		return rads(w)
	}
	return rads(w) + " (" + g(float64(w/(2*math.Pi)), 4) + " Hz)"
}

// marginText is "PM 45.2° at 52.1 rad/s, GM 8.3 dB".
func marginText(m lti.Margins) string {
	s := "PM " + degs(m.PhaseDeg)
	if isFinite(m.Crossover) {
		s += " at " + rads(m.Crossover)
	}
	return s + ", GM " + dbs(m.GainDB)
}

type marginsView struct {
	m      lti.Margins
	L      func(float64) complex128
	ph, ws []float64 // the unwrapped phase curve it belongs to
}

// lowPhase returns the branch a loop's phase starts on: −90° per
// integrator, the count read from the magnitude slope (−20 dB/decade per
// integrator) over the lowest decade of the grid.
func lowPhase(ws []float64, vs []complex128) float64 {
	j := 0
	for j+1 < len(ws) && ws[j+1] < 10*ws[0] {
		j++
	}
	if j == 0 {
		return 0
	}
	slope := 20 * math.Log10(cmplx.Abs(vs[j])/cmplx.Abs(vs[0])) / math.Log10(ws[j]/ws[0])
	n := math.Round(-slope / 20)
	if !isFinite(n) || math.Abs(n) > 8 {
		return 0
	}
	return -90 * n
}

// unwrapAt puts the phase of v (the loop at w) on the branch of the
// unwrapped curve ph over ws nearest w.
func unwrapAt(v complex128, ph, ws []float64, w float64) float64 {
	ref := 0.0
	best := math.Inf(1)
	for i, x := range ws {
		if d := math.Abs(math.Log(x / w)); d < best && i < len(ph) && isFinite(ph[i]) {
			best, ref = d, ph[i]
		}
	}
	a := cmplx.Phase(v) * 180 / math.Pi
	return a + 360*math.Round((ref-a)/360)
}

// logTicks labels the decades of a log axis (1, 10, 100, 1000, 10⁴ …) and
// marks the steps in between without labels.
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	if !(lo > 0) || !(hi > lo) {
		return ts
	}
	for e := math.Floor(math.Log10(lo)); e <= math.Ceil(math.Log10(hi)); e++ {
		dec := math.Pow(10, e)
		for i := 1; i < 10; i++ {
			v := float64(i) * dec
			if v < lo*(1-1e-9) || v > hi*(1+1e-9) {
				continue
			}
			t := plot.Tick{Value: v}
			if i == 1 {
				t.Label = decadeLabel(e)
			}
			ts = append(ts, t)
		}
	}
	return ts
}

func decadeLabel(e float64) string {
	if e >= -2 && e <= 4 {
		return strconv.FormatFloat(math.Pow(10, e), 'f', int(math.Max(0, -e)), 64)
	}
	return "1e" + strconv.Itoa(int(e))
}

// stepTicks labels every multiple of step (degrees of phase) between lo
// and hi; the caller keeps the range to a dozen steps or so.
type stepTicks float64

func (s stepTicks) Ticks(lo, hi float64) []plot.Tick {
	step := float64(s)
	if !(step > 0) || !(hi > lo) || (hi-lo)/step > 100 {
		return nil
	}
	var ts []plot.Tick
	for q := math.Ceil(lo / step); q*step <= hi; q++ {
		v := q * step
		ts = append(ts, plot.Tick{Value: v, Label: tickLabel(v, 0)})
	}
	return ts
}

// --- z-plane --------------------------------------------------------------

// zRegion maps the spec region of the s-plane into the z-plane by
// z = e^(sT): the constant-decay line Re s = −σ becomes the circle of
// radius e^(−σT), the damping rays the logarithmic spirals
// e^((−ζ ± j√(1−ζ²))·ωT), and the strip edge Im s = ±π/T the negative real
// axis.
func zRegion(t synth.Target, T float64) plotter.XYs {
	tan := math.Sqrt(1-t.Zeta*t.Zeta) / t.Zeta
	s := t.Sigma
	ymax := math.Min(s*tan, math.Pi/T)
	var out plotter.XYs
	const n = 120
	for i := -n; i <= n; i++ {
		y := ymax * float64(i) / n
		out = append(out, xy(cmplx.Exp(complex(-s, y)*complex(T, 0))))
	}
	if s*tan < math.Pi/T {
		aMax := math.Pi / T / tan
		for i := 1; i <= n; i++ {
			a := s + (aMax-s)*float64(i)/n
			out = append(out, xy(cmplx.Exp(complex(-a, a*tan)*complex(T, 0))))
		}
		out = append(out, plotter.XY{})
		for i := n; i >= 1; i-- {
			a := s + (aMax-s)*float64(i)/n
			out = append(out, xy(cmplx.Exp(complex(-a, -a*tan)*complex(T, 0))))
		}
	} else {
		out = append(out, plotter.XY{})
	}
	return out
}

// zFigure draws the closed-loop poles and zeros of the sampled loop with
// the unit circle, in full and near z = 1, where a fast-sampled loop's
// dominant poles sit.
func zFigure(a *plotAxis) (*figure, error) {
	d := a.d
	T := d.Plant.T
	zt := cmplx.Exp(d.Cont.Target.Pole * complex(T, 0))
	full := newPlot(fmt.Sprintf("%s: z-plane, closed loop", a.name), "Re z", "Im z")
	zoom := newPlot("near z = 1", "Re z", "Im z")
	r := 1.8 * cmplx.Abs(1-zt)
	for _, z := range a.zmap.Poles {
		if cmplx.Abs(1-z) < 2.5*cmplx.Abs(1-zt) {
			r = math.Max(r, 1.2*cmplx.Abs(1-z))
		}
	}
	// The corner of the mapped spec region, so that its shape shows.
	tan := math.Sqrt(1-a.specT.Zeta*a.specT.Zeta) / a.specT.Zeta
	corner := cmplx.Exp(complex(-a.specT.Sigma, math.Min(a.specT.Sigma*tan, math.Pi/T)) * complex(T, 0))
	r = math.Max(r, 1.25*cmplx.Abs(1-corner))
	r = math.Min(r, 1)
	circle := make(plotter.XYs, 0, 721)
	for i := 0; i <= 720; i++ {
		th := 2 * math.Pi * float64(i) / 720
		circle = append(circle, plotter.XY{X: math.Cos(th), Y: math.Sin(th)})
	}
	// A finer circle for the zoom, where the coarse one's chords would show.
	fine := make(plotter.XYs, 0, 2001)
	span := math.Min(math.Pi, 3*r)
	for i := 0; i <= 2000; i++ {
		th := -span + 2*span*float64(i)/2000
		fine = append(fine, plotter.XY{X: math.Cos(th), Y: math.Sin(th)})
	}
	circSty := lineStyle(colBlack, 1.2, dashSolid)
	axisSty := lineStyle(colGrey, 0.8, dashSolid)
	var ps, zs plotter.XYs
	for _, z := range a.zmap.Poles {
		ps = append(ps, xy(z))
	}
	for _, z := range a.zmap.Zeros {
		zs = append(zs, xy(z))
	}
	guide := zRegion(a.specT, T)
	ztPts := plotter.XYs{xy(zt), xy(cmplx.Conj(zt))}
	for i, p := range []*plot.Plot{full, zoom} {
		if poly, err := plotter.NewPolygon(guide); err == nil {
			poly.Color = colSpecFill
			poly.LineStyle = styleSpecEdge
			p.Add(poly)
		}
		addLine(p, plotter.XYs{{X: -2, Y: 0}, {X: 2, Y: 0}}, axisSty)
		addLine(p, plotter.XYs{{X: 0, Y: -2}, {X: 0, Y: 2}}, axisSty)
		if i == 0 {
			addLine(p, circle, circSty)
		} else {
			addLine(p, fine, circSty)
		}
		addPoints(p, zs, glyphZero)
		addPoints(p, ztPts, glyphTarget)
		addPoints(p, ps, glyphDesign)
	}
	window{-1.15, 1.15, -1.15, 1.15}.apply(full)
	window{1 - 1.6*r, 1 + 0.4*r, -r, r}.apply(zoom)
	f := &figure{rows: 1, cols: 2, panels: []*plot.Plot{full, zoom}, panelH: zPanelH, equal: map[int]bool{0: false, 1: true}}
	both := func(pts plotter.XYs, line bool) []seen {
		return []seen{{panel: 0, pts: pts, line: line}, {panel: 1, pts: pts, line: line}}
	}
	f.addSeen(both(ps, false), "designed closed-loop pole", thumbGlyph(glyphDesign))
	f.addSeen(both(zs, false), "closed-loop zero (setpoint → rate)", thumbGlyph(glyphZero))
	f.addSeen(both(ztPts, false), fmt.Sprintf("textbook target e^(s*T) = %s", fmtC(zt, 4)), thumbGlyph(glyphTarget))
	f.addSeen(both(circle, true), "unit circle", thumbLine(circSty))
	f.addSeen(both(append(guide, guide[0]), true), "second-order guide mapped by z = e^(sT)", thumbFill{colSpecFill, styleSpecEdge})
	f.note = guideNote + fmt.Sprintf(" T = %s s.", g(T, 4))
	if n := d.Loop.ComputeDelay + d.Plant.Delay; n > 0 {
		f.note += fmt.Sprintf(" The delay of %s (compute, and whole samples of transport) adds as many closed-loop poles, which start at z = 0 in the open loop.", plural(n, "sample"))
	}
	return f, nil
}
