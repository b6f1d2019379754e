package review

import (
	"bytes"
	"encoding/xml"
	"errors"
	"flag"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/golden")

func design(t testing.TB, path string) *discrete.Airframe {
	t.Helper()
	f, err := loadAirframe(path)
	if err != nil {
		t.Fatal(err)
	}
	return discrete.DesignAirframe(f)
}

// airframes are every airframe the structural checks run on: the demo
// files of the repository and the golden file's own.
func airframes(t *testing.T) []string {
	t.Helper()
	var paths []string
	for _, pat := range []string{"testdata/*.toml", "../../examples/*.toml", "../../airframe/testdata/valid_*.toml"} {
		m, err := filepath.Glob(pat)
		if err != nil {
			t.Fatal(err)
		}
		paths = append(paths, m...)
	}
	return paths
}

// TestGolden compares the report of testdata/review_demo.toml, Markdown
// and every SVG, with the files under testdata/golden (rewrite them with
// go test -update). The output must be a pure function of the input: it
// is built twice and the two must be identical byte for byte.
func TestGolden(t *testing.T) {
	_, files := sharedBuild(t, "testdata/review_demo.toml")
	again, err := Build(design(t, "testdata/review_demo.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if len(again) != len(files) {
		t.Fatalf("second build: %d files, first %d", len(again), len(files))
	}
	for i := range files {
		if files[i].Name != again[i].Name || !bytes.Equal(files[i].Data, again[i].Data) {
			t.Errorf("%s: not deterministic between two builds", files[i].Name)
		}
	}
	dir := filepath.Join("testdata", "golden")
	if *update {
		if err := os.RemoveAll(dir); err != nil {
			t.Fatal(err)
		}
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		for _, f := range files {
			if err := os.WriteFile(filepath.Join(dir, f.Name), f.Data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		return
	}
	want, err := filepath.Glob(filepath.Join(dir, "*"))
	if err != nil {
		t.Fatal(err)
	}
	if len(want) != len(files) {
		t.Errorf("%d files built, %d golden files (run go test -update after checking the change)", len(files), len(want))
	}
	for _, f := range files {
		g, err := os.ReadFile(filepath.Join(dir, f.Name))
		if err != nil {
			t.Errorf("%s: %v (run go test -update after checking the change)", f.Name, err)
			continue
		}
		if !bytes.Equal(g, f.Data) {
			t.Errorf("%s differs from the golden file (run go test -update after checking the change)\n%s", f.Name, firstDiff(g, f.Data))
		}
	}
}

func firstDiff(a, b []byte) string {
	la, lb := strings.Split(string(a), "\n"), strings.Split(string(b), "\n")
	for i := 0; i < len(la) && i < len(lb); i++ {
		if la[i] != lb[i] {
			return "line " + strconv.Itoa(i+1) + ":\n  golden: " + clip(la[i]) + "\n  got:    " + clip(lb[i])
		}
	}
	return "lengths differ"
}

func clip(s string) string {
	if len(s) > 200 {
		return s[:200] + "…"
	}
	return s
}

// svgDoc is what the structural checks read from an SVG: its root and
// every text element.
type svgDoc struct {
	root  string
	texts []string
	paths int
}

// parseSVG parses an SVG with encoding/xml, token by token: it fails on
// any malformed markup.
func parseSVG(data []byte) (svgDoc, error) {
	var doc svgDoc
	dec := xml.NewDecoder(bytes.NewReader(data))
	inText := false
	var cur strings.Builder
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return doc, err
		}
		switch el := tok.(type) {
		case xml.StartElement:
			if doc.root == "" {
				doc.root = el.Name.Local
			}
			switch el.Name.Local {
			case "text":
				inText = true
				cur.Reset()
			case "path":
				doc.paths++
			}
		case xml.CharData:
			if inText {
				cur.Write(el)
			}
		case xml.EndElement:
			if el.Name.Local == "text" {
				inText = false
				doc.texts = append(doc.texts, cur.String())
			}
		}
	}
	return doc, nil
}

// expectedSeries are legend entries (regular expressions) each kind of
// plot must hold: the series the issue asks for. The legend is drawn by
// the figure itself, one text element per entry, so an entry present
// means its series was added with it.
var expectedSeries = map[string][]string{
	"locus":       {`^root locus, k = 0 … 10 × design gain$`, `^open-loop pole$`, `^designed closed-loop poles \(k = 1\)$`, `^textbook target s\* = `, `^second-order guide: ζ ≥ [0-9.]+, σ ≥ [0-9.]+ rad/s$`},
	"locus-wide":  {`^root locus, k = 0`, `^open-loop pole$`, `^designed closed-loop poles \(k = 1\)`, `^textbook target s\* = `, `^second-order guide: `},
	"step":        {`^continuous \(full order\)$`, `^discrete at [0-9.]+ Hz, every (sample|.* sample) marked$`, `^overshoot limit [0-9.]+ %$`, `^settling band ±[0-9.]+ % after [0-9.]+ (µs|ms|s)$`},
	"saturated":   {`^(with anti-windup \(|(p|pd|lead) \(no integrator to wind up\)|(pi|pid), anti-windup [a-z]+ \(not engaged\))`, `^output limits \[`, `^overshoot limit `, `^settling band `},
	"bode":        {`^continuous, exact delay: PM `, `^discrete at [0-9.]+ Hz with compute delay: PM `, `^gain crossover ωc `, `^bars: phase margin at the crossover`, `^Nyquist frequency π/T = [0-9.]+ rad/s \([0-9.]+ Hz\)$`},
	"envelope":    {`^range over the [0-9]+ plants verified$`, `^nominal plant$`, `^overshoot limit [0-9.]+ %$`, `^settling band ±[0-9.]+ % after [0-9.]+ (µs|ms|s)$`},
	"disturbance": {`^nominal plant$`, `^recovery band ±2 % of the nominal peak [0-9.e−]+ rad/s$`},
	"sensitivity": {`^\|S\| = \|1/\(1 \+ L\)\|, peak Ms = [0-9.]+ at `, `^\|T\| = \|L/\(1 \+ L\)\|, peak Mt = [0-9.]+ at `, `^bound Ms ≤ [0-9.]+ \(`,
		`^\|C·S\|, measurement noise → command$`, `^\|C\|, the controller alone: noise gain `, `^Nyquist frequency π/T = `},
	"filters": {`^discrete chain F\(e\^\(jωT\)\) at [0-9.]+ Hz, as the code runs it$`, `^continuous counterparts F\(jω\)$`, `^1: (notch|lowpass) [0-9.]+ Hz.*, at [0-9.]+ rad/s \([0-9.]+ Hz\)$`,
		`^gain crossover ωc = [0-9.]+ rad/s \([0-9.]+ Hz\) of the sampled loop: \|F\| = −?[0-9.e−]+ dB, ∠F = −?[0-9.e−]+°$`, `^Nyquist frequency π/T = `},
	// An axis with a filter chain: the noise curves are |C·F·S| and |C·F|.
	"sensitivity-chain": {`^\|S\| = \|1/\(1 \+ L\)\|, peak Ms = [0-9.]+ at `, `^\|T\| = \|L/\(1 \+ L\)\|, peak Mt = [0-9.]+ at `, `^bound Ms ≤ [0-9.]+ \(`,
		`^\|C·F·S\|, measurement noise → command$`, `^\|C·F\|, the controller behind the filter chain: noise gain `, `^Nyquist frequency π/T = `},
	"zplane": {`^designed closed-loop pole$`, `^closed-loop zero \(setpoint → rate\)$`, `^textbook target e\^\(s\*T\) = `, `^unit circle$`, `^second-order guide mapped by z = e\^\(sT\)$`},
}

// TestSVGStructure builds the report of every demo airframe and checks
// that every SVG parses as XML, is an svg document with no script, and
// holds the expected series; that the Markdown links exactly the SVGs
// built; and that the plots of a delay carry the Padé caption.
func TestSVGStructure(t *testing.T) {
	linkRE := regexp.MustCompile(`!\[[^\]]*\]\(([^)]+)\)`)
	for _, path := range airframes(t) {
		a, files := sharedBuild(t, path)
		md := string(files[0].Data)
		if files[0].Name != a.File.Airframe+".md" {
			t.Fatalf("%s: first file %s", path, files[0].Name)
		}
		links := map[string]bool{}
		for _, m := range linkRE.FindAllStringSubmatch(md, -1) {
			links[m[1]] = true
		}
		for _, f := range files[1:] {
			if !links[f.Name] {
				t.Errorf("%s: %s is not linked from the report", path, f.Name)
			}
			delete(links, f.Name)
			doc, err := parseSVG(f.Data)
			if err != nil {
				t.Errorf("%s: %s does not parse as XML: %v", path, f.Name, err)
				continue
			}
			if doc.root != "svg" || bytes.Contains(f.Data, []byte("<script")) {
				t.Errorf("%s: %s: root %q", path, f.Name, doc.root)
			}
			kind := kindOf(a.File.Airframe, f.Name)
			pats, ok := expectedSeries[kind]
			if x := axisOf(a, a.File.Airframe, f.Name); kind == "sensitivity" && x != nil && x.Design != nil && len(x.Design.Problem.Filters) > 0 {
				pats = expectedSeries["sensitivity-chain"]
			}
			if !ok {
				t.Errorf("%s: unexpected plot %s", path, f.Name)
				continue
			}
			for _, p := range pats {
				re := regexp.MustCompile(p)
				found := false
				for _, s := range doc.texts {
					if re.MatchString(s) {
						found = true
						break
					}
				}
				if !found {
					t.Errorf("%s: %s has no legend entry matching %q; texts: %q", path, f.Name, p, doc.texts)
				}
			}
			if strings.HasPrefix(kind, "locus") {
				ax := axisOf(a, a.File.Airframe, f.Name)
				if ax != nil && ax.Design.Problem.Plant.Delay > 0 && !containsText(doc.texts, "Padé approximant") {
					t.Errorf("%s: %s: the locus of a loop with delay does not say it uses the Padé approximant", path, f.Name)
				}
			}
		}
		for l := range links {
			t.Errorf("%s: the report links %s, which was not built", path, l)
		}
		for _, c := range []string{"propellers off", "tethered", "model-based", "aviation rules", "qualified"} {
			if !strings.Contains(md, c) {
				t.Errorf("%s: the report lacks the safety caution %q", path, c)
			}
		}
	}
}

func kindOf(airframe, name string) string {
	rest := strings.TrimSuffix(strings.TrimPrefix(name, airframe+"-"), ".svg")
	_, kind, _ := strings.Cut(rest, "-")
	return kind
}

func axisOf(a *discrete.Airframe, airframe, name string) *discrete.Outcome {
	rest := strings.TrimPrefix(name, airframe+"-")
	for i, x := range a.Axes {
		if strings.HasPrefix(rest, x.Name+"-") {
			return &a.Axes[i]
		}
	}
	return nil
}

func containsText(texts []string, s string) bool {
	for _, t := range texts {
		if strings.Contains(t, s) {
			return true
		}
	}
	return false
}

// TestRenderPNG renders every golden SVG to PNG with rsvg-convert
// (Debian's librsvg2-bin), the way a reviewer's viewer would, and checks
// that each renders to a PNG of the SVG's size. Set REVIEW_PNG_DIR to keep
// the PNGs for looking at them.
func TestRenderPNG(t *testing.T) {
	if testing.Short() {
		t.Skip("renders with rsvg-convert; skipped with -short (CI runs it)")
	}
	bin, err := exec.LookPath("rsvg-convert")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("rsvg-convert is required under CI (Debian librsvg2-bin)")
		}
		t.Skip("rsvg-convert not found; install Debian's librsvg2-bin to render the plots")
	}
	out := os.Getenv("REVIEW_PNG_DIR")
	if out == "" {
		out = t.TempDir()
	} else if err := os.MkdirAll(out, 0o755); err != nil {
		t.Fatal(err)
	}
	svgs, err := filepath.Glob(filepath.Join("testdata", "golden", "*.svg"))
	if err != nil || len(svgs) == 0 {
		t.Fatalf("no golden SVGs (%v)", err)
	}
	for _, s := range svgs {
		png := filepath.Join(out, strings.TrimSuffix(filepath.Base(s), ".svg")+".png")
		cmd := exec.Command(bin, "-d", "110", "-p", "110", "-b", "white", "-o", png, s)
		if msg, err := cmd.CombinedOutput(); err != nil {
			t.Errorf("%s: rsvg-convert: %v\n%s", s, err, msg)
			continue
		}
		data, err := os.ReadFile(png)
		if err != nil || !bytes.HasPrefix(data, []byte("\x89PNG\r\n\x1a\n")) || len(data) < 5000 {
			t.Errorf("%s: no usable PNG (%d bytes, %v)", s, len(data), err)
		}
	}
}

