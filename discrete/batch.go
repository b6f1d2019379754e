package discrete

import (
	"errors"
	"fmt"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"sync"

	"locusmith/airframe"
	"locusmith/synth"
)

// Outcome is the outcome of one axis: a design, or the error that stopped it.
type Outcome struct {
	Name   string
	Design *Design // nil when Err is set
	Err    error   // design could not be completed (e.g. infeasible)
}

// OK reports whether the axis designed and passed every check.
func (a Outcome) OK() bool { return a.Err == nil && a.Design != nil && a.Design.OK() }

// Airframe is the design of one airframe file: every axis designed at
// the file's loop rate and numeric type.
type Airframe struct {
	File *airframe.File
	Axes []Outcome // in the file's axis order (sorted by name)
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
// The axes are designed at once, one per core: each design is a pure
// function of its axis, so the result does not depend on the order.
func DesignAirframe(f *airframe.File) *Airframe {
	out := &Airframe{File: f, Axes: make([]Outcome, len(f.Axes))}
	jobs := make([]func(), len(f.Axes))
	for i, p := range f.Axes {
		jobs[i] = func() { out.Axes[i] = designAxis(p, f.Loop, f.Numeric) }
	}
	runAll(jobs)
	return out
}

// DesignPair designs two versions of an airframe file, as compare needs
// them. An axis whose problem is the same in both (the same axis, loop
// rate, compute delay and numeric type) is designed once and shared by
// the two results, which must then be read only.
func DesignPair(old, new *airframe.File) (*Airframe, *Airframe) {
	a := &Airframe{File: old, Axes: make([]Outcome, len(old.Axes))}
	b := &Airframe{File: new, Axes: make([]Outcome, len(new.Axes))}
	var jobs []func()
	shared := map[int]int{} // new axis index → old axis index
	for i, p := range old.Axes {
		jobs = append(jobs, func() { a.Axes[i] = designAxis(p, old.Loop, old.Numeric) })
	}
	for j, p := range new.Axes {
		if i := slices.IndexFunc(old.Axes, func(q airframe.Axis) bool { return q.Name == p.Name }); i >= 0 &&
			old.Loop == new.Loop && reflect.DeepEqual(old.Numeric, new.Numeric) && reflect.DeepEqual(old.Axes[i], p) {
			shared[j] = i
			continue
		}
		jobs = append(jobs, func() { b.Axes[j] = designAxis(p, new.Loop, new.Numeric) })
	}
	runAll(jobs)
	for j, i := range shared {
		b.Axes[j] = a.Axes[i]
	}
	return a, b
}

// designAxis designs one axis; a panic (a bug) becomes its error.
func designAxis(p airframe.Axis, loop airframe.Loop, num airframe.Numeric) (x Outcome) {
	defer func() {
		if r := recover(); r != nil {
			x = Outcome{Name: p.Name, Err: fmt.Errorf("axis %s: internal error (a bug, please report it): %v", p.Name, r)}
		}
	}()
	d, err := DesignAxis(p, loop, num)
	return Outcome{Name: p.Name, Design: d, Err: err}
}

// runAll runs the jobs, at most one per core at a time, and returns when
// all are done.
func runAll(jobs []func()) {
	if len(jobs) == 1 {
		jobs[0]()
		return
	}
	sem := make(chan struct{}, runtime.GOMAXPROCS(0))
	var wg sync.WaitGroup
	for _, job := range jobs {
		wg.Add(1)
		sem <- struct{}{}
		go func() {
			defer func() { <-sem; wg.Done() }()
			job()
		}()
	}
	wg.Wait()
}

// Unmet lists, one line each, why the airframe is not ok: the axes that
// could not be designed and the checks that failed. It is empty when
// every axis passed.
func (a *Airframe) Unmet() []string {
	var out []string
	for _, x := range a.Axes {
		switch {
		case x.Err != nil:
			out = append(out, fmt.Sprintf("axis %s: %s", x.Name, x.ErrorText()))
		case x.Design == nil:
			out = append(out, fmt.Sprintf("axis %s: no design", x.Name))
		default:
			for _, c := range x.Design.Checks {
				if !c.OK {
					out = append(out, fmt.Sprintf("axis %s: %s", x.Name, c.String()))
				}
			}
		}
	}
	return out
}

// ErrorText is the axis's error without the "axis NAME: " prefix that the
// designer puts on it, for lines that name the axis already.
func (x Outcome) ErrorText() string {
	return strings.TrimPrefix(x.Err.Error(), "axis "+x.Name+": ")
}

// Infeasible reports whether err says the spec cannot be met by the form
// (exit status 1), as opposed to an internal or input failure.
func Infeasible(err error) bool {
	var inf *synth.InfeasibleError
	return errors.As(err, &inf)
}

// BatchOptions control DesignAll.
type BatchOptions struct {
	// Jobs is the number of airframes designed at once (≥ 1).
	Jobs int
	// KeepTraces keeps the simulated responses (for plots); without it
	// each design keeps its figures only, so memory stays flat in the
	// number of airframes.
	KeepTraces bool
	// Progress, if set, is called after each airframe with the number
	// done and the total, from one goroutine at a time.
	Progress func(done, total int)
	// Release lets DesignEach clear each entry of its files slice once
	// that airframe is delivered: a caller that gives the slice up this
	// way holds no parsed file it is done with, and memory stays flat in
	// the number of airframes (about 7 KB a file otherwise).
	Release bool
	// Unfiltered designs every axis with a filter chain again without
	// it (Design.Unfiltered), for the review's comparison of what the
	// chain buys: it doubles those axes' cost.
	Unfiltered bool
}

// DesignAll designs the airframes with a bounded pool of workers and
// returns the results in input order: the same results as designing them
// one by one, since every design is a pure function of its file. A panic
// in one design (a bug) becomes that airframe's error and the others go on.
func DesignAll(files []*airframe.File, o BatchOptions) []*Airframe {
	out := make([]*Airframe, len(files))
	DesignEach(files, o, func(i int, a *Airframe) { out[i] = a })
	return out
}

// DesignEach is DesignAll delivering each result to fn, in input order, as
// soon as it and all before it are done, and then forgetting it: at most
// 2·Jobs designs are held at once, so memory stays flat in the number of
// airframes. fn runs on the caller's goroutine.
func DesignEach(files []*airframe.File, o BatchOptions, fn func(i int, a *Airframe)) {
	jobs := max(o.Jobs, 1)
	n := len(files)
	slots := make([]chan *Airframe, n)
	for i := range slots {
		slots[i] = make(chan *Airframe, 1)
	}
	window := make(chan struct{}, 2*jobs) // started, not yet delivered
	next := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < min(jobs, n); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				slots[i] <- designOne(files[i], o.KeepTraces, o.Unfiltered)
			}
		}()
	}
	go func() {
		for i := 0; i < n; i++ {
			window <- struct{}{}
			next <- i
		}
		close(next)
	}()
	for i := 0; i < n; i++ {
		a := <-slots[i]
		slots[i] = nil
		if o.Release {
			files[i] = nil // the worker is done with it
		}
		<-window
		fn(i, a)
		if o.Progress != nil {
			o.Progress(i+1, n)
		}
	}
	wg.Wait()
}

func designOne(f *airframe.File, keep, unfiltered bool) (a *Airframe) {
	defer func() {
		if r := recover(); r != nil {
			a = &Airframe{File: f}
			for _, p := range f.Axes {
				a.Axes = append(a.Axes, Outcome{Name: p.Name, Err: fmt.Errorf("internal error (a bug, please report it): %v", r)})
			}
		}
	}()
	a = DesignAirframe(f)
	if unfiltered {
		var jobs []func()
		for _, x := range a.Axes {
			if d := x.Design; d != nil && len(d.Problem.Filters) > 0 {
				jobs = append(jobs, d.designUnfiltered)
			}
		}
		runAll(jobs)
	}
	if !keep {
		for _, x := range a.Axes {
			if x.Design != nil {
				x.Design.DropTraces()
			}
		}
	}
	return a
}
