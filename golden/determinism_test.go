package golden

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"sort"
	"sync"
	"testing"

	"locusmith/airframe"
)

// fixedCopy writes a copy of example p into dir/examples with its
// numeric type set to nt (and full scales added when the file has none)
// and the airframe renamed <name>_<nt>, and returns its relative path.
func fixedCopy(t *testing.T, dir, p string, nt airframe.NumericType) string {
	t.Helper()
	src, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	a := design(t, p, "")
	repl := fmt.Sprintf("type = %q", nt)
	if nt.IsFixed() && a.File.Numeric.InputFullScale == 0 {
		in, out := fixedFullScale(a.File, a)
		repl += fmt.Sprintf("\ninput_full_scale = %g\noutput_full_scale = %g", in, out)
	}
	re := regexp.MustCompile(`(?m)^type = "[a-z0-9]+"`)
	if len(re.FindAll(src, -1)) != 1 {
		t.Fatalf("%s: expected one numeric type line", p)
	}
	src = re.ReplaceAll(src, []byte(repl))
	// One call cannot hold two airframes of one name.
	an := regexp.MustCompile(`(?m)^airframe = "([a-z0-9_]+)"`)
	if len(an.FindAll(src, -1)) != 1 {
		t.Fatalf("%s: expected one airframe line", p)
	}
	src = an.ReplaceAll(src, []byte(`airframe = "${1}_`+string(nt)+`"`))
	name := filepath.Join("examples", exampleName(p)+"_"+string(nt)+".toml")
	if err := os.WriteFile(filepath.Join(dir, name), src, 0o644); err != nil {
		t.Fatal(err)
	}
	return name
}

// crossCopy is an example to run again in another arithmetic.
type crossCopy struct {
	path string
	nt   airframe.NumericType
}

// crossCopies picks the copies of the examples that TestCrossArchDeterminism
// runs besides the examples as written: enough that every controller form
// of the examples is emitted in each of float32, q15 and q31 at least once
// (each form has its own realization, rounding and reference model in
// each arithmetic), taking the examples whose host design needed the
// least search work (judgments times the states each simulates) first. The search itself is the same in every
// arithmetic and is compared on the examples as written; a copy of every
// example in every arithmetic would design each again under the emulator,
// which emulates floating point in software (about 40 times the host's
// time here), for no code path the copies below do not already take.
func crossCopies(t *testing.T, paths []string) []crossCopy {
	t.Helper()
	type form struct {
		f  airframe.Form
		nt airframe.NumericType
	}
	covered := map[form]bool{}
	cost := map[string]int{}
	forms := map[string][]airframe.Form{}
	for _, p := range paths {
		a := design(t, p, "")
		for _, x := range a.Axes {
			if x.Design == nil {
				t.Fatalf("%s: axis %s: %v", p, x.Name, x.Err)
			}
			f := x.Design.Problem.Ctrl.Form
			covered[form{f, a.File.Numeric.Type}] = true
			forms[p] = append(forms[p], f)
			// The search's judgments times the states each simulates.
			cost[p] += x.Design.Cont.Search.Evaluations * (x.Design.Plant.N + x.Design.Plant.Delay)
		}
	}
	t.Logf("search work of the examples: %v", cost)
	order := slices.Clone(paths)
	sort.SliceStable(order, func(i, j int) bool { return cost[order[i]] < cost[order[j]] })
	var cs []crossCopy
	for _, p := range order {
		for _, nt := range []airframe.NumericType{airframe.Float32, airframe.Q15, airframe.Q31} {
			adds := false
			for _, f := range forms[p] {
				if !covered[form{f, nt}] {
					covered[form{f, nt}], adds = true, true
				}
			}
			if adds {
				cs = append(cs, crossCopy{p, nt})
			}
		}
	}
	return cs
}

// runCLI runs the binary (under the emulator when given) in dir.
func runCLI(dir string, emu, bin string, args ...string) (string, int, error) {
	return runCLIContext(context.Background(), dir, emu, bin, args...)
}

