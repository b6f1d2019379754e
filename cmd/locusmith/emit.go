package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"locusmith/discrete"
	"locusmith/emit"
)

const emitHelp = `Usage: locusmith emit -o DIR [--lang c|go] [--c-header-only] [--vectors]
                      [--check] [--allow-unmet] [--json] FILE...

Design and verify every axis of each airframe file, then write the rate
controllers as source code into DIR:

  C (default)        <airframe>_rate.h and <airframe>_rate.c, C99 with
                     <stdint.h> types; with --c-header-only one header of
                     static inline functions
  Go (--lang go)     <airframe>rate.go, package <airframe>rate: one airframe
                     per run, as Go builds one package per directory

Per axis the code has a state type and reset, step and applied functions;
coefficients and limits are named constants. The output is a pure function
of the input file and the tool version: the same bytes on every run and
machine. A file is written only when its content changed (its mtime is kept
otherwise, so make does not rebuild), through a temporary file and a rename,
so a failed run never leaves a partial file.

An airframe whose design checks fail (spec unmet, unstable, possible
overflow) is not written, and the exit status is 1; --allow-unmet writes it
anyway with a warning in its header, and the exit status is still 1 (the
checks did fail; a build that must go on can ignore that status).

--vectors also writes a test-vector program (<airframe>_rate_vectors.c, or
<airframe>rate_vectors_test.go) that runs the generated code on a standard
excitation and exits non-zero at the first output that differs from
locusmith's reference model by one bit.

--json also prints the JSON report of the designs on standard output,
byte for byte what design --json prints for the same files (one design
for both; not with --check). A run refused before the designs (a file
that does not load, status 2) prints none.

--check writes nothing: it regenerates in memory and compares with DIR,
listing stale, missing and unexpected files (a file whose first line says
locusmith generated it, but that this run does not generate: give --check
every airframe of DIR and the same flags as the build) with a short diff,
and the temporary files a killed run left for these files (the next run
without --check removes them).

emit reads and replaces only regular files of DIR: a symbolic link, pipe,
device or directory named like one of its files is an error (status 2).
A directory where everything is up to date may be read-only.

Exit status: 0 written or up to date; 1 a design check failed or --check
found drift; 2 bad input or usage (a file that does not load or is not a
regular file, an unknown --lang, a missing -o directory, or one that must
be written and cannot, two files naming the same airframe), or SIGINT,
SIGTERM or SIGHUP while writing. On status 2 nothing is written, or every
file of the run was (a signal during the renames).

The code is model-based: bench-test with the propellers off, fly tethered
first, follow local aviation rules, and have the design reviewed.

Examples:
  locusmith emit -o build/gen examples/quadrotor.toml
  locusmith emit -o build/gen --c-header-only --vectors examples/*.toml
  locusmith emit -o internal/rate --lang go examples/quadrotor.toml
  locusmith emit -o build/gen --check examples/*.toml`

