package main

import (
	"fmt"
	"io"
	"os"

	"locusmith/airframe"
)

// loadFile reads the airframe file at path and parses it. It reads at most
// airframe.MaxFileBytes+1 bytes, which is enough for the parser to refuse
// a file that is too long without holding all of it. A file that cannot be
// read gives the wrapped os error; invalid content an *airframe.Errors.
func loadFile(path string) (*airframe.File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("read airframe file: %w", err)
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, airframe.MaxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("read airframe file: %w", err)
	}
	return airframe.Parse(path, data)
}
