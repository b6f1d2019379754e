package golden

import (
	"bufio"
	"fmt"
	"math"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/discrete"
	"locusmith/emit"
)

// cDriver is a C program that runs the generated float32 controllers of
// the forms airframe on commands read from stdin, one per line:
// "op axis a b" with a and b the bit patterns of the float arguments in
// hexadecimal (so that NaN and every other value pass exactly); op 0
// steps, 1 calls applied, 2 resets. It answers each line with the bit
// pattern of the command (0 for applied and reset) and the axis's fault
// count.
func cDriver(a *discrete.Airframe) emit.Source {
	var b strings.Builder
	fmt.Fprintf(&b, "#include <stdint.h>\n#include <stdio.h>\n#include <string.h>\n#include \"%s_rate.h\"\n\n", a.File.Airframe)
	b.WriteString("static uint32_t bits(float x)\n{\n\tuint32_t u;\n\tmemcpy(&u, &x, sizeof u);\n\treturn u;\n}\n\n")
	b.WriteString("static float num(unsigned long u)\n{\n\tconst uint32_t v = (uint32_t)u;\n\tfloat x;\n\tmemcpy(&x, &v, sizeof x);\n\treturn x;\n}\n\n")
	b.WriteString("int main(void)\n{\n\tunsigned op, ax;\n\tunsigned long a, b;\n")
	for i, x := range a.Axes {
		p := a.File.Airframe + "_" + x.Name
		fmt.Fprintf(&b, "\t%s_state s%d;\n\t%s_reset(&s%d, 0.0f, 0.0f);\n", p, i, p, i)
	}
	b.WriteString("\twhile (scanf(\"%u %u %lx %lx\", &op, &ax, &a, &b) == 4) {\n\t\tfloat u = 0.0f;\n\t\tuint32_t faults = 0;\n\t\tswitch (ax) {\n")
	for i, x := range a.Axes {
		p := a.File.Airframe + "_" + x.Name
		fmt.Fprintf(&b, "\t\tcase %d:\n\t\t\tif (op == 0) {\n\t\t\t\tu = %s_step(&s%d, num(a), num(b));\n\t\t\t} else if (op == 1) {\n\t\t\t\t%s_applied(&s%d, num(a));\n\t\t\t} else {\n\t\t\t\t%s_reset(&s%d, num(a), num(b));\n\t\t\t}\n\t\t\tfaults = s%d.faults;\n\t\t\tbreak;\n", i, p, i, p, i, p, i, i)
	}
	b.WriteString("\t\tdefault:\n\t\t\treturn 2;\n\t\t}\n\t\tprintf(\"%08lx %lu\\n\", (unsigned long)bits(u), (unsigned long)faults);\n\t\tfflush(stdout);\n\t}\n\treturn 0;\n}\n")
	return emit.Source{Name: "driver.c", Data: []byte(b.String())}
}

// FuzzEmittedStep drives the generated C of every controller structure
// (the forms airframe, float32, built by the first host compiler) and the
// reference model with the same arbitrary calls: each three bytes of the
// input pick a call (step, applied, reset), an axis and two arguments
// among finite values of several scales, signed zeros, NaN and the
// infinities, or the bit pattern the next bytes spell. Every command must
// have the model's bits and every fault count the model's, so the
// non-finite handling of the C is checked on any sequence, not only on
// the excitation of the vectors.
func FuzzEmittedStep(f *testing.F) {
	f.Add([]byte{0, 1, 2, 0, 3, 4, 1, 5, 6, 2, 7, 8, 0, 9, 10})
	f.Add([]byte{0, 0, 200, 0, 0, 201, 0, 0, 202, 1, 0, 203, 0, 0, 12})
	f.Add([]byte{0, 7, 17, 0, 7, 17, 0, 7, 17, 0, 7, 17, 1, 7, 0, 0, 7, 33})
	cc := hostCompilers(f)[0]
	a := formsDesign(f, "float32")
	srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, AllowUnmet: true})
	if err != nil {
		f.Fatal(err)
	}
	ctrl, _ := cFiles(srcs)
	srcs = append(srcs, cDriver(a))
	dir := buildC(f, cc, append(append([]string{}, strictC...), "-O2"), srcs, append([]string{"driver.c"}, ctrl...))
	cmd := exec.Command(filepath.Join(dir, "prog"))
	in, err := cmd.StdinPipe()
	if err != nil {
		f.Fatal(err)
	}
	outPipe, err := cmd.StdoutPipe()
	if err != nil {
		f.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		f.Fatal(err)
	}
	f.Cleanup(func() {
		in.Close()
		_ = cmd.Wait()
	})
	out := bufio.NewReader(outPipe)
	call := func(op, ax int, x, y float32) (uint32, uint32, error) {
		if _, err := fmt.Fprintf(in, "%d %d %x %x\n", op, ax, math.Float32bits(x), math.Float32bits(y)); err != nil {
			return 0, 0, err
		}
		line, err := out.ReadString('\n')
		if err != nil {
			return 0, 0, fmt.Errorf("driver: %v (%q)", err, line)
		}
		var u, n uint32
		if _, err := fmt.Sscanf(line, "%x %d", &u, &n); err != nil {
			return 0, 0, fmt.Errorf("driver printed %q: %v", line, err)
		}
		return u, n, nil
	}
	params := make([]discrete.Params[float32], len(a.Axes))
	for i, x := range a.Axes {
		params[i] = discrete.ParamsOf[float32](x.Design.Coeffs)
		params[i].Sections = discrete.SectionsOf[float32](x.Design.Plant.Sections)
	}
	vals := []float32{0, float32(math.Copysign(0, -1)), 1, -1, 0.25, -3.5, 40, -40, 700, 1e-30, -2e30,
		float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1))}
	f.Fuzz(func(t *testing.T, data []byte) {
		states := make([]discrete.State[float32], len(a.Axes))
		for i := range states {
			discrete.Reset(&params[i], &states[i], 0, 0)
			if _, _, err := call(2, i, 0, 0); err != nil {
				t.Fatal(err)
			}
		}
		value := func(b byte, rest []byte) float32 {
			if int(b) < len(vals) || len(rest) < 4 {
				return vals[int(b)%len(vals)]
			}
			// Any bit pattern (NaN payloads, subnormals) from the bytes.
			return math.Float32frombits(uint32(rest[0]) | uint32(rest[1])<<8 | uint32(rest[2])<<16 | uint32(rest[3])<<24)
		}
		for i := 0; i+2 < len(data); i += 3 {
			op, ax := int(data[i]%3), int(data[i+1])%len(a.Axes)
			x, y := value(data[i+2], data[i+3:]), value(data[i+2]^0x5a, data[min(i+7, len(data)):])
			var want float32
			switch op {
			case 0:
				want = discrete.Step(&params[ax], &states[ax], x, y)
			case 1:
				discrete.Applied(&params[ax], &states[ax], x)
			default:
				discrete.Reset(&params[ax], &states[ax], x, y)
			}
			u, n, err := call(op, ax, x, y)
			if err != nil {
				t.Fatal(err)
			}
			if u != math.Float32bits(want) || n != states[ax].Faults {
				t.Fatalf("call %d: op %d on %s with %v, %v: C gave bits %#08x and %d faults, the model %#08x and %d",
					i/3, op, a.Axes[ax].Name, x, y, u, n, math.Float32bits(want), states[ax].Faults)
			}
		}
	})
}
