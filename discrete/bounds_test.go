package discrete_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// The margins that a sensitivity peak guarantees, as a property of the
// tool's own figures (source: Skogestad & Postlethwaite, Multivariable
// Feedback Control, the bounds on the margins from Ms; from memory). For
// any stable loop with Ms = max |1/(1 + L)|,
//
//	GM ≥ Ms/(Ms − 1)    and    PM ≥ 2·asin(1/(2·Ms)),
//
// because |1 + L| ≥ 1/Ms everywhere: where L crosses the negative real
// axis at −1/GM, |1 − 1/GM| ≥ 1/Ms; where |L| = 1 at the phase margin,
// |1 + L| = 2·sin(PM/2) ≥ 1/Ms. The same argument bounds a lower gain
// margin (a crossing at −1/GM beyond −1, GM < 1): GM ≤ Ms/(Ms + 1).
//
// The figures are the tool's: Ms, the phase margin and the gain margin of
// discrete.Assess (the sampled loop's final verification) and of the
// envelope figures of discrete.DesignAxis, over seeded random plants with
// random PIDs, and over designed loops. The test fails if one of the three
// figures is computed wrongly: its subtests show that it does when Ms is
// taken as 1/Ms, and even when Ms is 1 % low.

// boundTol is the relative tolerance of the bounds: the tool refines the
// crossings of the margins to 1e-11 relative in ω and the sensitivity
// peak by golden-section search to 1e-7 relative in ω around its grid
// maximum (where the peak is flat, so |S| is exact to about 1e-14); 1e-6
// leaves room for the rounding of L and of the dB conversion, and is far
// below any real violation (a wrong Ms moves the bound by percents).
const boundTol = 1e-6

// loopFigures are one stable loop's Ms, phase margin (degrees) and gain
// margin (dB), with a name for messages.
type loopFigures struct {
	name       string
	ms, pm, gm float64
}

// boundViolations returns the bounds that the figures break (empty when
// they hold). A margin that does not exist (no crossing: +Inf) bounds
// nothing.
func boundViolations(f loopFigures) []string {
	var v []string
	ms := f.ms
	if math.IsNaN(ms) || math.IsNaN(f.pm) || math.IsNaN(f.gm) {
		return []string{fmt.Sprintf("a figure is not a number: Ms %g, PM %g°, GM %g dB", ms, f.pm, f.gm)}
	}
	if !math.IsInf(f.gm, 0) {
		g := math.Pow(10, f.gm/20)
		switch {
		case g > 1 && g < ms/(ms-1)*(1-boundTol):
			v = append(v, fmt.Sprintf("GM %.6g < Ms/(Ms−1) = %.6g (Ms %.6g)", g, ms/(ms-1), ms))
		case g < 1 && g > ms/(ms+1)*(1+boundTol):
			v = append(v, fmt.Sprintf("lower GM %.6g > Ms/(Ms+1) = %.6g (Ms %.6g)", g, ms/(ms+1), ms))
		case g == 1:
			v = append(v, "GM 0 dB on a stable loop")
		}
	}
	if !math.IsInf(f.pm, 0) {
		lim := 2 * math.Asin(math.Min(1, 1/(2*ms))) * 180 / math.Pi
		if math.Abs(f.pm) < lim*(1-boundTol) || 1/(2*ms) > 1 {
			v = append(v, fmt.Sprintf("PM %.6g° < 2·asin(1/(2·Ms)) = %.6g° (Ms %.6g)", f.pm, lim, ms))
		}
	}
	return v
}

