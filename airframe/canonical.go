package airframe

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Canonical returns the canonical text of the file's values: the decoded
// TOML tree (Raw) written with its keys sorted, so that two files with the
// same values give the same text whatever their comments, layout, quoting
// and order of keys. It is locusmith's own notation, meant for hashing:
//
//	table   {"key":value,"key":value}   keys quoted as Go strings, sorted by bytes
//	array   [value,value]
//	string  "text"                      Go quoting (strconv.Quote)
//	number  n:<shortest decimal of its float64 value>
//	        an integer that float64 does not hold exactly: i:<decimal>
//	bool    true, false
//	other   t:<Go type>:<%v>            (dates and times, which no key accepts)
//
// A number is one kind, integer or not: the decoder accepts an integer
// wherever a number is expected (1000 means 1000.0), so both spellings
// are the same value here. A File not made by Parse (Raw nil) has the
// canonical text of an empty table.
func (f *File) Canonical() []byte {
	var b strings.Builder
	canonicalValue(&b, f.Raw)
	return []byte(b.String())
}

// CanonicalSHA256 is the hexadecimal SHA-256 of Canonical: the hash of
// the input that the generated code carries. Unlike SHA256 (the hash of
// the file's bytes), a comment, whitespace or key-order edit leaves it
// unchanged, and a changed value changes it.
func (f *File) CanonicalSHA256() string {
	sum := sha256.Sum256(f.Canonical())
	return hex.EncodeToString(sum[:])
}

func canonicalValue(b *strings.Builder, v any) {
	switch x := v.(type) {
	case nil:
		b.WriteString("{}")
	case map[string]any:
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		b.WriteByte('{')
		for i, k := range keys {
			if i > 0 {
				b.WriteByte(',')
			}
			b.WriteString(strconv.Quote(k))
			b.WriteByte(':')
			canonicalValue(b, x[k])
		}
		b.WriteByte('}')
	case []any:
		canonicalList(b, len(x), func(i int) any { return x[i] })
	case []map[string]any: // an array of tables, as some decoders give it
		canonicalList(b, len(x), func(i int) any { return x[i] })
	case string:
		b.WriteString(strconv.Quote(x))
	case bool:
		b.WriteString(strconv.FormatBool(x))
	case float64:
		b.WriteString("n:" + canonicalFloat(x))
	case int64:
		if f := float64(x); f < 1<<63 && int64(f) == x {
			b.WriteString("n:" + canonicalFloat(f))
		} else {
			b.WriteString("i:" + strconv.FormatInt(x, 10))
		}
	default:
		fmt.Fprintf(b, "t:%T:%v", x, x)
	}
}

// canonicalFloat is the shortest decimal that reads back as x; −0 and +0
// are different values and stay apart.
func canonicalFloat(x float64) string {
	if x == 0 && math.Signbit(x) {
		return "-0"
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// canonicalList writes the n elements at(0) … at(n−1) as a list.
func canonicalList(b *strings.Builder, n int, at func(int) any) {
	b.WriteByte('[')
	for i := range n {
		if i > 0 {
			b.WriteByte(',')
		}
		canonicalValue(b, at(i))
	}
	b.WriteByte(']')
}
