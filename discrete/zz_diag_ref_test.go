package discrete_test

import (
	"fmt"
	"os"
	"strings"
	"testing"

	"locusmith/discrete"
	"locusmith/synth"
)

func TestDiagRef(t *testing.T) {
	names := strings.Split(os.Getenv("DIAG"), ",")
	for _, af := range refAirframes() {
		if !contains(names, af.name) {
			continue
		}
		rc, _ := loadRefCase(af)
		ref, err := readRef(af.name)
		if err != nil {
			t.Fatal(err)
		}
		d, gain, ok, fails, err := toolOutcome(rc)
		if err != nil {
			t.Fatal(err)
		}
		fmt.Printf("== %s tool gain %.6g ok=%v fails=%v nb=%.6g ctrl=%+v\n", af.name, gain, ok, fails, d.Cont.Search.NoiseBound, *toRefCtrl(d.Cont.Ctrl))
		for _, c := range d.Checks {
			fmt.Printf("   tool %-22s %s ok=%v\n", c.Name, c.String(), c.OK)
		}
		best := ref.Best.controller(rc.p)
		nb := d.Cont.Search.NoiseBound
		if ref.NoiseRatio > 0 {
			nb = ref.NoiseRatio * refLoadGain(best)
		}
		cs, _ := discrete.Assess(rc.p, rc.file.Loop, best, nb)
		fmt.Printf("   ref gain %.6g ctrl=%+v nb=%.6g\n", ref.BestGain, *ref.Best, nb)
		for _, c := range cs {
			fmt.Printf("   ref  %-22s %s ok=%v\n", c.Name, c.String(), c.OK)
		}
		_ = synth.NoiseRatio
	}
}

func contains(s []string, x string) bool {
	for _, v := range s {
		if v == x {
			return true
		}
	}
	return false
}
