package review

import (
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"locusmith/airframe"
	"locusmith/discrete"
)

// builtPlot is one plot of an example axis, with the figure it came from
// (its panels keep their final ranges after svg).
type builtPlot struct {
	name string
	kind string
	fig  *figure
	data []byte
	d    *discrete.Design
	num  airframe.NumericType
}

// examplePlots draws every plot of every axis of the example airframes
// (examples/*.toml), as the report does.
func examplePlots(t *testing.T) []builtPlot {
	t.Helper()
	paths, err := filepath.Glob("../../examples/*.toml")
	if err != nil || len(paths) < 3 {
		t.Fatalf("example airframes: %v (%d found)", err, len(paths))
	}
	var out []builtPlot
	for _, path := range paths {
		a := sharedDesign(t, path)
		for _, x := range a.Axes {
			if x.Design == nil {
				continue
			}
			pa, _ := newPlotAxis(x)
			for _, mk := range plotMakers() {
				if (mk.kind == "locus" || mk.kind == "locus-wide") && pa.locus == nil || mk.kind == "zplane" && pa.zmap == nil {
					t.Errorf("%s %s: no %s", path, x.Name, mk.kind)
					continue
				}
				f, err := mk.make(pa)
				if err != nil {
					t.Errorf("%s %s %s: %v", path, x.Name, mk.kind, err)
					continue
				}
				if f == nil {
					continue
				}
				data, err := f.svg()
				if err != nil {
					t.Errorf("%s %s %s: %v", path, x.Name, mk.kind, err)
					continue
				}
				out = append(out, builtPlot{name: fmt.Sprintf("%s-%s-%s.svg", a.File.Airframe, x.Name, mk.kind), kind: mk.kind, fig: f, data: data, d: x.Design, num: a.File.Numeric.Type})
			}
		}
	}
	return out
}

// svgPath is a path element of a plot: its style and the points of its
// outline, in the SVG's user units with y up (gonum's SVG flips the whole
// drawing once, so the path data is in the figure's own coordinates).
type svgPath struct {
	style string
	pts   []vg.Point
}

var pathNum = regexp.MustCompile(`-?[0-9.]+(e-?[0-9]+)?`)

// svgPaths returns the path elements of an SVG.
func svgPaths(data []byte) ([]svgPath, error) {
	var ps []svgPath
	dec := xml.NewDecoder(bytes.NewReader(data))
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			return ps, nil
		}
		if err != nil {
			return nil, err
		}
		el, ok := tok.(xml.StartElement)
		if !ok || el.Name.Local != "path" {
			continue
		}
		var p svgPath
		var d string
		for _, at := range el.Attr {
			switch at.Name.Local {
			case "style":
				p.style = at.Value
			case "d":
				d = at.Value
			}
		}
		// Arcs (A) carry radii and flags too; their end points are
		// enough here.
		nums := pathNum.FindAllString(d, -1)
		for i := 0; i+1 < len(nums); i += 2 {
			x, _ := strconv.ParseFloat(nums[i], 64)
			y, _ := strconv.ParseFloat(nums[i+1], 64)
			p.pts = append(p.pts, vg.Point{X: vg.Length(x), Y: vg.Length(y)})
		}
		ps = append(ps, p)
	}
}

// timeKinds are the plots over time.
var timeKinds = map[string]bool{"step": true, "envelope": true, "saturated": true, "disturbance": true}

