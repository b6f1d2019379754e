package review

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// The house style of the review plots.
//
// Colours are from the Okabe–Ito palette, which stays distinguishable
// for the common colour-vision deficiencies; every series also has its own
// dash pattern or marker, so that a greyscale print tells them apart too.
// Text is Liberation Sans (metric-compatible with Arial, which the SVG
// names as the fallback) at sizes that stay legible when a Markdown viewer
// scales the 6.5-inch figure to a page column.
var (
	colBlue      = color.RGBA{0x00, 0x72, 0xB2, 0xFF}
	colVermilion = color.RGBA{0xD5, 0x5E, 0x00, 0xFF}
	colGreen     = color.RGBA{0x00, 0x9E, 0x73, 0xFF}
	colPurple    = color.RGBA{0xCC, 0x79, 0xA7, 0xFF}
	colOrange    = color.RGBA{0xE6, 0x9F, 0x00, 0xFF}
	colBlack     = color.RGBA{0x1A, 0x1A, 0x1A, 0xFF}
	colGrey      = color.RGBA{0x70, 0x70, 0x70, 0xFF}
	colGrid      = color.RGBA{0xE2, 0xE2, 0xE2, 0xFF}
	colSpecFill  = color.RGBA{0xDC, 0xEF, 0xDC, 0xFF} // pale green: where the spec is met
	colSpecEdge  = color.RGBA{0x3C, 0x8C, 0x3C, 0xFF}
	colLimit     = color.RGBA{0xB0, 0x30, 0x30, 0xFF} // spec limits drawn as lines
	colPaper     = color.RGBA{0xFF, 0xFF, 0xFF, 0xFF}
)

var (
	dashSolid  []vg.Length
	dashLong   = []vg.Length{vg.Points(7), vg.Points(3)}
	dashShort  = []vg.Length{vg.Points(2.5), vg.Points(2.5)}
	dashDot    = []vg.Length{vg.Points(7), vg.Points(2.5), vg.Points(1.5), vg.Points(2.5)}
	dashFine   = []vg.Length{vg.Points(1), vg.Points(2)}
	figWidth   = 6.5 * vg.Inch
	fontFamily = font.Font{Typeface: "Liberation", Variant: "Sans"}
)

const (
	sizeTitle  = 12.5
	sizeLabel  = 11
	sizeTick   = 9.5
	sizeLegend = 9.5
	sizeNote   = 9
)

func textStyle(size float64, c color.Color) text.Style {
	f := fontFamily
	f.Size = vg.Points(size)
	return text.Style{Color: c, Font: font.From(f, vg.Points(size)), Handler: plot.DefaultTextHandler}
}

// restyle sets the house font of size pt and black text on sty.
func restyle(sty *text.Style, size float64) {
	sty.Font = font.From(fontFamily, vg.Points(size))
	sty.Color = colBlack
}

// niceTicks labels a linear axis at 1, 2, 2.5 or 5 times a power of ten,
// five to eight labels, with minor marks between; the labels have as many
// decimals as the step needs and a true minus sign.
//
// A fixed step (non-zero) replaces the choice: the equal-scale panels
// label both axes at one step, so that the grid cells are square.
type niceTicks struct{ step float64 }

// niceStep is the step of niceTicks for the range lo…hi and the number of
// minor intervals per step.
func niceStep(lo, hi float64) (step float64, minor int) {
	raw := (hi - lo) / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step, minor = 10*mag, 5
	for _, m := range []struct {
		f float64
		n int
	}{{1, 5}, {2, 4}, {2.5, 5}, {5, 5}} {
		if m.f*mag >= raw*0.95 {
			return m.f * mag, m.n
		}
	}
	return step, minor
}

