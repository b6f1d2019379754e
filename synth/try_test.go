package synth

import (
	"fmt"
	"math"
	"testing"

	"locusmith/internal/lti"
)

func demo(form Form) Problem {
	tau := 0.03
	return Problem{Axis: "roll",
		Plant:  Plant{Model: lti.ZPK{Gain: 2000 / tau, Poles: []complex128{0, complex(-1/tau, 0)}}, Delay: 0.002},
		Sensor: lti.ZPK{Gain: 2 * math.Pi * 100, Poles: []complex128{complex(-2*math.Pi*100, 0)}},
		Spec:   Spec{SettlingTime: 0.15, Band: 0.02, Overshoot: 0.08, MinPhaseMargin: 40, MinGainMargin: 6},
		Ctrl:   Control{Form: form, Refine: true, ThirdPole: 5, LeadZero: -20, DerivativeLowpassHz: 125, OutputLimit: [2]float64{-1, 1}, IntegratorLimit: 1, AntiWindup: "backcalc", Discretize: "tustin"},
	}
}

func TestTry(t *testing.T) {
	for _, f := range Forms {
		d, err := DesignAxis(demo(f), nil)
		if err != nil {
			fmt.Println(f, "ERR", err)
			continue
		}
		fmt.Printf("%s target %+v\n ctrl %+v\n os %.4f ts %.4f pm %.2f gm %.2f met %v ok %v\n", f, d.Target, d.Ctrl, d.Verif.Step.Overshoot, d.Verif.Step.Settling, d.Verif.Margins.PhaseDeg, d.Verif.Margins.GainDB, d.Met, d.OK())
		if d.Textbook != nil {
			fmt.Printf(" textbook %+v os %.4f ts %.4f\n", d.Textbook.Ctrl, d.Textbook.Verif.Step.Overshoot, d.Textbook.Verif.Step.Settling)
		}
		fmt.Println(" warn", d.Warnings, d.TextbookErr)
	}
}
