package review

import (
	"strings"
	"testing"
)

// TestUnsafeNamesQuoted: a file name with a terminal escape or a
// bidirectional override reaches neither compare's text nor the report's
// page raw; it is printed quoted with Go escapes (airframe.SafeText).
func TestUnsafeNamesQuoted(t *testing.T) {
	base := compareBase(t)
	bad := "old\x1b[31m\u202etxt.toml"
	c, err := Compare(bad, sharedText(t, bad, base), "new.toml", sharedText(t, "new.toml", base), 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	out := textOf(t, c)
	if strings.ContainsAny(out, "\x1b\u202e") {
		t.Errorf("compare text carries the raw name:\n%q", out)
	}
	if !strings.Contains(out, `\x1b[31m\u202etxt.toml"`) {
		t.Errorf("compare text does not quote the name:\n%s", out)
	}
	page, _ := model(sharedText(t, bad, base))
	if strings.ContainsAny(page.File, "\x1b\u202e") || !strings.Contains(page.File, `\u202e`) {
		t.Errorf("report page's file: %q", page.File)
	}
}
