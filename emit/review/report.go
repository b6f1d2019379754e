package review

import (
	"cmp"
	"math"
	"math/cmplx"
	"slices"
	"strconv"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/lti"
	"locusmith/internal/version"
	"locusmith/synth"
)

// SignificantDigits is the precision of every number in the JSON report.
//
// The design is computed in float64, to the same bits on amd64 and arm64
// (internal/lti's portable arithmetic: no fused multiply-add, elementary
// functions, matrix exponential and eigenvalues of its own), but the last
// bits of a result can differ between Go releases and compilers. Ten
// significant digits are far more than any figure in the report means (a
// settling time is resolved to 0.5 % of the spec) and far fewer than the 15–17
// of a float64, so the report reads the same after such a change except
// when a value falls within a few units of the 17th digit of a rounding
// boundary.
const SignificantDigits = 10

// JSONReport is the report of `locusmith design --json` (README, "The JSON
// report"). It holds no maps, so encoding/json writes it in field order:
// the output is a pure function of the designs. Every float is rounded to
// SignificantDigits; a value that is not finite (no crossover, unstable
// loop) or that does not apply to the form is omitted, never invented.
type JSONReport struct {
	Version   string           `json:"version"`
	Airframes []AirframeReport `json:"airframes"`
}

// AirframeReport is one airframe file.
type AirframeReport struct {
	Airframe     string       `json:"airframe"`
	File         string       `json:"file"`
	SHA256       string       `json:"sha256"`
	LoopHz       *float64     `json:"loop_hz,omitempty"`
	ComputeDelay int          `json:"compute_delay"`
	OK           bool         `json:"ok"`
	Axes         []AxisReport `json:"axes"`
}

// AxisReport is one axis: its design and verification, or the error that
// stopped the design.
type AxisReport struct {
	Axis string `json:"axis"`
	Form string `json:"form"`
	OK   bool   `json:"ok"`
	// Error says why the axis could not be designed (for example an
	// infeasible spec); the sections below are then absent.
	Error      string            `json:"error,omitempty"`
	Target     *TargetReport     `json:"target,omitempty"`
	Textbook   *TextbookReport   `json:"textbook,omitempty"`
	Continuous *ContinuousReport `json:"continuous,omitempty"`
	Discrete   *DiscreteReport   `json:"discrete,omitempty"`
	// Filters is the feedback filter chain in the order it runs: absent
	// without one.
	Filters []FilterReport `json:"filters,omitempty"`
	// Envelope is the plant's range and the sampled loop's figures at
	// every plant of the final verification, the nominal plant first.
	Envelope *EnvelopeReport `json:"envelope,omitempty"`
	// Numeric is the numeric realization: coefficients as the generated
	// code holds them, fixed-point formats and proved ranges; absent when
	// the design has no realization.
	Numeric  *NumericReport `json:"numeric,omitempty"`
	Checks   []CheckReport  `json:"checks,omitempty"`
	Warnings []string       `json:"warnings,omitempty"`
}

// FilterReport is one section of the feedback filter chain: the file's
// settings (a key that does not apply to the kind is omitted; DepthDB is
// omitted for a full notch), the discrete coefficients as designed at the
// loop rate, B = [b0, b1, b2] and A = [1, a1, a2] (b2 = a2 = 0 for a
// first-order section), and its phase at the nominal sampled loop's
// crossover (omitted without a crossover).
type FilterReport struct {
	Kind                string    `json:"kind"`
	At                  string    `json:"at"`
	Hz                  *float64  `json:"hz"`
	WidthHz             *float64  `json:"width_hz,omitempty"`
	DepthDB             *float64  `json:"depth_db,omitempty"`
	Order               int       `json:"order,omitempty"`
	Damping             *float64  `json:"damping,omitempty"`
	Auto                bool      `json:"auto,omitempty"`
	Goal                string    `json:"goal,omitempty"`
	B                   []float64 `json:"b"`
	A                   []float64 `json:"a"`
	PhaseAtCrossoverDeg *float64  `json:"phase_at_crossover_deg,omitempty"`
}

// TargetReport is a target pole pair s = −ζωn ± jωn√(1−ζ²).
type TargetReport struct {
	Zeta   *float64  `json:"zeta,omitempty"`
	OmegaN *float64  `json:"omega_n,omitempty"`
	Pole   []float64 `json:"pole,omitempty"` // [re, im] of the upper pole
}

// TextbookReport is the unrefined placement at the spec's own target,
// present only when refinement changed the design.
type TextbookReport struct {
	Target       *TargetReport `json:"target,omitempty"`
	Kp           *float64      `json:"kp,omitempty"`
	Ki           *float64      `json:"ki,omitempty"`
	Kd           *float64      `json:"kd,omitempty"`
	Series       *SeriesReport `json:"series,omitempty"`
	Overshoot    *float64      `json:"overshoot,omitempty"`
	SettlingTime *float64      `json:"settling_time,omitempty"`
}

