package main

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sync"
	"testing"
)

// The tests that need the CLI as a whole process (signals, exit codes of
// a process, another user, another architecture) share one host build:
// linking it costs about as much as the test that uses it. TestMain
// removes it after the tests.

// hostBuild is the host CLI, built once per test binary.
var hostBuild struct {
	once sync.Once
	dir  string // holds the binary; 0755, so that another user can run it
	bin  string
	err  error
}

// TestMain removes the host build after the tests.
func TestMain(m *testing.M) {
	// The source's directory where the binary knows it (not under
	// -trimpath), else the working directory go test starts the binary
	// in; tests may move the process later (TestJSONGolden).
	if _, self, _, ok := runtime.Caller(0); ok && filepath.IsAbs(self) {
		if _, err := os.Stat(self); err == nil {
			pkgDir = filepath.Dir(self)
		}
	}
	if wd, err := os.Getwd(); err == nil && pkgDir == "" {
		pkgDir = wd
	}
	code := m.Run()
	if hostBuild.dir != "" {
		os.RemoveAll(hostBuild.dir)
	}
	os.Exit(code)
}

// pkgDir is the package's directory, where TestMain started.
var pkgDir string

// hostCLI returns the host build of the CLI (buildFor's, shared), or fails
// the test.
func hostCLI(t *testing.T) string {
	t.Helper()
	bin, err := hostCLIBuild()
	if err != nil {
		t.Fatal(err)
	}
	return bin
}

// hostCLIBuild is hostCLI without a test, for a goroutine of one.
func hostCLIBuild() (string, error) {
	hostBuild.once.Do(func() {
		dir, err := os.MkdirTemp("", "locusmith-cmd-")
		if err == nil {
			err = os.Chmod(dir, 0o755)
		}
		if err != nil {
			hostBuild.err = err
			return
		}
		hostBuild.dir = dir
		hostBuild.bin, hostBuild.err = buildForErr(dir, "")
	})
	return hostBuild.bin, hostBuild.err
}

// buildFor builds the CLI for goarch ("" for the host) into dir.
func buildFor(t *testing.T, dir, goarch string) string {
	t.Helper()
	bin, err := buildForErr(dir, goarch)
	if err != nil {
		t.Fatal(err)
	}
	return bin
}

// buildForErr is buildFor without a test.
func buildForErr(dir, goarch string) (string, error) {
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
	// The package's own directory, not the working directory: builds run
	// in the background while a sequential test (TestJSONGolden) may
	// have moved the process to the repository root. (The source file's
	// path from runtime.Caller is no directory under -trimpath.)
	if pkgDir == "" {
		return "", fmt.Errorf("go build %s: the test's package directory is unknown", goarch)
	}
	cmd := exec.Command(goTool, "build", "-o", bin, ".")
	cmd.Dir = pkgDir
	cmd.Env = env
	if out, err := cmd.CombinedOutput(); err != nil {
		return "", fmt.Errorf("go build %s: %v\n%s", goarch, err, out)
	}
	return bin, nil
}
