package discrete_test

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
)

// numericChecks returns the checks of the numeric realization.
func numericChecks(d *discrete.Design) (checks []string, failed []string) {
	for _, c := range d.Num.Checks {
		checks = append(checks, c.Name)
		if !c.OK {
			failed = append(failed, c.Name)
		}
	}
	return checks, failed
}

// TestExamplesRealize: every demo airframe's axes realize in their numeric
// type with every numeric check passing (overflow, quantized spec,
// limit cycle), and the q15 gimbal among them has its ranges proved.
func TestExamplesRealize(t *testing.T) {
	files, _ := filepath.Glob("../examples/*.toml")
	if len(files) == 0 {
		t.Skip("no examples/*.toml yet")
	}
	fixed := 0
	for _, path := range files {
		f, err := loadAirframe(path)
		if err != nil {
			t.Errorf("%s: %v", path, err)
			continue
		}
		for _, p := range f.Axes {
			d, err := discrete.DesignAxis(p, f.Loop, f.Numeric)
			if err != nil {
				t.Errorf("%s axis %s: %v", path, p.Name, err)
				continue
			}
			checks, failed := numericChecks(d)
			if len(failed) > 0 {
				t.Errorf("%s axis %s: numeric checks fail: %v\n%s", path, p.Name, failed, strings.Join(d.Num.Warnings, "\n"))
			}
			if f.Numeric.Type.IsFixed() {
				fixed++
				if len(d.Num.Ranges) == 0 || d.Num.Fixed == nil || !strings.Contains(strings.Join(checks, " "), "overflow") {
					t.Errorf("%s axis %s: no fixed-point realization", path, p.Name)
				}
				t.Logf("%s %s: max error %.3f LSB, SQNR %.1f dB, rest %g LSB", filepath.Base(path), p.Name, d.Num.MaxErrorLSB, d.Num.SQNRdB, d.Num.RestLSB)
			}
		}
	}
	if fixed == 0 {
		t.Error("no fixed-point example axis")
	}
}

// TestOverRangedAirframe: the gimbal with an integrator limit 2e5 times
// its output full scale (testdata, demo data) fails the overflow check
// with the variable, bound, capacity and a way out.
func TestOverRangedAirframe(t *testing.T) {
	f, err := loadAirframe("testdata/overranged_q15.toml")
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range f.Axes {
		if p.Name != "pitch" {
			continue
		}
		d, err := discrete.DesignAxis(p, f.Loop, f.Numeric)
		if err != nil {
			t.Fatal(err)
		}
		_, failed := numericChecks(d)
		if len(failed) == 0 || failed[0] != "overflow" || d.OK() {
			t.Fatalf("failed checks %v", failed)
		}
		msg := strings.Join(d.Warnings, "\n")
		for _, want := range []string{"overflow: integrator S can reach", "but its 32-bit word holds", "way out: a smaller control.integrator_limit", "q31"} {
			if !strings.Contains(msg, want) {
				t.Errorf("warnings lack %q:\n%s", want, msg)
			}
		}
		return
	}
	t.Fatal("no pitch axis")
}

// TestCoarseFullScaleAirframe: the gimbal with a 2000 rad/s input full
// scale (LSB 0.061 rad/s) cannot resolve the settling band of its
// reference step: an input error naming numeric.input_full_scale.
func TestCoarseFullScaleAirframe(t *testing.T) {
	data, err := os.ReadFile("testdata/overranged_q15.toml")
	if err != nil {
		t.Fatal(err)
	}
	src := string(data)
	for _, r := range [][2]string{{"input_full_scale = 10.0", "input_full_scale = 2000.0"}, {"integrator_limit = 2.0e5", "integrator_limit = 1.0"}} {
		if !strings.Contains(src, r[0]) {
			t.Fatalf("testdata lacks %q", r[0])
		}
		src = strings.Replace(src, r[0], r[1], 1)
	}
	f, err := airframe.Parse("coarse.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	_, err = discrete.DesignAxis(f.Axes[0], f.Loop, f.Numeric)
	var ie *discrete.InputError
	if !errors.As(err, &ie) || ie.Key != "numeric.input_full_scale" || ie.Value != "2000" {
		t.Fatalf("error %v, want an input error on numeric.input_full_scale", err)
	}
}

// loadAirframe reads and parses the airframe file at path.
func loadAirframe(path string) (*airframe.File, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return airframe.Parse(path, data)
}
