package ident

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"locusmith/internal/lti"
)

// ModeReport is the frequency-response estimate of a log and the modes
// fitted on top of its low-order model.
type ModeReport struct {
	// Fit and Held are the estimates of the fitted and the held-out part
	// (Held nil when the held-out part holds no segment).
	Fit  Estimate
	Held *Estimate
	// Segment is the Welch segment length (SegmentFor).
	Segment int
	Modes   []Mode
	// Notes say why candidates were not kept.
	Notes []string
	// DelayCorr and GainCorr are the mode fit's correction of the
	// low-order model's delay (s, added) and gain (a factor): with the
	// modes the plant is GainCorr·PlantZPK(Modes) with the delay
	// Delay + DelayCorr (ModeFit).
	DelayCorr, GainCorr float64
}

// FitModes estimates the frequency response of the fitted and the
// held-out part of r's log (Result.Spectra, segment SegmentFor of the
// fitted part) and fits up to maxModes modes on top of r's low-order
// model, its delay and sample period (FitModes).
func (r *Result) FitModes(maxModes int) (mr *ModeReport, err error) {
	defer func() {
		// A panic below is a bug; it must not take the caller down.
		if p := recover(); p != nil {
			mr, err = nil, fmt.Errorf("modes: %w: %v", ErrInternal, p)
		}
	}()
	n := 0
	for _, u := range r.Used {
		if u == PartFit {
			n++
		}
	}
	seg := SegmentFor(n, 1/r.T)
	if seg == 0 {
		return nil, fmt.Errorf("%w: %d fitted samples cannot give 16 averaged segments of 64", ErrSpectra, n)
	}
	s, err := r.Spectra(PartFit, seg)
	if err != nil {
		return nil, err
	}
	mr = &ModeReport{Fit: Estimate{s.Response(), s.Averages}, Segment: seg}
	if h, err := r.Spectra(PartHeld, seg); err == nil {
		mr.Held = &Estimate{h.Response(), h.Averages}
	} else {
		mr.Notes = append(mr.Notes, "no held-out check of the modes: the held-out part holds no stretch of "+fmt.Sprint(seg)+" samples")
	}
	mf, err := FitModesDetail(mr.Fit, mr.Held, ModeOptions{Plant: r.Model(), Delay: r.Delay.Value, T: r.T, MaxModes: maxModes})
	if err != nil {
		return nil, err
	}
	mr.Modes, mr.DelayCorr, mr.GainCorr = mf.Modes, mf.DelayCorr, mf.GainCorr
	mr.Notes = append(mr.Notes, mf.Notes...)
	return mr, nil
}

// ModalPlant returns the airframe plant with the modes (command to true
// rate, sensor apart) and its delay: r.PlantZPK(Modes) with the mode
// fit's gain and delay corrections (a low-order fit of a log with a mode
// takes part of the mode's phase for delay; with the mode modelled, that
// part goes back), the delay not below 0.
func (mr *ModeReport) ModalPlant(r *Result) (lti.ZPK, float64) {
	z := r.PlantZPK(mr.Modes)
	if mr.GainCorr > 0 {
		z.Gain *= mr.GainCorr
	}
	return z, math.Max(0, r.Delay.Value+mr.DelayCorr)
}

// CrossoverEstimate is the crossover the notch suggestions are judged
// against when none is given: 1/(2π·(motor_tau + delay + 1/ωs)) Hz, the
// corner of the plant's lags taken together (ωs: the gyro lowpass when
// fitted). A rate loop's PID crosses over near it: the design of
// examples/quadrotor.toml (motor_tau 30 ms, delay 2 ms: 5.0 Hz here)
// crosses at 42.2 rad/s = 6.7 Hz.
func (r *Result) CrossoverEstimate() float64 {
	lag := r.MotorTau.Value + r.Delay.Value
	if r.LowpassHz != nil {
		lag += 1 / (2 * math.Pi * r.LowpassHz.Value)
	}
	return 1 / (2 * math.Pi * lag)
}

// NotchWidth is the width_hz suggested for a mode: the wider of its
// half-power band 2ζf and its 95 % frequency interval (a notch narrower
// than the interval may miss the true mode), to three digits, at most
// 0.9 × the centre (the airframe file's bound is below the centre).
func NotchWidth(m Mode) float64 {
	w := math.Max(2*m.Damping.Value*m.Hz.Value, m.Hz.Hi-m.Hz.Lo)
	return round3(math.Min(w, 0.9*m.Hz.Value))
}

func round3(v float64) float64 {
	x, _ := strconv.ParseFloat(strconvG(v, 3), 64)
	return x
}