// TestExamplePlots checks the plots of every example airframe against the
// rules a reviewer reads them by:
//   - every SVG parses as XML;
//   - a time axis is in the unit its span calls for (µs, ms or s, so
//     that the span reads as 2 to 2000 of the unit, common practice for
//     tick labels of one to four digits), the same on every panel;
//   - the Bode phase axis has a labelled tick every 45°, spans at most a
//     turn and a half, and shows the critical line and the phase at the
//     crossover, which differ by the phase margin (PM = 180° + ∠L(jωc),
//     the handbook definition); PM and GM are written on the plot;
//   - the frequency plots (the loop's, the sensitivity functions', the
//     filter chain's) carry a Hz axis (ω = 2πf);
//   - the s- and z-plane panels have one scale on both axes, and their
//     shaded region is the second-order guide, not a pass/fail region;
//   - every legend entry's marker or line style is drawn in a panel (no
//     entry for something not drawn);
//   - a float design's plots say nothing of integers or LSBs;
//   - the saturating step reaches an output limit within the rate the
//     loop can hold, or says that it cannot and compares nothing.
func TestExamplePlots(t *testing.T) {
	plots := examplePlots(t)
	if len(plots) < 40 {
		t.Fatalf("only %d plots drawn for the examples", len(plots))
	}
	for _, bp := range plots {
		doc, err := parseSVG(bp.data)
		if err != nil || doc.root != "svg" {
			t.Errorf("%s: not an SVG document: %v", bp.name, err)
			continue
		}
		f := bp.fig
		if timeKinds[bp.kind] {
			checkTimeAxis(t, bp)
		}
		switch bp.kind {
		case "bode":
			checkPhaseAxis(t, bp, doc.texts)
			fallthrough
		case "sensitivity", "filters":
			if !f.hz[0] || !containsText(doc.texts, "Hz") {
				t.Errorf("%s: no Hz axis", bp.name)
			}
		case "locus", "locus-wide", "zplane":
			for i := range f.equal {
				l := f.layout[i]
				sx, sy := (l.w.x1-l.w.x0)/l.dataW, (l.w.y1-l.w.y0)/l.dataH
				if math.Abs(sx-sy) > 1e-6*math.Max(sx, sy) {
					t.Errorf("%s panel %d: %g per point across, %g up: not one scale", bp.name, i, sx, sy)
				}
				p := f.panels[i]
				dx, dy := labelStep(p.X), labelStep(p.Y)
				if !(dx > 0) || math.Abs(dx-dy) > 1e-9*dx {
					t.Errorf("%s panel %d: labels every %g across, every %g up: not one grid", bp.name, i, dx, dy)
				}
			}
			if bp.kind != "zplane" {
				p := f.panels[0]
				if unitOf(p.X.Label.Text) != unitOf(p.Y.Label.Text) {
					t.Errorf("%s: axes in %q and %q: not one unit", bp.name, p.X.Label.Text, p.Y.Label.Text)
				}
			}
			if !containsText(doc.texts, "second-order guide") || !containsText(doc.texts, "designed closed-loop pole") {
				t.Errorf("%s: the guide or the designed poles are not labelled: %q", bp.name, doc.texts)
			}
			if containsText(doc.texts, "spec region") {
				t.Errorf("%s: the guide is called a spec region", bp.name)
			}
		case "saturated":
			checkSaturated(t, bp, doc.texts)
		}
		checkLegendDrawn(t, bp)
		if bp.num == airframe.Float32 || bp.num == airframe.Float64 {
			for _, w := range []string{"integer", "LSB", "fixed point", "fixed-point"} {
				if containsText(doc.texts, w) {
					t.Errorf("%s: a %s design's plot speaks of %q", bp.name, bp.num, w)
				}
			}
		}
	}
}

// labelStep is the spacing of an axis's labelled ticks (NaN when they
// are not evenly spaced).
func labelStep(ax plot.Axis) float64 {
	var vs []float64
	for _, tk := range ax.Tick.Marker.Ticks(ax.Min, ax.Max) {
		if tk.Label != "" {
			vs = append(vs, tk.Value)
		}
	}
	if len(vs) < 2 {
		return math.NaN()
	}
	d := vs[1] - vs[0]
	for i := 2; i < len(vs); i++ {
		if math.Abs(vs[i]-vs[i-1]-d) > 1e-9*d {
			return math.NaN()
		}
	}
	return d
}

// unitOf is the unit in an axis label's parentheses.
func unitOf(label string) string {
	_, u, _ := strings.Cut(label, "(")
	return strings.TrimSuffix(u, ")")
}