// SeriesReport is a controller as C(s) = gain·Π(s − z)/Π(s − p).
type SeriesReport struct {
	Gain  *float64    `json:"gain,omitempty"`
	Zeros [][]float64 `json:"zeros"`
	Poles [][]float64 `json:"poles"`
}

// ContinuousReport is the continuous design and its full-order
// verification.
type ContinuousReport struct {
	Kp               *float64      `json:"kp,omitempty"`
	Ki               *float64      `json:"ki,omitempty"`
	Kd               *float64      `json:"kd,omitempty"`
	DerivativeTau    *float64      `json:"derivative_tau,omitempty"`
	SetpointWeight   *float64      `json:"setpoint_weight,omitempty"`
	Series           *SeriesReport `json:"series,omitempty"`
	SteadyStateError *float64      `json:"steady_state_error,omitempty"`
	ClosedLoopPoles  [][]float64   `json:"closed_loop_poles"`
	Overshoot        *float64      `json:"overshoot,omitempty"`
	SettlingTime     *float64      `json:"settling_time,omitempty"`
	RiseTime         *float64      `json:"rise_time,omitempty"`
	GainMarginDB     *float64      `json:"gain_margin_db,omitempty"`
	PhaseMarginDeg   *float64      `json:"phase_margin_deg,omitempty"`
	Crossover        *float64      `json:"crossover,omitempty"`
	DelayMargin      *float64      `json:"delay_margin,omitempty"`
}

// DiscreteReport is the sampled loop at loop_hz: the figures the spec is
// checked on.
type DiscreteReport struct {
	Method string `json:"method"`
	// PrewarpOmega is the frequency (rad/s) tustin_prewarp is exact at.
	PrewarpOmega *float64 `json:"prewarp_omega,omitempty"`
	// DerivativeMethod is the rule the derivative filter uses; it differs
	// from Method when Method would put the filter's pole outside [0, 1).
	DerivativeMethod string      `json:"derivative_method,omitempty"`
	ClosedLoopPoles  [][]float64 `json:"closed_loop_poles"`
	// StabilityMargin is 1 − max|z|, the distance of the slowest pole to
	// the unit circle (negative when unstable).
	StabilityMargin  *float64 `json:"stability_margin,omitempty"`
	SteadyStateError *float64 `json:"steady_state_error,omitempty"`
	Overshoot        *float64 `json:"overshoot,omitempty"`
	SettlingTime     *float64 `json:"settling_time,omitempty"`
	RiseTime         *float64 `json:"rise_time,omitempty"`
	GainMarginDB     *float64 `json:"gain_margin_db,omitempty"`
	PhaseMarginDeg   *float64 `json:"phase_margin_deg,omitempty"`
	Crossover        *float64 `json:"crossover,omitempty"`
	DelayMargin      *float64 `json:"delay_margin,omitempty"`
	// MaxSensitivity and MaxComplementary are the peaks of |S| = |1/(1 + L)|
	// and |T| = |L/(1 + L)| on the unit circle at the nominal plant:
	// 1/Ms is the least distance of the Nyquist curve to −1.
	MaxSensitivity   *float64 `json:"max_sensitivity,omitempty"`
	MaxComplementary *float64 `json:"max_complementary,omitempty"`
	// NoiseGain is the controller's largest gain |C| from measured rate
	// to command between the lowest crossover and Nyquist (command units
	// per rad/s): what carries gyro noise into the actuators.
	NoiseGain *float64 `json:"noise_gain,omitempty"`
	// HoldRate is the largest steady setpoint (rad/s) the integrator can
	// hold within integrator_limit at the nominal plant; absent when
	// unbounded (no integrator).
	HoldRate *float64 `json:"hold_rate,omitempty"`
	// Disturbance is the response to the spec's load step at the plant
	// input, at the nominal plant; absent for an unstable loop.
	Disturbance *DisturbanceReport `json:"disturbance,omitempty"`
	Saturated   *SaturatedReport   `json:"saturated,omitempty"`
}

// DisturbanceReport is the true-rate response to a load step at the plant
// input (where the command enters): Step in command units, Peak the
// largest |rate deviation| (rad/s), IAE its integral ∫|y|dt (rad), and
// RecoveryTime the time (s) from which the deviation stays within 2 % of
// its peak, absent when it never does within the record (a steady
// deviation).
type DisturbanceReport struct {
	Step         *float64 `json:"step,omitempty"`
	Peak         *float64 `json:"peak,omitempty"`
	IAE          *float64 `json:"iae,omitempty"`
	RecoveryTime *float64 `json:"recovery_time,omitempty"`
}

