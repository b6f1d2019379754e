package emit

import (
	"fmt"
	"math"
	"path"
	"path/filepath"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Text that reaches generated source: comments, literals and the input
// path. Generated files are plain ASCII so that every C toolchain reads
// them, whatever its source character set.

// commentText makes s safe inside a line comment (// ...) of C99 or Go:
//
//   - a newline or any other control character would end the comment and
//     let the rest run as code: whitespace controls become a space, others
//     the escape <U+XXXX>;
//   - a backslash at the end of a C line comment splices the next source
//     line into the comment (C99 5.1.1.2 phase 2), and the trigraph ??/ is
//     a backslash (C99 5.2.1.1): backslashes become <U+005C> and "??" is
//     broken up as "?-?";
//   - "*/" and "/*" are broken up ("* /", "/ *") so that the text is safe
//     in a block comment too and trips no -Wcomment;
//   - characters beyond ASCII are spelled out in ASCII where the trade has a
//     spelling (ζ → zeta, ° → deg, ≤ → <=), else escaped as <U+XXXX>.
//
// The result has no control characters, no backslash and no non-ASCII.
func commentText(s string) string {
	var b strings.Builder
	b.Grow(len(s))
	var prev byte // the last byte written
	put := func(t string) {
		for i := 0; i < len(t); i++ {
			c := t[i]
			switch {
			case prev == '*' && c == '/', prev == '/' && c == '*':
				b.WriteByte(' ')
			case prev == '?' && c == '?':
				b.WriteByte('-')
			}
			b.WriteByte(c)
			prev = c
		}
	}
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		i += size
		switch {
		case r == utf8.RuneError && size <= 1:
			put("<?>")
		case r == '\t' || r == '\n' || r == '\r' || r == '\v' || r == '\f':
			put(" ")
		case r < 0x20 || r == 0x7f:
			put(fmt.Sprintf("<U+%04X>", r))
		case r == '\\':
			put("<U+005C>")
		case r < 0x80:
			put(string(rune(r)))
		default:
			if t, ok := asciiSpelling(r); ok {
				put(t)
			} else {
				put(fmt.Sprintf("<U+%04X>", r))
			}
		}
	}
	return b.String()
}

// asciiSpelling returns the ASCII spelling of a few symbols of the trade.
func asciiSpelling(r rune) (string, bool) {
	switch r {
	case 'ζ':
		return "zeta", true
	case 'ω':
		return "w", true
	case 'σ':
		return "sigma", true
	case 'π':
		return "pi", true
	case 'τ':
		return "tau", true
	case '°':
		return " deg", true
	case '≥':
		return ">=", true
	case '≤':
		return "<=", true
	case '±':
		return "+/-", true
	case '·', '×':
		return "*", true
	case '−', '–', '—':
		return "-", true
	case '→':
		return "->", true
	case '…':
		return "...", true
	case '²':
		return "^2", true
	case 'µ', 'μ':
		return "u", true
	case '‘', '’':
		return "'", true
	case '“', '”':
		return `"`, true
	case '\u00a0':
		return " ", true
	}
	return "", false
}

