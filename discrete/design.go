package discrete

import (
	"fmt"
	"math"
	"slices"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/synth"
)

// Design is the design of one axis at the loop rate.
type Design struct {
	Problem airframe.Axis
	Loop    airframe.Loop
	Numeric airframe.Numeric
	// Cont is the continuous design (refined against the sampled loop).
	Cont   *synth.Design
	Coeffs Coeffs
	Plant  Plant
	Verif  Verification
	// Checks are the spec checks on the sampled loop, plus sampling.
	Checks   []synth.Check
	Warnings []string
	// Envelope holds the figures at every plant of the final
	// verification: the nominal plant first, then the envelope's corners,
	// then the finer look in between.
	Envelope []CornerFigures
	// NoiseGain is the controller's largest gain from the measured rate
	// to the command between the lowest crossover and Nyquist.
	NoiseGain float64
	loops     *Loops
	// realizeWarnings are the discretization's notes.
	realizeWarnings []string
	// Unfiltered is the axis designed again without its filter chain
	// (BatchOptions.Unfiltered), to show what the chain buys; nil
	// otherwise, or with UnfilteredErr when no design came of it.
	Unfiltered    *Design
	UnfilteredErr error
	// Num is the numeric realization in airframe.Numeric's type: coefficient
	// table, fixed-point formats and proved ranges, the integer model, and
	// the verification with quantized coefficients (see RealizeNumeric).
	Num *Realization
}

// designUnfiltered sets d.Unfiltered: the same axis, loop and numeric
// type without the feedback filter chain (its derivative filters kept),
// designed as DesignAxis designs (without its traces: the review compares
// figures).
func (d *Design) designUnfiltered() {
	p := d.Problem
	p.Filters = nil
	u, err := DesignAxis(p, d.Loop, d.Numeric)
	if err == nil {
		u.DropTraces()
	}
	d.Unfiltered, d.UnfilteredErr = u, err
}

// FailedChecks names the checks d fails, each once, in check order.
func (d *Design) FailedChecks() []string {
	var out []string
	for _, c := range d.Checks {
		if !c.OK && !slices.Contains(out, c.Name) {
			out = append(out, c.Name)
		}
	}
	return out
}

// OK reports whether every check passed.
func (d *Design) OK() bool { return checksOK(d.Checks) }

// Sampling rules of thumb (Åström & Wittenmark, Computer-Controlled
// Systems, choice of sampling period, from memory): ωc·T between about
// 0.15 and 0.5, and 4 to 10 samples per closed-loop rise time. locusmith
// warns beyond the lenient ends of both ranges.
const (
	MaxCrossoverTimesT = 0.5
	MinSamplesPerRise  = 4
)

// DesignAxis designs one axis for the loop rate: the continuous placement,
// the search of the gains on the sampled loop over the envelope, the
// discretization, and the verification of every check at the nominal
// plant, at every corner of the envelope and at a finer look in between.
//
// When the plant has a lightly damped mode within a decade above the
// crossover that no notch of the chain covers, the design is repeated
// with a notch on it, and a warning suggests the notch with what it buys
// (suggestNotch). A lowpass with hz = "auto" gets the cutoff its goal
// asks for (designAutoLowpass).
func DesignAxis(p airframe.Axis, loop airframe.Loop, num airframe.Numeric) (*Design, error) {
	var d *Design
	var err error
	if i := p.AutoLowpassIndex(); i >= 0 {
		d, err = designAutoLowpass(p, loop, num, i)
	} else {
		d, err = designAxisOnly(p, loop, num)
	}
	if err != nil {
		return nil, err
	}
	if msg := suggestNotch(d); msg != "" {
		d.Warnings = append(d.Warnings, msg)
	}
	return d, nil
}