// TestMarkdownEscapes: free text from the airframe file cannot change the
// report's structure (CommonMark's special characters are escaped).
func TestMarkdownEscapes(t *testing.T) {
	for in, want := range map[string]string{
		"plain text, 1.5 kg":    "plain text, 1.5 kg",
		"a | b":                 `a \| b`,
		"*bold* _it_ `code`":    "\\*bold\\* \\_it\\_ \\`code\\`",
		"<script>x</script>":    `\<script\>x\</script\>`,
		"[link](http://x) ![i]": `\[link\](http://x) \!\[i\]`,
		"# heading\nnext line":  `\# heading next line`,
		"tab\there\x00\x07":     "tab here",
	} {
		if got := mdText(in); got != want {
			t.Errorf("mdText(%q) = %q, want %q", in, got, want)
		}
	}
	if got := mdCode("a`b|c"); got != "``a`b\\|c``" {
		t.Errorf("mdCode = %q", got)
	}
	_, files := sharedBuild(t, "testdata/review_demo.toml")
	md := string(files[0].Data)
	if !strings.Contains(md, `\| \*escaped\* \<text\>`) {
		t.Errorf("the description is not escaped in the report")
	}
}

// BenchmarkBuild is the report of the three-axis demo quadrotor, design
// included, in-process (the whole-process figure is in cmd/locusmith).
func BenchmarkBuild(b *testing.B) {
	f, err := loadAirframe("../../examples/quadrotor.toml")
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if _, err := Build(discrete.DesignAirframe(f)); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkBuildOnly is the report of an already designed airframe: the
// cost of the plots and the Markdown alone.
func BenchmarkBuildOnly(b *testing.B) {
	a := design(b, "../../examples/quadrotor.toml")
	for b.Loop() {
		if _, err := Build(a); err != nil {
			b.Fatal(err)
		}
	}
}

// An axis that cannot be designed gets its error in the report and no
// plots; the other axes are reported as usual.
func TestBuildWithFailedAxis(t *testing.T) {
	text := strings.Replace(compareBase(t), `form = "pid"`, "form = \"pi\"\nrefine = false", 1)
	text = strings.Replace(text, "settling_time = 0.15", "settling_time = 0.05", 1)
	f, err := airframe.Parse("failing.toml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	a := discrete.DesignAirframe(f)
	if a.Axes[0].Err == nil {
		t.Fatal("the axis designed; the test needs one that cannot")
	}
	files, err := Build(a)
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 1 {
		t.Errorf("%d files, want the Markdown only", len(files))
	}
	md := string(files[0].Data)
	if !strings.Contains(md, "**The design failed:**") || !strings.Contains(md, "not designed") {
		t.Errorf("the failure is not in the report:\n%s", md)
	}
}

// Degenerate designs (an unstable loop: no step record, margins
// undefined, no saturating step, unstable plants of the envelope, no
// sensitivity figures) still give a report, never a panic.
func TestBuildDegenerate(t *testing.T) {
	a := design(t, "testdata/review_demo.toml")
	for _, x := range a.Axes {
		d := x.Design
		if d == nil {
			continue // an axis that did not design: reported as such
		}
		for i := range d.Envelope {
			f := &d.Envelope[i]
			f.Stable, f.Y, f.YD = false, nil, nil
			f.Ms, f.Mt, f.Margins.PhaseDeg = math.NaN(), math.NaN(), math.NaN()
			f.Disturbance.Peak, f.Disturbance.Recovery = math.Inf(1), math.Inf(1)
		}
		d.Verif.Y, d.Verif.U, d.Cont.Verif.Y = nil, nil, nil
		d.Verif.Stable, d.Cont.Verif.Stable = false, false
		d.Verif.Margins.PhaseDeg, d.Verif.Margins.Crossover = math.NaN(), math.NaN()
		d.Cont.Verif.Margins.Crossover = math.Inf(1)
		d.Verif.Saturated = discrete.Saturated{}
		d.Num = nil
	}
	files, err := Build(a)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range files[1:] {
		if _, err := parseSVG(f.Data); err != nil {
			t.Errorf("%s: %v", f.Name, err)
		}
	}
	md := string(files[0].Data)
	for _, bad := range []string{"NaN", "Inf", "%!"} {
		if strings.Contains(md, bad) {
			t.Errorf("the report contains %q", bad)
		}
	}
}

// The review of a design whose traces were dropped (a batch without
// KeepTraces) says why the envelope's plots are missing rather than
// drawing empty ones.
func TestBuildWithoutTraces(t *testing.T) {
	a := design(t, "../../examples/quadrotor.toml")
	for _, x := range a.Axes {
		x.Design.DropTraces()
	}
	files, err := Build(a)
	if err != nil {
		t.Fatal(err)
	}
	md := string(files[0].Data)
	for _, f := range files[1:] {
		if k := kindOf(a.File.Airframe, f.Name); k == "envelope" || k == "disturbance" {
			t.Errorf("%s drawn without traces", f.Name)
		}
	}
	if !strings.Contains(md, "not drawn (no plant of the envelope has a stable recorded response)") {
		t.Errorf("the report does not say why the envelope plot is missing")
	}
}

// The review page holds the robustness evidence: the spec's new bounds,
// the nominal figures, the checks with their worst plants, and a row per
// plant of the envelope.
func TestMarkdownEnvelope(t *testing.T) {
	a, files := sharedBuild(t, "../../examples/quadrotor.toml")
	md := string(files[0].Data)
	for _, want := range []string{
		"| sensitivity peak Ms | ≤ 1.7 | max \\|1/(1 + L)\\|: gain margin ≥ 2.43, phase margin ≥ 34.21° |",
		"| plant envelope | gain ×[0.9, 1.1], lag ×[1, 1], delay +[0, 0] s |",
		"| check | worst value | limit | result | worst at |",
		"### Plant envelope",
		"| complementary sensitivity peak Mt | – | – | ",
	} {
		if !strings.Contains(md, want) {
			t.Errorf("the report lacks %q", want)
		}
	}
	// Ms ≤ 1.7 guarantees GM ≥ 1.7/0.7 = 2.43 and PM ≥ 2·asin(1/3.4) =
	// 34.2° (README, max_sensitivity; Åström & Murray, Feedback Systems,
	// from memory): the row above checks the page's arithmetic.
	for _, x := range a.Axes {
		d := x.Design
		sec := md[strings.Index(md, "## Axis "+x.Name):]
		if i := strings.Index(sec[1:], "\n## "); i > 0 {
			sec = sec[:i]
		}
		rows := regexp.MustCompile(`(?m)^\| (nominal|corner|between) \| ×`).FindAllString(sec, -1)
		if len(rows) != len(d.Envelope) || !strings.HasPrefix(rows[0], "| nominal") {
			t.Errorf("axis %s: %d plant rows (first %q), want %d, the nominal first", x.Name, len(rows), rows, len(d.Envelope))
		}
		for _, c := range d.Checks {
			if c.Name != "settling_time" {
				continue
			}
			st := "ok"
			if !c.OK {
				st = "**FAIL**"
			}
			row := "| settling time | " + sec4(c.Value) + " | ≤ " + sec4(c.Limit) + " | " + st + " | " + mdCorner(c.Worst) + " |"
			if !strings.Contains(sec, row) {
				t.Errorf("axis %s: no check row %q", x.Name, row)
			}
		}
	}
}

func sec4(x float64) string { return g(x, 4) + " s" }

// loadAirframe reads and parses the airframe file at path.
func loadAirframe(path string) (*airframe.File, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return airframe.Parse(path, data)
}
