package airframe

import (
	"fmt"
	"math"
	"math/cmplx"
	"strconv"
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
	if ok.model && ok.sensor && ok.settling {
		c.gainScale(a, t, key, sub)
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
	x := tau * hz
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
// the plant at one frequency does not hide the scale).
func (c *checker) gainScale(a Axis, t *table, key string, sub func(string, string) string) {
	w := 4 / a.Spec.SettlingTime
	best := math.Inf(-1)
	for _, f := range []float64{0.5, 1, 2} {
		best = math.Max(best, log10Mag(a.Plant.Model, complex(0, f*w))+log10Mag(a.Sensor, complex(0, f*w)))
	}
	scale := -best // log10 of the gain scale
	if math.IsNaN(scale) || scale < math.Log10(minGainScale) || scale > math.Log10(maxGainScale) {
		pm, _ := t.m["plant"].(map[string]any)
		k, v := sub("plant", "gain"), valueOrNil(pm["gain"])
		unit := "command → rate gain"
		if _, phys := pm["effectiveness"]; phys {
			k, v = sub("plant", "effectiveness"), valueOrNil(pm["effectiveness"])
			unit = "rad/s² per unit command"
		}
		c.fail(k, v, "the loop's gain |G·H| near the spec's bandwidth (ω = 4/settling_time = %s rad/s) is about 1e%s, so the controller would need gains near 1e%s command units per rad/s; the design's arithmetic and the generated code hold gain scales in [%g, %g]: check the units (%s) and the command range",
			fmtLimit(w), fmtExp(best), fmtExp(scale), minGainScale, maxGainScale, unit)
	}
}

// log10Mag returns log10 |z(s)| of the zero-pole-gain model, summed in
// logarithms so that no product overflows.
func log10Mag(z lti.ZPK, s complex128) float64 {
	v := math.Log10(math.Abs(z.Gain))
	for _, r := range z.Zeros {
		v += math.Log10(cmplx.Abs(s - r))
	}
	for _, r := range z.Poles {
		v -= math.Log10(cmplx.Abs(s - r))
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
	if math.Abs(dc/degPerRad-1) < 0.01 || math.Abs(dc*degPerRad-1) < 0.01 {
		hint = fmt.Sprintf(" (%s is the factor between deg/s and rad/s: give the sensor in the setpoint's unit)", fmtLimit(dc))
	}
	c.fail(k, v, "%s%s; a sensor must measure the rate in the setpoint's unit: DC gain 1 within max_steady_error (gain · Π|zeros| / Π|poles| for real roots)", what, hint)
}

// rootProblem says why the nonzero pole or zero r cannot be used, or "".
func rootProblem(r complex128) string {
	a := cmplx.Abs(r)
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
