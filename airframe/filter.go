package airframe

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"

	"locusmith/internal/lti"
)

// FilterKind names a section of the feedback filter chain.
type FilterKind string

// The filter kinds.
const (
	FilterLowpass FilterKind = "lowpass"
	FilterNotch   FilterKind = "notch"
)

// The places a filter of the list may sit.
const (
	// FilterAtFeedback is on the measured rate, before the controller:
	// every term of the controller sees the filtered rate.
	FilterAtFeedback = "feedback"
	// FilterAtDerivative is on the derivative term of a pd or pid alone,
	// after its first-order lowpass (control.derivative_lowpass_hz): the
	// derivative, which amplifies gyro noise most, is filtered harder
	// without the phase cost reaching the P and I terms.
	FilterAtDerivative = "derivative"
)

// Filter is one [[axes.NAME.filter]] table: a discrete section the
// measured rate runs through before the controller sees it. The sections
// of an axis run in file order.
type Filter struct {
	Kind FilterKind
	// At is where the filter sits: FilterAtFeedback (the measured rate;
	// in Axis.Filters) or FilterAtDerivative (the derivative term; in
	// Control.DerivativeFilters).
	At string
	// Hz is the lowpass cutoff or the notch centre.
	Hz float64
	// WidthHz is the notch's −3 dB width of the discrete filter as it
	// runs at loop_hz (the full notch with the same poles, for a partial
	// one); 0 for a lowpass.
	WidthHz float64
	// DepthDB is a partial notch's attenuation at the centre (dB > 0); 0
	// for a full notch (zeros on the unit circle) and for a lowpass.
	DepthDB float64
	// Order is the lowpass's order, 1 or 2; 0 for a notch.
	Order int
	// Damping is the second-order lowpass's damping ζ (1/√2: Butterworth);
	// 0 otherwise.
	Damping float64
	// AutoHz says that the file asked for hz = "auto". On a notch, Hz
	// (and WidthHz, unless the file gave it) were placed on a lightly
	// damped mode (see Axis.LightModes and NotchWidth). On a lowpass the
	// design chooses Hz as Goal asks (discrete.DesignAxis); until then Hz
	// is the top of the range it chooses from, AutoLowpassTop · loop_hz.
	AutoHz bool
	// Goal is what an automatic lowpass's cutoff is chosen for: GoalNoise
	// or GoalMargin; "" otherwise.
	Goal string
}

// The goals of a lowpass with hz = "auto". Either cutoff is the edge of
// the cutoffs whose design meets every check: a higher cutoff costs less
// phase at the crossover (so more load rejection and margin), a lower
// one passes less gyro noise to the command.
const (
	// GoalNoise takes the highest cutoff whose design meets every check,
	// spec.max_noise_gain among them: no more filtering than the noise
	// bound needs. The default when the spec gives max_noise_gain.
	GoalNoise = "noise"
	// GoalMargin takes the lowest cutoff whose design meets every check:
	// as much filtering as the margins, the step and the rest allow. The
	// default otherwise.
	GoalMargin = "margin"
)

// AutoLowpassTop is the top of the cutoffs a lowpass with hz = "auto" is
// chosen from, as a fraction of loop_hz: 0.9 × Nyquist, where a Tustin
// section still lands its cutoff where asked (prewarped) and its phase
// below the crossover is nearly that of a pure delay.
const AutoLowpassTop = 0.45

// AutoLowpassIndex returns the index in a.Filters of the lowpass with
// hz = "auto", or −1.
func (a Axis) AutoLowpassIndex() int {
	for i, f := range a.Filters {
		if f.Kind == FilterLowpass && f.AutoHz {
			return i
		}
	}
	return -1
}

// LightDamping is the damping below which a pole pair of the plant or the
// sensor is a lightly damped mode worth a notch: below ζ = 0.2 a mode
// shows as a resonance peak of 8 dB and more (1/(2ζ√(1−ζ²))), which a
// notch takes out at a small phase cost below its centre, where a lowpass
// low enough to take it out costs far more (common practice).
const LightDamping = 0.2