// runEmit is the emit verb.
func runEmit(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("emit")
	out := fs.StringP("out", "o", "", "output directory (made if missing; its parent must exist)")
	lang := fs.String("lang", "c", "language of the generated code: c or go")
	headerOnly := fs.Bool("c-header-only", false, "C: one header of static inline functions instead of .h and .c")
	vectors := fs.Bool("vectors", false, "also write the test-vector program")
	check := fs.Bool("check", false, "write nothing; compare with DIR and exit 1 on any difference")
	allowUnmet := fs.Bool("allow-unmet", false, "write airframes whose design checks fail, marked in the header")
	asJSON := fs.Bool("json", false, "also print the JSON report of the designs (as design --json)")
	jobs := jobsFlag(fs)
	if done, code := parseFlags(fs, help, args, emitHelp, stdout, stderr); done {
		return code
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "locusmith emit: "+format+"\nRun 'locusmith emit --help' for usage.\n", a...)
		return exitUsage
	}
	o := emit.CodeOptions{Lang: emit.Lang(*lang), HeaderOnly: *headerOnly, Vectors: *vectors, AllowUnmet: *allowUnmet}
	switch o.Lang {
	case emit.LangC, emit.LangGo:
	default:
		return usage("--lang %q: must be c or go", *lang)
	}
	if o.HeaderOnly && o.Lang != emit.LangC {
		return usage("--c-header-only applies to --lang c only")
	}
	if *out == "" {
		return usage("no output directory: -o DIR is required")
	}
	if *asJSON && *check {
		return usage("--json and --check: --check prints its findings on standard output; give one")
	}
	if *jobs < 1 {
		return usage("--jobs %d: must be at least 1", *jobs)
	}
	if fs.NArg() == 0 {
		return usage("no airframe file given")
	}
	if err := emit.CheckOutputDir(*out, !*check); err != nil {
		fmt.Fprintf(stderr, "locusmith emit: %s\n", shown(err.Error()))
		return exitUsage
	}
	testSync(os.Getenv("LOCUSMITH_TEST_SYNC"))
	files, code := loadFiles(fs.Args(), stderr)
	if code != exitOK {
		fmt.Fprintln(stderr, "locusmith emit: nothing written")
		return code
	}
	seen := map[string]string{}
	for _, f := range files {
		if prev, ok := seen[f.Airframe]; ok {
			fmt.Fprintf(stderr, "locusmith emit: %s and %s both name airframe %q; their files would overwrite each other\nlocusmith emit: nothing written\n", shown(prev), shown(f.Path), f.Airframe)
			return exitUsage
		}
		seen[f.Airframe] = f.Path
	}
	// Go builds one package per directory, and each airframe is a package
	// of its own: several in one directory could not be built at all.
	if o.Lang == emit.LangGo && len(files) > 1 {
		fmt.Fprintf(stderr, "locusmith emit: --lang go writes one package per airframe (%s, …), and Go builds one package per directory: run emit once per airframe, each with its own -o directory\nlocusmith emit: nothing written\n", files[0].Airframe+"rate")
		return exitUsage
	}
	gen, err := emit.NewCodeGenerator()
	if err != nil {
		fmt.Fprintf(stderr, "locusmith emit: %v\n", err)
		return exitUsage
	}
	// Each airframe is rendered as soon as it is designed and then
	// dropped: the batch keeps only its names (for the C names two
	// airframes must not share), its files go to their temporary files at
	// once (or, with --check, are kept for the comparison: a few kB each),
	// so that memory stays that of a few airframes for any batch.
	// Everything is renamed into place at the end; a SIGINT, SIGTERM or
	// SIGHUP before the renames removes the temporary files, one during
	// them waits for them to finish, so that an airframe's header and
	// source are never left from two different runs (guardWrite).
	batch := gen.NewBatch(o)
	var st *emit.Staged
	if !*check {
		st = emit.NewStaged(*out)
		stop := guardWrite(st, "emit", stderr)
		defer stop()
	}
	var all []emit.Source
	var refused []string // file names not generated because of exit-1 failures
	var stageErr error
	var js *jsonStream
	if *asJSON {
		js = newJSONStream(stdout, len(files))
	}
	designStream(files, discrete.BatchOptions{Jobs: *jobs, Release: true}, stderr, func(_ int, a *discrete.Airframe) {
		if js != nil {
			js.add(a)
		}
		srcs, warns, err := batch.Add(a)
		for _, w := range warns {
			fmt.Fprintf(stderr, "locusmith emit: warning: %s\n", w)
		}
		path := shown(a.File.Path)
		if err != nil {
			code = worst(code, emitStatus(err))
			var ue *emit.UnmetError
			if errors.As(err, &ue) {
				for _, r := range ue.Reasons {
					fmt.Fprintf(stderr, "%s: %s\n", path, r)
				}
				fmt.Fprintf(stderr, "%s: airframe %s not written: its design checks fail (--allow-unmet writes it anyway)\n", path, a.File.Airframe)
			} else {
				fmt.Fprintf(stderr, "%s: %v\n", path, err)
			}
			refused = append(refused, emit.SourceNames(a.File.Airframe, o)...)
			return
		}
		if unmet := a.Unmet(); len(unmet) > 0 {
			for _, r := range unmet {
				fmt.Fprintf(stderr, "%s: %s\n", path, r)
			}
			fmt.Fprintf(stderr, "%s: warning: airframe %s fails its design checks; written because of --allow-unmet, and marked so in its header\n", path, a.File.Airframe)
			code = worst(code, exitUnmet)
		}
		switch {
		case *check:
			all = append(all, srcs...)
		case code != exitUsage && stageErr == nil:
			stageErr = st.Add(srcs)
		}
	})
	if js != nil {
		if err := js.end(); err != nil {
			fmt.Fprintf(stderr, "locusmith emit: write the JSON report: %v\n", err)
			code = exitUsage
		}
	}
	if code == exitUsage {
		if st != nil {
			st.Abort()
		}
		fmt.Fprintln(stderr, "locusmith emit: nothing written")
		return code
	}
	if *check {
		d, err := emit.CheckSources(*out, all, 0)
		if err != nil {
			fmt.Fprintf(stderr, "locusmith emit: %s\n", shown(err.Error()))
			return exitUsage
		}
		d.Unexpected = without(d.Unexpected, *out, refused)
		// The consistency of each airframe's header and source (the
		// content stamp both carry) is emit's to verify: its check of the
		// files of DIR belongs here, beside the drift, its findings
		// counted with it.
		if !d.Clean() {
			fmt.Fprint(stdout, d.String())
			fmt.Fprintf(stderr, "locusmith emit: %s is not up to date (%d stale, %d missing, %d unexpected, %d temporary); run the same command without --check\n",
				shown(*out), len(d.Stale), len(d.Missing), len(d.Unexpected), len(d.Temporary))
			return worst(code, exitUnmet)
		}
		return code
	}
	if stageErr != nil {
		st.Abort()
		fmt.Fprintf(stderr, "locusmith emit: %s\nlocusmith emit: nothing written\n", shown(stageErr.Error()))
		return exitUsage
	}
	testSync(os.Getenv("LOCUSMITH_TEST_SYNC_COMMIT"))
	written, err := st.Commit()
	for _, t := range st.Removed {
		fmt.Fprintf(stderr, "locusmith emit: removed %s, a temporary file an interrupted run left\n", shown(filepath.Join(*out, t)))
	}
	for _, w := range written {
		fmt.Fprintf(stderr, "wrote %s\n", shown(filepath.Join(*out, w)))
	}
	if err != nil {
		fmt.Fprintf(stderr, "locusmith emit: %s\n", shown(err.Error()))
		return exitUsage
	}
	return code
}

