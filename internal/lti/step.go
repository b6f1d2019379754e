package lti

import "math"

// StepInfo holds step-response metrics.
type StepInfo struct {
	Final     float64 // the final value used (given, not estimated from samples)
	Peak      float64 // extreme value in the direction of Final (max if Final >= 0, min if Final < 0)
	PeakTime  float64 // time of the first sample attaining Peak
	Overshoot float64 // (Peak − Final)/Final if Peak is beyond Final, else 0; NaN if Final = 0
	Settling  float64 // last time outside ±band·|Final| (exit interpolated); 0 if never outside
	Rise      float64 // 10–90 % rise time (interpolated); NaN if 90 % never reached or Final = 0
	Settled   bool    // last sample inside the band and inside over (at least) the last 10 % of the record
}

// StepMetrics computes step metrics of y[k] sampled at t = k·h against the
// given final value and relative settling band (e.g. 0.02).
//
//   - Peak/PeakTime: the sample furthest in the direction of Final (first
//     occurrence); NaN samples are ignored.
//   - Overshoot: (Peak − Final)/Final, which is positive for a response that
//     goes beyond Final for either sign of Final; 0 if it never does.
//   - Settling: with e = y − Final and tol = band·|Final|, a sample is outside
//     when !(|e| <= tol) (NaN counts as outside). Settling is the time at
//     which the linear interpolation between the last outside sample k and
//     sample k+1 crosses the band edge. If the last sample is itself outside
//     there is no exit and Settling is the record end (len(y)−1)·h.
//   - Rise: t90 − t10 where t_p is the first (interpolated) time y/Final
//     reaches p; t_p = 0 if y[0] already does.
//   - Settled: the last sample is inside and Settling <= 0.9·(len(y)−1)·h.
//
// An empty y gives NaN metrics and Settled = false.
func StepMetrics(y []float64, h, final, band float64) StepInfo {
	si := Settle(y, h, final, band)
	if len(y) > 0 && final != 0 && !math.IsNaN(final) {
		t10 := crossTime(y, h, final, 0.1)
		t90 := crossTime(y, h, final, 0.9)
		if !math.IsNaN(t90) && !math.IsNaN(t10) {
			si.Rise = t90 - t10
		}
	}
	return si
}

// Settle is StepMetrics without the rise time (Rise is NaN): the peak,
// overshoot and settling figures alone, which a search over many candidate
// responses needs, at a third of the cost.
func Settle(y []float64, h, final, band float64) StepInfo {
	nan := math.NaN()
	si := StepInfo{Final: final, Peak: nan, PeakTime: nan, Overshoot: nan, Settling: nan, Rise: nan}
	n := len(y)
	if n == 0 {
		return si
	}

	// Peak.
	dir := 1.0
	if final < 0 {
		dir = -1
	}
	pk := -1
	for k, v := range y {
		if math.IsNaN(v) {
			continue
		}
		if pk < 0 || dir*v > dir*y[pk] {
			pk = k
		}
	}
	if pk >= 0 {
		si.Peak = y[pk]
		si.PeakTime = float64(pk) * h
	}
	if final != 0 && !math.IsNaN(final) {
		si.Overshoot = 0
		if pk >= 0 && dir*(y[pk]-final) > 0 {
			si.Overshoot = (y[pk] - final) / final
		}
	}

	// Settling.
	tol := math.Abs(band * final)
	last := -1
	for k := n - 1; k >= 0; k-- {
		if !(math.Abs(y[k]-final) <= tol) {
			last = k
			break
		}
	}
	var e0, e1 float64
	if last >= 0 && last < n-1 {
		e0, e1 = y[last]-final, y[last+1]-final
	}
	si.Settling, si.Settled = SettleExit(last, n, e0, e1, tol, h)
	return si
}

// SettleExit returns the settling time and whether the response settled,
// from the last sample (index last, −1 for none) of n outside the band
// ±tol about the final value, e0 and e1 the errors of that sample and the
// next: the exit from the band interpolated linearly between them, the
// end of the record when the last sample is outside, and settled when
// the exit comes before 90 % of the record (a later one is not seen to
// stay inside).
func SettleExit(last, n int, e0, e1, tol, h float64) (float64, bool) {
	tEnd := float64(n-1) * h
	var t float64
	switch {
	case last < 0:
		t = 0
	case last == n-1:
		t = tEnd
	default:
		edge := tol
		if e0 < 0 {
			edge = -tol
		}
		th := 0.0
		if !math.IsNaN(e0) && e0 != e1 {
			th = (e0 - edge) / (e0 - e1)
			th = math.Max(0, math.Min(1, th))
		}
		t = (float64(last) + th) * h
	}
	return t, last < n-1 && t <= 0.9*tEnd
}

// crossTime is the first (interpolated) time at which y/final reaches p.
func crossTime(y []float64, h, final, p float64) float64 {
	for k, v := range y {
		if v/final >= p {
			if k == 0 {
				return 0
			}
			r0, r1 := y[k-1]/final, v/final
			th := 1.0
			if r1 != r0 && !math.IsNaN(r0) {
				th = (p - r0) / (r1 - r0)
				th = math.Max(0, math.Min(1, th))
			}
			return (float64(k-1) + th) * h
		}
	}
	return math.NaN()
}