func (nt niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || !isFinite(lo) || !isFinite(hi) {
		return nil
	}
	step, minor := niceStep(lo, hi)
	if nt.step > 0 && (hi-lo)/nt.step <= 20 {
		step = nt.step
		if _, m := niceStep(0, 6*step); m > 0 {
			minor = m
		}
	}
	// As many decimals as the step needs to be written exactly.
	dec := 0
	for ; dec < 12; dec++ {
		v := step * math.Pow(10, float64(dec))
		if math.Abs(v-math.Round(v)) < 1e-6*v {
			break
		}
	}
	var ts []plot.Tick
	first := math.Ceil(lo/step*float64(minor)) / float64(minor)
	for i := 0; ; i++ {
		u := first + float64(i)/float64(minor) // in steps
		v := u * step
		if v > hi*(1+1e-12)+1e-300 || i > 400 {
			break
		}
		t := plot.Tick{Value: v}
		if math.Abs(u-math.Round(u)) < 1e-6 {
			t.Value = math.Round(u) * step
			t.Label = tickLabel(t.Value, dec)
		}
		ts = append(ts, t)
	}
	return ts
}

func tickLabel(v float64, dec int) string {
	s := strconv.FormatFloat(v, 'f', dec, 64)
	if strings.Trim(s, "-0.") == "" {
		return "0"
	}
	if s[0] == '-' {
		s = "−" + s[1:]
	}
	return s
}

// newPlot returns a plot in the house style with axis labels (with units)
// and a light grid.
func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.BackgroundColor = colPaper
	p.Title.Text = title
	// Only font and colour change: plot.New's alignments (centred title,
	// centred and rotated labels) stay.
	restyle(&p.Title.TextStyle, sizeTitle)
	p.Title.Padding = vg.Points(6)
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		restyle(&ax.Label.TextStyle, sizeLabel)
		restyle(&ax.Tick.Label, sizeTick)
		ax.LineStyle.Color = colGrey
		ax.Tick.LineStyle.Color = colGrey
		ax.Padding = vg.Points(2)
		ax.Tick.Marker = niceTicks{}
	}
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = colGrid, colGrid
	g.Vertical.Width, g.Horizontal.Width = vg.Points(0.6), vg.Points(0.6)
	p.Add(g)
	return p
}

// lineStyle returns a line style of colour c, width w points and dashes.
func lineStyle(c color.Color, w float64, dashes []vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: c, Width: vg.Points(w), Dashes: dashes}
}

// entry is one legend entry: the label, what its thumbnail shows and,
// when it names a drawn series, where that series is (seen), so that an
// entry whose series falls wholly outside the final axis ranges is left
// out: the legend names only what the reader can find in the panels.
type entry struct {
	label  string
	thumbs []plot.Thumbnailer
	seen   []seen
}

// seen is a drawn series a legend entry names: a polyline (line) or
// markers at pts, in panel's data coordinates.
type seen struct {
	panel int
	pts   plotter.XYs
	line  bool
}

// panelLayout is where a panel ended up: its final axis ranges and the
// size of its data area in points (tests check the s- and z-planes'
// equal scale with it).
type panelLayout struct {
	w            window
	dataW, dataH float64
}

// figure is a grid of aligned panels with one legend below them all.
type figure struct {
	rows, cols int
	panels     []*plot.Plot // row-major
	panelH     vg.Length    // height of one panel row
	legend     []entry
	note       string // a caption line under the legend (e.g. the Padé note)
	// caption, when set, replaces the report's usual caption of the
	// plot kind (a saturating step that cannot saturate is not one).
	caption string
	// equal marks the panels (by index) whose axes must have one scale,
	// so that angles read true (the s- and z-planes); the value says
	// whether the x range may only grow to the left.
	equal map[int]bool
	// hz marks the panels (by index, log axes in rad/s) that get a
	// second frequency axis in Hz along their top edge: the airframe file
	// gives its rates in Hz, the plant's poles in rad/s.
	hz map[int]bool
	// layout is filled by svg: each panel's final ranges and data area,
	// and where the legend went (in the SVG's user units, y up).
	layout    []panelLayout
	legendBox vg.Rectangle
}

// add appends a legend entry for something always shown (a shaded
// bound, a note on the markers).
func (f *figure) add(label string, thumbs ...plot.Thumbnailer) {
	f.legend = append(f.legend, entry{label: label, thumbs: thumbs})
}

// addSeen appends a legend entry for drawn series: it stays in the
// legend only if one of them shows within its panel's final ranges.
// Without any series there is nothing drawn to name, and no entry.
func (f *figure) addSeen(ss []seen, label string, thumbs ...plot.Thumbnailer) {
	if len(ss) == 0 {
		return
	}
	f.legend = append(f.legend, entry{label: label, thumbs: thumbs, seen: ss})
}

