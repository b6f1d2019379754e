package airframe

import (
	"fmt"
	"math"
	"strings"

	"locusmith/internal/lti"
)

// The keys of each table, in the order of the README's tables; unknown-key messages
// list them in this order. (Functions rather than package variables, so
// that no caller can change a schema.)
func topKeys() []string {
	return []string{"airframe", "description", "loop_hz", "compute_delay", "numeric", "axes"}
}
func numericKeys() []string { return []string{"type", "input_full_scale", "output_full_scale"} }
func axisKeys() []string {
	return []string{"plant", "sensor", "spec", "control", "envelope", "filter"}
}
func filterKeys() []string {
	return []string{"kind", "at", "hz", "width_hz", "depth_db", "order", "damping", "goal"}
}
func zpkKeys() []string  { return []string{"gain", "poles", "zeros"} }
func physKeys() []string { return []string{"effectiveness", "motor_tau"} }
func plantKeys() []string {
	return []string{"gain", "poles", "zeros", "effectiveness", "motor_tau", "delay"}
}
func sensorKeys() []string { return []string{"lowpass_hz", "gain", "poles", "zeros"} }
func specKeys() []string {
	return []string{"settling_time", "settling_band", "overshoot", "min_phase_margin", "min_gain_margin",
		"max_sensitivity", "max_steady_error", "hold_rate", "disturbance_step", "disturbance_recovery",
		"max_noise_gain"}
}
func envelopeKeys() []string { return []string{"gain_scale", "lag_scale", "delay_add"} }
func controlKeys() []string {
	return []string{"form", "refine", "third_pole", "lead_zero", "derivative_lowpass_hz",
		"derivative_on", "setpoint_weight", "output_limit", "integrator_limit", "antiwindup",
		"tracking_time", "discretize"}
}

// Predicates shared by several number rules.
func isPositive(x float64) bool    { return x > 0 }
func isNonNegative(x float64) bool { return x >= 0 }
func isNonZero(x float64) bool     { return x != 0 }

// delayRule is the rule of the plant's transport delay.
func delayRule() numRule {
	return numRule{desc: fmt.Sprintf("in [0, %g]", maxDelay), unit: "s",
		ok: func(x float64) bool { return x >= 0 && x <= maxDelay }}
}

// file checks the top level and everything below it. The result is only
// meaningful when no problem was recorded.
func (c *checker) file(raw map[string]any) *File {
	top := c.newTable("", raw, topKeys()...)
	f := &File{}
	f.Airframe, _ = top.ident("airframe", "the airframe name")
	if d, ok := top.str("description", false, "", "free text"); ok {
		if msg := textProblem(d); msg != "" {
			c.fail("description", d, "%s", msg)
		}
		f.Description = d
	}

	loopHz, loopOK := top.number("loop_hz", numRule{
		desc: fmt.Sprintf("> 0 and ≤ %.0f", maxLoopHz), unit: "Hz",
		ok: func(x float64) bool { return x > 0 && x <= maxLoopHz },
	}, true, 0)
	delay, delayOK := top.integer("compute_delay", 0, maxComputeDelay, "samples", defaultComputeDelay)
	f.Loop = Loop{Hz: loopHz, ComputeDelay: int(delay)}

	var numOK bool
	f.Numeric, numOK = c.numeric(top)

	if !loopOK {
		loopHz = 0 // checks against the loop rate are skipped
	}
	lp := loopInfo{hz: loopHz, hzOK: loopOK, computeDelay: int(delay), cdOK: delayOK, numeric: f.Numeric, numOK: numOK}
	axes := top.subtable("axes", true, "one [axes.NAME] table per axis")
	if axes == nil {
		return f
	}
	if len(axes) == 0 {
		c.fail("axes", nil, "at least one axis required: an [axes.NAME] table with plant and spec")
		return f
	}
	if len(axes) > MaxAxes {
		c.fail("axes", nil, "%d axes: at most %d per file (they are designed and held together); split the file", len(axes), MaxAxes)
		return f
	}
	for _, name := range sortedKeys(axes) { // sorted: File.Axes is in name order
		key := joinKey("axes", name)
		if msg := CheckName(name); msg != "" {
			c.fail(key, nil, "axis name %s", msg)
		}
		m, ok := axes[name].(map[string]any)
		if !ok {
			c.fail(key, axes[name], "must be a table [axes.NAME] with plant and spec, not %s", kind(axes[name]))
			continue
		}
		f.Axes = append(f.Axes, c.axis(name, key, m, lp))
	}
	return f
}

// numeric checks [numeric]; the bool reports whether the type is valid
// (given or defaulted).
func (c *checker) numeric(top *table) (Numeric, bool) {
	n := Numeric{Type: defaultNumericType, InputFullScale: defaultFullScale, OutputFullScale: defaultFullScale}
	if _, given := top.m["numeric"]; !given {
		return n, true
	}
	m := top.subtable("numeric", false, "type, input_full_scale, output_full_scale")
	if m == nil {
		return n, false
	}
	t := c.newTable("numeric", m, numericKeys()...)
	typ, ok := t.enum("type", string(defaultNumericType),
		string(Float32), string(Float64), string(Q15), string(Q31))
	if ok {
		n.Type = NumericType(typ)
	}
	// The full scales set the fixed-point formats, so a fixed-point type
	// cannot do without them; float types may give them (0 when absent).
	fixed := ok && n.Type.IsFixed()
	if fixed {
		for _, k := range []string{"input_full_scale", "output_full_scale"} {
			if !t.has(k) {
				c.fail(t.sub(k), nil, "required for type = %q: a number > 0 (the largest |value| the fixed-point format must hold)", typ)
			}
		}
	}
	in := numRule{desc: "> 0", unit: "rate units, the largest |setpoint| or |measured rate|", ok: isPositive}
	out := numRule{desc: "> 0", unit: "command units, the largest |command|", ok: isPositive}
	n.InputFullScale, _ = t.number("input_full_scale", in, false, defaultFullScale)
	n.OutputFullScale, _ = t.number("output_full_scale", out, false, defaultFullScale)
	return n, ok
}

