package ident

import (
	"fmt"
	"math"
	"slices"
)

const (
	// gapFactor: an interval longer than gapFactor median intervals is a
	// break in the log (logging stopped, or several logs were joined), not
	// jitter; the data are not interpolated across it and a new segment
	// with its own initial state starts after it.
	gapFactor = 5.0

	// jitterTol is the relative deviation of an interval from the median
	// above which the log is resampled. 0.1 % of a period is far below
	// what the fit resolves (a delay to a few percent of a period).
	jitterTol = 1e-3

	// satMinRun is the shortest run of samples at the command's extreme
	// that auto-detection calls a saturation plateau. A controller output
	// clipped at its limit stays there for a while; a single sample at the
	// extreme is the peak of an ordinary excursion.
	satMinRun = 5

	// minSegment is the fewest samples a segment needs after its burn-in
	// for its own initial state (offset, initial acceleration, command
	// offset: three parameters) to be estimated with some redundancy.
	minSegment = 30
)

// SatMode chooses how saturated samples are found.
type SatMode int

const (
	// SatAuto excludes runs of at least satMinRun samples at the
	// command's overall minimum or maximum, when there are at least two
	// such runs at the same extreme.
	SatAuto SatMode = iota
	// SatOff keeps every sample.
	SatOff
	// SatLimits excludes the samples at or beyond the given limits.
	SatLimits
)

// Saturation says which samples are saturated and excluded from the fit.
type Saturation struct {
	Mode   SatMode
	Lo, Hi float64 // SatLimits: the command limits
}

// segment is a stretch of contiguous, unsaturated samples [start, end) of
// the prepared data, simulated from its first sample with its own initial
// state; the fit uses [start+burn, end).
type segment struct {
	start, end int
	holdout    bool
}

// data is the log prepared for the fit: uniform samples, saturated samples
// flagged, segments.
type data struct {
	T       float64
	t, u, y []float64
	// r is the excitation (nil without one), prepared as the command.
	r []float64
	// used: 0 excluded (saturated, or a segment too short), 1 fit,
	// 2 held out.
	used  []int8
	segs  []segment
	notes []string
	// excluded counts saturated samples.
	excluded  int
	resampled bool
	gaps      int
}

