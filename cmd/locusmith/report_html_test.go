package main

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// TestReportHTML checks report --html: beside the Markdown and the plots
// it writes <airframe>.html, a page that needs nothing else (no src or
// href attribute, no script, no url() or @import in the style sheet),
// carries every plot of the report inline, and is the same bytes on a
// second run into another directory.
func TestReportHTML(t *testing.T) {
	ex := filepath.Join("..", "..", "examples", "rover.toml")
	var pages [2][]byte
	for i := range pages {
		dir := t.TempDir()
		code, out, errs := runCLI(t, "report", "--html", "-o", dir, ex)
		if code != exitOK {
			t.Fatalf("report --html: exit %d\n%s", code, errs)
		}
		if !strings.Contains(errs, "burrow.md and burrow.html") || out != "" {
			t.Errorf("stderr %q does not name the page, or stdout %q is not empty", errs, out)
		}
		b, err := os.ReadFile(filepath.Join(dir, "burrow.html"))
		if err != nil {
			t.Fatalf("no page written: %v", err)
		}
		pages[i] = b
		svgs, _ := filepath.Glob(filepath.Join(dir, "*.svg"))
		if len(svgs) == 0 {
			t.Fatal("no plots written beside the page")
		}
		if n := strings.Count(string(b), "<svg"); n != len(svgs) {
			t.Errorf("page inlines %d plots, the report has %d", n, len(svgs))
		}
		ents, _ := os.ReadDir(dir)
		for _, e := range ents {
			if strings.HasPrefix(e.Name(), ".") {
				t.Errorf("temporary file left: %s", e.Name())
			}
		}
	}
	external := regexp.MustCompile(`(?i)\b(src|href)\s*=|<script|<link|<iframe|<object|<embed|url\(|@import`)
	if m := external.Find(pages[0]); m != nil {
		t.Errorf("page is not self-contained: it has %q", m)
	}
	if !bytes.Equal(pages[0], pages[1]) {
		t.Error("two runs wrote different pages")
	}
	// Without the flag no page is written.
	dir := t.TempDir()
	if code, _, errs := runCLI(t, "report", "-o", dir, ex); code != exitOK {
		t.Fatalf("report: exit %d\n%s", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, "burrow.html")); err == nil {
		t.Error("report without --html wrote a page")
	}
}
