package golden

import (
	"go/parser"
	"go/token"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"locusmith/emit"
)

// goTool returns the go command of the toolchain running the tests.
func goTool(t testing.TB) string {
	t.Helper()
	p := filepath.Join(runtime.GOROOT(), "bin", "go")
	if _, err := os.Stat(p); err != nil {
		if p, err = exec.LookPath("go"); err != nil {
			t.Skip("go command not found")
		}
	}
	return p
}

// TestGoCode builds the generated Go of every example × variant in a
// module of its own, vets it and runs its vector test (bit for bit against
// the reference model) and its allocation test (Step allocates nothing).
// The controller file itself must import nothing: no fmt, no reflect, no
// math (float and integer arithmetic only).
func TestGoCode(t *testing.T) {
	gocmd := goTool(t)
	for _, p := range examplePaths(t) {
		for _, v := range variants() {
			if v.lang != emit.LangGo {
				continue
			}
			t.Run(exampleName(p)+"/"+v.dir(), func(t *testing.T) {
				v.vectors = true
				srcs := generate(t, p, v)
				for _, s := range srcs {
					if strings.HasSuffix(s.Name, "_test.go") {
						continue
					}
					f, err := parser.ParseFile(token.NewFileSet(), s.Name, s.Data, parser.ImportsOnly)
					if err != nil {
						t.Fatalf("%s: %v", s.Name, err)
					}
					if len(f.Imports) != 0 {
						t.Errorf("%s imports %d packages, want none", s.Name, len(f.Imports))
					}
				}
				srcs = append(srcs, emit.Source{Name: "go.mod", Data: []byte("module generated.example/rate\n\ngo 1.21\n")})
				dir := writeSources(t, srcs)
				env := append(os.Environ(), "GOWORK=off", "GOTOOLCHAIN=local", "GOFLAGS=-mod=mod", "CGO_ENABLED=0")
				for _, args := range [][]string{{"vet", "./..."}, {"test", "-count=1", "./..."}} {
					cmd := exec.Command(gocmd, args...)
					cmd.Dir, cmd.Env = dir, env
					out, err := cmd.CombinedOutput()
					if err != nil {
						t.Fatalf("go %s: %v\n%s", strings.Join(args, " "), err, out)
					}
				}
			})
		}
	}
}
