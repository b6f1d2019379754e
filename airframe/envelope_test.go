package airframe

import (
	"math/cmplx"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"locusmith/internal/lti"
)

// TestEnvelopeDecode checks the accepted values of [axes.NAME.envelope]
// and that each absent key keeps its default (the rejected values are in
// malformed_test.go).
func TestEnvelopeDecode(t *testing.T) {
	def := Envelope{GainScale: [2]float64{0.9, 1.1}, LagScale: [2]float64{1, 1}}
	delayed := edit(t, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = 0.002")
	cases := []struct {
		desc string
		src  string
		want Envelope
	}{
		{"no table", minimal, def},
		{"empty table", withEnvelope(""), def},
		{"lag only", withEnvelope("lag_scale = [0.8, 1.5]"),
			Envelope{GainScale: def.GainScale, LagScale: [2]float64{0.8, 1.5}}},
		{"nominal only", withEnvelope("gain_scale = [1, 1]\nlag_scale = [1.0, 1.0]\ndelay_add = [0, 0]"),
			Envelope{GainScale: [2]float64{1, 1}, LagScale: [2]float64{1, 1}}},
		{"the edges of the scales", withEnvelope("gain_scale = [0.1, 10]\nlag_scale = [1, 10.0]"),
			Envelope{GainScale: [2]float64{0.1, 10}, LagScale: [2]float64{1, 10}}},
		// At 500 Hz, so that 0.5 s is 250 samples, within MaxDelaySamples.
		{"delay_add up to zero and to 0.5 s in all",
			strings.Replace(delayed, "loop_hz = 1000", "loop_hz = 500", 1) + "\n[axes.roll.envelope]\ndelay_add = [-0.002, 0.498]\n",
			Envelope{GainScale: def.GainScale, LagScale: def.LagScale, DelayAdd: [2]float64{-0.002, 0.498}}},
		{"delay_add on a plant without delay", withEnvelope("delay_add = [0, 0.005]"),
			Envelope{GainScale: def.GainScale, LagScale: def.LagScale, DelayAdd: [2]float64{0, 0.005}}},
	}
	for _, tc := range cases {
		f := mustParse(t, tc.src)
		if d := cmp.Diff(tc.want, f.Axes[0].Envelope); d != "" {
			t.Errorf("%s (-want +got):\n%s", tc.desc, d)
		}
	}
}

// TestCorners checks Envelope.Corners: the nominal plant first, then the
// corners of the box in the order gain, lag, delay, low before high, each
// once. A box of three intervals has 2³ = 8 corners.
func TestCorners(t *testing.T) {
	cases := []struct {
		desc string
		e    Envelope
		want []Corner
	}{
		{"nominal only", Envelope{GainScale: [2]float64{1, 1}, LagScale: [2]float64{1, 1}},
			[]Corner{Nominal()}},
		{"the default: gain ±10 %", Envelope{GainScale: [2]float64{0.9, 1.1}, LagScale: [2]float64{1, 1}},
			[]Corner{Nominal(), {0.9, 1, 0}, {1.1, 1, 0}}},
		{"one-sided gain: the nominal low end is not repeated",
			Envelope{GainScale: [2]float64{1, 1.3}, LagScale: [2]float64{1, 1}},
			[]Corner{Nominal(), {1.3, 1, 0}}},
		{"a full box: 1 + 8", Envelope{GainScale: [2]float64{0.9, 1.1}, LagScale: [2]float64{0.8, 1.2}, DelayAdd: [2]float64{-0.001, 0.002}},
			[]Corner{Nominal(),
				{0.9, 0.8, -0.001}, {0.9, 0.8, 0.002}, {0.9, 1.2, -0.001}, {0.9, 1.2, 0.002},
				{1.1, 0.8, -0.001}, {1.1, 0.8, 0.002}, {1.1, 1.2, -0.001}, {1.1, 1.2, 0.002}}},
		{"a box with the nominal plant as a corner: 8 corners, one of them nominal",
			Envelope{GainScale: [2]float64{1, 1.2}, LagScale: [2]float64{0.8, 1}, DelayAdd: [2]float64{0, 0.001}},
			[]Corner{Nominal(),
				{1, 0.8, 0}, {1, 0.8, 0.001}, {1, 1, 0.001},
				{1.2, 0.8, 0}, {1.2, 0.8, 0.001}, {1.2, 1, 0}, {1.2, 1, 0.001}}},
	}
	for _, tc := range cases {
		if d := cmp.Diff(tc.want, tc.e.Corners()); d != "" {
			t.Errorf("%s (-want +got):\n%s", tc.desc, d)
		}
	}
	if n := defaultEnvelope().Corners(); len(n) != 3 {
		t.Errorf("default envelope: %d corners %v, want 3", len(n), n)
	}
}

// The tolerance of the frequency-response checks below: the formula and
// the zpk product each take a handful of complex multiplications and a
// division (a few ulp each, ulp ≈ 2.2e-16); 1e-13 relative leaves room for
// that and would catch a wrong pole or gain at the 1e-3 level by ten
// orders of magnitude.
const respTol = 1e-13

// TestAtPhysical checks Axis.At on the physical form against the hand
// formula of the README's plant, G(s) = effectiveness/(s·(motor_tau·s +
// 1)), with motor_tau scaled by the lag factor λ and the whole multiplied
// by the gain factor g: effectiveness·g/(s·(λ·motor_tau·s + 1)). The
// effectiveness, s·G(s) at s → 0, stays effectiveness·g.
func TestAtPhysical(t *testing.T) {
	const eff, tau, delay = 2000.0, 0.025, 0.002
	f := mustParse(t, edit(t, "motor_tau = 0.025", "motor_tau = 0.025\ndelay = 0.002")+withSensorLines("lowpass_hz = 90.0"))
	a := f.Axes[0]
	before := cloneZPK(a.Plant.Model)

	if d := cmp.Diff(a, a.At(Nominal())); d != "" {
		t.Errorf("At(Nominal()) moved the axis (-want +got):\n%s", d)
	}
	for _, c := range []Corner{{1.1, 1, 0}, {0.9, 1.5, 0.001}, {1.2, 0.7, -0.002}, {1, 2, 0}} {
		b := a.At(c)
		for _, s := range []complex128{1i, 10i, 40i, 100i, 1000i, complex(-3, 5), complex(-100, 30)} {
			formula := complex(eff*c.GainScale, 0) / (s * (complex(c.LagScale*tau, 0)*s + 1))
			if got := b.Plant.Model.Eval(s); cmplx.Abs(got-formula) > respTol*cmplx.Abs(formula) {
				t.Errorf("corner %+v: G(%v) = %v, formula %v", c, s, got, formula)
			}
		}
		// Hand: 0.002 + c.DelayAdd, the same one addition.
		if want := delay + c.DelayAdd; b.Plant.Delay != want {
			t.Errorf("corner %+v: delay %v, want %v", c, b.Plant.Delay, want)
		}
		if d := cmp.Diff(a.Sensor, b.Sensor); d != "" {
			t.Errorf("corner %+v: sensor moved (-want +got):\n%s", c, d)
		}
		if b.Name != a.Name || b.Spec != a.Spec || b.Envelope != a.Envelope {
			t.Errorf("corner %+v: other fields changed", c)
		}
	}
	if d := cmp.Diff(before, a.Plant.Model); d != "" {
		t.Errorf("At changed the nominal axis (-want +got):\n%s", d)
	}
}

// TestAtZPK checks Axis.At on a zpk plant with a zero, an integrator and
// a complex pair against the hand formula: every non-zero pole's time
// constant scaled by λ, 1/(s − p) → 1/(λ·s − p), so that
//
//	G_c(s) = g·K·(s + 1000) / (s·(λs + 25)·((λs + 300)² + 400²)),
//
// the zero and the integrator left alone. The pair keeps its damping
// (ζ = 300/500 = 0.6) with its natural frequency divided by λ.
func TestAtZPK(t *testing.T) {
	const k = 2.0e9
	f := mustParse(t, zpkPlant(t, "gain = 2.0e9\npoles = [0.0, -25.0, [-300.0, 400.0]]\nzeros = [-1000.0]\ndelay = 0.0005"))
	a := f.Axes[0]
	for _, c := range []Corner{{1.1, 1, 0}, {0.8, 1.25, 0.001}, {1.3, 0.5, -0.0005}} {
		b := a.At(c)
		lam := complex(c.LagScale, 0)
		for _, s := range []complex128{1i, 25i, 300i, 500i, 5000i, complex(-10, 200)} {
			pair := (lam*s+300)*(lam*s+300) + 400*400
			formula := complex(c.GainScale*k, 0) * (s + 1000) / (s * (lam*s + 25) * pair)
			if got := b.Plant.Model.Eval(s); cmplx.Abs(got-formula) > respTol*cmplx.Abs(formula) {
				t.Errorf("corner %+v: G(%v) = %v, formula %v", c, s, got, formula)
			}
		}
		m := b.Plant.Model
		if d := cmp.Diff([]complex128{-1000}, m.Zeros); d != "" || m.Poles[0] != 0 {
			t.Errorf("corner %+v: zero or integrator moved: %v %v", c, m.Zeros, m.Poles)
		}
		// The pair stays a conjugate pair, exactly: the transfer function
		// of a real plant needs it.
		if m.Poles[3] != cmplx.Conj(m.Poles[2]) {
			t.Errorf("corner %+v: poles %v and %v are not conjugate", c, m.Poles[2], m.Poles[3])
		}
		// Hand: (−300 + 400j)/λ; |p| = 500/λ, ζ = 300/500. Tolerance: one
		// complex division by a real, 1e-15 relative per component.
		wantP := complex(-300/c.LagScale, 400/c.LagScale)
		if !relClose(real(m.Poles[2]), real(wantP), 1e-15) || !relClose(imag(m.Poles[2]), imag(wantP), 1e-15) {
			t.Errorf("corner %+v: pair at %v, want %v", c, m.Poles[2], wantP)
		}
		if want := 0.0005 + c.DelayAdd; b.Plant.Delay != want {
			t.Errorf("corner %+v: delay %v, want %v", c, b.Plant.Delay, want)
		}
	}
}

// withSensorLines is the [axes.roll.sensor] table with lines, to append to
// a file.
func withSensorLines(lines string) string { return "\n[axes.roll.sensor]\n" + lines + "\n" }

// cloneZPK copies z, its slices included.
func cloneZPK(z lti.ZPK) lti.ZPK {
	return lti.ZPK{Gain: z.Gain,
		Zeros: append([]complex128(nil), z.Zeros...),
		Poles: append([]complex128(nil), z.Poles...)}
}