// EnvelopeReport is the plant's range (the file's [axes.NAME.envelope],
// defaults applied) and the sampled loop at every plant the final
// verification looked at: the nominal plant, the corners of the box, and
// points in between.
type EnvelopeReport struct {
	GainScale []float64      `json:"gain_scale"`
	LagScale  []float64      `json:"lag_scale"`
	DelayAdd  []float64      `json:"delay_add"`
	Corners   []CornerReport `json:"corners"`
}

// CornerReport is the sampled loop at one plant of the envelope: the
// plant's gain and lag scales and added delay (s), and the loop's
// figures there. The step figures are absent for an unstable loop, a
// margin that does not exist is absent.
type CornerReport struct {
	GainScale      *float64 `json:"gain_scale,omitempty"`
	LagScale       *float64 `json:"lag_scale,omitempty"`
	DelayAdd       *float64 `json:"delay_add,omitempty"`
	Stable         bool     `json:"stable"`
	Overshoot      *float64 `json:"overshoot,omitempty"`
	SettlingTime   *float64 `json:"settling_time,omitempty"`
	PhaseMarginDeg *float64 `json:"phase_margin_deg,omitempty"`
	GainMarginDB   *float64 `json:"gain_margin_db,omitempty"`
	MaxSensitivity *float64 `json:"max_sensitivity,omitempty"`
}

// WorstReport names the plant of the envelope where a check's value is
// worst.
type WorstReport struct {
	GainScale *float64 `json:"gain_scale,omitempty"`
	LagScale  *float64 `json:"lag_scale,omitempty"`
	DelayAdd  *float64 `json:"delay_add,omitempty"`
}

// SaturatedReport is the large setpoint step with the nonlinear controller.
// The *_no_antiwindup fields and the integrator figures apply to forms with
// an integral only. A recovery time is given only when the response settled
// within the simulated record; otherwise the end value (the true rate at
// the end of the record) shows how far from the setpoint it stayed.
type SaturatedReport struct {
	Amplitude                *float64  `json:"amplitude,omitempty"`
	LinearPeakCommand        *float64  `json:"linear_peak_command,omitempty"`
	OutputLimit              []float64 `json:"output_limit"`
	AntiWindup               string    `json:"antiwindup,omitempty"`
	TrackingTime             *float64  `json:"tracking_time,omitempty"`
	Overshoot                *float64  `json:"overshoot,omitempty"`
	RecoveryTime             *float64  `json:"recovery_time,omitempty"`
	Settled                  bool      `json:"settled"`
	EndValue                 *float64  `json:"end_value,omitempty"`
	OvershootNoAntiWindup    *float64  `json:"overshoot_no_antiwindup,omitempty"`
	RecoveryTimeNoAntiWindup *float64  `json:"recovery_time_no_antiwindup,omitempty"`
	SettledNoAntiWindup      *bool     `json:"settled_no_antiwindup,omitempty"`
	EndValueNoAntiWindup     *float64  `json:"end_value_no_antiwindup,omitempty"`
	IntegratorPeak           *float64  `json:"integrator_peak,omitempty"`
	IntegratorLimit          *float64  `json:"integrator_limit,omitempty"`
	// LimitedBy says why the amplitude is smaller than the step that would
	// need twice the output limit: "integrator_reach" or "input_full_scale".
	LimitedBy string `json:"limited_by,omitempty"`
}

// NumericReport is the numeric realization of one axis's controller.
type NumericReport struct {
	Type string `json:"type"`
	// WordBits is the data word of fixed point (16, 32); absent for float.
	WordBits        int                 `json:"word_bits,omitempty"`
	InputFullScale  *float64            `json:"input_full_scale,omitempty"`
	OutputFullScale *float64            `json:"output_full_scale,omitempty"`
	Coefficients    []CoefficientReport `json:"coefficients"`
	Ranges          []RangeReport       `json:"ranges,omitempty"`
	// Quantized is the sampled loop with the coefficients as quantized
	// (absent for float64, whose coefficients are the design's own).
	Quantized *QuantizedReport `json:"quantized,omitempty"`
	// Fixed point only: resolution of the input and output words against
	// the settling band, and the integer controller against the float64
	// reference model on the standard excitation.
	InputResolutionBits  *float64 `json:"input_resolution_bits,omitempty"`
	OutputResolutionBits *float64 `json:"output_resolution_bits,omitempty"`
	MaxErrorLSB          *float64 `json:"max_error_lsb,omitempty"`
	SQNRdB               *float64 `json:"sqnr_db,omitempty"`
	RestLSB              *float64 `json:"rest_lsb,omitempty"`
	RestBoundLSB         *float64 `json:"rest_bound_lsb,omitempty"`
	// FilterNoiseLSB is the proved bound of the fixed-point filter
	// chain's rounding at its output, in input LSB; absent without a
	// chain.
	FilterNoiseLSB *float64 `json:"filter_noise_lsb,omitempty"`
	// DerivativeFilterNoiseLSB is the proved bound of the fixed-point
	// derivative filters' rounding in the D term, in output LSB; absent
	// without them.
	DerivativeFilterNoiseLSB *float64 `json:"derivative_filter_noise_lsb,omitempty"`
}

