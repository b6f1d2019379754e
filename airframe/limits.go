package airframe

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"locusmith/internal/lti"
)

// The checks of this file involve more than one key: the delay the
// sampled loop carries (loop_hz, compute_delay, plant.delay,
// envelope.delay_add), the horizons the design simulates (settling_time,
// disturbance_recovery against loop_hz), what the numeric type can hold
// (output_limit, integrator_limit against numeric.type), the controller
// gains the plant calls for, and the sensor's DC gain against the
// steady-state spec. Each names the key a fix belongs to and the others
// it involves; a check whose inputs are themselves invalid is skipped, so
// that one mistake is reported once.

// loopInfo is the top level an axis is checked against; a value is only
// used when its flag says it is valid.
type loopInfo struct {
	hz           float64
	hzOK         bool
	computeDelay int
	cdOK         bool
	numeric      Numeric
	numOK        bool
}

// axisOK says which values of an axis decoded validly (given or
// defaulted), for the checks across keys.
type axisOK struct {
	model, delay, sensor, delayAdd bool
	settling, recovery, steady     bool
	limit, ilim                    bool
}

// Float32 range: nonzero magnitudes a float32 constant holds as a normal
// number (IEEE 754 binary32). Subnormal values lose precision and many
// flight controllers flush them to zero (the FZ bit of the Cortex-M FPU),
// so a limit there is as good as 0.
const (
	minNormalFloat32 = 0x1p-126 // 1.1754944e-38
	maxFloat32       = math.MaxFloat32
)

// Bounds of the controller's gain scale, 1/|G(jω)·H(jω)| at the spec's
// bandwidth ω = 4/settling_time, in command units per rad/s. The
// controller's gains (and its coefficients, these times ωT or 1/(ωT))
// sit near this scale; the design's float64 arithmetic (polynomials of the
// loop's degree, eigenvalues) and the float32 of the generated code keep
// their precision within 1e-12..1e12, twelve decades above and below any
// real rate loop (a normalized command: 1e-3..1; PWM microseconds: 1..1e3;
// N·m: 1e-5..1).
const (
	minGainScale = 1e-12
	maxGainScale = 1e12
)

// Bounds of a nonzero pole or zero magnitude, rad/s. A root beyond 1e9
// rad/s (160 MHz) is no dynamics a rate loop sees, and its powers in the
// loop's polynomials overflow the arithmetic; a root below 1e-9 rad/s (a
// time constant of 30 years) is an integrator, to be written as 0.
const (
	minRoot = 1e-9
	maxRoot = 1e9
)

// minSettlingSamples is the shortest settling time in samples: the
// command of a sample reaches the plant one compute delay later, and the
// loop needs a few samples to react at all.
const minSettlingSamples = 2

