package emit

import (
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
)

// TestResetDocFilterChain: the reset's doc says that the filter chain
// starts at rest at measured, in every arithmetic, and a fixed-point form
// that reads measured only for its chain (a lead, a PD with the
// derivative on the error) no longer calls it unused. The doc is made
// after the constants, which fill the chain.
func TestResetDocFilterChain(t *testing.T) {
	const src = `airframe = "docs"
description = "demo data: test airframe"
loop_hz = 1000.0

[numeric]
type = "%s"
input_full_scale = 64.0
output_full_scale = 1.0

[axes.lead.plant]
effectiveness = 2000.0
motor_tau = 0.03

[axes.lead.spec]
settling_time = 0.25
overshoot = 0.10

[axes.lead.control]
form = "lead"
lead_zero = -20.0
output_limit = [-0.5, 0.5]

[[axes.lead.filter]]
kind = "lowpass"
hz = 150.0
`
	for _, nt := range []string{"float32", "q15", "q31"} {
		text := strings.Replace(src, "%s", nt, 1)
		if !strings.HasPrefix(nt, "q") {
			text = strings.Replace(text, "input_full_scale = 64.0\noutput_full_scale = 1.0\n", "", 1)
		}
		f, err := airframe.Parse("docs.toml", []byte(text))
		if err != nil {
			t.Fatal(err)
		}
		srcs, _, err := GenerateCode(discrete.DesignAirframe(f), CodeOptions{Lang: LangC, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		h := strings.Join(strings.Fields(strings.ReplaceAll(string(srcs[0].Data), "\n//", " ")), " ")
		if !strings.Contains(h, "the feedback filters start at rest at measured") {
			t.Errorf("%s: the reset's doc does not name the chain", nt)
		}
		if strings.Contains(h, "measured is not used") {
			t.Errorf("%s: the reset's doc calls measured unused", nt)
		}
	}
}
