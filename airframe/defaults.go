package airframe

import (
	"math"

	"locusmith/internal/lti"
)

// Every default and every sanity limit of the airframe file lives in this
// file, each with the reason for its value. The decoder refers to these
// names only, so a default cannot differ between two places.

// Defaults of optional keys.
const (
	// defaultComputeDelay is compute_delay: the command computed from the
	// sample taken at one tick is applied at the next tick (common practice
	// in sampled flight control loops: read, compute, write at the next
	// timer interrupt, so that the output instant does not jitter with the
	// computation time).
	defaultComputeDelay = 1

	// defaultNumericType is numeric.type: single-precision float, the
	// native type of the FPUs found on most flight controllers (for example
	// the Cortex-M4F/M7 single-precision unit; common practice).
	defaultNumericType = Float32

	// defaultSettlingBand is spec.settling_band: the 2 % criterion, the one
	// behind the textbook estimate Ts ≈ 4/(ζ·ωn) (Nise, Control Systems
	// Engineering; Ogata, Modern Control Engineering; from memory).
	defaultSettlingBand = 0.02

	// defaultMinPhaseMargin and defaultMinGainMargin are the margin
	// requirements when absent: none beyond stability (Spec treats 0
	// as "no requirement").
	defaultMinPhaseMargin = 0.0
	defaultMinGainMargin  = 0.0

	// defaultForm is control.form: a PID, the usual structure of a
	// multirotor rate loop (common practice); the integral removes the
	// steady-state error under a constant disturbance torque.
	defaultForm = FormPID

	// defaultRefine is control.refine: let the designer refine the textbook
	// placement against the full-order loop, since the plant, sensor and
	// delay make the second-order estimates only approximate.
	defaultRefine = true

	// defaultThirdPole is control.third_pole (pid only): the third real
	// closed-loop pole sits five times as far from the imaginary axis as the
	// dominant pair, the usual rule for a negligible extra pole (Nise,
	// dominant-pole approximation, "five times farther"; from memory).
	defaultThirdPole = 5.0

	// defaultDerivativeLowpassDivisor gives control.derivative_lowpass_hz =
	// loop_hz / 8 (forms with a derivative). At fs/8 Tustin's frequency
	// warping, ωa = (2/T)·tan(ωT/2), moves the filter corner by
	// tan(π/8)/(π/8) − 1 ≈ 5.5 %, and the corner is a factor 4 below
	// Nyquist (Franklin, Powell, Workman, Digital Control of Dynamic
	// Systems, Tustin and prewarping; from memory), while the filter still
	// passes the loop's crossover, which sits well below fs/8 at the usual
	// sample rates of 10-40× the bandwidth (Åström, Wittenmark, Computer-
	// Controlled Systems; from memory).
	defaultDerivativeLowpassDivisor = 8.0

	// defaultDerivativeOnError is control.derivative_on = "measurement":
	// the derivative of the measurement instead of the error, which avoids
	// the derivative kick on setpoint steps (Åström, Hägglund, Advanced PID
	// Control; from memory).
	defaultDerivativeOnError = false

	// defaultSetpointWeight is control.setpoint_weight when absent: b = 1,
	// the plain error-feedback PID; SetpointWeightSet stays false so that
	// refinement may choose b (Åström, Hägglund, setpoint weighting).
	defaultSetpointWeight = 1.0

	// defaultOutputLow and defaultOutputHigh are control.output_limit: a
	// command normalized to ±1, the usual input range of a motor mixer
	// (common practice).
	defaultOutputLow  = -1.0
	defaultOutputHigh = 1.0

	// defaultAntiWindup is control.antiwindup: back-calculation, which
	// unwinds the integrator smoothly with the tracking time Tt instead of
	// freezing it (Åström, Hägglund, Advanced PID Control, integrator
	// windup; from memory).
	defaultAntiWindup = "backcalc"

	// defaultTrackingTime is control.tracking_time: 0 asks the designer for
	// the rule of thumb Tt ≈ √(Ti·Td) (Åström, Hägglund; from memory).
	defaultTrackingTime = 0.0

	// defaultDiscretize is control.discretize: Tustin, which maps the
	// stable half-plane onto the unit disc so that a stable continuous
	// controller stays stable (Franklin, Powell, Workman; common practice).
	defaultDiscretize = "tustin"

	// defaultPlantDelay is the plant's transport delay when absent: none,
	// the delay then being the compute delay alone.
	defaultPlantDelay = 0.0

	// defaultFullScale is numeric.input_full_scale and output_full_scale
	// when absent with a float type: 0, "not given" (Numeric).
	// The fixed-point types require both.
	defaultFullScale = 0.0

	// defaultMaxSensitivity is spec.max_sensitivity, the bound on
	// Ms = max |1/(1 + L(jω))|. The trade's usual range is 1.2-2.0, with
	// 1.4 a conservative and 2.0 an aggressive choice (Åström, Hägglund,
	// Advanced PID Control, ISA 2006, robustness measured by Ms; from
	// memory); 1.7 sits between. It guarantees GM ≥ Ms/(Ms − 1) = 2.43
	// (7.7 dB) and PM ≥ 2·asin(1/(2·Ms)) = 34.2° (Skogestad, Postlethwaite,
	// Multivariable Feedback Control; from memory), so it also keeps a
	// loop with no margin requirement away from the edge of stability.
	defaultMaxSensitivity = 1.7

	// defaultDisturbanceFraction gives spec.disturbance_step =
	// 0.1 · max(|low|, |high|) of control.output_limit: a load a tenth of
	// the actuator's authority, which the loop can cancel with most of the
	// command range left, so the check sees the linear recovery rather
	// than saturation. The figure is this tool's choice, not a standard.
	defaultDisturbanceFraction = 0.1

	// defaultDisturbanceRecovery is spec.disturbance_recovery when absent:
	// 0, not checked (the response is still reported).
	defaultDisturbanceRecovery = 0.0

	// defaultMaxNoiseGain is spec.max_noise_gain when absent: 0, which asks
	// the design for its default bound (Spec).
	defaultMaxNoiseGain = 0.0

	// defaultGainScaleLow and defaultGainScaleHigh are envelope.gain_scale:
	// ±10 % on the plant's gain, since battery sag and payload move a
	// multirotor's control effectiveness by 10 % or more (common practice).
	defaultGainScaleLow  = 0.9
	defaultGainScaleHigh = 1.1

	// defaultLagScaleLow and defaultLagScaleHigh are envelope.lag_scale:
	// the nominal lag only. There is no figure for how much a motor's time
	// constant varies that holds across vehicles, so the lag moves only
	// when the file says by how much.
	defaultLagScaleLow  = 1.0
	defaultLagScaleHigh = 1.0

	// defaultDelayAddLow and defaultDelayAddHigh are envelope.delay_add:
	// the plant's delay as stated, for the same reason as the lag.
	defaultDelayAddLow  = 0.0
	defaultDelayAddHigh = 0.0
)