func checkTimeAxis(t *testing.T, bp builtPlot) {
	t.Helper()
	unit := ""
	for i, p := range bp.fig.panels {
		if p.X.Label.Text == "" {
			continue
		}
		u := unitOf(p.X.Label.Text)
		if unit != "" && u != unit {
			t.Errorf("%s panel %d: time in %s, another panel in %s", bp.name, i, u, unit)
		}
		unit = u
		span := p.X.Max - p.X.Min
		switch u {
		case "µs", "ms":
			if !(span >= 2 && span < 2000) {
				t.Errorf("%s: a span of %g %s: the wrong unit", bp.name, span, u)
			}
		case "s":
			if !(span >= 2) {
				t.Errorf("%s: a span of %g s: the wrong unit", bp.name, span)
			}
		default:
			t.Errorf("%s: time axis labelled %q", bp.name, p.X.Label.Text)
		}
	}
	if unit == "" {
		t.Errorf("%s: no time axis label", bp.name)
	}
}

func checkPhaseAxis(t *testing.T, bp builtPlot, texts []string) {
	t.Helper()
	p := bp.fig.panels[1]
	lo, hi := p.Y.Min, p.Y.Max
	if hi-lo > 540 || hi-lo < 90 {
		t.Errorf("%s: phase axis %g…%g°", bp.name, lo, hi)
	}
	var labelled []float64
	for _, tk := range p.Y.Tick.Marker.Ticks(lo, hi) {
		if tk.Label != "" {
			labelled = append(labelled, tk.Value)
		}
	}
	if len(labelled) < 3 {
		t.Fatalf("%s: %d phase labels", bp.name, len(labelled))
	}
	for i := 1; i < len(labelled); i++ {
		if d := labelled[i] - labelled[i-1]; d != 45 {
			t.Errorf("%s: phase ticks %g° apart", bp.name, d)
		}
	}
	for _, tk := range labelled {
		if math.Mod(tk, 45) != 0 {
			t.Errorf("%s: phase tick at %g°", bp.name, tk)
		}
	}
	// The phase at the crossover lies PM above a critical line −180° + k·360°;
	// both must be in view.
	m := bp.d.Cont.Verif.Margins
	if isFinite(m.PhaseDeg) {
		found := false
		for k := -4.0; k <= 4; k++ {
			crit := -180 + 360*k
			if crit >= lo && crit <= hi && crit+m.PhaseDeg >= lo && crit+m.PhaseDeg <= hi {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: the crossover phase (PM %g°) and its critical line are not both in %g…%g°", bp.name, m.PhaseDeg, lo, hi)
		}
		if !containsText(texts, "PM "+degs(m.PhaseDeg)) {
			t.Errorf("%s: PM %s not written on the plot", bp.name, degs(m.PhaseDeg))
		}
	}
	if w := m.PhaseCrossover; isFinite(m.GainDB) && isFinite(w) && w > bp.fig.panels[0].X.Min && w < bp.fig.panels[0].X.Max {
		if !containsText(texts, "GM "+dbs(m.GainDB)) {
			t.Errorf("%s: GM %s not written on the plot", bp.name, dbs(m.GainDB))
		}
	}
}

func checkSaturated(t *testing.T, bp builtPlot, texts []string) {
	t.Helper()
	d := bp.d
	s, k := d.Verif.Saturated, d.Coeffs
	hit := false
	for _, u := range s.U {
		if u >= k.Hi-1e-9*(k.Hi-k.Lo) || u <= k.Lo+1e-9*(k.Hi-k.Lo) {
			hit = true
		}
	}
	if hit != s.Reached {
		t.Errorf("%s: the command touches a limit: %v, Reached says %v", bp.name, hit, s.Reached)
	}
	if d.Problem.Ctrl.Form.HasIntegral() && len(d.Envelope) > 0 {
		if hold := d.Envelope[0].HoldRate; s.Amplitude > hold {
			t.Errorf("%s: step %g beyond the holdable rate %g", bp.name, s.Amplitude, hold)
		}
	}
	if !s.Reached {
		if containsText(texts, "without anti-windup") || !strings.Contains(bp.fig.note, "cannot be reached") || !strings.Contains(bp.fig.caption, "not reached") {
			t.Errorf("%s: limits not reached, but the plot does not say so or compares: %q", bp.name, texts)
		}
	}
}

// checkLegendDrawn checks that each style drawn in the legend is drawn
// in a panel too: the legend names nothing the reader cannot find.
func checkLegendDrawn(t *testing.T, bp builtPlot) {
	t.Helper()
	paths, err := svgPaths(bp.data)
	if err != nil {
		t.Fatalf("%s: %v", bp.name, err)
	}
	box := bp.fig.legendBox
	if len(bp.fig.legend) == 0 {
		return
	}
	in := func(p svgPath) bool {
		if len(p.pts) == 0 {
			return false
		}
		for _, q := range p.pts {
			if q.X < box.Min.X-1 || q.X > box.Max.X+1 || q.Y < box.Min.Y-1 || q.Y > box.Max.Y+1 {
				return false
			}
		}
		return true
	}
	drawn := map[string]bool{}
	var legend []string
	for _, p := range paths {
		if in(p) {
			legend = append(legend, p.style)
		} else {
			drawn[p.style] = true
		}
	}
	if len(legend) == 0 {
		t.Errorf("%s: no legend drawn in %v", bp.name, box)
	}
	for _, s := range legend {
		if !drawn[s] {
			t.Errorf("%s: the legend shows %q, which no panel draws", bp.name, s)
		}
	}
}

// TestExamplePlotsRender renders every plot of the examples with
// rsvg-convert (Debian's librsvg2-bin), as a reviewer's viewer would; it
// is required under CI and skipped elsewhere when missing.
func TestExamplePlotsRender(t *testing.T) {
	if testing.Short() {
		t.Skip("renders every plot with rsvg-convert; skipped with -short (CI runs it)")
	}
	bin, err := exec.LookPath("rsvg-convert")
	if err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatal("rsvg-convert is required under CI (Debian librsvg2-bin)")
		}
		t.Skip("rsvg-convert not found; install Debian's librsvg2-bin to render the plots")
	}
	plots := examplePlots(t)
	work := make(chan builtPlot)
	var mu sync.Mutex
	var wg sync.WaitGroup
	for range max(1, runtime.NumCPU()) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for bp := range work {
				cmd := exec.Command(bin, "--width", "240", "--format", "png")
				cmd.Stdin = bytes.NewReader(bp.data)
				var out, errb bytes.Buffer
				cmd.Stdout, cmd.Stderr = &out, &errb
				err := cmd.Run()
				mu.Lock()
				if err != nil || errb.Len() > 0 || !bytes.HasPrefix(out.Bytes(), []byte("\x89PNG")) {
					t.Errorf("%s: rsvg-convert: %v\n%s", bp.name, err, errb.String())
				}
				mu.Unlock()
			}
		}()
	}
	for _, bp := range plots {
		work <- bp
	}
	close(work)
	wg.Wait()
}

