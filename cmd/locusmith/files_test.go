//go:build unix

package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"syscall"
	"testing"
	"time"
)

// Inputs that are not regular files: a named pipe
// would block the open until a writer came (the run hung), /dev/zero
// never ends (the run ran out of memory), a directory is no input. Each
// is exit 2 at once, naming the file and what it is, for every verb that
// reads files, and nothing is written.
func TestInputNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.toml")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skip("no named pipes:", err)
	}
	zero := filepath.Join(dir, "zero.toml")
	if err := os.Symlink("/dev/zero", zero); err != nil {
		t.Skip("no symbolic links:", err)
	}
	sub := filepath.Join(dir, "sub.toml")
	if err := os.Mkdir(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	good := writeFile(t, dir, "good.toml", valid)
	cases := []struct{ path, what string }{
		{fifo, "a named pipe (FIFO)"},
		{zero, "a character device"},
		{sub, "a directory"},
	}
	for _, tc := range cases {
		for _, verb := range [][]string{{"design"}, {"emit", "-o", filepath.Join(dir, "gen")}, {"report", "-o", filepath.Join(dir, "review")}, {"compare", good}, {"identify"}} {
			args := append(append([]string(nil), verb...), tc.path)
			code, out, errs := runCLI(t, args...)
			want := "not a regular file: it is " + tc.what
			if code != exitUsage || !strings.Contains(errs, tc.path) || !strings.Contains(errs, want) {
				t.Errorf("locusmith %s: exit %d, stderr %q; want 2 naming the file and %q", strings.Join(args, " "), code, errs, want)
			}
			if verb[0] != "compare" && out != "" {
				t.Errorf("locusmith %s: stdout %q", strings.Join(args, " "), out)
			}
		}
	}
	for _, d := range []string{"gen", "review"} {
		if _, err := os.Stat(filepath.Join(dir, d)); !os.IsNotExist(err) {
			t.Errorf("%s made or written: %v", d, err)
		}
	}
}

// The output directory: a symbolic link named like a
// generated file is not followed — --check printed its target in the
// diff (a link to the process's environment file printed its
// variables) — nor replaced: exit 2 naming it, its target unread and
// unchanged.
func TestEmitRefusesLinkInOutput(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "ok.toml", valid)
	gen := filepath.Join(dir, "gen")
	if code, _, errs := runCLI(t, "emit", "-o", gen, p); code != exitOK {
		t.Fatalf("first emit: exit %d\n%s", code, errs)
	}
	secret := writeFile(t, dir, "environ", "API_TOKEN=hunter2\n")
	h := filepath.Join(gen, "testcraft_rate.h")
	if err := os.Remove(h); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(secret, h); err != nil {
		t.Skip("no symbolic links:", err)
	}
	for _, args := range [][]string{{"emit", "--check", "-o", gen, p}, {"emit", "-o", gen, p}} {
		code, out, errs := runCLI(t, args...)
		if code != exitUsage || !strings.Contains(errs, h+" is a symbolic link, not a regular file") {
			t.Errorf("%v: exit %d, stderr %q; want 2 naming the link", args, code, errs)
		}
		if strings.Contains(out+errs, "hunter2") {
			t.Errorf("%v: the link's target reached the output:\n%s%s", args, out, errs)
		}
	}
	if target, err := os.Readlink(h); err != nil || target != secret {
		t.Errorf("the link was replaced: %q, %v", target, err)
	}
	if b, _ := os.ReadFile(secret); string(b) != "API_TOKEN=hunter2\n" {
		t.Errorf("the target changed: %q", b)
	}
}

// Interrupted writes: the temporary files a killed
// run leaves make --check exit 1 and list them, and the next emit
// removes them and says so.
func TestEmitStaleTemporaries(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "ok.toml", valid)
	gen := filepath.Join(dir, "gen")
	if code, _, errs := runCLI(t, "emit", "-o", gen, p); code != exitOK {
		t.Fatalf("first emit: exit %d\n%s", code, errs)
	}
	tmp := filepath.Join(gen, ".testcraft_rate.c.tmp-2718281828")
	if err := os.WriteFile(tmp, []byte("/* half a file"), 0o600); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runCLI(t, "emit", "--check", "-o", gen, p)
	if code != exitUnmet || !strings.Contains(out, "temporary: "+tmp+" (left by an interrupted run") || !strings.Contains(errs, "1 temporary") {
		t.Errorf("--check: exit %d\nstdout %q\nstderr %q\nwant 1 and the temporary file listed", code, out, errs)
	}
	code, out, errs = runCLI(t, "emit", "-o", gen, p)
	if code != exitOK || out != "" || !strings.Contains(errs, "removed "+tmp+", a temporary file an interrupted run left") {
		t.Errorf("emit: exit %d\nstdout %q\nstderr %q\nwant 0, nothing written and the removal said", code, out, errs)
	}
	if _, err := os.Lstat(tmp); !os.IsNotExist(err) {
		t.Errorf("the temporary file is still there: %v", err)
	}
	if code, _, errs := runCLI(t, "emit", "--check", "-o", gen, p); code != exitOK {
		t.Errorf("--check after: exit %d\n%s", code, errs)
	}
}

