package review

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// WriteTable writes the human-readable summary of one airframe: per axis
// the target, the gains in parallel and series form, the continuous and the
// sampled figures side by side against the spec with pass/FAIL, the
// plant envelope (the figures at every plant verified, and where each
// check is worst), the saturated step, the closed-loop poles and the
// warnings.
//
// Numbers are printed with four significant digits (%.4g): enough to
// compare with a hand calculation, few enough that the last bits of a
// floating-point result never show. The text depends only on the design,
// so it is the same on every run.
func WriteTable(w io.Writer, a *discrete.Airframe) error {
	bw := bufio.NewWriter(w)
	t := &tableWriter{w: bw}
	t.airframe(a)
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("write table: %w", err)
	}
	return nil
}

type tableWriter struct {
	w io.Writer
}

func (t *tableWriter) line(format string, args ...any) {
	fmt.Fprintf(t.w, format+"\n", args...)
}

func (t *tableWriter) airframe(a *discrete.Airframe) {
	f := a.File
	t.line("airframe %s  (%s)", f.Airframe, f.Path)
	if f.Description != "" {
		t.line("  %s", tabOneLine(f.Description))
	}
	t.line("  loop %s Hz (T = %s), compute delay %d sample%s, numeric %s",
		synth.G4(f.Loop.Hz), tabSec(1/f.Loop.Hz), f.Loop.ComputeDelay, tabPlural(f.Loop.ComputeDelay), f.Numeric.Type)
	failed := 0
	for _, x := range a.Axes {
		if !x.OK() {
			failed++
		}
	}
	if failed == 0 {
		t.line("  result: ok, %d of %d axes meet the spec at the loop rate", len(a.Axes), len(a.Axes))
	} else {
		t.line("  result: FAIL, %d of %d axes do not meet the spec", failed, len(a.Axes))
	}
	for _, x := range a.Axes {
		t.line("")
		t.axis(a, x)
	}
	t.line("")
}

func (t *tableWriter) axis(a *discrete.Airframe, x discrete.Outcome) {
	form := ""
	if p, ok := axisProblem(a.File, x.Name); ok {
		form = string(p.Ctrl.Form)
	}
	status := "ok"
	if !x.OK() {
		status = "FAIL"
	}
	t.line("axis %s  form %s  %s", x.Name, form, status)
	if x.Err != nil {
		t.line("  cannot design: %s", tabOneLine(x.ErrorText()))
		return
	}
	d := x.Design
	if d == nil || d.Cont == nil {
		t.line("  no design")
		return
	}
	c := d.Cont
	t.line("  target     %s", tabTarget(c.Target))
	if tb := c.Textbook; tb != nil {
		t.line("  textbook   %s", tabTarget(tb.Target))
		t.line("             %s: %s (the full-order loop; refined below)", tabGains(tb.Ctrl), tabStep(tb.Verif.Stable, tb.Verif.Step.Overshoot, tb.Verif.Step.Settling))
	} else if c.TextbookErr != "" {
		t.line("  textbook   %s", tabOneLine(c.TextbookErr))
	}
	t.line("  gains      %s", tabGains(c.Ctrl))
	if s := tabSeries(c.Ctrl); s != "" {
		t.line("  series     C(s) = %s", s)
	}
	t.line("  discrete   %s", tabDiscrete(d))
	for i, f := range d.Problem.Filters {
		ph := ""
		if wc := d.Verif.Margins.Crossover; i < len(d.Plant.Sections) && wc > 0 && !math.IsInf(wc, 0) {
			ph = fmt.Sprintf(": phase %s at the crossover", tabDeg(discrete.SectionPhaseDeg(d.Plant.Sections[i], wc, d.Loop.Hz)))
		}
		lead := "           "
		if i == 0 {
			lead = "  filters  "
		}
		t.line("%s%d. %s%s", lead, i+1, f.Describe(), ph)
	}
	for i, f := range d.Problem.Ctrl.DerivativeFilters {
		ph := ""
		if wc := d.Verif.Margins.Crossover; i < len(d.Coeffs.DSections) && wc > 0 && !math.IsInf(wc, 0) {
			ph = fmt.Sprintf(": phase %s at the crossover", tabDeg(discrete.SectionPhaseDeg(d.Coeffs.DSections[i], wc, d.Loop.Hz)))
		}
		lead := "           "
		if i == 0 && len(d.Problem.Filters) == 0 {
			lead = "  filters  "
		}
		t.line("%sD%d. %s, on the derivative%s", lead, i+1, f.Describe(), ph)
	}
	t.line("")
	t.metrics(d)
	t.envelope(d)
	t.saturated(d)
	t.numeric(d)
	t.line("")
	t.line("  closed-loop poles, s: %s", tabPoles(c.Verif.Poles, "rad/s"))
	t.line("  closed-loop poles, z: %s", tabPoles(d.Verif.Poles, ""))
	if ws := dedupWarnings(d.Warnings); len(ws) > 0 {
		t.line("  warnings:")
		for _, w := range ws {
			t.line("    - %s", tabOneLine(w))
		}
	}
}

