package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"

	"locusmith/internal/fleet"
)

// TestCrossArch builds the CLI for the host and for arm64
// (CGO_ENABLED=0 GOARCH=arm64) once and compares what the two print and
// write, arm64 under qemu-aarch64: every number of the review (its
// Markdown, HTML and SVGs) must not depend on the CPU. (golden's
// TestCrossArchDeterminism does the same for the JSON report and the
// generated code of every example in every arithmetic, from one emit
// --json run each.)
// Go fuses x*y + z on arm64 and not on amd64 (complex products and
// quotients are such sums too), gonum's BLAS kernels are assembly on
// amd64 only, and math.Exp, Log and Hypot are assembly on amd64 and Go
// (or other assembly) elsewhere, so the last bits of the designs differ
// unless the numerics that feed output round every product before its
// sum and compute the elementary functions, the matrix exponential and
// the eigenvalues in Go of their own (internal/lti: portable.go, expm.go,
// eig.go; golden's TestNoFusedMultiplyAdd finds a fused sum without an
// emulator). The outside reference is the arm64 machine itself,
// emulated. Skips with -short, and when
// qemu-aarch64 is missing unless CI=true (.ci/run installs qemu-user, so
// a CI machine without it is a broken CI machine, not a reason to skip).
//
// The runs under the emulator take most of this package's time, so they
// start in the background before t.Parallel, in the sequential phase of
// the test binary, rather than once every parallel test before this one
// has had its turn; the subtests wait for them and compare.
func TestCrossArch(t *testing.T) {
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
			if os.Getenv("CI") == "true" {
				t.Fatal("qemu-aarch64 not found, and CI=true: install qemu-user (.ci/run does) to compare amd64 and arm64")
			}
			t.Skip("qemu-aarch64 not found: install qemu-user (.ci/run does) to compare amd64 and arm64")
		}
	}
	dir := t.TempDir()
	inputs := examples(t)
	for i, p := range inputs {
		abs, err := filepath.Abs(p)
		if err != nil {
			t.Fatal(err)
		}
		inputs[i] = abs
	}
	ctx, cancel := context.WithCancel(context.Background())
	var wg sync.WaitGroup
	// Registered after TempDir, so it runs first: a test that stops early
	// kills its runs and waits for them before the directory goes.
	t.Cleanup(func() { cancel(); wg.Wait() })
	host := crossBin{name: "host"}
	again := crossBin{name: "host-again"}
	arm := crossBin{name: "arm64", emu: emu}
	var buildErr error
	built := make(chan struct{})
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(built)
		if host.bin, buildErr = hostCLIBuild(); buildErr == nil {
			again.bin = host.bin
			arm.bin, buildErr = buildForErr(dir, "arm64")
		}
	}()
	// start runs b with args in wd in the background, once the builds are
	// there; its output arrives on the channel.
	start := func(b *crossBin, wd string, args ...string) <-chan crossOut {
		ch := make(chan crossOut, 1)
		wg.Add(1)
		go func() {
			defer wg.Done()
			if <-built; buildErr != nil {
				ch <- crossOut{err: buildErr}
				return
			}
			out, err := b.output(ctx, wd, args...)
			ch <- crossOut{out: out, err: err}
		}()
		return ch
	}
	// report: the host twice and arm64, each into its own directory.
	reports := map[string]<-chan crossOut{}
	for _, who := range []*crossBin{&arm, &host, &again} {
		reports[who.name] = start(who, dir, append([]string{"report", "-o", filepath.Join(dir, "review-"+who.name)}, inputs...)...)
	}
	t.Parallel()
	t.Run("report", func(t *testing.T) {
		outs := map[string]map[string][]byte{}
		for _, who := range []string{"host", "host-again", "arm64"} {
			if r := <-reports[who]; r.err != nil {
				t.Fatal(r.err)
			}
			outs[who] = readTree(t, filepath.Join(dir, "review-"+who))
		}
		reportCrossArch(t, outs)
	})
	t.Run("design-json-fleet", func(t *testing.T) {
		if <-built; buildErr != nil {
			t.Fatal(buildErr)
		}
		fleetCrossArch(t, dir, host, arm)
	})
}

// crossBin is a build of the CLI and the emulator that runs it ("" for
// the host's own).
type crossBin struct{ name, bin, emu string }