// lineIn and pointsIn are the series of an addSeen entry.
func lineIn(panel int, pts plotter.XYs) seen   { return seen{panel: panel, pts: pts, line: true} }
func pointsIn(panel int, pts plotter.XYs) seen { return seen{panel: panel, pts: pts} }

// shown reports whether the series is within the panel's ranges: a
// marker inside them, or a segment of the polyline that crosses them
// (on the panel's scales, so a log axis is judged as drawn).
func (s seen) shown(p *plot.Plot) bool {
	norm := func(q plotter.XY) (float64, float64, bool) {
		if !isFinite(q.X) || !isFinite(q.Y) {
			return 0, 0, false
		}
		if _, ok := p.X.Scale.(plot.LogScale); ok && !(q.X > 0) {
			return 0, 0, false
		}
		if _, ok := p.Y.Scale.(plot.LogScale); ok && !(q.Y > 0) {
			return 0, 0, false
		}
		return p.X.Norm(q.X), p.Y.Norm(q.Y), true
	}
	const eps = 1e-9
	in := func(x, y float64) bool { return x >= -eps && x <= 1+eps && y >= -eps && y <= 1+eps }
	for i, q := range s.pts {
		x, y, ok := norm(q)
		if !ok {
			continue
		}
		if in(x, y) {
			return true
		}
		if !s.line || i == 0 {
			continue
		}
		if x0, y0, ok := norm(s.pts[i-1]); ok && segmentMeetsUnit(x0, y0, x, y) {
			return true
		}
	}
	return false
}

// segmentMeetsUnit reports whether the segment from (x0, y0) to (x1, y1)
// meets the unit square (Liang–Barsky clipping, textbook, from memory).
func segmentMeetsUnit(x0, y0, x1, y1 float64) bool {
	t0, t1 := 0.0, 1.0
	dx, dy := x1-x0, y1-y0
	for _, e := range [4][2]float64{{-dx, x0}, {dx, 1 - x0}, {-dy, y0}, {dy, 1 - y0}} {
		p, q := e[0], e[1]
		if p == 0 {
			if q < 0 {
				return false
			}
			continue
		}
		r := q / p
		if p < 0 {
			t0 = math.Max(t0, r)
		} else {
			t1 = math.Min(t1, r)
		}
		if t0 > t1 {
			return false
		}
	}
	return true
}

// visibleLegend returns the entries of all whose series are in sight.
func (f *figure) visibleLegend(all []entry) []entry {
	var out []entry
	for _, e := range all {
		keep := len(e.seen) == 0
		for _, s := range e.seen {
			if s.panel >= 0 && s.panel < len(f.panels) && s.shown(f.panels[s.panel]) {
				keep = true
				break
			}
		}
		if keep {
			out = append(out, e)
		}
	}
	return out
}

// legendLayout flows the entries into as many columns as fit the width.
func (f *figure) legendLayout(width vg.Length) (cols int, colW, rowH vg.Length, nrows int) {
	if len(f.legend) == 0 {
		return 0, 0, 0, 0
	}
	sty := textStyle(sizeLegend, colBlack)
	thumb := vg.Points(26)
	for _, e := range f.legend {
		if w := thumb + vg.Points(6) + sty.Width(e.label) + vg.Points(14); w > colW {
			colW = w
		}
	}
	cols = int(math.Max(1, math.Floor(float64(width/colW))))
	if cols > len(f.legend) {
		cols = len(f.legend)
	}
	nrows = (len(f.legend) + cols - 1) / cols
	rowH = sty.Height("Mg") + vg.Points(5)
	colW = width / vg.Length(cols)
	return cols, colW, rowH, nrows
}