// axis checks [axes.NAME] against the top level lp (lp.hz is 0 when
// loop_hz is invalid; a full scale of lp.numeric is 0 when absent or
// invalid).
//
// The control table is read before the spec, whose disturbance step is
// bounded by the output limit; the plant before the envelope, whose added
// delay is bounded by the plant's. A bound whose key is itself invalid is
// not applied, so that one mistake is reported once.
func (c *checker) axis(name, key string, m map[string]any, lp loopInfo) Axis {
	t := c.newTable(key, m, axisKeys()...)
	p := Axis{Name: name, Sensor: idealSensor(), Envelope: defaultEnvelope()}
	ok := axisOK{sensor: true, delayAdd: true}
	if pm := t.subtable("plant", true, "gain/poles/zeros or effectiveness/motor_tau, and delay"); pm != nil {
		p.Plant, ok.model, ok.delay = c.plant(c.newTable(t.sub("plant"), pm, plantKeys()...))
	}
	if _, given := t.m["sensor"]; given {
		ok.sensor = false
		if sm := t.subtable("sensor", false, "lowpass_hz, or gain/poles/zeros"); sm != nil {
			p.Sensor, ok.sensor = c.sensor(c.newTable(t.sub("sensor"), sm, sensorKeys()...))
		}
	}
	cm := t.subtable("control", false, "form, limits, ...")
	if cm == nil {
		cm = map[string]any{} // absent (or not a table, reported): all defaults
	}
	p.Ctrl, ok.limit, ok.ilim = c.control(c.newTable(t.sub("control"), cm, controlKeys()...), lp.hz)
	specOK, noiseKey := false, false
	if sm := t.subtable("spec", true, "settling_time, overshoot, ..."); sm != nil {
		_, noiseKey = sm["max_noise_gain"]
		lim := specLimits{outputLimit: p.Ctrl.OutputLimit, outputLimitOK: ok.limit, inputFullScale: lp.numeric.InputFullScale}
		p.Spec, ok.settling, ok.recovery, ok.steady = c.spec(c.newTable(t.sub("spec"), sm, specKeys()...), lim)
		specOK = true
	}
	if _, given := t.m["envelope"]; given {
		ok.delayAdd = false
		if em := t.subtable("envelope", false, "gain_scale, lag_scale, delay_add"); em != nil {
			p.Envelope, ok.delayAdd = c.envelope(c.newTable(t.sub("envelope"), em, envelopeKeys()...), p.Plant.Delay, ok.delay)
		}
	}
	if !specOK {
		ok.settling, ok.recovery, ok.steady = false, false, false
	}
	if _, given := t.m["filter"]; given {
		// A notch with hz = "auto" is placed on the modes of the plant
		// and sensor (only when both decoded: otherwise the problem is
		// theirs).
		var modes []Mode
		modesOK := ok.model && ok.sensor && lp.hzOK
		if modesOK {
			modes = p.LightModes(0.9 * lp.hz / 2)
		}
		fs := c.filters(t, lp, autoPlacer{modes: modes, ok: modesOK, env: p.Envelope, nyq: lp.hz / 2, noiseBound: p.Spec.MaxNoiseGain, noNoiseKey: specOK && !noiseKey,
			form: p.Ctrl.Form})
		for _, f := range fs {
			if f.At == FilterAtDerivative {
				p.Ctrl.DerivativeFilters = append(p.Ctrl.DerivativeFilters, f)
			} else {
				p.Filters = append(p.Filters, f)
			}
		}
	}
	c.axisLimits(key, p, ok, t, lp)
	return p
}

