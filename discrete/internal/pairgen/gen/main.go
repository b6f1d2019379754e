// Command gen writes discrete/pairkernels_gen.go (see package pairgen):
//
//	go run locusmith/discrete/internal/pairgen/gen
//
// It works from any directory of the module (go generate runs it in
// discrete): the file's path is relative to the module root, the nearest
// directory at or above the working directory that holds a go.mod.
package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"locusmith/discrete/internal/pairgen"
)

func main() {
	if err := run(); err != nil {
		fmt.Fprintln(os.Stderr, "pairgen:", err)
		os.Exit(1)
	}
}

func run() error {
	src, err := pairgen.Source()
	if err != nil {
		return err
	}
	root, err := moduleRoot()
	if err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(root, filepath.FromSlash(pairgen.File)), src, 0o666); err != nil {
		return fmt.Errorf("writing the kernels: %w", err)
	}
	return nil
}

// moduleRoot returns the nearest directory at or above the working
// directory that holds a go.mod file.
func moduleRoot() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", fmt.Errorf("finding the module root: %w", err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		up := filepath.Dir(dir)
		if up == dir {
			return "", errors.New("finding the module root: no go.mod in the working directory or above")
		}
		dir = up
	}
}
