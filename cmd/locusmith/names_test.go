package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"locusmith/airframe"
)

// design and emit agree on every reserved word (airframe.ReservedWords:
// the C99/C11 keywords, the C23 words, the <stdint.h> and <stddef.h> type
// names, the Go keywords and predeclared identifiers): as an airframe name
// and as an axis name, both verbs refuse it with exit 2, name it, and emit
// writes nothing. Words that cannot match the name pattern (the C
// _Keywords) are refused by the pattern; they are run too.
func TestReservedNamesBothVerbs(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "gen")
	n := 0
	for _, r := range airframe.ReservedWords() {
		for _, as := range []string{"airframe", "axis"} {
			src := edit(t, `airframe = "testcraft"`, `airframe = "`+r.Word+`"`)
			if as == "axis" {
				src = strings.ReplaceAll(valid, "axes.roll.", "axes."+r.Word+".")
			}
			p := filepath.Join(dir, as+"_"+r.Word+".toml")
			if err := os.WriteFile(p, []byte(src), 0o644); err != nil {
				t.Fatal(err)
			}
			for _, verb := range [][]string{{"design"}, {"emit", "-o", out}} {
				code, _, stderr := runCLI(t, append(verb, p)...)
				if code != exitUsage || !strings.Contains(stderr, r.Word) {
					t.Errorf("%s %s %q: exit %d, want %d naming the word; stderr:\n%s", verb[0], as, r.Word, code, exitUsage, stderr)
				}
			}
			n++
		}
	}
	if n < 2*100 {
		t.Errorf("only %d cases: the table of reserved words is short", n)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("emit wrote %s for a reserved name (stat: %v)", out, err)
	}
}
