package emit

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

func TestCommentTextCannotEscape(t *testing.T) {
	evil := []string{
		"line one\n#error injected",
		"tail backslash \\",
		"trigraph ??/",
		"close */ int injected = 1; /* open",
		"cr\r#error injected",
		"nul\x00 and bell\x07 and del\x7f",
		"vertical\vtab\fform feed\u2028line separator\u0085next line",
		"bad utf-8 \xff\xfe",
		"ζ = 0.6, ω = 40 rad/s, 45°, ≤ ≥ ± · −",
		"??????? ***/// ///***",
	}
	for _, s := range evil {
		got := commentText(s)
		for i := 0; i < len(got); i++ {
			c := got[i]
			if c < 0x20 || c >= 0x7f {
				t.Errorf("commentText(%q) = %q: byte %#x is not printable ASCII", s, got, c)
			}
		}
		for _, bad := range []string{"\\", "*/", "/*", "??"} {
			if strings.Contains(got, bad) {
				t.Errorf("commentText(%q) = %q: contains %q", s, got, bad)
			}
		}
	}
	// The trade's symbols are spelled out, not escaped.
	if got, want := commentText("ζ = 0.6, 45°, a ≤ b"), "zeta = 0.6, 45 deg, a <= b"; got != want {
		t.Errorf("commentText spelling: got %q, want %q", got, want)
	}
	if got, want := commentText("\u4e2d"), "<U+4E2D>"; got != want {
		t.Errorf("commentText(CJK) = %q, want %q", got, want)
	}
}

func TestCommentLinesWrap(t *testing.T) {
	s := strings.Repeat("word ", 40) + strings.Repeat("x", 100)
	ls := commentLines(s, 30)
	for i, l := range ls[:len(ls)-1] {
		if len(l) > 30 {
			t.Errorf("line %d has %d > 30 characters: %q", i, len(l), l)
		}
	}
	if ls[len(ls)-1] != strings.Repeat("x", 100) {
		t.Errorf("a long word must stay whole on its own line, got %q", ls[len(ls)-1])
	}
	if got := strings.Join(ls, " "); got != strings.TrimSpace(s) {
		t.Errorf("wrapping lost text")
	}
}

func TestDisplayPath(t *testing.T) {
	cases := []struct{ in, want string }{
		{"examples/quadrotor.toml", "examples/quadrotor.toml"},
		{"./examples/../examples/quadrotor.toml", "examples/quadrotor.toml"},
		{"../airframes/x.toml", "airframes/x.toml"},
		{"../../../x.toml", "x.toml"},
		{"/home/someone/fw/airframes/x.toml", "x.toml"},
		{`C:\Users\someone\x.toml`, "x.toml"},
		{`airframes\x.toml`, "airframes/x.toml"},
		{"weird*/name.toml", "weird* /name.toml"},
		{"a\nb.toml", "a b.toml"},
		{"", "(unnamed input)"},
		{"..", "(unnamed input)"},
		{"/", "(unnamed input)"},
	}
	for _, c := range cases {
		if got := displayPath(c.in); got != c.want {
			t.Errorf("displayPath(%q) = %q, want %q", c.in, got, c.want)
		}
	}
}