// TestTimeUnit checks the unit rule on its edges.
func TestTimeUnit(t *testing.T) {
	for _, c := range []struct {
		span float64
		unit string
	}{{1e-4, "µs"}, {1.999e-3, "µs"}, {2e-3, "ms"}, {0.3, "ms"}, {1.999, "ms"}, {2, "s"}, {6, "s"}, {120, "s"}} {
		if u := timeUnit(c.span); u.name != c.unit {
			t.Errorf("span %g s: %s, want %s", c.span, u.name, c.unit)
		}
	}
}

// TestPhaseRange checks the Bode phase axis against hand-worked cases:
// a quarter turn (90°) beyond the critical line and the crossover phase,
// on multiples of 45°.
func TestPhaseRange(t *testing.T) {
	for _, c := range []struct {
		crit   float64
		at     []float64
		lo, hi float64
	}{
		{-180, []float64{-135}, -270, -45},       // PM 45°: −180 − 90 … −135 + 90
		{-180, []float64{-120, -125}, -270, 0},   // −120 + 90 = −30, up to the next multiple of 45°
		{-180, []float64{math.NaN()}, -270, -90}, // no crossover: the line ± 90°
		{-540, []float64{-480}, -630, -360},      // a loop on a lower branch: −390 up to −360
		{-180, []float64{-1000}, -450, -90},      // clipped to ±270° about the line
	} {
		lo, hi := phaseRange(c.crit, c.at)
		if lo != c.lo || hi != c.hi {
			t.Errorf("phaseRange(%g, %v) = %g…%g, want %g…%g", c.crit, c.at, lo, hi, c.lo, c.hi)
		}
	}
	ts := stepTicks(45).Ticks(-270, -45)
	if len(ts) != 6 || ts[0].Value != -270 || ts[5].Value != -45 || ts[0].Label != "−270" {
		t.Errorf("45° ticks on −270…−45°: %v", ts)
	}
}