// designAxisOnly is DesignAxis without the notch suggestion.
func designAxisOnly(p airframe.Axis, loop airframe.Loop, num airframe.Numeric) (*Design, error) {
	if !(loop.Hz > 0) || math.IsInf(loop.Hz, 0) {
		return nil, fmt.Errorf("axis %s: loop rate %g Hz: must be finite and > 0", p.Name, loop.Hz)
	}
	L, err := NewLoops(p, loop)
	if err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	// The continuous design sees the filters' continuous counterparts in
	// series with the sensor; the sampled loop (L) runs the sections.
	cp := p.Continuous()
	cd, err := synth.DesignAxis(cp, L)
	if err != nil {
		return nil, err
	}
	d := &Design{Problem: p, Loop: loop, Numeric: num, Cont: cd, Plant: L.Plant(0), loops: L}
	if cd.Refined && !cd.Met {
		if msg := richerReach(p, loop); msg != "" {
			cd.Warnings = append(cd.Warnings, msg)
		}
	}
	if err := d.realize(); err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	if cd.Met && cd.Refined && !d.frequencyOK() {
		if err := d.mend(cp, L); err != nil {
			return nil, fmt.Errorf("axis %s: %w", p.Name, err)
		}
	}
	d.Warnings = append(d.Warnings, cd.Warnings...)
	d.Warnings = append(d.Warnings, d.realizeWarnings...)
	d.Checks = d.checks()
	d.Checks = append(d.Checks, d.samplingCheck())
	if c, ok := d.saturatedCheck(); ok {
		d.Checks = append(d.Checks, c)
	}
	if cd.Refined && !cd.Met {
		// The note names the checks the final verification finds failed.
		r := cd.Search
		search := synth.ClosestNote(p.Ctrl.Form, r.Fails, r.Reach, r.Record)
		switch i := slices.Index(d.Warnings, search); {
		case i < 0:
		case len(d.FailedChecks()) == 0:
			// The closest design passes the final verification after all.
			d.Warnings = slices.Delete(d.Warnings, i, i+1)
		default:
			d.Warnings[i] = synth.ClosestNote(p.Ctrl.Form, d.FailedChecks(), r.Reach, r.Record)
		}
	}
	d.integratorReach()
	// Numeric realization (numeric.go): its checks and warnings join the
	// design's; bad numeric settings come back as an *InputError.
	if d.Num, err = RealizeNumeric(d); err != nil {
		return nil, fmt.Errorf("axis %s: %w", p.Name, err)
	}
	d.Checks = append(d.Checks, d.Num.Checks...)
	d.Warnings = append(d.Warnings, d.Num.Warnings...)
	return d, nil
}

// suggestNotch looks for a lightly damped mode of the plant or sensor (a
// pole pair with damping below airframe.LightDamping, below 0.9 ×
// Nyquist) within a decade above the nominal sampled loop's crossover (or
// the spec's target ωn, when higher: a mode that holds the loop back keeps
// the crossover low) that no notch of the chain covers (centre within half
// its width). For the most lightly damped one it designs the axis again
// with a notch there, placed as hz = "auto" would place it (centre at the
// mode, airframe.NotchWidth; three digits). It returns the suggestion with
// what the notch buys, or "" when there is no such mode, the chain is
// full, or the notch buys nothing (neither a met spec nor a
// load-rejection gain larger by 5 %; in fixed point the second design's
// proofs of the chain count among its checks).
func suggestNotch(d *Design) string {
	p, loop := d.Problem, d.Loop
	wc := d.Verif.Margins.Crossover
	if len(p.Filters)+len(p.Ctrl.DerivativeFilters) >= airframe.MaxFilters || !(wc > 0) || math.IsInf(wc, 0) {
		return ""
	}
	if wn := d.Cont.Target.OmegaN; wn > wc && !math.IsInf(wn, 0) {
		wc = wn
	}
	nyq := loop.Hz / 2
	var m airframe.Mode
	found := false
	for _, x := range p.LightModes(0.9 * nyq) {
		if w := 2 * math.Pi * x.Hz; w >= wc && w <= 10*wc && !coveredByNotch(p.Filters, x.Hz) {
			m, found = x, true
			break
		}
	}
	if !found {
		return ""
	}
	hz, wd := airframe.Round3(m.Hz), airframe.NotchWidth(m, p.Envelope, nyq)
	q := p
	q.Filters = append(append([]airframe.Filter(nil), p.Filters...), airframe.Filter{Kind: airframe.FilterNotch, At: airframe.FilterAtFeedback, Hz: hz, WidthHz: wd})
	if _, err := q.Filters[len(q.Filters)-1].Section(loop.Hz); err != nil {
		return ""
	}
	d2, err := designAxisOnly(q, loop, d.Numeric)
	if err != nil {
		return ""
	}
	name, g1 := loadGain(d.Cont.Ctrl)
	_, g2 := loadGain(d2.Cont.Ctrl)
	head := fmt.Sprintf("the %s's mode at %.3g Hz (damping %.2g) lies within a decade above the crossover or the target (%.3g Hz) and no notch covers it: with [[axes.%s.filter]] kind = \"notch\", hz = %g, width_hz = %g (what hz = \"auto\" gives)",
		map[bool]string{true: "plant", false: "sensor"}[m.Plant], m.Hz, m.Damping, wc/(2*math.Pi), p.Name, hz, wd)
	switch {
	case d2.OK() && !d.OK():
		return fmt.Sprintf("%s the design meets every check (without it, it does not), %s %.4g against %.4g now", head, name, g2, g1)
	case d2.OK() && g2 > 1.05*g1:
		return fmt.Sprintf("%s the design meets every check with %s %.4g against %.4g now (×%.3g)", head, name, g2, g1, g2/g1)
	}
	return ""
}

