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
	if *asJSON {
		// The document of emit.Report, written one airframe at a time
		// in the same layout as encoding the whole report at once.
		if len(files) == 0 {
			werr = writeJSON(stdout, review.JSON(nil), "")
		} else {
			_, werr = fmt.Fprintf(stdout, "{\n  \"version\": %q,\n  \"airframes\": [\n", version.Version)
		}
	}
	designStream(files, discrete.BatchOptions{Jobs: *jobs, Release: true}, stderr, func(i int, a *discrete.Airframe) {
		for _, x := range a.Axes {
			code = worst(code, axisStatus(x))
		}
		if werr == nil {
			if *asJSON {
				if i > 0 {
					_, werr = io.WriteString(stdout, ",\n")
				}
				if werr == nil {
					_, werr = io.WriteString(stdout, "    ")
				}
				if werr == nil {
					werr = writeJSON(stdout, review.JSON([]*discrete.Airframe{a}).Airframes[0], "    ")
				}
			} else {
				werr = review.WriteTable(stdout, shownPath(a))
			}
		}
		for _, msg := range a.Unmet() {
			fmt.Fprintf(stderr, "%s: %s\n", shown(a.File.Path), msg)
		}
	})
	if werr == nil && len(files) > 0 {
		if *asJSON {
			_, werr = io.WriteString(stdout, "\n  ]\n}\n")
		} else {
			_, werr = fmt.Fprintln(stdout, "Results are model-based and do not replace flight testing: bench-test with\npropellers off, fly tethered first, follow local aviation rules and have the\ndesign reviewed by a qualified person before flight.")
		}
	}
	if werr != nil {
		fmt.Fprintf(stderr, "locusmith design: write: %v\n", werr)
		return exitUsage
	}
	return code
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