// Mode is a lightly damped pole pair: its natural frequency and damping,
// and whether it is the plant's (which the envelope's lag_scale moves)
// or the sensor's.
type Mode struct {
	Hz, Damping float64
	Plant       bool
}

// LightModes returns the pole pairs of the plant and the sensor with
// damping below LightDamping and natural frequency below maxHz, the most
// lightly damped first (the plant's before the sensor's at equal damping,
// then by frequency).
func (a Axis) LightModes(maxHz float64) []Mode {
	var ms []Mode
	for _, src := range []struct {
		poles []complex128
		plant bool
	}{{a.Plant.Model.Poles, true}, {a.Sensor.Poles, false}} {
		for _, r := range src.poles {
			w := lti.Abs(r)
			if imag(r) <= 0 || w == 0 {
				continue
			}
			z := -real(r) / w
			if f := w / (2 * math.Pi); z >= 0 && z < LightDamping && f < maxHz {
				ms = append(ms, Mode{Hz: f, Damping: z, Plant: src.plant})
			}
		}
	}
	slices.SortStableFunc(ms, func(x, y Mode) int {
		switch {
		case x.Damping != y.Damping:
			return cmp.Compare(x.Damping, y.Damping)
		case x.Plant != y.Plant:
			if x.Plant {
				return -1
			}
			return 1
		}
		return cmp.Compare(x.Hz, y.Hz)
	})
	return ms
}

// NotchWidth is the −3 dB width of a notch placed on mode m: 0.4·f (±20 %
// around the centre, wide enough for a model's error in the mode's
// frequency; common practice), or, for a plant mode that the envelope's
// lag_scale moves (every non-zero plant pole p to p/scale), 1.5 times the
// band it moves over when that is wider; kept below 0.9·f and so that the
// band stays below 0.9 × Nyquist. The result is rounded to three digits,
// as a file would give it.
func NotchWidth(m Mode, e Envelope, nyq float64) float64 {
	f := m.Hz
	w := 0.4 * f
	if m.Plant {
		e = e.Normalized()
		w = math.Max(w, 1.5*(f/e.LagScale[0]-f/e.LagScale[1]))
	}
	w = math.Min(w, math.Min(0.9*f, 1.8*(float64(0.9*nyq)-f)))
	return round3(w)
}

// round3 rounds x to three significant digits (through its decimal form,
// which strconv computes exactly, the same on every machine).
func round3(x float64) float64 {
	v, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 3, 64), 64)
	if err != nil {
		return x
	}
	return v
}

// Round3 is round3 for the design's suggestions.
func Round3(x float64) float64 { return round3(x) }

// Section returns the discrete section as the generated code runs it at
// the sample rate fs: Tustin prewarped at the cutoff or the centre
// (lti.Lowpass1, lti.Lowpass2, lti.Notch).
func (f Filter) Section(fs float64) (lti.Biquad, error) {
	switch f.Kind {
	case FilterLowpass:
		if f.Order == 1 {
			return lti.Lowpass1(f.Hz, fs)
		}
		return lti.Lowpass2(f.Hz, f.Damping, fs)
	case FilterNotch:
		return lti.Notch(f.Hz, f.WidthHz, f.depth(), fs)
	}
	return lti.Biquad{}, fmt.Errorf("%w: unknown filter kind %q", lti.ErrFilter, f.Kind)
}

// ZPK returns the continuous counterpart of the section, for the
// continuous-loop figures (lti.LowpassZPK, lti.NotchZPK).
func (f Filter) ZPK() (lti.ZPK, error) {
	switch f.Kind {
	case FilterLowpass:
		return lti.LowpassZPK(f.Hz, f.Damping, f.Order)
	case FilterNotch:
		return lti.NotchZPK(f.Hz, f.WidthHz, f.depth())
	}
	return lti.ZPK{}, fmt.Errorf("%w: unknown filter kind %q", lti.ErrFilter, f.Kind)
}

// depth is the depth in dB for lti.Notch: +Inf for a full notch.
func (f Filter) depth() float64 {
	if f.DepthDB == 0 {
		return math.Inf(1)
	}
	return f.DepthDB
}