// plant checks [axes.NAME.plant]: either the zpk form or the physical form.
// The bools report whether the model is valid, and whether the delay is
// valid (given or defaulted), for the envelope's bound on the added delay.
func (c *checker) plant(t *table) (Plant, bool, bool) {
	pl := Plant{Delay: defaultPlantDelay}
	zpk, phys := t.present(zpkKeys()...), t.present(physKeys()...)
	both := len(zpk) > 0 && len(phys) > 0
	switch {
	case both:
		c.fail(t.key, nil, "both the zpk form (%s) and the physical form (%s) are given: use one",
			strings.Join(zpk, ", "), strings.Join(phys, ", "))
	case len(zpk) == 0 && len(phys) == 0:
		c.fail(t.key, nil, "required: either gain and poles (zpk form) or effectiveness and motor_tau (physical form)")
	}
	// With both forms given, still check each value, but do not ask for
	// the missing keys of either form.
	required := !both
	modelOK := false
	if len(zpk) > 0 {
		pl.Model, modelOK = c.zpk(t, required, true, MaxPlantPoles)
	}
	if len(phys) > 0 {
		eff, okE := t.number("effectiveness", numRule{desc: "> 0", unit: "rad/s² per unit command", ok: isPositive}, required, 0)
		tau, okT := t.number("motor_tau", numRule{desc: "> 0", unit: "s", ok: isPositive}, required, 0)
		if okT && t.has("motor_tau") {
			// The motor's pole is −1/motor_tau.
			if msg := rootProblem(complex(-1/tau, 0)); msg != "" {
				c.fail(t.sub("motor_tau"), t.m["motor_tau"], "the motor's pole −1/motor_tau: %s", msg)
				okT = false
			}
		}
		modelOK = okE && okT && t.has("effectiveness") && t.has("motor_tau")
		if modelOK && !both {
			pl.Model = physicalModel(eff, tau)
		}
	}
	modelOK = modelOK && !both
	var delayOK bool
	pl.Delay, delayOK = t.number("delay", delayRule(), false, defaultPlantDelay)
	if delayOK && pl.Delay > 0 && pl.Delay < minDelay {
		c.fail(t.sub("delay"), t.m["delay"], "a delay below %g s is no delay at any loop rate (loop_hz ≤ %g): write 0", minDelay, maxLoopHz)
		delayOK = false
	}
	return pl, modelOK, delayOK
}

// physicalModel is the plant of the physical form: the command sets the
// angular acceleration through a first-order motor lag, and the rate is
// its integral,
//
//	G(s) = effectiveness / (s·(motor_tau·s + 1))
//	     = (effectiveness/motor_tau) / (s·(s + 1/motor_tau)),
//
// so the gain is effectiveness/motor_tau and the poles are 0 and
// −1/motor_tau.
func physicalModel(effectiveness, motorTau float64) lti.ZPK {
	return lti.ZPK{
		Gain:  effectiveness / motorTau,
		Poles: []complex128{0, complex(-1/motorTau, 0)},
	}
}

// zpk checks gain, poles and zeros of t. polesRequired is false for a
// sensor, which may be a pure gain; maxPoles bounds the order.
func (c *checker) zpk(t *table, required, polesRequired bool, maxPoles int) (lti.ZPK, bool) {
	var z lti.ZPK
	gain, okG := t.number("gain", numRule{desc: "≠ 0", ok: isNonZero}, required, 0)
	z.Gain = gain
	okP := true
	switch {
	case t.has("poles"):
		z.Poles, okP = t.roots("poles")
	case required && polesRequired:
		c.fail(t.sub("poles"), nil, "required: an array of real poles and pairs [re, im] (rad/s)")
		okP = false
	}
	okZ := true
	if t.has("zeros") {
		z.Zeros, okZ = t.roots("zeros")
	} else {
		z.Zeros = defaultZeros()
	}
	for _, k := range []string{"poles", "zeros"} {
		roots, good := z.Poles, &okP
		if k == "zeros" {
			roots, good = z.Zeros, &okZ
		}
		if !*good {
			continue
		}
		for i, r := range roots {
			if msg := rootProblem(r); msg != "" {
				idx := rootIndex(t.m[k], i)
				c.fail(fmt.Sprintf("%s[%d]", t.sub(k), idx), elementAt(t.m[k], idx), "%s", msg)
				*good = false
				break
			}
		}
	}
	if okP && len(z.Poles) > maxPoles {
		c.fail(t.sub("poles"), valueOrNil(t.m["poles"]), "%s (a pair counts as 2): at most %d; a rate loop's model needs a few, and the design's cost grows with the order", count(len(z.Poles), "pole"), maxPoles)
		okP = false
	}
	if okP && okZ && len(z.Zeros) > len(z.Poles) {
		c.fail(t.sub("zeros"), valueOrNil(t.m["zeros"]),
			"improper: %s but %s (a pair counts as 2); at most as many zeros as poles",
			count(len(z.Zeros), "zero"), count(len(z.Poles), "pole"))
		okZ = false
	}
	return z, okG && okP && okZ
}

// count writes "1 pole", "2 poles".
func count(n int, noun string) string {
	if n == 1 {
		return "1 " + noun
	}
	return fmt.Sprintf("%d %ss", n, noun)
}

