package review

import (
	"context"
	"encoding/json"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// The converter on each construct the report template writes; the
// expected HTML follows CommonMark and its table extension (GFM) for these
// inputs (the specifications' examples, from memory).
func TestHTMLConverter(t *testing.T) {
	for _, tc := range []struct{ md, want string }{
		{"# Design review: x", "<h1>Design review: x</h1>\n"},
		{"### Axis a\\_b", "<h3>Axis a_b</h3>\n"},
		{"one\ntwo", "<p>one\ntwo</p>\n"},
		{"> quoted *desc*", "<blockquote>\n<p>quoted <em>desc</em></p>\n</blockquote>\n"},
		{"**Result: met.**", "<p><strong>Result: met.</strong></p>\n"},
		{"s\\* = −1 and a \\| b and 1 < 2 & 3", "<p>s* = −1 and a | b and 1 &lt; 2 &amp; 3</p>\n"},
		{"- one\n- two\n  continued", "<ul>\n<li>one</li>\n<li>two\ncontinued</li>\n</ul>\n"},
		{"`G(s) = 1/(s + 1)`", "<p><code>G(s) = 1/(s + 1)</code></p>\n"},
		{"`` a`b ``", "<p><code>a`b</code></p>\n"},
		{"| a | b |\n|---|---|\n| `x \\| y` | **FAIL** |", "<table>\n<tr><th>a</th><th>b</th></tr>\n<tr><td><code>x | y</code></td><td><strong>FAIL</strong></td></tr>\n</table>\n"},
		{"| a |\n|---|\n| \\|z\\| < 1 |", "<table>\n<tr><th>a</th></tr>\n<tr><td>|z| &lt; 1</td></tr>\n</table>\n"},
		{"a * b", "<p>a * b</p>\n"},
		{"<b>not a tag</b>", "<p>&lt;b&gt;not a tag&lt;/b&gt;</p>\n"},
		{"---", "<hr>\n"},
	} {
		c := &mdConv{svgs: map[string][]byte{}, used: map[string]bool{}}
		if got := c.blocks(strings.Split(tc.md, "\n")); got != tc.want {
			t.Errorf("%q:\n got %q\nwant %q", tc.md, got, tc.want)
		}
	}
	// An image alone on its line becomes the inlined SVG.
	c := &mdConv{svgs: map[string][]byte{"p.svg": []byte("<?xml version=\"1.0\"?>\n<!-- x -->\n<svg width=\"1\"></svg>\n")}, used: map[string]bool{}}
	got := c.blocks([]string{"![Step \\| response](p.svg)"})
	want := "<figure data-plot=\"p.svg\">\n<svg role=\"img\" aria-label=\"Step | response\" width=\"1\"></svg>\n</figure>\n"
	if got != want || !c.used["p.svg"] {
		t.Errorf("figure:\n got %q\nwant %q", got, want)
	}
	// A link to a plot the report does not have is an error, and so is a
	// plot the page does not link.
	if _, err := HTML([]File{{Name: "x.md", Data: []byte("![a](missing.svg)\n")}}); err == nil {
		t.Error("a missing plot was accepted")
	}
	if _, err := HTML([]File{{Name: "x.md", Data: []byte("text\n")}, {Name: "x-a-step.svg", Data: []byte("<svg></svg>")}}); err == nil {
		t.Error("an unlinked plot was accepted")
	}
}

// htmlPages builds the HTML page of every demo airframe.
func htmlPages(t *testing.T) map[string]File {
	t.Helper()
	pages := map[string]File{}
	for _, path := range airframes(t) {
		_, files := sharedBuild(t, path)
		page, err := HTML(files)
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		svgs := 0
		for _, f := range files {
			if strings.HasSuffix(f.Name, ".svg") {
				svgs++
			}
		}
		if n := strings.Count(string(page.Data), "<figure "); n != svgs {
			t.Errorf("%s: %d figures inlined, the report has %d plots", path, n, svgs)
		}
		pages[path] = page
	}
	return pages
}

// The page is self-contained and script-free, and no Markdown is left
// over in it.
func TestHTMLSelfContained(t *testing.T) {
	leftover := regexp.MustCompile(`\*\*|\|---|\]\(|\\[*_|\[\]<>#!{}` + "`" + `]|^#+ |<script|<link|<iframe|<object|<embed|\bsrc=|\bhref=|url\(|@import`)
	for path, page := range htmlPages(t) {
		s := string(page.Data)
		for _, line := range strings.Split(s, "\n") {
			if m := leftover.FindString(line); m != "" && !strings.HasPrefix(line, "<svg") && !strings.HasPrefix(line, "\t") && !strings.Contains(line, "xmlns") {
				t.Errorf("%s: %q left in %q", path, m, line)
			}
		}
		if !strings.HasPrefix(s, "<!DOCTYPE html>\n") || !strings.Contains(s, "</html>") {
			t.Errorf("%s: not a whole page", path)
		}
		for _, w := range []string{"propellers off", "tethered"} {
			if !strings.Contains(s, w) {
				t.Errorf("%s: the cautions are missing (%q)", path, w)
			}
		}
	}
}

// chromium finds Debian's Chromium, which .ci/run installs.
func chromium(t *testing.T) string {
	t.Helper()
	for _, name := range []string{"chromium", "chromium-browser"} {
		if p, err := exec.LookPath(name); err == nil {
			return p
		}
	}
	const msg = "chromium not found: install Debian's chromium (.ci/run does) to render the HTML report in a browser"
	if os.Getenv("CI") == "true" {
		t.Fatal(msg)
	}
	t.Skip(msg)
	return ""
}

// runChromium runs headless Chromium with a profile of its own and
// returns its standard output.
func runChromium(t *testing.T, bin string, args ...string) []byte {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	profile := t.TempDir()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--no-first-run",
		"--disable-extensions", "--disable-background-networking", "--hide-scrollbars", "--user-data-dir=" + profile}
	cmd := exec.CommandContext(ctx, bin, append(base, args...)...)
	cmd.Env = append(os.Environ(), "HOME="+profile)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, stderr.String())
	}
	return out
}