// drawLegend draws the entries into c, row by row.
func (f *figure) drawLegend(c draw.Canvas) {
	cols, colW, rowH, _ := f.legendLayout(c.Max.X - c.Min.X)
	sty := textStyle(sizeLegend, colBlack)
	sty.YAlign = draw.YCenter
	thumb := vg.Points(26)
	for i, e := range f.legend {
		r, k := i/cols, i%cols
		x := c.Min.X + vg.Length(k)*colW
		yTop := c.Max.Y - vg.Length(r)*rowH
		icon := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: x, Y: yTop - rowH + vg.Points(2)},
			Max: vg.Point{X: x + thumb, Y: yTop - vg.Points(2)},
		}}
		for _, t := range e.thumbs {
			t.Thumbnail(&icon)
		}
		c.FillText(sty, vg.Point{X: x + thumb + vg.Points(6), Y: yTop - rowH/2}, e.label)
	}
}

// svg renders the figure. gonum/plot's SVG backend writes no timestamps,
// random identifiers or map-ordered output, so the bytes are a pure
// function of the figure; svg only widens the font fallback list (see
// fixFonts). A panic inside the plotting library (it panics on some
// degenerate ranges) is returned as an error.
func (f *figure) svg() (out []byte, err error) {
	defer func() {
		if r := recover(); r != nil {
			out, err = nil, fmt.Errorf("plot: %v", r)
		}
	}()
	if len(f.panels) != f.rows*f.cols || f.rows == 0 {
		return nil, fmt.Errorf("plot: %d panels for a %d×%d grid", len(f.panels), f.rows, f.cols)
	}
	pad := vg.Points(8)
	inner := figWidth - 2*pad
	for i := range f.hz {
		// Room between the title (or the panel above) and the data area
		// for the Hz axis.
		f.panels[i].Title.Padding += hzAxisRoom
	}
	noteSty := textStyle(sizeNote, colGrey)
	noteLines := wrapText(f.note, noteSty, inner-vg.Points(8))
	lineH := noteSty.Height("Mg") + vg.Points(2)
	noteH := vg.Length(len(noteLines)) * lineH
	if noteH > 0 {
		noteH += vg.Points(2)
	}
	grid := make([][]*plot.Plot, f.rows)
	for r := range grid {
		grid[r] = f.panels[r*f.cols : (r+1)*f.cols]
	}
	// The legend names what is in sight, which the equal-scale fit
	// below can widen (it only widens): lay out, fit, and lay out again
	// with the entries that came into sight, until none does.
	all := f.legend
	f.legend = f.visibleLegend(all)
	var (
		c       *vgsvg.Canvas
		dc      draw.Canvas
		canv    [][]draw.Canvas
		legendH vg.Length
	)
	for round := 0; ; round++ {
		_, _, rowH, nrows := f.legendLayout(inner)
		legendH = vg.Length(nrows) * rowH
		if legendH > 0 {
			legendH += vg.Points(6)
		}
		height := vg.Length(f.rows)*f.panelH + legendH + noteH + 2*pad
		c = vgsvg.New(figWidth, height)
		dc = draw.New(c)
		area := draw.Crop(dc, pad, -pad, pad+legendH+noteH, -pad)
		canvases := func() [][]draw.Canvas {
			if f.rows == 1 && f.cols == 1 {
				// One panel: nothing to align (plot.Align lays every
				// panel out twice).
				return [][]draw.Canvas{{area}}
			}
			tiles := draw.Tiles{Rows: f.rows, Cols: f.cols, PadX: vg.Points(14), PadY: vg.Points(8)}
			return plot.Align(grid, tiles, area)
		}
		canv = canvases()
		// Fit the ranges of the equal-scale panels to their data areas
		// as laid out, then lay out again: the new tick labels may be
		// wider or narrower and change the data area, so repeat until
		// the fit holds (it settles in a pass or two).
		for pass := 0; pass < 6 && len(f.equal) > 0; pass++ {
			moved := false
			for i, left := range f.equal {
				p := f.panels[i]
				pc := p.DataCanvas(canv[i/f.cols][i%f.cols])
				w := window{p.X.Min, p.X.Max, p.Y.Min, p.Y.Max}
				nw := fitAspect(w, float64(pc.Max.X-pc.Min.X), float64(pc.Max.Y-pc.Min.Y), left)
				if nw != w {
					moved = true
					nw.apply(p)
				}
				// One tick step on both axes: the larger of the two
				// the ranges would choose.
				sx, _ := niceStep(nw.x0, nw.x1)
				sy, _ := niceStep(nw.y0, nw.y1)
				t := niceTicks{step: math.Max(sx, sy)}
				if p.X.Tick.Marker != plot.Ticker(t) || p.Y.Tick.Marker != plot.Ticker(t) {
					moved = true
					p.X.Tick.Marker, p.Y.Tick.Marker = t, t
				}
			}
			if !moved {
				break
			}
			canv = canvases()
		}
		vis := f.visibleLegend(all)
		if len(vis) == len(f.legend) || round == 2 {
			break
		}
		f.legend = vis
	}
	dc.SetColor(colPaper)
	dc.Fill(dc.Rectangle.Path())
	f.layout = make([]panelLayout, len(f.panels))
	for r := range grid {
		for k, p := range grid[r] {
			p.Draw(canv[r][k])
			i := r*f.cols + k
			dc := p.DataCanvas(canv[r][k])
			f.layout[i] = panelLayout{w: window{p.X.Min, p.X.Max, p.Y.Min, p.Y.Max},
				dataW: float64(dc.Max.X - dc.Min.X), dataH: float64(dc.Max.Y - dc.Min.Y)}
			if f.hz[i] {
				drawHzAxis(p, dc)
			}
		}
	}
	if legendH > 0 {
		lc := draw.Crop(dc, pad+vg.Points(4), -pad, pad+noteH, 0)
		lc.Max.Y = lc.Min.Y + legendH
		f.legendBox = lc.Rectangle
		f.drawLegend(lc)
	}
	for i, line := range noteLines {
		y := pad + vg.Length(len(noteLines)-1-i)*lineH
		dc.FillText(noteSty, vg.Point{X: pad + vg.Points(4), Y: y}, line)
	}
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return nil, fmt.Errorf("plot: %w", err)
	}
	return fixFonts(b.Bytes()), nil
}