// TOML returns the frequency-response and mode section: comments saying
// which estimator made the estimate and why, each mode with its 95 %
// intervals and, when modes are kept, the zpk plant with them as a
// commented alternative [axes.AXIS.plant] and a [[axes.AXIS.filter]]
// notch for each mode within a decade above crossoverHz (between
// crossoverHz and 10·crossoverHz, the band where the design suggests a
// notch too; crossoverFrom says where crossoverHz came from). A notch
// whose band reaches 0.45 × the log's sample rate is commented out: it
// would not fit below the Nyquist frequency of a loop at that rate.
func (mr *ModeReport) TOML(axis string, r *Result, crossoverHz float64, crossoverFrom string) string {
	var b strings.Builder
	c := func(format string, a ...any) { fmt.Fprintf(&b, "# "+format+"\n", a...) }
	fs := 1 / r.T
	c("Frequency response: %s, from Welch-averaged spectra (%d-sample Hann segments,", mr.Fit.Method, mr.Segment)
	c("  %s Hz resolution, %d averages on the fitted part).", strconvG(fs/float64(mr.Segment), 3), mr.Fit.Averages)
	if r.Excitation == nil {
		c("  Open-loop estimator (no --excitation): in a closed-loop log the command answers the")
		c("  rate's noise and H1 is biased towards the controller's inverse; give the injected")
		c("  excitation's column with --excitation for such a log.")
	} else {
		c("  Closed-loop estimator: the ratio of the transfers from the injected excitation to")
		c("  the rate and to the command, unbiased by the loop's feedback of noise.")
	}
	if len(mr.Modes) == 0 {
		c("Modes: none kept above the low-order model (notes on stderr).")
		return b.String()
	}
	c("Modes above the low-order model, estimate [95 %% interval]:")
	for i, m := range mr.Modes {
		line := fmt.Sprintf("  mode %d: %s Hz [%s, %s], damping %s [%s, %s]", i+1,
			strconvG(m.Hz.Value, 4), strconvG(m.Hz.Lo, 4), strconvG(m.Hz.Hi, 4),
			strconvG(m.Damping.Value, 3), strconvG(m.Damping.Lo, 3), strconvG(m.Damping.Hi, 3))
		if m.ZeroHz != nil {
			line += fmt.Sprintf("; zero pair %s Hz [%s, %s], damping %s [%s, %s]",
				strconvG(m.ZeroHz.Value, 4), strconvG(m.ZeroHz.Lo, 4), strconvG(m.ZeroHz.Hi, 4),
				strconvG(m.ZeroDamping.Value, 3), strconvG(m.ZeroDamping.Lo, 3), strconvG(m.ZeroDamping.Hi, 3))
		}
		c("%s", line)
		held := "no held-out check"
		if !math.IsNaN(m.Held) {
			held = fmt.Sprintf("held out: χ² %s %% lower with it", strconvG(100*m.Held, 3))
		}
		c("    χ² falls by %s with it on the fitted part (kept above %s); %s.", strconvG(m.Drop, 4), strconvG(modeChi2, 3), held)
	}
	z, delay := mr.ModalPlant(r)
	c("The plant with the modes, the airframe's zpk form (an alternative to the")
	c("physical [axes.%s.plant] above: uncomment it in its place; the sensor stays).", axis)
	c("With the modes modelled the fit moves the delay by %s ms and the gain by ×%s", strconvG(1e3*mr.DelayCorr, 3), strconvG(mr.GainCorr, 4))
	c("(a low-order fit takes part of a mode's phase for delay):")
	c("[axes.%s.plant]", axis)
	c("gain = %s", tomlFloat(z.Gain, 6))
	c("poles = %s", rootsTOML(z.Poles))
	c("zeros = %s", rootsTOML(z.Zeros))
	c("delay = %s", tomlFloat(delay, valueDigits(r.Delay)))
	c("Notches: a mode from the crossover %s Hz (%s) to a decade above it gets one,", strconvG(crossoverHz, 3), crossoverFrom)
	c("  width_hz the wider of 2·damping·hz and the 95 %% interval; the design verifies it.")
	for _, m := range mr.Modes {
		f := round3(m.Hz.Value)
		switch {
		case m.Hz.Value < crossoverHz:
			c("  no notch for %s Hz: below the crossover, a notch there would cost the loop its phase.", strconvG(f, 3))
			continue
		case m.Hz.Value > 10*crossoverHz:
			c("  no notch for %s Hz: more than a decade above the crossover, the loop's gain there is low.", strconvG(f, 3))
			continue
		}
		w := NotchWidth(m)
		pre := ""
		if f+w/2 >= 0.45*fs {
			c("  the notch for %s Hz reaches 0.45 × the log's rate: it needs a loop rate above %s Hz.", strconvG(f, 3), strconvG(2*(f+w/2), 3))
			pre = "# "
		}
		fmt.Fprintf(&b, "\n%s[[axes.%s.filter]]\n%skind = \"notch\"\n%sat = \"feedback\"\n%shz = %s\n%swidth_hz = %s\n",
			pre, axis, pre, pre, pre, tomlFloat(f, 3), pre, tomlFloat(w, 3))
	}
	return b.String()
}

// rootsTOML writes roots in the airframe's form: real numbers, and each
// complex pair once as [re, im] with im > 0.
func rootsTOML(rs []complex128) string {
	var parts []string
	for _, p := range rs {
		switch {
		case imag(p) < 0:
			continue
		case imag(p) == 0:
			parts = append(parts, tomlFloat(real(p), 6))
		default:
			parts = append(parts, "["+tomlFloat(real(p), 6)+", "+tomlFloat(imag(p), 6)+"]")
		}
	}
	return "[" + strings.Join(parts, ", ") + "]"
}