// coveredByNotch reports whether a notch of fs has f within half its
// width of its centre.
func coveredByNotch(fs []airframe.Filter, f float64) bool {
	for _, x := range fs {
		if x.Kind == airframe.FilterNotch && math.Abs(f-x.Hz) <= x.WidthHz/2 {
			return true
		}
	}
	return false
}

// loadGain is the gain the design's objective grows with: Ki (pi, pid),
// K (lead), Kp (p, pd).
func loadGain(c synth.Controller) (string, float64) {
	switch {
	case c.Form.HasIntegral():
		return "Ki", c.Ki
	case c.Form == airframe.FormLead:
		return "K", c.K
	}
	return "Kp", c.Kp
}

// richerReach says what a pid would reach where the form of p meets no
// check set: the fastest settling over the envelope with every other check
// met, or that a pid meets the spec (with the derivative filter at the
// default loop_hz/8). Empty for a pid, or when the pid's search fails.
func richerReach(p airframe.Axis, loop airframe.Loop) string {
	if p.Ctrl.Form == airframe.FormPID {
		return ""
	}
	q := p
	q.Ctrl.Form = airframe.FormPID
	q.Ctrl.DerivativeLowpassHz = loop.Hz / 8
	q.Ctrl.ThirdPole = 5
	if q.Ctrl.IntegratorLimit == 0 {
		q.Ctrl.IntegratorLimit = math.Max(math.Abs(q.Ctrl.OutputLimit[0]), math.Abs(q.Ctrl.OutputLimit[1]))
	}
	L, err := NewLoops(q, loop)
	if err != nil {
		return ""
	}
	t, err := synth.TargetFromSpec(q.Spec)
	if err != nil {
		return ""
	}
	g0 := 1 / lti.Abs(q.OpenLoop(complex(0, t.OmegaN)))
	res, err := synth.Search(q.Continuous(), L, g0, t.OmegaN)
	switch {
	case err != nil:
		return ""
	case res.Met:
		return "a pid (derivative filter at loop_hz/8) meets every check over the envelope"
	case !math.IsNaN(res.Reach):
		return fmt.Sprintf("with every other check met, a pid reaches settling %.4g s", res.Reach)
	case res.Record > 0:
		return fmt.Sprintf("with every other check met, no pid design the search judged settles within %.4g s", res.Record)
	}
	return ""
}

