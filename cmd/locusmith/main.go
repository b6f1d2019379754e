// Command locusmith turns a TOML airframe description into verified
// rate-loop controller source code: root-locus PID design, verification of
// the full-order and the sampled loop, discretization, fixed point, and C99
// or Go source.
//
// Usage:
//
//	locusmith VERB [flags] FILE...
//
// Verbs: design, emit, report, compare, identify, version, help. Every verb
// takes -h/--help. Exit status: 0 when everything met its spec, 1 when a
// design check failed or a spec is infeasible (the output says which), 2
// for bad input or usage. Results go to stdout, diagnostics to stderr.
//
// main is a thin wrapper around run, so that tests drive the whole command
// in-process with their own argument lists and writers.
package main

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"runtime"
	"runtime/debug"
	"strings"
	"syscall"

	"github.com/spf13/pflag"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
)

// Exit statuses of every verb.
const (
	exitOK    = 0 // everything met its spec
	exitUnmet = 1 // a design check failed, a spec is infeasible, files are stale
	exitUsage = 2 // bad input (airframe file errors, unreadable file) or usage
)

func main() {
	// The design keeps a live heap of a few MB (at most two airframes per
	// worker) while it allocates about 2 MB of short-lived simulation
	// records per airframe. With a collection target of five times the
	// live heap instead of two, 1000 airframes took 5.1 s instead of
	// 6.3 s (the same build, one after the other), for 44 → 99 MB at the
	// peak (BenchmarkFleetProcess). An explicit GOGC still wins.
	if os.Getenv("GOGC") == "" {
		debug.SetGCPercent(400)
	}
	// That target also lets a large live heap grow fivefold: emit, which
	// holds every design until it writes (its check of the C names
	// across airframes needs them all), peaked at 454 MB for 1000
	// airframes. A soft limit makes the collector work harder only above
	// it, so that the peak follows the live heap there instead. An
	// explicit GOMEMLIMIT still wins.
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(softMemoryLimit)
	}
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// softMemoryLimit is the heap size above which the collector runs more
// often than the GOGC target asks (runtime/debug.SetMemoryLimit); below
// it, the target alone decides.
const softMemoryLimit = 256 << 20

// verb is one subcommand.
type verb struct {
	name    string
	summary string
	run     func(args []string, stdout, stderr io.Writer) int
}

// verbs lists the subcommands in the order the usage shows them. A
// function rather than a package variable, so that no state is global.
func verbs() []verb {
	return []verb{
		{"design", "design and verify every axis; print a table per airframe, or --json", runDesign},
		{"emit", "design, verify and write controller source code", runEmit},
		{"report", "write a Markdown report with SVG plots per airframe", runReport},
		{"compare", "compare two airframe files: inputs and results, regressions flagged", runCompare},
		{"identify", "fit a plant model to a logged CSV and print the TOML section", runIdentify},
		{"version", "print the version and build information", runVersion},
	}
}

// run executes the command line args (without the program name) and
// returns the exit status. It never panics: a panic below is a bug, and it
// is reported as an internal error with exit status 2 rather than a stack
// trace.
func run(args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "locusmith: internal error (a bug; please report it with the input file): %v\n", r)
			code = exitUsage
		}
	}()
	if len(args) == 0 {
		writeUsage(stderr)
		return exitUsage
	}
	name, rest := args[0], args[1:]
	switch name {
	case "-h", "--help", "help":
		if name == "help" && len(rest) > 0 {
			if v, ok := findVerb(rest[0]); ok {
				return v.run([]string{"--help"}, stdout, stderr)
			}
			fmt.Fprintf(stderr, "locusmith help: unknown verb %q; the verbs are %s\n", rest[0], verbNames())
			return exitUsage
		}
		writeUsage(stdout)
		return exitOK
	case "--version", "-version":
		return runVersion(nil, stdout, stderr)
	}
	v, ok := findVerb(name)
	if !ok {
		if strings.HasPrefix(name, "-") {
			fmt.Fprintf(stderr, "locusmith: %q: a verb must come first (locusmith VERB [flags] FILE...)\n", name)
		} else {
			fmt.Fprintf(stderr, "locusmith: unknown verb %q; the verbs are %s\n", name, verbNames())
		}
		fmt.Fprintln(stderr, "Run 'locusmith --help' for usage.")
		return exitUsage
	}
	return v.run(rest, stdout, stderr)
}