// derivativeOnName is the control.derivative_on spelling of
// defaultDerivativeOnError.
func derivativeOnName(onError bool) string {
	if onError {
		return "error"
	}
	return "measurement"
}

// defaultZeros is the zeros list of a zpk plant or sensor when absent: none.
// Roots lists that are empty are nil throughout, so that an absent list and
// an empty one decode to the same value.
func defaultZeros() []complex128 { return nil }

// idealSensor is the sensor when [sensor] is absent: the measured rate is
// the true rate (unit gain, no dynamics).
func idealSensor() lti.ZPK { return lti.ZPK{Gain: 1} }

// defaultDerivativeLowpassHz is control.derivative_lowpass_hz for a form
// with a derivative; see defaultDerivativeLowpassDivisor.
func defaultDerivativeLowpassHz(loopHz float64) float64 {
	return loopHz / defaultDerivativeLowpassDivisor
}

// defaultIntegratorLimit is control.integrator_limit for a form with an
// integral: max(|low|, |high|), so that the integral term alone can drive
// the command to either limit but not wind up beyond it (common practice).
func defaultIntegratorLimit(outputLimit [2]float64) float64 {
	return maxCommand(outputLimit)
}

// defaultMaxSteadyError is spec.max_steady_error: the settling band. A
// step whose final value is off by more than the band never settles into
// it, so settling_time already implies this bound; the default states it
// as a check of its own (and a looser band loosens it with it).
func defaultMaxSteadyError(band float64) float64 { return band }