// runCLIContext is runCLI, killed when ctx is done.
func runCLIContext(ctx context.Context, dir string, emu, bin string, args ...string) (string, int, error) {
	var out bytes.Buffer
	code, err := runCLIInto(ctx, &out, &out, dir, emu, bin, args...)
	return out.String(), code, err
}

// runCLIInto is runCLIContext with standard output and error written to
// stdout and stderr.
func runCLIInto(ctx context.Context, stdout, stderr io.Writer, dir string, emu, bin string, args ...string) (int, error) {
	if emu != "" {
		args = append([]string{bin}, args...)
		bin = emu
	}
	cmd := exec.CommandContext(ctx, bin, args...)
	cmd.Dir = dir
	cmd.Stdout, cmd.Stderr = stdout, stderr
	err := cmd.Run()
	if ee, ok := err.(*exec.ExitError); ok && ctx.Err() == nil {
		return ee.ExitCode(), nil
	}
	return 0, err
}

// snapshot reads every file of dir.
func snapshot(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	m, err := readFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// readFiles reads every file of dir.
func readFiles(dir string) (map[string][]byte, error) {
	m := map[string][]byte{}
	es, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	for _, e := range es {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			return nil, err
		}
		m[e.Name()] = b
	}
	return m, nil
}

// TestCrossArchDeterminism builds the CLI for the host and for arm64
// (CGO_ENABLED=0 GOARCH=arm64), runs both (arm64 under qemu-aarch64) on
// every example and on the copies of crossCopies in other arithmetics, and
// requires byte-identical C files with vectors and JSON reports of the
// designs: the output is a pure
// function of the input and the tool version, whatever the CPU (Go may
// fuse x*y + z on arm64 and not on amd64; a value that reached the
// output through such a difference would show here). It also requires
// two host runs to agree. Skips when qemu-aarch64 is missing.
//
// The emulated runs are the longest chain of this package (seconds of
// CPU per airframe under the emulator), so they start before t.Parallel:
// in the sequential phase of the test binary, beside everything else,
// and not queued behind every other parallel test (-test.parallel is the
// number of CPUs). The test waits for them after t.Parallel and compares.
func TestCrossArchDeterminism(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the CLI twice; skipped with -short")
	}
	emu := ""
	if runtime.GOARCH != "arm64" {
		p, err := exec.LookPath("qemu-aarch64")
		if err != nil {
			p, err = exec.LookPath("qemu-aarch64-static")
		}
		if err != nil {
			t.Skip("qemu-aarch64 not found: install qemu-user (.ci/run does) to compare amd64 and arm64 output")
		}
		emu = p
	}
	work := t.TempDir()
	if err := os.MkdirAll(filepath.Join(work, "examples"), 0o755); err != nil {
		t.Fatal(err)
	}
	// inputs are the examples as written, the copies crossCopies picks
	// in the other arithmetics, and a pid whose design rides its noise
	// bound (synth's ride, where the search rescales a shape by a ratio
	// of noise gains) and one whose lines start above Ki = 0 (synth's
	// loExact, a Brent search for the start): the rescaled shapes and the
	// starts must round alike on both architectures.
	var inputs []string
	copyIn := func(src, rel string) {
		b, err := os.ReadFile(src)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(work, rel), b, 0o644); err != nil {
			t.Fatal(err)
		}
		inputs = append(inputs, rel)
	}
	for _, p := range examplePaths(t) {
		copyIn(p, filepath.Join("examples", filepath.Base(p)))
	}
	for _, c := range crossCopies(t, examplePaths(t)) {
		inputs = append(inputs, fixedCopy(t, work, c.path, c.nt))
		t.Logf("also %s in %s", filepath.Base(c.path), c.nt)
	}
	for _, name := range []string{"ride_pid_roll.toml", "msstart_pid_roll.toml"} {
		copyIn(filepath.Join("testdata", "cross", name), name)
	}
	sort.Strings(inputs)

	ctx, cancel := context.WithCancel(context.Background())
	var wg sync.WaitGroup
	// Registered after TempDir, so it runs before the directory is
	// removed: a test that stops early kills its runs and waits for them.
	t.Cleanup(func() { cancel(); wg.Wait() })
	// start runs f in the background; its result arrives on the channel.
	start := func(f func() crossRun) <-chan crossRun {
		ch := make(chan crossRun, 1)
		wg.Add(1)
		go func() {
			defer wg.Done()
			ch <- f()
		}()
		return ch
	}
	// The two builds, in the background too; every run waits for them.
	var host, arm string
	var buildErr error
	built := make(chan struct{})
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(built)
		if host, buildErr = cliBuild(""); buildErr == nil {
			arm, buildErr = cliBuild("arm64")
		}
	}()
	// The design is the architecture-sensitive part (floating-point
	// search and verification, the reference model behind the vectors);
	// rendering it is string templating, the same on every CPU. So one
	// language with the vectors covers the design and the numbers the
	// vectors carry, which the Go vectors share with the C ones; the
	// JSON report of the same designs (emit --json), every figure of
	// them, is compared as well, for the examples and their copies: one
	// design of each under the emulator. (TestJSONGolden holds the host's
	// report of each example to its golden file.)
	emitRun := func(name, emu string, bin *string) func() crossRun {
		return func() crossRun {
			if <-built; buildErr != nil {
				return crossRun{err: buildErr}
			}
			o := filepath.Join(work, "out-c-vectors-"+name)
			if err := os.Mkdir(o, 0o755); err != nil {
				return crossRun{err: err}
			}
			args := append([]string{"emit", "-o", o, "--allow-unmet", "--lang", "c", "--vectors", "--json"}, inputs...)
			var stdout, stderr bytes.Buffer
			code, err := runCLIInto(ctx, &stdout, &stderr, work, emu, *bin, args...)
			if err != nil || code != 0 {
				return crossRun{err: fmt.Errorf("%s: emit: exit %d, %v\n%s", name, code, err, stderr.String())}
			}
			files, err := readFiles(o)
			return crossRun{files: files, json: stdout.Bytes(), err: err}
		}
	}
	armEmit := start(emitRun("arm64", emu, &arm))
	hostEmit := start(emitRun("host", "", &host))
	againEmit := start(emitRun("host-again", "", &host))

	t.Parallel()
	t.Run("c-vectors", func(t *testing.T) {
		host := <-hostEmit
		ref := host.must(t)
		if len(ref) == 0 {
			t.Fatal("emit --lang c --vectors: no files written")
		}
		if !bytes.Contains(host.json, []byte(`"airframes"`)) {
			t.Fatalf("emit --json printed no report:\n%s", host.json)
		}
		for _, other := range []struct {
			name string
			ch   <-chan crossRun
		}{{"host-again", againEmit}, {"arm64", armEmit}} {
			r := <-other.ch
			got := r.must(t)
			compareFiles(t, other.name+" emit --lang c --vectors", ref, got)
			if !bytes.Equal(r.json, host.json) {
				t.Errorf("%s: the JSON report (emit --json) differs from the host's:\n%s", other.name, firstDiff(string(host.json), string(r.json)))
			}
		}
	})
}

// crossRun is the outcome of one CLI run of TestCrossArchDeterminism: the
// files it wrote (or its standard output) and its exit status.
type crossRun struct {
	files map[string][]byte
	json  []byte // the JSON report the run printed (emit --json)
	err   error
}

// must returns the files of the run, or fails the test with its error.
func (r crossRun) must(t *testing.T) map[string][]byte {
	t.Helper()
	if r.err != nil {
		t.Fatal(r.err)
	}
	return r.files
}

// compareFiles requires got to hold the files of ref, byte for byte, and
// no others.
func compareFiles(t *testing.T, what string, ref, got map[string][]byte) {
	t.Helper()
	if len(got) != len(ref) {
		t.Errorf("%s: %d files, host %d", what, len(got), len(ref))
	}
	for name, want := range ref {
		if !bytes.Equal(got[name], want) {
			t.Errorf("%s: %s differs from the host's output:\n%s", what, name, firstDiff(string(want), string(got[name])))
		}
	}
}
