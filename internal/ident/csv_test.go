package ident

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"
)

// rowsCSV is a header and n rows made by row.
func rowsCSV(header string, n int, row func(i int) string) string {
	var b strings.Builder
	b.WriteString(header + "\n")
	for i := 0; i < n; i++ {
		b.WriteString(row(i) + "\n")
	}
	return b.String()
}

func goodRow(i int) string {
	return fmt.Sprintf("%de-3,%g,%d", i, math.Sin(float64(i)/10), i%13)
}

func TestReadCSV(t *testing.T) {
	in := "\xef\xbb\xbf# demo data: a bench log\r\n" +
		rowsCSV("gyro, t_ms ,extra,cmd", 250, func(i int) string {
			return fmt.Sprintf("%d,%g,x,%g", i%5, float64(i), float64(i%3))
		})
	in = strings.ReplaceAll(in, "\n", "\r\n")
	l, err := ReadCSV(strings.NewReader(in), "a.csv", Columns{Time: "t_ms", Command: "cmd", Rate: "gyro", TimeScale: 1e-3})
	if err != nil {
		t.Fatal(err)
	}
	if len(l.Time) != 250 || l.Line[0] != 3 || l.Line[249] != 252 {
		t.Fatalf("got %d samples, lines %d..%d; want 250, 3..252", len(l.Time), l.Line[0], l.Line[len(l.Line)-1])
	}
	// Hand values: row 7 is time 7 ms, command 7 mod 3 = 1, rate 7 mod 5 = 2.
	if l.Time[7] != 7e-3 || l.Command[7] != 1 || l.Rate[7] != 2 {
		t.Errorf("row 7 = %g, %g, %g; want 0.007, 1, 2", l.Time[7], l.Command[7], l.Rate[7])
	}
}

// TestReadCSVErrors checks each kind of bad input: an *InputError whose
// message names the file and the line and says what is wrong.
func TestReadCSVErrors(t *testing.T) {
	hdr := "time,command,rate"
	cases := []struct {
		name, in, want string
	}{
		{"empty", "", "x.csv:1: no header row: the file is empty"},
		{"comments only", "# nothing\n\n", "x.csv:1: no header row"},
		{"numbers first", rowsCSV("0,1,2", 300, goodRow), "x.csv:1: no header row: the first row holds numbers"},
		{"missing column", rowsCSV("time,command,gyro", 300, goodRow), `x.csv:1: no column "rate" in the header (it has "time", "command", "gyro")`},
		{"duplicate column", rowsCSV("time,command,rate,rate", 300, func(i int) string { return goodRow(i) + ",0" }), `x.csv:1: column "rate" appears twice in the header (columns 3 and 4)`},
		{"non-numeric", rowsCSV(hdr, 300, func(i int) string {
			if i == 10 {
				return "0.01,fast,1"
			}
			return goodRow(i)
		}), `x.csv:12: column "command": "fast" is not a finite number`},
		{"empty field", rowsCSV(hdr, 300, func(i int) string {
			if i == 20 {
				return "0.02,1,"
			}
			return goodRow(i)
		}), `x.csv:22: column "rate": "" is not a finite number`},
		{"NaN", rowsCSV(hdr, 300, func(i int) string {
			if i == 30 {
				return "0.03,NaN,1"
			}
			return goodRow(i)
		}), `x.csv:32: column "command": "NaN" is not a finite number`},
		{"short row", rowsCSV(hdr, 300, func(i int) string {
			if i == 40 {
				return "0.04,1"
			}
			return goodRow(i)
		}), "x.csv:42: 2 fields, but the header has 3"},
		{"backwards", rowsCSV(hdr, 300, func(i int) string {
			if i == 50 {
				return "0.0001,1,1"
			}
			return goodRow(i)
		}), `x.csv:52: column "time": time 0.0001 is not after 0.049 on line 51; time must increase strictly`},
		{"repeated time", rowsCSV(hdr, 300, func(i int) string {
			if i == 60 {
				return goodRow(59)
			}
			return goodRow(i)
		}), `x.csv:62: column "time": time 0.059 is not after 0.059`},
		{"too few", rowsCSV(hdr, MinSamples-1, goodRow), "x.csv:200: only 199 samples; at least 200 are needed"},
		{"constant command", rowsCSV(hdr, 300, func(i int) string { return fmt.Sprintf("%g,0.5,%d", float64(i)*1e-3, i) }),
			`x.csv:2: column "command" is constant (0.5 on every row to line 301)`},
		{"bare quote", rowsCSV(hdr, 300, func(i int) string {
			if i == 5 {
				return `0.005,1"2,3`
			}
			return goodRow(i)
		}), "x.csv:7: malformed CSV"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			l, err := ReadCSV(strings.NewReader(c.in), "x.csv", DefaultColumns())
			if err == nil {
				t.Fatalf("accepted (%d samples)", len(l.Time))
			}
			if !IsInputError(err) {
				t.Errorf("%T is not an *InputError", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %q\nlacks %q", err, c.want)
			}
		})
	}
}

