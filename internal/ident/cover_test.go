package ident

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"
)

// TestCoverLogs: three logs of one axis at different battery voltages
// (effectiveness ×0.85, ×1, ×1.1 of a plant of our own, motor lag ×1.2 on
// the weakest; open loop, white command, SNR 30 dB at 100 Hz), each
// identified, give a nominal plant and an envelope that contains every
// log's true plant (the simulated one) and every log's 95 % interval; the
// printed TOML parses (go-toml) to the same numbers. The bound is the
// definition of covering; the truth is the simulation.
func TestCoverLogs(t *testing.T) {
	if testing.Short() {
		t.Skip("identifies three simulated logs; skipped with -short")
	}
	const fs, n = 1000.0, 20000
	rng := rand.New(rand.NewPCG(8, 9))
	truths := []modePlant{
		{eff: 2400 * 0.85, tau: 0.03 * 1.2, delay: 0.003},
		{eff: 2400, tau: 0.03, delay: 0.003},
		{eff: 2400 * 1.1, tau: 0.03, delay: 0.003},
	}
	var rs []*Result
	var names []string
	for i, p := range truths {
		u, y, _ := closedLog(t, rng, p, fs, n, 0, 0.05, 30)
		l := &Log{File: "sim", Time: make([]float64, n), Command: u, Rate: y}
		for k := range n {
			l.Time[k] = float64(k) / fs
		}
		r, err := Identify(l, Options{Holdout: 0.25})
		if err != nil {
			t.Fatalf("log %d: %v", i, err)
		}
		rs = append(rs, r)
		names = append(names, "log"+string(rune('a'+i))+".csv")
	}
	g, err := Cover(names, rs)
	if err != nil {
		t.Fatal(err)
	}
	within := func(v, nom float64, s [2]float64) bool { return v >= nom*s[0] && v <= nom*s[1] }
	for i, r := range rs {
		p := truths[i]
		if !within(p.eff, g.Effectiveness, g.GainScale) || !within(r.Effectiveness.Lo, g.Effectiveness, g.GainScale) || !within(r.Effectiveness.Hi, g.Effectiveness, g.GainScale) {
			t.Errorf("log %d: effectiveness %g [%g, %g] (truth %g) outside %g × %v", i, r.Effectiveness.Value, r.Effectiveness.Lo, r.Effectiveness.Hi, p.eff, g.Effectiveness, g.GainScale)
		}
		if !within(p.tau, g.MotorTau, g.LagScale) || !within(r.MotorTau.Lo, g.MotorTau, g.LagScale) || !within(r.MotorTau.Hi, g.MotorTau, g.LagScale) {
			t.Errorf("log %d: motor_tau %g [%g, %g] (truth %g) outside %g × %v", i, r.MotorTau.Value, r.MotorTau.Lo, r.MotorTau.Hi, p.tau, g.MotorTau, g.LagScale)
		}
		if d := p.delay - g.Delay; d < g.DelayAdd[0] || d > g.DelayAdd[1] {
			t.Errorf("log %d: delay %g (truth %g) outside %g + %v", i, r.Delay.Value, p.delay, g.Delay, g.DelayAdd)
		}
	}
	if g.GainScale[0] > 0.9 || g.GainScale[1] < 1.05 {
		t.Errorf("gain_scale %v does not span the logs' ×0.85 to ×1.1", g.GainScale)
	}
	out := g.TOML("roll")
	var doc struct {
		Axes map[string]struct {
			Plant struct {
				Effectiveness float64 `toml:"effectiveness"`
				MotorTau      float64 `toml:"motor_tau"`
				Delay         float64 `toml:"delay"`
			} `toml:"plant"`
			Envelope struct {
				GainScale []float64 `toml:"gain_scale"`
				LagScale  []float64 `toml:"lag_scale"`
				DelayAdd  []float64 `toml:"delay_add"`
			} `toml:"envelope"`
		} `toml:"axes"`
	}
	if err := toml.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	a := doc.Axes["roll"]
	if math.Abs(a.Plant.Effectiveness/g.Effectiveness-1) > 1e-3 || a.Envelope.GainScale[0] != g.GainScale[0] || a.Envelope.LagScale[1] != g.LagScale[1] || a.Envelope.DelayAdd[1] != g.DelayAdd[1] {
		t.Errorf("printed %+v, range %+v\n%s", a, g, out)
	}
	for _, name := range names {
		if !strings.Contains(out, name) {
			t.Errorf("the per-log estimates do not name %s:\n%s", name, out)
		}
	}
	t.Logf("\n%s", out)
}

// TestCoverRefuses: one log, or logs that disagree beyond the envelope's
// range, are refused with a message.
func TestCoverRefuses(t *testing.T) {
	mk := func(eff float64) *Result {
		return &Result{Effectiveness: Param{Value: eff, Lo: eff * 0.99, Hi: eff * 1.01},
			MotorTau: Param{Value: 0.03, Lo: 0.029, Hi: 0.031}, Delay: Param{Value: 0.002, Lo: 0.0019, Hi: 0.0021}}
	}
	if _, err := Cover([]string{"a"}, []*Result{mk(1)}); err == nil {
		t.Error("one log gave a range")
	}
	if _, err := Cover([]string{"a", "b"}, []*Result{mk(1), mk(500)}); err == nil || !strings.Contains(err.Error(), "gain_scale") {
		t.Errorf("logs 500× apart: %v", err)
	}
	g, err := Cover([]string{"a", "b"}, []*Result{mk(100), mk(121)})
	if err != nil {
		t.Fatal(err)
	}
	// Geometric mean 110; 99/110 = 0.9 → 0.9, 122.21/110 = 1.111 → 1.12.
	if math.Abs(g.Effectiveness-110) > 1e-9 || g.GainScale != [2]float64{0.9, 1.12} {
		t.Errorf("nominal %g, gain_scale %v; want 110, [0.9, 1.12]", g.Effectiveness, g.GainScale)
	}
}
