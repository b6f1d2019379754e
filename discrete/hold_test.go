package discrete

import (
	"fmt"
	"slices"
	"strings"
	"testing"

	"locusmith/airframe"
)

// TestHoldRateBeyondReach: a hold_rate that no controller can hold (the
// plant's steady gain times integrator_limit falls short of it) fails its
// check, says so with the figure, and leaves the rest of the design as it
// would be without it: every other check passes at every plant, with the
// same gains. Source: the steady state of the loop, where the integrator
// carries r/G(0) whatever the controller; for the first-order plant
// K/(s + a) at gain ×0.9, IL·|G(0)| = 1 · 0.9 · K/a (hand figure). The
// search once scored every candidate by that one miss and reported an
// unstable closest design (Ki 1149 against 3.63).
func TestHoldRateBeyondReach(t *testing.T) {
	const K, a = 4.38933, 1.971448
	src := func(hold string) string {
		return fmt.Sprintf(`airframe = "hold_probe"
description = "demo data: an invented random delay axis for a campaign; not a real vehicle"
loop_hz = 2000.0
compute_delay = 0

[axes.a.plant]
gain = %g
poles = [%g]
delay = 0.056487

[axes.a.sensor]
lowpass_hz = 18.932079

[axes.a.spec]
settling_time = 0.707703
overshoot = 0.09467
min_phase_margin = 52.155712
min_gain_margin = 8.765195
max_sensitivity = 1.562423
%s
[axes.a.control]
form = "pid"

[[axes.a.filter]]
kind = "lowpass"
hz = 11.320688
order = 1
`, K, -a, hold)
	}
	design := func(text string) *Design {
		f, err := airframe.Parse("hold.toml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		d, err := DesignAxis(f.Axes[0], f.Loop, f.Numeric)
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	free, held := design(src("")), design(src("hold_rate = 20.0\n"))
	if !free.OK() {
		t.Fatalf("without hold_rate the axis fails %v: the case no longer tests the rest of the design", free.FailedChecks())
	}
	if got := held.FailedChecks(); !slices.Equal(got, []string{"hold_rate"}) {
		t.Errorf("fails %v, want hold_rate alone", got)
	}
	if held.Cont.Met {
		t.Error("the design is called met while its hold_rate fails")
	}
	closestNote(t, held)
	if held.Cont.Stage.Ctrl != free.Cont.Stage.Ctrl {
		t.Errorf("gains %+v, want those of the design without hold_rate %+v", held.Cont.Stage.Ctrl, free.Cont.Stage.Ctrl)
	}
	reach := 0.9 * K / a
	want := fmt.Sprintf("hold_rate 20 rad/s is beyond any controller: at gain ×0.9 the plant's steady gain holds at most %.4g rad/s", reach)
	if !slices.ContainsFunc(held.Warnings, func(w string) bool { return strings.HasPrefix(w, want) }) {
		t.Errorf("no warning %q in %q", want, held.Warnings)
	}
}