// prepare checks l, resamples it to the median interval when the
// timestamps are irregular, finds saturated samples and cuts the
// segments. holdout is the fraction of samples at the end kept for
// validation.
func prepare(l *Log, sat Saturation, holdout float64) (*data, error) {
	name := l.File
	n := len(l.Time)
	if len(l.Command) != n || len(l.Rate) != n {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("time, command and rate have different lengths (%d, %d, %d)", n, len(l.Command), len(l.Rate))}
	}
	line := func(i int) int {
		if i < len(l.Line) {
			return l.Line[i]
		}
		return 0
	}
	if l.Excitation != nil && len(l.Excitation) != n {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("the excitation has %d samples, the log %d", len(l.Excitation), n)}
	}
	for i, b := range l.Breaks {
		if b <= 0 || b >= n || i > 0 && b <= l.Breaks[i-1] {
			return nil, &InputError{File: name, Msg: fmt.Sprintf("break %d at sample %d: breaks must increase strictly within (0, %d)", i, b, n)}
		}
	}
	if n < MinSamples {
		return nil, &InputError{File: name, Line: line(n - 1), Msg: fmt.Sprintf("only %d samples; at least %d are needed to identify the plant", n, MinSamples)}
	}
	for i := 0; i < n; i++ {
		x := 0.0
		if l.Excitation != nil {
			x = l.Excitation[i]
		}
		for _, v := range [4]float64{l.Time[i], l.Command[i], l.Rate[i], x} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &InputError{File: name, Line: line(i), Msg: fmt.Sprintf("sample %d is not finite", i)}
			}
		}
		if i > 0 && !(l.Time[i] > l.Time[i-1] && !math.IsInf(l.Time[i]-l.Time[i-1], 0)) {
			return nil, &InputError{File: name, Line: line(i), Msg: fmt.Sprintf("time %g is not after %g; time must increase strictly", l.Time[i], l.Time[i-1])}
		}
	}
	if lo, hi := minMax(l.Command); lo == hi {
		return nil, &InputError{File: name, Line: line(0), Msg: fmt.Sprintf("the command is constant (%g): nothing to identify", lo)}
	}
	if !(holdout >= 0 && holdout <= 0.9) {
		return nil, &InputError{Msg: fmt.Sprintf("holdout %g: must be in [0, 0.9]", holdout)}
	}

	dt := make([]float64, n-1)
	for i := range dt {
		dt[i] = l.Time[i+1] - l.Time[i]
	}
	sorted := slices.Clone(dt)
	slices.Sort(sorted)
	T := sorted[len(sorted)/2]
	if len(sorted)%2 == 0 {
		T = 0.5 * (sorted[len(sorted)/2-1] + sorted[len(sorted)/2])
	}
	if !(T >= minInterval && T <= maxInterval) {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("median sample interval %g s: must be in [%g, %g] s (a log of 1 Hz to 1 MHz); check the time column and --time-unit", T, minInterval, maxInterval)}
	}
	// Runs between gaps, and the largest jitter inside them.
	var runs [][2]int
	start, jitter := 0, 0.0
	gapLo, gapHi := math.Inf(1), 0.0
	brk := make([]bool, n) // brk[i]: sample i starts a part after a NaN row
	for _, b := range l.Breaks {
		if b > 0 && b < n {
			brk[b] = true
		}
	}
	for i, d := range dt {
		if d > gapFactor*T || brk[i+1] {
			runs = append(runs, [2]int{start, i + 1})
			start = i + 1
			continue
		}
		if dev := math.Abs(d-T) / T; dev > jitter {
			jitter = dev
		}
		gapLo, gapHi = math.Min(gapLo, d), math.Max(gapHi, d)
	}
	runs = append(runs, [2]int{start, n})

	p := &data{T: T, gaps: len(runs) - 1 - len(l.Breaks)}
	// starts are the prepared indices where a run begins.
	var starts []int
	if jitter > jitterTol {
		p.resampled = true
		for _, r := range runs {
			starts = append(starts, len(p.t))
			var x []float64
			if l.Excitation != nil {
				x = l.Excitation[r[0]:r[1]]
			}
			resample(p, l.Time[r[0]:r[1]], l.Command[r[0]:r[1]], l.Rate[r[0]:r[1]], x, T)
		}
		p.notes = append(p.notes, fmt.Sprintf("timestamps are irregular (intervals %s to %s s): resampled to the median interval %s s (command averaged over each interval, rate interpolated linearly)",
			fmtSig(gapLo, 4), fmtSig(gapHi, 4), fmtSig(T, 6)))
	} else {
		p.t = slices.Clone(l.Time)
		p.u = slices.Clone(l.Command)
		p.y = slices.Clone(l.Rate)
		p.r = slices.Clone(l.Excitation)
		for _, r := range runs {
			starts = append(starts, r[0])
		}
	}
	// Run boundaries in the prepared arrays: a new run starts wherever the
	// time step is a gap.
	N := len(p.t)
	bound := make([]bool, N) // bound[i]: sample i starts a run
	if N > 0 {
		bound[0] = true
	}
	for _, i := range starts {
		if i < N {
			bound[i] = true
		}
	}
	if p.gaps > 0 {
		p.notes = append(p.notes, fmt.Sprintf("%d gap(s) longer than %g sample intervals: each part is fitted with its own initial state", p.gaps, gapFactor))
	}
	if l.Dropped > 0 {
		p.notes = append(p.notes, fmt.Sprintf("%d row(s) with NaN skipped: the log is split there into %d part(s) more, each fitted with its own initial state", l.Dropped, len(l.Breaks)))
	}

	// Saturation.
	p.used = make([]int8, N)
	bad := saturated(p.u, sat)
	for _, b := range bad {
		if b {
			p.excluded++
		}
	}
	if p.excluded > 0 {
		lo, hi := minMax(p.u)
		what := fmt.Sprintf("the command sits at its extremes (%s, %s) in repeated runs of %d or more samples; --saturation off keeps them", fmtSig(lo, 6), fmtSig(hi, 6), satMinRun)
		if sat.Mode == SatLimits {
			what = fmt.Sprintf("the command is at or beyond the limits [%s, %s]", fmtSig(sat.Lo, 6), fmtSig(sat.Hi, 6))
		}
		p.notes = append(p.notes, fmt.Sprintf("excluded %d samples (%.1f %%) as saturated: %s; each stretch after one starts with its own initial state",
			p.excluded, 100*float64(p.excluded)/float64(N), what))
	}

	split := N
	if holdout > 0 {
		split = int(math.Floor((1 - holdout) * float64(N)))
	}
	for i := 0; i < N; {
		if bad[i] {
			i++
			continue
		}
		j := i + 1
		for j < N && !bad[j] && !bound[j] && j != split {
			j++
		}
		p.segs = append(p.segs, segment{start: i, end: j, holdout: i >= split})
		i = j
	}
	return p, nil
}

