//go:build unix

package main

import (
	"os"
	"syscall"
)

// openNoBlock opens path for reading without waiting for the writer of a
// named pipe (O_NONBLOCK; it changes nothing for a regular file, and the
// caller refuses anything else).
func openNoBlock(path string) (*os.File, error) {
	return os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
}
