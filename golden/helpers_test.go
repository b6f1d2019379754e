package golden

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"locusmith/airframe"
	"locusmith/emit"
)

// strictC are the host compiler flags every generated C file must pass:
// ISO C99, every usual warning an error, and -Wfloat-equal, which
// firmware built to strict coding rules often adds.
var strictC = []string{"-std=c99", "-Wall", "-Wextra", "-Wpedantic", "-Wconversion", "-Wsign-conversion",
	"-Wdouble-promotion", "-Wshadow", "-Wfloat-equal", "-Werror"}

// Cortex-M flags: M4F with its single-precision FPU, and M0 without FPU.
var (
	m4f = []string{"-mcpu=cortex-m4", "-mthumb", "-mfloat-abi=hard", "-mfpu=fpv4-sp-d16"}
	m0  = []string{"-mcpu=cortex-m0", "-mthumb", "-mfloat-abi=soft"}
)

// tool returns the path of an optional tool, or skips the test saying what
// installs it.
func tool(t testing.TB, name, pkg string) string {
	t.Helper()
	p, err := exec.LookPath(name)
	if err != nil {
		t.Skipf("%s not found: install %s (.ci/run does, so CI runs this test)", name, pkg)
	}
	return p
}

// hostCompilers lists gcc and, when installed, clang; it skips when
// neither is there.
func hostCompilers(t testing.TB) []string {
	t.Helper()
	var cs []string
	for _, c := range []string{"gcc", "clang"} {
		if p, err := exec.LookPath(c); err == nil {
			cs = append(cs, p)
		}
	}
	if len(cs) == 0 {
		t.Skip("no host C compiler (gcc or clang) found; .ci/run installs them")
	}
	if len(cs) == 1 {
		t.Logf("only %s found; clang is optional here (.ci/run installs it)", cs[0])
	}
	return cs
}

// run runs a command in dir with a time limit and fails the test with its
// output when it fails.
func run(t testing.TB, dir string, name string, args ...string) string {
	t.Helper()
	out, err := runErr(dir, name, args...)
	if err != nil {
		t.Fatalf("%s %s: %v\n%s", filepath.Base(name), strings.Join(args, " "), err, out)
	}
	return out
}

func runErr(dir string, name string, args ...string) (string, error) {
	if out, ok, err := compiled(dir, name, args); ok {
		return out, err
	}
	return runUncached(dir, name, args...)
}

// runUncached is runErr without the compiler cache.
func runUncached(dir string, name string, args ...string) (string, error) {
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, name, args...)
	cmd.Dir = dir
	var b bytes.Buffer
	cmd.Stdout, cmd.Stderr = &b, &b
	err := cmd.Run()
	return b.String(), err
}

// writeSources writes srcs into a new temporary directory.
func writeSources(t testing.TB, srcs []emit.Source) string {
	t.Helper()
	dir := t.TempDir()
	for _, s := range srcs {
		if err := os.WriteFile(filepath.Join(dir, s.Name), s.Data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// cFiles returns the .c files of srcs, the controller and the vector
// program apart; the qemu-arm start-up stub of the vector program
// (qemuStub) is in neither.
func cFiles(srcs []emit.Source) (ctrl, vectors []string) {
	for _, s := range srcs {
		switch {
		case strings.HasSuffix(s.Name, "_vectors.c"):
			vectors = append(vectors, s.Name)
		case strings.HasSuffix(s.Name, "_vectors_qemu.c"):
		case strings.HasSuffix(s.Name, ".c"):
			ctrl = append(ctrl, s.Name)
		}
	}
	return ctrl, vectors
}

// qemuStub returns the name of the qemu-arm start-up stub among srcs, or
// "".
func qemuStub(srcs []emit.Source) string {
	for _, s := range srcs {
		if strings.HasSuffix(s.Name, "_vectors_qemu.c") {
			return s.Name
		}
	}
	return ""
}

// headerOf returns the name of the generated header.
func headerOf(srcs []emit.Source) string {
	for _, s := range srcs {
		if strings.HasSuffix(s.Name, ".h") {
			return s.Name
		}
	}
	return ""
}

// loadAirframe reads and parses the airframe file at path.
func loadAirframe(path string) (*airframe.File, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return airframe.Parse(path, data)
}