// CoefficientReport is one coefficient: designed, as held by the code,
// its format (float32, float64 or Qm.n) and the relative rounding error.
type CoefficientReport struct {
	Name      string   `json:"name"`
	Value     *float64 `json:"value,omitempty"`
	Quantized *float64 `json:"quantized,omitempty"`
	FracBits  *int     `json:"frac_bits,omitempty"`
	// Raw is the integer the fixed-point code holds, in a signed word of
	// Bits bits (the data word or a wider accumulator): Raw·2^−FracBits
	// is exactly the coefficient in raw units (a gain times
	// input_full_scale/output_full_scale, a limit over output_full_scale;
	// README, "[numeric]"), and Quantized is that in design units.
	Raw      *int64   `json:"raw,omitempty"`
	Bits     int      `json:"bits,omitempty"`
	Format   string   `json:"format"`
	RelError *float64 `json:"rel_error,omitempty"`
}

// RangeReport is one state or intermediate of the integer controller: its
// proved bound against the capacity of its word.
type RangeReport struct {
	Name         string   `json:"name"`
	Format       string   `json:"format,omitempty"`
	Bound        *float64 `json:"bound,omitempty"`
	Capacity     *float64 `json:"capacity,omitempty"`
	HeadroomBits *float64 `json:"headroom_bits,omitempty"`
	Saturated    bool     `json:"saturated,omitempty"`
	Note         string   `json:"note,omitempty"`
}

// QuantizedReport is the sampled loop with quantized coefficients.
type QuantizedReport struct {
	StabilityMargin *float64 `json:"stability_margin,omitempty"`
	Overshoot       *float64 `json:"overshoot,omitempty"`
	SettlingTime    *float64 `json:"settling_time,omitempty"`
	GainMarginDB    *float64 `json:"gain_margin_db,omitempty"`
	PhaseMarginDeg  *float64 `json:"phase_margin_deg,omitempty"`
}

// CheckReport is one pass/fail comparison against the spec on the sampled
// loop. Value is absent when it is not finite (the settling time of an
// unstable loop).
type CheckReport struct {
	Name  string   `json:"name"`
	Limit *float64 `json:"limit,omitempty"`
	Value *float64 `json:"value,omitempty"`
	OK    bool     `json:"ok"`
	// Worst is the plant where Value is worst: the nominal plant for a
	// check of the nominal loop or of the controller alone.
	Worst *WorstReport `json:"worst,omitempty"`
}

// JSON builds the JSON report of the designed airframes, in the order
// given.
func JSON(as []*discrete.Airframe) *JSONReport {
	r := &JSONReport{Version: version.Version, Airframes: make([]AirframeReport, 0, len(as))}
	for _, a := range as {
		if a == nil || a.File == nil {
			continue
		}
		r.Airframes = append(r.Airframes, jsonAirframe(a))
	}
	return r
}

func jsonAirframe(a *discrete.Airframe) AirframeReport {
	f := a.File
	ar := AirframeReport{
		Airframe:     f.Airframe,
		File:         f.Path,
		SHA256:       f.SHA256,
		LoopHz:       jsonNum(f.Loop.Hz),
		ComputeDelay: f.Loop.ComputeDelay,
		OK:           a.OK(),
		Axes:         make([]AxisReport, 0, len(a.Axes)),
	}
	for _, x := range a.Axes {
		ar.Axes = append(ar.Axes, jsonAxis(a, x))
	}
	return ar
}

// axisProblem finds the problem of axis name in the file.
func axisProblem(f *airframe.File, name string) (airframe.Axis, bool) {
	for _, p := range f.Axes {
		if p.Name == name {
			return p, true
		}
	}
	return airframe.Axis{}, false
}