func findVerb(name string) (verb, bool) {
	for _, v := range verbs() {
		if v.name == name {
			return v, true
		}
	}
	return verb{}, false
}

// verbNames lists the verbs for messages: "design, emit, ...".
func verbNames() string {
	var names []string
	for _, v := range verbs() {
		names = append(names, v.name)
	}
	return strings.Join(names, ", ")
}

func writeUsage(w io.Writer) {
	var b strings.Builder
	b.WriteString(`locusmith turns a TOML airframe description into verified rate-loop
controller source code.

Usage:
  locusmith VERB [flags] FILE...

Verbs:
`)
	for _, v := range verbs() {
		fmt.Fprintf(&b, "  %-9s %s\n", v.name, v.summary)
	}
	b.WriteString(`
Run 'locusmith VERB --help' for the flags and examples of a verb.

Exit status: 0 everything met its spec; 1 a design check failed or a spec
is infeasible (the output says which); 2 bad input or usage.

Results are model-based and do not replace flight testing: bench-test
with propellers off, fly tethered first, follow local aviation rules and
have the design reviewed by a qualified person before flight.
`)
	io.WriteString(w, b.String())
}

// newFlagSet returns the flag set of verb name and its -h/--help flag.
// Errors are returned rather than printed, so that parseFlags controls
// the output.
func newFlagSet(name string) (*pflag.FlagSet, *bool) {
	fs := pflag.NewFlagSet("locusmith "+name, pflag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.SortFlags = false
	help := fs.BoolP("help", "h", false, "show this help and exit")
	return fs, help
}

// parseFlags parses args into fs. It returns done = true when the verb
// must stop and return code: after --help (helpText, a usage line, a
// description and examples, followed by the flag list, on stdout; status
// 0) or a usage error (message on stderr, status 2).
func parseFlags(fs *pflag.FlagSet, help *bool, args []string, helpText string, stdout, stderr io.Writer) (done bool, code int) {
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			writeHelp(stdout, fs, helpText)
			return true, exitOK
		}
		fmt.Fprintf(stderr, "%s: %v\nRun '%s --help' for usage.\n", fs.Name(), err, fs.Name())
		return true, exitUsage
	}
	if *help {
		writeHelp(stdout, fs, helpText)
		return true, exitOK
	}
	return false, exitOK
}

func writeHelp(w io.Writer, fs *pflag.FlagSet, helpText string) {
	io.WriteString(w, strings.TrimRight(helpText, "\n")+"\n\nFlags:\n"+fs.FlagUsages())
}

// loadFiles reads and validates the airframe files at paths. It reports
// every problem of every file on stderr (each line naming the file, the
// key and what is allowed) and goes on with the others. It returns the
// files that loaded, in the order given, and exitUsage when any did not.
func loadFiles(paths []string, stderr io.Writer) ([]*airframe.File, int) {
	var files []*airframe.File
	code := exitOK
	for _, p := range paths {
		f, err := loadFile(p)
		if err != nil {
			reportLoadError(stderr, p, err)
			code = exitUsage
			continue
		}
		noteSensorGain(stderr, f)
		files = append(files, f)
	}
	return files, code
}

// noteSensorGain says, for each axis of f whose sensor's DC gain H(0) is
// not 1, what the loop then regulates: it holds the measured rate at the
// setpoint, so the true rate settles at setpoint/H(0). The file is
// valid (a gain beyond spec.max_steady_error is refused by the decoder,
// naming sensor.gain); the note says where the steady-state error the
// design reports comes from, which the controller cannot remove.
func noteSensorGain(w io.Writer, f *airframe.File) {
	for _, a := range f.Axes {
		dc := real(a.Sensor.Eval(0))
		if !(dc > 0) || math.Abs(dc-1) <= 1e-9 {
			continue
		}
		side := "below"
		if dc < 1 {
			side = "above"
		}
		fmt.Fprintf(w, "%s: axes.%s.sensor.gain: note: the sensor's DC gain H(0) is %.4g, not 1: the loop holds the measured rate at the setpoint, so the true rate settles at setpoint/%.4g, %.3g %% %s it, whatever the controller (spec.max_steady_error %.3g %% allows it)\n",
			shown(f.Path), a.Name, dc, dc, 100*math.Abs(1/dc-1), side, 100*a.Spec.MaxSteadyError)
	}
}

