package synth

import (
	"fmt"
	"math"

	"locusmith/airframe"
	"locusmith/internal/lti"
)

// Target is a desired dominant closed-loop pole pair s = −σ ± jωd.
type Target struct {
	Zeta   float64    // damping ratio ζ
	OmegaN float64    // natural frequency ωn, rad/s
	Sigma  float64    // σ = ζ·ωn, rad/s
	Pole   complex128 // s* = −σ + jωn√(1−ζ²), the upper pole of the pair
}

// ZetaFromOvershoot returns the damping ratio whose second-order step
// overshoots by mp: ζ = −ln(Mp)/√(π² + ln²Mp).
func ZetaFromOvershoot(mp float64) float64 {
	l := lti.Log(mp)
	return -l / math.Sqrt(math.Pi*math.Pi+float64(l*l))
}

// OvershootFromZeta is the inverse of ZetaFromOvershoot:
// Mp = exp(−ζπ/√(1−ζ²)).
func OvershootFromZeta(zeta float64) float64 {
	if zeta >= 1 {
		return 0
	}
	return lti.Exp(-zeta * math.Pi / math.Sqrt(1-float64(zeta*zeta)))
}

// SigmaFromSettling returns the decay rate σ for which the envelope
// 1 + e^(−σt)/√(1−ζ²) of the second-order step enters the band at ts:
// σ = −ln(band·√(1−ζ²))/ts.
func SigmaFromSettling(zeta, band, ts float64) float64 {
	return -lti.Log(band*math.Sqrt(1-float64(zeta*zeta))) / ts
}

// NewTarget returns the target for damping ζ in (0, 1) and decay rate σ > 0.
func NewTarget(zeta, sigma float64) Target {
	wn := sigma / zeta
	wd := wn * math.Sqrt(1-float64(zeta*zeta))
	return Target{Zeta: zeta, OmegaN: wn, Sigma: sigma, Pole: complex(-sigma, wd)}
}

// TargetFromSpec returns the textbook target of the spec: the second-order
// pole pair whose step meets the overshoot exactly and whose envelope enters
// the settling band at the settling time.
func TargetFromSpec(s airframe.Spec) (Target, error) {
	if !(s.Overshoot > 0 && s.Overshoot < 1) {
		return Target{}, fmt.Errorf("overshoot %g: must be in (0, 1)", s.Overshoot)
	}
	if !(s.SettlingTime > 0) || math.IsInf(s.SettlingTime, 0) {
		return Target{}, fmt.Errorf("settling time %g: must be finite and > 0", s.SettlingTime)
	}
	if !(s.Band > 0 && s.Band < 1) {
		return Target{}, fmt.Errorf("settling band %g: must be in (0, 1)", s.Band)
	}
	z := ZetaFromOvershoot(s.Overshoot)
	return NewTarget(z, SigmaFromSettling(z, s.Band, s.SettlingTime)), nil
}