func jsonAxis(a *discrete.Airframe, x discrete.Outcome) AxisReport {
	r := AxisReport{Axis: x.Name, OK: x.OK()}
	if p, ok := axisProblem(a.File, x.Name); ok {
		r.Form = string(p.Ctrl.Form)
	}
	d := x.Design
	switch {
	case x.Err != nil:
		r.Error = x.ErrorText()
		return r
	case d == nil || d.Cont == nil:
		r.Error = "no design"
		return r
	}
	r.Form = string(d.Problem.Ctrl.Form)
	c := d.Cont
	r.Target = jsonTarget(c.Target)
	if c.Textbook != nil {
		r.Textbook = jsonTextbook(c.Textbook)
	}
	r.Continuous = jsonContinuous(c)
	r.Discrete = jsonDiscrete(d)
	r.Filters = jsonFilters(d)
	r.Envelope = jsonEnvelope(d)
	if d.Num != nil {
		r.Numeric = jsonNumeric(d.Num)
	}
	for _, ck := range d.Checks {
		r.Checks = append(r.Checks, jsonCheck(ck))
	}
	r.Warnings = dedupWarnings(d.Warnings)
	return r
}

func jsonTarget(t synth.Target) *TargetReport {
	return &TargetReport{Zeta: jsonNum(t.Zeta), OmegaN: jsonNum(t.OmegaN), Pole: jsonPair(t.Pole)}
}

func jsonTextbook(s *synth.Stage) *TextbookReport {
	tb := &TextbookReport{
		Target:       jsonTarget(s.Target),
		Series:       jsonSeries(s.Ctrl),
		Overshoot:    jsonFrac(s.Verif.Step.Overshoot),
		SettlingTime: jsonNum(s.Verif.Step.Settling),
	}
	tb.Kp, tb.Ki, tb.Kd = jsonGains(s.Ctrl)
	if !s.Verif.Stable {
		tb.Overshoot, tb.SettlingTime = nil, nil
	}
	return tb
}

// jsonGains returns the parallel gains that apply to the form: none for lead,
// whose only form is the series one.
func jsonGains(c synth.Controller) (kp, ki, kd *float64) {
	if c.Form == airframe.FormLead {
		return nil, nil, nil
	}
	kp = jsonNum(c.Kp)
	if c.Form.HasIntegral() {
		ki = jsonNum(c.Ki)
	}
	if c.Form.HasDerivative() {
		kd = jsonNum(c.Kd)
	}
	return kp, ki, kd
}

func jsonSeries(c synth.Controller) *SeriesReport {
	z, err := c.Series()
	if err != nil {
		return nil
	}
	return &SeriesReport{Gain: jsonNum(z.Gain), Zeros: jsonPairs(z.Zeros), Poles: jsonPairs(z.Poles)}
}

func jsonContinuous(c *synth.Design) *ContinuousReport {
	v := c.Verif
	cr := &ContinuousReport{
		Series:           jsonSeries(c.Ctrl),
		SteadyStateError: jsonFrac(v.SteadyStateError),
		ClosedLoopPoles:  jsonPairs(v.Poles),
	}
	cr.Kp, cr.Ki, cr.Kd = jsonGains(c.Ctrl)
	if c.Ctrl.Form.HasDerivative() {
		cr.DerivativeTau = jsonNum(c.Ctrl.Tf)
	}
	if c.Ctrl.Form != airframe.FormLead {
		cr.SetpointWeight = jsonNum(c.Ctrl.B)
	}
	if v.Stable {
		cr.Overshoot = jsonFrac(v.Step.Overshoot)
		cr.SettlingTime = jsonNum(v.Step.Settling)
		cr.RiseTime = jsonNum(v.Step.Rise)
	} else {
		cr.SteadyStateError = nil
	}
	cr.GainMarginDB, cr.PhaseMarginDeg, cr.Crossover, cr.DelayMargin = jsonMargins(v.Margins)
	return cr
}

// jsonMargins returns the loop margins that exist: a gain margin of +Inf means
// the phase never crosses −180°, a phase margin of +Inf that the gain never
// crosses 1; neither is a number to print.
func jsonMargins(m lti.Margins) (gm, pm, wc, dm *float64) {
	return jsonNum(m.GainDB), jsonNum(m.PhaseDeg), jsonNum(m.Crossover), jsonNum(m.DelayMargin)
}

