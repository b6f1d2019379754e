//go:build unix

package emit

import (
	"errors"
	"os"
	"syscall"
)

// openNoFollow opens path for reading without following a symbolic link
// at its last element (the open fails with ELOOP) and without waiting for
// the writer of a named pipe.
func openNoFollow(path string) (*os.File, error) {
	return os.OpenFile(path, os.O_RDONLY|syscall.O_NOFOLLOW|syscall.O_NONBLOCK, 0)
}

// isLinkRefused reports whether err is the refusal of openNoFollow to
// open a symbolic link.
func isLinkRefused(err error) bool { return errors.Is(err, syscall.ELOOP) }

// lockDir takes an advisory lock on the directory dir (exclusive for a
// writer, shared for a reader) and returns its release. Where the file
// system has no locks (some network file systems) or dir cannot be
// opened, it returns at once with a release that does nothing: the lock
// only orders locusmith's own runs.
func lockDir(dir string, exclusive bool) func() {
	f, err := os.Open(dir)
	if err != nil {
		return func() {}
	}
	how := syscall.LOCK_SH
	if exclusive {
		how = syscall.LOCK_EX
	}
	for {
		err = syscall.Flock(int(f.Fd()), how)
		if !errors.Is(err, syscall.EINTR) {
			break
		}
	}
	if err != nil {
		f.Close()
		return func() {}
	}
	return func() {
		_ = syscall.Flock(int(f.Fd()), syscall.LOCK_UN)
		f.Close()
	}
}