// resample appends to p the run (t, u, y) on the grid t[0] + k·T. The
// command is held from each timestamp to the next (it is what the
// controller applied until its next update); the grid's value over
// [t_k, t_k + T) is its average over that interval. Averaging preserves
// the command's integral, which matters for an integrating plant: any
// other choice (the value at t_k, or at the middle of the interval) moves
// command edges by up to the jitter, and the rate integrates those
// errors into a drift that grows along the whole segment. The rate, a
// sample of a continuous signal, is interpolated linearly at t_k.
func resample(p *data, t, u, y, r []float64, T float64) {
	if len(t) == 0 {
		return
	}
	span := t[len(t)-1] - t[0]
	m := int(math.Floor(span/T+1e-9)) + 1
	j, c := 0, 0
	for k := 0; k < m; k++ {
		tk := t[0] + float64(k)*T
		for j+1 < len(t) && t[j+1] <= tk {
			j++
		}
		yk := y[j]
		if j+1 < len(t) {
			w := (tk - t[j]) / (t[j+1] - t[j])
			yk = y[j] + float64(w*(y[j+1]-y[j]))
		}
		// ∫ u over [tk, tk+T): sample c is in force on [t[c], t[c+1]).
		end := tk + T
		for c+1 < len(t) && t[c+1] <= tk {
			c++
		}
		var area float64
		for x := tk; x < end; {
			next := end
			if c+1 < len(t) && t[c+1] < end {
				next = t[c+1]
			}
			area += float64(u[c] * (next - x))
			x = next
			if x < end {
				c++
			}
		}
		p.t = append(p.t, tk)
		p.u = append(p.u, area/T)
		p.y = append(p.y, yk)
		if r != nil {
			p.r = append(p.r, average(t, r, tk, T))
		}
	}
}

// saturated flags the samples excluded by sat.
func saturated(u []float64, sat Saturation) []bool {
	bad := make([]bool, len(u))
	switch sat.Mode {
	case SatOff:
		return bad
	case SatLimits:
		for i, v := range u {
			bad[i] = v <= sat.Lo || v >= sat.Hi
		}
		return bad
	}
	lo, hi := minMax(u)
	// Values logged as the same limit are bit-identical in practice; the
	// tolerance only absorbs decimal round-trips of the log.
	tol := 1e-9 * (hi - lo)
	// A limit is a value the command comes back to: at least two runs of
	// satMinRun samples at the same extreme. One run is more likely the
	// largest excursion of a designed input (the biggest doublet of a
	// test) than a limit; --saturation LO,HI names the limits when a log
	// saturates once.
	mark := func(at func(float64) bool) {
		var runs [][2]int
		for i := 0; i < len(u); {
			if !at(u[i]) {
				i++
				continue
			}
			j := i
			for j < len(u) && at(u[j]) {
				j++
			}
			if j-i >= satMinRun {
				runs = append(runs, [2]int{i, j})
			}
			i = j
		}
		if len(runs) < 2 {
			return
		}
		for _, r := range runs {
			for k := r[0]; k < r[1]; k++ {
				bad[k] = true
			}
		}
	}
	mark(func(v float64) bool { return v >= hi-tol })
	mark(func(v float64) bool { return v <= lo+tol })
	return bad
}

// average returns the mean over [tk, tk+T) of x held from each timestamp
// of t to the next, as resample averages the command (an excitation is
// added to the command, so it is prepared the same way).
func average(t, x []float64, tk, T float64) float64 {
	c, _ := slices.BinarySearch(t, tk)
	if c == len(t) || t[c] > tk {
		c--
	}
	c = max(c, 0)
	end := tk + T
	var area float64
	for at := tk; at < end; {
		next := end
		if c+1 < len(t) && t[c+1] < end {
			next = t[c+1]
		}
		area += float64(x[c] * (next - at))
		at = next
		if at < end {
			c++
		}
	}
	return area / T
}
