package golden

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/emit"
	"locusmith/internal/version"
)

// formsAirframe is an airframe (demo data: an invented quadrotor-like
// plant) with one axis per controller structure the generator handles:
// every form, every anti-windup, the derivative on the measurement and on
// the error, every discretization, for the float types a PID behind a
// feedback filter chain of every kind of section (a full and a partial
// notch, a second- and a first-order lowpass; the fixed-point chain has
// its own airframe, compliant_fixed.toml), and in every type a PID with
// derivative filters (a second-order lowpass and a partial notch on the
// derivative, a first-order lowpass on the measured rate) and a PD with a
// full notch on a derivative on the error. The examples cover only some
// of them.
func formsAirframe(numeric string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "airframe = \"forms\"\ndescription = \"demo data: one axis per controller structure\"\nloop_hz = 1000.0\ncompute_delay = 1\n\n[numeric]\ntype = %q\n", numeric)
	if numeric == "q15" || numeric == "q31" {
		b.WriteString("input_full_scale = 64.0\noutput_full_scale = 1.0\n")
	}
	axes := []struct{ name, control string }{
		{"p_only", `form = "p"`},
		{"pi_none", `form = "pi"` + "\nantiwindup = \"none\""},
		{"pi_clamp", `form = "pi"` + "\nantiwindup = \"clamp\"\ndiscretize = \"backward\""},
		{"pi_back", `form = "pi"` + "\nantiwindup = \"backcalc\"\ndiscretize = \"forward\""},
		{"pd_meas", `form = "pd"`},
		{"pd_err", `form = "pd"` + "\nderivative_on = \"error\""},
		{"pid_none", `form = "pid"` + "\nantiwindup = \"none\""},
		{"pid_err", `form = "pid"` + "\nderivative_on = \"error\"\nantiwindup = \"clamp\"\ndiscretize = \"tustin_prewarp\""},
		{"pid_back", `form = "pid"` + "\nantiwindup = \"backcalc\"\nsetpoint_weight = 0.7"},
		{"lead_x", `form = "lead"` + "\nlead_zero = -20.0"},
	}
	float := numeric == "float32" || numeric == "float64"
	if float {
		axes = append(axes, struct{ name, control string }{"pid_filt", `form = "pid"` + "\nantiwindup = \"backcalc\""})
	}
	axes = append(axes, struct{ name, control string }{"pid_dfilt", `form = "pid"` + "\nantiwindup = \"clamp\""},
		struct{ name, control string }{"pd_dfilt", `form = "pd"` + "\nderivative_on = \"error\""})
	for _, a := range axes {
		fmt.Fprintf(&b, `
[axes.%[1]s.plant]
effectiveness = 2000.0
motor_tau = 0.03
delay = 0.002

[axes.%[1]s.sensor]
lowpass_hz = 100.0

[axes.%[1]s.spec]
settling_time = 0.25
overshoot = 0.10

[axes.%[1]s.control]
%[2]s
output_limit = [-0.5, 0.5]
`, a.name, a.control)
	}
	if float {
		b.WriteString(`
[[axes.pid_filt.filter]]
kind = "notch"
hz = 120.0
width_hz = 40.0

[[axes.pid_filt.filter]]
kind = "lowpass"
hz = 200.0

[[axes.pid_filt.filter]]
kind = "notch"
hz = 300.0
width_hz = 60.0
depth_db = 20.0

[[axes.pid_filt.filter]]
kind = "lowpass"
hz = 400.0
order = 1
`)
	}
	b.WriteString(`
[[axes.pid_dfilt.filter]]
kind = "lowpass"
at = "derivative"
hz = 80.0

[[axes.pid_dfilt.filter]]
kind = "lowpass"
hz = 250.0
order = 1

[[axes.pid_dfilt.filter]]
kind = "notch"
at = "derivative"
hz = 150.0
width_hz = 40.0
depth_db = 12.0

[[axes.pd_dfilt.filter]]
kind = "notch"
at = "derivative"
hz = 200.0
width_hz = 50.0
`)
	return b.String()
}

// TestFormsMatrix generates the forms airframe in every arithmetic and
// language and runs its vector programs: C with the host compilers, Go
// with go test (the four arithmetics as packages of one module). Every
// structure must match the reference model bit for bit. With -short the C
// is built by the first host compiler only (the second is a sweep over
// compilers, which the full suite runs).
func TestFormsMatrix(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	if testing.Short() {
		ccs = ccs[:1]
	}
	gocmd := goTool(t)
	gos := map[string][]emit.Source{}
	for _, nt := range []string{"float32", "float64", "q15", "q31"} {
		a := formsDesign(t, nt)
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangGo, Vectors: true, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		gos[nt] = srcs
		for _, ho := range []bool{false, true} {
			srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, HeaderOnly: ho, Vectors: true, AllowUnmet: true})
			if err != nil {
				t.Fatal(err)
			}
			ctrl, vec := cFiles(srcs)
			files := append(vec, ctrl...)
			for _, cc := range ccs {
				t.Run(fmt.Sprintf("%s/header-only=%v/%s", nt, ho, filepath.Base(cc)), func(t *testing.T) {
					t.Parallel()
					dir := buildC(t, cc, append(append([]string{}, strictC...), "-O2"), srcs, files)
					out := run(t, dir, filepath.Join(dir, "prog"))
					if strings.Count(out, "vectors match") != len(a.Axes) {
						t.Errorf("%s header-only=%v: %s", filepath.Base(cc), ho, out)
					}
				})
			}
		}
	}
	t.Run("go", func(t *testing.T) {
		t.Parallel()
		goModule(t, gocmd, "generated.example/forms", gos, false)
	})
}

func runGo(dir, gocmd string, args ...string) (string, error) {
	cmd := exec.Command(gocmd, args...)
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "GOWORK=off", "GOTOOLCHAIN=local", "GOFLAGS=-mod=mod", "CGO_ENABLED=0")
	out, err := cmd.CombinedOutput()
	return string(out), err
}

// TestCommentInjection generates an airframe whose description tries to
// end the comment and run code in both languages, and builds the result:
// an injected line would stop the build (#error, a stray token).
func TestCommentInjection(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	src := formsAirframe("float32")
	evil := `description = "demo data: */ #error injected /* \\\n#error injected\r#error injected ??/\n trailing backslash \\"`
	src = strings.Replace(src, `description = "demo data: one axis per controller structure"`, evil, 1)
	f, err := airframe.Parse("../../evil dir/inject.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	// The description and the path reach the comments only: the designs
	// are those of the forms airframe (the same axes, loop and numeric
	// type), made once for the package (formsDesign); the file is this one.
	g := *formsDesign(t, "float32")
	g.File = f
	a := &g
	for _, lang := range []emit.Lang{emit.LangC, emit.LangGo} {
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: lang, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range srcs {
			first, _, _ := strings.Cut(string(s.Data), "\n")
			if want := "// Code generated by locusmith " + version.Version + " from evil dir/inject.toml; DO NOT EDIT."; first != want {
				t.Errorf("%s: first line %q, want %q", s.Name, first, want)
			}
			if strings.Contains(string(s.Data), "\n#error injected") {
				t.Errorf("%s: the description reached a line of its own", s.Name)
			}
		}
		if lang == emit.LangGo {
			continue // GenerateCode already ran go/format, which parses the file
		}
		dir := writeSources(t, srcs)
		ctrl, _ := cFiles(srcs)
		for _, cc := range ccs {
			run(t, dir, cc, append(append(append([]string{}, strictC...), "-c"), ctrl...)...)
		}
	}
}
