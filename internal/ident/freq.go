package ident

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Spectra are Welch-averaged auto- and cross-spectral densities of an
// input u, an output y and, for a closed-loop log, an injected excitation
// r, one-sided, on the frequencies Hz (0 to fs/2 by fs/Segment).
//
// Method (Welch, "The use of fast Fourier transform for the estimation of
// power spectra", IEEE Trans. Audio Electroacoust. 15, 1967; Bendat &
// Piersol, Random Data, ch. 9, from memory): the records are cut into
// segments of Segment samples overlapping by half, each segment's mean is
// removed and it is multiplied by a periodic Hann window, and the
// products of their discrete Fourier transforms are averaged:
//
//	Pab(f) = 2 · Σₖ conj(Aₖ(f))·Bₖ(f) / (K · fs · Σ w²),
//
// not doubled at 0 and at fs/2 — the conventions of SciPy's
// signal.welch and signal.csd with their defaults (scaling "density",
// detrend "constant"), which the tests check.
type Spectra struct {
	Hz       []float64
	Segment  int // samples per segment
	Averages int // segments averaged
	Uu, Yy   []float64
	Uy       []complex128 // conj(U)·Y
	// Closed loop only (nil without an excitation).
	Rr     []float64
	Ru, Ry []complex128 // conj(R)·U, conj(R)·Y
}

// FreqResponse is an estimate of the plant's frequency response from u
// to y with its coherence, the fraction of the output power explained
// linearly by the signal the estimate is referred to (1: all of it; noise,
// nonlinearity and leakage lower it).
type FreqResponse struct {
	Hz        []float64
	H         []complex128
	Coherence []float64
	// Method says which estimator made it: "open loop, H1 = Puy/Puu"
	// or "closed loop, indirect: H = Pry/Pru".
	Method string
}

// ErrSpectra is returned when the records cannot give an estimate; the
// message says why.
var ErrSpectra = errors.New("frequency response")

// Welch returns the spectra of u and y (and of the excitation r when it
// is not nil; it must then have their length) from segments of seg
// samples (a power of two from 16) at the sample rate fs.
func Welch(u, y, r []float64, fs float64, seg int) (*Spectra, error) {
	n := len(u)
	switch {
	case len(y) != n || r != nil && len(r) != n:
		return nil, fmt.Errorf("%w: the records have %d, %d and %d samples: they must have the same length", ErrSpectra, len(u), len(y), len(r))
	case !(fs > 0) || math.IsInf(fs, 0):
		return nil, fmt.Errorf("%w: sample rate %g Hz: must be positive and finite", ErrSpectra, fs)
	case seg < 16 || seg&(seg-1) != 0:
		return nil, fmt.Errorf("%w: segment of %d samples: must be a power of two of at least 16", ErrSpectra, seg)
	case n < seg:
		return nil, fmt.Errorf("%w: %d samples, fewer than one segment of %d", ErrSpectra, n, seg)
	}
	for i := range n {
		if math.IsNaN(u[i]+y[i]) || math.IsInf(u[i]+y[i], 0) || r != nil && (math.IsNaN(r[i]) || math.IsInf(r[i], 0)) {
			return nil, fmt.Errorf("%w: sample %d is not finite", ErrSpectra, i)
		}
	}
	nf := seg/2 + 1
	s := &Spectra{Segment: seg, Hz: make([]float64, nf), Uu: make([]float64, nf), Yy: make([]float64, nf), Uy: make([]complex128, nf)}
	if r != nil {
		s.Rr, s.Ru, s.Ry = make([]float64, nf), make([]complex128, nf), make([]complex128, nf)
	}
	for k := range nf {
		s.Hz[k] = float64(k) * fs / float64(seg)
	}
	// The periodic Hann window (SciPy's get_window("hann", n), fftbins
	// True): w[i] = 0.5 − 0.5·cos(2πi/n).
	w := make([]float64, seg)
	var w2 float64
	for i := range w {
		w[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(seg))
		w2 += w[i] * w[i]
	}
	fft := fourier.NewFFT(seg)
	buf := make([]float64, seg)
	var U, Y, R []complex128
	transform := func(x []float64, dst []complex128) []complex128 {
		var m float64
		for _, v := range x {
			m += v
		}
		m /= float64(len(x))
		for i, v := range x {
			buf[i] = (v - m) * w[i]
		}
		return fft.Coefficients(dst, buf)
	}
	step := seg / 2
	for at := 0; at+seg <= n; at += step {
		U = transform(u[at:at+seg], U)
		Y = transform(y[at:at+seg], Y)
		for k := range nf {
			s.Uu[k] += real(U[k])*real(U[k]) + imag(U[k])*imag(U[k])
			s.Yy[k] += real(Y[k])*real(Y[k]) + imag(Y[k])*imag(Y[k])
			s.Uy[k] += cmplx.Conj(U[k]) * Y[k]
		}
		if r != nil {
			R = transform(r[at:at+seg], R)
			for k := range nf {
				s.Rr[k] += real(R[k])*real(R[k]) + imag(R[k])*imag(R[k])
				s.Ru[k] += cmplx.Conj(R[k]) * U[k]
				s.Ry[k] += cmplx.Conj(R[k]) * Y[k]
			}
		}
		s.Averages++
	}
	for k := range nf {
		c := 2 / (float64(s.Averages) * fs * w2)
		if k == 0 || k == nf-1 {
			c /= 2
		}
		s.Uu[k] *= c
		s.Yy[k] *= c
		s.Uy[k] *= complex(c, 0)
		if r != nil {
			s.Rr[k] *= c
			s.Ru[k] *= complex(c, 0)
			s.Ry[k] *= complex(c, 0)
		}
	}
	return s, nil
}

