// Package fleet makes fleets of demo airframes for tests and benchmarks:
// the examples in turn, each variant renamed and its settling times
// slowed by up to 30 %, so that the designs differ. The result is demo
// data, as the examples are.
package fleet

import (
	"fmt"
	"strings"

	"locusmith/examples"
)

// Source is one generated airframe file.
type Source struct {
	Name string // file name, v<i>.toml
	Data []byte
}

// Make returns n airframes: variant i is example i mod 3 with the
// airframe named v<i> and every settling_time scaled by 1 + 0.05·(i mod 7).
func Make(n int) ([]Source, error) {
	names := [...]string{"quadrotor", "gimbal", "rover"} // in turn
	out := make([]Source, 0, n)
	for i := 0; i < n; i++ {
		src, err := examples.FS.ReadFile(names[i%len(names)] + ".toml")
		if err != nil {
			return nil, fmt.Errorf("fleet: %w", err)
		}
		lines := strings.Split(string(src), "\n")
		for j, line := range lines {
			switch {
			case strings.HasPrefix(line, "airframe = "):
				lines[j] = fmt.Sprintf("airframe = \"v%d\"", i)
			case strings.HasPrefix(line, "settling_time = "):
				var v float64
				if _, err := fmt.Sscanf(strings.TrimPrefix(line, "settling_time = "), "%g", &v); err != nil {
					return nil, fmt.Errorf("fleet: %s: %q: %w", names[i%len(names)], line, err)
				}
				lines[j] = fmt.Sprintf("settling_time = %g", v*(1+0.05*float64(i%7)))
			}
		}
		out = append(out, Source{Name: fmt.Sprintf("v%d.toml", i), Data: []byte(strings.Join(lines, "\n"))})
	}
	return out, nil
}
