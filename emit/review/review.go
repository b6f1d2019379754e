// Package review produces what a reviewer signs a controller change off
// on: the design report of an airframe (Markdown with SVG plots: root
// locus, step responses at the nominal plant and over the plant envelope,
// the load-disturbance step, loop frequency response, sensitivity
// functions, z-plane map) and the
// comparison of two versions of an airframe file (changed inputs, changed
// results, regressions flagged).
//
// Everything here is a pure function of the designs: Build returns the
// files' bytes, which depend on nothing but the input (no timestamps, no
// host names, no absolute paths), and Write puts them into a directory
// atomically, file by file, so a failed run never leaves a half-written
// report behind.
package review

import (
	"bytes"
	"errors"
	"fmt"
	"text/template"

	"locusmith/discrete"
	"locusmith/synth"
	"locusmith/templates"
)

// File is one output file of a report.
type File struct {
	Name string // base name, no directory
	Data []byte
}

// Build renders the review report of one designed airframe: <airframe>.md
// and the SVG plots it links, in a fixed order. An axis whose design
// failed gets its error in the report and no plots. A plot that cannot be
// drawn (a degenerate design) is left out with a note in the report,
// rather than failing the whole report.
func Build(a *discrete.Airframe) ([]File, error) {
	if a == nil || a.File == nil {
		return nil, errors.New("review: no airframe")
	}
	m, figs := model(a)
	var files []File
	for _, f := range figs {
		files = append(files, File{Name: f.name, Data: f.data})
	}
	md, err := renderMarkdown(m)
	if err != nil {
		return nil, fmt.Errorf("review %s: %w", a.File.Airframe, err)
	}
	return append([]File{{Name: a.File.Airframe + ".md", Data: md}}, files...), nil
}

// builtFigure is a rendered plot and where the report links it.
type builtFigure struct {
	name string
	data []byte
}

// axisFigures renders the plots of one axis. It returns the files and,
// per plot kind, the file name or the reason it is missing.
func axisFigures(airframe string, a *plotAxis) ([]builtFigure, []Plot) {
	makers := plotMakers()
	var out []builtFigure
	var plots []Plot
	for _, mk := range makers {
		name := fmt.Sprintf("%s-%s-%s.svg", airframe, a.name, mk.kind)
		pl := Plot{Kind: mk.kind, File: name, Caption: mk.caption}
		if (mk.kind == "locus" || mk.kind == "locus-wide") && a.locus == nil {
			pl.File, pl.Missing = "", "the root locus could not be computed"
			plots = append(plots, pl)
			continue
		}
		if mk.kind == "zplane" && a.zmap == nil {
			pl.File, pl.Missing = "", "the z-plane map could not be computed"
			plots = append(plots, pl)
			continue
		}
		f, err := mk.make(a)
		if err == nil && f == nil {
			continue // does not apply (no saturating step)
		}
		var data []byte
		if err == nil {
			data, err = f.svg()
		}
		if err != nil {
			pl.File, pl.Missing = "", mdText(err.Error())
			plots = append(plots, pl)
			continue
		}
		out = append(out, builtFigure{name: name, data: data})
		pl.Note = f.note
		if f.caption != "" {
			pl.Caption = f.caption
		}
		plots = append(plots, pl)
	}
	return out, plots
}

// plotMaker draws one kind of plot of an axis: nil when it does not
// apply, an error when it cannot be drawn.
type plotMaker struct {
	kind, caption string
	make          func(*plotAxis) (*figure, error)
}

// plotMakers are the plots of an axis in the report's order.
func plotMakers() []plotMaker {
	return []plotMaker{
		{"locus", "Root locus near the target", func(a *plotAxis) (*figure, error) { return locusFigure(a, false) }},
		{"locus-wide", "Root locus, all open-loop poles and zeros", func(a *plotAxis) (*figure, error) { return locusFigure(a, true) }},
		{"step", "Unit-step responses against the spec", stepFigure},
		{"envelope", "Unit-step responses at every plant of the envelope against the spec", envelopeStepFigure},
		{"saturated", "Large setpoint step against the output limits, with and without anti-windup", saturatedFigure},
		{"disturbance", "Load-disturbance step at every plant of the envelope, with the recovery", disturbanceFigure},
		{"bode", "Loop frequency response with margins", bodeFigure},
		{"filters", "The feedback filter chain's own magnitude and phase, discrete as it runs and continuous, with the crossover and each filter's centre or cutoff", chainFigure},
		{"sensitivity", "Sensitivity functions |S|, |T| and |C·S| of the nominal sampled loop against their bounds", sensitivityFigure},
		{"zplane", "z-plane map of the sampled closed loop", zFigure},
	}
}

// newPlotAxis gathers what the plots of a designed axis need. The parts
// that can fail (the locus, the z-plane map) are left nil with the reason.
func newPlotAxis(x discrete.Outcome) (*plotAxis, []string) {
	d := x.Design
	var notes []string
	a := &plotAxis{name: x.Name, d: d}
	if t, err := synth.TargetFromSpec(d.Problem.Spec); err == nil {
		a.specT = t
	} else {
		a.specT = d.Cont.Target
	}
	if l, err := synth.RootLocus(d.Problem, d.Cont.Ctrl, LocusGainMax); err == nil {
		a.locus = l
	} else {
		notes = append(notes, "root locus: "+err.Error())
	}
	a.fixedA, a.fixedY = fixedStep(d)
	a.dloop = newDiscreteLoop(d)
	if z, err := newZMap(a.dloop); err == nil {
		a.zmap = &z
	} else {
		notes = append(notes, "z-plane map: "+err.Error())
	}
	return a, notes
}

// renderMarkdown renders the report template.
func renderMarkdown(r *Page) ([]byte, error) {
	t, err := template.New("report.md.tmpl").ParseFS(templates.FS, "report.md.tmpl")
	if err != nil {
		return nil, fmt.Errorf("report template: %w", err)
	}
	var b bytes.Buffer
	if err := t.Execute(&b, r); err != nil {
		return nil, fmt.Errorf("report template: %w", err)
	}
	return b.Bytes(), nil
}