// mend handles a design that the search found passing and the exact
// verification finds short by a hair in a frequency check: the search
// judged the margins and the noise gain on its grid (Ms between grid
// points too, but only at the envelope's corners, not at the plants in
// between), and a tustin_prewarp controller with the prewarp at the
// textbook target.
// In order, it takes the first that passes every check of
//
//   - the design with its load-rejection gain lowered by steps of 0.5 %
//     (to 0.995^32, 85 %);
//   - the design of the search again (cp's), under the failed limits
//     tightened past the exact figures (Ms, the margins and the noise
//     gain);
//   - the search's other passing designs, largest gain first;
//
// or else the first lowered design that passes the frequency checks (the
// search's own when none does). A time check, judged by the search at
// every plant exactly as here, does not fail at the search's design, but
// it can fail at a lower gain, the time checks not being monotone in the
// gain: the earlier steps of 2 % alone shrank designs on the edge of a
// small feasible set out of it, past designs that pass everything, which
// the brute-force reference found (racer_edge_pi, blimp_delay_pid).
func (d *Design) mend(cp airframe.Axis, L *Loops) error {
	cd := d.Cont
	orig, origChecks := cd.Ctrl, d.checks()
	set := func(c synth.Controller) error {
		if err := cd.Adjust(c); err != nil {
			return err
		}
		return d.realize()
	}
	var first *synth.Controller
	f := 1.0
	for i := 0; i < 32; i++ {
		f *= 0.995
		c := shrink(orig, f).Snap()
		if err := set(c); err != nil {
			return err
		}
		if !d.frequencyOK() {
			continue
		}
		if first == nil {
			first = &c
		}
		if checksOK(d.checks()) {
			return nil
		}
	}
	// Under the noise bound in force, not a default of its own.
	if q, ok := tightened(cp, origChecks, d.noiseBound()); ok {
		saved := *cd
		if again, err := synth.DesignAxis(q, L); err == nil && again.Met && again.Refined {
			// Reported against the file's spec, with the bound it had.
			again.Problem = cp
			again.Recheck()
			again.Search.NoiseBound = saved.Search.NoiseBound
			*cd = *again
			if err := d.realize(); err != nil {
				return err
			}
			if checksOK(d.checks()) {
				return nil
			}
		}
		*cd = saved
	}
	for _, c := range cd.Search.Alternates {
		if err := set(c); err != nil {
			return err
		}
		if checksOK(d.checks()) {
			return nil
		}
	}
	if first == nil {
		first = &orig
	}
	return set(*first)
}

// tightened returns q under the noise bound nb as the file's, with each
// limit of Ms, the margins and the noise gain that the checks cs fail
// moved past the failing figure by as much again (and a little more): the
// search judges them on its grid, where they came out met. It reports
// false when no such check fails. A design that rides the noise bound
// can exceed it between grid points by a hair; lowered, it can leave a
// small feasible set (a pi of a random airframe of our own: Ki 908.0 at
// noise 735.91 against 734.84, every lower gain by 0.5 % steps unsettled,
// and the first other passing design at Ki 849.6; under the tightened
// bound the search designs 902.5).
func tightened(q airframe.Axis, cs []synth.Check, nb float64) (airframe.Axis, bool) {
	ok := false
	q.Spec.MaxNoiseGain = nb
	for _, c := range cs {
		if c.OK || !(c.Value > 0) || math.IsInf(c.Value, 0) {
			continue
		}
		switch c.Name {
		case "noise_gain":
			if nb > 0 && !math.IsInf(nb, 1) {
				q.Spec.MaxNoiseGain = nb * (nb / c.Value) * (1 - 1e-3)
				ok = true
			}
		case "max_sensitivity":
			q.Spec.MaxSensitivity = c.Limit * (c.Limit / c.Value) * (1 - 1e-3)
			ok = true
		case "phase_margin":
			q.Spec.MinPhaseMargin = c.Limit + (c.Limit - c.Value) + 0.05
			ok = true
		case "gain_margin":
			q.Spec.MinGainMargin = c.Limit + (c.Limit - c.Value) + 0.05
			ok = true
		}
	}
	return q, ok
}

// checksOK reports whether every check of cs passes.
func checksOK(cs []synth.Check) bool {
	for _, c := range cs {
		if !c.OK {
			return false
		}
	}
	return true
}