// sensor checks [axes.NAME.sensor]: a first-order lowpass or a zpk model.
// The bool reports whether it is valid.
func (c *checker) sensor(t *table) (lti.ZPK, bool) {
	zpk := t.present(zpkKeys()...)
	switch {
	case len(t.m) == 0:
		c.fail(t.key, nil, "empty table: give lowpass_hz or gain/poles/zeros, or omit [sensor] for an ideal sensor")
		return idealSensor(), false
	case t.has("lowpass_hz") && len(zpk) > 0:
		c.fail(t.key, nil, "both lowpass_hz and the zpk form (%s) are given: use one", strings.Join(zpk, ", "))
		t.number("lowpass_hz", numRule{desc: "> 0", unit: "Hz", ok: isPositive}, false, 0)
		c.zpk(t, false, false, MaxSensorPoles)
		return idealSensor(), false
	case t.has("lowpass_hz"):
		f, ok := t.number("lowpass_hz", numRule{desc: "> 0", unit: "Hz", ok: isPositive}, true, 0)
		if !ok {
			return idealSensor(), false
		}
		m := lowpassModel(f)
		if msg := rootProblem(m.Poles[0]); msg != "" {
			c.fail(t.sub("lowpass_hz"), t.m["lowpass_hz"], "the lowpass pole −2π·lowpass_hz: %s", msg)
			return idealSensor(), false
		}
		return m, true
	case len(zpk) == 0:
		// Only unknown keys, already reported.
		return idealSensor(), false
	}
	z, ok := c.zpk(t, true, false, MaxSensorPoles)
	if !ok {
		return idealSensor(), false
	}
	// A sensor is outside the loop: an unstable or marginal pole makes the
	// measurement drift without bound whatever the controller does.
	stable := true
	reported := -1
	for i, p := range z.Poles {
		if real(p) < 0 {
			continue
		}
		stable = false
		// A pair expands to two roots of one array element; report it once.
		if idx := rootIndex(t.m["poles"], i); idx != reported {
			reported = idx
			c.fail(fmt.Sprintf("%s[%d]", t.sub("poles"), idx), elementAt(t.m["poles"], idx),
				"sensor poles must be stable (real part < 0)")
		}
	}
	if !stable {
		return idealSensor(), false
	}
	return z, true
}

// lowpassModel is the first-order sensor lowpass with corner f (Hz) and
// unit DC gain: H(s) = ωc/(s + ωc), ωc = 2π·f, so Gain = ωc and the pole is
// −ωc.
func lowpassModel(f float64) lti.ZPK {
	wc := float64(2 * math.Pi * f)
	return lti.ZPK{Gain: wc, Poles: []complex128{complex(-wc, 0)}}
}

// rootIndex maps index i of the expanded roots back to the element of the
// TOML array it came from (a pair expands to two roots).
func rootIndex(v any, i int) int {
	arr, _ := v.([]any)
	n := 0
	for idx, e := range arr {
		width := 1
		if _, isPair := e.([]any); isPair {
			width = 2
		}
		if i < n+width {
			return idx
		}
		n += width
	}
	return len(arr) - 1
}

// elementAt returns element idx of the TOML array v, or nil.
func elementAt(v any, idx int) any {
	arr, _ := v.([]any)
	if idx < 0 || idx >= len(arr) {
		return nil
	}
	return arr[idx]
}

// specLimits holds what the spec is checked against outside its table.
type specLimits struct {
	// outputLimit bounds disturbance_step and sets its default; only when
	// outputLimitOK.
	outputLimit   [2]float64
	outputLimitOK bool
	// inputFullScale (0: not given or invalid) bounds hold_rate and is
	// its default.
	inputFullScale float64
}

// spec checks [axes.NAME.spec]. The bools report whether settling_time,
// disturbance_recovery and max_steady_error are valid (given or
// defaulted), for the checks across keys.
func (c *checker) spec(t *table, lim specLimits) (s Spec, settlingOK, recoveryOK, steadyOK bool) {
	s.SettlingTime, settlingOK = t.number("settling_time", numRule{desc: "> 0", unit: "s", ok: isPositive}, true, 0)
	s.Band, _ = t.number("settling_band", numRule{
		desc: fmt.Sprintf("in (0, %g]", maxSettlingBand), unit: "fraction of the final value; usually 0.02 or 0.05",
		ok: func(x float64) bool { return x > 0 && x <= maxSettlingBand },
	}, false, defaultSettlingBand)
	s.Overshoot, _ = t.number("overshoot", numRule{
		desc: "in (0, 1)", ok: func(x float64) bool { return x > 0 && x < 1 },
	}, true, 0)
	s.MinPhaseMargin, _ = t.number("min_phase_margin", numRule{
		desc: fmt.Sprintf("in [0, %g)", maxPhaseMargin), unit: "deg",
		ok: func(x float64) bool { return x >= 0 && x < maxPhaseMargin },
	}, false, defaultMinPhaseMargin)
	s.MinGainMargin, _ = t.number("min_gain_margin", numRule{desc: "≥ 0", unit: "dB", ok: isNonNegative}, false, defaultMinGainMargin)

	s.MaxSensitivity, _ = t.number("max_sensitivity", numRule{
		desc: fmt.Sprintf("in (1, %g]", maxSensitivityBound), unit: "Ms = max |1/(1 + L)|; usually 1.2 to 2",
		ok: func(x float64) bool { return x > 1 && x <= maxSensitivityBound },
	}, false, defaultMaxSensitivity)
	s.MaxSteadyError, steadyOK = t.number("max_steady_error", numRule{
		desc: "in (0, 1)", unit: "fraction of the setpoint",
		ok: func(x float64) bool { return x > 0 && x < 1 },
	}, false, defaultMaxSteadyError(s.Band))

	hold, holdOK := t.number("hold_rate", numRule{desc: "> 0", unit: "rad/s", ok: isPositive}, false, defaultHoldRate(lim.inputFullScale))
	if holdOK && lim.inputFullScale > 0 && hold > lim.inputFullScale {
		c.fail(t.sub("hold_rate"), t.m["hold_rate"],
			"must be ≤ numeric.input_full_scale = %g (rad/s): the setpoint cannot exceed what the numeric type represents",
			lim.inputFullScale)
	}
	s.HoldRate = hold

	stepRule := numRule{desc: "> 0", unit: "command units at the plant input", ok: isPositive}
	if lim.outputLimitOK {
		most := maxCommand(lim.outputLimit)
		stepRule = numRule{
			desc: fmt.Sprintf("> 0 and ≤ %g, the larger |control.output_limit|", most),
			unit: "command units at the plant input; a larger load the actuator cannot cancel",
			ok:   func(x float64) bool { return x > 0 && x <= most },
		}
	}
	s.DisturbanceStep, _ = t.number("disturbance_step", stepRule, false, defaultDisturbanceStep(lim.outputLimit))
	s.DisturbanceRecovery, recoveryOK = t.number("disturbance_recovery", numRule{
		desc: "> 0", unit: "s; omit the key for no check", ok: isPositive,
	}, false, defaultDisturbanceRecovery)
	s.MaxNoiseGain, _ = t.number("max_noise_gain", numRule{
		desc: "> 0", unit: "command units per rad/s; omit the key for the design's default", ok: isPositive,
	}, false, defaultMaxNoiseGain)
	return s, settlingOK, recoveryOK, steadyOK
}