// defaultHoldRate is spec.hold_rate: numeric.input_full_scale when it is
// given, the largest setpoint the generated code can represent and so the
// largest one the loop can be asked to hold; else 0, "not asked" (Spec).
func defaultHoldRate(inputFullScale float64) float64 {
	if inputFullScale > 0 {
		return inputFullScale
	}
	return 0
}

// defaultDisturbanceStep is spec.disturbance_step for the axis's
// control.output_limit; see defaultDisturbanceFraction.
func defaultDisturbanceStep(outputLimit [2]float64) float64 {
	return defaultDisturbanceFraction * maxCommand(outputLimit)
}

// maxCommand is the larger magnitude of the command range,
// max(|low|, |high|).
func maxCommand(outputLimit [2]float64) float64 {
	return math.Max(math.Abs(outputLimit[0]), math.Abs(outputLimit[1]))
}

// defaultEnvelope is [axes.NAME.envelope] when absent; each of its keys
// defaults separately to its part of this value.
func defaultEnvelope() Envelope {
	return Envelope{
		GainScale: [2]float64{defaultGainScaleLow, defaultGainScaleHigh},
		LagScale:  [2]float64{defaultLagScaleLow, defaultLagScaleHigh},
		DelayAdd:  [2]float64{defaultDelayAddLow, defaultDelayAddHigh},
	}
}

// MaxFileBytes bounds the input: a hand-written airframe file is a few
// kilobytes; anything near a megabyte is the wrong file. A reader needs
// to read at most MaxFileBytes+1 bytes to know that a file is too long.
const MaxFileBytes = 1 << 20

// Bounds on the work one file can ask for. Each is far above what any
// vehicle needs and keeps the cost of a file, in time and memory, bounded
// whatever it says (README, "Limits").
const (
	// MaxAxes is the most [axes.NAME] tables of a file: a multirotor has
	// three rate loops, a gimbal two or three, a manipulator a joint
	// each; 64 leaves room for any of them. The design's time and
	// memory grow with the axes of a file, which are designed and held
	// together.
	MaxAxes = 64

	// maxKeysPerAxis is the number of keys the schema allows in one
	// [axes.NAME] table and its tables (plant 6, sensor 4, spec 11,
	// control 12, envelope 3, and the 5 tables themselves: 41; MaxFilters
	// filter tables of 7 keys and a header each: 32), rounded up.
	maxKeysPerAxis = 80

	// MaxKeys bounds the keys and table headers of a file, counted
	// before the TOML decoder runs: the decoder compares each key with
	// every key of its table, so a megabyte of keys (137 000 of them)
	// takes it half a minute; a valid file has at most MaxAxes axes of
	// maxKeysPerAxis keys and a few top-level ones.
	MaxKeys = MaxAxes*maxKeysPerAxis + 64

	// MaxErrors is the most problems listed per file; the rest are
	// counted. An author fixes the first few and runs again.
	MaxErrors = 100

	// MaxDelaySamples bounds the delay of the sampled loop in samples,
	// compute_delay + (plant.delay + the high end of envelope.delay_add)
	// · loop_hz: a candidate of the search costs time linear in the
	// delay, but the final verification's closed-loop poles are the
	// eigenvalues of a matrix with one state per sample of delay, whose
	// cost is the cube of the states. At both limits an axis designs in
	// about 1 s of CPU time on the project's two-core machine (README,
	// "Limits", with the measurements). A rate loop's delay is a few
	// samples: 2-5 ms at 1-8 kHz is 2-40.
	MaxDelaySamples = 256

	// MaxHorizonSamples bounds the step responses the design simulates,
	// 8 · settling_time · loop_hz samples (and 8 · disturbance_recovery ·
	// loop_hz for the load step): the search simulates every candidate
	// controller at every plant of the envelope over that horizon, so its
	// cost grows with it. At both limits an axis designs in about 1 s
	// (README, "Limits"). A rate loop settles in tens to
	// hundreds of milliseconds: 0.15 s at 1 kHz is 1200 samples, 0.3 s at
	// 8 kHz 19 200.
	MaxHorizonSamples = 20000

	// MaxPlantPoles and MaxSensorPoles bound the order of the models (a
	// complex pair counts as 2): a rate loop's plant is a motor lag and an
	// integrator, with a structural mode or two; a gyro model a lowpass
	// or two. The cost of every closed-loop evaluation grows with the
	// order.
	MaxPlantPoles  = 12
	MaxSensorPoles = 6

	// MaxFilters bounds the [[axes.NAME.filter]] list of an axis: a rate
	// loop's chain is a lowpass and a notch or two (common practice);
	// four sections add at most 8 states to every closed-loop evaluation.
	MaxFilters = 4
)

