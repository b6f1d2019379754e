package discrete

import (
	"os"
	"testing"

	"locusmith/airframe"
)

// BenchmarkDesignDemoAxes is BenchmarkDesignAxisAtRate for every axis of
// the three example airframes, one sub-benchmark each (file/axis).
func BenchmarkDesignDemoAxes(b *testing.B) {
	for _, name := range []string{"quadrotor", "gimbal", "rover"} {
		data, err := os.ReadFile("../examples/" + name + ".toml")
		if err != nil {
			b.Fatal(err)
		}
		f, err := airframe.Parse(name+".toml", data)
		if err != nil {
			b.Fatal(err)
		}
		for _, p := range f.Axes {
			b.Run(name+"/"+p.Name, func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, err := DesignAxis(p, f.Loop, f.Numeric); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