// metrics writes the continuous-vs-discrete table with the spec checks;
// with a numeric realization whose coefficients differ from the design's
// (float32, fixed point), a third column gives the sampled loop with the
// coefficients as quantized, and the check column combines both checks.
func (t *tableWriter) metrics(d *discrete.Design) {
	cv, dv := d.Cont.Verif, d.Verif
	var qv *discrete.Verification
	if d.Num != nil {
		qv = d.Num.Quantized
	}
	checks := d.Checks
	used := make([]bool, len(checks))
	find := func(name string) (synth.Check, bool) {
		for i, c := range checks {
			if c.Name == name && !used[i] {
				used[i] = true
				return c, true
			}
		}
		return synth.Check{}, false
	}
	row := func(cells ...string) {
		const w = "  %-20s %-15s %-15s"
		line := fmt.Sprintf(w, cells[0], cells[1], cells[2])
		if qv != nil {
			line += fmt.Sprintf(" %-15s", cells[3])
		}
		line += fmt.Sprintf(" %-12s %s", cells[4], cells[5])
		t.line("%s", strings.TrimRight(line, " "))
	}
	row("metric", "continuous", "discrete", "quantized", "spec", "check")
	metric := func(label, name, cont, disc, quant string) {
		spec, res := "", ""
		if c, ok := find(name); ok {
			spec, res = tabSpec(c), tabPass(c.OK)
			if !c.OK && c.Worst != (airframe.Corner{}) && c.Worst != airframe.Nominal() {
				// The value shown is the nominal plant's; the check
				// failed at another plant of the envelope (below).
				res = "FAIL (envelope)"
			}
			if q, ok := find("quantized_" + name); ok && !q.OK && c.OK {
				res = "FAIL (quantized)"
			}
		}
		row(label, cont, disc, quant, spec, res)
	}
	stepVal := func(v *discrete.Verification, x func(*discrete.Verification) float64, f func(float64) string) string {
		switch {
		case v == nil:
			return ""
		case !v.Stable:
			return "unstable"
		}
		return f(x(v))
	}
	contStep := func(stable bool, v float64, f func(float64) string) string {
		if !stable {
			return "unstable"
		}
		return f(v)
	}
	marg := func(v *discrete.Verification, x func(*discrete.Verification) float64, f func(float64) string) string {
		if v == nil {
			return ""
		}
		return f(x(v))
	}
	over := func(v *discrete.Verification) float64 { return v.Step.Overshoot }
	settle := func(v *discrete.Verification) float64 { return v.Step.Settling }
	rise := func(v *discrete.Verification) float64 { return v.Step.Rise }
	sse := func(v *discrete.Verification) float64 { return v.SteadyStateError }
	pm := func(v *discrete.Verification) float64 { return v.Margins.PhaseDeg }
	gm := func(v *discrete.Verification) float64 { return v.Margins.GainDB }
	wc := func(v *discrete.Verification) float64 { return v.Margins.Crossover }
	dm := func(v *discrete.Verification) float64 { return v.Margins.DelayMargin }
	maxZ := func(v *discrete.Verification) float64 { return 1 - v.StabilityMargin }
	band := d.Problem.Spec.Band
	metric("overshoot", "overshoot", contStep(cv.Stable, cv.Step.Overshoot, tabPct), stepVal(&dv, over, tabPct), stepVal(qv, over, tabPct))
	metric(fmt.Sprintf("settling (%s band)", tabPctShort(band)), "settling_time", contStep(cv.Stable, cv.Step.Settling, tabSec), stepVal(&dv, settle, tabSec), stepVal(qv, settle, tabSec))
	metric("rise time 10-90 %", "", contStep(cv.Stable, cv.Step.Rise, tabSec), stepVal(&dv, rise, tabSec), stepVal(qv, rise, tabSec))
	metric("steady-state error", "steady_error", contStep(cv.Stable, cv.SteadyStateError, tabPct), stepVal(&dv, sse, tabPct), stepVal(qv, sse, tabPct))
	metric("phase margin", "phase_margin", tabDeg(cv.Margins.PhaseDeg), marg(&dv, pm, tabDeg), marg(qv, pm, tabDeg))
	metric("gain margin", "gain_margin", tabDB(cv.Margins.GainDB), marg(&dv, gm, tabDB), marg(qv, gm, tabDB))
	metric("crossover", "", tabRadps(cv.Margins.Crossover), marg(&dv, wc, tabRadps), marg(qv, wc, tabRadps))
	metric("delay margin", "", tabSec(cv.Margins.DelayMargin), marg(&dv, dm, tabSec), marg(qv, dm, tabSec))
	zText := func(x float64) string { return tabRadius(x, true) }
	metric("stability (max)", "stable", "Re "+synth.G4(tabMaxRe(cv.Poles)), marg(&dv, maxZ, zText), marg(qv, maxZ, zText))
	metric("sampling", "sampling", "", "ω/Nyquist "+synth.G4(tabSampling(checks)), "")
	// The figures of the final verification at the nominal plant, and the
	// controller's noise gain: the sampled loop only.
	if len(d.Envelope) > 0 {
		n := d.Envelope[0]
		nom := func(x float64, f func(float64) string) string {
			if !n.Stable {
				return "unstable"
			}
			return f(x)
		}
		metric("sensitivity peak Ms", "max_sensitivity", "", nom(n.Ms, synth.G4), "")
		metric("compl. sens. peak Mt", "", "", nom(n.Mt, synth.G4), "")
		metric("noise gain", "noise_gain", "", synth.G4(d.NoiseGain), "")
		if d.Problem.Ctrl.Form.HasIntegral() {
			metric("hold rate", "hold_rate", "", tabUnbounded(n.HoldRate, tabRadps), "")
		}
		ds := n.Disturbance
		metric("load step: peak", "", "", nom(ds.Peak, tabRadps), "")
		metric("load step: IAE", "", "", nom(ds.IAE, func(v float64) string { return synth.G4(v) + " rad" }), "")
		metric("load step: recovery", "disturbance_recovery", "", nom(ds.Recovery, tabSec), "")
	}
	// The checks left are those of the numeric realization (overflow,
	// limit cycle): their values go in the quantized column when there is
	// one.
	for i, c := range checks {
		if !used[i] {
			disc, quant := synth.CheckValue(c.Name, c.Value), ""
			if qv != nil {
				disc, quant = "", disc
			}
			row(tabCheckLabel(c.Name), "", disc, quant, tabSpec(c), tabPass(c.OK))
		}
	}
}

