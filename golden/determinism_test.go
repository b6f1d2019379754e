package golden

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"sort"
	"strings"
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

// runCLI runs the binary (under the emulator when given) in dir.
func runCLI(dir string, emu, bin string, args ...string) (string, int, error) {
	if emu != "" {
		args = append([]string{bin}, args...)
		bin = emu
	}
	cmd := exec.Command(bin, args...)
	cmd.Dir = dir
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	if ee, ok := err.(*exec.ExitError); ok {
		return out.String(), ee.ExitCode(), nil
	}
	return out.String(), 0, err
}

// snapshot reads every file of dir.
func snapshot(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	m := map[string][]byte{}
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range es {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		m[e.Name()] = b
	}
	return m
}

// TestCrossArchDeterminism builds the CLI for the host and for arm64
// (CGO_ENABLED=0 GOARCH=arm64), runs both (arm64 under qemu-aarch64) on
// every example in every arithmetic (the file's, float32, q15, q31) and
// language, and requires byte-identical files: the output is a pure
// function of the input and the tool version, whatever the CPU (Go may
// fuse x*y + z on arm64 and not on amd64; a value that reached the
// output through such a difference would show here). It also requires
// two host runs to agree. Skips when qemu-aarch64 is missing.
func TestCrossArchDeterminism(t *testing.T) {
	t.Parallel()
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
	host := buildCLI(t, "")
	arm := buildCLI(t, "arm64")
	work := t.TempDir()
	if err := os.MkdirAll(filepath.Join(work, "examples"), 0o755); err != nil {
		t.Fatal(err)
	}
	var inputs []string
	for _, p := range examplePaths(t) {
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		rel := filepath.Join("examples", filepath.Base(p))
		if err := os.WriteFile(filepath.Join(work, rel), b, 0o644); err != nil {
			t.Fatal(err)
		}
		inputs = append(inputs, rel)
		for _, nt := range []airframe.NumericType{airframe.Float32, airframe.Q15, airframe.Q31} {
			if design(t, p, "").File.Numeric.Type != nt {
				inputs = append(inputs, fixedCopy(t, work, p, nt))
			}
		}
	}
	sort.Strings(inputs)
	// The design is the architecture-sensitive part (floating-point
	// search and verification, the reference model behind the vectors);
	// rendering it is string templating, the same on every CPU. So one
	// language with the vectors covers the design and the numbers the
	// vectors carry, which the Go vectors share with the C ones; the
	// JSON report, every figure of the designs, is compared as well.
	flagSets := [][]string{
		{"--lang", "c", "--vectors"},
	}
	// The flag sets run side by side; the runs of one set (mostly under
	// the emulator) one after the other.
	for i, fl := range flagSets {
		t.Run(fl[1]+strings.TrimPrefix(fl[2], "-"), func(t *testing.T) {
			t.Parallel()
			crossArchRuns(t, work, inputs, fl, i, host, emu, arm)
		})
	}
	t.Run("json", func(t *testing.T) {
		t.Parallel()
		args := append([]string{"design", "--json"}, inputs...)
		want, _, err := runCLI(work, "", host, args...)
		if err != nil {
			t.Fatal(err)
		}
		got, _, err := runCLI(work, emu, arm, args...)
		if err != nil {
			t.Fatal(err)
		}
		if got != want {
			t.Errorf("design --json differs between the host and arm64:\n%s", firstDiff(want, got))
		}
	})
}

// crossArchRuns runs emit with the flags fl on inputs twice on the host
// and once on arm64 under emu, each into its own directory out-i-WHO of
// work, and requires the same files, byte for byte.
func crossArchRuns(t *testing.T, work string, inputs, fl []string, i int, host, emu, arm string) {
	outs := map[string]map[string][]byte{}
	for _, who := range []struct{ name, emu, bin string }{{"host", "", host}, {"host-again", "", host}, {"arm64", emu, arm}} {
		o := filepath.Join(work, fmt.Sprintf("out-%d-%s", i, who.name))
		if err := os.Mkdir(o, 0o755); err != nil {
			t.Fatal(err)
		}
		// Go takes one airframe per run (a package each).
		batches := [][]string{inputs}
		if fl[1] == "go" {
			batches = nil
			for _, in := range inputs {
				batches = append(batches, []string{in})
			}
		}
		for _, b := range batches {
			args := append(append([]string{"emit", "-o", o, "--allow-unmet"}, fl...), b...)
			out, code, err := runCLI(work, who.emu, who.bin, args...)
			if err != nil || code != 0 {
				t.Fatalf("%s %s: exit %d, %v\n%s", who.name, strings.Join(fl, " "), code, err, out)
			}
		}
		outs[who.name] = snapshot(t, o)
	}
	ref := outs["host"]
	if len(ref) == 0 {
		t.Fatalf("%s: no files written", strings.Join(fl, " "))
	}
	for _, other := range []string{"host-again", "arm64"} {
		got := outs[other]
		if len(got) != len(ref) {
			t.Errorf("%s %s: %d files, host %d", other, strings.Join(fl, " "), len(got), len(ref))
		}
		for name, want := range ref {
			if !bytes.Equal(got[name], want) {
				t.Errorf("%s %s: %s differs from the host's output:\n%s", other, strings.Join(fl, " "), name, firstDiff(string(want), string(got[name])))
			}
		}
	}
}
