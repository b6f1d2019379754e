package discrete_test

import (
	"fmt"
	"math"
	"testing"

	"locusmith/discrete"
)

func TestDiagMap(t *testing.T) {
	for _, af := range refAirframes() {
		if af.name != "quad_fast_yaw" {
			continue
		}
		rc, _ := loadRefCase(af)
		d, gain, ok, _, _ := toolOutcome(rc)
		c0 := d.Cont.Ctrl
		nb := d.Cont.Search.NoiseBound
		fmt.Printf("tool gain %.5g ok=%v kp=%.5g b=%.2f nb=%.5g\n", gain, ok, c0.Kp, c0.B, nb)
		for i := 0; i <= 12; i++ {
			ki := c0.Ki * math.Pow(10, 0.05-0.05*float64(i))
			line := fmt.Sprintf("ki=%.4f ", ki)
			for j := 0; j <= 16; j++ {
				kp := c0.Kp * math.Pow(10, 0.02-0.01*float64(j))
				c := c0
				c.Kp, c.Ki = kp, ki
				ch := "."
				for _, b := range refWeights(rc.p) {
					c.B = b
					cs, _ := discrete.Assess(rc.p, rc.file.Loop, c, nb)
					pass, indep := true, false
					for _, k := range cs {
						if !k.OK {
							pass = false
							for _, n := range refIndependent {
								if n == k.Name {
									indep = true
									ch = k.Name[:1]
								}
							}
						}
					}
					if pass {
						ch = "#"
						break
					}
					if indep {
						break
					}
				}
				line += ch
			}
			fmt.Println(line)
		}
	}
}
