package discrete

import (
	"bytes"
	"fmt"
	"slices"
	"testing"

	"locusmith/airframe"
	fleetgen "locusmith/internal/fleet"
)

// fleet parses n generated demo airframes (internal/fleet).
func fleet(t testing.TB, n int) []*airframe.File {
	t.Helper()
	srcs, err := fleetgen.Make(n)
	if err != nil {
		t.Fatal(err)
	}
	var out []*airframe.File
	for _, src := range srcs {
		f, err := airframe.Parse("fleet/"+src.Name, src.Data)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, f)
	}
	return out
}

// fingerprint writes every figure of the batch that a design decides:
// the controller, its coefficients, the checks and the warnings of each
// axis, or its error.
func fingerprint(as []*Airframe) []byte {
	var b bytes.Buffer
	for _, a := range as {
		fmt.Fprintf(&b, "%s\n", a.File.Airframe)
		for _, x := range a.Axes {
			if x.Err != nil {
				fmt.Fprintf(&b, "  %s: %v\n", x.Name, x.Err)
				continue
			}
			d := x.Design
			fmt.Fprintf(&b, "  %s: %#v\n  %#v\n  %#v\n  %q\n", x.Name, d.Cont.Ctrl, d.Coeffs, d.Checks, d.Warnings)
		}
	}
	return b.Bytes()
}

// A batch gives the same per-file results as designing the files one by
// one, whatever the number of workers, in input order.
func TestBatchMatchesOneByOne(t *testing.T) {
	t.Parallel()
	n := 9
	if testing.Short() {
		n = 4 // still more airframes than the workers of the smaller pools
	}
	files := fleet(t, n)
	var single []*Airframe
	for _, f := range files {
		single = append(single, DesignAirframe(f))
	}
	want := fingerprint(single)
	for _, jobs := range []int{1, 3, 8} {
		got := fingerprint(DesignAll(files, BatchOptions{Jobs: jobs, KeepTraces: true}))
		if !bytes.Equal(got, want) {
			t.Errorf("jobs %d: report differs from the one-by-one designs", jobs)
		}
	}
	calls := 0
	DesignAll(files[:3], BatchOptions{Jobs: 2, Progress: func(done, total int) {
		calls++
		if total != 3 || done != calls {
			t.Errorf("progress %d/%d at call %d", done, total, calls)
		}
	}})
	if calls != 3 {
		t.Errorf("progress called %d times, want 3", calls)
	}
	// Release clears each entry once delivered (each delivered airframe
	// keeps its own file), and not before; without it the slice is
	// untouched.
	given := slices.Clone(files[:4])
	DesignEach(given, BatchOptions{Jobs: 2, Release: true}, func(i int, a *Airframe) {
		if given[i] != nil || a.File != files[i] {
			t.Errorf("airframe %d: entry %v at delivery, file %p (want %p)", i, given[i], a.File, files[i])
		}
		for j := i + 1; j < len(given); j++ {
			if given[j] == nil {
				t.Errorf("entry %d cleared before its delivery", j)
			}
		}
	})
	kept := slices.Clone(files[:2])
	DesignAll(kept, BatchOptions{Jobs: 2})
	if !slices.Equal(kept, files[:2]) {
		t.Error("without Release the files slice changed")
	}
}

// DesignPair gives each version the designs DesignAirframe gives it, and
// designs an axis the two share once: the same *Design in both.
func TestDesignPair(t *testing.T) {
	t.Parallel()
	files := fleet(t, 2)
	old := files[0]
	// The new version: the old with one axis's settling limit changed.
	src := *old
	src.Axes = slices.Clone(old.Axes)
	src.Axes[0].Spec.SettlingTime *= 1.2
	a, b := DesignPair(old, &src)
	if got, want := fingerprint([]*Airframe{a, b}), fingerprint([]*Airframe{DesignAirframe(old), DesignAirframe(&src)}); !bytes.Equal(got, want) {
		t.Errorf("the pair differs from the designs one by one:\n%s\nwant\n%s", got, want)
	}
	if a.Axes[0].Design == b.Axes[0].Design {
		t.Error("the changed axis shares its design")
	}
	for i := 1; i < len(a.Axes); i++ {
		if a.Axes[i].Design == nil || a.Axes[i].Design != b.Axes[i].Design {
			t.Errorf("axis %s: unchanged, designed twice", a.Axes[i].Name)
		}
	}
	// Another loop rate changes every axis's problem.
	other := src
	other.Loop.Hz *= 2
	_, c := DesignPair(old, &other)
	for i := range c.Axes {
		if c.Axes[i].Design != nil && c.Axes[i].Design == a.Axes[i].Design {
			t.Errorf("axis %s: shared across loop rates", c.Axes[i].Name)
		}
	}
}

// BenchmarkFleet designs generated fleets of 3-axis airframes (design,
// discrete and numeric verification) on all CPUs.
func BenchmarkFleet(b *testing.B) {
	for _, n := range []int{1, 10, 100} {
		files := fleet(b, n)
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				DesignAll(files, BatchOptions{Jobs: 2})
			}
		})
	}
}