// A read-only output directory where everything is up to date is fine;
// one that needs a write is exit 2, "not writable".
// The permission bits do not stop root, so the test needs another user
// (emit's TestReadOnlyOutputDir covers the writer itself as root).
func TestEmitReadOnlyDir(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root writes into read-only directories; emit.TestReadOnlyOutputDir covers the writer")
	}
	dir := t.TempDir()
	p := writeFile(t, dir, "ok.toml", valid)
	gen := filepath.Join(dir, "gen")
	if code, _, errs := runCLI(t, "emit", "-o", gen, p); code != exitOK {
		t.Fatalf("first emit: exit %d\n%s", code, errs)
	}
	if err := os.Chmod(gen, 0o555); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.Chmod(gen, 0o755) })
	if code, out, errs := runCLI(t, "emit", "-o", gen, p); code != exitOK || out != "" {
		t.Errorf("up to date, read-only: exit %d, stdout %q, stderr %q", code, out, errs)
	}
	q := writeFile(t, dir, "other.toml", edit(t, "overshoot = 0.10", "overshoot = 0.12"))
	if code, _, errs := runCLI(t, "emit", "-o", gen, q); code != exitUsage || !strings.Contains(errs, "not writable") {
		t.Errorf("a change, read-only: exit %d, stderr %q; want 2, not writable", code, errs)
	}
}

// SIGHUP, like SIGTERM and SIGINT, ends a run that holds temporary files
// cleanly: report writes each airframe's files to
// temporary files as it goes and renames them at the end, so a signal
// part way removes them, leaves the old report as it was, and exits 2; a
// SIGKILL leaves them, and the next run removes them. The signal is sent
// once a temporary file is there, so it falls in that window whatever the
// machine's speed.
func TestReportSignals(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the CLI; skipped with -short")
	}
	t.Parallel()
	dir := t.TempDir()
	bin := hostCLI(t)
	src, err := os.ReadFile(examples(t)[0])
	if err != nil {
		t.Fatal(err)
	}
	name := regexp.MustCompile(`(?m)^airframe = .*$`)
	var inputs []string
	for i := 0; i < 24; i++ {
		p := filepath.Join(dir, fmt.Sprintf("a%02d.toml", i))
		if err := os.WriteFile(p, name.ReplaceAll(src, []byte(fmt.Sprintf(`airframe = "a%02d"`, i))), 0o644); err != nil {
			t.Fatal(err)
		}
		inputs = append(inputs, p)
	}
	review := filepath.Join(dir, "review")
	run := func(args ...string) (*exec.Cmd, *bytes.Buffer) {
		cmd := exec.Command(bin, append(append([]string{"report", "-j", "1", "-o", review}, args...), inputs...)...)
		var errb bytes.Buffer
		cmd.Stderr = &errb
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		return cmd, &errb
	}
	// An old report of the first airframe, with another description:
	// the interrupted runs must leave it as it is.
	old := filepath.Join(dir, "old", "a00.toml")
	if err := os.MkdirAll(filepath.Dir(old), 0o755); err != nil {
		t.Fatal(err)
	}
	oldSrc := regexp.MustCompile(`(?m)^description = .*$`).ReplaceAll(name.ReplaceAll(src, []byte(`airframe = "a00"`)), []byte(`description = "demo data: the old report"`))
	if err := os.WriteFile(old, oldSrc, 0o644); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command(bin, "report", "-o", review, old).CombinedOutput(); err != nil {
		t.Fatalf("first report: %v\n%s", err, out)
	}
	before := readTree(t, review)
	temps := func() []string {
		var ts []string
		es, _ := os.ReadDir(review)
		for _, e := range es {
			if strings.Contains(e.Name(), ".tmp-") {
				ts = append(ts, e.Name())
			}
		}
		return ts
	}
	waitTemp := func(cmd *exec.Cmd) {
		t.Helper()
		for deadline := time.Now().Add(2 * time.Minute); len(temps()) == 0; time.Sleep(2 * time.Millisecond) {
			if time.Now().After(deadline) {
				cmd.Process.Kill()
				cmd.Wait()
				t.Fatal("no temporary file appeared")
			}
		}
	}
	for _, sig := range []syscall.Signal{syscall.SIGHUP, syscall.SIGTERM, syscall.SIGINT} {
		cmd, errb := run()
		waitTemp(cmd)
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
		after := readTree(t, review)
		if len(after) != len(before) {
			t.Errorf("%v: the report directory changed: %d files, %d before", sig, len(after), len(before))
		}
		for n, b := range before {
			if !bytes.Equal(after[n], b) {
				t.Errorf("%v: %s changed", sig, n)
			}
		}
	}
	cmd, _ := run()
	waitTemp(cmd)
	cmd.Process.Kill()
	cmd.Wait()
	left := temps()
	if len(left) == 0 {
		t.Fatal("SIGKILL left no temporary file to clean up")
	}
	// The next run (of one file: the clean-up does not depend on what
	// the run reports) removes what the killed one left.
	out, err := exec.Command(bin, "report", "-o", review, inputs[0]).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "a temporary file an interrupted run left") {
		t.Errorf("the run after a SIGKILL: %v\n%s", err, out)
	}
	if ts := temps(); len(ts) != 0 {
		t.Errorf("temporary files left after the next run: %v", ts)
	}
}
