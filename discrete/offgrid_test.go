package discrete

import (
	"testing"

	"locusmith/airframe"
	"locusmith/examples"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// TestOffGridMatchesGrid: OpenAt and CtrlAt, which the search evaluates
// between grid points, give Open and Ctrl at the grid's own frequencies
// (the same products, so to a few units of rounding), with filter chains
// (the examples' notches and lowpasses), at every primary plant of every
// example axis.
func TestOffGridMatchesGrid(t *testing.T) {
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
			l, err := NewLoops(p, f.Loop)
			if err != nil {
				t.Fatal(err)
			}
			c := synth.Controller{Form: p.Ctrl.Form, Kp: 0.05, Ki: 0.5, Kd: 0.001, Tf: p.Ctrl.Tf(), B: 1, K: 0.5, Zero: p.Ctrl.LeadZero, Pole: 5 * p.Ctrl.LeadZero}
			g := l.Grid()
			t.Logf("%s/%s: %d grid points, %d plants, %d filter sections", name, p.Name, len(g), l.Primary(), len(l.plants[0].Sections))
			want := make([]complex128, len(g))
			l.Ctrl(c, want)
			at := l.CtrlAt(c)
			for k, w := range g {
				if d := lti.Abs(at(w) - want[k]); !(d <= 1e-12*lti.Abs(want[k])) {
					t.Fatalf("%s/%s: CtrlAt(%g) = %v, Ctrl %v", name, p.Name, w, at(w), want[k])
				}
				for i := 0; i < l.Primary(); i++ {
					o := l.Open(i)[k]
					if d := lti.Abs(l.OpenAt(i, w) - o); !(d <= 1e-12*lti.Abs(o)) {
						t.Fatalf("%s/%s plant %d: OpenAt(%g) = %v, Open %v", name, p.Name, i, w, l.OpenAt(i, w), o)
					}
				}
			}
		}
	}
}
