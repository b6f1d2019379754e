package discrete

import (
	"fmt"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/examples"
)

// TestLooserSpecStaysFeasible: a design that meets a settling time also
// meets every longer one (the check is an upper bound), so a spec looser
// than a feasible one is feasible, and the search must find a design for
// it. On the demo quadrotor's roll (PID, default envelope) the settling
// time is loosened from 0.15 s, where the search finds a design, in steps
// of 2.5 ms to 0.2 s. Before the search for a small feasible set descended
// from several shapes of the grid, 0.165 s was reported infeasible: the
// violation led from the closest shape into a basin of near misses (every
// 21st airframe of the benchmark fleet failed so).
func TestLooserSpecStaysFeasible(t *testing.T) {
	if testing.Short() {
		t.Skip("21 designs; skipped with -short")
	}
	t.Parallel()
	src, err := examples.FS.ReadFile("quadrotor.toml")
	if err != nil {
		t.Fatal(err)
	}
	f, err := airframe.Parse("quadrotor.toml", src)
	if err != nil {
		t.Fatal(err)
	}
	var roll airframe.Axis
	for _, a := range f.Axes {
		if a.Name == "roll" {
			roll = a
		}
	}
	var failed []string
	for i := 0; i <= 20; i++ {
		p := roll
		p.Spec.SettlingTime = 0.15 + 0.0025*float64(i)
		d, err := DesignAxis(p, f.Loop, f.Numeric)
		if err != nil {
			t.Fatalf("settling %g s: %v", p.Spec.SettlingTime, err)
		}
		if !d.OK() {
			var why []string
			for _, c := range d.Checks {
				if !c.OK {
					why = append(why, c.String())
				}
			}
			failed = append(failed, fmt.Sprintf("%g s (%s)", p.Spec.SettlingTime, strings.Join(why, "; ")))
		}
	}
	if len(failed) > 0 {
		t.Errorf("the roll meets settling 0.15 s but no design was found for %s", strings.Join(failed, ", "))
	}
}
