package emit

import (
	"fmt"
	"sort"
	"strings"
)

// Names of the generated code.
//
// The airframe and axis names come from the airframe file, where they are
// checked against the pattern [a-z][a-z0-9_]{0,31} and against C and Go
// keywords. emit checks again on its own (the data may not come from the
// airframe package), and checks the identifiers it builds from them: a
// keyword or predeclared name anywhere, two generated names that coincide
// within an airframe, and (across the airframes of one call, which a
// firmware may link together) a C name of one airframe that is also a name
// of another (airframe "x" with axis "y_roll" against airframe "x_y" with
// axis "roll").

// NameError is a name that cannot be used in generated code.
type NameError struct {
	Airframe string
	Name     string
	Reason   string
}

func (e *NameError) Error() string {
	return fmt.Sprintf("airframe %s: name %q: %s", e.Airframe, e.Name, e.Reason)
}

// codeIdentOK reports whether name matches [a-z][a-z0-9_]{0,31}.
func codeIdentOK(name string) bool {
	if len(name) == 0 || len(name) > 32 || name[0] < 'a' || name[0] > 'z' {
		return false
	}
	for i := 1; i < len(name); i++ {
		c := name[i]
		if !('a' <= c && c <= 'z' || '0' <= c && c <= '9' || c == '_') {
			return false
		}
	}
	return true
}

// codeReserved says which language reserves the word w, or "".
//
// C: the keywords of C99 (ISO/IEC 9899:1999 6.4.1) and C11, the lower-case
// keywords of C23 (also macros of <stdbool.h>, <stdalign.h>,
// <stdnoreturn.h>, <assert.h> in earlier C), complex and imaginary of
// <complex.h>, and the names the generated code itself includes from
// <stdint.h> and <stdbool.h>. Go: the keywords and predeclared identifiers
// (The Go Programming Language Specification, "Keywords", "Predeclared
// identifiers"), and main and init.
func codeReserved(w string) string {
	switch w {
	case "auto", "break", "case", "char", "const", "continue", "default",
		"do", "double", "else", "enum", "extern", "float", "for", "goto",
		"if", "inline", "int", "long", "register", "restrict", "return",
		"short", "signed", "sizeof", "static", "struct", "switch",
		"typedef", "union", "unsigned", "void", "volatile", "while":
		return "a C keyword"
	case "alignas", "alignof", "bool", "constexpr", "false", "nullptr",
		"static_assert", "thread_local", "true", "typeof", "typeof_unqual",
		"noreturn", "complex", "imaginary":
		return "a C23 keyword or standard C macro"
	case "int8_t", "int16_t", "int32_t", "int64_t", "uint8_t", "uint16_t",
		"uint32_t", "uint64_t", "intptr_t", "uintptr_t", "intmax_t", "uintmax_t":
		return "a <stdint.h> type"
	case "chan", "defer", "fallthrough", "func", "go", "import",
		"interface", "map", "package", "range", "select", "type", "var":
		return "a Go keyword"
	case "any", "byte", "comparable", "complex64", "complex128", "error",
		"float32", "float64", "int8", "int16", "int32", "int64", "rune",
		"string", "uint", "uint8", "uint16", "uint32", "uint64", "uintptr",
		"iota", "nil", "append", "cap", "clear", "close", "copy", "delete",
		"imag", "len", "make", "max", "min", "new", "panic", "print",
		"println", "real", "recover":
		return "a Go predeclared identifier"
	case "main", "init":
		return "special in Go (package main, func init)"
	}
	return ""
}

// codeReservedPrefix says whether C reserves the external name w for the
// library's future directions (C99 7.26): names beginning with "is" or
// "to" and a lower-case letter (<ctype.h>, <wctype.h>), or with "str",
// "mem" or "wcs" and a lower-case letter (<stdlib.h>, <string.h>,
// <wchar.h>). No compiler rejects them and no library declares such a name
// with a suffix like _step, so this is a warning, not an error.
func codeReservedPrefix(w string) string {
	for _, p := range []string{"is", "to", "str", "mem", "wcs"} {
		if strings.HasPrefix(w, p) && len(w) > len(p) && 'a' <= w[len(p)] && w[len(p)] <= 'z' {
			return fmt.Sprintf("C reserves external names beginning with %q and a lower-case letter for future library use (C99 7.26)", p)
		}
	}
	return ""
}

// checkNames checks the airframe and axis names and the generated
// identifiers of one airframe. It returns warnings (reserved prefixes) and
// the first error.
func checkNames(u *codeUnit) (warnings []string, err error) {
	bad := func(name, why string) error { return &NameError{Airframe: u.Airframe, Name: name, Reason: why} }
	if !codeIdentOK(u.Airframe) {
		return nil, bad(u.Airframe, "must match [a-z][a-z0-9_]{0,31}")
	}
	if why := codeReserved(u.Airframe); why != "" {
		return nil, bad(u.Airframe, why)
	}
	for _, x := range u.Axes {
		if !codeIdentOK(x.Name) {
			return nil, bad(x.Name, "axis name must match [a-z][a-z0-9_]{0,31}")
		}
		if why := codeReserved(x.Name); why != "" {
			return nil, bad(x.Name, why)
		}
	}
	seen := map[string]bool{}
	for _, id := range u.idents() {
		if why := codeReserved(id); why != "" {
			return nil, bad(id, "generated identifier is "+why)
		}
		if seen[id] {
			return nil, bad(id, "two generated identifiers coincide; rename an axis")
		}
		seen[id] = true
	}
	if u.Lang == LangC && !u.HeaderOnly {
		if why := codeReservedPrefix(u.Airframe); why != "" {
			warnings = append(warnings, fmt.Sprintf("airframe %s: %s; the generated functions %s_*_step and so on are such names", u.Airframe, why, u.Airframe))
		}
	}
	return warnings, nil
}

// checkAcross reports a C name that two airframes of one call generate.
func checkAcross(us []*codeUnit) error {
	owner := map[string]string{}
	for _, u := range us {
		if u.Lang != LangC {
			continue
		}
		for _, id := range u.idents() {
			if o, ok := owner[id]; ok && o != u.Airframe {
				return &NameError{Airframe: u.Airframe, Name: id, Reason: fmt.Sprintf("airframe %s generates the same C name; a firmware linking both would not build", o)}
			}
			owner[id] = u.Airframe
		}
	}
	return nil
}

// idents lists the identifiers the unit declares at file scope.
func (u *codeUnit) idents() []string {
	var ids []string
	if u.Lang == LangGo {
		ids = append(ids, u.GoPackage, u.Clamp)
		if u.Fixed {
			ids = append(ids, u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl)
		}
		for _, x := range u.Axes {
			ids = append(ids, x.GoType)
			for _, c := range x.Consts {
				ids = append(ids, c.Name)
			}
		}
		return ids
	}
	ids = append(ids, u.Guard, u.Clamp)
	if u.Fixed {
		ids = append(ids, u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl, u.Airframe+"_arithmetic_shift_check")
	}
	for _, x := range u.Axes {
		ids = append(ids, x.Prefix+"_state", x.Prefix+"_reset", x.Prefix+"_step", x.Prefix+"_applied")
		for _, c := range x.Consts {
			ids = append(ids, c.Name)
		}
	}
	sort.Strings(ids)
	return ids
}