// Response returns the frequency-response estimate. Open loop (no
// excitation): the H1 estimator Puy/Puu, unbiased by noise on the output,
// with the coherence |Puy|²/(Puu·Pyy). Closed loop: u is correlated with
// the output noise through the controller, which biases H1 towards the
// inverse of the controller; with an excitation r injected into the loop
// and uncorrelated with that noise, the indirect estimate Pry/Pru (the
// ratio of the two transfers from r) is consistent (Ljung, System
// Identification, §13.5, from memory), and the coherence given is the
// lesser of the output's and the input's with r, |Pry|²/(Prr·Pyy) and
// |Pru|²/(Prr·Puu): the ratio is only as good as its worse half (in a
// loop with high gain the input is mostly the controller's answer to
// noise, and its coherence with r is the low one). Frequencies where the reference
// signal has no power (the DC bin after detrending, or a band the
// excitation does not cover) give NaN.
func (s *Spectra) Response() *FreqResponse {
	nf := len(s.Hz)
	fr := &FreqResponse{Hz: s.Hz, H: make([]complex128, nf), Coherence: make([]float64, nf)}
	if s.Rr == nil {
		fr.Method = "open loop, H1 = Puy/Puu"
	} else {
		fr.Method = "closed loop, indirect: H = Pry/Pru"
	}
	for k := range nf {
		var num, den complex128
		var ref float64
		if s.Rr == nil {
			num, den, ref = s.Uy[k], complex(s.Uu[k], 0), s.Uu[k]
		} else {
			num, den, ref = s.Ry[k], s.Ru[k], s.Rr[k]
		}
		if !(ref > 0) || den == 0 {
			fr.H[k], fr.Coherence[k] = cmplx.NaN(), math.NaN()
			continue
		}
		fr.H[k] = num / den
		a := cmplx.Abs(num)
		fr.Coherence[k] = a * a / (ref * s.Yy[k])
		if s.Rr != nil {
			b := cmplx.Abs(den)
			fr.Coherence[k] = math.Min(fr.Coherence[k], b*b/(ref*s.Uu[k]))
		}
	}
	return fr
}
