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

// BenchmarkFleetProcess is `design --json -j 2` as a whole process on
// generated fleets of 1, 10, 100 and 1000 demo airframes (internal/fleet):
// the wall time per run (ns/op) and the process's peak resident memory
// (peak-MB), the figures of the README's scaling table. Run it with
// -benchtime 1x for the large fleets.
func BenchmarkFleetProcess(b *testing.B) {
	bin := filepath.Join(b.TempDir(), "locusmith")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		b.Fatalf("go build: %v\n%s", err, out)
	}
	for _, n := range []int{1, 10, 100, 1000} {
		srcs, err := fleet.Make(n)
		if err != nil {
			b.Fatal(err)
		}
		dir := b.TempDir()
		args := []string{"design", "--json", "-j", "2"}
		for _, s := range srcs {
			path := filepath.Join(dir, s.Name)
			if err := os.WriteFile(path, s.Data, 0o644); err != nil {
				b.Fatal(err)
			}
			args = append(args, path)
		}
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			peak := int64(0)
			for b.Loop() {
				cmd := exec.Command(bin, args...)
				if err := cmd.Run(); err != nil {
					if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitUnmet {
						b.Fatalf("design: %v", err)
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
