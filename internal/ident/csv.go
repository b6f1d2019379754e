package ident

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// MaxSamples is the most data rows read from a log: 2^20, 17 minutes at
// 1 kHz, far more than the few thousand samples the four parameters need;
// a longer log is read to there and the rest ignored (the result says
// so), so that memory and time stay bounded (about 280 bytes and 2 µs per
// sample) whatever the file's size.
const MaxSamples = 1 << 20

// MaxLineBytes is the longest line of a log, in bytes. A logged row is a
// few dozen bytes per column; 64 KiB holds thousands of columns. Without
// a bound the CSV reader holds a whole line, however long: a file of one
// 150 MB line took 1.4 GB before its first field was refused
// (memory O(samples kept), not O(file)).
const MaxLineBytes = 1 << 16

// Bounds of the median sample interval of a log, s: the loop rates of the
// airframe file (loop_hz ≤ 1e6) and a log at least one sample a second;
// outside them the delay search would hold millions of candidates.
const (
	minInterval = 1e-6
	maxInterval = 1.0
)

// MinSamples is the fewest data rows a log may have. Below a few hundred
// samples there is not enough data for the noise to average out of four
// physical parameters plus the per-segment initial state, whatever the
// sample rate (common practice in identification is tens of samples per
// parameter and several time constants of the slowest mode).
const MinSamples = 200

// Columns names the CSV columns to read and the unit of the time column.
type Columns struct {
	Time, Command, Rate string
	// Excitation names the column of an excitation injected into a closed
	// loop (added to the controller's output or to the setpoint); empty:
	// none is read. It is what the closed-loop frequency-response estimate
	// refers to (Spectra.Response): without it a closed-loop estimate is
	// biased.
	Excitation string
	// TimeScale converts the time column to seconds (1 for s, 1e-3 for ms,
	// 1e-6 for µs). Zero means 1.
	TimeScale float64
	// RateScale multiplies the rate column as it is read (π/180 for a log
	// in °/s: the airframe file's rates are in rad/s). Zero means 1.
	RateScale float64
	// Delimiter separates the fields (zero: ','). It may not be '#', '"',
	// a line break or the Unicode replacement character.
	Delimiter rune
}

// DefaultColumns are the column names used when none are given.
func DefaultColumns() Columns {
	return Columns{Time: "time", Command: "command", Rate: "rate", TimeScale: 1}
}

// Log is a logged command and measured rate, one sample per data row.
type Log struct {
	// File names the source in messages.
	File string
	// Time (s, strictly increasing), Command and Rate, one entry per
	// sample.
	Time, Command, Rate []float64
	// Line is the 1-based source line of each sample (nil for a Log built
	// in code).
	Line []int
	// Excitation is the injected excitation, one entry per sample (nil
	// unless Columns.Excitation names a column).
	Excitation []float64
	// Breaks are the indices of the samples that start a new segment
	// because one or more rows before them held a NaN (a sensor dropout,
	// a logger's missing value): the data on either side are fitted with
	// their own initial states and never interpolated across, as after a
	// gap in the timestamps. Ascending; nil when no row was dropped.
	Breaks []int
	// Dropped counts the rows skipped for a NaN.
	Dropped int
	// Truncated is set when the file had more than MaxSamples data rows:
	// the log holds the first MaxSamples.
	Truncated bool
}

// InputError is bad input: the file, the line (0 when not tied to one) and
// what is wrong and what is allowed.
type InputError struct {
	File string
	Line int
	Msg  string
}

func (e *InputError) Error() string {
	switch {
	case e.File == "" && e.Line == 0:
		return e.Msg
	case e.Line == 0:
		return e.File + ": " + e.Msg
	default:
		return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
	}
}

// IsInputError reports whether err is (or wraps) an *InputError: bad input
// rather than a failure of the fit.
func IsInputError(err error) bool {
	var ie *InputError
	return errors.As(err, &ie)
}

