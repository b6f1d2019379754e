package ident

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"math/cmplx"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"locusmith/internal/lti"
)

// WriteSVG draws the frequency-response estimate of the fitted part
// (points) with the identified model over it, sampled as the log sees it
// (zero-order hold and delay), without and with the modes, in three
// panels: magnitude (dB), phase (degrees, wrapped to ±180) and the
// estimate's coherence. title heads the plot.
func (mr *ModeReport) WriteSVG(w io.Writer, r *Result, title string) error {
	c := vgsvg.New(vg.Points(900), vg.Points(720))
	if err := mr.draw(draw.New(c), r, title); err != nil {
		return err
	}
	if _, err := c.WriteTo(w); err != nil {
		return fmt.Errorf("plot: writing SVG: %w", err)
	}
	return nil
}

// sampledModel returns the response, at ω rad/s, of the continuous model
// z with the delay as sampled at T (the same construction as the mode
// fit's); nil when it cannot be sampled.
func sampledModel(z lti.ZPK, delay, T float64) func(float64) complex128 {
	opt := &ModeOptions{Plant: z, Delay: delay, T: T}
	at, _, ok := modeShape{opt: opt}.sampled([]float64{0})
	if !ok {
		return nil
	}
	return at
}

func (mr *ModeReport) draw(dc draw.Canvas, r *Result, title string) error {
	est := mr.Fit
	colEst := color.RGBA{R: 120, G: 120, B: 120, A: 255}
	colLow := color.RGBA{R: 20, G: 90, B: 200, A: 255}
	colModes := color.RGBA{R: 220, G: 110, B: 0, A: 255}
	mag, ph, coh := plot.New(), plot.New(), plot.New()
	mag.Title.Text = title
	mag.Y.Label.Text = "|H| (dB)"
	ph.Y.Label.Text = "phase (°)"
	coh.Y.Label.Text = "coherence"
	coh.X.Label.Text = "frequency (Hz)"
	mag.Legend.Top = true
	var pm, pp, pc plotter.XYs
	for k, hz := range est.Hz {
		h := est.H[k]
		if hz <= 0 || cmplx.IsNaN(h) || h == 0 {
			continue
		}
		pm = append(pm, plotter.XY{X: hz, Y: 20 * math.Log10(cmplx.Abs(h))})
		pp = append(pp, plotter.XY{X: hz, Y: cmplx.Phase(h) * 180 / math.Pi})
		pc = append(pc, plotter.XY{X: hz, Y: est.Coherence[k]})
	}
	if len(pm) < 2 {
		return fmt.Errorf("plot: no frequencies with an estimate")
	}
	for _, s := range []struct {
		p  *plot.Plot
		xy plotter.XYs
	}{{mag, pm}, {ph, pp}, {coh, pc}} {
		sc, err := plotter.NewScatter(s.xy)
		if err != nil {
			return fmt.Errorf("plot: %w", err)
		}
		sc.GlyphStyle.Color = colEst
		sc.GlyphStyle.Radius = vg.Points(1.2)
		s.p.Add(sc)
		if s.p == mag {
			mag.Legend.Add("estimate: "+est.Method, sc)
		}
	}
	sensor := func(z lti.ZPK) lti.ZPK {
		if r.LowpassHz != nil {
			ws := 2 * math.Pi * r.LowpassHz.Value
			z.Gain *= ws
			z.Poles = append(z.Poles, complex(-ws, 0))
		}
		return z
	}
	type model struct {
		z     lti.ZPK
		delay float64
		c     color.Color
		name  string
	}
	models := []model{{r.Model(), r.Delay.Value, colLow, "identified low-order model"}}
	if len(mr.Modes) > 0 {
		z, d := mr.ModalPlant(r)
		models = append(models, model{sensor(z), d, colModes, "with the modes (the zpk plant printed)"})
	}
	for _, m := range models {
		at := sampledModel(m.z, m.delay, r.T)
		if at == nil {
			continue
		}
		var lm, lp plotter.XYs
		for _, xy := range pm {
			h := at(2 * math.Pi * xy.X)
			lm = append(lm, plotter.XY{X: xy.X, Y: 20 * math.Log10(cmplx.Abs(h))})
			lp = append(lp, plotter.XY{X: xy.X, Y: cmplx.Phase(h) * 180 / math.Pi})
		}
		for _, s := range []struct {
			p  *plot.Plot
			xy plotter.XYs
		}{{mag, lm}, {ph, lp}} {
			l, err := plotter.NewLine(s.xy)
			if err != nil {
				return fmt.Errorf("plot: %w", err)
			}
			l.LineStyle.Color = m.c
			l.LineStyle.Width = vg.Points(1)
			s.p.Add(l)
			if s.p == mag {
				mag.Legend.Add(m.name, l)
			}
		}
	}
	x0, x1 := pm[0].X, pm[len(pm)-1].X
	for _, p := range []*plot.Plot{mag, ph, coh} {
		p.Add(plotter.NewGrid())
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = plot.LogTicks{Prec: -1}
		p.X.Min, p.X.Max = x0, x1
	}
	ph.Y.Min, ph.Y.Max = -180, 180
	coh.Y.Min, coh.Y.Max = 0, 1
	tiles := draw.Tiles{Rows: 3, Cols: 1, PadTop: vg.Points(6), PadBottom: vg.Points(6),
		PadLeft: vg.Points(6), PadRight: vg.Points(10), PadY: vg.Points(12)}
	cv := plot.Align([][]*plot.Plot{{mag}, {ph}, {coh}}, tiles, dc)
	mag.Draw(cv[0][0])
	ph.Draw(cv[1][0])
	coh.Draw(cv[2][0])
	return nil
}
