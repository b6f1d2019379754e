package lti

import (
	"bytes"
	"os"
	"testing"

	"locusmith/internal/lti/internal/kernelgen"
)

// kernels_gen.go is what its generator makes (regenerate after a change to
// package kernelgen).
func TestKernelsUpToDate(t *testing.T) {
	want, err := kernelgen.Source()
	if err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile("kernels_gen.go")
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("kernels_gen.go is stale: run %s", kernelgen.Command)
	}
}
