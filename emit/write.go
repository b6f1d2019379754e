package emit

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// Writing files: this is the one writer of the tool. Generated code, the
// review's pages and plots, and identify's plots all go through
// WriteSources.
//
// A firmware build runs emit on every build, so the writer
//
//   - writes a file only when its content changed, and leaves an unchanged
//     file alone (its mtime too, so make does not rebuild);
//   - never leaves a partial file: each file is written to a temporary file
//     in the same directory, synced, and renamed over the old one (a
//     rename within a directory is atomic on POSIX file systems), and the
//     renames happen only after every temporary file of the call was
//     written, so a full disk or a failed write leaves the old files as
//     they were; after the renames the directory itself is synced where
//     the operating system allows it, so that the new names survive a
//     power cut;
//   - writes only base names into the output directory: no name with a
//     separator, "..", or a leading dot;
//   - checks, after its renames, that every file it left alone as
//     unchanged is still there, and writes again one that vanished
//     meanwhile (a clean step of the build, a person tidying up), so that
//     a run that reports success leaves every output in place.

// writeFS is the file-system access of the writer, replaceable in tests to
// simulate a failing disk.
type writeFS interface {
	CreateTemp(dir, pattern string) (tempFile, error)
	Rename(oldpath, newpath string) error
	Remove(name string) error
}

// tempFile is the part of *os.File the writer uses.
type tempFile interface {
	io.Writer
	Name() string
	Sync() error
	Chmod(fs.FileMode) error
	Close() error
}

type osFS struct{}

func (osFS) CreateTemp(dir, pattern string) (tempFile, error) { return os.CreateTemp(dir, pattern) }
func (osFS) Rename(o, n string) error                         { return os.Rename(o, n) }
func (osFS) Remove(n string) error                            { return os.Remove(n) }

// safeName checks that name is a plain file name to write into the output
// directory.
func safeName(name string) error {
	if name == "" || name == "." || name == ".." || strings.HasPrefix(name, ".") ||
		strings.ContainsAny(name, `/\:`) || filepath.Base(name) != name || strings.ContainsRune(name, 0) {
		return fmt.Errorf("refusing to write %q: not a plain file name inside the output directory", name)
	}
	return nil
}

// CheckOutputDir checks that dir exists and is a directory, and, when
// write is set, that a file can be created in it (the probe file is
// removed again).
func CheckOutputDir(dir string, write bool) error {
	st, err := os.Stat(dir)
	if write && errors.Is(err, fs.ErrNotExist) {
		// A missing directory is made by WriteSources (MakeOutputDir),
		// once there is something to write, if its parent exists and is
		// writable; a missing parent is a mistake in the path.
		parent := filepath.Dir(filepath.Clean(dir))
		if pst, perr := os.Stat(parent); perr != nil || !pst.IsDir() {
			return fmt.Errorf("output directory %s: neither it nor its parent %s exists", dir, parent)
		}
		return CheckOutputDir(parent, true)
	}
	if err != nil {
		return fmt.Errorf("output directory: %w", err)
	}
	if !st.IsDir() {
		return fmt.Errorf("output directory %s: not a directory", dir)
	}
	if !write {
		return nil
	}
	f, err := os.CreateTemp(dir, ".locusmith-probe-*")
	if err != nil {
		return fmt.Errorf("output directory %s: not writable: %w", dir, err)
	}
	name := f.Name()
	cerr := f.Close()
	if rerr := os.Remove(name); rerr != nil {
		return fmt.Errorf("output directory %s: removing probe file: %w", dir, rerr)
	}
	if cerr != nil {
		return fmt.Errorf("output directory %s: %w", dir, cerr)
	}
	return nil
}

// WriteSources writes srcs into dir, each only when its content differs
// from the file already there. It returns the names it wrote. On error
// nothing was renamed: every old file is intact, and no temporary file is
// left behind.
func WriteSources(dir string, srcs []Source) ([]string, error) {
	if len(srcs) > 0 {
		if err := MakeOutputDir(dir); err != nil {
			return nil, err
		}
	}
	return writeSources(osFS{}, dir, srcs)
}

// MakeOutputDir creates dir if it is missing (not its parents).
func MakeOutputDir(dir string) error {
	if err := os.Mkdir(dir, 0o755); err != nil && !errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("output directory: %w", err)
	}
	return nil
}

func writeSources(fsys writeFS, dir string, srcs []Source) (written []string, err error) {
	type pending struct{ tmp, dst, name string }
	var todo []pending
	defer func() {
		if err != nil {
			for _, p := range todo {
				_ = fsys.Remove(p.tmp)
			}
		}
	}()
	seen := map[string]bool{}
	var kept []Source // unchanged, left alone
	for _, s := range srcs {
		if err := safeName(s.Name); err != nil {
			return nil, err
		}
		if seen[s.Name] {
			return nil, fmt.Errorf("two generated files are named %s", s.Name)
		}
		seen[s.Name] = true
		dst := filepath.Join(dir, s.Name)
		old, rerr := os.ReadFile(dst)
		if rerr == nil && bytes.Equal(old, s.Data) {
			kept = append(kept, s)
			continue
		}
		if rerr != nil && !errors.Is(rerr, fs.ErrNotExist) {
			return nil, fmt.Errorf("read %s: %w", dst, rerr)
		}
		tmp, err := writeTemp(fsys, dir, s)
		if tmp != "" {
			todo = append(todo, pending{tmp: tmp, dst: dst, name: s.Name})
		}
		if err != nil {
			return nil, err
		}
	}
	for i, p := range todo {
		if err := fsys.Rename(p.tmp, p.dst); err != nil {
			// The files renamed so far are complete new versions; the rest
			// keep their old content. Say which is which.
			done := make([]string, 0, i)
			for _, q := range todo[:i] {
				done = append(done, q.name)
			}
			todo = todo[i:]
			return done, fmt.Errorf("rename %s: %w (already replaced: %s)", p.dst, err, strings.Join(done, ", "))
		}
		written = append(written, p.name)
	}
	todo = nil
	if len(written) > 0 {
		syncDir(dir)
	}
	// An unchanged file removed since it was compared is written again.
	for _, s := range kept {
		dst := filepath.Join(dir, s.Name)
		if _, err := os.Lstat(dst); err == nil || !errors.Is(err, fs.ErrNotExist) {
			continue
		}
		tmp, err := writeTemp(fsys, dir, s)
		if err == nil {
			err = fsys.Rename(tmp, dst)
		}
		if err != nil {
			if tmp != "" {
				_ = fsys.Remove(tmp)
			}
			return written, fmt.Errorf("%s vanished while the outputs were written, and writing it again failed: %w", dst, err)
		}
		written = append(written, s.Name)
	}
	return written, nil
}

