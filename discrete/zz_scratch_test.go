package discrete

import (
	"fmt"
	"locusmith/internal/lti"
	"locusmith/synth"
	"math"
	"os"
	"testing"
	"time"

	"locusmith/airframe"
)

func TestScratchDesign(t *testing.T) {
	for _, path := range []string{"../examples/quadrotor.toml", "../examples/gimbal.toml", "../examples/rover.toml"} {
		data, _ := os.ReadFile(path)
		f, _ := airframe.Parse(path, data)
		for _, p := range f.Axes {
			t0 := time.Now()
			L, _ := NewLoops(p, f.Loop)
			d, err := DesignAxis(p, f.Loop, f.Numeric)
			if err != nil {
				fmt.Println(err)
				continue
			}
			c := d.Cont.Ctrl
			fmt.Printf("%s %s grid=%d ok=%v kp=%.4g ki=%.4g kd=%.4g K=%.4g r=%.3g b=%.2f noise=%.4g bound=%.4g evals=%d ms=%.3g %v\n", path, p.Name, len(L.Grid()), d.OK(), c.Kp, c.Ki, c.Kd, c.K, c.Pole/c.Zero, c.B, d.NoiseGain, d.Cont.Search.NoiseBound, d.Cont.Search.Evaluations, d.Envelope[0].Ms, time.Since(t0))
			for _, ck := range d.Checks {
				if !ck.OK {
					fmt.Println("   FAIL", ck.Name, ck.Value, ck.Limit, ck.Worst)
				}
			}
		}
	}
}

func TestScratchYaw(t *testing.T) {
	data, _ := os.ReadFile("../examples/quadrotor.toml")
	f, _ := airframe.Parse("q", data)
	p := f.Axes[2]
	L, _ := NewLoops(p, f.Loop)
	for _, kp := range []float64{0.03, 0.037, 0.05, 0.07, 0.1, 0.15} {
		for _, ki := range []float64{0.01, 0.03, 0.1, 0.2, 0.4, 0.8, 1.6} {
			c := synth.Controller{Form: "pi", Kp: kp, Ki: ki, B: 1}
			best := ""
			for _, b := range []float64{1, 0.8, 0.6, 0.4, 0.2, 0} {
				worstOs, worstTs := 0.0, 0.0
				for i := range L.Corners() {
					ok, _ := L.Stable(c, i)
					if !ok {
						worstOs = math.Inf(1)
						continue
					}
					e, _ := L.Step(c, i)
					y0, y1 := make([]float64, e.N), make([]float64, e.N)
					e.Respond(y0, y1)
					y := make([]float64, e.N)
					for k := range y {
						y[k] = y0[k] + b*(y1[k]-y0[k])
					}
					st := lti.Settle(y, e.H, e.Final0+b*(e.Final1-e.Final0), 0.02)
					worstOs = math.Max(worstOs, st.Overshoot)
					worstTs = math.Max(worstTs, st.Settling)
				}
				best += fmt.Sprintf(" b%.1f:%.2f/%.3f", b, worstOs, worstTs)
			}
			k, _ := L.realize(c)
			lo, _ := spanOf(p)
			m := loopMargins(L.Plant(0), k, 1, lo)
			ms, _ := sensitivityPeaks(L.Plant(0), k, 1, L.Grid())
			fmt.Printf("kp=%.3g ki=%.3g ms=%.2f pm=%.0f %s\n", kp, ki, ms, m.PhaseDeg, best)
		}
	}
}