// TestIdentifyInputErrors checks the errors of Identify for logs built in
// code and for options.
func TestIdentifyInputErrors(t *testing.T) {
	l := &Log{File: "x"}
	for i := 0; i < 300; i++ {
		l.Time = append(l.Time, float64(i)*1e-3)
		l.Command = append(l.Command, float64(i%7))
		l.Rate = append(l.Rate, 0)
	}
	bad := []struct {
		name string
		edit func(*Log, *Options)
		want string
	}{
		{"lengths", func(l *Log, _ *Options) { l.Rate = l.Rate[:10] }, "different lengths"},
		{"nan", func(l *Log, _ *Options) { l.Rate[5] = math.NaN() }, "not finite"},
		{"order", func(l *Log, _ *Options) { l.Time[9] = 0 }, "increase strictly"},
		{"holdout", func(_ *Log, o *Options) { o.Holdout = 0.95 }, "holdout 0.95"},
		{"maxdelay", func(_ *Log, o *Options) { o.MaxDelay = 2 }, "max delay 2"},
		{"limits", func(_ *Log, o *Options) { o.Saturation = Saturation{Mode: SatLimits, Lo: 1, Hi: -1} }, "saturation limits"},
		{"all saturated", func(l *Log, o *Options) { o.Saturation = Saturation{Mode: SatLimits, Lo: 1, Hi: 2} }, "usable samples"},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			lc := &Log{File: l.File, Time: append([]float64(nil), l.Time...), Command: append([]float64(nil), l.Command...), Rate: append([]float64(nil), l.Rate...)}
			o := DefaultOptions()
			c.edit(lc, &o)
			_, err := Identify(lc, o)
			if err == nil || !IsInputError(err) || !strings.Contains(err.Error(), c.want) {
				t.Errorf("err = %v, want an input error with %q", err, c.want)
			}
		})
	}
}

// FuzzReadCSV: no input may panic ReadCSV, and what it accepts satisfies
// the documented invariants.
func FuzzReadCSV(f *testing.F) {
	f.Add([]byte(rowsCSV("time,command,rate", 210, goodRow)))
	f.Add([]byte(rowsCSV("time,command,rate", 3, goodRow)))
	f.Add([]byte("time,command,rate\n0,1,2\n0,1,2\n"))
	f.Add([]byte("\xef\xbb\xbftime,\"command\",rate\r\n# c\r\n1e308,-1e308,1\r\n"))
	f.Add([]byte("a,b\n\"x"))
	f.Add([]byte(rowsCSV("time,command,rate", 250, func(i int) string {
		return strconv.Itoa(i*i) + ",1e-300," + strconv.Itoa(i)
	})))
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := ReadCSV(strings.NewReader(string(data)), "fuzz.csv", DefaultColumns())
		if err != nil {
			if !IsInputError(err) {
				t.Fatalf("not an input error: %v", err)
			}
			return
		}
		n := len(l.Time)
		if n < MinSamples || len(l.Command) != n || len(l.Rate) != n || len(l.Line) != n {
			t.Fatalf("accepted a log of inconsistent length %d", n)
		}
		for i := range l.Time {
			for _, v := range []float64{l.Time[i], l.Command[i], l.Rate[i]} {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("accepted a non-finite value at %d", i)
				}
			}
			if i > 0 && !(l.Time[i] > l.Time[i-1]) {
				t.Fatalf("accepted non-increasing time at %d", i)
			}
		}
	})
}

// FuzzIdentify: any log that ReadCSV could accept (finite values,
// increasing time, at least MinSamples rows) gives a result or an error
// from Identify, never a panic (Identify recovers; an internal error is a
// failure here). The fuzzed bytes choose the intervals, commands and rates.
func FuzzIdentify(f *testing.F) {
	f.Add([]byte("\x01\x02\x03\x04\x05"), false)
	f.Add([]byte("\xff\x00\x80\x7f\x10\x20"), true)
	f.Fuzz(func(t *testing.T, data []byte, sensor bool) {
		if len(data) == 0 {
			return
		}
		n := MinSamples + len(data)%200
		l := &Log{File: "fuzz"}
		tm := 0.0
		for i := 0; i < n; i++ {
			b := func(k int) float64 { return float64(data[(3*i+k)%len(data)]) }
			tm += 1e-3 * (0.5 + b(0)/128)
			l.Time = append(l.Time, tm)
			l.Command = append(l.Command, (b(1)-128)/64)
			l.Rate = append(l.Rate, (b(2)-128)*float64(i%17))
		}
		r, err := Identify(l, Options{Holdout: 0.25, Sensor: sensor})
		if err != nil {
			if strings.Contains(err.Error(), "internal error") {
				t.Fatal(err)
			}
			return
		}
		_ = r.TOML("roll", "fuzz")
	})
}
