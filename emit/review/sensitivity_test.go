package review

import (
	"math"
	"testing"
)

// TestSensitivityNoiseCurve: the |C·F| curve of the sensitivity figure
// peaks, between the crossover and Nyquist, at the noise gain the design
// reports (NoiseGain, checked against SciPy in discrete), on a design with
// a filter chain (the golden compliant airframe: a notch and a 200 Hz
// lowpass) and on one without (the demo quadrotor). Before the figure
// took the chain, it drew |C| alone, 3 dB above the noise gain of the
// compliant design. Tolerance 0.05 dB: the figure's grid of 800 points
// against the design's refined peak. The band starts where the design's
// does, at the lowest crossover over the envelope: from the nominal one,
// the demo quadrotor's yaw (a pi whose gain falls 0.054 dB between the
// two) misses by more than the tolerance.
func TestSensitivityNoiseCurve(t *testing.T) {
	for _, path := range []string{"../../golden/testdata/compliant.toml", "../../examples/quadrotor.toml"} {
		a := sharedDesign(t, path)
		for _, x := range a.Axes {
			d := x.Design
			if d == nil {
				t.Fatalf("%s %s: %v", path, x.Name, x.Err)
			}
			// The noise gain's band starts at the lowest crossover of
			// the envelope's plants (discrete.NoiseGain), below the
			// nominal one where the plant's gain is lower.
			wc := d.Verif.Margins.Crossover
			for _, f := range d.Envelope {
				if len(f.Margins.GainCrossovers) > 0 {
					wc = math.Min(wc, f.Margins.GainCrossovers[0])
				}
			}
			ny := math.Pi / d.Plant.T
			ws := logGrid(wc, 0.999*ny, 800)
			_, _, _, cDB, _, _, _, _ := sensitivityCurves(d, newDiscreteLoop(d), ws)
			top := math.Inf(-1)
			for _, v := range cDB {
				top = math.Max(top, v)
			}
			want := 20 * math.Log10(d.NoiseGain)
			if math.Abs(top-want) > 0.05 {
				t.Errorf("%s %s (%d filters): the noise curve peaks at %.3f dB above the crossover, the noise gain is %.3f dB",
					path, x.Name, len(d.Plant.Sections), top, want)
			}
		}
	}
}
