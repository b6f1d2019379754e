// Package airframe reads the airframe file: the strict TOML description of
// a vehicle's rate loops that every verb of the tool starts from.
//
// A file names the airframe, the loop rate and compute delay, the numeric
// type of the generated code, and one [axes.NAME] table per axis with its
// plant, sensor, spec, controller choices and the plant's envelope (README,
// "The airframe file").
// Parse decodes the file into the inputs of the designer (Axis per
// axis) and of the discretization (Loop, Numeric), with
// every default applied; the defaults are all in defaults.go.
//
// The format is strict: an unknown key, a value of the wrong type, a
// non-finite number (TOML allows nan and inf) or a value out of range is an
// error. Parse does not stop at the first problem: it walks the whole file
// and returns an *Errors holding every problem, each naming the file, the
// key path and the value, and saying what is allowed:
//
//	examples/x.toml: axes.roll.spec.overshoot = 1.4: must be in (0, 1)
package airframe

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"slices"
	"strings"
	"unicode/utf8"

	"github.com/pelletier/go-toml/v2"
)

// File is a decoded and validated airframe file.
type File struct {
	Path        string // as given
	SHA256      string // hex of the raw bytes
	Airframe    string // identifier [a-z][a-z0-9_]{0,31}
	Description string
	Loop        Loop
	Numeric     Numeric
	Axes        []Axis         // sorted by axis name (deterministic)
	Raw         map[string]any // the decoded TOML tree (for `compare`)
}

// Parse decodes and validates data read from path (path only for
// messages). It returns either a *File or an *Errors listing every problem
// found.
func Parse(path string, data []byte) (*File, error) {
	c := &checker{path: path}
	raw := c.decodeTOML(data)
	var f *File
	if raw != nil {
		f = c.file(raw)
	}
	if len(c.errs) > 0 {
		slices.SortStableFunc(c.errs, func(a, b *FieldError) int { return compareKeys(a.Key, b.Key) })
		if c.dropped > 0 {
			c.errs = append(c.errs, &FieldError{Path: path, Msg: fmt.Sprintf(
				"and %d more problems, not listed: only the first %d problems of a file are reported", c.dropped, MaxErrors)})
		}
		return nil, &Errors{Path: path, List: c.errs}
	}
	sum := sha256.Sum256(data)
	f.Path = path
	f.SHA256 = hex.EncodeToString(sum[:])
	f.Raw = raw
	return f, nil
}

// decodeTOML checks that data is text and decodes it; it returns nil after
// recording the problem when it is not.
func (c *checker) decodeTOML(data []byte) map[string]any {
	if len(data) > MaxFileBytes {
		c.fail("", nil, "file is larger than %d bytes; an airframe file is at most that", MaxFileBytes)
		return nil
	}
	// A UTF-8 byte order mark, which some editors write, is not part of
	// the TOML grammar; drop it rather than reject the file.
	text := bytes.TrimPrefix(data, []byte("\uFEFF"))
	if len(bytes.TrimSpace(text)) == 0 {
		c.fail("", nil, "empty file: airframe, loop_hz and at least one [axes.NAME] table are required")
		return nil
	}
	// The TOML decoder checks every key against the keys of its table
	// one by one, which takes minutes for a megabyte of keys; a file
	// with more keys than any valid one can have is refused before it.
	if n := countKeys(text); n > MaxKeys {
		c.fail("", nil, "%d keys and table headers, more than the %d an airframe file may have (at most %d axes of at most %d keys each)", n, MaxKeys, MaxAxes, maxKeysPerAxis)
		return nil
	}
	if i := bytes.IndexByte(text, 0); i >= 0 {
		line, col := position(text, i)
		c.fail("", nil, "line %d, column %d: not a text file (NUL byte); an airframe file is UTF-8 TOML", line, col)
		return nil
	}
	if !utf8.Valid(text) {
		i := firstInvalidUTF8(text)
		line, col := position(text, i)
		c.fail("", nil, "line %d, column %d: not a text file (invalid UTF-8); an airframe file is UTF-8 TOML", line, col)
		return nil
	}
	var raw map[string]any
	if err := toml.Unmarshal(text, &raw); err != nil {
		var de *toml.DecodeError
		if errors.As(err, &de) {
			line, col := de.Position()
			msg := strings.TrimPrefix(de.Error(), "toml: ")
			c.fail("", nil, "line %d, column %d: TOML syntax error: %s", line, col, msg)
		} else {
			c.fail("", nil, "TOML syntax error: %v", err)
		}
		return nil
	}
	if raw == nil {
		raw = map[string]any{}
	}
	return raw
}

// position converts byte offset i of text into a 1-based line and column
// (the column counted in characters).
func position(text []byte, i int) (line, col int) {
	before := text[:i]
	line = bytes.Count(before, []byte("\n")) + 1
	lineStart := bytes.LastIndexByte(before, '\n') + 1
	return line, utf8.RuneCount(before[lineStart:]) + 1
}

// firstInvalidUTF8 returns the offset of the first byte of data that is
// not part of valid UTF-8.
func firstInvalidUTF8(data []byte) int {
	for i := 0; i < len(data); {
		r, size := utf8.DecodeRune(data[i:])
		if r == utf8.RuneError && size <= 1 {
			return i
		}
		i += size
	}
	return len(data)
}

// countKeys returns an upper bound on the number of keys and table
// headers of the TOML text: every '=' outside strings and comments (a key
// of a table or of an inline table) and every table header (a '[' that
// begins a line outside a value). It walks the text once.
func countKeys(text []byte) int {
	n, depth := 0, 0 // depth: open arrays and inline tables of a value
	lineStart := true
	for i := 0; i < len(text); i++ {
		ch := text[i]
		switch {
		case ch == '\n':
			lineStart = true
			continue
		case ch == ' ' || ch == '\t' || ch == '\r':
			continue
		case ch == '#':
			for i < len(text) && text[i] != '\n' {
				i++
			}
			i-- // the newline ends the comment and starts a line
			continue
		case ch == '"' || ch == '\'':
			i = skipString(text, i)
		case ch == '[' && lineStart && depth == 0:
			n++ // a table header: skip to the end of its line
			for i+1 < len(text) && text[i+1] != '\n' {
				i++
				if text[i] == '"' || text[i] == '\'' {
					i = skipString(text, i)
				} else if text[i] == '#' {
					i--
					break
				}
			}
		case ch == '[' || ch == '{':
			depth++
		case ch == ']' || ch == '}':
			if depth > 0 {
				depth--
			}
		case ch == '=':
			n++
		}
		lineStart = false
	}
	return n
}

// skipString returns the index of the last byte of the TOML string that
// starts at text[i] (a quote): basic "…" with backslash escapes, literal
// '…', and their multi-line forms with three quotes. An unterminated
// string runs to the end of the text (the decoder reports it).
func skipString(text []byte, i int) int {
	q := text[i]
	if i+2 < len(text) && text[i+1] == q && text[i+2] == q {
		// Multi-line: up to the next three quotes (a fourth and fifth
		// quote may end the content).
		for j := i + 3; j < len(text); j++ {
			if q == '"' && text[j] == '\\' {
				j++
				continue
			}
			if j+2 < len(text) && text[j] == q && text[j+1] == q && text[j+2] == q {
				for j+3 < len(text) && text[j+3] == q {
					j++
				}
				return j + 2
			}
		}
		return len(text) - 1
	}
	for j := i + 1; j < len(text); j++ {
		switch {
		case q == '"' && text[j] == '\\':
			j++
		case text[j] == q, text[j] == '\n':
			return j
		}
	}
	return len(text) - 1
}
