package discrete

import (
	"fmt"
	"math"
	"os"
	"slices"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// compliantAxis is an invented rate axis with a lightly damped frame mode
// (ζ = 0.05 at 40 Hz, a +20 dB peak) within a decade above the crossover
// (about 6 Hz), a 1 ms transport delay and an ideal gyro.
func compliantAxis() airframe.Axis {
	wr := 2 * math.Pi * 40.0
	zr := 0.05
	pr := complex(-zr*wr, wr*math.Sqrt(1-zr*zr))
	return airframe.Axis{
		Name: "pitch",
		Plant: airframe.Plant{Model: lti.ZPK{Gain: 2400 / 0.03 * wr * wr,
			Poles: []complex128{0, complex(-1/0.03, 0), pr, complex(real(pr), -imag(pr))}}, Delay: 0.001},
		Sensor: lti.ZPK{Gain: 1},
		Spec: airframe.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.1, MinPhaseMargin: 40, MinGainMargin: 6,
			MaxSensitivity: 1.7, MaxSteadyError: 0.02, DisturbanceStep: 0.05},
		Ctrl: airframe.Control{Form: airframe.FormPID, Refine: true, ThirdPole: 5, DerivativeLowpassHz: 125, SetpointWeight: 1,
			OutputLimit: [2]float64{-0.5, 0.5}, IntegratorLimit: 0.5, AntiWindup: "backcalc", Discretize: "tustin"},
		Envelope: airframe.Envelope{GainScale: [2]float64{0.9, 1.1}, LagScale: [2]float64{1, 1}},
	}
}

// scipyInput is filterLoopScript's input for design d at the plant gain
// scaled by gs.
func scipyInput(d *Design, gs float64, freq bool) filterLoopInput {
	p := d.Problem
	T := 1 / d.Loop.Hz
	g, _ := p.Plant.Model.TF()
	h, _ := p.Sensor.TF()
	nc, ns, dc := d.Coeffs.TF()
	gn := g.Num.Descending()
	for i := range gn {
		gn[i] *= gs
	}
	fs := []scipyFilter{}
	for _, f := range p.Filters {
		fs = append(fs, scipyFilter{Kind: string(f.Kind), Hz: f.Hz, WidthHz: f.WidthHz, Order: f.Order})
	}
	whole, _ := lti.SplitDelay(p.Plant.Delay, T)
	return filterLoopInput{T: T, D: d.Loop.ComputeDelay + whole, N: int(8 * p.Spec.SettlingTime / T), GNum: gn, GDen: g.Den.Descending(),
		HNum: h.Num.Descending(), HDen: h.Den.Descending(), Filters: fs,
		CNum: nc.Descending(), CSet: ns.Descending(), CDen: dc.Descending(), Theta: []float64{}, Freq: freq}
}

// stepFigures reads the settling time and overshoot off SciPy's step
// (the last sample outside the band, as lti.StepMetrics reads it:
// settling = (k+1)·T).
func stepFigures(r filterLoopResult, band, T float64) (settling, overshoot float64) {
	last := -1
	for k, y := range r.Y {
		if math.Abs(y-r.Final) > band*math.Abs(r.Final) {
			last = k
		}
		overshoot = math.Max(overshoot, (y-r.Final)/r.Final)
	}
	return float64(last+1) * T, overshoot
}

