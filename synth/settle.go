package synth

import (
	"math"

	"locusmith/internal/lti"
)

// weightedSettle is lti.Settle of the response y(b) = y0 + b·(y1 − y0)
// of setpoint weight b, computed from y0 and y1 without writing y(b) out:
// the search summarizes several weights of every pair of responses, and
// each summary then reads the records once forward for the peak and
// backward only as far as the last sample outside the band. Every sample
// of y(b) is the expression the search used to store, so the figures are
// Settle's to the bit (TestWeightedSettle).
func weightedSettle(y0, y1 []float64, b, h, final, band float64) lti.StepInfo {
	nan := math.NaN()
	si := lti.StepInfo{Final: final, Peak: nan, PeakTime: nan, Overshoot: nan, Settling: nan, Rise: nan}
	n := len(y0)
	if n == 0 {
		return si
	}
	y1 = y1[:n]

	// Peak: the first sample furthest in the direction of final.
	dir := 1.0
	if final < 0 {
		dir = -1
	}
	// Settle's test dir·v > dir·y[pk] is v > y[pk] for dir = 1 and
	// v < y[pk] for dir = −1 (negation is exact), and false for a NaN v,
	// which needs no test of its own once the first number is found.
	pk := -1
	var peak float64 // y(b) at pk
	k := 0
	for ; k < n; k++ {
		if v := y0[k] + float64(b*(y1[k]-y0[k])); !math.IsNaN(v) {
			pk, peak = k, v
			break
		}
	}
	if dir > 0 {
		for k++; k < n; k++ {
			if v := y0[k] + float64(b*(y1[k]-y0[k])); v > peak {
				pk, peak = k, v
			}
		}
	} else {
		for k++; k < n; k++ {
			if v := y0[k] + float64(b*(y1[k]-y0[k])); v < peak {
				pk, peak = k, v
			}
		}
	}
	return settleFrom(y0, y1, b, h, final, band, pk, peak)
}

// settleFrom completes weightedSettle from the peak, the first sample pk
// furthest in the direction of final (−1: none) and its value.
func settleFrom(y0, y1 []float64, b, h, final, band float64, pk int, peak float64) lti.StepInfo {
	nan := math.NaN()
	si := lti.StepInfo{Final: final, Peak: nan, PeakTime: nan, Overshoot: nan, Settling: nan, Rise: nan}
	n := len(y0)
	dir := 1.0
	if final < 0 {
		dir = -1
	}
	if pk >= 0 {
		si.Peak = peak
		si.PeakTime = float64(pk) * h
	}
	if final != 0 && !math.IsNaN(final) {
		si.Overshoot = 0
		if pk >= 0 && dir*(peak-final) > 0 {
			si.Overshoot = (peak - final) / final
		}
	}

	// Settling: the last sample outside the band, the exit interpolated.
	tol := math.Abs(band * final)
	last := -1
	for k := n - 1; k >= 0; k-- {
		v := y0[k] + float64(b*(y1[k]-y0[k]))
		if !(math.Abs(v-final) <= tol) {
			last = k
			break
		}
	}
	var e0, e1 float64
	if last >= 0 && last < n-1 {
		v0 := y0[last] + float64(b*(y1[last]-y0[last]))
		v1 := y0[last+1] + float64(b*(y1[last+1]-y0[last+1]))
		e0, e1 = v0-final, v1-final
	}
	si.Settling, si.Settled = lti.SettleExit(last, n, e0, e1, tol, h)
	return si
}

// weightedSettles writes weightedSettle(y0, y1, bs[j], h, finals[j], band)
// into out[j] for every j, the peaks of up to eight weights found in one
// pass over the records when every final value is positive (where the
// search summarizes a step) and no weight's first sample is NaN;
// otherwise one weight at a time.
func weightedSettles(y0, y1, bs, finals []float64, h, band float64, out []lti.StepInfo) {
	const most = 8
	for len(bs) > most {
		weightedSettles(y0, y1, bs[:most], finals[:most], h, band, out[:most])
		bs, finals, out = bs[most:], finals[most:], out[most:]
	}
	n := len(y0)
	var peak [most]float64
	var pk [most]int
	one := n == 0
	for j := 0; j < len(bs) && !one; j++ {
		v := y0[0] + float64(bs[j]*(y1[0]-y0[0]))
		one = math.IsNaN(v) || !(finals[j] > 0)
		peak[j] = v
	}
	if one {
		for j, b := range bs {
			out[j] = weightedSettle(y0, y1, b, h, finals[j], band)
		}
		return
	}
	y1 = y1[:n]
	bs = bs[:len(bs):len(bs)]
	for k := 1; k < n; k++ {
		a, d := y0[k], y1[k]-y0[k]
		for j, b := range bs {
			if v := a + float64(b*d); v > peak[j] {
				pk[j], peak[j] = k, v
			}
		}
	}
	for j, b := range bs {
		out[j] = settleFrom(y0, y1, b, h, finals[j], band, pk[j], peak[j])
	}
}
