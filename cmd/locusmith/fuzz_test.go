package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
)

// FuzzDesign runs `design --json` on arbitrary file contents: whatever the
// input, the command must not panic, must exit 0, 1 or 2, must print valid
// JSON without NaN or Inf when it designed anything, and must explain a
// status of 2 on stderr.
func FuzzDesign(f *testing.F) {
	f.Add([]byte(valid))
	f.Add([]byte(infeasible))
	f.Add([]byte(valid + "\n[[axes.roll.filter]]\nkind = \"notch\"\nhz = 118.0\nwidth_hz = 30.0\n\n[[axes.roll.filter]]\nkind = \"lowpass\"\nhz = 180.0\norder = 1\n"))
	f.Add([]byte(""))
	f.Add([]byte("airframe = \"x\"\nloop_hz = 10.0\n[axes.a.plant]\ngain = 1e300\npoles = [1e300, [0.0, 1e-300]]\n[axes.a.spec]\nsettling_time = 1e-300\novershoot = 0.999999\n"))
	if paths, err := filepath.Glob("../../examples/*.toml"); err == nil {
		for _, p := range paths {
			if data, err := os.ReadFile(p); err == nil {
				f.Add(data)
			}
		}
	}
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, data []byte) {
		if heavy(data) {
			t.Skip("valid but slow to design: the target checks robustness, not speed")
		}
		p := filepath.Join(dir, "fuzz.toml")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		var out, errb bytes.Buffer
		code := run([]string{"design", "--json", p}, &out, &errb)
		if strings.Contains(errb.String(), "internal error") {
			t.Fatalf("panic recovered for input %q:\n%s", data, errb.String())
		}
		switch code {
		case exitOK, exitUnmet:
			var r map[string]any
			if err := json.Unmarshal(out.Bytes(), &r); err != nil {
				t.Fatalf("exit %d but stdout is not JSON: %v", code, err)
			}
			if bytes.Contains(out.Bytes(), []byte("NaN")) {
				t.Fatalf("JSON contains NaN")
			}
		case exitUsage:
			if !strings.Contains(errb.String(), p) {
				t.Fatalf("exit 2 without naming the file:\n%s", errb.String())
			}
		default:
			t.Fatalf("exit %d, want 0, 1 or 2", code)
		}
	})
}

// heavy reports whether data is a valid airframe whose design takes long
// (more than three axes, more than 1000 samples per settling time, a model
// above sixth order or a delay of more than 10 samples), which would stall
// the fuzzer (an instrumented design runs several times slower) without
// testing anything new: the target checks robustness, not speed.
func heavy(data []byte) bool {
	f, err := airframe.Parse("fuzz.toml", data)
	if err != nil {
		return false
	}
	if len(f.Axes) > 3 {
		return true
	}
	for _, a := range f.Axes {
		if f.Loop.Hz*a.Spec.SettlingTime > 1000 || len(a.Plant.Model.Poles)+len(a.Sensor.Poles) > 6 || a.Plant.Delay*f.Loop.Hz > 10 {
			return true
		}
	}
	return false
}