// axisLimits checks the axis a (decoded at key) across its keys.
func (c *checker) axisLimits(key string, a Axis, ok axisOK, t *table, lp loopInfo) {
	sub := func(table, k string) string { return joinKey(joinKey(key, table), k) }
	raw := func(table, k string) any {
		m, _ := t.m[table].(map[string]any)
		return valueOrNil(m[k])
	}

	// Delay samples: one state of the closed loop each.
	if lp.hzOK && lp.cdOK && ok.delay && ok.delayAdd {
		hi := math.Max(0, a.Envelope.DelayAdd[1])
		n := delaySamples(lp.computeDelay, a.Plant.Delay+hi, lp.hz)
		if n > MaxDelaySamples {
			most := float64(MaxDelaySamples-lp.computeDelay)/lp.hz - hi
			k, v := sub("plant", "delay"), raw("plant", "delay")
			what := fmt.Sprintf("plant.delay %g s", a.Plant.Delay)
			if hi > 0 {
				what += fmt.Sprintf(" + envelope.delay_add high end %g s", hi)
			}
			if v == nil && hi > 0 {
				k, v = sub("envelope", "delay_add"), raw("envelope", "delay_add")
			}
			c.fail(k, v, "the sampled loop would carry %d samples of delay (compute_delay %d + (%s) · loop_hz %g), more than the %d that bound the design's cost: at this loop rate and compute delay the delay may be at most %s s",
				n, lp.computeDelay, what, lp.hz, MaxDelaySamples, fmtLimit(math.Max(0, most)))
		}
	}

	// Corner delays: the plant's moved by the envelope.
	if ok.delay && ok.delayAdd {
		for _, d := range a.Envelope.DelayAdd {
			if tau := a.Plant.Delay + d; tau > 0 && tau < minDelay {
				c.fail(sub("envelope", "delay_add"), raw("envelope", "delay_add"), "plant.delay + %g = %g s: a delay below %g s is no delay at any loop rate; make the end of the interval meet plant.delay exactly (for 0) or leave at least %g s", d, tau, minDelay, minDelay)
				break
			}
		}
	}

	// A sampled loop settles in no less than a few samples.
	if lp.hzOK && ok.settling && a.Spec.SettlingTime*lp.hz < minSettlingSamples {
		c.fail(sub("spec", "settling_time"), raw("spec", "settling_time"), "shorter than %d samples at loop_hz %g (%s s): a sampled loop cannot settle faster than it samples", minSettlingSamples, lp.hz, fmtLimit(minSettlingSamples/lp.hz))
		ok.settling = false
	}

	// Horizons: 8 settling times (and 8 recovery times) of samples.
	if lp.hzOK && ok.settling {
		c.horizon(sub("spec", "settling_time"), raw("spec", "settling_time"), "settling_time", a.Spec.SettlingTime, lp.hz)
	}
	if lp.hzOK && ok.recovery && a.Spec.DisturbanceRecovery > 0 {
		c.horizon(sub("spec", "disturbance_recovery"), raw("spec", "disturbance_recovery"), "disturbance_recovery", a.Spec.DisturbanceRecovery, lp.hz)
	}

	// What float32 holds: the limits are constants of the generated code.
	if lp.numOK && lp.numeric.Type == Float32 {
		if ok.limit {
			for _, v := range a.Ctrl.OutputLimit {
				if msg := float32Problem(v); msg != "" {
					c.fail(sub("control", "output_limit"), raw("control", "output_limit"), "%s", msg)
					break
				}
			}
		}
		if ok.ilim && a.Ctrl.Form.HasIntegral() {
			if msg := float32Problem(a.Ctrl.IntegratorLimit); msg != "" {
				k, v := sub("control", "integrator_limit"), raw("control", "integrator_limit")
				if v == nil {
					msg += " (the default integrator_limit is the larger |output_limit|)"
					k, v = sub("control", "output_limit"), raw("control", "output_limit")
				}
				c.fail(k, v, "%s", msg)
			}
		}
	}

	// The controller gains the plant calls for.
	gainOK := true
	if ok.model && ok.sensor && ok.settling {
		gainOK = c.gainScale(a, t, key, sub)
	}

	// What the sampling of the plant and sensor computes accurately.
	if ok.model && ok.sensor && lp.hzOK && gainOK {
		c.sampling(a, t, lp.hz, sub, raw)
	}

	// The sensor's DC gain: the loop regulates the measured rate.
	if ok.sensor && ok.steady {
		c.sensorDC(a, key, sub, raw)
	}
}

// delaySamples is the delay of the sampled loop in samples: the compute
// delay and the transport delay tau at loop rate hz, a fraction of a
// sample counted as a whole one (it adds a state too).
func delaySamples(computeDelay int, tau, hz float64) int {
	x := float64(tau * hz)
	if x > 1e9 {
		return math.MaxInt32
	}
	// 1e-9 absorbs the rounding of a delay given as a whole number of
	// samples (0.002 s · 1000 Hz = 2.0000000000000004).
	return computeDelay + int(math.Ceil(x-1e-9))
}

// horizon checks that 8 · span · loop_hz samples stay within
// MaxHorizonSamples (span is the settling or the recovery time).
func (c *checker) horizon(key string, v any, name string, span, hz float64) {
	n := 8 * span * hz
	if n <= MaxHorizonSamples {
		return
	}
	c.fail(key, v, "the design simulates 8 · %s · loop_hz = %s samples of every response, more than the %d that bound its cost: at loop_hz %g, %s may be at most %s s",
		name, fmtLimit(n), MaxHorizonSamples, hz, name, fmtLimit(MaxHorizonSamples/(8*hz)))
}

// float32Problem says why the command-unit value v cannot be a float32
// constant of the generated code, or "".
func float32Problem(v float64) string {
	a := math.Abs(v)
	switch {
	case v == 0:
		return ""
	case a < minNormalFloat32:
		return fmt.Sprintf("numeric.type = \"float32\" cannot hold %g: it would become 0 (or a subnormal that many FPUs flush to 0) in the generated code; a nonzero value must have a magnitude in [%g, %g]", v, float64(minNormalFloat32), float64(maxFloat32))
	case a > maxFloat32:
		return fmt.Sprintf("numeric.type = \"float32\" cannot hold %g: it would become infinite in the generated code; a nonzero value must have a magnitude in [%g, %g]", v, float64(minNormalFloat32), float64(maxFloat32))
	}
	return ""
}

