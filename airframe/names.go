package airframe

import "fmt"

// The names of an airframe file become parts of generated C and Go
// identifiers (<airframe>_<axis>_step, a Go package or type), so the file
// decoder and the code generator must agree on which names are allowed.
// This file is the one rule set both use: the pattern of a name and the
// table of words the languages reserve.

// IdentPattern is the pattern of airframe and axis names, for messages.
const IdentPattern = "[a-z][a-z0-9_]{0,31}"

// CheckName reports why name cannot be an airframe or axis name, or ""
// when it can: it must match IdentPattern (a plain lower-case identifier,
// which also keeps out every path character) and must not be a word the
// languages reserve (Reserved).
func CheckName(name string) string {
	if !MatchesIdent(name) {
		return fmt.Sprintf("must match %s (a lower-case letter, then at most %d lower-case letters, digits or '_')", IdentPattern, maxIdentLen-1)
	}
	if what := Reserved(name); what != "" {
		return fmt.Sprintf("%q is %s; names prefix generated C and Go identifiers, choose another", name, what)
	}
	return ""
}

// MatchesIdent reports whether name matches ^[a-z][a-z0-9_]{0,31}$.
func MatchesIdent(name string) bool {
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

// What reserves a word, as messages say it.
const (
	cKeyword      = "a C keyword"
	c23Word       = "a C23 keyword or standard C macro"
	cType         = "a C standard type name (<stdint.h>, <stddef.h>)"
	goKeyword     = "a Go keyword"
	goPredeclared = "a Go predeclared identifier"
	goSpecial     = "special in Go (package main, func init)"
)

// ReservedWord is one entry of the table of reserved words.
type ReservedWord struct {
	Word string
	What string // "a C keyword", ...
}

// ReservedWords returns the table of words that generated identifiers
// must not be, in a fixed order:
//
//   - the C99 keywords (ISO/IEC 9899:1999 6.4.1) and the C11 _Keywords
//     (ISO/IEC 9899:2011 6.4.1);
//   - the lower-case C23 keywords, which are also the macros of
//     <stdbool.h>, <stdalign.h>, <stdnoreturn.h> and <assert.h> in C99/C11
//     code, and complex and imaginary of <complex.h>;
//   - the type names of <stdint.h> (C99 7.18: exact-width, minimum-width,
//     fastest minimum-width, pointer-holding and greatest-width integer
//     types) and <stddef.h> (C99 7.17), which the generated code includes
//     or which every firmware has in scope;
//   - the Go keywords and predeclared identifiers (The Go Programming
//     Language Specification, "Keywords" and "Predeclared identifiers"),
//     and main and init, which Go gives special meaning as package and
//     function names.
//
// The _Keywords cannot match IdentPattern; they are listed so that the
// table is correct on its own. C's other reserved identifiers all begin
// with an underscore, which the pattern excludes.
func ReservedWords() []ReservedWord {
	t := reservedTable()
	return t[:]
}

// reservedTable is the table of ReservedWords as an array value, which
// Reserved scans without allocating.
func reservedTable() [144]ReservedWord {
	return [...]ReservedWord{
		{"auto", cKeyword},
		{"break", cKeyword},
		{"case", cKeyword},
		{"char", cKeyword},
		{"const", cKeyword},
		{"continue", cKeyword},
		{"default", cKeyword},
		{"do", cKeyword},
		{"double", cKeyword},
		{"else", cKeyword},
		{"enum", cKeyword},
		{"extern", cKeyword},
		{"float", cKeyword},
		{"for", cKeyword},
		{"goto", cKeyword},
		{"if", cKeyword},
		{"inline", cKeyword},
		{"int", cKeyword},
		{"long", cKeyword},
		{"register", cKeyword},
		{"restrict", cKeyword},
		{"return", cKeyword},
		{"short", cKeyword},
		{"signed", cKeyword},
		{"sizeof", cKeyword},
		{"static", cKeyword},
		{"struct", cKeyword},
		{"switch", cKeyword},
		{"typedef", cKeyword},
		{"union", cKeyword},
		{"unsigned", cKeyword},
		{"void", cKeyword},
		{"volatile", cKeyword},
		{"while", cKeyword},
		{"_Bool", cKeyword},
		{"_Complex", cKeyword},
		{"_Imaginary", cKeyword},
		{"_Alignas", cKeyword},
		{"_Alignof", cKeyword},
		{"_Atomic", cKeyword},
		{"_Generic", cKeyword},
		{"_Noreturn", cKeyword},
		{"_Static_assert", cKeyword},
		{"_Thread_local", cKeyword},
		{"alignas", c23Word},
		{"alignof", c23Word},
		{"bool", c23Word},
		{"constexpr", c23Word},
		{"false", c23Word},
		{"nullptr", c23Word},
		{"static_assert", c23Word},
		{"thread_local", c23Word},
		{"true", c23Word},
		{"typeof", c23Word},
		{"typeof_unqual", c23Word},
		{"noreturn", c23Word},
		{"complex", c23Word},
		{"imaginary", c23Word},
		{"int8_t", cType},
		{"int16_t", cType},
		{"int32_t", cType},
		{"int64_t", cType},
		{"uint8_t", cType},
		{"uint16_t", cType},
		{"uint32_t", cType},
		{"uint64_t", cType},
		{"int_least8_t", cType},
		{"int_least16_t", cType},
		{"int_least32_t", cType},
		{"int_least64_t", cType},
		{"uint_least8_t", cType},
		{"uint_least16_t", cType},
		{"uint_least32_t", cType},
		{"uint_least64_t", cType},
		{"int_fast8_t", cType},
		{"int_fast16_t", cType},
		{"int_fast32_t", cType},
		{"int_fast64_t", cType},
		{"uint_fast8_t", cType},
		{"uint_fast16_t", cType},
		{"uint_fast32_t", cType},
		{"uint_fast64_t", cType},
		{"intptr_t", cType},
		{"uintptr_t", cType},
		{"intmax_t", cType},
		{"uintmax_t", cType},
		{"size_t", cType},
		{"ptrdiff_t", cType},
		{"wchar_t", cType},
		{"max_align_t", cType},
		// The Go keywords not already C keywords above (break, case, const,
		// continue, default, else, for, goto, if, return, struct, switch).
		{"chan", goKeyword},
		{"defer", goKeyword},
		{"fallthrough", goKeyword},
		{"func", goKeyword},
		{"go", goKeyword},
		{"import", goKeyword},
		{"interface", goKeyword},
		{"map", goKeyword},
		{"package", goKeyword},
		{"range", goKeyword},
		{"select", goKeyword},
		{"type", goKeyword},
		{"var", goKeyword},
		// Go's predeclared identifiers not already listed above (bool,
		// complex, false, true and int are C words too).
		{"any", goPredeclared},
		{"byte", goPredeclared},
		{"comparable", goPredeclared},
		{"complex64", goPredeclared},
		{"complex128", goPredeclared},
		{"error", goPredeclared},
		{"float32", goPredeclared},
		{"float64", goPredeclared},
		{"int8", goPredeclared},
		{"int16", goPredeclared},
		{"int32", goPredeclared},
		{"int64", goPredeclared},
		{"rune", goPredeclared},
		{"string", goPredeclared},
		{"uint", goPredeclared},
		{"uint8", goPredeclared},
		{"uint16", goPredeclared},
		{"uint32", goPredeclared},
		{"uint64", goPredeclared},
		{"uintptr", goPredeclared},
		{"iota", goPredeclared},
		{"nil", goPredeclared},
		{"append", goPredeclared},
		{"cap", goPredeclared},
		{"clear", goPredeclared},
		{"close", goPredeclared},
		{"copy", goPredeclared},
		{"delete", goPredeclared},
		{"imag", goPredeclared},
		{"len", goPredeclared},
		{"make", goPredeclared},
		{"max", goPredeclared},
		{"min", goPredeclared},
		{"new", goPredeclared},
		{"panic", goPredeclared},
		{"print", goPredeclared},
		{"println", goPredeclared},
		{"real", goPredeclared},
		{"recover", goPredeclared},
		{"main", goSpecial},
		{"init", goSpecial},
	}
}

// Reserved says what reserves the word w ("a C keyword", ...), or "".
func Reserved(w string) string {
	t := reservedTable()
	for _, r := range t {
		if r.Word == w {
			return r.What
		}
	}
	return ""
}
