package airframe

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/pelletier/go-toml/v2"
)

// checker collects the problems of one file.
type checker struct {
	path string
	errs []*FieldError
	// dropped counts the problems found beyond MaxErrors, which are
	// counted but not kept (Parse reports how many).
	dropped int
}

// fail records a problem at key with the offending value v (nil: none).
// Beyond MaxErrors problems it only counts them: a file with thousands of
// mistakes is the wrong file, and listing them all costs time and memory
// for nothing.
func (c *checker) fail(key string, v any, format string, args ...any) {
	if len(c.errs) >= MaxErrors {
		c.dropped++
		return
	}
	fe := &FieldError{Path: c.path, Key: key, Msg: fmt.Sprintf(format, args...)}
	if v != nil {
		fe.Value = formatValue(v)
	}
	c.errs = append(c.errs, fe)
}

// table is one TOML table being checked against its schema.
type table struct {
	c       *checker
	key     string         // key path of the table, "" at the top level
	m       map[string]any // its keys
	allowed []string       // the keys the schema allows, in schema order
}

// newTable wraps m. It reports every key of m that the schema does not
// allow, naming the allowed ones.
func (c *checker) newTable(key string, m map[string]any, allowed ...string) *table {
	t := &table{c: c, key: key, m: m, allowed: allowed}
	for _, k := range sortedKeys(m) {
		if slices.Contains(allowed, k) {
			continue
		}
		where := "at the top level"
		if key != "" {
			where = "in [" + key + "]"
		}
		t.c.fail(t.sub(k), valueOrNil(m[k]), "unknown key; allowed %s: %s", where, strings.Join(allowed, ", "))
	}
	return t
}

// sub returns the key path of the child k.
func (t *table) sub(k string) string { return joinKey(t.key, k) }

// has reports whether key k is present.
func (t *table) has(k string) bool {
	_, ok := t.m[k]
	return ok
}

// present returns those of keys that are present, in the order given.
func (t *table) present(keys ...string) []string {
	var out []string
	for _, k := range keys {
		if t.has(k) {
			out = append(out, k)
		}
	}
	return out
}

// subtable returns the child table k, or nil (reporting the problem when
// the key holds something else, or when it is absent and required).
func (t *table) subtable(k string, required bool, what string) map[string]any {
	v, ok := t.m[k]
	if !ok {
		if required {
			t.c.fail(t.sub(k), nil, "required: a table (%s)", what)
		}
		return nil
	}
	m, ok := v.(map[string]any)
	if !ok {
		t.c.fail(t.sub(k), v, "must be a table (%s), not %s", what, kind(v))
		return nil
	}
	return m
}

// numRule describes the allowed values of a number key.
type numRule struct {
	desc string // the allowed range, e.g. "> 0", "in (0, 1)"
	unit string // e.g. "s", "Hz"; "" for a pure number
	ok   func(float64) bool
}

// allowed renders the rule for messages: "> 0 (s)".
func (r numRule) allowed() string {
	if r.unit == "" {
		return r.desc
	}
	return r.desc + " (" + r.unit + ")"
}

// checkNumber validates the number v, decoded from raw, against the rule
// at key.
func (c *checker) checkNumber(key string, raw any, v float64, r numRule) bool {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		c.fail(key, raw, "must be a finite number %s", r.allowed())
		return false
	}
	if r.ok != nil && !r.ok(v) {
		c.fail(key, raw, "must be %s", r.allowed())
		return false
	}
	return true
}

// intervalRule describes the allowed values of an interval key
// [low, high].
type intervalRule struct {
	desc string // the allowed intervals, e.g. "0 < low ≤ 1 ≤ high ≤ 10"
	unit string // e.g. "s"; "" for pure numbers
	ok   func(lo, hi float64) bool
}

// allowed renders the rule for messages: "[low, high] with … (s)".
func (r intervalRule) allowed() string {
	s := "[low, high] with " + r.desc
	if r.unit != "" {
		s += " (" + r.unit + ")"
	}
	return s
}

