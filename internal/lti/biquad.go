package lti

import (
	"errors"
	"fmt"
	"math"
)

// Biquad is a discrete second-order section in the form firmware runs it,
//
//	H(z) = (B0 + B1·z⁻¹ + B2·z⁻²) / (1 + A1·z⁻¹ + A2·z⁻²),
//
// with the leading denominator coefficient normalized to 1. A first-order
// section has B2 = A2 = 0.
type Biquad struct {
	B0, B1, B2 float64
	A1, A2     float64
}

// Eval returns H(z).
func (q Biquad) Eval(z complex128) complex128 {
	zi := Div(1, z)
	num := complex(q.B0, 0) + Mul(zi, complex(q.B1, 0)+Mul(zi, complex(q.B2, 0)))
	den := 1 + Mul(zi, complex(q.A1, 0)+Mul(zi, complex(q.A2, 0)))
	return cdiv(num, den)
}

// At returns the frequency response at hz for the sample rate fs:
// H(e^{jωT}) with ω = 2π·hz and T = 1/fs.
func (q Biquad) At(hz, fs float64) complex128 {
	return q.Eval(Cis(2 * math.Pi * hz / fs))
}

// DC returns H(1), the gain at zero frequency.
func (q Biquad) DC() float64 {
	return (q.B0 + q.B1 + q.B2) / (1 + q.A1 + q.A2)
}

// Stable reports whether both poles lie strictly inside the unit circle:
// for 1 + A1·z⁻¹ + A2·z⁻² the Jury conditions |A2| < 1 and |A1| < 1 + A2
// (Franklin, Powell & Workman, Digital Control of Dynamic Systems,
// the second-order stability triangle; from memory).
func (q Biquad) Stable() bool {
	return math.Abs(q.A2) < 1 && math.Abs(q.A1) < 1+q.A2
}

// ErrFilter is returned for a filter that cannot be realized at the given
// sample rate; the message says which value and what is allowed.
var ErrFilter = errors.New("lti: filter not realizable")

// prewarp returns Ω = tan(π·hz/fs), the bilinear (Tustin) image of the
// frequency hz: with s/ω = (1/Ω)·(z − 1)/(z + 1), the analog frequency ω
// lands exactly at hz on the unit circle (Oppenheim & Schafer,
// Discrete-Time Signal Processing, bilinear transformation with
// frequency prewarping; from memory).
func prewarp(hz, fs float64) (float64, error) {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return 0, fmt.Errorf("%w: sample rate %g Hz must be positive and finite", ErrFilter, fs)
	}
	if !(hz > 0 && hz < fs/2) {
		return 0, fmt.Errorf("%w: frequency %g Hz must be in (0, %g) Hz, below the Nyquist frequency", ErrFilter, hz, fs/2)
	}
	return Tan(math.Pi * hz / fs), nil
}

// Lowpass1 is the first-order lowpass 1/(s/ω + 1) with its cutoff at hz,
// discretized by Tustin prewarped at the cutoff, so that its gain at hz
// is exactly 1/√2 at the sample rate fs: with Ω = tan(π·hz/fs),
//
//	B0 = B1 = Ω/(1 + Ω),  A1 = (Ω − 1)/(1 + Ω).
func Lowpass1(hz, fs float64) (Biquad, error) {
	w, err := prewarp(hz, fs)
	if err != nil {
		return Biquad{}, err
	}
	a0 := 1 + w
	return Biquad{B0: w / a0, B1: w / a0, A1: (w - 1) / a0}, nil
}

// Lowpass2 is the second-order lowpass ω²/(s² + 2ζω·s + ω²) with ω at hz
// and damping zeta (1/√2: Butterworth, −3 dB at hz), discretized by Tustin
// prewarped at hz, so that the response at hz is that of the analog
// filter at ω (for ζ = 1/√2, exactly −3 dB): with Ω = tan(π·hz/fs) and
// a0 = 1 + 2ζΩ + Ω²,
//
//	B0 = B2 = Ω²/a0,  B1 = 2Ω²/a0,  A1 = 2(Ω² − 1)/a0,  A2 = (1 − 2ζΩ + Ω²)/a0.
func Lowpass2(hz, zeta, fs float64) (Biquad, error) {
	w, err := prewarp(hz, fs)
	if err != nil {
		return Biquad{}, err
	}
	if !(zeta > 0) || math.IsInf(zeta, 0) {
		return Biquad{}, fmt.Errorf("%w: damping %g must be positive and finite", ErrFilter, zeta)
	}
	w2 := float64(w * w)
	a0 := 1 + float64(2*zeta*w) + w2
	return Biquad{
		B0: w2 / a0, B1: 2 * w2 / a0, B2: w2 / a0,
		A1: 2 * (w2 - 1) / a0, A2: (1 - float64(2*zeta*w) + w2) / a0,
	}, nil
}