// shrink lowers the gain of c that its load rejection grows with (Ki, Kp
// or K) by the factor f.
func shrink(c synth.Controller, f float64) synth.Controller {
	switch {
	case c.Form.HasIntegral():
		c.Ki *= f
	case c.Form == airframe.FormLead:
		c.K *= f
	default:
		c.Kp *= f
	}
	return c
}

// realize discretizes the continuous design and verifies it at every
// plant of the final verification.
func (d *Design) realize() error {
	p, cd := d.Problem, d.Cont
	T := 1 / d.Loop.Hz
	k, warns, err := Realize(cd.Ctrl, p.Ctrl, T, cd.Verif.Margins.Crossover)
	if err != nil {
		return err
	}
	d.Coeffs, d.realizeWarnings = k, warns
	maxStep := math.Inf(1)
	if d.Numeric.InputFullScale > 0 {
		maxStep = d.Numeric.InputFullScale
	}
	if d.Verif, err = verify(p, d.Plant, k, d.Loop.ComputeDelay, maxStep); err != nil {
		return err
	}
	d.Envelope = d.Envelope[:0]
	for _, c := range fineCorners(p.Envelope) {
		pl := d.Plant
		if c != airframe.Nominal() {
			if pl, err = NewPlant(p.At(c), T); err != nil {
				return err
			}
		}
		f, err := cornerFigures(p, c, pl, k, d.Loop.ComputeDelay, d.loops.Grid())
		if err != nil {
			return err
		}
		d.Envelope = append(d.Envelope, f)
	}
	lo := math.Inf(1)
	for _, f := range d.Envelope {
		if len(f.Margins.GainCrossovers) > 0 {
			lo = math.Min(lo, f.Margins.GainCrossovers[0])
		}
	}
	if math.IsInf(lo, 1) {
		lo = 0
	}
	d.NoiseGain = NoiseGain(k, d.Plant.Sections, d.loops.Grid(), lo)
	return nil
}

// samplingCheck fails when the target, the crossover or the derivative
// filter is at or beyond Nyquist, and warns when the rate is low.
func (d *Design) samplingCheck() synth.Check {
	T := 1 / d.Loop.Hz
	ny := math.Pi / T
	worst := d.Cont.Target.OmegaN
	what := "target ωn"
	if wc := d.Cont.Verif.Margins.Crossover; wc > worst {
		worst, what = wc, "crossover"
	}
	if d.Problem.Ctrl.Form.HasDerivative() {
		if wf := 2 * math.Pi * d.Problem.Ctrl.DerivativeLowpassHz; wf > worst {
			worst, what = wf, "derivative filter"
		}
	}
	c := synth.Check{Name: "sampling", Limit: 1, Value: worst / ny, Upper: true, OK: worst < ny}
	if !c.OK {
		d.Warnings = append(d.Warnings, fmt.Sprintf("%s %.4g rad/s is at or beyond Nyquist π/T = %.4g rad/s: raise loop_hz or slow the design", what, worst, ny))
	}
	if wc := d.Cont.Verif.Margins.Crossover; wc*T > MaxCrossoverTimesT {
		d.Warnings = append(d.Warnings, fmt.Sprintf("ωc·T = %.3g > %.2g: the loop rate is low for this crossover (rule of thumb 0.15–0.5)", wc*T, MaxCrossoverTimesT))
	}
	if r := d.Cont.Verif.Step.Rise; r > 0 && r/T < MinSamplesPerRise {
		d.Warnings = append(d.Warnings, fmt.Sprintf("%.1f samples per closed-loop rise time < %d: the loop rate is low for this design", r/T, MinSamplesPerRise))
	}
	return c
}