// Sanity limits. Values beyond these are almost certainly typing errors (a
// missing decimal point, milliseconds written as seconds).
const (

	// maxLoopHz is the largest loop_hz: 1 MHz is far above any rate loop
	// (flight controllers run 0.25-8 kHz).
	maxLoopHz = 1e6

	// maxComputeDelay is the largest compute_delay in samples.
	maxComputeDelay = 4

	// maxDelay is the largest plant transport delay in seconds; a rate
	// loop with half a second of dead time is not what this tool designs.
	maxDelay = 0.5

	// maxSettlingBand bounds spec.settling_band: 20 % is already a loose
	// band; 2 % and 5 % are the usual ones.
	maxSettlingBand = 0.2

	// maxSensitivityBound is the largest spec.max_sensitivity: Ms = 4
	// guarantees only GM ≥ 4/3 (2.5 dB) and PM ≥ 2·asin(1/8) = 14.4°
	// (the bounds of defaultMaxSensitivity), which is no robustness
	// requirement any more. The lower bound is 1, exclusive: where the
	// loop gain has rolled off, |S| = |1/(1 + L)| → 1, so no loop has
	// Ms < 1, and Bode's sensitivity integral puts |S| above 1 somewhere
	// in a loop that does anything (Skogestad, Postlethwaite; from memory).
	maxSensitivityBound = 4.0

	// maxEnvelopeScale bounds the high end of envelope.gain_scale and
	// lag_scale, and its inverse the low end: a factor of ten on the
	// effectiveness or the motor lag, up or down, is a different vehicle,
	// not a tolerance, and 110 for 1.1 is a percentage typed as a factor.
	maxEnvelopeScale = 10.0

	// minDelay is the shortest nonzero transport delay, s: a thousandth
	// of the shortest sample period (loop_hz ≤ maxLoopHz), below which a
	// delay is rounding, and the arithmetic of its fraction of a sample
	// underflows.
	minDelay = 1e-9

	// maxPhaseMargin is the exclusive upper bound of min_phase_margin in
	// degrees: a loop with a phase margin of 90° or more is not a
	// requirement that can be traded against speed.
	maxPhaseMargin = 90.0

	// maxIdentLen is the longest airframe or axis name (the pattern
	// [a-z][a-z0-9_]{0,31}). Both prefix generated C identifiers, and C99
	// guarantees only 31 significant initial characters of an external
	// name and 63 of an internal one (5.2.4.1); 32 keeps each part short.
	// Whether a combined name such as <airframe>_<axis>_state fits is the
	// emitter's check, since only it knows the suffixes.
	maxIdentLen = 32

	// minFilterDamping and maxFilterDamping bound a second-order
	// lowpass's damping: below 0.1 the section is a resonator with a
	// peak of 14 dB and more, not a filter; above 2 it is two real poles
	// a decade apart, better written as two first-order sections.
	minFilterDamping = 0.1
	maxFilterDamping = 2.0

	// maxNotchDepth bounds a partial notch's depth_db: 120 dB is a
	// millionth, below float32's resolution of the measured rate; a
	// deeper notch is the full notch (omit depth_db).
	maxNotchDepth = 120.0
)

// Defaults of the keys of a [[axes.NAME.filter]] table.
const (
	// defaultFilterAt is filter.at: on the measured rate, the feedback
	// path (the usual place of a gyro filter chain; common practice).
	defaultFilterAt = FilterAtFeedback

	// defaultFilterOrder is a lowpass's order: 2, the usual gyro lowpass
	// (common practice), which rolls off at 40 dB per decade for
	// about twice the phase of a first-order section at its cutoff.
	defaultFilterOrder = 2

	// defaultFilterDamping is a second-order lowpass's damping: 1/√2,
	// the Butterworth section, maximally flat, −3 dB at its cutoff
	// (Oppenheim & Schafer; from memory).
	defaultFilterDamping = 0.7071067811865476
)