// TestFloatLiteralsRoundTrip checks that every literal the generator
// prints reads back as exactly the value it stands for, with strconv's
// correctly rounded parser (Go's strconv.ParseFloat, as C's strtof/strtod
// read decimal constants: IEEE 754-2008 5.12: 9 significant digits suffice
// for binary32 and 17 for binary64, and the shortest round-trip string has
// at most that many). The C compiler reads them too, in the compile tests
// of package golden.
func TestFloatLiteralsRoundTrip(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	f32 := []float32{0, 1, -1, 0.1, -0.5, 1e-45, math.SmallestNonzeroFloat32, math.MaxFloat32, -math.MaxFloat32,
		1.17549435e-38, 16777216, 16777217, 3.4e38, 0.3, 2.5e-5}
	for i := 0; i < 20000; i++ {
		f32 = append(f32, math.Float32frombits(r.Uint32()))
	}
	for _, x := range f32 {
		if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
			continue
		}
		c, err := cFloat32(x)
		if err != nil {
			t.Fatalf("cFloat32(%v): %v", x, err)
		}
		if !strings.HasSuffix(strings.TrimSuffix(c, ")"), "f") || !strings.ContainsAny(c, ".e") {
			t.Fatalf("cFloat32(%v) = %q: not a C float constant", x, c)
		}
		s := strings.TrimSuffix(strings.TrimPrefix(strings.TrimSuffix(c, ")"), "("), "f")
		back, err := strconv.ParseFloat(s, 32)
		if err != nil || math.Float32bits(float32(back)) != math.Float32bits(x) {
			t.Fatalf("cFloat32(%v) = %q reads back as %v (%v)", x, c, back, err)
		}
		if x != 0 {
			g, _ := goFloat(float64(x), 32)
			back, err = strconv.ParseFloat(g, 32)
			if err != nil || float32(back) != x {
				t.Fatalf("goFloat(%v) = %q reads back as %v", x, g, back)
			}
		}
		if d := sigDigits(s); d > 9 {
			t.Fatalf("cFloat32(%v) = %q: %d significant digits, more than binary32 needs", x, c, d)
		}
	}
	f64 := []float64{0, 1, -1, 0.1, 1.0 / 3, math.Pi, 5e-324, math.MaxFloat64, -math.MaxFloat64, 2.2250738585072014e-308}
	for i := 0; i < 20000; i++ {
		f64 = append(f64, math.Float64frombits(r.Uint64()))
	}
	for _, x := range f64 {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		c, err := cFloat64(x)
		if err != nil {
			t.Fatalf("cFloat64(%v): %v", x, err)
		}
		s := strings.TrimSuffix(strings.TrimPrefix(c, "("), ")")
		back, err := strconv.ParseFloat(s, 64)
		if err != nil || math.Float64bits(back) != math.Float64bits(x) {
			t.Fatalf("cFloat64(%v) = %q reads back as %v (%v)", x, c, back, err)
		}
		if d := sigDigits(s); d > 17 {
			t.Fatalf("cFloat64(%v) = %q: %d significant digits, more than binary64 needs", x, c, d)
		}
	}
	if got, _ := cFloat32(float32(math.Copysign(0, -1))); got != "(-0.0f)" {
		t.Errorf("cFloat32(-0) = %q, want (-0.0f): C keeps the sign of zero", got)
	}
	if _, err := cFloat32(float32(math.Inf(1))); err == nil {
		t.Error("cFloat32(+Inf) must fail: no C literal")
	}
	if _, err := floatDigits(1e39, 32); err == nil {
		t.Error("1e39 overflows float32 and must be refused")
	}
}

func TestPlusZero(t *testing.T) {
	if z := plusZero(math.Copysign(0, -1)); math.Signbit(z) {
		t.Error("plusZero(-0) kept the sign")
	}
	if plusZero(-2) != -2 || plusZero(3) != 3 {
		t.Error("plusZero changed a non-zero value")
	}
}

// sigDigits counts the significant digits of a decimal literal.
func sigDigits(s string) int {
	m := strings.TrimPrefix(strings.SplitN(s, "e", 2)[0], "-")
	m = strings.ReplaceAll(m, ".", "")
	return len(strings.TrimRight(strings.TrimLeft(m, "0"), "0"))
}

// FuzzCommentText checks the escaping on arbitrary input: the result is
// printable ASCII and holds nothing that ends a comment, splices a line
// or forms a trigraph.
func FuzzCommentText(f *testing.F) {
	for _, s := range []string{"*/", "a\nb", "??/", "\\", "ζ°", "\x00", "/**/", "?\xff?"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		for _, out := range []string{commentText(s), displayPath(s)} {
			for i := 0; i < len(out); i++ {
				if c := out[i]; c < 0x20 || c >= 0x7f {
					t.Fatalf("%q -> %q: byte %#x", s, out, c)
				}
			}
			for _, bad := range []string{"*/", "/*", "??", "\\"} {
				if strings.Contains(out, bad) {
					t.Fatalf("%q -> %q: contains %q", s, out, bad)
				}
			}
		}
		if p := displayPath(s); strings.HasPrefix(p, "/") || p == ".." || strings.HasPrefix(p, "../") {
			t.Fatalf("displayPath(%q) = %q: absolute or climbing", s, p)
		}
	})
}
