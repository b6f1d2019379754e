package main

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestProgressOnStderr: every verb keeps stdout for its output (design's
// table or JSON, identify's TOML, emit --check's drift) and writes what
// it is doing (the files written) on stderr, so that a build can capture
// one without the other.
func TestProgressOnStderr(t *testing.T) {
	ex := filepath.Join("..", "..", "examples", "rover.toml")
	gen := filepath.Join(t.TempDir(), "gen")
	code, out, errs := runCLI(t, "emit", "-o", gen, ex)
	if code != exitOK || out != "" || !strings.Contains(errs, "wrote "+filepath.Join(gen, "burrow_rate.h")) {
		t.Errorf("emit: exit %d, stdout %q, stderr %q", code, out, errs)
	}
	code, out, errs = runCLI(t, "report", "-o", filepath.Join(t.TempDir(), "review"), ex)
	if code != exitOK || out != "" || !strings.Contains(errs, "wrote burrow.md") {
		t.Errorf("report: exit %d, stdout %q, stderr %q", code, out, errs)
	}
	code, out, _ = runCLI(t, "design", ex)
	if code != exitOK || !strings.Contains(out, "airframe burrow") {
		t.Errorf("design: exit %d, stdout %q", code, out)
	}
}