// emitStatus is the exit status of a generation error: 1 for a design
// that fails its checks or an infeasible spec, 2 for everything else.
func emitStatus(err error) int {
	var ue *emit.UnmetError
	if errors.As(err, &ue) {
		return exitUnmet
	}
	var de *emit.DesignFailedError
	if errors.As(err, &de) && discrete.Infeasible(de.Err) {
		return exitUnmet
	}
	return exitUsage
}

// without drops from paths the files of dir named in names.
func without(paths []string, dir string, names []string) []string {
	skip := map[string]bool{}
	for _, n := range names {
		skip[filepath.Join(dir, n)] = true
	}
	var out []string
	for _, p := range paths {
		if !skip[p] {
			out = append(out, p)
		}
	}
	return out
}

// testSync is a hook for tests of the whole process, off unless the
// environment sets LOCUSMITH_TEST_SYNC or LOCUSMITH_TEST_SYNC_COMMIT:
// emit then reads the named pipe it names to its end, so that a test
// holding the pipe stops emit at that point. LOCUSMITH_TEST_SYNC stops
// it past its check of the output directory and before it reads its
// inputs (the inputs themselves must be regular files);
// LOCUSMITH_TEST_SYNC_COMMIT once every changed file is written to its
// temporary file and before the renames, the window a signal must not
// leave temporary files from. An error opening it is ignored: the hook
// only orders, it never changes a result.
func testSync(pipe string) {
	if pipe == "" {
		return
	}
	f, err := os.Open(pipe)
	if err != nil {
		return
	}
	defer f.Close()
	_, _ = io.Copy(io.Discard, f)
}
