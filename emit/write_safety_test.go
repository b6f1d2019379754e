//go:build unix

package emit

import (
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"
)

// The writer touches only regular files of its output directory: a
// symbolic link named like an output is neither read (its
// target would show in the --check diff), nor replaced, nor followed; a
// named pipe is not opened (it would block), a directory not read. Each
// is an error naming the path and what it is, and nothing is written.
func TestWriterRefusesNonRegular(t *testing.T) {
	secret := filepath.Join(t.TempDir(), "environ")
	if err := os.WriteFile(secret, []byte("TOKEN=hunter2\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		make func(t *testing.T, p string)
		what string
	}{
		{"symlink to a file", func(t *testing.T, p string) {
			if err := os.Symlink(secret, p); err != nil {
				t.Skip("no symbolic links:", err)
			}
		}, "a symbolic link"},
		{"dangling symlink", func(t *testing.T, p string) {
			if err := os.Symlink(filepath.Join(t.TempDir(), "nowhere"), p); err != nil {
				t.Skip("no symbolic links:", err)
			}
		}, "a symbolic link"},
		{"symlink to /dev/zero", func(t *testing.T, p string) {
			if err := os.Symlink("/dev/zero", p); err != nil {
				t.Skip("no symbolic links:", err)
			}
		}, "a symbolic link"},
		{"named pipe", func(t *testing.T, p string) {
			if err := syscall.Mkfifo(p, 0o644); err != nil {
				t.Skip("no named pipes:", err)
			}
		}, "a named pipe"},
		{"directory", func(t *testing.T, p string) {
			if err := os.Mkdir(p, 0o755); err != nil {
				t.Fatal(err)
			}
		}, "a directory"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			bad := filepath.Join(dir, "x_rate.h")
			tc.make(t, bad)
			srcs := []Source{{Name: "x_rate.c", Data: []byte("c\n")}, {Name: "x_rate.h", Data: []byte("h\n")}}
			before, _ := os.Lstat(bad)

			d, err := CheckSources(dir, srcs, 0)
			var nr *NotRegularError
			if !errors.As(err, &nr) || nr.Path != bad || nr.What != tc.what {
				t.Errorf("CheckSources: %v (drift %s), want a NotRegularError for %s, %s", err, d, bad, tc.what)
			}
			if err != nil && strings.Contains(err.Error(), "hunter2") {
				t.Errorf("the link's target reached the message: %v", err)
			}

			w, err := WriteSources(dir, srcs)
			if !errors.As(err, &nr) || nr.Path != bad {
				t.Errorf("WriteSources: written %v, %v; want a NotRegularError for %s", w, err, bad)
			}
			if len(w) != 0 {
				t.Errorf("wrote %v", w)
			}
			es, _ := os.ReadDir(dir)
			if len(es) != 1 {
				t.Errorf("the directory holds %d entries, want only the refused one", len(es))
			}
			after, err := os.Lstat(bad)
			if err != nil || after.Mode() != before.Mode() || !os.SameFile(before, after) {
				t.Errorf("the refused entry was changed: %v", err)
			}
			if b, _ := os.ReadFile(secret); string(b) != "TOKEN=hunter2\n" {
				t.Errorf("the link's target was changed: %q", b)
			}
		})
	}
}