func jsonDiscrete(d *discrete.Design) *DiscreteReport {
	v, k := d.Verif, d.Coeffs
	dr := &DiscreteReport{
		Method:          string(k.Method),
		ClosedLoopPoles: jsonPairs(v.Poles),
		StabilityMargin: jsonNum(v.StabilityMargin),
	}
	if k.PrewarpOmega > 0 {
		dr.PrewarpOmega = jsonNum(k.PrewarpOmega)
	}
	if d.Problem.Ctrl.Form.HasDerivative() && k.DerivativeMethod != "" {
		dr.DerivativeMethod = string(k.DerivativeMethod)
	}
	if v.Stable {
		dr.SteadyStateError = jsonFrac(v.SteadyStateError)
		dr.Overshoot = jsonFrac(v.Step.Overshoot)
		dr.SettlingTime = jsonNum(v.Step.Settling)
		dr.RiseTime = jsonNum(v.Step.Rise)
		dr.Saturated = jsonSaturated(d)
	}
	dr.GainMarginDB, dr.PhaseMarginDeg, dr.Crossover, dr.DelayMargin = jsonMargins(v.Margins)
	dr.NoiseGain = jsonNum(d.NoiseGain)
	if len(d.Envelope) > 0 {
		n := d.Envelope[0]
		dr.HoldRate = jsonNum(n.HoldRate)
		if n.Stable {
			dr.MaxSensitivity, dr.MaxComplementary = jsonNum(n.Ms), jsonNum(n.Mt)
			dr.Disturbance = jsonDisturbance(n.Disturbance)
		}
	}
	return dr
}

// jsonFilters reports the filter chain of d, then its derivative filters
// (nil without any).
func jsonFilters(d *discrete.Design) []FilterReport {
	var out []FilterReport
	wc := d.Verif.Margins.Crossover
	fs := append(append([]airframe.Filter(nil), d.Problem.Filters...), d.Problem.Ctrl.DerivativeFilters...)
	nf := len(d.Problem.Filters)
	section := func(i int) (lti.Biquad, bool) {
		switch {
		case i < nf && i < len(d.Plant.Sections):
			return d.Plant.Sections[i], true
		case i >= nf && i-nf < len(d.Coeffs.DSections):
			return d.Coeffs.DSections[i-nf], true
		}
		return lti.Biquad{}, false
	}
	for i, f := range fs {
		r := FilterReport{Kind: string(f.Kind), At: f.At, Hz: jsonNum(f.Hz), Order: f.Order, Auto: f.AutoHz, Goal: f.Goal}
		if f.Kind == airframe.FilterNotch {
			r.WidthHz = jsonNum(f.WidthHz)
			if f.DepthDB > 0 {
				r.DepthDB = jsonNum(f.DepthDB)
			}
		}
		if f.Order == 2 {
			r.Damping = jsonNum(f.Damping)
		}
		if q, ok := section(i); ok {
			r.B = []float64{roundSig(q.B0), roundSig(q.B1), roundSig(q.B2)}
			r.A = []float64{1, roundSig(q.A1), roundSig(q.A2)}
			if wc > 0 && !math.IsInf(wc, 0) {
				r.PhaseAtCrossoverDeg = jsonNum(discrete.SectionPhaseDeg(q, wc, d.Loop.Hz))
			}
		}
		out = append(out, r)
	}
	return out
}

func jsonDisturbance(f synth.DisturbanceFigures) *DisturbanceReport {
	return &DisturbanceReport{Step: jsonNum(f.Step), Peak: jsonNum(f.Peak), IAE: jsonNum(f.IAE), RecoveryTime: jsonNum(f.Recovery)}
}

// jsonEnvelope reports the envelope's intervals and every plant of the
// final verification, in the design's order (the nominal plant first);
// nil for a design without that verification.
func jsonEnvelope(d *discrete.Design) *EnvelopeReport {
	if len(d.Envelope) == 0 {
		return nil
	}
	e := d.Problem.Envelope.Normalized()
	pair := func(iv [2]float64) []float64 { return []float64{roundSig(iv[0]), roundSig(iv[1])} }
	er := &EnvelopeReport{GainScale: pair(e.GainScale), LagScale: pair(e.LagScale), DelayAdd: pair(e.DelayAdd),
		Corners: make([]CornerReport, 0, len(d.Envelope))}
	for _, f := range d.Envelope {
		c := CornerReport{GainScale: jsonNum(f.Corner.GainScale), LagScale: jsonNum(f.Corner.LagScale),
			DelayAdd: jsonNum(f.Corner.DelayAdd), Stable: f.Stable}
		if f.Stable {
			c.Overshoot = jsonFrac(f.Step.Overshoot)
			c.SettlingTime = jsonNum(f.Step.Settling)
			c.MaxSensitivity = jsonNum(f.Ms)
		}
		c.GainMarginDB, c.PhaseMarginDeg, _, _ = jsonMargins(f.Margins)
		er.Corners = append(er.Corners, c)
	}
	return er
}

