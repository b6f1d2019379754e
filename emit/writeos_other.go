//go:build !unix

package emit

import "os"

// openNoFollow opens path for reading. Without unix's O_NOFOLLOW the
// callers' Lstat before the open and the check of the opened file after
// it keep links out.
func openNoFollow(path string) (*os.File, error) { return os.Open(path) }

// isLinkRefused reports false: openNoFollow refuses nothing.
func isLinkRefused(error) bool { return false }

// lockDir does nothing where flock is missing: runs into one directory
// are then not ordered, and a temporary file of a concurrent run may be
// taken for a stale one.
func lockDir(string, bool) func() { return func() {} }
