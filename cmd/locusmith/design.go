package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"

	"locusmith/discrete"
	"locusmith/emit/review"
	"locusmith/internal/version"
)

const designHelp = `Usage: locusmith design [--json] FILE...

Design and verify the rate controller of every axis of each airframe file:
root-locus placement, refinement against the full-order loop, then the
controller discretized at loop_hz and checked again on the sampled loop
with its compute delay, saturation and anti-windup. The spec checks are
those of the sampled loop: the firmware is what flies.

Without --json, a table per airframe: target pole, gains in parallel and
series form, continuous and discrete figures side by side against the
spec with pass/FAIL, the saturated step, closed-loop poles and warnings.
With --json, one JSON report of every airframe (see the README).

Each file is designed on its own; an error in one does not stop the
others. Exit status: 0 every axis of every file meets its spec; 1 a check
failed or a spec is infeasible (stderr says which); 2 a file could not be
read or is not a valid airframe file (stderr names the file and key).

Examples:
  locusmith design examples/quadrotor.toml
  locusmith design examples/*.toml
  locusmith design --json examples/gimbal.toml > gimbal.json`

// runDesign is the design verb.
func runDesign(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("design")
	asJSON := fs.Bool("json", false, "print the JSON report instead of the tables")
	jobs := jobsFlag(fs)
	if done, code := parseFlags(fs, help, args, designHelp, stdout, stderr); done {
		return code
	}
	if fs.NArg() == 0 {
		fmt.Fprintf(stderr, "locusmith design: no airframe file given\nRun 'locusmith design --help' for usage.\n")
		return exitUsage
	}
	if *jobs < 1 {
		fmt.Fprintf(stderr, "locusmith design: --jobs %d: must be at least 1\n", *jobs)
		return exitUsage
	}
	files, code := loadFiles(fs.Args(), stderr)
	// Each airframe is printed as soon as it and those before it are
	// designed, and then dropped: memory stays flat in the batch size.
	var werr error
	var js *jsonStream
	if *asJSON {
		js = newJSONStream(stdout, len(files))
	}
	designStream(files, discrete.BatchOptions{Jobs: *jobs, Release: true}, stderr, func(i int, a *discrete.Airframe) {
		for _, x := range a.Axes {
			code = worst(code, axisStatus(x))
		}
		if js != nil {
			js.add(a)
		} else if werr == nil {
			werr = review.WriteTable(stdout, shownPath(a))
		}
		for _, msg := range a.Unmet() {
			fmt.Fprintf(stderr, "%s: %s\n", shown(a.File.Path), msg)
		}
	})
	switch {
	case js != nil:
		werr = js.end()
	case werr == nil && len(files) > 0:
		_, werr = fmt.Fprintln(stdout, "Results are model-based and do not replace flight testing: bench-test with\npropellers off, fly tethered first, follow local aviation rules and have the\ndesign reviewed by a qualified person before flight.")
	}
	if werr != nil {
		fmt.Fprintf(stderr, "locusmith design: write: %v\n", werr)
		return exitUsage
	}
	return code
}

// jsonStream writes the JSON report (the document of review.JSON) one
// airframe at a time, in the layout of encoding the whole report at once,
// so that a batch need not be held in memory; the first write error
// stops it.
type jsonStream struct {
	w   io.Writer
	n   int // airframes written
	err error
}

// newJSONStream starts the report of files airframes on w (all of it
// when there are none).
func newJSONStream(w io.Writer, files int) *jsonStream {
	s := &jsonStream{w: w}
	if files == 0 {
		s.err = writeJSON(w, review.JSON(nil), "")
		s.n = -1
		return s
	}
	_, s.err = fmt.Fprintf(w, "{\n  \"version\": %q,\n  \"airframes\": [\n", version.Version)
	return s
}

// add writes airframe a's entry.
func (s *jsonStream) add(a *discrete.Airframe) {
	if s.err != nil {
		return
	}
	sep := "    "
	if s.n > 0 {
		sep = ",\n    "
	}
	s.n++
	if _, s.err = io.WriteString(s.w, sep); s.err == nil {
		s.err = writeJSON(s.w, review.JSON([]*discrete.Airframe{a}).Airframes[0], "    ")
	}
}

// end closes the document and returns the first write error.
func (s *jsonStream) end() error {
	if s.err == nil && s.n >= 0 {
		_, s.err = io.WriteString(s.w, "\n  ]\n}\n")
	}
	return s.err
}

// writeJSON writes v indented by two spaces under prefix, without HTML
// escaping, with no trailing newline after a prefixed value.
func writeJSON(w io.Writer, v any, prefix string) error {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetIndent(prefix, "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(v); err != nil {
		return err
	}
	out := b.Bytes()
	if prefix != "" {
		out = bytes.TrimSuffix(out, []byte("\n"))
	}
	_, err := w.Write(out)
	return err
}

// shownPath returns a with its file name as it may reach the terminal
// (shown): the table heads each airframe with the name, and a file named
// with a terminal escape sequence or a bidirectional control would
// otherwise drive the terminal or reorder the line. a itself is not
// changed; the JSON report keeps the name as given, escaped by JSON.
func shownPath(a *discrete.Airframe) *discrete.Airframe {
	if s := shown(a.File.Path); s != a.File.Path {
		f := *a.File
		f.Path = s
		c := *a
		c.File = &f
		return &c
	}
	return a
}