// envelope writes the plant envelope: its intervals, the figures of the
// sampled loop at every plant of the final verification, and for each
// check of the envelope its worst value and the plant where it is. The
// metrics table above is the nominal plant; the checks judge the worst.
// Nothing for an envelope of the nominal plant alone.
func (t *tableWriter) envelope(d *discrete.Design) {
	n := len(d.Envelope)
	if n == 0 {
		return
	}
	t.line("")
	t.line("  discrete: the nominal plant; load step %s (command units) at the plant input",
		synth.G4(d.Envelope[0].Disturbance.Step))
	if n == 1 {
		return
	}
	e := d.Problem.Envelope.Normalized()
	t.line("  envelope   gain ×[%s, %s], lag ×[%s, %s], delay +[%s, %s] s: %d plants verified",
		synth.G4(e.GainScale[0]), synth.G4(e.GainScale[1]), synth.G4(e.LagScale[0]), synth.G4(e.LagScale[1]),
		synth.G4(e.DelayAdd[0]), synth.G4(e.DelayAdd[1]), n)
	const prow = "  %-7s %-7s %-10s %-7s %-10s %-10s %-8s %-9s %s"
	t.line(prow, "gain", "lag", "delay", "stable", "overshoot", "settling", "PM", "GM", "Ms")
	for _, f := range d.Envelope {
		c := f.Corner
		st, ov, ts, ms := "yes", tabPct(f.Step.Overshoot), tabSec(f.Step.Settling), synth.G4(f.Ms)
		if !f.Stable {
			st, ov, ts, ms = "NO", "–", "–", "–"
		}
		row := fmt.Sprintf(prow, "×"+synth.G4(c.GainScale), "×"+synth.G4(c.LagScale), tabSignedSec(c.DelayAdd), st, ov, ts,
			tabDeg(f.Margins.PhaseDeg), tabDB(f.Margins.GainDB), ms)
		t.line("%s", strings.TrimRight(row, " "))
	}
	t.line("")
	const wrow = "  %-20s %-12s %-12s %-6s %s"
	t.line(wrow, "worst over envelope", "value", "spec", "check", "at")
	for _, c := range d.Checks {
		if c.Worst == (airframe.Corner{}) || c.Name == "noise_gain" {
			continue // a check of the nominal loop or the controller alone
		}
		v, at := synth.CheckValue(c.Name, c.Value), synth.CornerText(c.Worst)
		switch v {
		case "0", "0 %":
			// The worst is nil, so is every plant's (a steady-state
			// error with an integrator): no plant stands out.
			at = "every plant"
		}
		if c.Name == "stable" {
			v = tabRadius(c.Value, c.OK)
			if math.IsNaN(c.Value) && c.OK {
				at = "every plant"
			}
		}
		t.line(wrow, tabCheckLabel(c.Name), v, tabSpec(c), tabPass(c.OK), at)
	}
}

