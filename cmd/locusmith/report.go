package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"locusmith/discrete"
	"locusmith/emit"
	"locusmith/emit/review"
)

const reportHelp = `Usage: locusmith report [--html] -o DIR FILE...

Design and verify every axis of each airframe file and write a design
review into DIR (created if missing): per airframe <airframe>.md, and beside
it the SVG plots it links, per axis:

  <airframe>-<axis>-locus.svg       root locus near the target: the loop
                                    with the designed controller form as
                                    its gain scales from 0 to 10 times the
                                    design, open-loop poles and zeros, the
                                    textbook target, the designed
                                    closed-loop poles, and the second-order
                                    guide shaded (a textbook guide, not a
                                    pass/fail bound)
  <airframe>-<axis>-locus-wide.svg  the same with every pole and zero and
                                    the asymptotes
  <airframe>-<axis>-step.svg        unit-step responses, continuous,
                                    discrete (sample markers) and fixed
                                    point, against the overshoot limit and
                                    the settling band
  <airframe>-<axis>-envelope.svg    the unit step at every plant of the
                                    envelope, as a band
  <airframe>-<axis>-saturated.svg   a step that saturates the command,
                                    with and without anti-windup; when no
                                    step the loop can hold reaches the
                                    output limits, the largest one tried,
                                    saying so, and no comparison
  <airframe>-<axis>-disturbance.svg the load step at every plant of the
                                    envelope, with the recovery
  <airframe>-<axis>-bode.svg        loop frequency response, continuous
                                    and discrete, crossover and margins
                                    (PM and GM written on the plot), ω in
                                    rad/s with a Hz axis on top
  <airframe>-<axis>-sensitivity.svg |S|, |T| and |C·S| against the Ms and
                                    noise-gain bounds
  <airframe>-<axis>-zplane.svg      closed-loop poles and zeros of the
                                    sampled loop with the unit circle

With --html, each airframe also gets <airframe>.html beside the
Markdown: the same page as one self-contained file (every plot inlined as
SVG, the style sheet in the page, no script, nothing fetched), the one
file a reviewer opens and signs. It is written with the Markdown and the
plots, through the same temporary files and renames.

The Markdown says what each axis does, gives the plant, sensor and spec,
the root-locus working (the angle table and the magnitude condition, so
that the placement can be followed by hand), the gains in parallel and
series form, the metrics of the continuous, discrete and fixed-point loop
against the spec, the fixed-point table, the warnings and the safety
cautions. The delay enters the root locus through its Padé approximant;
the captions say so.

The output is a pure function of the input and the tool version. Each file
is written through a temporary file and a rename, so a failed run never
leaves a partial file; when a file cannot be loaded, nothing is written.
Each airframe is written to its temporary files as soon as it is designed
and then dropped, so memory stays that of a few airframes for any batch;
the renames come when all are done. Only regular files of DIR are read
or replaced (a symbolic link named like a report file is an error).

Exit status: 0 every axis meets its spec; 1 a design check failed (the
report is written and says which, stderr lists them); 2 bad input or usage.

Examples:
  locusmith report -o review examples/quadrotor.toml
  locusmith report -o build/review examples/*.toml
  locusmith report --html -o review examples/quadrotor.toml   # also review/sandpiper.html`

// runReport is the report verb.
func runReport(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("report")
	out := fs.StringP("out", "o", "", "output directory (created if missing)")
	html := fs.Bool("html", false, "also write <airframe>.html, one self-contained page per airframe")
	jobs := jobsFlag(fs)
	if done, code := parseFlags(fs, help, args, reportHelp, stdout, stderr); done {
		return code
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "locusmith report: "+format+"\nRun 'locusmith report --help' for usage.\n", a...)
		return exitUsage
	}
	if *out == "" {
		return usage("-o DIR is required")
	}
	if *jobs < 1 {
		return usage("--jobs %d: must be at least 1", *jobs)
	}
	if fs.NArg() == 0 {
		return usage("no airframe file given")
	}
	files, code := loadFiles(fs.Args(), stderr)
	if code != exitOK {
		fmt.Fprintln(stderr, "locusmith report: nothing written")
		return code
	}
	seen := map[string]string{}
	for _, f := range files {
		if prev, ok := seen[f.Airframe]; ok {
			return usage("%s and %s both name airframe %q: their reports would overwrite each other; nothing written", shown(prev), shown(f.Path), f.Airframe)
		}
		seen[f.Airframe] = f.Path
	}
	// Each airframe is designed, rendered and written to temporary files
	// in the output directory as soon as it and those before it are
	// designed, and then dropped, so that memory stays that of a few
	// airframes whatever the batch; the files are renamed into place when
	// every airframe is done, so that a failure leaves the directory as
	// it was (emit.Staged).
	st := emit.NewStaged(*out)
	stop := guardWrite(st, "report", stderr)
	defer stop()
	type done struct {
		path, page string
		plots      int
		unmet      []string
	}
	var dones []done
	var fail error
	made := false
	designStream(files, discrete.BatchOptions{Jobs: *jobs, KeepTraces: true, Release: true, Unfiltered: true}, stderr, func(i int, a *discrete.Airframe) {
		if fail != nil {
			return
		}
		f := a.File
		for _, x := range a.Axes {
			code = worst(code, axisStatus(x))
		}
		rf, err := review.Build(a)
		if err != nil {
			fail = fmt.Errorf("%s: %v", shown(f.Path), err)
			return
		}
		srcs := make([]emit.Source, len(rf), len(rf)+1)
		for j, f := range rf {
			srcs[j] = emit.Source(f)
		}
		if *html {
			// The page is made from the files just rendered, so it is the
			// Markdown and plots of this run, byte for byte.
			page, err := review.HTML(rf)
			if err != nil {
				fail = fmt.Errorf("%s: %w", shown(f.Path), err)
				return
			}
			srcs = append(srcs, emit.Source(page))
		}
		if !made {
			if err := os.MkdirAll(*out, 0o755); err != nil {
				fail = fmt.Errorf("create output directory: %w", err)
				return
			}
			made = true
		}
		if err := st.Add(srcs); err != nil {
			fail = err
			return
		}
		page := rf[0].Name
		if *html {
			page += " and " + strings.TrimSuffix(page, ".md") + ".html"
		}
		dones = append(dones, done{path: f.Path, page: page, plots: len(rf) - 1, unmet: a.Unmet()})
	})
	if fail != nil {
		st.Abort()
		fmt.Fprintf(stderr, "locusmith report: %s; nothing written\n", shown(fail.Error()))
		return exitUsage
	}
	if _, err := st.Commit(); err != nil {
		fmt.Fprintf(stderr, "locusmith report: %s\n", shown(err.Error()))
		return exitUsage
	}
	for _, t := range st.Removed {
		fmt.Fprintf(stderr, "locusmith report: removed %s, a temporary file an interrupted run left\n", shown(filepath.Join(*out, t)))
	}
	for _, d := range dones {
		fmt.Fprintf(stderr, "%s: wrote %s (%d plots) in %s\n", shown(d.path), d.page, d.plots, shown(*out))
	}
	for _, d := range dones {
		for _, msg := range d.unmet {
			fmt.Fprintf(stderr, "%s: %s\n", shown(d.path), msg)
		}
	}
	return code
}