// jsonCheck reports a check with the plant where it is worst; a check
// that names no plant (sampling, the numeric realization's) is one of the
// nominal loop or of the controller alone. An overshoot and a
// steady-state error are fractions of the setpoint, rounded as such, to
// 10 digits of the unit step (floating-point residue reads as 0, and a
// tiny overshoot, the difference of two nearly equal numbers, shows no
// CPU-dependent last bits).
func jsonCheck(c synth.Check) CheckReport {
	r := CheckReport{Name: c.Name, Limit: jsonNum(c.Limit), Value: jsonNum(c.Value), OK: c.OK}
	switch strings.TrimPrefix(c.Name, "quantized_") {
	case "steady_error", "overshoot":
		r.Value = jsonFrac(c.Value)
	}
	w := c.Worst
	if w == (airframe.Corner{}) {
		w = airframe.Nominal()
	}
	r.Worst = &WorstReport{GainScale: jsonNum(w.GainScale), LagScale: jsonNum(w.LagScale), DelayAdd: jsonNum(w.DelayAdd)}
	return r
}

func jsonSaturated(d *discrete.Design) *SaturatedReport {
	s, k := d.Verif.Saturated, d.Coeffs
	if !(s.Amplitude > 0) || math.IsInf(s.Amplitude, 0) {
		return nil
	}
	sr := &SaturatedReport{
		Amplitude:         jsonNum(s.Amplitude),
		LimitedBy:         limitedBy(s),
		LinearPeakCommand: jsonNum(s.LinearPeakCommand),
		OutputLimit:       []float64{roundSig(k.Lo), roundSig(k.Hi)},
		Overshoot:         jsonFrac(s.Overshoot),
		Settled:           s.Settled,
	}
	if s.Settled {
		sr.RecoveryTime = jsonNum(s.Recovery)
	} else {
		sr.EndValue = endValue(s.Y)
	}
	if d.Problem.Ctrl.Form.HasIntegral() {
		sr.AntiWindup = string(s.AntiWindup)
		if s.AntiWindup == discrete.AWBackcalc && k.Tt > 0 {
			sr.TrackingTime = jsonNum(k.Tt)
		}
		sr.OvershootNoAntiWindup = jsonFrac(s.OvershootNone)
		settled := s.SettledNone
		sr.SettledNoAntiWindup = &settled
		if s.SettledNone {
			sr.RecoveryTimeNoAntiWindup = jsonNum(s.RecoveryNone)
		} else {
			sr.EndValueNoAntiWindup = endValue(s.YNone)
		}
		sr.IntegratorPeak = jsonNum(s.IntegratorPeak)
		sr.IntegratorLimit = jsonNum(k.IL)
	}
	return sr
}

// endValue is the last sample of y, or nil for an empty record.
func endValue(y []float64) *float64 {
	if len(y) == 0 {
		return nil
	}
	return jsonNum(y[len(y)-1])
}

func jsonNumeric(n *discrete.Realization) *NumericReport {
	nr := &NumericReport{
		Type:            string(n.Type),
		WordBits:        n.W,
		InputFullScale:  jsonPositive(n.InputFullScale),
		OutputFullScale: jsonPositive(n.OutputFullScale),
		Coefficients:    make([]CoefficientReport, 0, len(n.Coefficients)),
	}
	fixed := n.Type.IsFixed()
	for _, c := range n.Coefficients {
		cr := CoefficientReport{Name: c.Name, Value: jsonNum(c.Value), Quantized: jsonNum(c.Quantized), Format: c.Format, RelError: jsonNum(c.RelError)}
		if fixed {
			fb, raw := c.FracBits, c.Raw
			cr.FracBits, cr.Raw, cr.Bits = &fb, &raw, c.Bits
		}
		nr.Coefficients = append(nr.Coefficients, cr)
	}
	for _, g := range n.Ranges {
		nr.Ranges = append(nr.Ranges, RangeReport{Name: g.Name, Format: g.Format, Bound: jsonNum(g.Bound),
			Capacity: jsonNum(g.Capacity), HeadroomBits: jsonNum(g.HeadroomBits), Saturated: g.Saturated, Note: g.Note})
	}
	if q := n.Quantized; q != nil {
		qr := &QuantizedReport{StabilityMargin: jsonNum(q.StabilityMargin)}
		if q.Stable {
			qr.Overshoot = jsonFrac(q.Step.Overshoot)
			qr.SettlingTime = jsonNum(q.Step.Settling)
		}
		qr.GainMarginDB, qr.PhaseMarginDeg, _, _ = jsonMargins(q.Margins)
		nr.Quantized = qr
	}
	if fixed {
		nr.InputResolutionBits = jsonNum(n.InputResolutionBits)
		nr.OutputResolutionBits = jsonNum(n.OutputResolutionBits)
		// Few digits: the error against the float64 model is a few LSB of
		// a word of up to 31 bits, about 1e−9 of the full scale, where the
		// float64 model's own last bits (the ZOH plant's matrix
		// exponential differs in its last bits between CPU architectures,
		// and the loop's integrator accumulates them) move the third
		// digit; two digits of the error and three of the SQNR are all
		// the figures mean.
		nr.MaxErrorLSB = jsonDigits(n.MaxErrorLSB, 2)
		nr.SQNRdB = jsonDigits(n.SQNRdB, 3)
		nr.RestLSB = jsonNum(n.RestLSB)
		nr.RestBoundLSB = jsonNum(n.RestBoundLSB)
		if n.Fixed != nil && len(n.Fixed.Sections) > 0 {
			nr.FilterNoiseLSB = jsonNum(n.FilterNoiseLSB)
		}
		if n.Fixed != nil && len(n.Fixed.DSections) > 0 {
			nr.DerivativeFilterNoiseLSB = jsonNum(n.DFilterNoiseLSB)
		}
	}
	return nr
}