// gainScale checks that the controller the plant calls for has gains the
// design's arithmetic and the generated code hold: 1/|G·H| at the spec's
// bandwidth, taken at the largest loop gain of ω/2, ω and 2ω (a zero of
// the plant at one frequency does not hide the scale). It reports
// whether the scale is within bounds.
func (c *checker) gainScale(a Axis, t *table, key string, sub func(string, string) string) bool {
	w := 4 / a.Spec.SettlingTime
	best := math.Inf(-1)
	for _, f := range []float64{0.5, 1, 2} {
		best = math.Max(best, log10Mag(a.Plant.Model, complex(0, f*w))+log10Mag(a.Sensor, complex(0, f*w)))
	}
	scale := -best // log10 of the gain scale
	if math.IsNaN(scale) || scale < lti.Log10(minGainScale) || scale > lti.Log10(maxGainScale) {
		pm, _ := t.m["plant"].(map[string]any)
		k, v := sub("plant", "gain"), valueOrNil(pm["gain"])
		unit := "command → rate gain"
		if _, phys := pm["effectiveness"]; phys {
			k, v = sub("plant", "effectiveness"), valueOrNil(pm["effectiveness"])
			unit = "rad/s² per unit command"
		}
		c.fail(k, v, "the loop's gain |G·H| near the spec's bandwidth (ω = 4/settling_time = %s rad/s) is about 1e%s, so the controller would need gains near 1e%s command units per rad/s; the design's arithmetic and the generated code hold gain scales in [%g, %g]: check the units (%s) and the command range",
			fmtLimit(w), fmtExp(best), fmtExp(scale), minGainScale, maxGainScale, unit)
		return false
	}
	return true
}

// maxSampledNorm bounds ‖[A B]·T‖₁, the 1-norm of the matrix whose
// exponential samples the plant and sensor at the loop rate (the design
// realizes them section by section, lti.ZPK.CascadeSS and lti.Series,
// and samples them with gonum's scaling-and-squaring mat.Exp, as lti's
// expm computes it, through lti.ZOHDelay). The relative error of that
// exponential grows with the norm: measured on the realization of a rate
// plant with a lowpass gyro against the exact 1 of its integrator's
// entry, 4e-16 at a norm of 16, 3.6e-12 at 1e5, 2.9e-11 at 1e6, 3.7e-9
// at 1e8, 3e-8 at 1e9, 2.4e-4 at 1e13; from about 1e12 on, the result
// may be NaN, and the design then failed with "lti: non-finite value"
// naming no key. At 1e8 the sampled loop keeps eight digits; the demo
// airframes stay below 200 (the quadrotor's roll: (1/0.03 +
// 1.1·2400/0.03)·0.001 = 88).
const maxSampledNorm = 1e8

// sampledNorm returns ‖[A B]·T‖₁ of the plant and sensor of a at corner
// cr of its envelope, the plant's gain multiplied by k, as the design
// realizes them; +Inf when they cannot be realized.
func sampledNorm(a Axis, cr Corner, T, k float64) float64 {
	m := a.At(cr).Plant.Model
	m.Gain *= k
	gs, err := m.CascadeSS()
	if err != nil {
		return math.Inf(1)
	}
	hs, err := a.Sensor.CascadeSS()
	if err != nil {
		return math.Inf(1)
	}
	gh := lti.Series(gs, hs)
	norm := 0.0
	for j := 0; j <= gh.N; j++ {
		col := 0.0
		for i := 0; i < gh.N; i++ {
			if j < gh.N {
				col += math.Abs(gh.A[i*gh.N+j])
			} else {
				col += math.Abs(gh.B[i])
			}
		}
		norm = math.Max(norm, col*T)
	}
	if math.IsNaN(norm) {
		return math.Inf(1)
	}
	return norm
}