// ReadCSV reads a log from r. name labels the source in errors. The first
// non-comment row is the header; cols chooses the columns by name (exact
// match after trimming blanks; other columns are ignored). Rows starting
// with '#' and blank lines are skipped. Every selected field must be a
// finite number or NaN, time must increase strictly, there must be at
// least MinSamples rows and the command must not be constant. A row with
// a NaN in a selected column is skipped and the log split there
// (Log.Breaks): loggers write NaN for a sample they lost, and rejecting
// the whole file for it threw away good data on either side. Errors are
// *InputError with the line number.
func ReadCSV(r io.Reader, name string, cols Columns) (*Log, error) {
	if cols.TimeScale == 0 {
		cols.TimeScale = 1
	}
	if !(cols.TimeScale > 0) || math.IsInf(cols.TimeScale, 0) {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("time scale %g: must be a positive finite number", cols.TimeScale)}
	}
	if cols.RateScale == 0 {
		cols.RateScale = 1
	}
	if !(cols.RateScale > 0) || math.IsInf(cols.RateScale, 0) {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("rate scale %g: must be a positive finite number", cols.RateScale)}
	}
	if cols.Delimiter == 0 {
		cols.Delimiter = ','
	}
	if !ValidDelimiter(cols.Delimiter) {
		return nil, &InputError{File: name, Msg: fmt.Sprintf("delimiter %q: must be one character other than '#', '\"', a line break or a space", cols.Delimiter)}
	}
	fail := func(line int, format string, a ...any) error {
		return &InputError{File: name, Line: line, Msg: fmt.Sprintf(format, a...)}
	}
	br := bufio.NewReader(&lineLimit{r: r, line: 1})
	// A UTF-8 byte-order mark before the header is common in files saved
	// by spreadsheets; it is not part of the first column's name.
	if b, err := br.Peek(3); err == nil && string(b) == "\xef\xbb\xbf" {
		br.Discard(3)
	}
	cr := csv.NewReader(br)
	cr.Comment = '#'
	cr.Comma = cols.Delimiter
	cr.FieldsPerRecord = -1 // checked here, with a clearer message
	cr.ReuseRecord = true
	cr.TrimLeadingSpace = true

	header, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, fail(1, "no header row: the file is empty; the first row must name the columns (%s, %s, %s)", cols.Time, cols.Command, cols.Rate)
	}
	if err != nil {
		return nil, csvError(name, err)
	}
	hline, _ := cr.FieldPos(0)
	names := make([]string, len(header))
	numeric := true
	for i, h := range header {
		names[i] = strings.TrimSpace(h)
		if _, err := strconv.ParseFloat(names[i], 64); err != nil {
			numeric = false
		}
	}
	if numeric {
		return nil, fail(hline, "no header row: the first row holds numbers; the first row must name the columns (%s, %s, %s)", cols.Time, cols.Command, cols.Rate)
	}
	want := []string{cols.Time, cols.Command, cols.Rate}
	if cols.Excitation != "" {
		want = append(want, cols.Excitation)
	}
	idx := make([]int, len(want))
	for j, want := range want {
		idx[j] = -1
		for i, h := range names {
			if h != want {
				continue
			}
			if idx[j] >= 0 {
				return nil, fail(hline, "column %q appears twice in the header (columns %d and %d)", want, idx[j]+1, i+1)
			}
			idx[j] = i
		}
		if idx[j] < 0 {
			if j == 3 {
				return nil, fail(hline, "no excitation column %q in the header (it has %s); name it with --excitation, or leave --excitation out for an open-loop log", want, quoteList(names))
			}
			if len(names) == 1 && cols.Delimiter == ',' && strings.ContainsAny(names[0], ";\t|") {
				return nil, fail(hline, "no column %q in the header: it has one column, %s; is the delimiter another character (--delimiter)?", want, quoteList(names))
			}
			return nil, fail(hline, "no column %q in the header (it has %s); choose the columns with --time, --command and --rate", want, quoteList(names))
		}
	}
	nf := len(header)

	l := &Log{File: name}
	parsed := make([]float64, len(idx))
	broken := false // a NaN row since the last sample kept
	for {
		if len(l.Time) == MaxSamples {
			l.Truncated = true
			break
		}
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != nf {
			return nil, fail(line, "%d fields, but the header has %d", len(rec), nf)
		}
		missing := false
		for j, i := range idx {
			s := strings.TrimSpace(rec[i])
			v, err := strconv.ParseFloat(s, 64)
			if err == nil && math.IsNaN(v) {
				missing = true
				continue
			}
			if err != nil || math.IsInf(v, 0) {
				return nil, fail(line, "column %q: %q is not a finite number (NaN marks a lost sample and splits the log)", names[i], clip(s))
			}
			parsed[j] = v
		}
		if missing {
			l.Dropped++
			broken = true
			continue
		}
		t := parsed[0] * cols.TimeScale
		if math.IsInf(t, 0) {
			return nil, fail(line, "column %q: %g s is out of range", names[idx[0]], t)
		}
		if n := len(l.Time); n > 0 {
			if !(t > l.Time[n-1]) {
				return nil, fail(line, "column %q: time %s is not after %s on line %d; time must increase strictly",
					names[idx[0]], fmtG(parsed[0]), fmtG(l.Time[n-1]/cols.TimeScale), l.Line[n-1])
			}
			if math.IsInf(t-l.Time[n-1], 0) {
				return nil, fail(line, "column %q: the step from the previous time is out of range", names[idx[0]])
			}
		}
		if broken && len(l.Time) > 0 {
			l.Breaks = append(l.Breaks, len(l.Time))
		}
		broken = false
		l.Time = append(l.Time, t)
		l.Command = append(l.Command, parsed[1])
		l.Rate = append(l.Rate, parsed[2]*cols.RateScale)
		if len(idx) > 3 {
			l.Excitation = append(l.Excitation, parsed[3])
		}
		l.Line = append(l.Line, line)
	}
	if len(l.Time) < MinSamples {
		last := hline
		if n := len(l.Line); n > 0 {
			last = l.Line[n-1]
		}
		return nil, fail(last, "only %d samples; at least %d are needed to identify the plant", len(l.Time), MinSamples)
	}
	if lo, hi := minMax(l.Command); lo == hi {
		return nil, fail(l.Line[0], "column %q is constant (%s on every row to line %d): nothing to identify; %s",
			names[idx[1]], fmtG(lo), l.Line[len(l.Line)-1], ExcitationAdvice)
	}
	if c := changes(l.Command); c < MinChanges {
		return nil, fail(l.Line[0], "column %q changes value only %d time(s) over %d rows (to line %d), fewer than the %d the fit needs: too little excitation; %s",
			names[idx[1]], c, len(l.Command), l.Line[len(l.Line)-1], MinChanges, ExcitationAdvice)
	}
	if cols.Excitation != "" {
		if lo, hi := minMax(l.Excitation); lo == hi {
			return nil, fail(l.Line[0], "excitation column %q is constant (%s on every row to line %d): it excites nothing; inject a broadband signal (a chirp, a multisine or random steps) there, or leave --excitation out",
				names[idx[3]], fmtG(lo), l.Line[len(l.Line)-1])
		}
	}
	return l, nil
}