// interval checks the interval v = [low, high] at key: two finite numbers,
// low ≤ high, satisfying the rule.
func (c *checker) interval(key string, v any, r intervalRule) ([2]float64, bool) {
	arr, ok := v.([]any)
	if !ok {
		c.fail(key, valueOrNil(v), "must be an array %s, not %s", r.allowed(), kind(v))
		return [2]float64{}, false
	}
	if len(arr) != 2 {
		c.fail(key, v, "must be an array of 2 numbers %s, not %s", r.allowed(), count(len(arr), "element"))
		return [2]float64{}, false
	}
	lo, okL := asNumber(arr[0])
	hi, okH := asNumber(arr[1])
	switch {
	case !okL || !okH:
		c.fail(key, v, "must be two numbers %s", r.allowed())
	case math.IsNaN(lo) || math.IsInf(lo, 0) || math.IsNaN(hi) || math.IsInf(hi, 0):
		c.fail(key, v, "must be two finite numbers %s", r.allowed())
	case lo > hi:
		c.fail(key, v, "low > high: must be %s", r.allowed())
	case r.ok != nil && !r.ok(lo, hi):
		c.fail(key, v, "must be %s", r.allowed())
	default:
		return [2]float64{lo, hi}, true
	}
	return [2]float64{}, false
}

// asNumber converts a TOML integer or float to float64. TOML keeps the two
// apart, but a design value of 1000 means 1000.0, so both are accepted.
func asNumber(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case int64:
		return float64(x), true
	}
	return 0, false
}

// number reads number key k. It returns the value and whether it is
// present and valid; def is returned when k is absent and not required.
func (t *table) number(k string, r numRule, required bool, def float64) (float64, bool) {
	v, ok := t.m[k]
	if !ok {
		if required {
			t.c.fail(t.sub(k), nil, "required: a number %s", r.allowed())
			return 0, false
		}
		return def, true
	}
	return t.c.numberValue(t.sub(k), v, r)
}

// numberValue validates the value v found at key.
func (c *checker) numberValue(key string, v any, r numRule) (float64, bool) {
	x, ok := asNumber(v)
	if !ok {
		c.fail(key, valueOrNil(v), "must be a number %s, not %s", r.allowed(), kind(v))
		return 0, false
	}
	if !c.checkNumber(key, v, x, r) {
		return 0, false
	}
	return x, true
}

// integer reads integer key k, which must lie in [lo, hi].
func (t *table) integer(k string, lo, hi int64, unit string, def int64) (int64, bool) {
	v, ok := t.m[k]
	if !ok {
		return def, true
	}
	allowed := fmt.Sprintf("an integer in %d..%d (%s)", lo, hi, unit)
	x, ok := v.(int64)
	if !ok {
		t.c.fail(t.sub(k), valueOrNil(v), "must be %s, not %s", allowed, kind(v))
		return 0, false
	}
	if x < lo || x > hi {
		t.c.fail(t.sub(k), v, "must be %s", allowed)
		return 0, false
	}
	return x, true
}

// str reads string key k; def is returned when it is absent and not required.
func (t *table) str(k string, required bool, def, what string) (string, bool) {
	v, ok := t.m[k]
	if !ok {
		if required {
			t.c.fail(t.sub(k), nil, "required: a string (%s)", what)
			return "", false
		}
		return def, true
	}
	s, ok := v.(string)
	if !ok {
		t.c.fail(t.sub(k), valueOrNil(v), "must be a string (%s), not %s", what, kind(v))
		return "", false
	}
	return s, true
}

// enum reads string key k, which must be one of choices.
func (t *table) enum(k string, def string, choices ...string) (string, bool) {
	quoted := make([]string, len(choices))
	for i, c := range choices {
		quoted[i] = strconv.Quote(c)
	}
	allowed := "one of " + strings.Join(quoted, ", ")
	s, ok := t.str(k, false, def, allowed)
	if !ok {
		return "", false
	}
	if !slices.Contains(choices, s) {
		t.c.fail(t.sub(k), s, "must be %s", allowed)
		return "", false
	}
	return s, true
}

// boolean reads boolean key k.
func (t *table) boolean(k string, def bool) (bool, bool) {
	v, ok := t.m[k]
	if !ok {
		return def, true
	}
	b, ok := v.(bool)
	if !ok {
		t.c.fail(t.sub(k), valueOrNil(v), "must be true or false, not %s", kind(v))
		return false, false
	}
	return b, true
}

// ident reads identifier key k (required).
func (t *table) ident(k, what string) (string, bool) {
	s, ok := t.str(k, true, "", what+", "+IdentPattern)
	if !ok {
		return "", false
	}
	if msg := CheckName(s); msg != "" {
		t.c.fail(t.sub(k), s, "%s", msg)
		return "", false
	}
	return s, true
}