// sampling checks that the plant and sensor, at every corner of the
// envelope, sample accurately at loop_hz (maxSampledNorm). The norm
// grows with the plant's gain, which the sensor's state carries (its
// input is the plant's output), and with the roots' magnitudes times the
// sample period. When the gain is what breaks the bound, the message
// names the gain key with the largest gain the loop rate allows; when
// the roots alone do, the fastest root.
func (c *checker) sampling(a Axis, t *table, hz float64, sub func(string, string) string, raw func(string, string) any) {
	T := 1 / hz
	corners := a.Envelope.Corners()
	worst := func(k float64) float64 {
		n := 0.0
		for _, cr := range corners {
			n = math.Max(n, sampledNorm(a, cr, T, k))
		}
		return n
	}
	norm := worst(1)
	if norm <= maxSampledNorm {
		return
	}
	pm, _ := t.m["plant"].(map[string]any)
	_, phys := pm["effectiveness"]
	// The largest factor on the gain that keeps the bound: the norm does
	// not fall as the gain grows, so bisect on its logarithm.
	lo, hi := -40.0, 0.0
	if worst(lti.Pow(10, lo)) > maxSampledNorm {
		c.fastRoot(a, hz, norm, sub, raw)
		return
	}
	for range 60 {
		mid := (lo + hi) / 2
		if worst(lti.Pow(10, mid)) <= maxSampledNorm {
			lo = mid
		} else {
			hi = mid
		}
	}
	k := lti.Pow(10, lo)
	key, what, most := sub("plant", "gain"), "the plant's gain", fmtLimit(math.Abs(a.Plant.Model.Gain)*k)
	if phys {
		key, what = sub("plant", "effectiveness"), "effectiveness"
		most = fmtLimit(a.Plant.Model.Gain*k*(-1/real(a.Plant.Model.Poles[1]))) + " rad/s² per unit command"
	}
	c.fail(key, raw("plant", keyBase(key)), "the plant and sensor sampled at loop_hz %g reach a matrix norm ‖[A B]·T‖₁ of %s, above the %g within which the design samples them accurately (the sensor's state carries the plant's output, so the norm grows with the gain; from about 1e12 the sampling fails): at this loop rate and sensor %s may be at most %s (with the envelope's gain_scale and lag_scale applied); check the units of the rate and the command",
		hz, fmtLimit(norm), float64(maxSampledNorm), what, most)
}

// fastRoot reports the root of the plant or sensor that alone breaks
// maxSampledNorm at loop rate hz: its magnitude times the sample period.
func (c *checker) fastRoot(a Axis, hz, norm float64, sub func(string, string) string, raw func(string, string) any) {
	type root struct {
		key string
		val any
		mag float64
	}
	var best root
	consider := func(table, k string, rs []complex128, scale float64) {
		m := raw(table, k)
		for i, r := range rs {
			if mag := lti.Abs(r) * scale; mag > best.mag {
				key, val := sub(table, k), m
				if arr, ok := m.([]any); ok {
					idx := rootIndex(arr, i)
					key, val = fmt.Sprintf("%s[%d]", key, idx), elementAt(arr, idx)
				}
				best = root{key, val, mag}
			}
		}
	}
	// A plant pole is fastest at the low end of lag_scale.
	lag := math.Min(1, a.Envelope.Normalized().LagScale[0])
	if raw("plant", "motor_tau") != nil {
		consider("plant", "motor_tau", a.Plant.Model.Poles, 1/lag)
	} else {
		consider("plant", "poles", a.Plant.Model.Poles, 1/lag)
		consider("plant", "zeros", a.Plant.Model.Zeros, 1)
	}
	if raw("sensor", "lowpass_hz") != nil {
		consider("sensor", "lowpass_hz", a.Sensor.Poles, 1)
	} else {
		consider("sensor", "poles", a.Sensor.Poles, 1)
		consider("sensor", "zeros", a.Sensor.Zeros, 1)
	}
	c.fail(best.key, best.val, "a root of magnitude %s rad/s sampled at loop_hz %g: the matrix the design samples the plant and sensor with reaches a norm ‖[A B]·T‖₁ of %s, above the %g within which it samples them accurately; a root may be at most %g times loop_hz (about %s rad/s here): leave out dynamics that far beyond the loop rate, or raise loop_hz",
		fmtLimit(best.mag), hz, fmtLimit(norm), float64(maxSampledNorm), float64(maxSampledNorm), fmtLimit(maxSampledNorm*hz))
}

// keyBase is the last element of a dotted key.
func keyBase(key string) string {
	if i := strings.LastIndexByte(key, '.'); i >= 0 {
		return key[i+1:]
	}
	return key
}

// log10Mag returns log10 |z(s)| of the zero-pole-gain model, summed in
// logarithms so that no product overflows.
func log10Mag(z lti.ZPK, s complex128) float64 {
	v := lti.Log10(math.Abs(z.Gain))
	for _, r := range z.Zeros {
		v += lti.Log10(lti.Abs(s - r))
	}
	for _, r := range z.Poles {
		v -= lti.Log10(lti.Abs(s - r))
	}
	return v
}

