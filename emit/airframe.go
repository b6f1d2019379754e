// Package emit turns design results into what users and firmware builds
// consume: the JSON report and text table of `design`, and generated C99
// and Go controller source rendered from the templates.
package emit

import (
	"errors"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// Axis is the outcome of one axis: a design, or the error that stopped it.
type Axis struct {
	Name   string
	Design *discrete.Design // nil when Err is set
	Err    error            // design could not be completed (e.g. infeasible)
}

// OK reports whether the axis designed and passed every check.
func (a Axis) OK() bool { return a.Err == nil && a.Design != nil && a.Design.OK() }

// Airframe is the outcome of one airframe file.
type Airframe struct {
	File *airframe.File
	Axes []Axis // in the file's axis order (sorted by name)
}

// OK reports whether every axis passed.
func (a *Airframe) OK() bool {
	for _, x := range a.Axes {
		if !x.OK() {
			return false
		}
	}
	return true
}

// DesignAirframe designs every axis of f at its loop rate and numeric type.
// An axis that cannot be designed records its error and the others go on.
func DesignAirframe(f *airframe.File) *Airframe {
	out := &Airframe{File: f, Axes: make([]Axis, len(f.Axes))}
	for i, p := range f.Axes {
		d, err := discrete.DesignAxis(p, f.Loop, f.Numeric)
		out.Axes[i] = Axis{Name: p.Axis, Design: d, Err: err}
	}
	return out
}

// Infeasible reports whether err says the spec cannot be met by the form
// (exit status 1), as opposed to an internal or input failure.
func Infeasible(err error) bool {
	var inf *synth.InfeasibleError
	return errors.As(err, &inf)
}