// TestSegmentMeetsUnit checks the legend's visibility test on segments
// drawn by hand: through, beside, touching a corner, and wholly outside.
func TestSegmentMeetsUnit(t *testing.T) {
	for _, c := range []struct {
		x0, y0, x1, y1 float64
		want           bool
	}{
		{-1, 0.5, 2, 0.5, true},     // crosses left to right
		{0.5, -5, 0.5, 5, true},     // a vertical line through
		{-1, -1, -0.1, 2, false},    // left of the square
		{-1, 0, 1, 2, true},         // y = x + 1 touches the corner (0, 1)
		{-1, 1, 1, 3, false},        // y = x + 2 passes above it
		{1.5, -1, 3, 2, false},      // right of it
		{-1, 0.2, -0.5, 0.2, false}, // short, outside
	} {
		if got := segmentMeetsUnit(c.x0, c.y0, c.x1, c.y1); got != c.want {
			t.Errorf("segment (%g, %g)–(%g, %g): %v, want %v", c.x0, c.y0, c.x1, c.y1, got, c.want)
		}
	}
	// A legend entry for markers wholly outside the ranges is dropped.
	p := plot.New()
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	f := &figure{panels: []*plot.Plot{p}}
	f.addSeen([]seen{pointsIn(0, plotter.XYs{{X: 2, Y: 0.5}})}, "outside")
	f.addSeen([]seen{pointsIn(0, plotter.XYs{{X: 0.5, Y: 0.5}})}, "inside")
	f.addSeen(nil, "nothing drawn")
	f.add("always")
	f.legend = f.visibleLegend(f.legend)
	var got []string
	for _, e := range f.legend {
		got = append(got, e.label)
	}
	if strings.Join(got, ",") != "inside,always" {
		t.Errorf("legend %v, want inside and always", got)
	}
}

// TestSentence checks the capitalisation of the page's sentences.
func TestSentence(t *testing.T) {
	for in, want := range map[string]string{
		"closed-loop pole -3 is only …":   "Closed-loop pole -3 is only …",
		"textbook placement: no solution": "Textbook placement: no solution",
		"z-plane map: failed":             "z-plane map: failed",
		"ωc·T = 0.6 is large":             "ωc·T = 0.6 is large",
		"with setpoint weight b = 0.1":    "With setpoint weight b = 0.1",
		"Kp is small":                     "Kp is small",
		"k scales":                        "k scales",
	} {
		if got := sentence(in); got != want {
			t.Errorf("sentence(%q) = %q, want %q", in, got, want)
		}
	}
}

// TestFloatPageNoFixedPoint: the page of a floating-point design has no
// fixed-point section or wording (formats, LSBs, proved ranges), and its
// sentences start with a capital (the page's house style).
func TestFloatPageNoFixedPoint(t *testing.T) {
	paths, _ := filepath.Glob("../../examples/*.toml")
	seen := 0
	for _, path := range paths {
		a := sharedDesign(t, path)
		if a.File.Numeric.Type != airframe.Float32 && a.File.Numeric.Type != airframe.Float64 {
			continue
		}
		seen++
		_, files := sharedBuild(t, path)
		md := string(files[0].Data)
		for _, w := range []string{"### Fixed point", "LSB", "proved bound", "headroom"} {
			if strings.Contains(md, w) {
				t.Errorf("%s (%s): the page has %q", path, a.File.Numeric.Type, w)
			}
		}
		lower := regexp.MustCompile(`(?m)^- [a-z][a-z]+[ :,-]`)
		if m := lower.FindAllString(md, -1); len(m) > 0 {
			t.Errorf("%s: list items start in lower case: %q", path, m)
		}
	}
	if seen == 0 {
		t.Fatal("no floating-point example airframe")
	}
}
