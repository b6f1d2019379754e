// Package pyref runs reference computations in SciPy and NumPy (Debian's
// python3-scipy) from Go tests, so that numeric results are checked
// against a general-purpose library outside the project.
package pyref

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"sync"
	"testing"
)

// Python is Debian's interpreter, which has python3-scipy; a python3 found
// first on PATH (pyenv, venv) may not.
const Python = "/usr/bin/python3"

var probe struct {
	once    sync.Once
	version string
	err     error
}

// Versions returns "scipy X numpy Y", or an error when SciPy is missing.
func Versions() (string, error) {
	probe.once.Do(func() {
		out, err := exec.Command(Python, "-c", "import scipy, numpy; print('scipy', scipy.__version__, 'numpy', numpy.__version__)").Output()
		probe.version, probe.err = string(bytes.TrimSpace(out)), err
	})
	return probe.version, probe.err
}

// Run runs script with in as JSON on standard input and decodes its
// standard output (JSON) into out. It skips the test, with a message, when
// SciPy is not installed; under CI (CI=true) it fails instead, since
// .ci/run installs it.
func Run(t testing.TB, script string, in, out any) {
	t.Helper()
	if _, err := Versions(); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("SciPy is required under CI (%s: %v)", Python, err)
		}
		t.Skipf("SciPy not available (%s: %v); install Debian's python3-scipy", Python, err)
	}
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(Python, "-c", script)
	// One BLAS thread: the references solve many small systems, where
	// OpenBLAS's threads cost more system time than they save (the
	// envelope rebuild: 17 s of system time with them, 1.4 s without).
	cmd.Env = append(os.Environ(), "OPENBLAS_NUM_THREADS=1", "OMP_NUM_THREADS=1")
	cmd.Stdin = bytes.NewReader(data)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	res, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script failed: %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(res, out); err != nil {
		t.Fatalf("reference script output: %v\n%s", err, res)
	}
}
