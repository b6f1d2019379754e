//go:build !(linux || darwin || freebsd || openbsd || netbsd || dragonfly)

package golden

import "testing"

// mkfifo skips: the system has no named pipes that syscall can make.
func mkfifo(t *testing.T, path string) {
	t.Helper()
	t.Skipf("no named pipes on this system: cannot stop emit at a known point to make %s", path)
}
