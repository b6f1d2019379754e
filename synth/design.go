package synth

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Stage is one placement and its verification.
type Stage struct {
	Target  Target
	Ctrl    Controller
	Working Working
	Verif   Verification
}

// Design is the continuous design of one axis.
type Design struct {
	Problem airframe.Axis
	// Stage is the design chosen: the refined one when refinement ran.
	Stage
	// Textbook is the unrefined placement at the spec's target, when
	// refinement changed the design; nil otherwise.
	Textbook *Stage
	// TextbookErr says why the textbook target could not be placed, if so.
	TextbookErr string
	Refined     bool
	// Met is false when no design of the form met the spec; the closest
	// one found is then reported.
	Met bool
	// Search is the search's outcome, when refinement ran.
	Search   Result
	Checks   []Check
	Warnings []string
	// pre are the warnings given before the chosen stage was judged
	// (finish), which Adjust keeps.
	pre []string
}

// OK reports whether every check passed.
func (d *Design) OK() bool {
	for _, c := range d.Checks {
		if !c.OK {
			return false
		}
	}
	return true
}

// DesignAxis designs and verifies one axis: the textbook placement at the
// spec's target (the root-locus working), then, with refinement, the
// search of the gains for the best load rejection that passes every check
// on the loops L over the envelope (nil: the continuous loop; package
// discrete supplies the sampled one). An *InfeasibleError is returned when
// the form cannot place the textbook target without refinement, or when
// no controller of the form keeps even the frequency checks.
func DesignAxis(p airframe.Axis, L Loops) (*Design, error) {
	t, err := TargetFromSpec(p.Spec)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	if _, err := derivativeTF(p.Ctrl); err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	d := &Design{Problem: p}
	// With refinement the textbook stage is reported by its step alone,
	// so its margin sweep is skipped.
	tb, tbErr := placeStage(p, t, !p.Ctrl.Refine)
	if tbErr != nil {
		var inf *InfeasibleError
		if !errors.As(tbErr, &inf) {
			return nil, fmt.Errorf("axis %s: %w", p.Name, tbErr)
		}
		inf.Reach = reach(p, t.Zeta)
		if !p.Ctrl.Refine {
			return nil, fmt.Errorf("axis %s: %w", p.Name, inf)
		}
		d.TextbookErr = inf.Error()
		d.Warnings = append(d.Warnings, "textbook placement: "+inf.Error())
	}
	if !p.Ctrl.Refine {
		d.Stage = tb
		d.Met = true
		d.finish()
		return d, nil
	}
	if L == nil {
		L = ContinuousLoops(p)
	}
	if reach, at, beyond := HoldReach(p, L.Corners()); beyond {
		where := CornerText(at)
		if at == airframe.Nominal() {
			where = "the " + where
		}
		d.Warnings = append(d.Warnings, fmt.Sprintf("hold_rate %.4g rad/s is beyond any controller: at %s the plant's steady gain holds at most %.4g rad/s with the integrator at integrator_limit %.4g; the search designed for the other checks (lower hold_rate, which defaults to numeric.input_full_scale, or raise integrator_limit and the output limits)",
			p.Spec.HoldRate, where, reach, p.Ctrl.IntegratorLimit))
	}
	g0, w0 := searchScale(p, t)
	res, err := Search(p, L, g0, w0)
	if err != nil {
		return nil, fmt.Errorf("axis %s: search: %w", p.Name, err)
	}
	d.Search = res
	if !res.Met && res.Ctrl.K == 0 && res.Ctrl.Kp == 0 && res.Ctrl.Ki == 0 && res.Ctrl.Kd == 0 {
		return nil, fmt.Errorf("axis %s: %w", p.Name, &InfeasibleError{Form: p.Ctrl.Form, Target: t,
			Reason: "no controller of the form keeps " + strings.Join(res.Fails, ", ") + " over the envelope"})
	}
	st, err := verifyStage(p, t, res.Ctrl, true)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	d.Stage, d.Refined, d.Met = st, true, res.Met
	if tbErr == nil && (tb.Ctrl != st.Ctrl) {
		d.Textbook = &tb
	}
	if !res.Met {
		d.Warnings = append(d.Warnings, ClosestNote(p.Ctrl.Form, res.Fails, res.Reach, res.Record))
	}
	d.finish()
	return d, nil
}

