package discrete

import (
	"fmt"
	"math"
	"testing"

	"locusmith/internal/lti"
	"locusmith/synth"
)

func demo(form synth.Form) synth.Problem {
	tau := 0.03
	return synth.Problem{Axis: "roll",
		Plant:  synth.Plant{Model: lti.ZPK{Gain: 2000 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: 0.002},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   synth.Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08, MinPhaseMargin: 40, MinGainMargin: 6},
		Ctrl:   synth.Control{Form: form, Refine: true, ThirdPole: 5, LeadZero: -20, DerivativeLowpassHz: 125, OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "backcalc", Discretize: "tustin"},
	}
}

func TestTry(t *testing.T) {
	for _, f := range synth.Forms {
		d, err := DesignAxis(demo(f), Loop{Hz: 1000, ComputeDelay: 1}, Numeric{Type: Float32})
		if err != nil {
			fmt.Println(f, "ERR", err)
			continue
		}
		v := d.Verif
		fmt.Printf("%s ctrl %+v\n cont os %.4f ts %.4f pm %.2f | disc os %.4f ts %.4f pm %.2f gm %.2f sm %.4f ok %v\n", f, d.Cont.Ctrl, d.Cont.Verif.Step.Overshoot, d.Cont.Verif.Step.Settling, d.Cont.Verif.Margins.PhaseDeg, v.Step.Overshoot, v.Step.Settling, v.Margins.PhaseDeg, v.Margins.GainDB, v.StabilityMargin, d.OK())
		s := v.Saturated
		fmt.Printf(" sat A=%.3g os %.3f rec %.3f | none os %.3f rec %.3f ipk %.3f\n", s.Amplitude, s.Overshoot, s.Recovery, s.OvershootNone, s.RecoveryNone, s.IntegratorPeak)
		fmt.Println(" ", d.Warnings)
	}
}