// envelope checks [axes.NAME.envelope]; each absent key keeps its
// default. delay is the plant's transport delay, which bounds delay_add
// when delayOK. The bool reports whether delay_add is valid (given or
// defaulted).
func (c *checker) envelope(t *table, delay float64, delayOK bool) (Envelope, bool) {
	e := defaultEnvelope()
	scale := func(what string) intervalRule {
		return intervalRule{
			desc: fmt.Sprintf("%g ≤ low ≤ 1 ≤ high ≤ %g", 1/maxEnvelopeScale, maxEnvelopeScale),
			unit: "factors on " + what,
			ok: func(lo, hi float64) bool {
				return lo >= 1/maxEnvelopeScale && lo <= 1 && hi >= 1 && hi <= maxEnvelopeScale
			},
		}
	}
	if t.has("gain_scale") {
		if v, ok := c.interval(t.sub("gain_scale"), t.m["gain_scale"], scale("the plant's gain")); ok {
			e.GainScale = v
		}
	}
	if t.has("lag_scale") {
		if v, ok := c.interval(t.sub("lag_scale"), t.m["lag_scale"], scale("the time constant of every non-zero plant pole")); ok {
			e.LagScale = v
		}
	}
	addOK := true
	if t.has("delay_add") {
		var v [2]float64
		if v, addOK = c.interval(t.sub("delay_add"), t.m["delay_add"], delayAddRule(delay, delayOK)); addOK {
			e.DelayAdd = v
		}
	}
	return e, addOK
}

// delayAddRule is the rule of envelope.delay_add: the added delay may
// shorten the plant's delay to no less than zero and lengthen it to no
// more than maxDelay. Without a valid plant delay, only |added| ≤
// maxDelay is checked.
func delayAddRule(delay float64, delayOK bool) intervalRule {
	if !delayOK {
		return intervalRule{
			desc: fmt.Sprintf("-%g ≤ low ≤ 0 ≤ high ≤ %g", maxDelay, maxDelay), unit: "s, added to plant.delay",
			ok: func(lo, hi float64) bool { return lo >= -maxDelay && lo <= 0 && hi >= 0 && hi <= maxDelay },
		}
	}
	return intervalRule{
		desc: fmt.Sprintf("low ≤ 0 ≤ high, plant.delay + low ≥ 0 and plant.delay + high ≤ %g", maxDelay),
		unit: fmt.Sprintf("s; plant.delay is %g", delay),
		ok: func(lo, hi float64) bool {
			return lo <= 0 && hi >= 0 && delay+lo >= 0 && delay+hi <= maxDelay
		},
	}
}