// searchScale returns the scale of the search: the textbook target's ωn
// and the controller gain that puts the loop's crossover there,
// 1/|G·H(jωn)| (with the delay, which does not change the magnitude).
func searchScale(p airframe.Axis, t Target) (g0, w0 float64) {
	w0 = t.OmegaN
	return 1 / lti.Abs(p.OpenLoop(complex(0, w0))), w0
}

func placeStage(p airframe.Axis, t Target, margins bool) (Stage, error) {
	var c Controller
	var err error
	if p.Ctrl.Form == airframe.FormP {
		c, t, err = PlaceP(p, t.Zeta)
	} else {
		c, err = Place(p, t)
	}
	if err != nil {
		return Stage{Target: t}, err
	}
	return verifyStage(p, t, c, margins)
}

// Adjust replaces the chosen controller with c (a design adjusted after
// the search) and verifies and judges it again, keeping its target: its
// checks and the warnings about it describe c.
func (d *Design) Adjust(c Controller) error {
	st, err := verifyStage(d.Problem, d.Stage.Target, c, true)
	if err != nil {
		return err
	}
	d.Stage = st
	d.finish()
	return nil
}

// verifyStage verifies the placed controller; without margins the
// Verification's Margins are NaN.
func verifyStage(p airframe.Axis, t Target, c Controller, margins bool) (Stage, error) {
	v, err := verify(p, c, t, margins)
	if err != nil {
		return Stage{}, err
	}
	return Stage{Target: t, Ctrl: c, Working: NewWorking(p, t.Pole), Verif: v}, nil
}

// finish fills the checks and collects warnings of the chosen stage.
func (d *Design) finish() {
	d.Recheck()
	if d.pre == nil {
		d.pre = append([]string{}, d.Warnings...)
	}
	d.Warnings = append(append([]string(nil), d.pre...), d.Verif.Warnings...)
	if w := leadNote(d.Ctrl); w != "" {
		d.Warnings = append(d.Warnings, w)
	}
	if e := d.Verif.SteadyStateError; d.Verif.Stable && math.Abs(e) > d.Problem.Spec.Band {
		d.Warnings = append(d.Warnings, fmt.Sprintf("steady-state error %.3g %% of the setpoint (the %s form has no integral action on this plant); the settling check is against the final value", 100*e, d.Problem.Ctrl.Form))
	}
}

// leadNear is the pole-to-zero ratio of a lead below which leadNote
// calls it a gain: its phase lead, at most asin((r − 1)/(r + 1)), is
// then under 1.4°. (The lead (s + z)/(s + p) with p = r·z has the phase
// atan(ω/z) − atan(ω/p), largest at ω = √(z·p) where its sine is
// (r − 1)/(r + 1): the classical lead design formula, e.g. Ogata, Modern
// Control Engineering, lead compensation; from memory.)
const leadNear = 1.05

// leadNote says, for a lead whose pole lies within leadNear of its zero,
// that it acts as a gain: the search found no phase lead worth its noise
// gain, and a p controller of about the same gain would do the same.
func leadNote(c Controller) string {
	if c.Form != airframe.FormLead || !(c.Zero < 0) || !(c.Pole < 0) {
		return ""
	}
	// A ratio below 1 is a lag (refine = false keeps the textbook's).
	r := c.Pole / c.Zero
	if !(r >= 1 && r < leadNear) {
		return ""
	}
	return fmt.Sprintf("the lead's pole lies within %.3g %% of its zero (phase lead at most %.2g°): it acts as a gain of about %.4g, and a p controller would do the same with one state less",
		100*(r-1), math.Asin((r-1)/(r+1))*180/math.Pi, c.K)
}

// Recheck judges the chosen stage against Problem's spec again, for a
// design whose Problem was replaced after the search.
func (d *Design) Recheck() {
	d.Checks = SpecChecks(d.Problem.Spec, d.Verif.Stable, maxReal(d.Verif.Poles), d.Verif.Step.Overshoot, d.Verif.Step.Settling, d.Verif.Margins.PhaseDeg, d.Verif.Margins.GainDB)
}

func maxReal(ps []complex128) float64 {
	m := math.Inf(-1)
	for _, r := range ps {
		m = math.Max(m, real(r))
	}
	return m
}

