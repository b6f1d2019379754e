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
	"sync"
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

// CheckOutputDir checks that dir exists and is a directory, or, when
// write is set, that it or its parent does (WriteSources makes a missing
// directory once there is something to write). It does not ask for
// write permission: a run that finds every file up to date writes
// nothing, and so succeeds on a read-only directory; a run that must
// write into one fails when it does, with nothing written.
func CheckOutputDir(dir string, write bool) error {
	st, err := os.Stat(dir)
	if write && errors.Is(err, fs.ErrNotExist) {
		// A missing directory is made by WriteSources (MakeOutputDir),
		// once there is something to write, if its parent exists; a
		// missing parent is a mistake in the path.
		parent := filepath.Dir(filepath.Clean(dir))
		if pst, perr := os.Stat(parent); perr != nil || !pst.IsDir() {
			return fmt.Errorf("output directory %s: neither it nor its parent %s exists", dir, parent)
		}
		return nil
	}
	if err != nil {
		return fmt.Errorf("output directory: %w", err)
	}
	if !st.IsDir() {
		return fmt.Errorf("output directory %s: not a directory", dir)
	}
	return nil
}

// WriteSources writes srcs into dir, each only when its content differs
// from the file already there. It returns the names it wrote. On error
// nothing was renamed: every old file is intact, and no temporary file is
// left behind. Temporary files that an interrupted run left for these
// names are removed first (Staged).
func WriteSources(dir string, srcs []Source) ([]string, error) {
	st := NewStaged(dir)
	if err := st.Add(srcs); err != nil {
		st.Abort()
		return nil, err
	}
	return st.Commit()
}

// MakeOutputDir creates dir if it is missing (not its parents).
func MakeOutputDir(dir string) error {
	if err := os.Mkdir(dir, 0o755); err != nil && !errors.Is(err, fs.ErrExist) {
		return fmt.Errorf("output directory: %w", err)
	}
	return nil
}

// writeSources is WriteSources on the file system fsys, which tests
// replace to simulate failures.
func writeSources(fsys writeFS, dir string, srcs []Source) ([]string, error) {
	st := NewStaged(dir)
	st.fsys = fsys
	if err := st.Add(srcs); err != nil {
		st.Abort()
		return nil, err
	}
	return st.Commit()
}

// Staged is a write of many files in two phases, so that a verb can hand
// its outputs over as it makes them (one airframe at a time, holding
// only that one in memory) and still leave the directory as before when
// it fails part way: Add compares each file with the one in the
// directory and writes a changed one to a temporary file beside it;
// Commit renames every temporary file into place, syncs the directory,
// and writes again an unchanged file that vanished meanwhile; Abort
// removes the temporary files.
//
// From its first Add to its end a Staged holds an exclusive lock on the
// directory (flock, where the system has it), which a concurrent run
// waits for; so a temporary file of the writer's pattern, .NAME.tmp-N,
// that is there when the lock is taken was left by a run that was killed
// (SIGKILL, a power cut), and Add removes those of the names it is given,
// written or found unchanged, and the probe files of earlier versions
// (Removed lists them).
//
// The methods may be called from two goroutines (a signal handler
// aborting while the verb adds): each holds the Staged's mutex.
type Staged struct {
	dir  string
	fsys writeFS

	mu        sync.Mutex
	todo      []pending
	kept      []keptFile
	keptBytes int
	seen      map[string]bool
	stale     map[string][]string // base name → stale temporaries, read at the lock
	unlock    func()
	locked    bool
	closed    bool
	// Removed lists the stale temporary files Add removed.
	Removed []string
}

type pending struct{ tmp, dst, name string }

// keptFile is an unchanged file left alone: its name, and its content
// while the kept files fit keepBudget (to write it again should it
// vanish before Commit is done).
type keptFile struct {
	name string
	data []byte
}

// keepBudget bounds the content of unchanged files a Staged holds in
// memory. Beyond it an unchanged file that vanishes during the write is
// reported rather than written again.
const keepBudget = 32 << 20

