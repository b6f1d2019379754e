package emit

import (
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// TestUnifiedDiffAppliesWithPatch checks the diff format and content
// against GNU patch (an outside implementation of the unified format):
// for random edits of a text, patch applied to the old text with our diff
// must give the new text exactly. Skips when patch is not installed.
func TestUnifiedDiffAppliesWithPatch(t *testing.T) {
	patch, err := exec.LookPath("patch")
	if err != nil {
		t.Skip("patch not installed (GNU patch checks the diff format); CI installs it with the base system")
	}
	r := rand.New(rand.NewPCG(7, 11))
	dir := t.TempDir()
	for trial := 0; trial < 60; trial++ {
		n := 1 + r.IntN(80)
		var a []string
		for i := 0; i < n; i++ {
			a = append(a, "line "+strings.Repeat("x", r.IntN(3))+string(rune('a'+r.IntN(26))))
		}
		b := append([]string(nil), a...)
		for e := r.IntN(6); e >= 0; e-- {
			switch k := r.IntN(3); {
			case k == 0 && len(b) > 0:
				i := r.IntN(len(b))
				b = append(b[:i], b[i+1:]...)
			case k == 1:
				i := r.IntN(len(b) + 1)
				b = append(b[:i], append([]string{"new " + string(rune('A'+r.IntN(26)))}, b[i:]...)...)
			case len(b) > 0:
				b[r.IntN(len(b))] = "changed"
			}
		}
		at, bt := strings.Join(a, "\n")+"\n", strings.Join(b, "\n")
		if len(b) > 0 {
			bt += "\n"
		}
		d := unifiedDiff("a/f", "b/f", at, bt, 3, 1<<30)
		if at == bt {
			if d != "" {
				t.Fatalf("equal texts gave a diff:\n%s", d)
			}
			continue
		}
		f := filepath.Join(dir, "f")
		if err := os.WriteFile(f, []byte(at), 0o644); err != nil {
			t.Fatal(err)
		}
		cmd := exec.Command(patch, "-s", "-p1", "--no-backup-if-mismatch", "-F0")
		cmd.Dir = dir
		cmd.Stdin = strings.NewReader(d)
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("trial %d: patch rejected the diff: %v\n%s\ndiff:\n%s", trial, err, out, d)
		}
		got, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		if string(got) != bt {
			t.Fatalf("trial %d: patched text differs\nold:\n%s\nnew:\n%s\ndiff:\n%s\ngot:\n%s", trial, at, bt, d, got)
		}
	}
}

func TestUnifiedDiffShort(t *testing.T) {
	var a, b strings.Builder
	for i := 0; i < 500; i++ {
		a.WriteString("same\n")
		b.WriteString("other\n")
	}
	d := unifiedDiff("a", "b", a.String(), b.String(), 3, 20)
	if n := strings.Count(d, "\n"); n > 23 {
		t.Errorf("diff has %d lines, want the headers, 20 lines and the note", n)
	}
	if !strings.Contains(d, "more diff lines") {
		t.Errorf("a cut diff must say so:\n%s", d)
	}
}