// command returns the command running b with args in directory wd, killed
// when ctx is done.
func (b crossBin) command(ctx context.Context, wd string, args ...string) *exec.Cmd {
	bin := b.bin
	if b.emu != "" {
		args = append([]string{b.bin}, args...)
		bin = b.emu
	}
	cmd := exec.CommandContext(ctx, bin, args...)
	cmd.Dir = wd
	return cmd
}

// run runs b with args in wd and returns its stdout; any exit status but
// 0 is fatal, with stderr shown (the inputs all meet their specs).
func (b crossBin) run(t *testing.T, wd string, args ...string) []byte {
	t.Helper()
	out, err := b.output(context.Background(), wd, args...)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// output is run without a test: the error says which build, command and
// stderr.
func (b crossBin) output(ctx context.Context, wd string, args ...string) ([]byte, error) {
	cmd := b.command(ctx, wd, args...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		return nil, fmt.Errorf("%s: locusmith %s: %v\n%s", b.name, strings.Join(args, " "), err, errb.String())
	}
	return out.Bytes(), nil
}

// crossOut is the outcome of one run of TestCrossArch: its stdout, or
// the error.
type crossOut struct {
	out []byte
	err error
}

// reportCrossArch requires the reports that `report` wrote on every
// example with the host build (twice) and the arm64 build to be the same
// files byte for byte. The root locus was drawn as polylines whose shape
// at a breakaway point followed the last bits of the roots
// (gimbal_cam-yaw-locus*.svg differed before plots.go drew it in
// canonical pieces).
func reportCrossArch(t *testing.T, outs map[string]map[string][]byte) {
	ref := outs["host"]
	if len(ref) < 3*10 {
		t.Fatalf("the host wrote %d files; want a page and its plots per example", len(ref))
	}
	var names []string
	for n := range ref {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, other := range []string{"host-again", "arm64"} {
		got := outs[other]
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

// fleetCrossArch runs `design --json` on variants 1 to N of the fleet
// generator (internal/fleet: each example with its settling times slowed
// by 5 to 30 %, so that the searches take other paths) with the host and
// the arm64 build and requires the same bytes. It runs when
// LOCUSMITH_CROSSARCH_FLEET sets N (7 covers every slowing of every
// example from the second variant on): under the emulator it costs
// about 2.5 s per airframe, beyond the budget of a default test run.
// With N = 7 it passed once internal/lti's margins searched the
// crossovers with exp and log of their own: with math.Exp and math.Log,
// assembly on amd64 only, the continuous delay_margin of v2's pan axis
// printed 0.08928880795 on amd64 and 0.08928880796 on arm64. With N = 60
// 14 of the 59 airframes still differed in a tenth digit or more (the
// first a phase margin, 42.23598342 against …343; v13's ki in its ninth,
// the search having taken another path): Go fused the multiply-adds of
// the numerics on arm64, complex products and quotients among them, and
// the standard library's elementary functions and gonum's matrix
// exponential and eigenvalues differed in their last bits. The numerics
// now round every product and compute those with lti's own (portable.go,
// expm.go, eig.go), to amd64's bits: N = 60 passes (150 s for the fleet),
// N = 100 (300 s on a busy 2-core machine) and N = 200 (660 s).
func fleetCrossArch(t *testing.T, dir string, host, arm crossBin) {
	n, _ := strconv.Atoi(os.Getenv("LOCUSMITH_CROSSARCH_FLEET"))
	if n < 2 {
		t.Skip("set LOCUSMITH_CROSSARCH_FLEET=N (N ≥ 2) to compare fleet variants 1 to N-1 on amd64 and arm64")
	}
	srcs, err := fleet.Make(n)
	if err != nil {
		t.Fatal(err)
	}
	fleetDir := filepath.Join(dir, "fleet")
	if err := os.MkdirAll(fleetDir, 0o755); err != nil {
		t.Fatal(err)
	}
	args := []string{"design", "--json", "-j", "2"}
	for _, s := range srcs[1:] { // variant 0 is the quadrotor itself
		if err := os.WriteFile(filepath.Join(fleetDir, s.Name), s.Data, 0o644); err != nil {
			t.Fatal(err)
		}
		args = append(args, s.Name)
	}
	ref := host.run(t, fleetDir, args...)
	if got := arm.run(t, fleetDir, args...); !bytes.Equal(got, ref) {
		t.Errorf("arm64: design --json of fleet variants 1 to %d differs from the host's:\n%s", n-1, firstDiff(string(ref), string(got)))
	}
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
