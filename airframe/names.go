package airframe

import "fmt"

// identPattern is the pattern of airframe and axis names, for messages.
const identPattern = "[a-z][a-z0-9_]{0,31}"

// checkIdent reports why name cannot be an airframe or axis name, or ""
// when it can. Names become prefixes and parts of generated C and Go
// identifiers (<airframe>_<axis>_step, a Go package or type), so they must
// be plain lower-case identifiers (the pattern [a-z][a-z0-9_]{0,31}, which
// also keeps out every path character) and must not be a word the
// languages reserve.
func checkIdent(name string) string {
	if !matchesIdent(name) {
		return fmt.Sprintf("must match %s (a lower-case letter, then at most %d lower-case letters, digits or '_')", identPattern, maxIdentLen-1)
	}
	if what := reservedWord(name); what != "" {
		return fmt.Sprintf("%q is %s; names prefix generated C and Go identifiers, choose another", name, what)
	}
	return ""
}

// matchesIdent reports whether name matches ^[a-z][a-z0-9_]{0,31}$.
func matchesIdent(name string) bool {
	if len(name) == 0 || len(name) > maxIdentLen {
		return false
	}
	if c := name[0]; c < 'a' || c > 'z' {
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

// reservedWord says what reserves name ("a C keyword", ...) or returns "".
//
// The lists: the C99 keywords (ISO/IEC 9899:1999 6.4.1) with the C11
// _Keywords; the lower-case C23 keywords, which are also the macros of
// <stdbool.h>, <stdalign.h>, <stdnoreturn.h> and <assert.h> in C99/C11
// code, and complex/imaginary of <complex.h>; the Go keywords and
// predeclared identifiers (The Go Programming Language Specification,
// "Keywords" and "Predeclared identifiers"), and main and init, which Go
// gives special meaning as package and function names. The _Keywords
// cannot match the name pattern; they are listed so that the function is
// correct on its own. C's other reserved identifiers all begin with an
// underscore, which the pattern excludes.
func reservedWord(name string) string {
	switch name {
	case "auto", "break", "case", "char", "const", "continue", "default",
		"do", "double", "else", "enum", "extern", "float", "for", "goto",
		"if", "inline", "int", "long", "register", "restrict", "return",
		"short", "signed", "sizeof", "static", "struct", "switch",
		"typedef", "union", "unsigned", "void", "volatile", "while",
		"_Bool", "_Complex", "_Imaginary",
		"_Alignas", "_Alignof", "_Atomic", "_Generic", "_Noreturn",
		"_Static_assert", "_Thread_local":
		return "a C keyword"
	case "alignas", "alignof", "bool", "constexpr", "false", "nullptr",
		"static_assert", "thread_local", "true", "typeof", "typeof_unqual",
		"noreturn", "complex", "imaginary":
		return "a C23 keyword or standard C macro"
	}
	switch name {
	case "chan", "defer", "fallthrough", "func", "go", "import",
		"interface", "map", "package", "range", "select", "type", "var":
		// The Go keywords not already C keywords above (break, case,
		// const, continue, default, else, for, goto, if, return, struct,
		// switch).
		return "a Go keyword"
	case "any", "byte", "comparable", "complex64", "complex128", "error",
		"float32", "float64", "int8", "int16", "int32", "int64", "rune",
		"string", "uint", "uint8", "uint16", "uint32", "uint64", "uintptr",
		"iota", "nil", "append", "cap", "clear", "close", "copy", "delete",
		"imag", "len", "make", "max", "min", "new", "panic", "print",
		"println", "real", "recover":
		// Go's predeclared identifiers not already listed above (bool,
		// complex, false, true and int are C words too).
		return "a Go predeclared identifier"
	case "main", "init":
		return "special in Go (package main, func init)"
	}
	return ""
}
