package discrete

import (
	"fmt"
	"os"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// BenchmarkDelaySamples designs one PID axis (the demo quadrotor's roll
// model at 8 kHz) with a plant delay of n samples, from 16 to the limit:
// the cost must grow at most linearly with n (README, "Limits").
func BenchmarkDelaySamples(b *testing.B) {
	for _, n := range []int{16, 64, 128, 255} {
		src := fmt.Sprintf(`airframe = "delayscan"
description = "demo data: delay scan"
loop_hz = 8000.0
compute_delay = 1
[axes.roll.plant]
effectiveness = 2400.0
motor_tau = 0.03
delay = %g
[axes.roll.sensor]
lowpass_hz = 100.0
[axes.roll.spec]
settling_time = 0.3125
overshoot = 0.1
min_phase_margin = 40.0
min_gain_margin = 6.0
[axes.roll.control]
form = "pid"
output_limit = [-0.5, 0.5]
`, float64(n-1)/8000)
		f, err := airframe.Parse("delayscan.toml", []byte(src))
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			for b.Loop() {
				if _, err := DesignAxis(f.Axes[0], f.Loop, f.Numeric); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkCandidateDelay is the cost of judging one candidate controller
// at one plant, as the search does (stability, the final values and four
// settling times of both setpoint responses, the controller on the
// frequency grid), for a plant delay of n samples at 8 kHz, beyond the
// airframe limit of 256: it must grow at most linearly with n.
func BenchmarkCandidateDelay(b *testing.B) {
	c := synth.Controller{Form: airframe.FormPID, Kp: 0.002, Ki: 0.01, Kd: 0.00004, Tf: 0.0013, B: 1}
	for _, n := range []int{16, 256, 1024, 4096} {
		p := demo(airframe.FormPID)
		p.Plant.Delay = float64(n) / 8000
		l, err := NewLoops(p, airframe.Loop{Hz: 8000, ComputeDelay: 1})
		if err != nil {
			b.Fatal(err)
		}
		out := make([]complex128, len(l.Grid()))
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := l.Stable(c, 0); err != nil {
					b.Fatal(err)
				}
				e, err := l.Step(c, 0)
				if err != nil {
					b.Fatal(err)
				}
				y0, y1 := make([]float64, e.N), make([]float64, e.N)
				e.Respond(y0, y1)
				l.Ctrl(c, out)
			}
		})
	}
}

// BenchmarkSlowestAirframe designs testdata/slowest.toml, the slowest
// valid airframe the project has built (see the file): the README's
// limits table, against a target of 2 s.
func BenchmarkSlowestAirframe(b *testing.B) {
	data, err := os.ReadFile("testdata/slowest.toml")
	if err != nil {
		b.Fatal(err)
	}
	f, err := airframe.Parse("slowest.toml", data)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		for _, p := range f.Axes {
			if _, err := DesignAxis(p, f.Loop, f.Numeric); err != nil {
				b.Fatal(err)
			}
		}
	}
}