// ExcitationAdvice says what excitation identification needs: content at
// and above the motor's corner frequency, with a zero mean (doc.go,
// Identifiability).
const ExcitationAdvice = "the log must excite the axis: command doublets of a few samples to a few hundred ms, random steps or a frequency sweep (chirp) from about 1 Hz to a third of the sample rate, zero-mean, large enough that the rate moves well above the gyro noise"

// ValidDelimiter reports whether r can separate the fields of a log: not
// the comment mark '#', the quote, a line break, a space (fields are
// trimmed of blanks) or the replacement character, as encoding/csv
// requires.
func ValidDelimiter(r rune) bool {
	return r != '#' && r != '"' && r != '\r' && r != '\n' && r != ' ' && r != utf8RuneError && r > 0 && r != 0xFEFF
}

// csvError converts an encoding/csv error into an *InputError with its
// line.
func csvError(name string, err error) error {
	var le *lineTooLong
	if errors.As(err, &le) {
		return &InputError{File: name, Line: le.line, Msg: fmt.Sprintf("line longer than %d bytes: a log has one sample per line, a few dozen bytes per column (is this a CSV log?)", MaxLineBytes)}
	}
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &InputError{File: name, Line: pe.Line, Msg: "malformed CSV: " + pe.Err.Error()}
	}
	return &InputError{File: name, Msg: "reading: " + err.Error()}
}

func quoteList(names []string) string {
	const maxShown = 12
	var b strings.Builder
	for i, n := range names {
		if i == maxShown {
			fmt.Fprintf(&b, ", … (%d more)", len(names)-maxShown)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(strconv.Quote(clip(n)))
	}
	return b.String()
}

// clip shortens s for an error message.
func clip(s string) string {
	const max = 40
	if r := []rune(s); len(r) > max {
		return string(r[:max]) + "…"
	}
	return s
}

func fmtG(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func minMax(v []float64) (lo, hi float64) {
	if len(v) == 0 {
		return 0, 0
	}
	lo, hi = v[0], v[0]
	for _, x := range v[1:] {
		lo = math.Min(lo, x)
		hi = math.Max(hi, x)
	}
	return lo, hi
}

// lineLimit passes r through and fails, with a *lineTooLong, at the first
// line longer than MaxLineBytes, so that the CSV reader above it never
// holds more than that of one line.
type lineLimit struct {
	r    io.Reader
	line int // 1-based number of the line being read
	n    int // bytes of it so far
	err  error
}

// lineTooLong is the error of a line longer than MaxLineBytes.
type lineTooLong struct{ line int }

func (e *lineTooLong) Error() string {
	return fmt.Sprintf("line %d is longer than %d bytes", e.line, MaxLineBytes)
}

func (l *lineLimit) Read(p []byte) (int, error) {
	if l.err != nil {
		return 0, l.err
	}
	n, err := l.r.Read(p)
	for i, b := range p[:n] {
		if b == '\n' {
			l.line++
			l.n = 0
			continue
		}
		l.n++
		if l.n > MaxLineBytes {
			// The bytes before the long line go on; the error comes when
			// the reader asks for more.
			l.err = &lineTooLong{line: l.line}
			if i == 0 {
				return 0, l.err
			}
			return i, nil
		}
	}
	return n, err
}

// MinChanges is the fewest changes of value the command must make: one
// doublet (up, down, back) is three, and a log with fewer holds at most a
// step and its return, whose response cannot separate the motor lag from
// the delay. Four is the least that holds more than one doublet's edges.
const MinChanges = 4

// changes counts the samples whose value differs from the previous one.
func changes(v []float64) int {
	n := 0
	for i := 1; i < len(v); i++ {
		if v[i] != v[i-1] {
			n++
		}
	}
	return n
}
