package golden

import (
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/emit"
)

// TestCCompilerReadsConstants has the C compilers read every float
// constant of the golden headers and print its bit pattern, which must be
// the pattern of the value strconv.ParseFloat reads from the same literal
// (both correctly rounded decimal conversion, C99 6.4.4.2 with IEEE
// arithmetic, Annex F): the printed literals round-trip through the
// compiler too, not only through Go.
func TestCCompilerReadsConstants(t *testing.T) {
	t.Parallel()
	ccs := hostCompilers(t)
	def := regexp.MustCompile(`(?m)^#define ([A-Z0-9_]+) +(\(?-?[0-9][0-9.e+-]*f?\)?) //`)
	checked := 0
	for _, p := range examplePaths(t) {
		for _, v := range []variant{{name: "float32", lang: emit.LangC}, {name: "file", lang: emit.LangC}} {
			srcs := goldenSources(t, p, v)
			h := headerOf(srcs)
			text := string(sourceNamed(srcs, h).Data)
			ms := def.FindAllStringSubmatch(text, -1) // float literals only: fixed point's are casts
			if len(ms) == 0 {
				continue
			}
			checked += len(ms)
			var prog strings.Builder
			fmt.Fprintf(&prog, "#include <stdio.h>\n#include <string.h>\n#include \"%s\"\n\nint main(void)\n{\n", h)
			var want []string
			for _, m := range ms {
				lit := strings.Trim(m[2], "()")
				single := strings.HasSuffix(lit, "f")
				x, err := strconv.ParseFloat(strings.TrimSuffix(lit, "f"), map[bool]int{true: 32, false: 64}[single])
				if err != nil {
					t.Fatalf("%s: %s = %q: %v", h, m[1], m[2], err)
				}
				if single {
					fmt.Fprintf(&prog, "\t{\n\t\tfloat f = %s;\n\t\tunsigned int u;\n\t\tmemcpy(&u, &f, sizeof u);\n\t\tprintf(\"%%08x\\n\", u);\n\t}\n", m[1])
					want = append(want, fmt.Sprintf("%08x", math.Float32bits(float32(x))))
				} else {
					fmt.Fprintf(&prog, "\t{\n\t\tdouble d = %s;\n\t\tunsigned long long u;\n\t\tmemcpy(&u, &d, sizeof u);\n\t\tprintf(\"%%016llx\\n\", u);\n\t}\n", m[1])
					want = append(want, fmt.Sprintf("%016x", math.Float64bits(x)))
				}
			}
			prog.WriteString("\treturn 0;\n}\n")
			srcs = append(srcs, emit.Source{Name: "lits.c", Data: []byte(prog.String())})
			dir := writeSources(t, srcs)
			for _, cc := range ccs {
				run(t, dir, cc, append(append([]string{}, strictC...), "-o", "lits", "lits.c")...)
				got := strings.Fields(run(t, dir, filepath.Join(dir, "lits")))
				if strings.Join(got, " ") != strings.Join(want, " ") {
					t.Errorf("%s %s: the compiler read\n%v\nGo reads\n%v", exampleName(p), filepath.Base(cc), got, want)
				}
			}
		}
	}
	if checked < 20 {
		t.Errorf("only %d float constants found in the golden headers", checked)
	}
}
