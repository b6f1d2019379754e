package synth

import (
	"slices"
	"testing"

	"locusmith/airframe"
)

// TestRideHugsTheBound: ride, from the PID shapes of the coarse grid
// that a noise bound closes or stops short of a gain x, returns a shape
// of the same derivative share and a lower n that admits x, whose noise
// gain at x meets the bound by the brute-force sweep denseNoise (within
// its 0.5 % agreement with noiseAt, TestNoiseFromCrossover), and that
// lies against the bound: 0.002 decade more n no longer admits x. The
// bound is 0.9 of the median noise gain of the grid's shapes at their
// top, which puts its edge about 0.05 decade of n below a row of the
// grid; x is half the top of the shape a grid step lower in n.
func TestRideHugsTheBound(t *testing.T) {
	sr, l := demoSearcher(t, airframe.FormPID, 0.002)
	var noises []float64
	for _, u := range sr.gridPoints() {
		if pt := sr.screen(u); pt.xf > 0 {
			noises = append(noises, pt.noise)
		}
	}
	slices.Sort(noises)
	sr.noiseB = 0.9 * noises[len(noises)/2]
	if !sr.rides() {
		t.Fatal("a pid under a noise bound does not ride")
	}
	rode, tight := 0, 0
	for _, u := range sr.gridPoints() {
		below := sr.screen([]float64{u[0] - sr.gridStep()[0], u[1]})
		if !(below.xf > 0) {
			continue
		}
		x := below.xf / 2
		pt := sr.ride(u, x)
		if pt == nil {
			continue
		}
		rode++
		if pt.xf < x || pt.u[1] != u[1] || !(pt.u[0] < u[0]) || pt.u[0] < u[0]-rideSpan {
			t.Errorf("shape %v, x %g: rode to %v with top %g", u, x, pt.u, pt.xf)
			continue
		}
		if n := denseNoise(l, sr.fam.ctrl(pt.th, x)); n > sr.noiseB*1.005 {
			t.Errorf("shape %v, x %g: rode to %v, noise gain %g (dense sweep) above the bound %g", u, x, pt.u, n, sr.noiseB)
		}
		up := []float64{pt.u[0] + 0.002, pt.u[1]}
		if q := sr.screen(up); q.xf < x {
			tight++
		}
	}
	if rode < 5 || tight < rode*9/10 {
		t.Errorf("%d shapes rode, %d of them against the bound: the check has no teeth", rode, tight)
	}
	t.Logf("%d shapes rode, %d within 0.002 decade of the bound; bound %g", rode, tight, sr.noiseB)
}

// TestUndominated: the design is replaced by a passing design of the
// search that beats it in gain and noise both (noise gains within a
// millionth of it tie), never by one above the noise bound, a failing
// one or one of less gain, and not at all for a form without an
// integral.
func TestUndominated(t *testing.T) {
	pt := &point{}
	c := func(gain, noise float64, ok bool) cand { return cand{pt: pt, gain: gain, noise: noise, ok: ok} }
	best := c(1, 1, true)
	atBound := c(1, 2, true)
	for _, tc := range []struct {
		name    string
		form    airframe.Form
		start   cand
		passing []cand
		want    cand
	}{
		{"none better", airframe.FormPID, best, []cand{c(0.99, 0.9, true), c(1.2, 1.01, true)}, best},
		{"quieter at the same gain", airframe.FormPI, best, []cand{c(1, 0.95, true)}, c(1, 0.95, true)},
		{"more gain at a tie", airframe.FormPID, best, []cand{c(1.02, 1+5e-7, true)}, c(1.02, 1+5e-7, true)},
		{"more gain, a hair more noise", airframe.FormPID, best, []cand{c(1.02, 1+2e-6, true)}, best},
		{"both, the last that beats the one before", airframe.FormPID, best,
			[]cand{c(1.01, 0.99, true), c(1.005, 0.98, true), c(1.03, 0.98, true)}, c(1.03, 0.98, true)},
		{"a tie above the bound", airframe.FormPID, atBound, []cand{c(1.1, 2+5e-7, true)}, atBound},
		{"a chain of ties drifting above the start", airframe.FormPID, best,
			[]cand{c(1.01, 1+9e-7, true), c(1.02, 1+1.8e-6, true)}, c(1.01, 1+9e-7, true)},
		{"failing", airframe.FormPID, best, []cand{c(1.1, 0.5, false)}, best},
		{"no integral", airframe.FormPD, best, []cand{c(1.1, 0.5, true)}, best},
	} {
		sr := &searcher{noiseB: 2, passing: tc.passing}
		sr.p.Ctrl.Form = tc.form
		if got := sr.undominated(tc.start); got.gain != tc.want.gain || got.noise != tc.want.noise {
			t.Errorf("%s: gain %g noise %g, want gain %g noise %g", tc.name, got.gain, got.noise, tc.want.gain, tc.want.noise)
		}
	}
}

// TestTieBreak: of two finished designs, the quietest within NearBest of
// the best gain found (the tie-break's own rule, package doc), by hand.
func TestTieBreak(t *testing.T) {
	c := func(gain, noise float64) cand { return cand{gain: gain, noise: noise} }
	for _, tc := range []struct {
		name  string
		a, b  cand
		top   float64
		wantA bool
	}{
		{"the quieter of two within the band, though of less gain", c(0.981, 1), c(0.99, 1.1), 1, true},
		{"the quieter second", c(0.99, 1.1), c(0.981, 1), 1, false},
		{"one below the band of the best", c(0.95, 1), c(0.99, 2), 1, false},
		{"a best found above both: one in its band", c(1.01, 2), c(1.0, 1), 1.03, true},
		{"a tie in noise: the larger gain", c(0.99, 1), c(1, 1+5e-7), 1, false},
		{"a hair more noise loses", c(0.99, 1), c(1, 1+2e-6), 1, true},
		{"both below the band: the larger gain", c(0.9, 1), c(0.95, 2), 1.05, false},
		{"equal: the first", c(1, 1), c(1, 1), 1, true},
	} {
		got := tieBreak(tc.a, tc.b, tc.top)
		want := tc.b
		if tc.wantA {
			want = tc.a
		}
		if got.gain != want.gain || got.noise != want.noise {
			t.Errorf("%s: got gain %g noise %g, want gain %g noise %g", tc.name, got.gain, got.noise, want.gain, want.noise)
		}
	}
}
