package airframe

import (
	"strings"
)

// FieldError is one problem in an airframe file. Its Error method gives
//
//	FILE: key.path = value: what is allowed
//
// leaving out "= value" when the key is missing or is a table, and the key
// path as well when the problem concerns the whole file (a syntax error,
// an empty file, bytes that are not text).
type FieldError struct {
	Path  string // the file, as given to Parse or Load
	Key   string // dotted TOML key path, e.g. axes.roll.spec.overshoot; "" for the whole file
	Value string // the offending value as TOML-like text; "" when there is none
	Msg   string // what is wrong and what is allowed
}

func (e *FieldError) Error() string {
	var b strings.Builder
	b.WriteString(displayPath(e.Path))
	b.WriteString(": ")
	if e.Key != "" {
		b.WriteString(e.Key)
		if e.Value != "" {
			b.WriteString(" = ")
			b.WriteString(e.Value)
		}
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Errors is the error Parse and Load return for invalid input. It holds
// every problem found in the file, sorted by key path (problems of the same
// key keep the order in which they were found), so that one run shows the
// author everything to fix.
type Errors struct {
	Path string
	List []*FieldError
}

// Error joins the problems, one per line.
func (e *Errors) Error() string {
	if len(e.List) == 0 {
		return displayPath(e.Path) + ": invalid airframe file"
	}
	lines := make([]string, len(e.List))
	for i, fe := range e.List {
		lines[i] = fe.Error()
	}
	return strings.Join(lines, "\n")
}

// Unwrap gives the individual problems to errors.Is and errors.As.
func (e *Errors) Unwrap() []error {
	errs := make([]error, len(e.List))
	for i, fe := range e.List {
		errs[i] = fe
	}
	return errs
}

// displayPath names the input in messages; an empty path would make the
// message start with a bare colon, and a path with control or
// bidirectional characters is quoted (SafeText).
func displayPath(p string) string {
	if p == "" {
		return "(input)"
	}
	return SafeText(p)
}

// compareKeys orders dotted key paths segment by segment, comparing runs
// of digits by value so that poles[2] sorts before poles[10].
func compareKeys(a, b string) int {
	for a != "" && b != "" {
		if isDigit(a[0]) && isDigit(b[0]) {
			na, nb := digitRun(a), digitRun(b)
			// Compare by value: a shorter run (leading zeros aside, which
			// index brackets never have) is a smaller number.
			ta, tb := strings.TrimLeft(a[:na], "0"), strings.TrimLeft(b[:nb], "0")
			if len(ta) != len(tb) {
				if len(ta) < len(tb) {
					return -1
				}
				return 1
			}
			if c := strings.Compare(ta, tb); c != 0 {
				return c
			}
			a, b = a[na:], b[nb:]
			continue
		}
		if a[0] != b[0] {
			// '.' and '[' separate segments; make them sort before any
			// name character so that a table's keys stay together.
			return int(sortByte(a[0])) - int(sortByte(b[0]))
		}
		a, b = a[1:], b[1:]
	}
	return len(a) - len(b)
}

func isDigit(c byte) bool { return '0' <= c && c <= '9' }

func digitRun(s string) int {
	n := 0
	for n < len(s) && isDigit(s[n]) {
		n++
	}
	return n
}

func sortByte(c byte) byte {
	switch c {
	case '.':
		return 0
	case '[':
		return 1
	}
	return c
}
