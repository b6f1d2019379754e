package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sort"
	"testing"
)

// TestReportCrossArch builds the CLI for the host and for arm64
// (CGO_ENABLED=0 GOARCH=arm64), runs `report` on every example with both
// (arm64 under qemu-aarch64) and twice on the host, and requires the same
// files byte for byte: every number the review's SVGs print must not
// depend on the CPU (issue 14, item 10). Go fuses x*y + z on arm64 and
// not on amd64, gonum's eigenvalue kernels are assembly on amd64 only,
// and math.Exp, Log and Hypot are assembly on amd64 and Go (or other
// assembly) elsewhere, so the last bits of the designs' roots differ; the
// root locus was drawn from them as polylines whose shape at a breakaway
// point followed those bits (gimbal_cam-yaw-locus*.svg differed before
// plots.go drew it in canonical pieces). The outside reference is the
// arm64 machine itself, emulated. Skips with -short and when qemu-aarch64
// is missing (.ci/run installs qemu-user).
func TestReportCrossArch(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the CLI twice and runs it under an emulator; skipped with -short")
	}
	emu := ""
	if runtime.GOARCH != "arm64" {
		for _, name := range []string{"qemu-aarch64", "qemu-aarch64-static"} {
			if p, err := exec.LookPath(name); err == nil {
				emu = p
				break
			}
		}
		if emu == "" {
			t.Skip("qemu-aarch64 not found: install qemu-user (.ci/run does) to compare the report on amd64 and arm64")
		}
	}
	t.Parallel()
	dir := t.TempDir()
	host := buildFor(t, dir, "")
	arm := buildFor(t, dir, "arm64")
	inputs := examples(t)
	for i, p := range inputs {
		abs, err := filepath.Abs(p)
		if err != nil {
			t.Fatal(err)
		}
		inputs[i] = abs
	}
	outs := map[string]map[string][]byte{}
	for _, who := range []struct{ name, emu, bin string }{{"host", "", host}, {"host-again", "", host}, {"arm64", emu, arm}} {
		out := filepath.Join(dir, "review-"+who.name)
		args := append([]string{"report", "-o", out}, inputs...)
		bin := who.bin
		if who.emu != "" {
			args = append([]string{who.bin}, args...)
			bin = who.emu
		}
		cmd := exec.Command(bin, args...)
		var text bytes.Buffer
		cmd.Stdout, cmd.Stderr = &text, &text
		if err := cmd.Run(); err != nil {
			t.Fatalf("%s: report: %v\n%s", who.name, err, text.String())
		}
		outs[who.name] = readTree(t, out)
	}
	ref := outs["host"]
	if len(ref) < 3*10 {
		t.Fatalf("the host wrote %d files; want a page and its plots per example", len(ref))
	}
	for _, other := range []string{"host-again", "arm64"} {
		got := outs[other]
		var names []string
		for n := range ref {
			names = append(names, n)
		}
		sort.Strings(names)
		if len(got) != len(ref) {
			t.Errorf("%s wrote %d files, the host %d", other, len(got), len(ref))
		}
		for _, n := range names {
			if !bytes.Equal(got[n], ref[n]) {
				t.Errorf("%s: %s differs from the host's:\n%s", other, n, firstDiff(string(ref[n]), string(got[n])))
			}
		}
	}
}

// buildFor builds the CLI for goarch ("" for the host) into dir.
func buildFor(t *testing.T, dir, goarch string) string {
	t.Helper()
	name := "locusmith-host"
	env := os.Environ()
	if goarch != "" {
		name = "locusmith-" + goarch
		env = append(env, "GOARCH="+goarch, "CGO_ENABLED=0")
	}
	bin := filepath.Join(dir, name)
	goTool := filepath.Join(runtime.GOROOT(), "bin", "go")
	if _, err := os.Stat(goTool); err != nil {
		goTool = "go"
	}
	cmd := exec.Command(goTool, "build", "-o", bin, ".")
	cmd.Env = env
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build %s: %v\n%s", goarch, err, out)
	}
	return bin
}

// readTree reads every file of dir.
func readTree(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	m := map[string][]byte{}
	for _, e := range es {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		m[e.Name()] = b
	}
	return m
}