// commentLines escapes s with commentText and wraps it into lines of at
// most width characters (a longer word stays whole on its own line). A
// "name = value" and a value with its unit ("0.12 s", "45 deg") are not
// broken across lines.
func commentLines(s string, width int) []string {
	words := keepTogether(strings.Fields(commentText(s)))
	var lines []string
	cur := ""
	for _, w := range words {
		switch {
		case cur == "":
			cur = w
		case len(cur)+1+len(w) <= width:
			cur += " " + w
		default:
			lines = append(lines, cur)
			cur = w
		}
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}

// displayPath is the input path as the generated header names it: the path
// given on the command line, cleaned and with forward slashes, but never an
// absolute path (it would carry a user's directory layout into the source,
// and make the output depend on where the build tree lives) and never
// climbing out with "..". An absolute path is shown by its base name; a
// relative one loses its leading ".." elements. The result is escaped for
// a comment.
func displayPath(p string) string {
	if p == "" {
		return "(unnamed input)"
	}
	// Windows-style separators are separators wherever the tool runs: a
	// path written on one machine shows the same on another.
	s := strings.ReplaceAll(filepath.ToSlash(p), `\`, "/")
	if vol := filepath.VolumeName(p); vol != "" {
		s = strings.TrimPrefix(s, filepath.ToSlash(vol))
		s = "/" + strings.TrimLeft(s, "/")
	}
	if len(s) >= 2 && s[1] == ':' && ('a' <= s[0] && s[0] <= 'z' || 'A' <= s[0] && s[0] <= 'Z') {
		s = "/" + strings.TrimLeft(s[2:], "/") // a drive letter, seen from a non-Windows host
	}
	abs := strings.HasPrefix(s, "/")
	s = path.Clean(s)
	if abs {
		s = path.Base(s)
	}
	for s == ".." || strings.HasPrefix(s, "../") {
		s = strings.TrimPrefix(strings.TrimPrefix(s, ".."), "/")
	}
	if s == "" || s == "." || s == "/" {
		s = "(unnamed input)"
	}
	return commentText(s)
}

// Float literals. The C literal carries the 'f' suffix for float; Go
// literals are untyped constants given a type by their declaration. Both
// print the shortest decimal that reads back as exactly the same value
// (strconv's 'g' with precision −1: at most 9 significant digits for
// binary32 and 17 for binary64, IEEE 754-2008 5.12.2), and always contain a
// '.' or an exponent so that C reads them as floating constants.

// floatDigits formats x with the shortest round-trip digits of bits (32 or
// 64), with a '.' or an exponent.
func floatDigits(x float64, bits int) (string, error) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "", fmt.Errorf("value %v is not finite", x)
	}
	if bits == 32 && math.Abs(x) > math.MaxFloat32 {
		return "", fmt.Errorf("value %g overflows float32", x)
	}
	s := strconv.FormatFloat(x, 'g', -1, bits)
	if !strings.ContainsAny(s, ".e") {
		s += ".0"
	}
	return s, nil
}

// cFloat32 is the C literal of a float: 0.5f, 1.25e-05f, (-3.0f).
func cFloat32(x float32) (string, error) {
	s, err := floatDigits(float64(x), 32)
	if err != nil {
		return "", err
	}
	return cParen(s + "f"), nil
}

// cFloat64 is the C literal of a double.
func cFloat64(x float64) (string, error) {
	s, err := floatDigits(x, 64)
	if err != nil {
		return "", err
	}
	return cParen(s), nil
}

// cParen parenthesizes a negative literal, so that a macro holding it
// expands safely after a '-' or a cast.
func cParen(s string) string {
	if strings.HasPrefix(s, "-") {
		return "(" + s + ")"
	}
	return s
}

// goFloat is the Go constant literal of x at the given width. A Go
// constant has no negative zero: −0 prints as 0, which the caller avoids
// by normalizing zeros (see plusZero).
func goFloat(x float64, bits int) (string, error) {
	if x == 0 {
		return "0", nil
	}
	return floatDigits(x, bits)
}

// plusZero turns −0 into +0. Generated Go constants cannot hold −0, so the
// coefficients given to both the emitted code and the reference model are
// normalized first; every other value is unchanged.
func plusZero(x float64) float64 {
	if x == 0 {
		return 0
	}
	return x
}

// keepTogether joins the words that a line break should not separate:
// the three words of "name = value", and a number with its unit.
func keepTogether(words []string) []string {
	var out []string
	for i := 0; i < len(words); i++ {
		w := words[i]
		for i+1 < len(words) && (words[i+1] == "=" || strings.HasSuffix(w, " =") || w == "=" || isUnit(words[i+1])) {
			w += " " + words[i+1]
			i++
		}
		out = append(out, w)
	}
	return out
}

// isUnit reports whether w is a unit as the summaries write them,
// possibly followed by punctuation.
func isUnit(w string) bool {
	switch strings.TrimRight(w, ",.;)") {
	case "s", "%", "deg", "dB", "rad/s", "Hz", "bits":
		return true
	}
	return false
}