// TestNotchBuysGain is the compliant-plant property: on a plant with a
// lightly damped mode above the crossover, the PID alone cannot meet the
// spec over the envelope, and with a notch on the mode it can, with a
// larger integral gain. Both statements are confirmed by SciPy 1.10 on
// the designs' sampled loops (filterLoopScript: ZOH by cont2discrete,
// the notch by iirnotch, the step by dlsim).
func TestNotchBuysGain(t *testing.T) {
	t.Parallel()
	loop := airframe.Loop{Hz: 1000, ComputeDelay: 1}
	num := airframe.Numeric{Type: airframe.Float32}
	p := compliantAxis()
	d0, err := DesignAxis(p, loop, num)
	if err != nil {
		t.Fatal(err)
	}
	p.Filters = []airframe.Filter{{Kind: airframe.FilterNotch, At: "feedback", Hz: 40, WidthHz: 16}}
	d1, err := DesignAxis(p, loop, num)
	if err != nil {
		t.Fatal(err)
	}
	ki0, ki1 := d0.Cont.Ctrl.Ki, d1.Cont.Ctrl.Ki
	t.Logf("without the notch: ok %v, Ki %.4g, PM %.1f°; with it: ok %v, Ki %.4g, PM %.1f° (Ki ×%.1f)",
		d0.OK(), ki0, d0.Verif.Margins.PhaseDeg, d1.OK(), ki1, d1.Verif.Margins.PhaseDeg, ki1/ki0)
	if d0.OK() || !d1.OK() {
		t.Fatalf("met without the notch %v, with it %v; want false, true", d0.OK(), d1.OK())
	}
	if !(ki1 > 2*ki0) {
		t.Errorf("Ki %g with the notch, %g without: want more than twice", ki1, ki0)
	}
	// Without the notch the design suggests it, with the figures of the
	// design that has it (the mode: 40 Hz, ζ = 0.05; width 0.4·40 Hz);
	// with it, nothing is suggested.
	want := fmt.Sprintf(`kind = "notch", hz = 40, width_hz = 16 (what hz = "auto" gives) the design meets every check (without it, it does not), Ki %.4g against %.4g now`, ki1, ki0)
	if !slices.ContainsFunc(d0.Warnings, func(w string) bool { return strings.Contains(w, want) }) {
		t.Errorf("no suggestion %q among %q", want, d0.Warnings)
	}
	if slices.ContainsFunc(d1.Warnings, func(w string) bool { return strings.Contains(w, "no notch covers it") }) {
		t.Errorf("a notch suggested on top of the notch: %q", d1.Warnings)
	}
	// SciPy: the design without the notch misses the settling time at
	// some plant of the envelope; the one with it meets the step spec at
	// every corner, and its nominal margins and Ms.
	gains := []float64{0.9, 1, 1.1}
	var in []filterLoopInput
	for _, gs := range gains {
		in = append(in, scipyInput(d0, gs, false))
	}
	for _, gs := range gains {
		in = append(in, scipyInput(d1, gs, gs == 1))
	}
	var ref []filterLoopResult
	pyref.Run(t, filterLoopScript, in, &ref)
	T := 1 / loop.Hz
	worst := 0.0
	for i := range gains {
		st, _ := stepFigures(ref[i], p.Spec.Band, T)
		worst = math.Max(worst, st)
	}
	if !(worst > p.Spec.SettlingTime) {
		t.Errorf("SciPy: without the notch the settling time is %g s at worst, within the spec's %g s", worst, p.Spec.SettlingTime)
	}
	for i, gs := range gains {
		res := ref[len(gains)+i]
		st, os := stepFigures(res, p.Spec.Band, T)
		if st > p.Spec.SettlingTime || os > p.Spec.Overshoot {
			t.Errorf("SciPy, gain ×%g: with the notch settling %g s, overshoot %g", gs, st, os)
		}
		if gs == 1 && (res.PM < p.Spec.MinPhaseMargin || res.GM == nil || *res.GM < p.Spec.MinGainMargin || res.Ms > p.Spec.MaxSensitivity) {
			t.Errorf("SciPy: with the notch PM %g°, GM %v dB, Ms %g", res.PM, res.GM, res.Ms)
		}
	}
	t.Logf("SciPy: settling without the notch %.4g s at worst; with it PM %.1f°, Ms %.3f", worst, ref[len(gains)+1].PM, ref[len(gains)+1].Ms)
}

// BenchmarkDesignAxisFilters is BenchmarkDesignAxisAtRate's axis (the demo
// quadrotor's roll) designed without and with two feedback filters (a
// notch well above the crossover and a gyro lowpass, placed so that the
// spec is met with them too: a chain that makes it infeasible would
// compare a failed search with a successful one): the cost the chain
// adds to the design (at most 1.3 times, a target).
func BenchmarkDesignAxisFilters(b *testing.B) {
	data, err := os.ReadFile("../examples/quadrotor.toml")
	if err != nil {
		b.Fatal(err)
	}
	f, err := airframe.Parse("quadrotor.toml", data)
	if err != nil {
		b.Fatal(err)
	}
	var p airframe.Axis
	for _, a := range f.Axes {
		if a.Name == "roll" {
			p = a
		}
	}
	for _, n := range []int{0, 2} {
		q := p
		if n > 0 {
			q.Filters = []airframe.Filter{
				{Kind: airframe.FilterNotch, At: "feedback", Hz: 250, WidthHz: 40},
				{Kind: airframe.FilterLowpass, At: "feedback", Hz: 350, Order: 2, Damping: 1 / math.Sqrt2},
			}
		}
		b.Run(fmt.Sprintf("filters=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := DesignAxis(q, f.Loop, f.Numeric); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