// control checks [axes.NAME.control]; loopHz is 0 when loop_hz is
// invalid, which skips the checks against it. The bools report whether
// the output limit is valid (given or defaulted), for the checks of the
// spec against it, and whether the integrator limit is.
//
// Keys that have no effect on the chosen form are errors rather than
// silently ignored: a third_pole on a PI or a lead_zero on a PID is almost
// certainly a form that was meant to be different.
func (c *checker) control(t *table, loopHz float64) (Control, bool, bool) {
	ctl := Control{
		Form:              defaultForm,
		Refine:            defaultRefine,
		DerivativeOnError: defaultDerivativeOnError,
		SetpointWeight:    defaultSetpointWeight,
		OutputLimit:       [2]float64{defaultOutputLow, defaultOutputHigh},
		AntiWindup:        defaultAntiWindup,
		TrackingTime:      defaultTrackingTime,
		Discretize:        defaultDiscretize,
	}
	forms := make([]string, len(Forms()))
	for i, f := range Forms() {
		forms[i] = string(f)
	}
	form, formOK := t.enum("form", string(defaultForm), forms...)
	if formOK {
		ctl.Form = Form(form)
	}
	// only reports key k when the form is known and k does not apply to it.
	only := func(k string, applies bool, which string) bool {
		if formOK && !applies && t.has(k) {
			c.fail(t.sub(k), valueOrNil(t.m[k]), "only for %s (form is %q)", which, form)
			return false
		}
		return true
	}

	ctl.Refine, _ = t.boolean("refine", defaultRefine)

	if only("third_pole", ctl.Form == FormPID, `form = "pid"`) {
		tp, _ := t.number("third_pole", numRule{desc: "> 1", unit: "multiple of the target's real part",
			ok: func(x float64) bool { return x > 1 }}, false, defaultThirdPole)
		if ctl.Form == FormPID {
			ctl.ThirdPole = tp
		}
	}

	leadRule := numRule{desc: "< 0", unit: "rad/s", ok: func(x float64) bool { return x < 0 }}
	if only("lead_zero", ctl.Form == FormLead, `form = "lead"`) {
		lz, ok := t.number("lead_zero", leadRule, formOK && ctl.Form == FormLead, 0)
		if ok && t.has("lead_zero") {
			if msg := rootProblem(complex(lz, 0)); msg != "" {
				c.fail(t.sub("lead_zero"), t.m["lead_zero"], "%s", msg)
			}
		}
		if ctl.Form == FormLead {
			ctl.LeadZero = lz
		}
	}

	hasD := ctl.Form.HasDerivative()
	if only("derivative_lowpass_hz", hasD, `forms with a derivative ("pd", "pid")`) {
		rule := numRule{desc: "> 0", unit: "Hz", ok: isPositive}
		if loopHz > 0 {
			nyq := loopHz / 2
			rule = numRule{desc: fmt.Sprintf("> 0 and below Nyquist (loop_hz/2 = %g)", nyq), unit: "Hz",
				ok: func(x float64) bool { return x > 0 && x < nyq }}
		}
		fd, ok := t.number("derivative_lowpass_hz", rule, false, defaultDerivativeLowpassHz(loopHz))
		if ok && t.has("derivative_lowpass_hz") {
			if msg := rootProblem(complex(-2*math.Pi*fd, 0)); msg != "" {
				c.fail(t.sub("derivative_lowpass_hz"), t.m["derivative_lowpass_hz"], "the filter's pole −2π·derivative_lowpass_hz: %s", msg)
			}
		}
		if hasD {
			ctl.DerivativeLowpassHz = fd
		}
	}
	if only("derivative_on", hasD, `forms with a derivative ("pd", "pid")`) {
		on, ok := t.enum("derivative_on", derivativeOnName(defaultDerivativeOnError), derivativeOnName(false), derivativeOnName(true))
		if ok {
			ctl.DerivativeOnError = on == derivativeOnName(true)
		}
	}

	if only("setpoint_weight", ctl.Form != FormLead, `forms "p", "pi", "pd", "pid"`) && t.has("setpoint_weight") {
		b, ok := t.number("setpoint_weight", numRule{desc: "in [0, 1]", ok: func(x float64) bool { return x >= 0 && x <= 1 }}, false, defaultSetpointWeight)
		if ok {
			ctl.SetpointWeight, ctl.SetpointWeightSet = b, true
		}
	}

	limOK := true
	if t.has("output_limit") {
		ctl.OutputLimit, limOK = c.outputLimit(t.sub("output_limit"), t.m["output_limit"])
	}

	hasI := ctl.Form.HasIntegral()
	ilimOK := false
	if only("integrator_limit", hasI, `forms with an integral ("pi", "pid")`) {
		il, ok := t.number("integrator_limit", numRule{desc: "> 0", unit: "command units", ok: isPositive}, false, 0)
		if hasI {
			ilimOK = ok
			if !t.has("integrator_limit") {
				ilimOK = limOK
				if limOK {
					il = defaultIntegratorLimit(ctl.OutputLimit)
				}
			}
			ctl.IntegratorLimit = il
		}
	}

	aw, awOK := t.enum("antiwindup", defaultAntiWindup, "none", "clamp", "backcalc")
	if awOK {
		ctl.AntiWindup = aw
	}
	if awOK && aw != "backcalc" && t.has("tracking_time") {
		c.fail(t.sub("tracking_time"), valueOrNil(t.m["tracking_time"]), "only for antiwindup = \"backcalc\" (antiwindup is %q)", aw)
	} else {
		ctl.TrackingTime, _ = t.number("tracking_time", numRule{desc: "≥ 0", unit: "s; 0 picks the rule of thumb", ok: isNonNegative}, false, defaultTrackingTime)
	}

	if d, ok := t.enum("discretize", defaultDiscretize, "tustin", "tustin_prewarp", "backward", "forward"); ok {
		ctl.Discretize = d
	}
	return ctl, limOK, ilimOK
}

// outputLimit checks output_limit = [low, high].
func (c *checker) outputLimit(key string, v any) ([2]float64, bool) {
	const allowed = "[low, high] with finite low < high and low ≤ 0 ≤ high (a rate controller must be able to command zero)"
	arr, ok := v.([]any)
	if !ok || len(arr) != 2 {
		c.fail(key, valueOrNil(v), "must be an array %s", allowed)
		return [2]float64{}, false
	}
	lo, okL := asNumber(arr[0])
	hi, okH := asNumber(arr[1])
	if !okL || !okH {
		c.fail(key, v, "must be two numbers %s", allowed)
		return [2]float64{}, false
	}
	if math.IsNaN(lo) || math.IsInf(lo, 0) || math.IsNaN(hi) || math.IsInf(hi, 0) || !(lo < hi) || lo > 0 || hi < 0 {
		c.fail(key, v, "must be %s", allowed)
		return [2]float64{}, false
	}
	return [2]float64{lo, hi}, true
}

