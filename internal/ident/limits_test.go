package ident

import (
	"fmt"
	"io"
	"strings"
	"testing"
)

// A line is at most MaxLineBytes long (the CSV reader once
// held a whole line, and a file of one 150 MB line took 1.4 GB): exactly
// at the bound the log reads, one byte more is an input error naming
// the line, and the reader stops there, having read no more than the
// bound and its buffer, however long the line goes on.
func TestLineLimit(t *testing.T) {
	rows := func(long int, pad int) string {
		var b strings.Builder
		b.WriteString("time,command,rate,note\n")
		for i := 0; i < 300; i++ {
			row := fmt.Sprintf("%g,%d,%d,", float64(i)*1e-3, i%7, i%5)
			if i == long {
				row += strings.Repeat("x", pad-len(row))
			}
			b.WriteString(row + "\n")
		}
		return b.String()
	}
	if _, err := ReadCSV(strings.NewReader(rows(3, MaxLineBytes)), "x.csv", DefaultColumns()); err != nil {
		t.Errorf("a line of exactly %d bytes: %v", MaxLineBytes, err)
	}
	_, err := ReadCSV(strings.NewReader(rows(3, MaxLineBytes+1)), "x.csv", DefaultColumns())
	if want := fmt.Sprintf("x.csv:5: line longer than %d bytes", MaxLineBytes); err == nil || !IsInputError(err) || !strings.Contains(err.Error(), want) {
		t.Errorf("a line of %d bytes: %v; want an input error %q", MaxLineBytes+1, err, want)
	}

	// 8 MiB of one line after the header: the reader must stop within
	// the bound plus the buffers of the readers above it.
	src := &counting{r: io.MultiReader(strings.NewReader("time,command,rate\n"), io.LimitReader(endlessOnes{}, 8<<20))}
	_, err = ReadCSV(src, "y.csv", DefaultColumns())
	if err == nil || !strings.Contains(err.Error(), "y.csv:2: line longer than") {
		t.Errorf("an 8 MiB line: %v", err)
	}
	if most := int64(MaxLineBytes + 64<<10); src.n > most {
		t.Errorf("read %d bytes of an 8 MiB line; at most %d should be read", src.n, most)
	}
}

// endlessOnes is an endless stream of '1'.
type endlessOnes struct{}

func (endlessOnes) Read(p []byte) (int, error) {
	for i := range p {
		p[i] = '1'
	}
	return len(p), nil
}

// counting counts the bytes read from r.
type counting struct {
	r io.Reader
	n int64
}

func (c *counting) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}
