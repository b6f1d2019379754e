//go:build unix

package main

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/internal/ident"
)

// Tests of the tool's bounds and robustness that the other test files do
// not make: the identify verb on hostile logs and file names, file names
// that would drive the terminal, read-only output directories, signals
// to emit, the bounded read of an input, valid files the design could
// not sample and the sensor's DC gain; as a whole process where the
// point is the process (its exit status, its files, its signal
// handling).

// identifyTimes writes a log whose time column is times, with a command
// that is not constant and a rate, and returns its path.
func identifyTimes(t *testing.T, dir, name string, times func(i int) string) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("time,command,rate\n")
	for i := 0; i < 400; i++ {
		fmt.Fprintf(&b, "%s,%d,%d\n", times(i), i%7, i%5)
	}
	return writeFile(t, dir, name, b.String())
}

// Time steps far below any sample interval (1e-300 s once panicked
// identify) are bad input: exit 2, the file named with the interval that
// is allowed, nothing on stdout, and no internal error (runCLI fails the
// test on a recovered panic).
func TestIdentifyTinyTimeSteps(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		name  string
		times func(i int) string
		args  []string
	}{
		{"steps 1e-300 s", func(i int) string { return strconv.Itoa(i) + "e-300" }, nil},
		{"steps of the least float64", func(i int) string { return strconv.FormatFloat(float64(i)*5e-324, 'g', -1, 64) }, nil},
		{"steps 1e-300 µs", func(i int) string { return strconv.Itoa(i) + "e-300" }, []string{"--time-unit", "us"}},
		{"steps 1e300 s", func(i int) string { return strconv.Itoa(i+1) + "e300" }, nil},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := identifyTimes(t, dir, fmt.Sprintf("log%d.csv", i), c.times)
			code, out, errs := runCLI(t, append(append([]string{"identify"}, c.args...), p)...)
			want := p + ": median sample interval"
			if code != exitUsage || !strings.Contains(errs, want) || !strings.Contains(errs, "must be in [1e-06, 1] s") {
				t.Errorf("exit %d, stderr %q; want 2, %q and the allowed interval", code, errs, want)
			}
			if out != "" {
				t.Errorf("stdout %q", out)
			}
		})
	}
}

// An internal error of identify (a recovered panic) is status 2, as for
// every verb, not the 1 of a fit that failed; bad input is 2 too.
func TestIdentifyStatus(t *testing.T) {
	cases := []struct {
		err  error
		want int
	}{
		{fmt.Errorf("identify: %w: index out of range", ident.ErrInternal), exitUsage},
		{&ident.InputError{File: "x.csv", Msg: "no header row"}, exitUsage},
		{fmt.Errorf("prepare: %w", &ident.InputError{Msg: "too few samples"}), exitUsage},
		{errors.New("the fit did not converge"), exitUnmet},
	}
	for _, c := range cases {
		if got := identifyStatus(c.err); got != c.want {
			t.Errorf("identifyStatus(%v) = %d, want %d", c.err, got, c.want)
		}
	}
}