// numeric writes the numeric realization: for float types the largest
// coefficient rounding error, for fixed point the coefficient formats and
// the proved range of every state and intermediate.
func (t *tableWriter) numeric(d *discrete.Design) {
	n := d.Num
	if n == nil {
		return
	}
	t.line("")
	if !n.Type.IsFixed() {
		worst, name := 0.0, ""
		for _, c := range n.Coefficients {
			if e := math.Abs(c.RelError); e > worst || name == "" {
				worst, name = e, c.Name
			}
		}
		if name == "" {
			t.line("  numeric    %s", n.Type)
			return
		}
		t.line("  numeric    %s: coefficients rounded to nearest, largest relative error %s (%s)", n.Type, synth.G4(worst), name)
		return
	}
	t.line("  numeric    %s (%d-bit words): input full scale %s, output full scale %s; input %s bits, output %s bits below the settling band",
		n.Type, n.W, synth.G4(n.InputFullScale), synth.G4(n.OutputFullScale), synth.G4(n.InputResolutionBits), synth.G4(n.OutputResolutionBits))
	t.line("             against the float64 model: max error %s LSB, SQNR %s dB, at rest %s LSB (bound %s)",
		synth.G4(n.MaxErrorLSB), synth.G4(n.SQNRdB), synth.G4(n.RestLSB), synth.G4(n.RestBoundLSB))
	if n.Fixed != nil && len(n.Fixed.Sections) > 0 {
		t.line("             filter chain: rounding at its output at most %s input LSB (%s)", synth.G4(n.FilterNoiseLSB), n.RoundingProof())
	}
	if n.Fixed != nil && len(n.Fixed.DSections) > 0 {
		t.line("             derivative filters: rounding in the D term at most %s output LSB (%s)", synth.G4(n.DFilterNoiseLSB), n.RoundingProof())
	}
	const crow = "  %-20s %-15s %-15s %-9s %s"
	t.line(crow, "coefficient", "value", "quantized", "format", "rel error")
	for _, c := range n.Coefficients {
		t.line(crow, c.Name, synth.G4(c.Value), synth.G4(c.Quantized), c.Format, synth.G4(c.RelError))
	}
	if len(n.Ranges) == 0 {
		return
	}
	t.line("")
	const rrow = "  %-46s %-9s %-11s %-11s %s"
	t.line(rrow, "range", "format", "bound", "capacity", "headroom")
	for _, g := range n.Ranges {
		head := synth.G4(g.HeadroomBits) + " bits"
		if g.Saturated {
			head += ", saturates"
		}
		t.line("%s", strings.TrimRight(fmt.Sprintf(rrow, tabOneLine(g.Name), g.Format, synth.G4(g.Bound), synth.G4(g.Capacity), head), " "))
	}
}

