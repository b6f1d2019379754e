package review

import (
	"fmt"
	"sync"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
)

// Most of this package's test time goes to designing airframes and
// building their reports, and several tests read the same ones: the
// designs of the demo files, the compare pairs' base airframe, and the
// reports of the demo files. Those that only read them share one made per
// test binary (below). A test that changes a design (TestBuildDegenerate,
// TestBuildWithoutTraces, TestReportRobustOmitsNonFinite), or shows that
// two designs of one input give the same output (TestGolden,
// TestReportJSONText, TestWriteTable), makes its own with design or
// designInline: a shared one serves at most as the first of the two.

// sharedEntry is one shared design and its report, each made once.
type sharedEntry struct {
	design   sync.Once
	a        *discrete.Airframe
	err      error
	build    sync.Once
	files    []File
	buildErr error
}

// shared holds the entries by key: the path of an airframe file, or the
// name and text of an inline one.
var shared sync.Map

func sharedOf(key string) *sharedEntry {
	v, _ := shared.LoadOrStore(key, &sharedEntry{})
	return v.(*sharedEntry)
}

// sharedDesign returns the design of the airframe file at path, made once
// for the tests that only read it.
func sharedDesign(t testing.TB, path string) *discrete.Airframe {
	t.Helper()
	e := sharedOf("file\x00" + path)
	e.design.Do(func() {
		f, err := loadAirframe(path)
		if err != nil {
			e.err = err
			return
		}
		e.a = discrete.DesignAirframe(f)
	})
	if e.err != nil {
		t.Fatal(e.err)
	}
	return e.a
}

// sharedBuild returns the shared design of the airframe file at path and
// its report (Build), made once.
func sharedBuild(t testing.TB, path string) (*discrete.Airframe, []File) {
	t.Helper()
	a := sharedDesign(t, path)
	e := sharedOf("file\x00" + path)
	e.build.Do(func() { e.files, e.buildErr = Build(a) })
	if e.buildErr != nil {
		t.Fatalf("%s: %v", path, e.buildErr)
	}
	return a, e.files
}

// sharedText parses text as name and designs every axis, none failing,
// once per name and text, for the tests that only read the design.
func sharedText(t *testing.T, name, text string) *discrete.Airframe {
	t.Helper()
	return sharedParsed(t, name, text, true)
}

// sharedInline is designInline, made once per text for the tests that
// only read it.
func sharedInline(t *testing.T, src string) *discrete.Airframe {
	t.Helper()
	return sharedParsed(t, "inline.toml", src, false)
}

// sharedParsed parses text as name and designs it once; with axesOK an
// axis that does not design is an error.
func sharedParsed(t *testing.T, name, text string, axesOK bool) *discrete.Airframe {
	t.Helper()
	e := sharedOf(fmt.Sprintf("text\x00%v\x00%s\x00%s", axesOK, name, text))
	e.design.Do(func() {
		f, err := airframe.Parse(name, []byte(text))
		if err != nil {
			e.err = fmt.Errorf("parse: %v", err)
			return
		}
		e.a = discrete.DesignAirframe(f)
		for _, x := range e.a.Axes {
			if axesOK && x.Err != nil {
				e.err = fmt.Errorf("%s: %v", x.Name, x.Err)
				return
			}
		}
	})
	if e.err != nil {
		t.Fatal(e.err)
	}
	return e.a
}