// randomLoop returns a random plant and sensor (parsed from TOML, so
// that the file's defaults apply) with a random PID around the loop's gain
// scale; the envelope is the nominal plant alone, so that Assess's figures
// are those of one loop.
func randomLoop(r *rand.Rand, i int) (*airframe.File, synth.Controller, error) {
	logU := func(lo, hi float64) float64 { return math.Pow(10, lo+(hi-lo)*r.Float64()) }
	hz := []float64{250, 500, 1000, 2000, 4000}[r.IntN(5)]
	var plant string
	switch r.IntN(3) {
	case 0: // integrating with motor lag
		plant = fmt.Sprintf("effectiveness = %.6g\nmotor_tau = %.6g\n", logU(1, 4), logU(-2.5, -1))
	case 1: // first or second order, not integrating
		plant = fmt.Sprintf("gain = %.6g\npoles = [%.6g, %.6g]\n", logU(1, 4), -logU(-0.5, 1), -logU(1, 2))
	default: // integrating, with a lightly damped pair
		wr, z := logU(1.5, 2.7), 0.03+0.3*r.Float64()
		plant = fmt.Sprintf("gain = %.6g\npoles = [0.0, %.6g, [%.6g, %.6g]]\n", logU(2, 4)*wr*wr, -logU(0.5, 2), -z*wr, wr*math.Sqrt(1-z*z))
	}
	plant += fmt.Sprintf("delay = %.6g\n", r.Float64()*4/hz)
	text := fmt.Sprintf(`airframe = "bound%d"
description = "demo data: a random loop of the margin-bound property test"
loop_hz = %g
compute_delay = %d

[axes.a.plant]
%s
[axes.a.sensor]
lowpass_hz = %.6g

[axes.a.spec]
settling_time = 0.2
overshoot = 0.1
min_phase_margin = 1.0
min_gain_margin = 0.1
max_sensitivity = 4.0

[axes.a.control]
form = "pid"

[axes.a.envelope]
gain_scale = [1.0, 1.0]
`, i, hz, r.IntN(3), plant, hz*(0.02+0.2*r.Float64()))
	f, err := airframe.Parse("random.toml", []byte(text))
	if err != nil {
		return nil, synth.Controller{}, err
	}
	p := f.Axes[0]
	// A crossover ω0 between 0.5 % and 5 % of the loop rate (rad/s), and
	// the gain g0 that puts |C·G·H| = 1 there.
	w0 := 2 * math.Pi * hz * logU(-2.3, -1.3)
	g0 := 1 / cmplx.Abs(p.OpenLoop(complex(0, w0)))
	kp := g0 * logU(-1, 0.3)
	c := synth.Controller{Form: airframe.FormPID, Kp: kp, Ki: kp * w0 * logU(-2, -0.3), Kd: kp / w0 * logU(-2, 0),
		Tf: p.Ctrl.Tf(), B: 1}
	return f, c, nil
}

// figureOf returns the value of the named check.
func figureOf(cs []synth.Check, name string) (float64, bool) {
	for _, c := range cs {
		if c.Name == name {
			return c.Value, true
		}
	}
	return math.NaN(), false
}

// collectLoops returns the figures of the stable loops: seeded random PIDs
// on random plants (Assess), and every plant of the final verification of
// a few designs (DesignAxis, each with its envelope's corners and the
// points between them).
func collectLoops(t *testing.T) []loopFigures {
	t.Helper()
	r := rand.New(rand.NewPCG(20240601, 7))
	var out []loopFigures
	for i := 0; i < 600; i++ {
		f, c, err := randomLoop(r, i)
		if err != nil {
			t.Fatalf("loop %d: %v", i, err)
		}
		cs, err := discrete.Assess(f.Axes[0], f.Loop, c, math.Inf(1))
		if err != nil {
			t.Fatalf("loop %d: %v", i, err)
		}
		if ok := cs[0].Name == "stable" && cs[0].OK; !ok {
			continue
		}
		ms, ok1 := figureOf(cs, "max_sensitivity")
		pm, ok2 := figureOf(cs, "phase_margin")
		gm, ok3 := figureOf(cs, "gain_margin")
		if !ok1 || !ok2 || !ok3 {
			t.Fatalf("loop %d: Assess reports no max_sensitivity, phase_margin or gain_margin", i)
		}
		out = append(out, loopFigures{name: fmt.Sprintf("random loop %d (%+v)", i, c), ms: ms, pm: pm, gm: gm})
	}
	t.Logf("%d of 600 random loops are stable", len(out))
	for _, text := range designedLoops() {
		f, err := airframe.Parse("designed.toml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range f.Axes {
			d, err := discrete.DesignAxis(p, f.Loop, f.Numeric)
			if err != nil {
				t.Fatalf("%s: %v", f.Airframe, err)
			}
			for _, e := range d.Envelope {
				if e.Stable {
					out = append(out, loopFigures{name: fmt.Sprintf("%s.%s at %+v", f.Airframe, p.Name, e.Corner),
						ms: e.Ms, pm: e.Margins.PhaseDeg, gm: e.Margins.GainDB})
				}
			}
		}
	}
	return out
}