// States returns the states of the section as the generated code holds
// them in transposed direct form II: 1 for a first-order lowpass, 2
// otherwise.
func (f Filter) States() int {
	if f.Kind == FilterLowpass && f.Order == 1 {
		return 1
	}
	return 2
}

// Describe is a short text of the filter for headers and reports:
// "notch 118 Hz, -3 dB width 30 Hz", "lowpass 180 Hz, order 2, damping
// 0.7071" (the damping to four digits).
func (f Filter) Describe() string {
	switch f.Kind {
	case FilterNotch:
		s := fmt.Sprintf("notch %g Hz, -3 dB width %g Hz", f.Hz, f.WidthHz)
		if f.AutoHz {
			s = fmt.Sprintf("notch %g Hz (auto), -3 dB width %g Hz", f.Hz, f.WidthHz)
		}
		if f.DepthDB > 0 {
			s += fmt.Sprintf(", depth %g dB", f.DepthDB)
		}
		return s
	case FilterLowpass:
		hz := fmt.Sprintf("lowpass %g Hz", f.Hz)
		if f.AutoHz {
			hz = fmt.Sprintf("lowpass %g Hz (auto, goal %s)", f.Hz, f.Goal)
		}
		if f.Order == 1 {
			return hz + ", order 1"
		}
		return fmt.Sprintf("%s, order 2, damping %.4g", hz, f.Damping)
	}
	return string(f.Kind)
}

// DerivativeZPK returns the continuous counterpart of the derivative
// filters in series, for the continuous controller: 1 (no poles, no
// zeros) without derivative filters, an error when one cannot be formed
// (which Parse rules out for a file; the design stages check it for an
// Axis built otherwise).
func (c Control) DerivativeZPK() (lti.ZPK, error) {
	out := lti.ZPK{Gain: 1}
	for i, f := range c.DerivativeFilters {
		z, err := f.ZPK()
		if err != nil {
			return lti.ZPK{}, fmt.Errorf("derivative filter %d: %w", i+1, err)
		}
		out.Gain *= z.Gain
		out.Zeros = append(out.Zeros, z.Zeros...)
		out.Poles = append(out.Poles, z.Poles...)
	}
	return out, nil
}

// DerivativeSections returns the discrete sections of the derivative
// filters at the sample rate fs, in the order they run (nil without any).
func (c Control) DerivativeSections(fs float64) ([]lti.Biquad, error) {
	var qs []lti.Biquad
	for i, f := range c.DerivativeFilters {
		q, err := f.Section(fs)
		if err != nil {
			return nil, fmt.Errorf("derivative filter %d: %w", i+1, err)
		}
		qs = append(qs, q)
	}
	return qs, nil
}

// FeedbackZPK returns the sensor in series with the continuous
// counterparts of the feedback filters: the measured path that the
// continuous-loop figures use.
func (a Axis) FeedbackZPK() (lti.ZPK, error) {
	h := a.Sensor
	if len(a.Filters) == 0 {
		return h, nil
	}
	out := lti.ZPK{Gain: h.Gain, Zeros: append([]complex128(nil), h.Zeros...), Poles: append([]complex128(nil), h.Poles...)}
	for i, f := range a.Filters {
		z, err := f.ZPK()
		if err != nil {
			return lti.ZPK{}, fmt.Errorf("filter[%d]: %w", i, err)
		}
		out.Gain *= z.Gain
		out.Zeros = append(out.Zeros, z.Zeros...)
		out.Poles = append(out.Poles, z.Poles...)
	}
	return out, nil
}

// Continuous returns the axis as the continuous design sees it: the
// filters' continuous counterparts moved into the sensor, no discrete
// filters left. An axis without filters is returned unchanged.
func (a Axis) Continuous() Axis {
	if len(a.Filters) == 0 {
		return a
	}
	h, err := a.FeedbackZPK()
	if err != nil {
		// Parse has checked every filter; an Axis built by hand with a
		// bad filter keeps its sensor and the discrete checks report it.
		return a
	}
	a.Sensor = h
	a.Filters = nil
	return a
}