// NewStaged returns a Staged write into dir. dir is made (not its
// parents) by the first Add that has something to write.
func NewStaged(dir string) *Staged {
	return &Staged{dir: dir, fsys: osFS{}, seen: map[string]bool{}}
}

// lock takes the directory lock, once the directory exists, and reads
// the stale temporaries; the probe files of earlier versions go at once.
func (s *Staged) lock() {
	if s.locked {
		return
	}
	if st, err := os.Stat(s.dir); err != nil || !st.IsDir() {
		return // made by the first file to write, and locked then
	}
	s.locked = true
	s.unlock = lockDir(s.dir, true)
	s.stale = staleTemps(s.dir)
	s.removeStale("")
}

// removeStale removes the stale temporaries of base name n.
func (s *Staged) removeStale(n string) {
	for _, t := range s.stale[n] {
		if err := os.Remove(filepath.Join(s.dir, t)); err == nil {
			s.Removed = append(s.Removed, t)
		}
	}
	delete(s.stale, n)
}

// Add compares srcs with the directory and writes each changed file to a
// temporary file in it. On error the Staged must be aborted.
func (s *Staged) Add(srcs []Source) error {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.closed {
		return errors.New("write already finished or aborted")
	}
	for _, src := range srcs {
		if err := safeName(src.Name); err != nil {
			return err
		}
		if s.seen[src.Name] {
			return fmt.Errorf("two generated files are named %s", src.Name)
		}
		s.seen[src.Name] = true
	}
	s.lock()
	for _, src := range srcs {
		dst := filepath.Join(s.dir, src.Name)
		old, exists, err := readOutput(s.dir, src.Name, len(src.Data)+1)
		if err != nil {
			return err
		}
		s.removeStale(src.Name)
		if exists && bytes.Equal(old, src.Data) {
			k := keptFile{name: src.Name}
			if s.keptBytes+len(src.Data) <= keepBudget {
				k.data = src.Data
				s.keptBytes += len(src.Data)
			}
			s.kept = append(s.kept, k)
			continue
		}
		if !s.locked {
			if err := MakeOutputDir(s.dir); err != nil {
				return err
			}
			s.lock()
		}
		tmp, err := writeTemp(s.fsys, s.dir, src)
		if tmp != "" {
			s.todo = append(s.todo, pending{tmp: tmp, dst: dst, name: src.Name})
		}
		if err != nil {
			if tmp == "" { // the temporary file could not be made
				if _, serr := os.Stat(s.dir); errors.Is(serr, fs.ErrNotExist) {
					return fmt.Errorf("output directory %s vanished: %w", s.dir, err)
				}
				return fmt.Errorf("output directory %s: not writable: %w", s.dir, err)
			}
			return err
		}
	}
	return nil
}

// Abort removes the temporary files written so far; the directory keeps
// its old files. It reports whether it did so: false when the write was
// committed (or aborted) already, and Abort then does nothing. A Commit
// in progress finishes first.
func (s *Staged) Abort() bool {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.closed {
		return false
	}
	s.closed = true
	for _, p := range s.todo {
		_ = s.fsys.Remove(p.tmp)
	}
	s.todo = nil
	s.release()
	return true
}

func (s *Staged) release() {
	if s.unlock != nil {
		s.unlock()
		s.unlock = nil
	}
}