// A log whose file name holds a newline, a terminal escape and a
// bidirectional control: identify prints the name in a comment of the
// TOML it prints, and a raw newline would end the comment and make the
// rest of the name TOML (here a zpk gain beside the identified physical
// form). The output pasted into an airframe file must load with the
// identified values only, and no control character may reach stdout or
// stderr.
func TestIdentifyFileNameStaysComment(t *testing.T) {
	log := identifyLog(t, 2400, 0.03, 2, 4)
	evil := filepath.Join(t.TempDir(), "bench\n[axes.roll.plant]\ngain = 1.0\n\x1b[2J\u202e.csv")
	if err := os.Rename(log, evil); err != nil {
		t.Skip("the file system refuses the name:", err)
	}
	code, out, errs := runCLI(t, "identify", "--axis", "roll", evil)
	if code != exitOK {
		t.Fatalf("exit %d\n%s", code, errs)
	}
	for _, line := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
		switch {
		case strings.HasPrefix(line, "#"), line == "[axes.roll.plant]",
			strings.HasPrefix(line, "effectiveness = "), strings.HasPrefix(line, "motor_tau = "), strings.HasPrefix(line, "delay = "):
		default:
			t.Errorf("a line of the output is neither a comment nor the identified plant: %q", line)
		}
	}
	for _, bad := range []string{"\x1b", "\u202e"} {
		if strings.Contains(out+errs, bad) {
			t.Errorf("%q reached the output:\nstdout %q\nstderr %q", bad, out, errs)
		}
	}
	if !strings.Contains(out, `\n[axes.roll.plant]\ngain = 1.0\n`) {
		t.Errorf("the name is not shown quoted in the comment:\n%s", out)
	}
	pasted := strings.Replace(valid, "[axes.roll.plant]\neffectiveness = 2400.0\nmotor_tau = 0.03\ndelay = 0.002\n", out, 1)
	if pasted == valid {
		t.Fatal("the plant table of the valid airframe was not found")
	}
	if code, _, errs := runCLI(t, "design", identifyTempFile(t, pasted)); code == exitUsage {
		t.Errorf("the pasted output does not load:\n%s\n%s", errs, pasted)
	}
}

// A file name with a terminal escape sequence or a bidirectional control
// reaches neither the terminal nor the generated code: design's table,
// its messages and emit's files show it quoted.
func TestUnsafeFileNameShownQuoted(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "craft\x1b[31m\u202e.toml")
	if err := os.WriteFile(p, []byte(valid), 0o644); err != nil {
		t.Skip("the file system refuses the name:", err)
	}
	code, out, errs := runCLI(t, "design", p)
	if code != exitOK {
		t.Fatalf("design: exit %d\n%s", code, errs)
	}
	if !strings.Contains(out, `\x1b[31m\u202e.toml`) {
		t.Errorf("the table does not show the name quoted:\n%s", out)
	}
	gen := filepath.Join(dir, "gen")
	if code, _, errs := runCLI(t, "emit", "-o", gen, p); code != exitOK {
		t.Fatalf("emit: exit %d\n%s", code, errs)
	}
	texts := map[string]string{"design stdout": out, "design stderr": errs}
	for n, b := range readTree(t, gen) {
		texts[n] = string(b)
	}
	for where, text := range texts {
		for _, bad := range []string{"\x1b", "\u202e"} {
			if strings.Contains(text, bad) {
				t.Errorf("%s holds %q", where, bad)
			}
		}
	}
}

// asOther makes cmd run as another user (nobody) when the test runs as
// root, whom permission bits do not stop, and lets that user into dirs
// and their parents up to the temporary directory.
func asOther(t *testing.T, cmd *exec.Cmd, dirs ...string) {
	t.Helper()
	if os.Geteuid() != 0 {
		return
	}
	top := filepath.Clean(os.TempDir())
	for _, d := range dirs {
		for ; strings.HasPrefix(d, top+string(filepath.Separator)); d = filepath.Dir(d) {
			st, err := os.Stat(d)
			if err != nil {
				t.Fatal(err)
			}
			if st.Mode().Perm()&0o005 != 0o005 {
				if err := os.Chmod(d, st.Mode().Perm()|0o005); err != nil {
					t.Fatal(err)
				}
			}
		}
	}
	cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
}

// modTimes returns the modification time of every file of dir.
func modTimes(t *testing.T, dir string) map[string]time.Time {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	m := map[string]time.Time{}
	for _, e := range es {
		info, err := e.Info()
		if err != nil {
			t.Fatal(err)
		}
		m[e.Name()] = info.ModTime()
	}
	return m
}

