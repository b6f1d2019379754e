package discrete

import (
	"math"
	"os"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// saturatedDesign is a design whose saturating step answered with y
// (sampled at T = 1 ms, final value 1, ±2 % band), judged as the
// verification judges it (lti.StepMetrics).
func saturatedDesign(y []float64, reached bool) *Design {
	const T = 1e-3
	m := lti.StepMetrics(y, T, 1, 0.02)
	d := &Design{Plant: Plant{T: T}}
	d.Verif.Stable = true
	d.Verif.Saturated = Saturated{Amplitude: 1, Reached: reached, Y: y, Recovery: m.Settling, Settled: m.Settled}
	return d
}

// TestSaturatedCheck: a saturated step that never comes back into the
// band fails; one that does passes with its recovery time; a step that
// never reached a limit, or an unstable loop, gets no such check.
func TestSaturatedCheck(t *testing.T) {
	const n, T = 2001, 1e-3
	// Wound up: the rate climbs and sticks at half the setpoint, as a
	// loop held at its output limit by a wound-up integrator does.
	stuck := make([]float64, n)
	// Recovers: a first-order rise with τ = 0.1 s, inside ±2 % after
	// τ·ln 50 = 0.3912 s (handbook: the 2 % settling time of a first-order
	// lag is about 4τ).
	first := make([]float64, n)
	for k := range n {
		stuck[k] = math.Min(float64(k)*T, 0.5)
		first[k] = 1 - math.Exp(-float64(k)*T/0.1)
	}
	c, ok := saturatedDesign(stuck, true).saturatedCheck()
	if !ok || c.OK || !math.IsInf(c.Value, 1) || c.Name != "saturated_recovery" {
		t.Errorf("stuck response: %+v, present %v; want a failed check, value +Inf", c, ok)
	}
	// The limit is 90 % of the 2 s record, where lti.StepMetrics stops
	// calling a response settled.
	if want := 0.9 * float64(n-1) * T; math.Abs(c.Limit-want) > 1e-12 {
		t.Errorf("limit %g, want %g", c.Limit, want)
	}
	c, ok = saturatedDesign(first, true).saturatedCheck()
	if want := 0.1 * math.Log(50); !ok || !c.OK || math.Abs(c.Value-want) > T {
		t.Errorf("first-order recovery: %+v, present %v; want ok at %g s", c, ok, want)
	}
	if _, ok := saturatedDesign(first, false).saturatedCheck(); ok {
		t.Error("a step that never reached a limit got a saturated-step check")
	}
	d := saturatedDesign(stuck, true)
	d.Verif.Stable = false
	if _, ok := d.saturatedCheck(); ok {
		t.Error("an unstable loop got a saturated-step check")
	}
}

// TestReached: a command at a limit (to a part in 10⁹ of the span)
// reached it; one short of it did not.
func TestReached(t *testing.T) {
	for _, c := range []struct {
		u    []float64
		want bool
	}{
		{[]float64{0.1, 0.5, 0.2}, true},
		{[]float64{-0.5}, true},
		{[]float64{0.1, 0.499, -0.499}, false},
		{nil, false},
	} {
		if got := reached(c.u, -0.5, 0.5); got != c.want {
			t.Errorf("reached(%v) = %v, want %v", c.u, got, c.want)
		}
	}
}

// TestSaturatedCheckInDesign: the quadrotor's yaw axis, whose saturating
// step drives the command to its limit, carries the check, passed; its
// roll axis, whose step the integrator limit holds below the output
// limits, does not.
func TestSaturatedCheckInDesign(t *testing.T) {
	data, err := os.ReadFile("../examples/quadrotor.toml")
	if err != nil {
		t.Fatal(err)
	}
	f, err := airframe.Parse("quadrotor.toml", data)
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"roll", "yaw"} {
		var ax airframe.Axis
		for _, a := range f.Axes {
			if a.Name == name {
				ax = a
			}
		}
		d, err := DesignAxis(ax, f.Loop, f.Numeric)
		if err != nil {
			t.Fatal(err)
		}
		var got *float64
		for _, c := range d.Checks {
			if c.Name == "saturated_recovery" {
				if !c.OK {
					t.Errorf("%s: saturated-step check failed: %+v", name, c)
				}
				v := c.Value
				got = &v
			}
		}
		s := d.Verif.Saturated
		if (got != nil) != s.Reached || reached(s.U, d.Coeffs.Lo, d.Coeffs.Hi) != s.Reached {
			t.Errorf("%s: check present %v, step reached the limits %v", name, got != nil, s.Reached)
		}
		if want := name == "yaw"; s.Reached != want {
			t.Errorf("%s: reached %v, want %v (the example's limits)", name, s.Reached, want)
		}
	}
}
