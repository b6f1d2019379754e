package ident

import (
	"math"
	"math/rand/v2"
)

// excitation returns n samples of a test command: random doublets of
// random width and amplitude between quiet stretches, and bursts of short
// random doublets of a few samples. Its integral returns to zero after
// each doublet, so an integrating plant's rate stays bounded, as in a
// bench or flight test (common practice for rate-loop identification). Amplitudes
// are drawn from a continuous range, so no level repeats as a plateau.
func excitation(rng *rand.Rand, n int, T, amp float64) []float64 {
	u := make([]float64, n)
	k := 0
	for k < n {
		quiet := int((0.05 + 0.2*rng.Float64()) / T)
		k += quiet
		if rng.IntN(3) == 0 {
			// Burst, 60..200 ms: random doublets of 1..6 samples per
			// half, so that the burst's integral is zero too.
			end := k + int((0.06+0.14*rng.Float64())/T)
			a := amp * (0.3 + 0.7*rng.Float64())
			for k < end && k < n {
				v := a
				if rng.IntN(2) == 0 {
					v = -a
				}
				h := 1 + rng.IntN(6)
				for j := 0; j < 2*h && k < n; j++ {
					if j < h {
						u[k] = v
					} else {
						u[k] = -v
					}
					k++
				}
			}
			continue
		}
		a := amp * (0.2 + 0.8*rng.Float64())
		if rng.IntN(2) == 0 {
			a = -a
		}
		w := int((0.005 + 0.05*rng.Float64()) / T)
		w = max(w, 1)
		for j := 0; j < 2*w && k < n; j++ {
			if j < w {
				u[k] = a
			} else {
				u[k] = -a
			}
			k++
		}
	}
	return u
}

// simulateTruth is the model's own exact ZOH simulation (used where the
// reference is not the point: benchmarks and quick checks).
func simulateTruth(u []float64, T, eff, tau, delay, lowpassHz float64) []float64 {
	sh := shape{tau: tau, delay: delay}
	if lowpassHz > 0 {
		sh.omegaS = 2 * math.Pi * lowpassHz
	}
	m, err := sh.discretize(T)
	if err != nil {
		panic(err)
	}
	y := make([]float64, len(u))
	m.forced(y, u)
	for i := range y {
		y[i] *= eff
	}
	return y
}

func stdDev(v []float64) float64 {
	var s, ss float64
	for _, x := range v {
		s += x
	}
	m := s / float64(len(v))
	for _, x := range v {
		ss += (x - m) * (x - m)
	}
	return math.Sqrt(ss / float64(len(v)))
}

// synthLog builds a log of n samples at period T from the noiseless
// measured rate y: bias added, white Gaussian noise at snrDB.
func synthLog(rng *rand.Rand, u, y []float64, T, bias, snrDB float64) *Log {
	sigma := stdDev(y) * math.Pow(10, -snrDB/20)
	l := &Log{File: "synthetic"}
	for i := range u {
		l.Time = append(l.Time, float64(i)*T)
		l.Command = append(l.Command, u[i])
		l.Rate = append(l.Rate, y[i]+bias+sigma*rng.NormFloat64())
	}
	return l
}

// shapedSweep returns n samples of an exponential frequency sweep from f0
// to f1 Hz whose command amplitude is shaped by a rough prior model of the
// plant (motor lag tauNom) so that the rate amplitude stays about level
// across the sweep: A(f) ∝ f·|j2πf·tauNom + 1|, reaching amp at f1. This
// is how identification sweeps are sized in practice (common practice in
// flight-test system identification: the prior only shapes the input; the
// fit does not use it).
func shapedSweep(n int, T, f0, f1, amp, tauNom float64) []float64 {
	u := make([]float64, n)
	dur := float64(n) * T
	r := math.Log(f1 / f0)
	gain := func(f float64) float64 { return f * math.Hypot(1, 2*math.Pi*f*tauNom) }
	for k := range u {
		t := float64(k) * T
		f := f0 * math.Exp(r*t/dur)
		phase := 2 * math.Pi * f0 * dur / r * (math.Exp(r*t/dur) - 1)
		u[k] = amp * gain(f) / gain(f1) * math.Sin(phase)
	}
	return u
}