// A read-only output directory where everything is up to date (it
// once failed even then): emit, emit --check and report succeed
// and change nothing; a run that must write is exit 2, "not writable",
// with the directory as it was and no temporary file. As a whole
// process, as another user when the test runs as root (whom the
// permission bits do not stop).
func TestReadOnlyOutputDirProcess(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the CLI; skipped with -short")
	}
	t.Parallel()
	dir := t.TempDir()
	bin := hostCLI(t)
	p := writeFile(t, dir, "ok.toml", valid)
	changed := writeFile(t, dir, "changed.toml", edit(t, "overshoot = 0.10", "overshoot = 0.12"))
	gen, review := filepath.Join(dir, "gen"), filepath.Join(dir, "review")
	for _, args := range [][]string{{"emit", "-o", gen, p}, {"report", "-o", review, p}} {
		if out, err := exec.Command(bin, args...).CombinedOutput(); err != nil {
			t.Fatalf("%v: %v\n%s", args, err, out)
		}
	}
	for _, d := range []string{gen, review} {
		if err := os.Chmod(d, 0o555); err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { os.Chmod(d, 0o755) })
	}
	before := map[string]map[string]time.Time{gen: modTimes(t, gen), review: modTimes(t, review)}
	cases := []struct {
		args []string
		code int
		want string // in stderr
	}{
		{[]string{"emit", "-o", gen, p}, exitOK, ""},
		{[]string{"emit", "--check", "-o", gen, p}, exitOK, ""},
		{[]string{"report", "-o", review, p}, exitOK, ""},
		{[]string{"emit", "-o", gen, changed}, exitUsage, "not writable"},
		{[]string{"report", "-o", review, changed}, exitUsage, "not writable"},
	}
	for _, c := range cases {
		cmd := exec.Command(bin, c.args...)
		asOther(t, cmd, dir, filepath.Dir(bin))
		var errb bytes.Buffer
		cmd.Stderr = &errb
		err := cmd.Run()
		code := 0
		if ee, ok := err.(*exec.ExitError); ok {
			code = ee.ExitCode()
		} else if err != nil {
			t.Fatal(err)
		}
		if code != c.code || !strings.Contains(errb.String(), c.want) {
			t.Errorf("%v in a read-only directory: exit %d, stderr %q; want %d and %q", c.args, code, errb.String(), c.code, c.want)
		}
	}
	for d, mt := range before {
		after := modTimes(t, d)
		if len(after) != len(mt) {
			t.Errorf("%s: %d files, %d before", d, len(after), len(mt))
		}
		for n, tm := range mt {
			if !after[n].Equal(tm) {
				t.Errorf("%s changed", filepath.Join(d, n))
			}
		}
	}
}

