package ident

import (
	"math"
	"math/rand/v2"
	"testing"

	"locusmith/internal/lti"
)

// modePlant is a rate plant with a lightly damped mode, the truth of a
// simulated log: effectiveness/(s·(τ·s + 1)) · F(s) · e^{−s·delay} with
// F = ωp²/(s² + 2ζp·ωp·s + ωp²), times (s² + 2ζz·ωz·s + ωz²)/ωz² when
// zeroHz > 0.
type modePlant struct {
	eff, tau, delay  float64
	hz, zeta         float64
	zeroHz, zeroZeta float64
}

func (p modePlant) zpk(withMode bool) lti.ZPK {
	z := lti.ZPK{Gain: p.eff / p.tau, Poles: []complex128{0, complex(-1/p.tau, 0)}}
	if !withMode || p.hz == 0 {
		return z
	}
	wp := 2 * math.Pi * p.hz
	z.Gain *= wp * wp
	z.Poles = append(z.Poles, rootsOf(wp, p.zeta)...)
	if p.zeroHz > 0 {
		wz := 2 * math.Pi * p.zeroHz
		z.Gain /= wz * wz
		z.Zeros = rootsOf(wz, p.zeroZeta)
	}
	return z
}

func rootsOf(w, zeta float64) []complex128 {
	im := w * math.Sqrt(1-zeta*zeta)
	return []complex128{complex(-zeta*w, im), complex(-zeta*w, -im)}
}

// sampled returns the ZOH equivalent (with the delay) at fs, and its whole
// samples of delay.
func (p modePlant) sampled(t testing.TB, withMode bool, fs float64) (lti.Disc, int) {
	t.Helper()
	ss, err := p.zpk(withMode).CascadeSS()
	if err != nil {
		t.Fatal(err)
	}
	d, f := lti.SplitDelay(p.delay, 1/fs)
	dd, err := lti.ZOHDelay(ss, 1/fs, f)
	if err != nil {
		t.Fatal(err)
	}
	return dd, d
}

// closedLog simulates the plant under u = r − kp·y at fs for n samples,
// with r white excitation (standard deviation amp, command units) and
// white measurement noise at the signal-to-noise ratio snrDB at the mode:
// the measured rate's spectral density from r, averaged over the mode's
// half-power band ±(1 ± ζ)·f (±10 % at least), over the noise's. It
// returns u, the measured y and r.
func closedLog(t testing.TB, rng *rand.Rand, p modePlant, fs float64, n int, kp, amp, snrDB float64) (u, y, r []float64) {
	t.Helper()
	dd, dl := p.sampled(t, true, fs)
	run := func(noise float64, seed *rand.Rand) ([]float64, []float64, []float64, []float64) {
		x := make([]float64, dd.N)
		nx := make([]float64, dd.N)
		hist := make([]float64, dl+1)
		u, y, r, clean := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for k := range n {
			var c float64
			for i := range dd.N {
				c += dd.C[i] * x[i]
			}
			clean[k] = c
			r[k] = amp * seed.NormFloat64()
			y[k] = c + noise*seed.NormFloat64()
			u[k] = r[k] - kp*y[k]
			copy(hist[1:], hist[:dl])
			hist[0] = u[k]
			in := hist[dl]
			for i := range dd.N {
				s := dd.B[i] * in
				for j := range dd.N {
					s += dd.A[i*dd.N+j] * x[j]
				}
				nx[i] = s
			}
			x, nx = nx, x
		}
		return u, y, r, clean
	}
	// The noise level from the clean response's density at the mode
	// (white noise of standard deviation σ has the one-sided density
	// 2σ²/fs).
	seed := *rng
	cu, _, _, clean := run(0, &seed)
	s, err := Welch(cu, clean, nil, fs, 512)
	if err != nil {
		t.Fatal(err)
	}
	bw, at := math.Max(p.zeta, 0.1), p.hz
	if at == 0 {
		at = 100 // no mode: the signal-to-noise ratio at 100 Hz
	}
	var dens float64
	var cnt int
	for k, hz := range s.Hz {
		if hz >= at*(1-bw) && hz <= at*(1+bw) {
			dens += s.Yy[k]
			cnt++
		}
	}
	dens /= float64(cnt)
	noise := math.Sqrt(dens * fs / 2 / math.Pow(10, snrDB/10))
	u, y, r, _ = run(noise, rng)
	return u, y, r
}

// modeEstimate returns the estimate of the first 70 % of the log and of
// the rest, and the options with the true low-order model.
func modeEstimate(t testing.TB, p modePlant, u, y, r []float64, fs float64, seg int) (Estimate, Estimate, ModeOptions) {
	t.Helper()
	cut := len(u) * 7 / 10
	s1, err := Welch(u[:cut], y[:cut], r[:cut], fs, seg)
	if err != nil {
		t.Fatal(err)
	}
	s2, err := Welch(u[cut:], y[cut:], r[cut:], fs, seg)
	if err != nil {
		t.Fatal(err)
	}
	opt := ModeOptions{Plant: p.zpk(false), Delay: p.delay, T: 1 / fs}
	return Estimate{s1.Response(), s1.Averages}, Estimate{s2.Response(), s2.Averages}, opt
}