// filters checks the [[axes.NAME.filter]] list of the axis table t: an
// array of tables, at most MaxFilters, each with a kind and the keys of
// its kind. lp.hz (0 when loop_hz is invalid) bounds the frequencies by
// Nyquist. Invalid filters are left out of the result, which is then
// meaningful only when no problem was recorded.
func (c *checker) filters(t *table, lp loopInfo, auto autoPlacer) []Filter {
	key := t.sub("filter")
	v := t.m["filter"]
	var arr []any
	switch x := v.(type) {
	case []any:
		arr = x
	case []map[string]any:
		for _, m := range x {
			arr = append(arr, m)
		}
	default:
		c.fail(key, valueOrNil(v), "must be an array of tables [[%s]] (kind, at, hz, ...), not %s", key, kind(v))
		return nil
	}
	if len(arr) > MaxFilters {
		c.fail(key, nil, "%s: at most %d per axis (each adds states to every check of the loop and a section to the generated step)", count(len(arr), "filter"), MaxFilters)
		return nil
	}
	var out []Filter
	for i, e := range arr {
		k := fmt.Sprintf("%s[%d]", key, i)
		m, ok := e.(map[string]any)
		if !ok {
			c.fail(k, valueOrNil(e), "must be a table (kind, at, hz, ...), not %s", kind(e))
			continue
		}
		if f, ok := c.filter(c.newTable(k, m, filterKeys()...), lp.hz, &auto); ok {
			out = append(out, f)
		}
	}
	return out
}

// autoPlacer places the notches with hz = "auto" of one axis, in file
// order, each on the next of the lightly damped modes (most lightly damped
// first; ok is false when the plant or sensor did not decode).
type autoPlacer struct {
	modes []Mode
	next  int
	ok    bool
	env   Envelope
	nyq   float64
	// noiseBound is the spec's max_noise_gain (0: none), which a lowpass
	// with hz = "auto" and goal = "noise" needs; noNoiseKey says that the
	// spec decoded without the key (a spec that did not, or a bad key, is
	// reported there).
	noiseBound float64
	noNoiseKey bool
	lowpasses  int // lowpasses with hz = "auto" so far
	// form is the control's form (the default when the file's is
	// invalid, which is reported there), which must have a derivative for
	// a filter at = "derivative".
	form Form
}

// place returns the next mode, or false.
func (a *autoPlacer) place() (Mode, bool) {
	if !a.ok || a.next >= len(a.modes) {
		return Mode{}, false
	}
	a.next++
	return a.modes[a.next-1], true
}