// SIGHUP, SIGTERM and SIGINT reaching emit while it holds temporary files
// (SIGHUP once left them for ever) remove them and leave the
// old files as they were, exit 2; a SIGKILL there leaves them, emit
// --check lists them (exit 1), and the next emit removes them and says
// so. emit is held in that window, every changed file written to its
// temporary file and none renamed, by the LOCUSMITH_TEST_SYNC_COMMIT
// hook, so the signal falls in it whatever the machine's speed.
func TestEmitSignalsRemoveTemporaries(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the CLI; skipped with -short")
	}
	t.Parallel()
	dir := t.TempDir()
	bin := hostCLI(t)
	p := writeFile(t, dir, "ok.toml", valid)
	gen := filepath.Join(dir, "gen")
	if out, err := exec.Command(bin, "emit", "-o", gen, p).CombinedOutput(); err != nil {
		t.Fatalf("first emit: %v\n%s", err, out)
	}
	before := readTree(t, gen)
	if err := os.WriteFile(p, []byte(edit(t, "overshoot = 0.10", "overshoot = 0.12")), 0o644); err != nil {
		t.Fatal(err)
	}
	temps := func() []string {
		var ts []string
		es, _ := os.ReadDir(gen)
		for _, e := range es {
			if strings.Contains(e.Name(), ".tmp-") {
				ts = append(ts, e.Name())
			}
		}
		return ts
	}
	// start runs emit held before its renames, once it has written its
	// temporary files.
	start := func(sig syscall.Signal) (*exec.Cmd, *bytes.Buffer) {
		t.Helper()
		pipe := filepath.Join(t.TempDir(), "sync")
		if err := syscall.Mkfifo(pipe, 0o600); err != nil {
			t.Skip("no named pipes:", err)
		}
		cmd := exec.Command(bin, "emit", "-o", gen, p)
		cmd.Env = append(os.Environ(), "LOCUSMITH_TEST_SYNC_COMMIT="+pipe)
		var errb bytes.Buffer
		cmd.Stderr = &errb
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		for deadline := time.Now().Add(2 * time.Minute); len(temps()) < 2; time.Sleep(2 * time.Millisecond) {
			if time.Now().After(deadline) {
				cmd.Process.Kill()
				cmd.Wait()
				t.Fatalf("%v: emit wrote no temporary files\n%s", sig, errb.String())
			}
		}
		return cmd, &errb
	}
	for _, sig := range []syscall.Signal{syscall.SIGHUP, syscall.SIGTERM, syscall.SIGINT} {
		cmd, errb := start(sig)
		if err := cmd.Process.Signal(sig); err != nil {
			t.Fatal(err)
		}
		err := cmd.Wait()
		ee, ok := err.(*exec.ExitError)
		if !ok || ee.ExitCode() != exitUsage || !strings.Contains(errb.String(), sig.String()+" received; temporary files removed, nothing written") {
			t.Errorf("%v: %v, stderr %q; want exit 2 and the temporary files removed", sig, err, errb.String())
		}
		if ts := temps(); len(ts) != 0 {
			t.Errorf("%v: temporary files left: %v", sig, ts)
		}
		after := readTree(t, gen)
		if len(after) != len(before) {
			t.Errorf("%v: %d files, %d before", sig, len(after), len(before))
		}
		for n, b := range before {
			if !bytes.Equal(after[n], b) {
				t.Errorf("%v: %s changed", sig, n)
			}
		}
	}
	cmd, _ := start(syscall.SIGKILL)
	cmd.Process.Kill()
	cmd.Wait()
	left := temps()
	if len(left) == 0 {
		t.Fatal("SIGKILL left no temporary file to clean up")
	}
	out, err := exec.Command(bin, "emit", "--check", "-o", gen, p).CombinedOutput()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != exitUnmet || !strings.Contains(string(out), "temporary: "+filepath.Join(gen, left[0])) {
		t.Errorf("--check after a SIGKILL: %v, want exit 1 listing %s\n%s", err, left[0], out)
	}
	out, err = exec.Command(bin, "emit", "-o", gen, p).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "removed "+filepath.Join(gen, left[0])+", a temporary file an interrupted run left") {
		t.Errorf("the run after a SIGKILL: %v\n%s", err, out)
	}
	if ts := temps(); len(ts) != 0 {
		t.Errorf("temporary files left after the next run: %v", ts)
	}
}

// moreBadInputs are kinds of bad input beyond the catalogue of
// catalogue_test.go: values that passed validation and then made the
// design fail with "lti: non-finite value", naming no key. The
// bounds are worked by hand in airframe's
// TestSamplingNorm.
func moreBadInputs(t *testing.T) []badInput {
	withGyro := func(eff string) string {
		return edit(t, "effectiveness = 2400.0", "effectiveness = "+eff)
	}
	return []badInput{
		{"effectiveness beyond what samples", withGyro("1e11"), "axes.roll.plant.effectiveness", "at this loop rate and sensor effectiveness may be at most"},
		{"zpk gain beyond what samples", edit(t, "effectiveness = 2400.0\nmotor_tau = 0.03\n", "gain = 1e16\npoles = [0.0, -11892.0]\n"), "axes.roll.plant.gain", "at this loop rate and sensor the plant's gain may be at most"},
		{"root far beyond the loop rate", strings.NewReplacer("loop_hz = 1000.0", "loop_hz = 1.0", "settling_time = 0.15", "settling_time = 2.5", "effectiveness = 2400.0\nmotor_tau = 0.03\n", "gain = 3.2e8\npoles = [0.0, -2e8]\n", "delay = 0.002", "delay = 0.0", "[axes.roll.sensor]\nlowpass_hz = 100.0\n", "").Replace(valid),
			"axes.roll.plant.poles[1]", "a root may be at most 1e+08 times loop_hz"},
	}
}

