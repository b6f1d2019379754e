package synth

import (
	"math"
	"fmt"
	"os"
	"testing"
	"time"

	"locusmith/airframe"
)

func TestScratchSearch(t *testing.T) {
	for _, path := range []string{"../examples/quadrotor.toml", "../examples/gimbal.toml", "../examples/rover.toml"} {
		data, _ := os.ReadFile(path)
		f, err := airframe.Parse(path, data)
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range f.Axes {
			t0 := time.Now()
			d, err := DesignAxis(p, nil)
			if err != nil {
				fmt.Println(p.Name, "err", err)
				continue
			}
			c := d.Ctrl
			fmt.Printf("%s %s: met=%v kp=%.4g ki=%.4g kd=%.4g K=%.4g p=%.4g b=%.2f noiseB=%.4g evals=%d os=%.3g ts=%.4g pm=%.3g gm=%.3g  %v fails=%v\n", path, p.Name, d.Met, c.Kp, c.Ki, c.Kd, c.K, c.Pole, c.B, d.Search.NoiseBound, d.Search.Evaluations,
				d.Verif.Step.Overshoot, d.Verif.Step.Settling, d.Verif.Margins.PhaseDeg, d.Verif.Margins.GainDB, time.Since(t0), d.Search.Fails)
		}
	}
}

func TestScratchNoise(t *testing.T) {
	data, _ := os.ReadFile("../examples/quadrotor.toml")
	f, _ := airframe.Parse("q", data)
	p := f.Axes[1]
	L := ContinuousLoops(p)
	c := Controller{Form: "pid", Kp: 0.03676, Ki: 0.4765, Kd: 0.0006087, Tf: p.Ctrl.Tf()}
	out := make([]complex128, len(L.Grid()))
	L.Ctrl(c, out)
	w := L.Grid()
	fmt.Println(len(w), w[0], w[len(w)-1], out[len(out)-1], p.Ctrl.Tf())
}

func TestScratchNoise2(t *testing.T) {
	data, _ := os.ReadFile("../examples/quadrotor.toml")
	f, _ := airframe.Parse("q", data)
	p := f.Axes[1]
	L := ContinuousLoops(p)
	tg, _ := TargetFromSpec(p.Spec)
	g0, w0 := searchScale(p, tg)
	sr := newSearcher(p, L, g0, w0)
	sr.basis([]float64{0.03676, 0.0006087})
	pm, gm, n := sr.freqFigures(0.4765)
	fmt.Println(pm, gm, n)
	_, _, kc := gridMargins(sr.grid, sr.lbuf, sr.open[0])
	fmt.Println(kc, len(sr.grid))
}

func TestScratchTradeoff(t *testing.T) {
	for _, path := range []string{"../examples/quadrotor.toml"} {
		data, _ := os.ReadFile(path)
		f, _ := airframe.Parse(path, data)
		for _, i := range []int{1, 2} {
			p := f.Axes[i]
			for _, n := range []float64{0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.7, 1, 2, 5} {
				p.Spec.MaxNoiseGain = n
				d, err := DesignAxis(p, nil)
				if err != nil {
					fmt.Println(err)
					continue
				}
				c := d.Ctrl
				fmt.Printf("%s N=%.3g met=%v kp=%.4g ki=%.4g kd=%.4g b=%.2f ts=%.3g evals=%d\n", p.Name, n, d.Met, c.Kp, c.Ki, c.Kd, c.B, d.Verif.Step.Settling, d.Search.Evaluations)
			}
		}
	}
}

func TestScratchLine(t *testing.T) {
	data, _ := os.ReadFile("../examples/quadrotor.toml")
	f, _ := airframe.Parse("q", data)
	p := f.Axes[1]
	L := ContinuousLoops(p)
	tg, _ := TargetFromSpec(p.Spec)
	g0, w0 := searchScale(p, tg)
	sr := newSearcher(p, L, g0, w0)
	for _, th := range [][]float64{{0.0118, 0.00017}, {0.0188, 0.00044}, {0.074, 0.001}} {
		u := []float64{math.Log10(th[0] / sr.fam.ref[0]), math.Log10(th[1] / sr.fam.ref[1])}
		pt := sr.screen(u)
		fmt.Println("theta", th, "xf", pt.xf, pt.why)
		for x := pt.xf; x > pt.xf*0.01; x *= 0.7 {
			c := sr.fam.ctrl(pt.th, x)
			b, v, fails, settle, _ := sr.timeChecks(c)
			fmt.Printf("  x=%.4g b=%.2f v=%.3g fails=%v settle=%.3g\n", x, b, v, fails, settle)
		}
	}
}

func TestScratchUnstable(t *testing.T) {
	p := demoProblem(airframe.FormPID, 0.002)
	d, err := DesignAxis(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	c := d.Ctrl
	fmt.Printf("%+v\n", c)
	cl, _ := newClosedLoop(p, c)
	fmt.Println("hurwitz", cl.char.Hurwitz(), d.Verif.Poles[:3])
	fmt.Println(cl.char)
}