// A file locusmith did not generate but that is not regular (a link, a
// pipe) is skipped by the scan for unexpected generated files, without
// opening it: the scan neither follows nor blocks.
func TestCheckSkipsSpecialUnexpected(t *testing.T) {
	dir := t.TempDir()
	gen := filepath.Join(t.TempDir(), "old_rate.h")
	if err := os.WriteFile(gen, []byte(generatedMarker+"x from y.toml; DO NOT EDIT.\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(gen, filepath.Join(dir, "old_rate.h")); err != nil {
		t.Skip("no symbolic links:", err)
	}
	if err := syscall.Mkfifo(filepath.Join(dir, "pipe_rate.h"), 0o644); err != nil {
		t.Skip("no named pipes:", err)
	}
	d, err := CheckSources(dir, nil, 0)
	if err != nil || !d.Clean() {
		t.Errorf("CheckSources: %v, drift %s; want a clean directory (nothing regular and generated)", err, d)
	}
}

// An existing output is read no further than the generated size plus one
// byte when writing (a huge file differs), so a file grown to gigabytes
// costs nothing.
func TestReadOutputBounded(t *testing.T) {
	dir := t.TempDir()
	big := make([]byte, 1<<20)
	if err := os.WriteFile(filepath.Join(dir, "x_rate.h"), big, 0o644); err != nil {
		t.Fatal(err)
	}
	data, ok, err := readOutput(dir, "x_rate.h", 10)
	if err != nil || !ok || len(data) != 10 {
		t.Errorf("readOutput: %d bytes, %v, %v; want 10 bytes", len(data), ok, err)
	}
	w, err := WriteSources(dir, []Source{{Name: "x_rate.h", Data: []byte("h\n")}})
	if err != nil || !slices.Equal(w, []string{"x_rate.h"}) {
		t.Errorf("WriteSources: %v, %v", w, err)
	}
}

// Interrupted writes: the temporary files a killed run
// leaves (.NAME.tmp-DIGITS, and the probe files of earlier versions,
// .locusmith-probe-DIGITS) make --check report the directory as not up
// to date, and the next write removes those of the names it is given,
// whether it writes them or finds them unchanged. Other dot files, and
// temporaries of names the run does not produce, stay.
func TestStaleTemporaries(t *testing.T) {
	dir := t.TempDir()
	srcs := []Source{{Name: "x_rate.c", Data: []byte("c\n")}, {Name: "x_rate.h", Data: []byte("h\n")}}
	if _, err := WriteSources(dir, srcs); err != nil {
		t.Fatal(err)
	}
	stale := []string{".x_rate.h.tmp-123456", ".x_rate.c.tmp-9", ".locusmith-probe-42"}
	keep := []string{".x_rate.h.tmp-abc", ".y_rate.h.tmp-77", ".gitignore", ".x_rate.h.tmp-"}
	for _, n := range append(append([]string(nil), stale...), keep...) {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("partial"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	d, err := CheckSources(dir, srcs, 0)
	if err != nil {
		t.Fatal(err)
	}
	var want []string
	for _, n := range stale {
		want = append(want, filepath.Join(dir, n))
	}
	slices.Sort(want)
	if d.Clean() || !slices.Equal(d.Temporary, want) {
		t.Errorf("--check: temporary %v, clean %v; want %v and not clean", d.Temporary, d.Clean(), want)
	}
	if !strings.Contains(d.String(), "temporary: "+want[0]+" (left by an interrupted run") {
		t.Errorf("drift text lacks the temporary files:\n%s", d)
	}

	// The files are up to date: nothing written, the stale ones removed.
	st := NewStaged(dir)
	if err := st.Add(srcs); err != nil {
		t.Fatal(err)
	}
	w, err := st.Commit()
	if err != nil || len(w) != 0 {
		t.Fatalf("commit: %v, wrote %v; want nothing written", err, w)
	}
	removed := append([]string(nil), st.Removed...)
	slices.Sort(removed)
	wantRemoved := append([]string(nil), stale...)
	slices.Sort(wantRemoved)
	if !slices.Equal(removed, wantRemoved) {
		t.Errorf("removed %v, want %v", removed, wantRemoved)
	}
	for _, n := range keep {
		if _, err := os.Lstat(filepath.Join(dir, n)); err != nil {
			t.Errorf("%s removed: %v", n, err)
		}
	}
	if d, err := CheckSources(dir, srcs, 0); err != nil || !d.Clean() {
		t.Errorf("--check after the run: %v\n%s", err, d)
	}
}

// permFS cannot create files: a read-only directory.
type permFS struct{ osFS }

func (permFS) CreateTemp(dir, pattern string) (tempFile, error) {
	return nil, &fs.PathError{Op: "open", Path: filepath.Join(dir, pattern), Err: fs.ErrPermission}
}

// A read-only output directory is fine when nothing
// needs writing, and an error naming it as not writable, with nothing
// changed, when something does. The directory check does not ask for
// write permission.
func TestReadOnlyOutputDir(t *testing.T) {
	dir := t.TempDir()
	srcs := []Source{{Name: "x_rate.c", Data: []byte("c\n")}, {Name: "x_rate.h", Data: []byte("h\n")}}
	if _, err := WriteSources(dir, srcs); err != nil {
		t.Fatal(err)
	}
	if w, err := writeSources(permFS{}, dir, srcs); err != nil || len(w) != 0 {
		t.Errorf("up to date in a read-only directory: wrote %v, %v; want nothing and no error", w, err)
	}
	next := []Source{srcs[0], {Name: "x_rate.h", Data: []byte("h2\n")}}
	w, err := writeSources(permFS{}, dir, next)
	if err == nil || !strings.Contains(err.Error(), "not writable") || !errors.Is(err, fs.ErrPermission) || len(w) != 0 {
		t.Errorf("a change in a read-only directory: wrote %v, %v; want a 'not writable' error", w, err)
	}
	if got := readDir(t, dir); len(got) != 2 || got["x_rate.h"] != "h\n" {
		t.Errorf("directory changed: %q", got)
	}
	ro := filepath.Join(t.TempDir(), "ro")
	if err := os.Mkdir(ro, 0o555); err != nil {
		t.Fatal(err)
	}
	if err := CheckOutputDir(ro, true); err != nil {
		t.Errorf("CheckOutputDir of a read-only directory: %v; the write says whether it must write", err)
	}
}

// Abort removes every temporary file of a Staged write, and the directory
// keeps its old files; Add after Abort is an error.
func TestStagedAbort(t *testing.T) {
	dir := t.TempDir()
	if _, err := WriteSources(dir, []Source{{Name: "a.md", Data: []byte("old\n")}}); err != nil {
		t.Fatal(err)
	}
	st := NewStaged(dir)
	if err := st.Add([]Source{{Name: "a.md", Data: []byte("new\n")}}); err != nil {
		t.Fatal(err)
	}
	if err := st.Add([]Source{{Name: "b.svg", Data: []byte("<svg/>\n")}}); err != nil {
		t.Fatal(err)
	}
	if got := readDir(t, dir); len(got) != 3 {
		t.Fatalf("want the old file and two temporary files, have %v", keys(got))
	}
	st.Abort()
	if got := readDir(t, dir); len(got) != 1 || got["a.md"] != "old\n" {
		t.Errorf("after Abort: %q", got)
	}
	if err := st.Add([]Source{{Name: "c.md", Data: nil}}); err == nil {
		t.Error("Add after Abort accepted")
	}
	if _, err := st.Commit(); err == nil {
		t.Error("Commit after Abort accepted")
	}
}
