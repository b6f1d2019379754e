package main

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
)

func TestLoadMissing(t *testing.T) {
	_, err := loadFile(filepath.Join(t.TempDir(), "absent.toml"))
	if !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("got %v, want a wrapped fs.ErrNotExist", err)
	}
	var errs *airframe.Errors
	if errors.As(err, &errs) {
		t.Errorf("a read error is not a content error")
	}
}

// A file longer than the limit is refused from its first MaxFileBytes+1
// bytes.
func TestLoadTooLarge(t *testing.T) {
	p := filepath.Join(t.TempDir(), "big.toml")
	big := "airframe = \"x\"\n# " + strings.Repeat("x", 3*airframe.MaxFileBytes) + "\n"
	if err := os.WriteFile(p, []byte(big), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := loadFile(p)
	var errs *airframe.Errors
	if !errors.As(err, &errs) || !strings.Contains(err.Error(), "file is larger than") {
		t.Errorf("got %v, want the size error", err)
	}
}
