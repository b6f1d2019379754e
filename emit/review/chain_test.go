package review

import (
	"errors"
	"os"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
)

// The review's comparison with the axis designed without its filter
// chain: present for an axis with a chain when the batch designed the
// comparison, absent otherwise, and its "without" column is the design of
// the same axis with the chain removed, made on its own. On the golden
// compliant airframe the chain turns an unmet spec into a met one (the
// README's figures: Ki 0.0094 and a missed settling time without it).
func TestChainRows(t *testing.T) {
	data, err := os.ReadFile("../../golden/testdata/compliant.toml")
	if err != nil {
		t.Fatal(err)
	}
	f, err := airframe.Parse("compliant.toml", data)
	if err != nil {
		t.Fatal(err)
	}
	var a *discrete.Airframe
	discrete.DesignEach([]*airframe.File{f}, discrete.BatchOptions{Jobs: 1, Unfiltered: true}, func(_ int, x *discrete.Airframe) { a = x })
	d := a.Axes[0].Design
	rows := chainRows(d)
	if len(rows) == 0 {
		t.Fatal("no comparison for an axis with a filter chain")
	}
	p := d.Problem
	p.Filters = nil
	u, err := discrete.DesignAxis(p, f.Loop, f.Numeric)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string][2]string{
		"spec":  {"met", "not met (settling_time"},
		"gains": {gainsText(d.Cont.Ctrl), gainsText(u.Cont.Ctrl)},
	}
	for _, r := range rows {
		if w, ok := want[r.Name]; ok {
			if r.With != w[0] || !strings.HasPrefix(r.Without, w[1]) {
				t.Errorf("%s: %q | %q, want %q | %q…", r.Name, r.With, r.Without, w[0], w[1])
			}
			delete(want, r.Name)
		}
	}
	if len(want) > 0 {
		t.Errorf("rows missing: %v", want)
	}
	if !strings.Contains(gainsText(u.Cont.Ctrl), "Ki = 0.0094") {
		t.Errorf("without the chain: %s, the README says Ki = 0.0094", gainsText(u.Cont.Ctrl))
	}
	// When the axis without its chain has no design, the row says why,
	// without the "axis NAME: " prefix, escaped for Markdown.
	failed := *d
	failed.Unfiltered, failed.UnfilteredErr = nil, errors.New("axis pitch: no controller of the form keeps max_sensitivity")
	if rows := chainRows(&failed); len(rows) != 1 || rows[0].With != "met" || rows[0].Without != `no design: no controller of the form keeps max\_sensitivity` {
		t.Errorf("comparison without an unfiltered design: %+v", rows)
	}
	// Without the option, or without a chain: no comparison.
	plain := discrete.DesignAirframe(f).Axes[0].Design
	if rows := chainRows(plain); rows != nil {
		t.Errorf("comparison without BatchOptions.Unfiltered: %v", rows)
	}
	if rows := chainRows(u); rows != nil {
		t.Errorf("comparison for an axis without a chain: %v", rows)
	}
}
