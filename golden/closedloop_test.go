package golden

import (
	"encoding/json"
	"fmt"
	"math"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
)

// sciPy is the outcome of the one probe for SciPy of a test run: each
// start of the interpreter that imports it costs a quarter of a second.
var sciPy struct {
	once sync.Once
	out  []byte
	err  error
}

// scipyPython returns Debian's python3 when it has SciPy, or skips.
func scipyPython(t *testing.T) string {
	t.Helper()
	const py = "/usr/bin/python3"
	sciPy.once.Do(func() {
		sciPy.out, sciPy.err = exec.Command(py, "-c", "import scipy, numpy; print(scipy.__version__)").CombinedOutput()
	})
	if sciPy.err != nil {
		t.Skipf("%s with SciPy not available (%v: %s); install python3-scipy (.ci/run does)", py, sciPy.err, strings.TrimSpace(string(sciPy.out)))
	}
	return py
}

// zohScript samples the cascade G·H with SciPy: G and H from zeros,
// poles and gain (scipy.signal.ZerosPolesGain(...).to_ss()), the cascade
// u → G → y_true → H → y_m in state space, then
// scipy.signal.cont2discrete(method="zoh"). Input on stdin: a JSON list
// of {g: {z, p, k}, h: {z, p, k}, T}, roots as [re, im]; output: per
// axis A, B, Cy, Cm, Dy, Dm and the SciPy version.
const zohScript = `
import json, sys
import numpy as np
import scipy
from scipy import signal

def roots(rs):
    return np.array([complex(r[0], r[1]) for r in rs], dtype=complex)

def ss(zpk):
    z, p, k = roots(zpk["z"]), roots(zpk["p"]), zpk["k"]
    if len(p) == 0 and len(z) == 0:
        return np.zeros((0, 0)), np.zeros((0, 1)), np.zeros((1, 0)), np.array([[k]])
    A, B, C, D = signal.zpk2ss(z, p, k)
    return np.real(A), np.real(B), np.real(C), np.real(D)

out = {"scipy": scipy.__version__, "axes": []}
for ax in json.load(sys.stdin):
    Ag, Bg, Cg, Dg = ss(ax["g"])
    Ah, Bh, Ch, Dh = ss(ax["h"])
    ng, nh = Ag.shape[0], Ah.shape[0]
    A = np.zeros((ng + nh, ng + nh))
    A[:ng, :ng] = Ag
    A[ng:, :ng] = Bh @ Cg
    A[ng:, ng:] = Ah
    B = np.vstack([Bg, Bh @ Dg])
    Cy = np.hstack([Cg, np.zeros((1, nh))])
    Cm = np.hstack([Dh @ Cg, Ch])
    C = np.vstack([Cy, Cm])
    D = np.vstack([Dg, Dh @ Dg])
    Ad, Bd, Cd, Dd, _ = signal.cont2discrete((A, B, C, D), ax["T"], method="zoh")
    out["axes"].append({"A": Ad.tolist(), "B": Bd[:, 0].tolist(), "Cy": Cd[0].tolist(),
                        "Cm": Cd[1].tolist(), "Dy": float(Dd[0, 0]), "Dm": float(Dd[1, 0])})
print(json.dumps(out))
`

type zpkJSON struct {
	Z [][2]float64 `json:"z"`
	P [][2]float64 `json:"p"`
	K float64      `json:"k"`
}

func toZPK(zs, ps []complex128, k float64) zpkJSON {
	j := zpkJSON{K: k, Z: [][2]float64{}, P: [][2]float64{}}
	for _, z := range zs {
		j.Z = append(j.Z, [2]float64{real(z), imag(z)})
	}
	for _, p := range ps {
		j.P = append(j.P, [2]float64{real(p), imag(p)})
	}
	return j
}

type zohAxis struct {
	A      [][]float64 `json:"A"`
	B      []float64   `json:"B"`
	Cy, Cm []float64
	Dy, Dm float64
}

func cDoubles(xs []float64) string {
	var s []string
	for _, x := range xs {
		s = append(s, strconv.FormatFloat(x, 'g', 17, 64))
	}
	return strings.Join(s, ", ")
}