// integratorReach warns when the integrator limit caps the setpoints the
// loop can hold (see reachLimit).
func (d *Design) integratorReach() {
	c := d.Cont.Ctrl
	rmax := reachLimit(d.Problem, d.Coeffs)
	if math.IsInf(rmax, 1) {
		return
	}
	fs := d.Numeric.InputFullScale
	switch {
	case fs > 0 && rmax < fs:
		d.Warnings = append(d.Warnings, fmt.Sprintf("integrator_limit %.4g holds steady setpoints up to |r| = %.4g only, below input_full_scale %.4g (setpoint weight b = %.3g)", d.Coeffs.IL, rmax, fs, c.B))
	case fs == 0 && c.B < 1:
		d.Warnings = append(d.Warnings, fmt.Sprintf("with setpoint weight b = %.3g the integrator carries (1 − b)·Kp·r at steady state: integrator_limit %.4g holds setpoints up to |r| = %.4g", c.B, d.Coeffs.IL, rmax))
	}
}

// reachLimit returns the largest setpoint the loop can hold at steady state
// with the integrator clamped to IL: there the integrator carries
// s = (1/G(0) + Kp − KpB)·r (with H(0) = 1; 1/G(0) = 0 for a plant that
// integrates), so |r| ≤ IL/|1/G(0) + Kp − KpB|. +Inf when unbounded or
// without an integrator.
func reachLimit(p airframe.Axis, k Coeffs) float64 {
	if !k.Form.HasIntegral() {
		return math.Inf(1)
	}
	inv := 0.0
	if g0 := real(p.Plant.Model.Eval(0)); !math.IsInf(g0, 0) && !math.IsNaN(g0) && g0 != 0 {
		inv = 1 / g0
	}
	need := math.Abs(inv + k.Kp - k.KpB)
	if need == 0 {
		return math.Inf(1)
	}
	return k.IL / need
}

// DropTraces releases the simulated responses of the design, keeping the
// last sample of each (the end value the reports quote for a response
// that did not settle). A batch that only needs figures calls it so that
// memory does not grow with the samples of every axis.
func (d *Design) DropTraces() {
	last := func(y []float64) []float64 {
		if len(y) == 0 {
			return nil
		}
		return []float64{y[len(y)-1]}
	}
	v := &d.Verif
	v.Y, v.U = last(v.Y), last(v.U)
	s := &v.Saturated
	s.Y, s.YNone, s.U, s.UNone = last(s.Y), last(s.YNone), last(s.U), last(s.UNone)
	if d.Cont != nil {
		d.Cont.Verif.Y = last(d.Cont.Verif.Y)
		if d.Cont.Textbook != nil {
			d.Cont.Textbook.Verif.Y = last(d.Cont.Textbook.Verif.Y)
		}
	}
	for i := range d.Envelope {
		f := &d.Envelope[i]
		f.Y, f.YD = last(f.Y), last(f.YD)
	}
	if d.Num != nil && d.Num.Quantized != nil {
		q := d.Num.Quantized
		q.Y, q.U = last(q.Y), last(q.U)
		q.Saturated.Y, q.Saturated.YNone, q.Saturated.U, q.Saturated.UNone = last(q.Saturated.Y), last(q.Saturated.YNone), last(q.Saturated.U), last(q.Saturated.UNone)
	}
}

// Assess verifies the controller c (with its setpoint weight) on the
// sampled loop of p over the envelope, as the design's final
// verification does, and returns the checks against the spec, each with
// the plant where it is worst; nb is the noise-gain bound (+Inf: none).
// It is the judge of a design found some other way: a reference search,
// a hand tuning.
func Assess(p airframe.Axis, loop airframe.Loop, c synth.Controller, nb float64) ([]synth.Check, error) {
	if !(loop.Hz > 0) || math.IsInf(loop.Hz, 0) {
		return nil, fmt.Errorf("loop rate %g Hz: must be finite and > 0", loop.Hz)
	}
	L, err := NewLoops(p, loop)
	if err != nil {
		return nil, err
	}
	cd := &synth.Design{Problem: p.Continuous(), Refined: true, Met: true}
	cd.Ctrl = c
	cd.Verif.Margins.Crossover = synth.Crossover(p.Continuous(), c)
	cd.Search.NoiseBound = nb
	d := &Design{Problem: p, Loop: loop, Numeric: airframe.Numeric{Type: airframe.Float64}, Cont: cd, Plant: L.Plant(0), loops: L}
	if err := d.realize(); err != nil {
		return nil, err
	}
	return d.checks(), nil
}