// reportLoadError writes why path could not be loaded. An *airframe.Errors
// already names the file on each line; other errors (the file cannot be
// read) are prefixed with it.
func reportLoadError(w io.Writer, path string, err error) {
	var errs *airframe.Errors
	if errors.As(err, &errs) {
		fmt.Fprintln(w, errs.Error())
		return
	}
	fmt.Fprintf(w, "%s: %s\n", shown(path), shown(err.Error()))
}

// shown is a file name (or a message quoting one) as it may reach the
// terminal: quoted with escapes when it holds a control or bidirectional
// character, so that a file named with a terminal escape sequence cannot
// drive the terminal (airframe.SafeText).
func shown(s string) string { return airframe.SafeText(s) }

// guardWrite ends the process cleanly when SIGINT, SIGTERM or SIGHUP
// arrives while st holds temporary files of a verb's output (verb names
// it in messages): before the commit it removes them, so the output
// directory is as before; during the commit it lets the renames finish,
// so that no airframe's files are left from two runs. Either way the
// exit status is 2 and stderr says which. A SIGKILL cannot be caught:
// its temporary files are removed by the next run (emit.Staged). stop
// ends the guard.
func guardWrite(st *emit.Staged, verb string, stderr io.Writer) (stop func()) {
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, os.Interrupt, syscall.SIGTERM, syscall.SIGHUP)
	done := make(chan struct{})
	go func() {
		select {
		case sig := <-sigs:
			if st.Abort() {
				fmt.Fprintf(stderr, "locusmith %s: %v received; temporary files removed, nothing written\n", verb, sig)
			} else {
				fmt.Fprintf(stderr, "locusmith %s: %v received while writing; every file was written completely\n", verb, sig)
			}
			os.Exit(exitUsage)
		case <-done:
		}
	}()
	return func() {
		signal.Stop(sigs)
		close(done)
	}
}

// axisStatus is the exit status an axis contributes: 1 for an unmet check
// or an infeasible spec, 2 for any other failure to design (an input the
// decoder let through but the designer cannot use).
func axisStatus(x discrete.Outcome) int {
	switch {
	case x.Err != nil && !discrete.Infeasible(x.Err):
		return exitUsage
	case !x.OK():
		return exitUnmet
	}
	return exitOK
}

// worst combines exit statuses: usage errors outrank unmet specs, which
// outrank success.
func worst(a, b int) int { return max(a, b) }

// jobsFlag adds -j/--jobs to a verb: the number of airframes designed at
// once, by default the number of CPUs.
func jobsFlag(fs *pflag.FlagSet) *int {
	return fs.IntP("jobs", "j", runtime.NumCPU(), "airframes designed at once (default: the number of CPUs)")
}

// designStream designs files with o.Jobs workers and delivers each
// airframe to fn in input order as soon as it is done, so that memory
// stays flat in the number of airframes, showing a progress line on
// stderr when it is a terminal and the batch is long (never in pipes or
// CI); with o.Release it also drops each parsed file from files once
// delivered (the caller must not use files afterwards).
func designStream(files []*airframe.File, o discrete.BatchOptions, stderr io.Writer, fn func(int, *discrete.Airframe)) {
	if f, ok := stderr.(*os.File); ok && len(files) >= 20 && os.Getenv("CI") == "" {
		if st, err := f.Stat(); err == nil && st.Mode()&os.ModeCharDevice != 0 {
			o.Progress = func(done, total int) {
				fmt.Fprintf(f, "\rlocusmith: designed %d of %d airframes", done, total)
				if done == total {
					fmt.Fprint(f, "\r\033[K")
				}
			}
		}
	}
	discrete.DesignEach(files, o, fn)
}

// writeFiles writes files into dir, creating dir and its parents if
// missing, through the one atomic writer (emit.WriteSources): identify's
// plot takes a directory that may not exist yet.
func writeFiles(dir string, files []emit.Source) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("create output directory: %w", err)
	}
	if _, err := emit.WriteSources(dir, files); err != nil {
		return err
	}
	return nil
}