// designedLoops are demo airframes (invented) whose designs, at every
// plant of their verification, join the property test.
func designedLoops() []string {
	return []string{`
airframe = "bound_quad"
description = "demo data: invented quadrotor, roll PID and yaw PI"
loop_hz = 1000.0
[axes.roll.plant]
effectiveness = 2200.0
motor_tau = 0.03
delay = 0.002
[axes.roll.sensor]
lowpass_hz = 100.0
[axes.roll.spec]
settling_time = 0.15
overshoot = 0.1
min_phase_margin = 40.0
min_gain_margin = 6.0
[axes.roll.envelope]
lag_scale = [0.8, 1.25]
[axes.yaw.plant]
effectiveness = 300.0
motor_tau = 0.035
[axes.yaw.spec]
settling_time = 0.25
overshoot = 0.1
min_phase_margin = 40.0
min_gain_margin = 6.0
[axes.yaw.control]
form = "pi"
`, `
airframe = "bound_joint"
description = "demo data: invented compliant joint (pole pair of damping 0.08), PD and lead"
loop_hz = 2000.0
[axes.pd.plant]
gain = 9.0e6
poles = [0.0, -40.0, [-12.0, 149.5]]
[axes.pd.spec]
settling_time = 0.3
overshoot = 0.1
max_sensitivity = 2.0
[axes.pd.control]
form = "pd"
[axes.lead.plant]
gain = 9.0e6
poles = [0.0, -40.0, [-12.0, 149.5]]
[axes.lead.spec]
settling_time = 0.3
overshoot = 0.1
min_phase_margin = 45.0
[axes.lead.control]
form = "lead"
lead_zero = -30.0
`}
}

// TestMarginBounds checks GM ≥ Ms/(Ms − 1) and PM ≥ 2·asin(1/(2·Ms))
// (Skogestad & Postlethwaite; from memory) on the tool's figures of many
// stable loops, and that the check catches a wrong Ms.
func TestMarginBounds(t *testing.T) {
	t.Parallel()
	loops := collectLoops(t)
	t.Run("hold", func(t *testing.T) {
		// The test must see enough loops to mean something: about half
		// of the random PIDs are stable.
		if len(loops) < 200 {
			t.Fatalf("only %d stable loops: the property test sees too few", len(loops))
		}
		withGM := 0
		for _, f := range loops {
			if !math.IsInf(f.gm, 0) {
				withGM++
			}
			if v := boundViolations(f); len(v) > 0 {
				t.Errorf("%s: %s", f.name, strings.Join(v, "; "))
			}
		}
		if withGM < 100 {
			t.Errorf("only %d loops have a gain margin: the GM bound is barely tested", withGM)
		}
		t.Logf("%d stable loops, %d with a gain margin", len(loops), withGM)
	})
	// With Ms computed as 1/Ms (a peak below 1) the phase bound breaks on
	// most loops: the property test can fail.
	t.Run("catch a wrong Ms", func(t *testing.T) {
		caught := 0
		for _, f := range loops {
			f.ms = 1 / f.ms
			if len(boundViolations(f)) > 0 {
				caught++
			}
		}
		if caught*2 < len(loops) {
			t.Errorf("a wrong Ms (1/Ms) breaks the bounds on %d of %d loops only", caught, len(loops))
		}
		t.Logf("a wrong Ms (1/Ms) breaks the bounds on %d of %d loops", caught, len(loops))
	})
	// Some loops meet a bound with almost no room (their sensitivity peak
	// lies at the crossover), so even an Ms 1 % low breaks it.
	t.Run("catch an Ms 1 % low", func(t *testing.T) {
		caught := 0
		for _, f := range loops {
			f.ms *= 0.99
			if len(boundViolations(f)) > 0 {
				caught++
			}
		}
		if caught == 0 {
			t.Errorf("an Ms 1 %% low breaks the bounds on none of %d loops", len(loops))
		}
		t.Logf("an Ms 1 %% low breaks the bounds on %d of %d loops", caught, len(loops))
	})
}