// TestClosedLoopC closes the loop around the emitted float32 controller
// in C: the plant is the ZOH equivalent of G·H computed by SciPy's
// cont2discrete (not by locusmith), the transport delay and the compute
// delay are whole samples of command queue, and the program records the
// true rate for a setpoint step small enough to stay linear. Its
// overshoot (peak − final)/final must match the discrete overshoot that
// design reports within 1e-3: the two sides share no code but the
// emitted controller, and what separates them is float32 arithmetic in
// the controller (relative 6e-8 per operation) and the plant's float64
// rounding, far below 1e-3 of overshoot.
func TestClosedLoopC(t *testing.T) {
	t.Parallel()
	py := scipyPython(t)
	cc := hostCompilers(t)[0]
	// The plants of every example go to SciPy in one run.
	type example struct {
		p    string
		a    *discrete.Airframe
		axes []discrete.Outcome
		zoh  []zohAxis
	}
	var exs []*example
	var req []map[string]any
	for _, p := range examplePaths(t) {
		e := &example{p: p, a: design(t, p, airframe.Float32)}
		for _, x := range e.a.Axes {
			d := x.Design
			T := 1 / d.Loop.Hz
			if nd := d.Problem.Plant.Delay / T; math.Abs(nd-math.Round(nd)) > 1e-9 {
				t.Logf("%s axis %s: transport delay %g s is not a whole number of samples; skipped", exampleName(p), x.Name, d.Problem.Plant.Delay)
				continue
			}
			g, h := d.Problem.Plant.Model, d.Problem.Sensor
			req = append(req, map[string]any{"g": toZPK(g.Zeros, g.Poles, g.Gain), "h": toZPK(h.Zeros, h.Poles, h.Gain), "T": T})
			e.axes = append(e.axes, x)
		}
		exs = append(exs, e)
	}
	in, err := json.Marshal(req)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(py, "-c", zohScript)
	cmd.Stdin = strings.NewReader(string(in))
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("SciPy script: %v", err)
	}
	var res struct {
		SciPy string    `json:"scipy"`
		Axes  []zohAxis `json:"axes"`
	}
	if err := json.Unmarshal(out, &res); err != nil {
		t.Fatalf("SciPy output: %v\n%s", err, out)
	}
	if len(res.Axes) != len(req) {
		t.Fatalf("SciPy sampled %d plants of %d", len(res.Axes), len(req))
	}
	t.Logf("plants sampled by SciPy %s cont2discrete(zoh)", res.SciPy)
	for _, e := range exs {
		e.zoh, res.Axes = res.Axes[:len(e.axes)], res.Axes[len(e.axes):]
	}
	for _, e := range exs {
		p, a, axes := e.p, e.a, e.axes
		t.Run(exampleName(p), func(t *testing.T) {
			t.Parallel()
			if len(axes) == 0 {
				t.Skip("no axis with a whole-sample delay")
			}
			srcs := generate(t, p, variant{name: "float32", lang: emit.LangC, numeric: airframe.Float32})
			var prog strings.Builder
			fmt.Fprintf(&prog, "#include <stdio.h>\n#include \"%s\"\n\n", headerOf(srcs))
			prog.WriteString("int main(void)\n{\n")
			for i, x := range axes {
				d := x.Design
				z := e.zoh[i]
				if z.Dy != 0 || z.Dm != 0 {
					t.Fatalf("axis %s: plant with feedthrough", x.Name)
				}
				n := len(z.B)
				T := 1 / d.Loop.Hz
				delay := d.Loop.ComputeDelay + int(math.Round(d.Problem.Plant.Delay/T))
				steps := int(math.Ceil(20*d.Problem.Spec.SettlingTime/T)) + 1
				amp := 0.2 * d.Coeffs.Hi / d.Verif.Saturated.LinearPeakCommand
				var flat []float64
				for _, row := range z.A {
					flat = append(flat, row...)
				}
				pre := a.File.Airframe + "_" + x.Name
				fmt.Fprintf(&prog, "\t{\n\t\tstatic const double A[%d] = {%s};\n", n*n, cDoubles(flat))
				fmt.Fprintf(&prog, "\t\tstatic const double B[%d] = {%s}, Cy[%d] = {%s}, Cm[%d] = {%s};\n", n, cDoubles(z.B), n, cDoubles(z.Cy), n, cDoubles(z.Cm))
				fmt.Fprintf(&prog, "\t\tdouble x[%d] = {0}, xn[%d], q[%d] = {0}, peak = 0, yt = 0, prev = 0;\n", n, n, delay+1)
				fmt.Fprintf(&prog, "\t\tconst float r = %sf;\n\t\t%s_state s;\n\t\tint k, i, j;\n\t\t%s_reset(&s, 0.0f, 0.0f);\n", strconv.FormatFloat(float64(float32(amp)), 'g', -1, 32), pre, pre)
				fmt.Fprintf(&prog, "\t\tfor (k = 0; k < %d; k++) {\n", steps)
				fmt.Fprintf(&prog, "\t\t\tdouble ym = 0;\n\t\t\tprev = yt;\n\t\t\tyt = 0;\n")
				fmt.Fprintf(&prog, "\t\t\tfor (i = 0; i < %d; i++) {\n\t\t\t\tym += Cm[i] * x[i];\n\t\t\t\tyt += Cy[i] * x[i];\n\t\t\t}\n", n)
				fmt.Fprintf(&prog, "\t\t\tif (yt > peak) {\n\t\t\t\tpeak = yt;\n\t\t\t}\n")
				fmt.Fprintf(&prog, "\t\t\tfor (i = %d; i > 0; i--) {\n\t\t\t\tq[i] = q[i - 1];\n\t\t\t}\n", delay)
				fmt.Fprintf(&prog, "\t\t\tq[0] = (double)%s_step(&s, r, (float)ym);\n", pre)
				fmt.Fprintf(&prog, "\t\t\tfor (i = 0; i < %d; i++) {\n\t\t\t\txn[i] = B[i] * q[%d];\n\t\t\t\tfor (j = 0; j < %d; j++) {\n\t\t\t\t\txn[i] += A[i * %d + j] * x[j];\n\t\t\t\t}\n\t\t\t}\n", n, delay, n, n)
				fmt.Fprintf(&prog, "\t\t\tfor (i = 0; i < %d; i++) {\n\t\t\t\tx[i] = xn[i];\n\t\t\t}\n\t\t}\n", n)
				fmt.Fprintf(&prog, "\t\tprintf(\"%%s %%.17g %%.17g %%.17g\\n\", \"%s\", peak, yt, yt - prev);\n\t}\n", x.Name)
			}
			prog.WriteString("\treturn 0;\n}\n")
			srcs = append(srcs, emit.Source{Name: "loop.c", Data: []byte(prog.String())})
			dir := writeSources(t, srcs)
			ctrl, _ := cFiles(srcs)
			var ctrlOnly []string
			for _, c := range ctrl {
				if c != "loop.c" {
					ctrlOnly = append(ctrlOnly, c)
				}
			}
			args := append([]string{"-std=c99", "-O2", "-o", "loop", "loop.c"}, ctrlOnly...)
			run(t, dir, cc, args...)
			outText := run(t, dir, filepath.Join(dir, "loop"))
			lines := strings.Split(strings.TrimSpace(outText), "\n")
			if len(lines) != len(axes) {
				t.Fatalf("loop printed %q", outText)
			}
			for i, x := range axes {
				f := strings.Fields(lines[i])
				peak, _ := strconv.ParseFloat(f[1], 64)
				final, _ := strconv.ParseFloat(f[2], 64)
				last, _ := strconv.ParseFloat(f[3], 64)
				// The float32 controller keeps moving the command by a few
				// LSB (relative 6e-8) at rest; a final value that still
				// moves by 1e-6 of itself per sample moves the overshoot by
				// far less than the 1e-3 tolerance.
				if math.Abs(last) > 1e-6*math.Abs(final) {
					t.Errorf("axis %s: not settled after 20 settling times (last change %g of %g)", x.Name, last, final)
				}
				over := 0.0
				if peak > final {
					over = (peak - final) / final
				}
				want := x.Design.Verif.Step.Overshoot
				t.Logf("axis %s: overshoot in C with the SciPy plant %.6f, design reports %.6f", x.Name, over, want)
				if math.Abs(over-want) > 1e-3 || math.IsNaN(over) {
					t.Errorf("axis %s: closed-loop overshoot %.6f, design reports %.6f (|diff| > 1e-3)", x.Name, over, want)
				}
			}
		})
	}
}