// NotchDamping returns the pole damping ζp of the analog notch that,
// discretized by Tustin prewarped at its centre hz, has a −3 dB width of
// exactly widthHz at the sample rate fs (the width of the discrete
// filter, not of the analog prototype):
//
//	ζp = tan(π·widthHz/fs) / sin(2π·hz/fs).
//
// The discrete full notch is then the second-order notch of Orfanidis,
// Introduction to Signal Processing, §11.3 (the design SciPy's
// signal.iirnotch implements), from memory. The width must be positive
// and the −3 dB band must lie within (0, fs/2).
func NotchDamping(hz, widthHz, fs float64) (float64, error) {
	if _, err := prewarp(hz, fs); err != nil {
		return 0, err
	}
	if !(widthHz > 0) || widthHz >= fs/2 {
		return 0, fmt.Errorf("%w: notch width %g Hz must be in (0, %g) Hz", ErrFilter, widthHz, fs/2)
	}
	return Tan(math.Pi*widthHz/fs) / Sin(2*math.Pi*hz/fs), nil
}

// Notch is the notch (s² + 2ζz·ω·s + ω²)/(s² + 2ζp·ω·s + ω²) centred at
// hz, with ζp from NotchDamping (the discrete filter's −3 dB width is
// widthHz when the notch is full) and ζz = D·ζp for a centre gain D =
// 10^(−depthDB/20) (depthDB = +Inf: a full notch, zeros on the unit
// circle), discretized by Tustin prewarped at hz, so that the centre and
// its gain D land exactly at hz. With Ω = tan(π·hz/fs) and a0 = 1 +
// 2ζp·Ω + Ω²,
//
//	B0 = (1 + 2ζz·Ω + Ω²)/a0,  B1 = A1 = 2(Ω² − 1)/a0,
//	B2 = (1 − 2ζz·Ω + Ω²)/a0,  A2 = (1 − 2ζp·Ω + Ω²)/a0.
//
// A partial notch keeps the poles of the full one: its width is that of
// the full notch with the same poles.
func Notch(hz, widthHz, depthDB, fs float64) (Biquad, error) {
	zp, err := NotchDamping(hz, widthHz, fs)
	if err != nil {
		return Biquad{}, err
	}
	if !(depthDB > 0) {
		return Biquad{}, fmt.Errorf("%w: notch depth %g dB must be positive", ErrFilter, depthDB)
	}
	zz := 0.0
	if !math.IsInf(depthDB, 1) {
		zz = zp * Pow(10, -depthDB/20)
	}
	w, _ := prewarp(hz, fs)
	w2 := float64(w * w)
	a0 := 1 + float64(2*zp*w) + w2
	return Biquad{
		B0: (1 + float64(2*zz*w) + w2) / a0, B1: 2 * (w2 - 1) / a0, B2: (1 - float64(2*zz*w) + w2) / a0,
		A1: 2 * (w2 - 1) / a0, A2: (1 - float64(2*zp*w) + w2) / a0,
	}, nil
}

// LowpassZPK is the continuous counterpart of Lowpass1 (order 1) or
// Lowpass2 (order 2): the analog filter with ω = 2π·hz, unit DC gain.
func LowpassZPK(hz, zeta float64, order int) (ZPK, error) {
	if !(hz > 0) || math.IsInf(hz, 0) {
		return ZPK{}, fmt.Errorf("%w: cutoff %g Hz must be positive and finite", ErrFilter, hz)
	}
	w := 2 * math.Pi * hz
	switch order {
	case 1:
		return ZPK{Gain: w, Poles: []complex128{complex(-w, 0)}}, nil
	case 2:
		if !(zeta > 0) || math.IsInf(zeta, 0) {
			return ZPK{}, fmt.Errorf("%w: damping %g must be positive and finite", ErrFilter, zeta)
		}
		return ZPK{Gain: w * w, Poles: pair(w, zeta)}, nil
	}
	return ZPK{}, fmt.Errorf("%w: order %d must be 1 or 2", ErrFilter, order)
}

// NotchZPK is the continuous counterpart of Notch: centre ω = 2π·hz,
// poles with ζp = widthHz/(2·hz) (the analog −3 dB width 2ζp·ω equals
// widthHz; it differs from the discrete filter's by the warping of the
// band edges, well under a per cent below a tenth of the sample rate),
// zeros with ζz = D·ζp, unit gain away from the centre.
func NotchZPK(hz, widthHz, depthDB float64) (ZPK, error) {
	if !(hz > 0) || math.IsInf(hz, 0) || !(widthHz > 0) || math.IsInf(widthHz, 0) {
		return ZPK{}, fmt.Errorf("%w: notch at %g Hz, width %g Hz: both must be positive and finite", ErrFilter, hz, widthHz)
	}
	if !(depthDB > 0) {
		return ZPK{}, fmt.Errorf("%w: notch depth %g dB must be positive", ErrFilter, depthDB)
	}
	w := 2 * math.Pi * hz
	zp := widthHz / (2 * hz)
	zz := 0.0
	if !math.IsInf(depthDB, 1) {
		zz = zp * Pow(10, -depthDB/20)
	}
	return ZPK{Gain: 1, Zeros: pair(w, zz), Poles: pair(w, zp)}, nil
}

// pair returns the roots of s² + 2ζω·s + ω² (ω > 0, ζ ≥ 0).
func pair(w, zeta float64) []complex128 {
	if zeta >= 1 {
		r := float64(w * math.Sqrt(float64(zeta*zeta)-1))
		return []complex128{complex(float64(-zeta*w)-r, 0), complex(float64(-zeta*w)+r, 0)}
	}
	im := w * math.Sqrt(1-float64(zeta*zeta))
	return []complex128{complex(-zeta*w, im), complex(-zeta*w, -im)}
}
