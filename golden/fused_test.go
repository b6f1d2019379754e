package golden

import (
	"os"
	"os/exec"
	"regexp"
	"strings"
	"testing"
)

// unfusedPackages compute every figure of a design, the generated
// coefficients and the test vectors: none of their arithmetic may be
// fused into a multiply-add, which rounds once where amd64 rounds twice.
var unfusedPackages = []string{"internal/lti", "airframe", "synth", "discrete", "emit"}

// explicitFMA names the functions that fuse on purpose, with math.FMA:
// Exp reproduces the FMA instructions of math.Exp's amd64 assembly.
var explicitFMA = map[string]bool{"locusmith/internal/lti.Exp": true}

// goFusedInsn matches a fused multiply-add in the Go compiler's arm64
// assembly listing (FMADDD, FMSUBD, FNMADDD, FNMSUBD and the single-
// precision forms), and goFuncStart a function's first line.
var (
	goFusedInsn = regexp.MustCompile(`\tFN?M(ADD|SUB)[DS]\t`)
	goFuncStart = regexp.MustCompile(`^(\S+) STEXT`)
)

// TestNoFusedMultiplyAdd compiles the numeric packages for arm64 with
// the compiler's assembly listing (-gcflags=-S) and requires that no
// function fuses a multiply-add but those of explicitFMA: the Go
// specification lets the compiler fuse x*y + z ("Floating-point
// operators"; float64(x*y) forbids it), arm64 does, amd64 does not, and
// a fused sum would make the designs differ between the two in their
// last bits (TestCrossArch in cmd/locusmith compares them under
// qemu-aarch64; this test needs no emulator and names the line). Inlined
// code is listed in the function that inlines it, so a helper whose
// product a caller adds is caught in the caller. The explicit fusions of
// lti.Exp must be seen, or the parse would miss every other.
func TestNoFusedMultiplyAdd(t *testing.T) {
	t.Parallel()
	args := []string{"build", "-gcflags=-S"}
	for _, p := range unfusedPackages {
		args = append(args, module+"/"+p)
	}
	cmd := exec.Command(goTool(t), args...)
	cmd.Dir = ".."
	cmd.Env = append(os.Environ(), "GOARCH=arm64", "CGO_ENABLED=0")
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("go %s: %v\n%.2000s", strings.Join(args, " "), err, out)
	}
	fn, explicit := "", 0
	for _, line := range strings.Split(string(out), "\n") {
		if m := goFuncStart.FindStringSubmatch(line); m != nil {
			fn = m[1]
			continue
		}
		if !goFusedInsn.MatchString(line) {
			continue
		}
		if explicitFMA[fn] {
			explicit++
			continue
		}
		t.Errorf("%s fuses a multiply-add: %s", fn, strings.TrimSpace(line))
	}
	if explicit == 0 {
		t.Error("no fused multiply-add found in lti.Exp, which has four: the listing's parse is broken")
	}
}
