package discrete

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// autoPerDecade is the density of the cutoffs a lowpass with hz = "auto"
// is chosen from: sixteen a decade, 15 % apart, finer than a
// practitioner's trial flights and coarse enough that the choice costs a
// handful of designs.
const autoPerDecade = 16

// autoFloor is the bottom of those cutoffs, in multiples of the spec's
// target natural frequency ωn (in Hz): a lowpass within three times the
// crossover costs it 18° (first order) to 27° (second order, ζ = 0.7071)
// and more, which no rate loop's margins afford (common practice).
const autoFloor = 3

// autoCutoffs returns the cutoffs a lowpass with hz = "auto" is chosen
// from, from the top (airframe.AutoLowpassTop · loop_hz, where the
// decoder put it) down to autoFloor · ωn/2π (at most three decades),
// autoPerDecade a decade, each rounded to three digits.
func autoCutoffs(p airframe.Axis, top float64) []float64 {
	lo := top / 1000
	if t, err := synth.TargetFromSpec(p.Spec); err == nil {
		lo = math.Max(lo, autoFloor*t.OmegaN/(2*math.Pi))
	}
	cs := []float64{top}
	for k := 1; ; k++ {
		c := airframe.Round3(top * lti.Pow(10, -float64(k)/autoPerDecade))
		if c < lo {
			break
		}
		if c < cs[len(cs)-1] {
			cs = append(cs, c)
		}
	}
	return cs
}

// designAutoLowpass designs axis p, whose filter i is a lowpass with
// hz = "auto", at the cutoff its goal asks for (airframe.GoalNoise: the
// highest of autoCutoffs whose design passes every check; GoalMargin:
// the lowest of the run of passing cutoffs below that), and notes the
// choice among the warnings. A high cutoff fails on the noise gain, a low
// one on the margins and the step, each more surely the further it goes,
// so the passing cutoffs are mostly one run of the list; below it a
// settling time can dip under its limit again at a cutoff or two, an
// island that the choice does not look for. The list is walked down from
// the top four cutoffs at a time to the first that passes, and the edges
// are found by bisection: about eight designs. When none passes, the
// design at the top is returned (the least phase lag), failing, with a
// note.
func designAutoLowpass(p airframe.Axis, loop airframe.Loop, num airframe.Numeric, i int) (*Design, error) {
	cs := autoCutoffs(p, p.Filters[i].Hz)
	designs := make([]*Design, len(cs))
	errs := make([]error, len(cs))
	// pass designs the axis at cutoff k. A cutoff where no design of the
	// form exists (the search's error) does not pass; an input error does
	// not depend on the cutoff and ends the choice.
	pass := func(k int) (bool, error) {
		if designs[k] == nil && errs[k] == nil {
			q := p
			q.Filters = slices.Clone(p.Filters)
			q.Filters[i].Hz = cs[k]
			designs[k], errs[k] = designAxisOnly(q, loop, num)
			var ie *InputError
			if errors.As(errs[k], &ie) {
				return false, errs[k]
			}
		}
		return designs[k] != nil && designs[k].OK(), nil
	}
	// The highest passing cutoff: walk down, then bisect between the last
	// failing and the first passing one.
	hi, fail := -1, -1
	for k := 0; ; k = min(k+4, len(cs)-1) {
		ok, err := pass(k)
		if err != nil {
			return nil, err
		}
		if ok {
			hi = k
			break
		}
		fail = k
		if k == len(cs)-1 {
			break
		}
	}
	f := p.Filters[i]
	span := fmt.Sprintf("%g–%g Hz", cs[len(cs)-1], cs[0])
	if hi < 0 {
		d := designs[0]
		if d == nil {
			return nil, errs[0]
		}
		d.Warnings = append(d.Warnings, fmt.Sprintf("lowpass hz = \"auto\" (goal %s): no cutoff of %s (%d a decade) gives a design that meets every check; the design at %g Hz, the least phase lag, is reported", f.Goal, span, autoPerDecade, cs[0]))
		return d, nil
	}
	// bisect narrows a passing index ok and a failing one bad (−1: none)
	// to neighbours, and returns them.
	bisect := func(ok, bad int) (int, int, error) {
		for bad >= 0 && abs(ok-bad) > 1 {
			m := (ok + bad) / 2
			pm, err := pass(m)
			if err != nil {
				return ok, bad, err
			}
			if pm {
				ok = m
			} else {
				bad = m
			}
		}
		return ok, bad, nil
	}
	pick, next, err := bisect(hi, fail)
	if err != nil {
		return nil, err
	}
	edge := "highest"
	if f.Goal == airframe.GoalMargin {
		// The lowest passing cutoff: from the bottom of the list, or by
		// bisection between it and the highest passing one.
		edge = "lowest"
		bottom := len(cs) - 1
		ok, err := pass(bottom)
		if err != nil {
			return nil, err
		}
		if ok {
			pick, next = bottom, -1
		} else if pick, next, err = bisect(pick, bottom); err != nil {
			return nil, err
		}
	}
	d := designs[pick]
	note := fmt.Sprintf("lowpass hz = \"auto\" (goal %s): %g Hz, the %s cutoff of %s (%d a decade) whose design meets every check", f.Goal, cs[pick], edge, span, autoPerDecade)
	switch {
	case next >= 0 && designs[next] != nil:
		note += fmt.Sprintf("; at %g Hz the design misses %s", cs[next], strings.Join(designs[next].FailedChecks(), ", "))
	case next >= 0:
		note += fmt.Sprintf("; at %g Hz there is no design: %v", cs[next], errs[next])
	default:
		note += fmt.Sprintf("; it is the %s end of the range", map[string]string{"highest": "top", "lowest": "bottom"}[edge])
	}
	d.Warnings = append(d.Warnings, note)
	return d, nil
}

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}