// TestBadInputNothingWritten runs every kind of bad input, the
// catalogue's and moreBadInputs, through report as well (the catalogue
// runs design and emit): exit 2, the file and key named, nothing on
// stdout and nothing written; and moreBadInputs through design and emit
// as the catalogue does.
func TestBadInputNothingWritten(t *testing.T) {
	cat := badInputCatalogue(t)
	dir := t.TempDir()
	for i, tc := range append(cat, moreBadInputs(t)...) {
		t.Run(tc.name, func(t *testing.T) {
			p := writeFile(t, dir, fmt.Sprintf("case%03d.toml", i), tc.content)
			named := p + ": " + tc.key
			verbs := [][]string{{"report", "-o", filepath.Join(dir, fmt.Sprintf("review%03d", i))}}
			if i >= len(cat) {
				verbs = append(verbs, []string{"design"}, []string{"emit", "-o", filepath.Join(dir, fmt.Sprintf("gen%03d", i))})
			}
			for _, v := range verbs {
				code, out, errs := runCLI(t, append(v, p)...)
				if code != exitUsage || !strings.Contains(errs, named) || !strings.Contains(errs, tc.allowed) {
					t.Errorf("%s: exit %d, stderr:\n%s\nwant 2, naming %q and saying %q", v[0], code, errs, named, tc.allowed)
				}
				if out != "" {
					t.Errorf("%s: stdout %q", v[0], out)
				}
				if len(v) > 1 {
					if _, err := os.Stat(v[2]); !os.IsNotExist(err) {
						t.Errorf("%s: %s made or written: %v", v[0], v[2], err)
					}
				}
			}
		})
	}
}

// TestValidFilesSample: every file that passes validation has a plant and
// sensor that the design can sample at loop_hz, at every corner of the
// envelope (extreme but valid gains, time constants
// and loop rates made the design fail later with "lti: non-finite
// value", a message naming no key, while the file was called valid).
// Files are drawn from a fixed seed over the valid range of the keys
// involved, log-uniform; the reference is the design's own sampling
// (discrete.NewPlant), which must succeed. (Here rather than in
// airframe, whose tests may not import the design.)
func TestValidFilesSample(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 11))
	logU := func(lo, hi float64) float64 {
		return math.Exp(math.Log(lo) + rng.Float64()*(math.Log(hi)-math.Log(lo)))
	}
	ok := 0
	const n = 3000
	for i := 0; i < n; i++ {
		hz := logU(1, 1e6)
		var b strings.Builder
		fmt.Fprintf(&b, "airframe = \"p%d\"\nloop_hz = %g\n[axes.a.plant]\n", i, hz)
		if rng.IntN(2) == 0 {
			fmt.Fprintf(&b, "effectiveness = %g\nmotor_tau = %g\n", logU(1e-3, 1e14), logU(1e-8, 1e2))
		} else {
			fmt.Fprintf(&b, "gain = %g\npoles = [0.0, %g, [%g, %g]]\n", logU(1e-3, 1e22), -logU(1e-8, 1e9), -logU(1e-8, 1e8), logU(1e-8, 1e8))
		}
		switch rng.IntN(3) {
		case 0:
			fmt.Fprintf(&b, "[axes.a.sensor]\nlowpass_hz = %g\n", logU(1e-3, 1e8))
		case 1:
			p := logU(1e-3, 1e8)
			fmt.Fprintf(&b, "[axes.a.sensor]\ngain = %g\npoles = [%g]\n", p, -p)
		}
		fmt.Fprintf(&b, "[axes.a.spec]\nsettling_time = %g\novershoot = 0.1\n", logU(2/hz, 2400/hz))
		if rng.IntN(2) == 0 {
			fmt.Fprintf(&b, "[axes.a.envelope]\ngain_scale = [%g, %g]\nlag_scale = [%g, %g]\n", logU(0.1, 1), logU(1, 10), logU(0.1, 1), logU(1, 10))
		}
		f, err := airframe.Parse("p.toml", []byte(b.String()))
		if err != nil {
			continue
		}
		ok++
		for _, a := range f.Axes {
			for _, c := range a.Envelope.Corners() {
				if _, err := discrete.NewPlant(a.At(c), 1/f.Loop.Hz); err != nil {
					t.Errorf("a valid file the design cannot sample (corner %+v): %v\n%s", c, err, b.String())
				}
			}
		}
	}
	// The draw must not be vacuous: many files are refused (the gain
	// scale of many draws is absurd), but a good share is valid.
	if ok < n/10 {
		t.Fatalf("only %d of %d drawn files are valid; the test checks too little", ok, n)
	}
	t.Logf("%d of %d drawn files valid, each sampled at every corner", ok, n)
}