// TestModesCoverage: on 100 seeded closed-loop logs of plants of our own
// with one lightly damped mode (60–220 Hz at 1 kHz, damping 0.03–0.2,
// signal-to-noise 10–40 dB), the mode is found and its true frequency and
// damping lie inside the 95 % intervals in at least 90 % of the runs, as
// the issue asks; the truth is the simulated plant itself (the exact ZOH
// equivalent of the continuous model, lti.ZOHDelay, checked against SciPy
// in internal/lti). The seeds are fixed: the test is deterministic.
func TestModesCoverage(t *testing.T) {
	if testing.Short() {
		t.Skip("100 simulated logs; skipped with -short")
	}
	t.Parallel()
	const fs, n, seg = 1000.0, 60000, 2048
	rng := rand.New(rand.NewPCG(2026, 12))
	found, coveredHz, coveredZeta := 0, 0, 0
	runs := 100
	for i := range runs {
		p := modePlant{eff: 2000 + 1000*rng.Float64(), tau: 0.02 + 0.03*rng.Float64(), delay: 0.002,
			hz: 60 + 160*rng.Float64(), zeta: 0.03 + 0.17*rng.Float64()}
		snr := 10 + 30*rng.Float64()
		u, y, r := closedLog(t, rng, p, fs, n, 0.008, 0.05, snr)
		fit, held, opt := modeEstimate(t, p, u, y, r, fs, seg)
		opt.MaxModes = 1
		modes, notes, err := FitModes(fit, &held, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(modes) != 1 {
			t.Logf("run %d (%.1f Hz, ζ %.3f, SNR %.0f dB): %d modes; %v", i, p.hz, p.zeta, snr, len(modes), notes)
			continue
		}
		m := modes[0]
		found++
		inHz := p.hz >= m.Hz.Lo && p.hz <= m.Hz.Hi
		inZ := p.zeta >= m.Damping.Lo && p.zeta <= m.Damping.Hi
		if inHz {
			coveredHz++
		}
		if inZ {
			coveredZeta++
		}
		if !inHz || !inZ {
			t.Logf("run %d: truth %.2f Hz ζ %.4f; fitted %.2f [%.2f, %.2f] Hz, ζ %.4f [%.4f, %.4f] (SNR %.0f dB)",
				i, p.hz, p.zeta, m.Hz.Value, m.Hz.Lo, m.Hz.Hi, m.Damping.Value, m.Damping.Lo, m.Damping.Hi, snr)
		}
	}
	t.Logf("found %d of %d; truth inside the 95 %% interval: frequency %d, damping %d", found, runs, coveredHz, coveredZeta)
	if found < 95 {
		t.Errorf("the mode was found in %d of %d logs, want at least 95", found, runs)
	}
	if coveredHz < 90 || coveredZeta < 90 {
		t.Errorf("truth inside the 95 %% intervals: frequency %d, damping %d of %d, want at least 90", coveredHz, coveredZeta, runs)
	}
}

// TestModesNone: a plant without a mode gives none, and says why.
func TestModesNone(t *testing.T) {
	const fs, n, seg = 1000.0, 60000, 512
	rng := rand.New(rand.NewPCG(5, 6))
	p := modePlant{eff: 2400, tau: 0.03, delay: 0.002}
	for i := range 10 {
		u, y, r := closedLog(t, rng, p, fs, n, 0.008, 0.05, 20)
		fit, held, opt := modeEstimate(t, p, u, y, r, fs, seg)
		modes, notes, err := FitModes(fit, &held, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(modes) != 0 {
			t.Errorf("run %d: a plant without a mode gave %+v", i, modes)
		}
		if len(notes) == 0 {
			t.Errorf("run %d: no mode and no note saying why", i)
		}
	}
}

// TestModesWithZeros: a mode with an antiresonance below it (a compliant
// joint or mount: collocated, the zero pair below the pole pair) gets its
// zero pair, inside the 95 % intervals in at least 9 of 10 seeded logs;
// the truth is the simulated plant.
func TestModesWithZeros(t *testing.T) {
	if testing.Short() {
		t.Skip("simulated logs; skipped with -short")
	}
	const fs, n, seg = 1000.0, 60000, 512
	rng := rand.New(rand.NewPCG(17, 4))
	covered := 0
	for i := range 10 {
		hz := 90 + 60*rng.Float64()
		p := modePlant{eff: 2400, tau: 0.03, delay: 0.002, hz: hz, zeta: 0.05 + 0.05*rng.Float64(),
			zeroHz: hz * (0.6 + 0.2*rng.Float64()), zeroZeta: 0.03 + 0.05*rng.Float64()}
		u, y, r := closedLog(t, rng, p, fs, n, 0.008, 0.05, 30)
		fit, held, opt := modeEstimate(t, p, u, y, r, fs, seg)
		opt.MaxModes = 1
		modes, notes, err := FitModes(fit, &held, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(modes) != 1 || modes[0].ZeroHz == nil {
			t.Logf("run %d: %+v; %v", i, modes, notes)
			continue
		}
		m := modes[0]
		in := func(v float64, iv Interval) bool { return v >= iv.Lo && v <= iv.Hi }
		if in(p.hz, m.Hz) && in(p.zeta, m.Damping) && in(p.zeroHz, *m.ZeroHz) && in(p.zeroZeta, *m.ZeroDamping) {
			covered++
		} else {
			t.Logf("run %d: truth poles %.2f Hz ζ %.4f, zeros %.2f Hz ζ %.4f; fitted %+v zeros %+v %+v", i, p.hz, p.zeta, p.zeroHz, p.zeroZeta, m, *m.ZeroHz, *m.ZeroDamping)
		}
	}
	if covered < 9 {
		t.Errorf("mode with zeros recovered within its intervals in %d of 10 logs, want at least 9", covered)
	}
}
