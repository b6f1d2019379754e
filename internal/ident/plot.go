package ident

import (
	"fmt"
	"image/color"
	"io"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// plotBuckets is the number of time buckets a trace is reduced to: each
// bucket keeps its minimum and maximum, so peaks survive and a 60 s log at
// 1 kHz gives a plot of a few hundred kilobytes, not tens of megabytes.
const plotBuckets = 1500

// WriteSVG draws the measured and fitted rate (fitted part blue, held-out
// part orange) and, below, the residual, as SVG. title heads the plot.
func (r *Result) WriteSVG(w io.Writer, title string) error {
	c := vgsvg.New(vg.Points(900), vg.Points(560))
	if err := r.draw(draw.New(c), title); err != nil {
		return err
	}
	if _, err := c.WriteTo(w); err != nil {
		return fmt.Errorf("plot: writing SVG: %w", err)
	}
	return nil
}

// draw draws the two panels on dc.
func (r *Result) draw(dc draw.Canvas, title string) error {
	colMeasured := color.RGBA{R: 150, G: 150, B: 150, A: 255}
	colFit := color.RGBA{R: 20, G: 90, B: 200, A: 255}
	colHold := color.RGBA{R: 220, G: 110, B: 0, A: 255}
	colResid := color.RGBA{R: 60, G: 60, B: 60, A: 255}
	top := plot.New()
	top.Title.Text = title
	top.Y.Label.Text = "rate"
	top.Legend.Top = true
	bot := plot.New()
	bot.X.Label.Text = "time (s)"
	bot.Y.Label.Text = "residual (measured − model)"

	n := len(r.Time)
	if n == 0 || len(r.Measured) != n || len(r.Fitted) != n || len(r.Used) != n {
		return fmt.Errorf("plot: no samples")
	}
	resid := make([]float64, n)
	for i := range resid {
		resid[i] = math.NaN()
		if r.Used[i] != 0 {
			resid[i] = r.Measured[i] - r.Fitted[i]
		}
	}
	all := func(int) bool { return true }
	used := func(k int8) func(int) bool { return func(i int) bool { return r.Used[i] == k } }
	legend := map[string]bool{}
	add := func(p *plot.Plot, y []float64, keep func(int) bool, c color.Color, width vg.Length, name string) error {
		for _, xy := range traces(r.Time, y, keep) {
			l, err := plotter.NewLine(xy)
			if err != nil {
				return fmt.Errorf("plot: %w", err)
			}
			l.LineStyle.Color = c
			l.LineStyle.Width = width
			p.Add(l)
			if name != "" && !legend[name] {
				legend[name] = true
				p.Legend.Add(name, l)
			}
		}
		return nil
	}
	steps := []struct {
		p     *plot.Plot
		y     []float64
		keep  func(int) bool
		c     color.Color
		width vg.Length
		name  string
	}{
		{top, r.Measured, all, colMeasured, vg.Points(0.6), "measured"},
		{top, r.Fitted, used(1), colFit, vg.Points(0.8), "model (fitted part)"},
		{top, r.Fitted, used(2), colHold, vg.Points(0.8), "model (held out)"},
		{bot, resid, all, colResid, vg.Points(0.5), ""},
	}
	for _, s := range steps {
		if err := add(s.p, s.y, s.keep, s.c, s.width, s.name); err != nil {
			return err
		}
	}
	top.Add(plotter.NewGrid())
	bot.Add(plotter.NewGrid())
	x0, x1 := r.Time[0], r.Time[n-1]
	top.X.Min, top.X.Max = x0, x1
	bot.X.Min, bot.X.Max = x0, x1

	tiles := draw.Tiles{Rows: 2, Cols: 1, PadTop: vg.Points(6), PadBottom: vg.Points(6),
		PadLeft: vg.Points(6), PadRight: vg.Points(10), PadY: vg.Points(12)}
	cv := plot.Align([][]*plot.Plot{{top}, {bot}}, tiles, dc)
	top.Draw(cv[0][0])
	bot.Draw(cv[1][0])
	return nil
}

// traces splits y into the runs of finite values selected by keep and
// reduces each to at most about 2·plotBuckets points over the whole time
// span (minimum and maximum of each bucket, in time order).
func traces(t, y []float64, keep func(int) bool) []plotter.XYs {
	n := len(t)
	width := (t[n-1] - t[0]) / plotBuckets
	var out []plotter.XYs
	for i := 0; i < n; {
		if !keep(i) || math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			i++
			continue
		}
		j := i
		for j < n && keep(j) && !math.IsNaN(y[j]) && !math.IsInf(y[j], 0) {
			j++
		}
		var xy plotter.XYs
		for k := i; k < j; {
			// One bucket: samples within width of t[k].
			end := k + 1
			for end < j && (width <= 0 || t[end]-t[k] < width) {
				end++
			}
			lo, hi := k, k
			for m := k; m < end; m++ {
				if y[m] < y[lo] {
					lo = m
				}
				if y[m] > y[hi] {
					hi = m
				}
			}
			a, b := min(lo, hi), max(lo, hi)
			xy = append(xy, plotter.XY{X: t[a], Y: y[a]})
			if b != a {
				xy = append(xy, plotter.XY{X: t[b], Y: y[b]})
			}
			k = end
		}
		if len(xy) == 1 {
			xy = append(xy, xy[0])
		}
		out = append(out, xy)
		i = j
	}
	return out
}
