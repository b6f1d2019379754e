package discrete

import (
	"math"
	"testing"

	"locusmith/airframe"
	"locusmith/examples"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// TestOffGridMatchesGrid: OpenAt and CtrlAt, which the search evaluates
// between grid points, give Open and Ctrl at the grid's own frequencies
// (the same expressions), and between grid points their product is the
// final verification's loop (loopAt: the measured path through
// Plant.evalMeasured, another way through the filter chain), at every
// primary plant: on every example axis (the gimbal's pitch has a
// feedback notch) and on an axis of our own with a feedback notch and
// lowpass, derivative filters and tustin_prewarp.
func TestOffGridMatchesGrid(t *testing.T) {
	type axis struct {
		name string
		p    airframe.Axis
		loop airframe.Loop
	}
	var axes []axis
	for _, name := range []string{"quadrotor.toml", "gimbal.toml", "rover.toml"} {
		src, err := examples.FS.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		f, err := airframe.Parse(name, src)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range f.Axes {
			axes = append(axes, axis{name + "/" + p.Name, p, f.Loop})
		}
	}
	p := filterAxis()
	p.Ctrl.DerivativeFilters = []airframe.Filter{{Kind: airframe.FilterLowpass, At: "derivative", Hz: 80, Order: 2, Damping: 1 / math.Sqrt2}}
	p.Ctrl.Discretize = "tustin_prewarp"
	axes = append(axes, axis{"filters+derivative filters+prewarp", p, airframe.Loop{Hz: 1000, ComputeDelay: 1}})
	for _, ax := range axes {
		l, err := NewLoops(ax.p, ax.loop)
		if err != nil {
			t.Fatal(err)
		}
		c := synth.Controller{Form: ax.p.Ctrl.Form, Kp: 0.05, Ki: 0.5, Kd: 0.001, Tf: ax.p.Ctrl.Tf(), B: 1, K: 0.5, Zero: ax.p.Ctrl.LeadZero, Pole: 5 * ax.p.Ctrl.LeadZero}
		if len(ax.p.Ctrl.DerivativeFilters) > 0 {
			c.DF = synth.NewController(ax.p.Continuous()).DF
		}
		k, err := l.realizeLinear(c)
		if err != nil {
			t.Fatal(err)
		}
		g := l.Grid()
		want := make([]complex128, len(g))
		l.Ctrl(c, want)
		at := l.CtrlAt(c)
		mids := 0
		for j, w := range g {
			if d := lti.Abs(at(w) - want[j]); !(d <= 1e-12*lti.Abs(want[j])) {
				t.Fatalf("%s: CtrlAt(%g) = %v, Ctrl %v", ax.name, w, at(w), want[j])
			}
			for i := 0; i < l.Primary(); i++ {
				o := l.Open(i)[j]
				if d := lti.Abs(l.OpenAt(i, w) - o); !(d <= 1e-12*lti.Abs(o)) {
					t.Fatalf("%s plant %d: OpenAt(%g) = %v, Open %v", ax.name, i, w, l.OpenAt(i, w), o)
				}
				if j+1 == len(g) {
					continue
				}
				// Between grid points, against the verification's loop.
				m := math.Sqrt(w * g[j+1])
				got, ref := lti.Mul(at(m), l.OpenAt(i, m)), loopAt(l.plants[i], k, l.d)(m)
				if d := lti.Abs(got - ref); !(d <= 1e-9*lti.Abs(ref)) {
					t.Fatalf("%s plant %d: CtrlAt·OpenAt(%g) = %v, the verification's loop %v", ax.name, i, m, got, ref)
				}
				mids++
			}
		}
		t.Logf("%s: %d grid points, %d plants, %d feedback and %d derivative sections; %d points between them", ax.name, len(g), l.Primary(), len(l.plants[0].Sections), len(k.DSections), mids)
	}
}