// Commit renames the temporary files into place and returns the names
// written. When a rename fails, the files renamed before it are complete
// new versions, the rest keep their old content, no temporary file is
// left, and the error says which is which.
func (s *Staged) Commit() (written []string, err error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	if s.closed {
		return nil, errors.New("write already finished or aborted")
	}
	s.closed = true
	defer s.release()
	todo := s.todo
	defer func() {
		if err != nil {
			for _, p := range todo {
				_ = s.fsys.Remove(p.tmp)
			}
		}
	}()
	for i, p := range todo {
		if err := s.fsys.Rename(p.tmp, p.dst); err != nil {
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
	s.todo = nil
	if len(written) > 0 {
		syncDir(s.dir)
	}
	// An unchanged file removed since it was compared is written again.
	for _, k := range s.kept {
		dst := filepath.Join(s.dir, k.name)
		if _, err := os.Lstat(dst); err == nil || !errors.Is(err, fs.ErrNotExist) {
			continue
		}
		if k.data == nil {
			return written, fmt.Errorf("%s vanished while the outputs were written; run again to write it", dst)
		}
		tmp, err := writeTemp(s.fsys, s.dir, Source{Name: k.name, Data: k.data})
		if err == nil {
			err = s.fsys.Rename(tmp, dst)
		}
		if err != nil {
			if tmp != "" {
				_ = s.fsys.Remove(tmp)
			}
			return written, fmt.Errorf("%s vanished while the outputs were written, and writing it again failed: %w", dst, err)
		}
		written = append(written, k.name)
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

// NotRegularError is a path of the output directory, named like a file
// locusmith writes, that is not a regular file: a symbolic link (whose
// target the writer would read, show in a diff or replace), a named pipe
// (which would block), a device, a directory. The writer refuses to touch
// it.
type NotRegularError struct {
	Path string
	What string // "a symbolic link", ...
}

func (e *NotRegularError) Error() string {
	return fmt.Sprintf("%s is %s, not a regular file: locusmith reads and replaces only regular files in its output directory; remove it", e.Path, e.What)
}

// readOutput reads the output file dir/name when it is there, at most
// limit bytes (a longer file is different anyway). It refuses anything but
// a regular file (NotRegularError), checked without following a link
// (Lstat, and no-follow at the open) and on the opened file again, and it
// never blocks on a named pipe.
func readOutput(dir, name string, limit int) (data []byte, exists bool, err error) {
	p := filepath.Join(dir, name)
	st, err := os.Lstat(p)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, false, nil
	}
	if err != nil {
		return nil, false, fmt.Errorf("read %s: %w", p, err)
	}
	if what := fileKind(st.Mode()); what != "" {
		return nil, true, &NotRegularError{Path: p, What: what}
	}
	f, err := openNoFollow(p)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, false, nil
		}
		return nil, true, fmt.Errorf("read %s: %w", p, err)
	}
	defer f.Close()
	fst, err := f.Stat()
	if err != nil {
		return nil, true, fmt.Errorf("read %s: %w", p, err)
	}
	if what := fileKind(fst.Mode()); what != "" || !os.SameFile(st, fst) {
		if what == "" {
			what = "a file that changed while it was opened"
		}
		return nil, true, &NotRegularError{Path: p, What: what}
	}
	data, err = io.ReadAll(io.LimitReader(f, int64(limit)))
	if err != nil {
		return nil, true, fmt.Errorf("read %s: %w", p, err)
	}
	return data, true, nil
}

// fileKind names what a non-regular file is, or "" for a regular file.
func fileKind(m fs.FileMode) string {
	switch {
	case m.IsRegular():
		return ""
	case m&fs.ModeSymlink != 0:
		return "a symbolic link"
	case m.IsDir():
		return "a directory"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe"
	case m&fs.ModeSocket != 0:
		return "a socket"
	case m&fs.ModeDevice != 0:
		return "a device"
	}
	return "a special file"
}

// Stale temporary files: the writer's own pattern, "." + name + ".tmp-"
// and the random digits of os.CreateTemp, and the probe files of earlier
// versions' directory check, ".locusmith-probe-" and digits.
const (
	tempInfix   = ".tmp-"
	probePrefix = ".locusmith-probe-"
)

// staleTemps lists the regular files of dir that have the writer's
// temporary pattern, by the base name they were to become (probe files
// under ""). Called with the directory lock held, they are left by runs
// that were killed.
func staleTemps(dir string) map[string][]string {
	out := map[string][]string{}
	es, err := os.ReadDir(dir)
	if err != nil {
		return out
	}
	for _, e := range es {
		if !e.Type().IsRegular() {
			continue
		}
		if base, ok := tempBase(e.Name()); ok {
			out[base] = append(out[base], e.Name())
		}
	}
	return out
}

// tempBase returns the name a temporary file of the writer was to
// become ("" for a probe file), and whether n is one.
func tempBase(n string) (string, bool) {
	if rest, ok := strings.CutPrefix(n, probePrefix); ok {
		return "", allDigits(rest)
	}
	if !strings.HasPrefix(n, ".") {
		return "", false
	}
	i := strings.LastIndex(n, tempInfix)
	if i <= 1 || !allDigits(n[i+len(tempInfix):]) {
		return "", false
	}
	base := n[1:i]
	return base, safeName(base) == nil
}

func allDigits(s string) bool {
	if s == "" {
		return false
	}
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}

// Drift is the difference between generated files and a directory.
type Drift struct {
	Stale      []FileDiff // present with other content
	Missing    []string   // not present
	Unexpected []string   // present, generated by locusmith, not generated now
	// Temporary lists temporary files of the writer for these names (or
	// its old probe files) that a killed run left: the directory is not
	// as a completed run leaves it; the next run without --check removes
	// them.
	Temporary []string
}

// FileDiff is a stale file and a short unified diff from the file in the
// directory to the generated content.
type FileDiff struct {
	Name string
	Diff string
}

// Clean reports whether the directory matches.
func (d Drift) Clean() bool {
	return len(d.Stale) == 0 && len(d.Missing) == 0 && len(d.Unexpected) == 0 && len(d.Temporary) == 0
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
	for _, t := range d.Temporary {
		fmt.Fprintf(&b, "temporary: %s (left by an interrupted run; the next run without --check removes it)\n", t)
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
	// A run writing into dir holds the lock while it has temporary files
	// there: wait for it, so that what is left is the state of the
	// directory (and a temporary file a killed run's).
	defer lockDir(dir, false)()
	want := map[string]bool{}
	for _, s := range srcs {
		if err := safeName(s.Name); err != nil {
			return d, err
		}
		want[s.Name] = true
		p := filepath.Join(dir, s.Name)
		old, exists, err := readOutput(dir, s.Name, len(s.Data)+diffReadLimit)
		switch {
		case err != nil:
			return d, err
		case !exists:
			d.Missing = append(d.Missing, p)
		case !bytes.Equal(old, s.Data):
			diff := unifiedDiff("a/"+s.Name, "b/"+s.Name, string(old), string(s.Data), 3, maxDiffLines)
			if len(old) == len(s.Data)+diffReadLimit {
				diff += fmt.Sprintf("... (%s is longer than %d bytes; the diff shows its first %d)\n", p, len(old), len(old))
			}
			d.Stale = append(d.Stale, FileDiff{Name: p, Diff: diff})
		}
	}
	for base, ts := range staleTemps(dir) {
		if base == "" || want[base] {
			for _, t := range ts {
				d.Temporary = append(d.Temporary, filepath.Join(dir, t))
			}
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
	sort.Strings(d.Temporary)
	sort.Slice(d.Stale, func(i, j int) bool { return d.Stale[i].Name < d.Stale[j].Name })
	return d, nil
}

// diffReadLimit bounds how much more of a stale file than the generated
// content --check reads for its diff.
const diffReadLimit = 1 << 20

// looksGenerated reports whether the first line of the file at p is
// locusmith's "Code generated" line. Only a regular file is read (not
// through a link, never blocking on a pipe); anything else is not one of
// locusmith's.
func looksGenerated(p string) (bool, error) {
	f, err := openNoFollow(p)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) || isLinkRefused(err) {
			return false, nil
		}
		return false, fmt.Errorf("open %s: %w", p, err)
	}
	defer f.Close()
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		return false, nil
	}
	line, err := bufio.NewReaderSize(io.LimitReader(f, 512), 512).ReadString('\n')
	if err != nil && !errors.Is(err, io.EOF) {
		return false, fmt.Errorf("read %s: %w", p, err)
	}
	return strings.HasPrefix(line, generatedMarker), nil
}