// reach says what the form can reach at damping ζ: the fastest settling of
// the second-order target (envelope formula) whose placement gives positive
// gains and a stable closed loop, found by scanning σ upward.
func reach(p airframe.Axis, zeta float64) string {
	if p.Ctrl.Form == airframe.FormP {
		return ""
	}
	s0 := SigmaFromSettling(zeta, p.Spec.Band, p.Spec.SettlingTime)
	best := 0.0
	for k := 0; k < 60; k++ {
		sigma := s0 * 1e-3 * lti.Pow(10, float64(k)/15)
		if sigma > s0 {
			break
		}
		c, err := Place(p, NewTarget(zeta, sigma))
		if err != nil {
			continue
		}
		if ok, err := closedLoopStable(p, c); err == nil && ok {
			best = sigma
		}
	}
	if best == 0 {
		return fmt.Sprintf("no target at ζ = %.3f gives positive gains and a stable loop", zeta)
	}
	ts := -lti.Log(p.Spec.Band*math.Sqrt(1-float64(zeta*zeta))) / best
	return fmt.Sprintf("at this overshoot the form reaches about %.4g s settling (σ = %.4g rad/s)", ts, best)
}

// ClosestNote is the warning of an axis with no passing design: the
// closest design is reported, with the checks it misses and, where known
// (reach not NaN), the settling time the form reaches with every other
// check met, or else (record > 0) that no such design the search judged
// settles within that time (Result.Record). The sampled-loop design states it again
// with the checks its final verification finds failed, which can differ
// from the search's (whose records are shorter).
func ClosestNote(f airframe.Form, fails []string, reach, record float64) string {
	msg := fmt.Sprintf("no %s design passes every check over the envelope; the closest one is reported (it misses %s)", f, strings.Join(fails, ", "))
	msg += reachText(f, reach, record)
	return msg
}

// reachText is the part of ClosestNote that says what form f reaches:
// "; with every other check met, pi reaches settling 0.27 s", or "…, no
// pi design the search judged settles within 0.3276 s", or
// nothing.
func reachText(f airframe.Form, reach, record float64) string {
	switch {
	case !math.IsNaN(reach):
		return fmt.Sprintf("; with every other check met, %s reaches settling %.4g s", f, reach)
	case record > 0:
		return fmt.Sprintf("; with every other check met, no %s design the search judged settles within %.4g s", f, record)
	}
	return ""
}

// HoldReach returns the largest steady rate the plant holds at every
// corner with the integrator at integrator_limit IL, IL·|G(0)| at the
// corner where that is least (+Inf where every plant integrates), and
// whether the spec's hold_rate lies beyond it (for a form with an
// integral): at steady state the integrator carries r/G(0) whatever the
// controller, so no design holds such a rate.
func HoldReach(p airframe.Axis, corners []airframe.Corner) (reach float64, at airframe.Corner, beyond bool) {
	reach, at = math.Inf(1), airframe.Nominal()
	if !p.Ctrl.Form.HasIntegral() {
		return reach, at, false
	}
	_, beyond = holdRooms(p, corners)
	for _, cn := range corners {
		if g0, ok := steadyGain(p, cn); ok {
			if r := p.Ctrl.IntegratorLimit * math.Abs(g0); r < reach {
				reach, at = r, cn
			}
		}
	}
	return reach, at, beyond
}

// holdRooms returns IL/r − |1/G(0)| at every corner (IL the integrator
// limit, r the hold rate; 1/G(0) = 0 for a plant that integrates), the
// room the setpoint weight's share (1 − b)·Kp·r has, and whether one is
// negative; nil and false when the spec holds no rate.
func holdRooms(p airframe.Axis, corners []airframe.Corner) ([]float64, bool) {
	r, il := p.Spec.HoldRate, p.Ctrl.IntegratorLimit
	if !(r > 0) || !(il > 0) {
		return nil, false
	}
	rooms := make([]float64, 0, len(corners))
	beyond := false
	for _, cn := range corners {
		inv := 0.0
		if g0, ok := steadyGain(p, cn); ok {
			inv = 1 / g0
		}
		// |inv + (1 − b)·Kp| ≤ IL/r with inv ≥ 0 for a plant of
		// positive gain: (1 − b)·Kp ≤ IL/r − inv.
		room := il/r - math.Abs(inv)
		rooms = append(rooms, room)
		beyond = beyond || room < 0
	}
	return rooms, beyond
}

// steadyGain returns the plant's G(0) at corner cn, and false where it is
// not finite and nonzero (an integrator).
func steadyGain(p airframe.Axis, cn airframe.Corner) (float64, bool) {
	g0 := real(p.At(cn).Plant.Model.Eval(0))
	return g0, !math.IsInf(g0, 0) && !math.IsNaN(g0) && g0 != 0
}