// roots reads a list of poles or zeros: each element is a real number or
// a pair [re, im] with im > 0 meaning the conjugate pair re ± j·im. The
// result lists the pair as re + j·im followed by re − j·im; it is nil when
// the list is empty.
func (t *table) roots(k string) ([]complex128, bool) {
	v := t.m[k]
	arr, ok := v.([]any)
	if !ok {
		t.c.fail(t.sub(k), valueOrNil(v), "must be an array of real numbers and pairs [re, im], not %s", kind(v))
		return nil, false
	}
	var out []complex128
	good := true
	for i, e := range arr {
		key := fmt.Sprintf("%s[%d]", t.sub(k), i)
		if x, isNum := asNumber(e); isNum {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				t.c.fail(key, e, "must be a finite number")
				good = false
				continue
			}
			out = append(out, complex(x, 0))
			continue
		}
		pair, isArr := e.([]any)
		if !isArr {
			t.c.fail(key, valueOrNil(e), "must be a real number or a pair [re, im], not %s", kind(e))
			good = false
			continue
		}
		if len(pair) != 2 {
			t.c.fail(key, e, "a pair must have 2 elements [re, im] (meaning re ± j·im), not %d", len(pair))
			good = false
			continue
		}
		re, okRe := asNumber(pair[0])
		im, okIm := asNumber(pair[1])
		if !okRe || !okIm {
			t.c.fail(key, e, "a pair [re, im] must hold two numbers")
			good = false
			continue
		}
		if math.IsNaN(re) || math.IsInf(re, 0) || math.IsNaN(im) || math.IsInf(im, 0) {
			t.c.fail(key, e, "a pair [re, im] must hold finite numbers")
			good = false
			continue
		}
		switch {
		case im == 0:
			t.c.fail(key, e, "im = 0 is a real root: use a real number (%s)", formatValue(pair[0]))
			good = false
			continue
		case im < 0:
			t.c.fail(key, e, "im must be > 0: the pair [re, im] already means re ± j·im")
			good = false
			continue
		}
		out = append(out, complex(re, im), complex(re, -im))
	}
	if !good {
		return nil, false
	}
	return out, true
}

// joinKey appends k to the dotted key path, quoting k as TOML does when it
// is not a bare key.
func joinKey(path, k string) string {
	if !isBareKey(k) {
		k = strconv.Quote(k)
	}
	if path == "" {
		return k
	}
	return path + "." + k
}

// isBareKey reports whether k can be written unquoted in TOML.
func isBareKey(k string) bool {
	if k == "" {
		return false
	}
	for i := 0; i < len(k); i++ {
		c := k[i]
		if !('a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' || c == '_' || c == '-') {
			return false
		}
	}
	return true
}

// sortedKeys returns the keys of m in byte order, for deterministic walks.
func sortedKeys(m map[string]any) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

// valueOrNil returns v, or nil when v is a table: messages show scalars
// and arrays, not whole tables.
func valueOrNil(v any) any {
	if _, ok := v.(map[string]any); ok {
		return nil
	}
	return v
}

// kind names the TOML type of v for messages.
func kind(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64:
		return "an integer"
	case float64:
		return "a float"
	case bool:
		return "a boolean"
	case []any:
		return "an array"
	case map[string]any:
		return "a table"
	case time.Time, toml.LocalDate, toml.LocalTime, toml.LocalDateTime:
		return "a date/time"
	}
	return fmt.Sprintf("a %T", v)
}

// maxValueRunes bounds the value shown in a message.
const maxValueRunes = 72

// formatValue renders v as TOML-like text, shortened when long.
func formatValue(v any) string {
	s := formatRaw(v)
	if utf8.RuneCountInString(s) > maxValueRunes {
		r := []rune(s)
		s = string(r[:maxValueRunes-1]) + "…"
	}
	return s
}

func formatRaw(v any) string {
	switch x := v.(type) {
	case string:
		return strconv.Quote(x)
	case int64:
		return strconv.FormatInt(x, 10)
	case float64:
		return formatFloat(x)
	case bool:
		return strconv.FormatBool(x)
	case []any:
		parts := make([]string, len(x))
		for i, e := range x {
			parts[i] = formatRaw(e)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case map[string]any:
		keys := sortedKeys(x)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = joinKey("", k) + " = " + formatRaw(x[k])
		}
		return "{" + strings.Join(parts, ", ") + "}"
	case time.Time:
		return x.Format(time.RFC3339Nano)
	case fmt.Stringer:
		return x.String()
	}
	return fmt.Sprint(v)
}

// formatFloat writes x the way TOML would: nan, inf, and a ".0" on
// integral values so that a float stays recognizable as one.
func formatFloat(x float64) string {
	switch {
	case math.IsNaN(x):
		return "nan"
	case math.IsInf(x, 1):
		return "inf"
	case math.IsInf(x, -1):
		return "-inf"
	}
	s := strconv.FormatFloat(x, 'g', -1, 64)
	if !strings.ContainsAny(s, ".e") {
		s += ".0"
	}
	return s
}
