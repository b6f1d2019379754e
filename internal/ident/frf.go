package ident

import (
	"fmt"
	"math"

	"locusmith/internal/lti"
)

// Parts of the prepared samples (Result.Used).
const (
	PartFit  int8 = 1 // fitted
	PartHeld int8 = 2 // held out
)

// SegmentFor returns the Welch segment length for n samples at fs Hz: the
// power of two nearest fs/2 (a resolution of about 2 Hz: 512 at 1 kHz),
// which resolves a mode whose half-power band 2ζf is a few hertz wide
// (ζ = 0.03 at 40 Hz: 2.4 Hz; the mode fit models the window's smoothing
// for narrower ones), halved until the segments, overlapping by half,
// give at least 16 averages (the variance of an averaged estimate falls
// as 1/averages; 16 keeps a coherence of 0.5 at a relative standard error
// of about 18 %: Bendat & Piersol, Random Data, ch. 9, from memory), and
// never below 64. It returns 0 when n cannot give 16 averages of 64.
func SegmentFor(n int, fs float64) int {
	seg := 1 << int(math.Round(math.Log2(fs/2)))
	seg = max(seg, 64)
	for seg > 64 && 2*n/seg-1 < 16 {
		seg /= 2
	}
	if 2*n/seg-1 < 16 {
		return 0
	}
	return seg
}

// Spectra returns the Welch spectra of the samples of part (PartFit or
// PartHeld) of r: each contiguous stretch of the part (a segment between
// gaps, NaN rows and saturation) with at least seg samples is averaged
// on its own — a Welch segment never spans a break — and the stretches'
// averages are pooled, weighted by their numbers of segments. The
// excitation is used when the log has one. It returns an error when no
// stretch holds a segment.
func (r *Result) Spectra(part int8, seg int) (*Spectra, error) {
	fs := 1 / r.T
	var total *Spectra
	for a := 0; a < len(r.Used); {
		if r.Used[a] != part {
			a++
			continue
		}
		b := a + 1
		for b < len(r.Used) && r.Used[b] == part && !(r.Time[b]-r.Time[b-1] > 1.5*r.T) {
			b++
		}
		if b-a >= seg {
			var x []float64
			if r.Excitation != nil {
				x = r.Excitation[a:b]
			}
			s, err := Welch(r.Command[a:b], r.Measured[a:b], x, fs, seg)
			if err != nil {
				return nil, err
			}
			total = pool(total, s)
		}
		a = b
	}
	if total == nil {
		return nil, fmt.Errorf("%w: no stretch of %d samples without a break in this part of the log", ErrSpectra, seg)
	}
	return total, nil
}

// pool returns the average of a and b weighted by their segment counts.
func pool(a, b *Spectra) *Spectra {
	if a == nil {
		return b
	}
	wa := float64(a.Averages) / float64(a.Averages+b.Averages)
	wb := 1 - wa
	mix := func(x, y []float64) {
		for k := range x {
			x[k] = wa*x[k] + wb*y[k]
		}
	}
	mixc := func(x, y []complex128) {
		for k := range x {
			x[k] = complex(wa, 0)*x[k] + complex(wb, 0)*y[k]
		}
	}
	mix(a.Uu, b.Uu)
	mix(a.Yy, b.Yy)
	mixc(a.Uy, b.Uy)
	if a.Rr != nil {
		mix(a.Rr, b.Rr)
		mixc(a.Ru, b.Ru)
		mixc(a.Ry, b.Ry)
	}
	a.Averages += b.Averages
	return a
}

// Model returns the identified low-order model as a continuous zpk,
// command to measured rate: effectiveness/(s·(motor_tau·s + 1)), times
// ωs/(s + ωs) with the gyro lowpass when one was fitted (the delay apart,
// Result.Delay).
func (r *Result) Model() lti.ZPK {
	tau := r.MotorTau.Value
	z := lti.ZPK{Gain: r.Effectiveness.Value / tau, Poles: []complex128{0, complex(-1/tau, 0)}}
	if r.LowpassHz != nil {
		ws := 2 * math.Pi * r.LowpassHz.Value
		z.Gain *= ws
		z.Poles = append(z.Poles, complex(-ws, 0))
	}
	return z
}

// PlantZPK returns the airframe plant (command to true rate, sensor
// apart) with the modes: effectiveness/(s·(motor_tau·s + 1)) times each
// mode's unit-DC-gain factor ωp²/(s² + 2ζp·ωp·s + ωp²), times
// (s² + 2ζz·ωz·s + ωz²)/ωz² when it has a zero pair — the model FitModes
// fitted, in the airframe's zpk form.
func (r *Result) PlantZPK(modes []Mode) lti.ZPK {
	tau := r.MotorTau.Value
	z := lti.ZPK{Gain: r.Effectiveness.Value / tau, Poles: []complex128{0, complex(-1/tau, 0)}}
	for _, m := range modes {
		wp := 2 * math.Pi * m.Hz.Value
		z.Gain *= wp * wp
		z.Poles = append(z.Poles, rootsOfPair(wp, m.Damping.Value)...)
		if m.ZeroHz != nil {
			wz := 2 * math.Pi * m.ZeroHz.Value
			z.Gain /= wz * wz
			z.Zeros = append(z.Zeros, rootsOfPair(wz, m.ZeroDamping.Value)...)
		}
	}
	return z
}
