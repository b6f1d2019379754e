package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"syscall"
	"testing"

	"locusmith/internal/fleet"
)

// BenchmarkFleetProcess is a verb as a whole process on generated fleets
// of 1, 10, 100 and 1000 demo airframes (internal/fleet): `design --json
// -j 2`, `emit -j 2 -o DIR` and `report -j 2 -o DIR`, the wall time per
// run (ns/op) and the process's peak resident memory (peak-MB), the
// figures of the README's scaling table. Run it with -benchtime 1x for
// the large fleets; -bench 'FleetProcess/design' for one verb.
func BenchmarkFleetProcess(b *testing.B) {
	bin := filepath.Join(b.TempDir(), "locusmith")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		b.Fatalf("go build: %v\n%s", err, out)
	}
	for _, verb := range []string{"design", "emit", "report"} {
		for _, n := range []int{1, 10, 100, 1000} {
			srcs, err := fleet.Make(n)
			if err != nil {
				b.Fatal(err)
			}
			dir := b.TempDir()
			var args []string
			switch verb {
			case "design":
				args = []string{"design", "--json", "-j", "2"}
			default:
				args = []string{verb, "-j", "2", "-o", filepath.Join(dir, "out")}
			}
			for _, s := range srcs {
				path := filepath.Join(dir, s.Name)
				if err := os.WriteFile(path, s.Data, 0o644); err != nil {
					b.Fatal(err)
				}
				args = append(args, path)
			}
			b.Run(fmt.Sprintf("%s/%d", verb, n), func(b *testing.B) {
				peak := int64(0)
				for b.Loop() {
					os.RemoveAll(filepath.Join(dir, "out"))
					cmd := exec.Command(bin, args...)
					if err := cmd.Run(); err != nil {
						if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitUnmet {
							b.Fatalf("%s: %v", verb, err)
						}
					}
					if ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
						peak = max(peak, ru.Maxrss) // KiB on Linux
					}
				}
				b.ReportMetric(float64(peak)/1024, "peak-MB")
			})
		}
	}
}
