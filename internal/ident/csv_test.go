package ident

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
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

// TestReadCSVNaNSplits: a row with NaN in a selected column is skipped
// and the log split there, whichever column holds it;
// a NaN in an unselected column is nothing; the other rows are read as
// they are (hand-made rows: the expected values are the rows themselves).
func TestReadCSVNaNSplits(t *testing.T) {
	in := rowsCSV("time,command,rate,other", 300, func(i int) string {
		switch i {
		case 30:
			return "0.03,NaN,1,0"
		case 31:
			return "0.031,1,nan,0"
		case 200:
			return "NaN,1,1,0"
		case 250:
			return goodRow(i) + ",NaN"
		}
		return goodRow(i) + ",0"
	})
	l, err := ReadCSV(strings.NewReader(in), "x.csv", DefaultColumns())
	if err != nil {
		t.Fatal(err)
	}
	if len(l.Time) != 297 || l.Dropped != 3 {
		t.Fatalf("%d samples, %d dropped; want 297, 3", len(l.Time), l.Dropped)
	}
	// Rows 0..29 are samples 0..29; rows 32..199 samples 30..197; rows
	// 201.. samples 198..
	if want := []int{30, 198}; len(l.Breaks) != 2 || l.Breaks[0] != want[0] || l.Breaks[1] != want[1] {
		t.Errorf("breaks %v, want %v", l.Breaks, want)
	}
	if l.Time[30] != 0.032 || l.Line[30] != 34 || l.Time[198] != 0.201 {
		t.Errorf("sample 30 at %g (line %d), sample 198 at %g; want 0.032 (line 34), 0.201", l.Time[30], l.Line[30], l.Time[198])
	}
}

// TestNaNRowSplitsFit: a NaN row in the middle of a simulated log gives a
// fit with one segment more than without it (the parts are never
// interpolated across), a note saying so, and the simulated truth within
// 5 %, like the log without the row (the truth is the model's own
// simulation).
func TestNaNRowSplitsFit(t *testing.T) {
	const T = 0.001
	rng := rand.New(rand.NewPCG(3, 9))
	u := excitation(rng, 20000, T, 0.3)
	y := simulateTruth(u, T, 2400, 0.03, 0.002, 0)
	l := synthLog(rng, u, y, T, 0.5, 30)
	var b strings.Builder
	b.WriteString("time,command,rate\n")
	for i := range l.Time {
		if i == 5000 {
			b.WriteString("0.5,NaN,NaN\n")
			continue
		}
		fmt.Fprintf(&b, "%s,%s,%s\n", fmtG(l.Time[i]), fmtG(l.Command[i]), fmtG(l.Rate[i]))
	}
	read, err := ReadCSV(strings.NewReader(b.String()), "nan.csv", DefaultColumns())
	if err != nil {
		t.Fatal(err)
	}
	with, err := Identify(read, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	without, err := Identify(l, DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	if with.Segments != without.Segments+1 {
		t.Errorf("%d segments with the NaN row, %d without; want one more", with.Segments, without.Segments)
	}
	if !strings.Contains(strings.Join(with.Notes, "\n"), "1 row(s) with NaN skipped") {
		t.Errorf("no note of the NaN row: %q", with.Notes)
	}
	if math.Abs(with.Effectiveness.Value/2400-1) > 0.05 || math.Abs(with.MotorTau.Value/0.03-1) > 0.05 {
		t.Errorf("effectiveness %g, motor_tau %g; simulated 2400, 0.03", with.Effectiveness.Value, with.MotorTau.Value)
	}
}

// TestReadCSVDelimiterRateScale: a semicolon-separated log is read with
// Delimiter ';', and RateScale multiplies the rate (π/180: °/s to rad/s,
// from memory); the excitation column is read when named.
func TestReadCSVDelimiterRateScale(t *testing.T) {
	in := rowsCSV("time;command;rate;x", 250, func(i int) string {
		return fmt.Sprintf("%de-3;%g;%g;%d", i, math.Sin(float64(i)/10), 180.0, i%3)
	})
	l, err := ReadCSV(strings.NewReader(in), "x.csv", Columns{Time: "time", Command: "command", Rate: "rate", Excitation: "x", Delimiter: ';', RateScale: math.Pi / 180})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(l.Rate[7]-math.Pi) > 1e-15 || l.Excitation[7] != 1 {
		t.Errorf("rate %g, excitation %g; want π, 1", l.Rate[7], l.Excitation[7])
	}
	if _, err := ReadCSV(strings.NewReader(in), "x.csv", DefaultColumns()); err == nil || !strings.Contains(err.Error(), "--delimiter") {
		t.Errorf("a ';' log read with ',' : %v; want a hint at --delimiter", err)
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
		{"Inf", rowsCSV(hdr, 300, func(i int) string {
			if i == 30 {
				return "0.03,Inf,1"
			}
			return goodRow(i)
		}), `x.csv:32: column "command": "Inf" is not a finite number`},
		{"few changes", rowsCSV(hdr, 300, func(i int) string {
			v := 0.0
			if i >= 100 && i < 120 {
				v = 0.3
			}
			return fmt.Sprintf("%de-3,%g,0", i, v)
		}), `x.csv:2: column "command" changes value only 2 time(s) over 300 rows (to line 301), fewer than the 4 the fit needs: too little excitation; the log must excite the axis`},
		{"no excitation column", rowsCSV(hdr, 300, goodRow), `no excitation column "x" in the header`},
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
			cols := DefaultColumns()
			if c.name == "no excitation column" {
				cols.Excitation = "x"
			}
			l, err := ReadCSV(strings.NewReader(c.in), "x.csv", cols)
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
	f.Add([]byte(rowsCSV("time,command,rate", 250, func(i int) string {
		if i%50 == 7 {
			return "NaN,1,2"
		}
		return goodRow(i)
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
		for i, b := range l.Breaks {
			if b <= 0 || b >= n || i > 0 && b <= l.Breaks[i-1] {
				t.Fatalf("breaks %v out of order or range for %d samples", l.Breaks, n)
			}
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
		// The modes on whatever was fitted: an error is fine, a bug not.
		if mr, err := r.FitModes(2); err != nil {
			if errors.Is(err, ErrInternal) {
				t.Fatal(err)
			}
		} else {
			_ = mr.TOML("roll", r, r.CrossoverEstimate(), "estimated")
		}
	})
}