// filter checks one filter table; loopHz is 0 when loop_hz is invalid.
// The bool reports whether the filter is valid.
func (c *checker) filter(t *table, loopHz float64, auto *autoPlacer) (Filter, bool) {
	f := Filter{At: defaultFilterAt}
	good := true
	if !t.has("kind") {
		c.fail(t.sub("kind"), nil, `required: "lowpass" or "notch"`)
		good = false
	} else if k, ok := t.enum("kind", "", string(FilterLowpass), string(FilterNotch)); ok {
		f.Kind = FilterKind(k)
	} else {
		good = false
	}
	if t.has("at") {
		at, ok := t.enum("at", defaultFilterAt, FilterAtFeedback, FilterAtDerivative)
		switch {
		case !ok:
			good = false
		case at == FilterAtDerivative && !auto.form.HasDerivative():
			c.fail(t.sub("at"), at, `only for forms with a derivative ("pd", "pid"; form is %q): a derivative filter acts on the derivative term alone; "feedback" (the measured rate, before the controller) is allowed`, auto.form)
			good = false
		default:
			f.At = at
		}
	}
	deriv := f.At == FilterAtDerivative

	nyq := loopHz / 2
	hzRule := numRule{desc: "> 0", unit: "Hz", ok: isPositive}
	if loopHz > 0 {
		hzRule = numRule{desc: fmt.Sprintf("> 0 and below Nyquist (loop_hz/2 = %g)", nyq), unit: "Hz",
			ok: func(x float64) bool { return x > 0 && x < nyq }}
	}
	hzOK := false
	autoWidth := 0.0
	if s, isStr := t.m["hz"].(string); isStr && s == "auto" {
		switch {
		case deriv:
			// An automatic notch centres on a mode of the plant, which the
			// P and I terms would still pass; an automatic lowpass's cutoff
			// is chosen for the feedback chain's noise and phase.
			c.fail(t.sub("hz"), s, `"auto" is for filters at = "feedback" (a notch on a plant mode must act on every term; the automatic lowpass is the gyro's): give the derivative filter's frequency in Hz, a number %s`, hzRule.allowed())
			good = false
		case f.Kind == FilterLowpass:
			// The design chooses the cutoff (discrete.DesignAxis); until
			// then the section sits at the top of the range it chooses
			// from.
			auto.lowpasses++
			if auto.lowpasses > 1 {
				c.fail(t.sub("hz"), s, `one lowpass per axis may have hz = "auto" (the design chooses one cutoff): give this one's cutoff in Hz, a number %s`, hzRule.allowed())
				good = false
				break
			}
			f.AutoHz, hzOK = true, loopHz > 0
			f.Hz = round3(AutoLowpassTop * loopHz)
			good = good && hzOK
		case f.Kind == "" || !auto.ok:
			good = false // the kind, the plant or the sensor is reported
		default:
			m, ok := auto.place()
			if !ok {
				what := "no lightly damped mode"
				if auto.next > 0 {
					what = fmt.Sprintf("no lightly damped mode left (%d taken by the notches before)", auto.next)
				}
				c.fail(t.sub("hz"), s, "%s of the plant or sensor (a pole pair with damping below %g) below 0.9 × Nyquist (%g Hz) to centre the notch on: give the centre in Hz", what, LightDamping, 0.9*auto.nyq)
				good = false
				break
			}
			f.Hz, f.AutoHz, hzOK = round3(m.Hz), true, true
			autoWidth = NotchWidth(m, auto.env, auto.nyq)
		}
	} else {
		f.Hz, hzOK = t.number("hz", hzRule, true, 0)
		good = good && hzOK
	}
	if hzOK {
		// The section's poles sit near ±2π·hz; keep them within the
		// roots the design's arithmetic holds.
		if msg := rootProblem(complex(-2*math.Pi*f.Hz, 0)); msg != "" {
			c.fail(t.sub("hz"), t.m["hz"], "the filter's frequency 2π·hz: %s", msg)
			good, hzOK = false, false
		}
	}

	// only reports key k when the kind is known and k does not apply to it.
	only := func(key string, applies bool, which string) bool {
		if f.Kind != "" && !applies && t.has(key) {
			c.fail(t.sub(key), valueOrNil(t.m[key]), "only for %s (kind is %q)", which, f.Kind)
			good = false
			return false
		}
		return true
	}
	notch := f.Kind == FilterNotch
	lowpass := f.Kind == FilterLowpass
	if only("width_hz", notch, `kind = "notch"`) {
		rule := numRule{desc: "> 0 and below hz", unit: "Hz, the −3 dB width of the discrete notch at loop_hz", ok: isPositive}
		if hzOK {
			rule.desc = fmt.Sprintf("> 0 and below hz = %g", f.Hz)
			rule.ok = func(x float64) bool { return x > 0 && x < f.Hz }
		}
		w, ok := t.number("width_hz", rule, notch && !f.AutoHz, autoWidth)
		good = good && ok
		if ok && notch {
			f.WidthHz = w
			if hzOK && loopHz > 0 && f.Hz+float64(w/2) >= nyq {
				c.fail(t.sub("width_hz"), t.m["width_hz"], "the band hz ± width_hz/2 = [%g, %g] Hz must lie below Nyquist (loop_hz/2 = %g Hz): narrow the notch or lower its centre", f.Hz-float64(w/2), f.Hz+float64(w/2), nyq)
				good = false
			}
		}
	}
	if only("depth_db", notch, `kind = "notch"`) && notch {
		d, ok := t.number("depth_db", numRule{desc: fmt.Sprintf("in (0, %g]", maxNotchDepth), unit: "dB, the attenuation at the centre; omit the key for a full notch",
			ok: func(x float64) bool { return x > 0 && x <= maxNotchDepth }}, false, 0)
		good = good && ok
		f.DepthDB = d
	}
	orderOK := true
	if only("order", lowpass, `kind = "lowpass"`) && lowpass {
		o, ok := t.integer("order", 1, 2, "the lowpass's order", defaultFilterOrder)
		good, orderOK = good && ok, ok
		f.Order = int(o)
	}
	if orderOK && only("damping", lowpass && f.Order == 2, `kind = "lowpass" with order = 2`) && lowpass && f.Order == 2 {
		d, ok := t.number("damping", numRule{desc: fmt.Sprintf("in [%g, %g]", minFilterDamping, maxFilterDamping), unit: "ζ; 0.7071 is the Butterworth section",
			ok: func(x float64) bool { return x >= minFilterDamping && x <= maxFilterDamping }}, false, defaultFilterDamping)
		good = good && ok
		f.Damping = d
	}
	if deriv && lowpass && orderOK && f.Order == 1 {
		c.fail(t.sub("order"), valueOrNil(t.m["order"]), `a first-order lowpass on the derivative is control.derivative_lowpass_hz, which the derivative always has: set that key, or use order = 2 (a second-order section after it) here`)
		good = false
	}
	// goal belongs to a lowpass whose file asks hz = "auto", whether or
	// not that was accepted (a refusal is reported at hz).
	if only("goal", lowpass && t.m["hz"] == "auto", `kind = "lowpass" with hz = "auto"`) && lowpass && f.AutoHz {
		def := GoalMargin
		if auto.noiseBound > 0 {
			def = GoalNoise
		}
		g, ok := t.enum("goal", def, GoalNoise, GoalMargin)
		good = good && ok
		f.Goal = g
		if ok && g == GoalNoise && auto.noNoiseKey {
			c.fail(t.sub("goal"), g, `"noise" chooses the highest cutoff whose design meets spec.max_noise_gain, and the spec gives none: set [axes.NAME.spec] max_noise_gain, or use goal = "margin" (the lowest cutoff that keeps every check)`)
			good = false
		}
	}
	if good && loopHz > 0 {
		// The rules above make every section realizable; a section that
		// is not is a gap in them, reported rather than passed on.
		if _, err := f.Section(loopHz); err != nil {
			c.fail(t.key, nil, "cannot be realized at loop_hz %g: %v", loopHz, err)
			good = false
		}
	}
	return f, good
}