// probeScript is added to a copy of the page (the page itself has no
// script): after loading, it measures every inlined figure as the browser
// laid it out and drew it, and writes the result into the DOM, which
// --dump-dom prints.
const probeScript = `<script>
window.addEventListener("load", function () {
  var out = [];
  document.querySelectorAll("figure").forEach(function (f) {
    var svg = f.querySelector("svg");
    var r = svg ? svg.getBoundingClientRect() : {width: 0, height: 0};
    var drawn = 0;
    if (svg) {
      svg.querySelectorAll("path, text, circle, line, polyline, rect").forEach(function (e) {
        var b = e.getBBox();
        if (b.width > 0 || b.height > 0) { drawn++; }
      });
    }
    out.push({plot: f.getAttribute("data-plot"), width: r.width, height: r.height, drawn: drawn});
  });
  var pre = document.createElement("pre");
  pre.id = "probe";
  pre.textContent = JSON.stringify({figures: out, tables: document.querySelectorAll("table").length});
  document.body.appendChild(pre);
});
</script>
`

// TestHTMLInBrowser loads the HTML page of the demo quadrotor in headless
// Chromium: every figure must be laid out with a size and drawn (its
// elements have extents), and a screenshot of the page must show ink.
func TestHTMLInBrowser(t *testing.T) {
	if testing.Short() {
		t.Skip("loads the page in a browser; skipped with -short (CI runs it)")
	}
	bin := chromium(t)
	_, files := sharedBuild(t, "../../examples/quadrotor.toml")
	page, err := HTML(files)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	pagePath := filepath.Join(dir, page.Name)
	probePath := filepath.Join(dir, "probe.html")
	if err := os.WriteFile(pagePath, page.Data, 0o644); err != nil {
		t.Fatal(err)
	}
	probe := strings.Replace(string(page.Data), "</body>", probeScript+"</body>", 1)
	if err := os.WriteFile(probePath, []byte(probe), 0o644); err != nil {
		t.Fatal(err)
	}
	dom := runChromium(t, bin, "--virtual-time-budget=10000", "--dump-dom", "file://"+probePath)
	m := regexp.MustCompile(`(?s)<pre id="probe">(.*?)</pre>`).FindSubmatch(dom)
	if m == nil {
		t.Fatalf("the probe did not run; the DOM:\n%.2000s", dom)
	}
	var res struct {
		Figures []struct {
			Plot          string
			Width, Height float64
			Drawn         int
		}
		Tables int
	}
	if err := json.Unmarshal([]byte(strings.NewReplacer("&quot;", `"`, "&amp;", "&").Replace(string(m[1]))), &res); err != nil {
		t.Fatalf("probe output %q: %v", m[1], err)
	}
	svgs := 0
	for _, f := range files {
		if strings.HasSuffix(f.Name, ".svg") {
			svgs++
		}
	}
	if len(res.Figures) != svgs {
		t.Errorf("the browser found %d figures, the report has %d plots", len(res.Figures), svgs)
	}
	for _, f := range res.Figures {
		// A plot is drawn with its frame, axes, ticks, labels and curves:
		// dozens of elements with extents.
		if f.Width < 200 || f.Height < 100 || f.Drawn < 20 {
			t.Errorf("figure %s: %.0f × %.0f px, %d elements drawn", f.Plot, f.Width, f.Height, f.Drawn)
		}
	}
	if res.Tables < 10 {
		t.Errorf("%d tables rendered", res.Tables)
	}
	// The page as a reader sees it: the first screen has ink on it (text
	// and tables, not a blank or an error page).
	shot := filepath.Join(dir, "page.png")
	runChromium(t, bin, "--window-size=1280,2000", "--screenshot="+shot, "file://"+pagePath)
	fh, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	img, err := png.Decode(fh)
	if err != nil {
		t.Fatal(err)
	}
	if frac := inkFraction(img); frac < 0.01 {
		t.Errorf("the screenshot is %.2g %% ink: blank", 100*frac)
	}
	if dst := os.Getenv("LOCUSMITH_SCREENSHOT"); dst != "" {
		data, _ := os.ReadFile(shot)
		if err := os.WriteFile(dst, data, 0o644); err != nil {
			t.Error(err)
		}
	}
}

// inkFraction is the share of pixels darker than light grey.
func inkFraction(img image.Image) float64 {
	b := img.Bounds()
	ink := 0
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			if (r+g+bl)/3 < 0xc000 {
				ink++
			}
		}
	}
	return float64(ink) / float64(b.Dx()*b.Dy())
}
