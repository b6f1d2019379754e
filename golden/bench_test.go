package golden

import (
	"os"
	"path/filepath"
	"testing"

	"locusmith/emit"
)

// BenchmarkRenderC renders the 3-axis quadrotor example to C (header and
// source), design excluded, with the templates parsed once (target: 1 ms).
func BenchmarkRenderC(b *testing.B) {
	a := design(b, "../examples/quadrotor.toml", "")
	g, err := emit.NewCodeGenerator()
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := g.Generate(a, emit.CodeOptions{Lang: emit.LangC}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRenderCParse is BenchmarkRenderC with the template parsing
// included, as one GenerateCode call does it.
func BenchmarkRenderCParse(b *testing.B) {
	a := design(b, "../examples/quadrotor.toml", "")
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkRenderGo renders the quadrotor to Go, go/format included.
func BenchmarkRenderGo(b *testing.B) {
	a := design(b, "../examples/quadrotor.toml", "")
	g, err := emit.NewCodeGenerator()
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := g.Generate(a, emit.CodeOptions{Lang: emit.LangGo}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEmitProcess runs `locusmith emit` on every example as a whole
// process: start-up, loading, design, rendering and the comparison with
// the files already there (target: 100 ms).
func BenchmarkEmitProcess(b *testing.B) {
	bin := buildCLI(b, "")
	out := b.TempDir()
	args := []string{"emit", "-o", out, "--allow-unmet"}
	for _, p := range examplePaths(b) {
		abs, err := filepath.Abs(p)
		if err != nil {
			b.Fatal(err)
		}
		args = append(args, abs)
	}
	wd, err := os.Getwd()
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		text, code, err := runCLI(wd, "", bin, args...)
		if err != nil || code != 0 {
			b.Fatalf("exit %d, %v\n%s", code, err, text)
		}
	}
}
