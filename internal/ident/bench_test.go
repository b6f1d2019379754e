package ident

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkIdentify fits logs of 15, 30 and 60 s at 1 kHz (the target: a
// 60 s log in at most 2 s, memory in proportion to the log: compare B/op
// across the lengths), without and with the sensor lowpass. The logs are
// made with the model's own simulation: the data's origin does not matter
// for speed.
func BenchmarkIdentify(b *testing.B) {
	for _, sensor := range []bool{false, true} {
		for _, secs := range []int{15, 30, 60} {
			name := fmt.Sprintf("%ds", secs)
			if sensor {
				name += "/sensor"
			}
			b.Run(name, func(b *testing.B) {
				const T = 0.001
				n := secs * 1000
				u := shapedSweep(n, T, 0.5, 30, 0.4, 0.04)
				d := excitation(rand.New(rand.NewPCG(1, 2)), n, T, 0.3)
				for i := range u {
					u[i] += d[i]
				}
				lph := 0.0
				if sensor {
					lph = 12
				}
				y := simulateTruth(u, T, 2600, 0.025, 0.0023, lph)
				l := synthLog(rand.New(rand.NewPCG(3, 4)), u, y, T, 1.5, 20)
				b.ReportAllocs()
				b.ResetTimer()
				var evals int
				for i := 0; i < b.N; i++ {
					r, err := Identify(l, Options{Holdout: 0.25, Sensor: sensor})
					if err != nil {
						b.Fatal(err)
					}
					evals = r.Evaluations
				}
				b.ReportMetric(float64(evals), "evals/op")
				b.ReportMetric(float64(n), "samples")
			})
		}
	}
}

// BenchmarkIdentifyModes is the whole of identify with modes on a 60 s
// closed-loop log at 1 kHz of a plant with a 60 Hz frame mode (the
// issue's target: at most 2 s, memory in proportion to the samples kept):
// the low-order fit, the Welch spectra of the fitted and held-out parts
// and the mode fit.
func BenchmarkIdentifyModes(b *testing.B) {
	const fs, n = 1000.0, 60000
	p := modePlant{eff: 2400, tau: 0.02, delay: 0.002, hz: 60, zeta: 0.05}
	u, y, r := closedLog(b, rand.New(rand.NewPCG(5, 7)), p, fs, n, 0.008, 0.05, 30)
	l := &Log{File: "bench", Time: make([]float64, n), Command: u, Rate: y, Excitation: r}
	for k := range n {
		l.Time[k] = float64(k) / fs
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		res, err := Identify(l, Options{Holdout: 0.25})
		if err != nil {
			b.Fatal(err)
		}
		mr, err := res.FitModes(2)
		if err != nil {
			b.Fatal(err)
		}
		if len(mr.Modes) != 1 {
			b.Fatalf("%d modes", len(mr.Modes))
		}
	}
}
