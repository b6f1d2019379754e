//go:build linux || darwin || freebsd || openbsd || netbsd || dragonfly

package golden

import (
	"syscall"
	"testing"
)

// mkfifo makes a named pipe at path: a reader of it blocks until the test
// writes, which stops a process at a known point of its run.
func mkfifo(t *testing.T, path string) {
	t.Helper()
	if err := syscall.Mkfifo(path, 0o644); err != nil {
		t.Fatalf("mkfifo %s: %v", path, err)
	}
}