// tabCheckLabel names a check in the table's words.
func tabCheckLabel(name string) string {
	switch name {
	case "overflow":
		return "overflow headroom"
	case "limit_cycle":
		return "limit cycle at rest"
	case "filter_rounding":
		return "filter chain rounding"
	case "max_sensitivity":
		return "sensitivity peak Ms"
	case "steady_error":
		return "steady-state error"
	case "disturbance_recovery":
		return "load-step recovery"
	case "saturated_recovery":
		return "saturated-step recovery"
	}
	return strings.ReplaceAll(name, "_", " ")
}

func tabSampling(cs []synth.Check) float64 {
	for _, c := range cs {
		if c.Name == "sampling" {
			return c.Value
		}
	}
	return math.NaN()
}

// saturated writes the large-step response with and without anti-windup.
func (t *tableWriter) saturated(d *discrete.Design) {
	s, k := d.Verif.Saturated, d.Coeffs
	if !d.Verif.Stable || !(s.Amplitude > 0) || math.IsInf(s.Amplitude, 0) {
		return
	}
	t.line("")
	why := "twice what the linear loop can follow within"
	switch {
	case s.LimitedByFullScale:
		why = "the input full scale (the step that would need twice the limit is larger); output_limit"
	case s.LimitedByReach:
		why = "90 % of what the integrator limit can hold at steady state; output_limit"
	}
	t.line("  saturated step: setpoint %s, %s [%s, %s]",
		synth.G4(s.Amplitude), why, synth.G4(k.Lo), synth.G4(k.Hi))
	rec := func(settled bool, v float64, y []float64) string {
		if !settled {
			if len(y) > 0 {
				return "no, ends at " + synth.G4(y[len(y)-1])
			}
			return "not settled"
		}
		return tabSec(v)
	}
	const row = "  %-20s %-24s %s"
	if !d.Problem.Ctrl.Form.HasIntegral() {
		t.line("%s", strings.TrimRight(fmt.Sprintf(row, "overshoot", tabPct(s.Overshoot), ""), " "))
		t.line("%s", strings.TrimRight(fmt.Sprintf(row, "recovery time", rec(s.Settled, s.Recovery, s.Y), ""), " "))
		return
	}
	aw := string(s.AntiWindup)
	if s.AntiWindup == discrete.AWBackcalc && k.Tt > 0 {
		aw += " Tt " + tabSec(k.Tt)
	}
	t.line(row, "", aw, "no anti-windup")
	t.line(row, "overshoot", tabPct(s.Overshoot), tabPct(s.OvershootNone))
	t.line(row, "recovery time", rec(s.Settled, s.Recovery, s.Y), rec(s.SettledNone, s.RecoveryNone, s.YNone))
	t.line(row, "integrator peak", synth.G4(s.IntegratorPeak), "limit "+synth.G4(k.IL))
}

func tabTarget(tg synth.Target) string {
	p := tg.Pole
	return fmt.Sprintf("ζ = %s  ωn = %s  s* = %s ± %sj rad/s", synth.G4(tg.Zeta), tabRadps(tg.OmegaN), synth.G4(real(p)), synth.G4(math.Abs(imag(p))))
}

func tabGains(c synth.Controller) string {
	if c.Form == airframe.FormLead {
		return fmt.Sprintf("lead K = %s  zero %s  pole %s rad/s", synth.G4(c.K), synth.G4(c.Zero), synth.G4(c.Pole))
	}
	parts := []string{"kp = " + synth.G4(c.Kp)}
	if c.Form.HasIntegral() {
		parts = append(parts, "ki = "+synth.G4(c.Ki))
	}
	if c.Form.HasDerivative() {
		parts = append(parts, "kd = "+synth.G4(c.Kd), "Tf = "+tabSec(c.Tf))
	}
	parts = append(parts, "b = "+synth.G4(c.B))
	return strings.Join(parts, "  ")
}

// tabSeries writes C(s) = gain·Π(s − z)/Π(s − p) with factors
// (s + a) for real roots and (s² + 2as + |r|²) for pairs.
func tabSeries(c synth.Controller) string {
	z, err := c.Series()
	if err != nil {
		return ""
	}
	num, den := Factors(z.Zeros, synth.G4, ""), Factors(z.Poles, synth.G4, "")
	s := synth.G4(z.Gain)
	if num != "" {
		s += " " + num
	}
	if den != "" {
		s += " / " + den
	}
	return s
}

