//go:build !unix

package main

import "os"

// openNoBlock opens path for reading; systems without unix named pipes
// have no open that blocks on a path that stat called regular.
func openNoBlock(path string) (*os.File, error) {
	return os.Open(path)
}