// hzAxisRoom is the height the Hz axis takes above a panel's data area.
const hzAxisRoom = vg.Length(20)

// drawHzAxis draws a second frequency axis along the top of the data area
// dc of p, whose x axis is ω in rad/s on a log scale: ticks at f = ω/(2π)
// in Hz, the decades labelled, the unit at the right end.
func drawHzAxis(p *plot.Plot, dc draw.Canvas) {
	lo, hi := p.X.Min/(2*math.Pi), p.X.Max/(2*math.Pi)
	if !(lo > 0) || !(hi > lo) {
		return
	}
	axis := lineStyle(colGrey, 0.8, dashSolid)
	top := dc.Max.Y
	dc.StrokeLine2(axis, dc.Min.X, top, dc.Max.X, top)
	sty := textStyle(sizeTick, colBlack)
	sty.XAlign, sty.YAlign = draw.XCenter, draw.YBottom
	// float64() keeps the product from fusing with the sum (the same
	// bytes on every architecture).
	xOf := func(f float64) vg.Length {
		return dc.Min.X + vg.Length(float64(p.X.Norm(2*math.Pi*f)*float64(dc.Max.X-dc.Min.X)))
	}
	last := dc.Min.X
	for _, t := range (logTicks{}).Ticks(lo, hi) {
		x := xOf(t.Value)
		n := vg.Points(2.5)
		if t.Label != "" {
			n = vg.Points(5)
		}
		dc.StrokeLine2(axis, x, top, x, top+n)
		if t.Label != "" {
			dc.FillText(sty, vg.Point{X: x, Y: top + vg.Points(6)}, t.Label)
			last = x
		}
	}
	unit := textStyle(sizeTick, colBlack)
	unit.XAlign, unit.YAlign = draw.XRight, draw.YBottom
	if x := dc.Max.X; x-last > vg.Points(40) {
		dc.FillText(unit, vg.Point{X: x, Y: top + vg.Points(6)}, "f (Hz)")
	} else {
		unit.XAlign = draw.XLeft
		dc.FillText(unit, vg.Point{X: x + vg.Points(4), Y: top + vg.Points(6)}, "Hz")
	}
}