// sensorDC checks the sensor's DC gain H(0): the loop holds the measured
// rate at the setpoint, so the true rate settles at setpoint/H(0). Beyond
// the steady-state tolerance no controller meets the spec, and a gain
// far from 1 is a unit slip (57.3, deg/s against rad/s): an error of the
// file rather than a failed design, which would blame the controller.
func (c *checker) sensorDC(a Axis, key string, sub func(string, string) string, raw func(string, string) any) {
	h := a.Sensor.Eval(0)
	dc := real(h)
	tol := a.Spec.MaxSteadyError
	if dc > 0 && math.Abs(1/dc-1) <= tol {
		return
	}
	k, v := sub("sensor", "gain"), raw("sensor", "gain")
	var what string
	switch {
	case dc == 0 || math.IsNaN(dc) || math.IsInf(dc, 0):
		what = fmt.Sprintf("the sensor's DC gain H(0) is %g: it does not measure a steady rate at all, so no loop can hold one", dc)
	case dc < 0:
		what = fmt.Sprintf("the sensor's DC gain H(0) = %s is negative: the loop would push the rate away from the setpoint", fmtLimit(dc))
	default:
		what = fmt.Sprintf("the sensor's DC gain H(0) = %s: the loop holds the measured rate at the setpoint, so the true rate settles at setpoint/%s, a steady-state error of %s %% against spec.max_steady_error %s %%",
			fmtLimit(dc), fmtLimit(dc), fmtLimit(100*math.Abs(1/dc-1)), fmtLimit(100*tol))
	}
	hint := ""
	const degPerRad = 180 / math.Pi
	if math.Abs(dc/degPerRad-1) < 0.01 || math.Abs(float64(dc*degPerRad)-1) < 0.01 {
		hint = fmt.Sprintf(" (%s is the factor between deg/s and rad/s: give the sensor in the setpoint's unit)", fmtLimit(dc))
	}
	c.fail(k, v, "%s%s; a sensor must measure the rate in the setpoint's unit: DC gain 1 within max_steady_error (gain · Π|zeros| / Π|poles| for real roots)", what, hint)
}

// rootProblem says why the nonzero pole or zero r cannot be used, or "".
func rootProblem(r complex128) string {
	a := lti.Abs(r)
	switch {
	case r == 0:
		return ""
	case a > maxRoot:
		return fmt.Sprintf("magnitude %g rad/s is beyond %g rad/s, no dynamics of a rate loop; leave the root out", a, float64(maxRoot))
	case a < minRoot:
		return fmt.Sprintf("magnitude %g rad/s is below %g rad/s: an integrator, write it as 0", a, float64(minRoot))
	}
	return ""
}

// fmtLimit formats a computed bound for a message: 4 significant digits.
func fmtLimit(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }

// fmtExp formats the decimal exponent of a log10 magnitude: "31", "-12".
func fmtExp(l float64) string {
	if math.IsNaN(l) || math.IsInf(l, 0) {
		return fmt.Sprint(l)
	}
	return strconv.Itoa(int(math.Round(l)))
}

// textProblem says why s cannot be free text of the file (the
// description), or "": control characters other than tab and the line
// breaks (terminal escape sequences begin with one) and the Unicode controls of
// bidirectional text (which reorder what a reader sees, the "Trojan
// Source" attack) would reach the terminal, the Markdown report and the
// comments of the generated code.
func textProblem(s string) string {
	pos := 0
	for _, r := range s {
		pos++
		if what := badTextRune(r); what != "" {
			return fmt.Sprintf("character %d is U+%04X, %s; free text may hold no control characters but tab and line breaks, and no bidirectional controls (they would reach the terminal, the report and the generated comments)", pos, r, what)
		}
	}
	return ""
}

// badTextRune names the kind of r when it may not appear in free text.
func badTextRune(r rune) string {
	switch {
	case r == utf8.RuneError:
		return "not valid UTF-8"
	case r == '\t' || r == '\n' || r == '\r':
		return "" // line breaks, also of a file with CRLF line ends
	case unicode.IsControl(r):
		return "a control character"
	case r == 0x061C, r == 0x200E, r == 0x200F, 0x202A <= r && r <= 0x202E, 0x2066 <= r && r <= 0x2069:
		return "a bidirectional control"
	case r == 0x2028 || r == 0x2029:
		return "a line or paragraph separator"
	}
	return ""
}

// SafeText returns s as it may be shown on a terminal or in a document:
// s itself when it holds only printable text, else s quoted with Go
// escapes (strconv.Quote), so that no control or bidirectional character
// reaches the output. File names in messages go through it.
func SafeText(s string) string {
	for _, r := range s {
		if badTextRune(r) != "" || r == '\t' || r == '\n' || r == '\r' || !unicode.IsPrint(r) && r != ' ' {
			return strconv.Quote(s)
		}
	}
	return s
}
