package main

import (
	"encoding/json"
	"fmt"
	"io"

	"locusmith/emit"
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
	designs := designBatch(files, *jobs, false, stderr)
	for _, a := range designs {
		for _, x := range a.Axes {
			code = worst(code, axisStatus(x))
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		if err := enc.Encode(emit.Report(designs)); err != nil {
			fmt.Fprintf(stderr, "locusmith design: write JSON: %v\n", err)
			return exitUsage
		}
	} else {
		for _, a := range designs {
			if err := emit.WriteTable(stdout, a); err != nil {
				fmt.Fprintf(stderr, "locusmith design: %v\n", err)
				return exitUsage
			}
		}
		if len(designs) > 0 {
			fmt.Fprintln(stdout, "Results are model-based and do not replace flight testing: bench-test with\npropellers off, fly tethered first, follow local aviation rules and have the\ndesign reviewed by a qualified person before flight.")
		}
	}
	for _, a := range designs {
		for _, msg := range emit.Unmet(a) {
			fmt.Fprintf(stderr, "%s: %s\n", a.File.Path, msg)
		}
	}
	return code
}