// wrapText breaks s into lines no wider than width, at spaces.
func wrapText(s string, sty text.Style, width vg.Length) []string {
	var lines []string
	cur := ""
	for _, w := range strings.Fields(s) {
		try := w
		if cur != "" {
			try = cur + " " + w
		}
		if cur != "" && sty.Width(try) > width {
			lines = append(lines, cur)
			cur = w
			continue
		}
		cur = try
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}

// fixFonts adds fallbacks to the font family the SVG names: viewers
// without Liberation Sans then use Arial or Helvetica, whose glyph widths
// match the ones the layout was computed with.
func fixFonts(svg []byte) []byte {
	return []byte(strings.ReplaceAll(string(svg), "font-family:Liberation Sans;", "font-family:'Liberation Sans',Arial,Helvetica,sans-serif;"))
}

// finiteXYs returns the points whose coordinates are both finite (gonum's
// plotters refuse NaN and Inf).
func finiteXYs(xs, ys []float64) plotter.XYs {
	out := make(plotter.XYs, 0, len(xs))
	for i := range xs {
		if i < len(ys) && isFinite(xs[i]) && isFinite(ys[i]) {
			out = append(out, plotter.XY{X: xs[i], Y: ys[i]})
		}
	}
	return out
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// addLine adds a polyline of the given style to p; nothing when fewer than
// two points are finite.
func addLine(p *plot.Plot, pts plotter.XYs, sty draw.LineStyle) *plotter.Line {
	if len(pts) < 2 {
		return nil
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return nil
	}
	l.LineStyle = sty
	p.Add(leanLine{l})
	return l
}

// leanLine is a line without glyph boxes: plotter.Line reports one per
// point, which the layout walks three times per plot, only to pad the
// axes by half a line width. The axis ranges here are set explicitly, so
// the padding is not needed.
type leanLine struct{ *plotter.Line }

func (leanLine) GlyphBoxes(*plot.Plot) []plot.GlyphBox { return nil }

// addPoints adds markers of the given glyph style to p.
func addPoints(p *plot.Plot, pts plotter.XYs, g draw.GlyphStyle) *plotter.Scatter {
	if len(pts) == 0 {
		return nil
	}
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil
	}
	s.GlyphStyle = g
	p.Add(s)
	return s
}

func glyph(shape draw.GlyphDrawer, c color.Color, radius float64) draw.GlyphStyle {
	return draw.GlyphStyle{Shape: shape, Color: c, Radius: vg.Points(radius)}
}

// thumbLine is a legend thumbnail of a line style without a plotter.
type thumbLine draw.LineStyle

func (t thumbLine) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	c.StrokeLine2(draw.LineStyle(t), c.Min.X, y, c.Max.X, y)
}

// thumbGlyph is a legend thumbnail of a marker.
type thumbGlyph draw.GlyphStyle

func (t thumbGlyph) Thumbnail(c *draw.Canvas) {
	c.DrawGlyphNoClip(draw.GlyphStyle(t), c.Center())
}

// thumbFill is a legend thumbnail of a shaded region.
type thumbFill struct {
	fill color.Color
	edge draw.LineStyle
}

func (t thumbFill) Thumbnail(c *draw.Canvas) {
	r := vg.Rectangle{Min: vg.Point{X: c.Min.X, Y: c.Min.Y + vg.Points(1)}, Max: vg.Point{X: c.Max.X, Y: c.Max.Y - vg.Points(1)}}
	c.SetColor(t.fill)
	c.Fill(r.Path())
	c.StrokeLines(t.edge, []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}, r.Min})
}

// label places text at a data point, its left end at the offset (points).
func addLabel(p *plot.Plot, x, y float64, s string, c color.Color, xoff, yoff float64) {
	addLabelAlign(p, x, y, s, c, xoff, yoff, draw.XLeft)
}

// addLabelAlign is addLabel with the text's horizontal alignment.
func addLabelAlign(p *plot.Plot, x, y float64, s string, c color.Color, xoff, yoff float64, align text.XAlignment) {
	if !isFinite(x) || !isFinite(y) {
		return
	}
	l, err := plotter.NewLabels(plotter.XYLabels{XYs: plotter.XYs{{X: x, Y: y}}, Labels: []string{s}})
	if err != nil {
		return
	}
	sty := textStyle(sizeNote, c)
	sty.XAlign = align
	l.TextStyle = []text.Style{sty}
	l.Offset = vg.Point{X: vg.Points(xoff), Y: vg.Points(yoff)}
	p.Add(l)
}