// syncDir flushes the directory entry changes of dir (the renames) to
// disk. Some systems cannot sync a directory (Windows, some network file
// systems); the files themselves were synced before the renames, so a
// failure here is not an error of the write.
func syncDir(dir string) {
	d, err := os.Open(dir)
	if err != nil {
		return
	}
	_ = d.Sync()
	_ = d.Close()
}

// writeTemp writes s to a new temporary file in dir and returns its name
// (also on error, for the caller to remove).
func writeTemp(fsys writeFS, dir string, s Source) (string, error) {
	f, err := fsys.CreateTemp(dir, "."+s.Name+".tmp-*")
	if err != nil {
		return "", fmt.Errorf("create temporary file for %s: %w", s.Name, err)
	}
	name := f.Name()
	_, werr := f.Write(s.Data)
	if werr == nil {
		werr = f.Chmod(0o644)
	}
	if werr == nil {
		werr = f.Sync()
	}
	cerr := f.Close()
	if werr == nil {
		werr = cerr
	}
	if werr != nil {
		return name, fmt.Errorf("write %s: %w", filepath.Join(dir, s.Name), werr)
	}
	return name, nil
}

// Drift is the difference between generated files and a directory.
type Drift struct {
	Stale      []FileDiff // present with other content
	Missing    []string   // not present
	Unexpected []string   // present, generated by locusmith, not generated now
}

// FileDiff is a stale file and a short unified diff from the file in the
// directory to the generated content.
type FileDiff struct {
	Name string
	Diff string
}

// Clean reports whether the directory matches.
func (d Drift) Clean() bool {
	return len(d.Stale) == 0 && len(d.Missing) == 0 && len(d.Unexpected) == 0
}

// String lists the drift, one file per line, with the diffs.
func (d Drift) String() string {
	var b strings.Builder
	for _, m := range d.Missing {
		fmt.Fprintf(&b, "missing: %s\n", m)
	}
	for _, u := range d.Unexpected {
		fmt.Fprintf(&b, "unexpected: %s (generated by locusmith, but not by this run)\n", u)
	}
	for _, s := range d.Stale {
		fmt.Fprintf(&b, "stale: %s\n%s", s.Name, s.Diff)
	}
	return b.String()
}

// generatedMarker begins the first line of every file locusmith generates.
const generatedMarker = "// Code generated by locusmith "

// CheckSources compares srcs with the files in dir and writes nothing.
// A file of dir is unexpected when its first line says locusmith generated
// it and srcs has no file of that name: give --check every airframe of
// the directory. maxDiffLines bounds each diff (0: 40 lines).
func CheckSources(dir string, srcs []Source, maxDiffLines int) (Drift, error) {
	var d Drift
	if maxDiffLines <= 0 {
		maxDiffLines = 40
	}
	want := map[string]bool{}
	for _, s := range srcs {
		if err := safeName(s.Name); err != nil {
			return d, err
		}
		want[s.Name] = true
		p := filepath.Join(dir, s.Name)
		old, err := os.ReadFile(p)
		switch {
		case errors.Is(err, fs.ErrNotExist):
			d.Missing = append(d.Missing, p)
		case err != nil:
			return d, fmt.Errorf("read %s: %w", p, err)
		case !bytes.Equal(old, s.Data):
			d.Stale = append(d.Stale, FileDiff{Name: p, Diff: unifiedDiff("a/"+s.Name, "b/"+s.Name, string(old), string(s.Data), 3, maxDiffLines)})
		}
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return d, fmt.Errorf("read output directory: %w", err)
	}
	for _, e := range entries {
		if !e.Type().IsRegular() || want[e.Name()] || strings.HasPrefix(e.Name(), ".") {
			continue
		}
		p := filepath.Join(dir, e.Name())
		ok, err := looksGenerated(p)
		if err != nil {
			return d, err
		}
		if ok {
			d.Unexpected = append(d.Unexpected, p)
		}
	}
	sort.Strings(d.Missing)
	sort.Strings(d.Unexpected)
	sort.Slice(d.Stale, func(i, j int) bool { return d.Stale[i].Name < d.Stale[j].Name })
	return d, nil
}

// looksGenerated reports whether the first line of the file at p is
// locusmith's "Code generated" line.
func looksGenerated(p string) (bool, error) {
	f, err := os.Open(p)
	if err != nil {
		return false, fmt.Errorf("open %s: %w", p, err)
	}
	defer f.Close()
	line, err := bufio.NewReaderSize(f, 512).ReadString('\n')
	if err != nil && !errors.Is(err, io.EOF) {
		return false, fmt.Errorf("read %s: %w", p, err)
	}
	return strings.HasPrefix(line, generatedMarker), nil
}
