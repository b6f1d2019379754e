package golden

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"

	"locusmith/emit"
)

// Most of this package's time goes to compilers: the C compilers on the
// generated code and the go command building the CLI. What one test builds
// another often needs too, so builds are shared for the life of the test
// binary: the CLI once per GOARCH (buildCLI), and a C program once per
// compiler, flags and sources (buildC). TestMain removes them at the end.

// TestMain removes the programs built by buildCLI and buildC after the
// tests.
func TestMain(m *testing.M) {
	code := m.Run()
	clis.mu.Lock()
	for _, b := range clis.m {
		if b.path != "" {
			os.RemoveAll(filepath.Dir(b.path))
		}
	}
	clis.mu.Unlock()
	cbuilds.mu.Lock()
	if cbuilds.dir != "" {
		os.RemoveAll(cbuilds.dir)
	}
	cbuilds.mu.Unlock()
	os.Exit(code)
}

// builtCLI builds cmd/locusmith once per test binary for a GOARCH.
type builtCLI struct {
	once sync.Once
	path string
	err  error
	out  string
}

var clis = struct {
	mu sync.Mutex
	m  map[string]*builtCLI
}{m: map[string]*builtCLI{}}

// buildCLI returns the path of the locusmith binary for goarch ("" for
// the host), built with CGO_ENABLED=0 into a directory that lives as long
// as the test binary.
func buildCLI(t testing.TB, goarch string) string {
	t.Helper()
	goTool(t) // skips without a go command
	p, err := cliBuild(goarch)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// cliBuild is buildCLI without a test, for a goroutine of one.
func cliBuild(goarch string) (string, error) {
	clis.mu.Lock()
	b, ok := clis.m[goarch]
	if !ok {
		b = &builtCLI{}
		clis.m[goarch] = b
	}
	clis.mu.Unlock()
	b.once.Do(func() {
		gocmd, err := goCommand()
		if err != nil {
			b.err = err
			return
		}
		dir, err := os.MkdirTemp("", "locusmith-cli-")
		if err != nil {
			b.err = err
			return
		}
		name := "locusmith"
		if goarch != "" {
			name += "-" + goarch
		}
		b.path = filepath.Join(dir, name)
		cmd := exec.Command(gocmd, "build", "-o", b.path, "./cmd/locusmith")
		cmd.Dir = ".."
		cmd.Env = append(os.Environ(), "CGO_ENABLED=0", "GOTOOLCHAIN=local")
		if goarch != "" {
			cmd.Env = append(cmd.Env, "GOARCH="+goarch)
		}
		out, err := cmd.CombinedOutput()
		b.err, b.out = err, string(out)
	})
	if b.err != nil {
		return "", fmt.Errorf("build locusmith for %q: %v\n%s", goarch, b.err, b.out)
	}
	return b.path, nil
}

// cbuild is one C program, built once.
type cbuild struct {
	once sync.Once
	dir  string // holds the sources and the program "prog"
	out  string // the compiler's output
	err  error
}

var cbuilds = struct {
	mu  sync.Mutex
	dir string // made on first use
	m   map[string]*cbuild
}{m: map[string]*cbuild{}}

// buildC writes srcs into a directory of their own, compiles and links the
// files named in files with cc and flags (flags first, then "-o prog",
// then the files) and returns the program's directory. The same compiler,
// flags, files and sources (names and bytes) give the same program, built
// once per test binary, so tests that need the same program share it; a
// failed build fails every test that asks for it, with the compiler's
// output. The directory is shared: do not write into it.
func buildC(t testing.TB, cc string, flags []string, srcs []emit.Source, files []string) string {
	t.Helper()
	h := sha256.New()
	fmt.Fprintf(h, "%q\n%q\n%q\n", cc, flags, files)
	sorted := append([]emit.Source(nil), srcs...)
	sort.Slice(sorted, func(i, j int) bool { return sorted[i].Name < sorted[j].Name })
	for _, s := range sorted {
		fmt.Fprintf(h, "%q %d\n", s.Name, len(s.Data))
		h.Write(s.Data)
	}
	key := hex.EncodeToString(h.Sum(nil))
	cbuilds.mu.Lock()
	if cbuilds.dir == "" {
		d, err := os.MkdirTemp("", "locusmith-cbuild-")
		if err != nil {
			cbuilds.mu.Unlock()
			t.Fatal(err)
		}
		cbuilds.dir = d
	}
	b, ok := cbuilds.m[key]
	if !ok {
		b = &cbuild{dir: filepath.Join(cbuilds.dir, key[:16])}
		cbuilds.m[key] = b
	}
	cbuilds.mu.Unlock()
	b.once.Do(func() {
		if b.err = os.Mkdir(b.dir, 0o755); b.err != nil {
			return
		}
		for _, s := range srcs {
			if b.err = os.WriteFile(filepath.Join(b.dir, s.Name), s.Data, 0o644); b.err != nil {
				return
			}
		}
		args := append(append(append([]string{}, flags...), "-o", "prog"), files...)
		b.out, b.err = runErr(b.dir, cc, args...)
		if b.err != nil {
			b.out = fmt.Sprintf("%s %s: %v\n%s", filepath.Base(cc), strings.Join(args, " "), b.err, b.out)
		}
	})
	if b.err != nil {
		t.Fatalf("build in %s: %v\n%s", b.dir, b.err, b.out)
	}
	return b.dir
}

// ccache holds the products of the C compilers' successful runs (objects
// and programs), so that a compile the tests repeat (the same compiler,
// arguments and sources: the flags matrix, the forms and the examples are
// built by several tests) runs once per test binary. The entries live in
// cbuilds.dir.
var ccache = struct {
	mu sync.Mutex
	n  int
	m  map[string]*ccEntry
}{m: map[string]*ccEntry{}}

// ccEntry is one cached compiler run: the product's bytes are in file.
type ccEntry struct {
	once sync.Once
	file string
	out  string
	ok   bool
}

// compilers are the programs whose runs ccache keeps.
var compilers = map[string]bool{"gcc": true, "cc": true, "clang": true, "arm-none-eabi-gcc": true}

// compiled runs the compiler name with args in dir through ccache, when it
// is one and writes one product (-o): it returns the compiler's output,
// true and its error once it has run it, or found its product in the
// cache and copied it into dir; false when the caller is to run the
// command itself. A run that fails is not kept. The key is the compiler, the
// arguments (dir written as "."), and the bytes of every .c and .h file in
// dir (what #include "..." can read) and of every file an argument names
// besides the product; system headers and libraries do not change while
// the tests run. Compiles with inputs or outputs beyond these are not
// cached.
func compiled(dir, name string, args []string) (string, bool, error) {
	if !compilers[filepath.Base(name)] {
		return "", false, nil
	}
	prod := ""
	for i, a := range args {
		if a == "-o" && i+1 < len(args) {
			prod = args[i+1]
		}
	}
	if prod == "" || filepath.IsAbs(prod) || strings.Contains(prod, "..") {
		// Only products inside dir (not /dev/null, say).
		return "", false, nil
	}
	for _, a := range args {
		// Inputs the key cannot see (include directories, linker
		// scripts and options, dependency files, debug paths): run such
		// a compile every time.
		for _, p := range []string{"-I", "-include", "-T", "-M", "-g", "-save-temps", "--coverage", "-fstack-usage"} {
			if strings.HasPrefix(a, p) {
				return "", false, nil
			}
		}
		if strings.HasPrefix(a, "-Wl,") && a != "-Wl,--no-warn-rwx-segments" {
			return "", false, nil
		}
	}
	h := sha256.New()
	fmt.Fprintf(h, "%q\n", name)
	for _, a := range args {
		fmt.Fprintf(h, "%q\n", strings.ReplaceAll(a, dir, "."))
	}
	hashFile := func(label, p string) bool {
		b, err := os.ReadFile(p)
		if err != nil {
			return false
		}
		fmt.Fprintf(h, "%q %d\n", label, len(b))
		h.Write(b)
		return true
	}
	es, err := os.ReadDir(dir)
	if err != nil {
		return "", false, nil
	}
	for _, e := range es {
		if n := e.Name(); e.Type().IsRegular() && (strings.HasSuffix(n, ".c") || strings.HasSuffix(n, ".h")) {
			if !hashFile(n, filepath.Join(dir, n)) {
				return "", false, nil
			}
		}
	}
	for _, a := range args {
		if a == prod || strings.HasPrefix(a, "-") {
			continue
		}
		p := a
		if !filepath.IsAbs(p) {
			p = filepath.Join(dir, p)
		}
		if fi, err := os.Stat(p); err == nil && fi.Mode().IsRegular() {
			if !hashFile(strings.ReplaceAll(a, dir, "."), p) {
				return "", false, nil
			}
		}
	}
	key := hex.EncodeToString(h.Sum(nil))
	cbuilds.mu.Lock()
	if cbuilds.dir == "" {
		d, err := os.MkdirTemp("", "locusmith-cbuild-")
		if err != nil {
			cbuilds.mu.Unlock()
			return "", false, nil
		}
		cbuilds.dir = d
	}
	root := cbuilds.dir
	cbuilds.mu.Unlock()
	ccache.mu.Lock()
	e, ok := ccache.m[key]
	if !ok {
		ccache.n++
		e = &ccEntry{file: filepath.Join(root, fmt.Sprintf("cc-%d", ccache.n))}
		ccache.m[key] = e
	}
	ccache.mu.Unlock()
	out := filepath.Join(dir, prod)
	ran := false
	var runOut string
	var runErr error
	e.once.Do(func() {
		ran = true
		runOut, runErr = runUncached(dir, name, args...)
		if runErr != nil {
			return
		}
		o := runOut
		if copyFile(e.file, out) != nil {
			return
		}
		e.out, e.ok = o, true
	})
	if !e.ok {
		// Not kept: a failed run, reported as it is, or a product that
		// could not be stored. A test waiting on another's failed run
		// runs the compiler itself.
		if ran {
			ccache.mu.Lock()
			delete(ccache.m, key)
			ccache.mu.Unlock()
			return runOut, true, runErr
		}
		return "", false, nil
	}
	if ran {
		return e.out, true, nil
	}
	if copyFile(out, e.file) != nil {
		return "", false, nil
	}
	return e.out, true, nil
}

// copyFile copies src to dst, with its mode, in a cp process: a program
// this process wrote itself could still be open for writing in a child
// that another test forks at that moment, and running it would then fail
// with "text file busy".
func copyFile(dst, src string) error {
	return exec.Command("cp", "-p", src, dst).Run()
}