func tabPoles(ps []complex128, unit string) string {
	var out []string
	for _, r := range CanonicalRoots(ps) {
		if imag(r) != 0 {
			out = append(out, fmt.Sprintf("%s ± %sj", synth.G4(real(r)), synth.G4(imag(r))))
		} else {
			out = append(out, synth.G4(real(r)))
		}
	}
	if len(out) == 0 {
		return "none"
	}
	s := strings.Join(out, ", ")
	if unit != "" {
		s += " " + unit
	}
	return s
}

func tabDiscrete(d *discrete.Design) string {
	k := d.Coeffs
	s := fmt.Sprintf("%s at %s Hz", k.Method, synth.G4(d.Loop.Hz))
	if k.PrewarpOmega > 0 {
		s += fmt.Sprintf(" (prewarped at %s)", tabRadps(k.PrewarpOmega))
	}
	if d.Problem.Ctrl.Form.HasDerivative() && k.DerivativeMethod != "" && k.DerivativeMethod != k.Method {
		s += fmt.Sprintf(", derivative %s", k.DerivativeMethod)
	}
	if d.Problem.Ctrl.Form.HasIntegral() {
		s += fmt.Sprintf(", anti-windup %s, integrator limit %s", k.AntiWindup, synth.G4(k.IL))
	}
	return s
}

func tabStep(stable bool, overshoot, settling float64) string {
	if !stable {
		return "unstable"
	}
	return fmt.Sprintf("overshoot %s, settling %s", tabPct(overshoot), tabSec(settling))
}

func tabSpec(c synth.Check) string {
	switch strings.TrimPrefix(c.Name, "quantized_") {
	case "stable", "sampling":
		return "< " + synth.G4(c.Limit)
	}
	rel := "≥ "
	if c.Upper {
		rel = "≤ "
	}
	return rel + synth.CheckValue(c.Name, c.Limit)
}

func tabPass(ok bool) string {
	if ok {
		return "pass"
	}
	return "FAIL"
}

func tabMaxRe(ps []complex128) float64 {
	m := math.Inf(-1)
	for _, p := range ps {
		m = math.Max(m, real(p))
	}
	return m
}

// Unit formatting; a value that is not finite prints as "none" (no
// crossover) or "n/a".

func tabFiniteOr(x float64, f func(float64) string) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "none"
	}
	return f(x)
}

func tabSec(x float64) string {
	return tabFiniteOr(x, func(v float64) string { return synth.G4(v) + " s" })
}
func tabPct(x float64) string {
	return tabFiniteOr(x, func(v float64) string {
		if math.Abs(v) < 1e-9 {
			v = 0
		}
		return synth.G4(100*v) + " %"
	})
}

// tabRadius writes the largest closed-loop pole radius |z|: with four
// significant digits, or as many more as tell it from 1 (a slow pole
// 1e-5 inside the circle reads "|z| 0.99999", not "|z| 1" beside a pass).
// A radius the check did not compute (the winding-number test of a long
// delay finds no roots) reads as the verdict.
func tabRadius(x float64, ok bool) string {
	if math.IsNaN(x) {
		if ok {
			return "all |z| < 1"
		}
		return "a pole |z| ≥ 1"
	}
	s := synth.G4(x)
	for p := 5; s == "1" && x != 1 && p <= 17; p++ {
		s = strconv.FormatFloat(x, 'g', p, 64)
	}
	return "|z| " + s
}

// tabUnbounded is f(x), or "unbounded" for +Inf (a rate the integrator
// can hold whatever its size).
func tabUnbounded(x float64, f func(float64) string) string {
	if math.IsInf(x, 1) {
		return "unbounded"
	}
	return f(x)
}

// tabSignedSec writes an added delay with its sign, "+0.001 s".
func tabSignedSec(x float64) string {
	switch {
	case x > 0:
		return "+" + tabSec(x)
	case x < 0:
		return "-" + tabSec(-x)
	}
	return "0 s"
}

func tabPctShort(x float64) string { return synth.G4(100*x) + " %" }
func tabDeg(x float64) string {
	return tabFiniteOr(x, func(v float64) string { return synth.G4(v) + "°" })
}
func tabDB(x float64) string {
	return tabFiniteOr(x, func(v float64) string { return synth.G4(v) + " dB" })
}
func tabRadps(x float64) string {
	return tabFiniteOr(x, func(v float64) string { return synth.G4(v) + " rad/s" })
}

func tabPlural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// oneLine keeps a message on one line of the table.
func tabOneLine(s string) string {
	return strings.Join(strings.Fields(s), " ")
}