// The limits identify's help states are the ones ReadCSV applies.
func TestIdentifyHelpLimits(t *testing.T) {
	for _, want := range []string{
		fmt.Sprintf("at most %d (2^20) samples", ident.MaxSamples),
		fmt.Sprintf("a line may be at most %d bytes", ident.MaxLineBytes),
	} {
		if !strings.Contains(strings.Join(strings.Fields(identifyHelp), " "), want) {
			t.Errorf("identify's help does not say %q", want)
		}
	}
}

// An airframe file is read to at most MaxFileBytes+1 bytes (a
// 3 GB input once took 3 GB before the size check). The file here
// is sparse, 256 MiB long; what the load allocates (runtime.MemStats,
// not a time) must stay within a small multiple of the limit. The test
// is not parallel, so no other test allocates meanwhile but the
// goroutines of TestCrossArch that copy its processes' output, under 1 MB
// in all against the 16 MB allowed here.
func TestLoadReadsAtMostLimit(t *testing.T) {
	p := filepath.Join(t.TempDir(), "huge.toml")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.WriteString("airframe = \"x\"\n# "); err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(256 << 20); err != nil {
		t.Fatal(err)
	}
	f.Close()
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err = loadFile(p)
	runtime.ReadMemStats(&after)
	if err == nil || !strings.Contains(err.Error(), "file is larger than") {
		t.Errorf("got %v, want the size error", err)
	}
	if got, most := after.TotalAlloc-before.TotalAlloc, uint64(16*airframe.MaxFileBytes); got > most {
		t.Errorf("loading a 256 MiB file allocated %d bytes; at most %d should be", got, most)
	}
}

// A sensor whose DC gain is not 1 but within max_steady_error (beyond it
// the file is refused, see the catalogue) gets a note saying what the
// loop then regulates. H(0) = 101/100 = 1.01 by hand;
// the true rate settles at setpoint/1.01, 1 − 1/1.01 = 0.990 % below; a
// lowpass sensor has H(0) = 1 and no note.
func TestSensorGainNote(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "dc.toml", edit(t, "lowpass_hz = 100.0", "gain = 101.0\npoles = [-100.0]"))
	code, _, errs := runCLI(t, "design", p)
	want := p + ": axes.roll.sensor.gain: note: the sensor's DC gain H(0) is 1.01, not 1: the loop holds the measured rate at the setpoint, so the true rate settles at setpoint/1.01, 0.99 % below it"
	if code == exitUsage || !strings.Contains(errs, want) {
		t.Errorf("exit %d, stderr:\n%s\nwant the note %q", code, errs, want)
	}
	q := writeFile(t, dir, "ok.toml", valid)
	if _, _, errs := runCLI(t, "design", q); strings.Contains(errs, "DC gain") {
		t.Errorf("a lowpass sensor got a note:\n%s", errs)
	}
}