// jsonPositive is jsonNum for a setting where 0 means "not given".
func jsonPositive(x float64) *float64 {
	if !(x > 0) {
		return nil
	}
	return jsonNum(x)
}

// dedupWarnings drops repeated warnings, keeping the first of each.
func dedupWarnings(ws []string) []string {
	var out []string
	for _, w := range ws {
		if !slices.Contains(out, w) {
			out = append(out, w)
		}
	}
	return out
}

// roundSig returns x rounded to SignificantDigits significant digits, with −0
// written as 0. x must be finite.
func roundSig(x float64) float64 {
	if x == 0 {
		return 0
	}
	r, err := strconv.ParseFloat(strconv.FormatFloat(x, 'e', SignificantDigits-1, 64), 64)
	if err != nil {
		return x
	}
	return r
}

// roundSigOf returns x rounded to SignificantDigits digits of scale (the
// magnitude it is a part of), so that a part that is noise relative to
// scale becomes 0 rather than a random tiny number. The rounding is done by
// strconv's correctly rounded decimal conversion, which is the same on
// every machine.
func roundSigOf(x, scale float64) float64 {
	if scale == 0 || math.IsInf(scale, 0) || math.IsNaN(scale) {
		return roundSig(x)
	}
	es := strconv.FormatFloat(math.Abs(scale), 'e', SignificantDigits-1, 64)
	i := strings.LastIndexByte(es, 'e')
	exp, err := strconv.Atoi(es[i+1:])
	prec := SignificantDigits - 1 - exp
	if err != nil || prec < 0 {
		return roundSig(x)
	}
	r, err := strconv.ParseFloat(strconv.FormatFloat(x, 'f', prec, 64), 64)
	if err != nil {
		return roundSig(x)
	}
	return roundSig(r)
}

// jsonNum returns x rounded, or nil when x is NaN or ±Inf.
// jsonDigits is jsonNum rounded to n significant digits.
func jsonDigits(x float64, n int) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', n, 64), 64)
	if err != nil {
		return nil
	}
	return &v
}

func jsonNum(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	r := roundSig(x)
	return &r
}

// jsonFrac is jsonNum for a fraction of the unit step (overshoot, steady-state
// error): its digits are counted against 1, the size of the step, so that
// a floating-point residue such as 2e−16 reads as 0.
func jsonFrac(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	r := roundSigOf(x, math.Max(1, math.Abs(x)))
	return &r
}

// jsonPair writes z as [re, im], each part rounded to SignificantDigits of
// max(|z|, 1), so that a part that is floating-point residue reads as 0: a
// real pole computed as −3 + 1e−15j is written [−3, 0], and a pole of z at
// the origin computed as −7e−17 is written [0, 0]. The floor of 1 (rad/s
// for s, the unit circle for z) keeps an absolute resolution of 1e−9 for
// small roots. nil when z is not finite.
func jsonPair(z complex128) []float64 {
	if cmplx.IsNaN(z) || cmplx.IsInf(z) {
		return nil
	}
	a := math.Max(cmplx.Abs(z), 1)
	return []float64{roundSigOf(real(z), a), roundSigOf(imag(z), a)}
}

// jsonPairs writes roots as [[re, im], ...] in a canonical order: descending
// real part, then descending imaginary part (so that the order does not
// depend on the root finder). Roots that are not finite are left out.
func jsonPairs(zs []complex128) [][]float64 {
	out := make([][]float64, 0, len(zs))
	for _, z := range zs {
		if p := jsonPair(z); p != nil {
			out = append(out, p)
		}
	}
	slices.SortStableFunc(out, func(a, b []float64) int {
		if c := cmp.Compare(b[0], a[0]); c != 0 {
			return c
		}
		return cmp.Compare(b[1], a[1])
	})
	return out
}

func limitedBy(s discrete.Saturated) string {
	switch {
	case s.LimitedByFullScale:
		return "input_full_scale"
	case s.LimitedByReach:
		return "integrator_reach"
	}
	return ""
}
