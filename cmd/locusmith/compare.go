package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"strings"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit/review"
)

const compareHelp = `Usage: locusmith compare [--json] [--fail-on-regression] [--tolerance F] [--floor F] OLD NEW

Design both versions of an airframe file and judge the change against the
spec. The output opens with one line per axis (met before, met now, the
number of regressions), then the inputs that changed (every key of the file
whose value differs; "(absent)" where a key is missing and its default
applies), then the results: regressions, improvements and other changes.

A regression is judged against the limits, not against any change:

  - a check that newly fails, an axis that no longer designs or meets its
    spec, an axis removed;
  - a check whose slack (the distance of its value to its limit, as a
    fraction of the limit: margins, Ms, overshoot, settling, hold rate,
    disturbance recovery, noise gain, fixed-point headroom) shrinks by more
    than the tolerance (default 0.05, that is 5 % of the limit);
  - a check that comes to within the floor of its limit (default 0.05);
  - the load step's integrated error (the design's objective, which has no
    limit), or a noise gain held to the design's own bound, up by more
    than the tolerance of its old value.

An improvement is the reverse; every other figure that moved (gains, poles,
crossover, the plants of the envelope one by one) is listed as another
change, never as a regression.

OLD and NEW are file paths or git revisions and paths, REV:PATH, read with
'git show REV:PATH' in the current directory (as git takes it: the path
from the top of the repository, or ./PATH relative to the current
directory). A path that exists as a file is always read as a file.

Exit status: 0 compared (regressions or not); 1 with --fail-on-regression
when there is a regression; 2 bad input or usage (a file that does not
load, a revision git cannot show, a tolerance outside (0, 1]).

Examples:
  locusmith compare old/quadrotor.toml examples/quadrotor.toml
  locusmith compare HEAD~1:examples/quadrotor.toml examples/quadrotor.toml
  locusmith compare --fail-on-regression main:./quadrotor.toml ./quadrotor.toml
  locusmith compare --tolerance 0.1 --json HEAD:examples/gimbal.toml examples/gimbal.toml`

// runCompare is the compare verb.
func runCompare(args []string, stdout, stderr io.Writer) int {
	flags, help := newFlagSet("compare")
	asJSON := flags.Bool("json", false, "print the comparison as JSON")
	failOn := flags.Bool("fail-on-regression", false, "exit 1 when there is a regression")
	tol := flags.Float64("tolerance", review.DefaultTolerance, "how far a check's slack may shrink, as a fraction of its limit, before it is a regression")
	floor := flags.Float64("floor", review.DefaultFloor, "a check within this fraction of its limit is a regression")
	if done, code := parseFlags(flags, help, args, compareHelp, stdout, stderr); done {
		return code
	}
	if flags.NArg() != 2 {
		fmt.Fprintf(stderr, "locusmith compare: want OLD and NEW, got %d argument%s\nRun 'locusmith compare --help' for usage.\n", flags.NArg(), map[bool]string{true: "", false: "s"}[flags.NArg() == 1])
		return exitUsage
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"tolerance", *tol}, {"floor", *floor}} {
		if !(f.v > 0 && f.v <= 1) {
			fmt.Fprintf(stderr, "locusmith compare: --%s %v: want a fraction of the limit in (0, 1], such as %v\n", f.name, f.v, review.DefaultTolerance)
			return exitUsage
		}
	}
	var files [2]*airframe.File
	for i, arg := range flags.Args() {
		f, err := loadVersion(arg)
		if err != nil {
			reportLoadError(stderr, arg, err)
			return exitUsage
		}
		files[i] = f
	}
	var designs [2]*discrete.Airframe
	designs[0], designs[1] = discrete.DesignPair(files[0], files[1])
	c, err := review.Compare(flags.Arg(0), designs[0], flags.Arg(1), designs[1], *tol, *floor)
	if err != nil {
		fmt.Fprintf(stderr, "locusmith compare: %v\n", err)
		return exitUsage
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		err = enc.Encode(c)
	} else {
		err = c.WriteText(stdout)
	}
	if err != nil {
		fmt.Fprintf(stderr, "locusmith compare: write: %v\n", err)
		return exitUsage
	}
	if *failOn && c.Regressions > 0 {
		fmt.Fprintf(stderr, "locusmith compare: %d regression%s\n", c.Regressions, map[bool]string{true: "", false: "s"}[c.Regressions == 1])
		return exitUnmet
	}
	return exitOK
}

// loadVersion loads an airframe file from a path or, when no such file
// exists and the argument has the form REV:PATH, from git.
func loadVersion(arg string) (*airframe.File, error) {
	if _, err := os.Stat(arg); err == nil || !errors.Is(err, fs.ErrNotExist) {
		return loadFile(arg)
	}
	rev, path, ok := strings.Cut(arg, ":")
	if !ok || rev == "" || path == "" {
		return loadFile(arg) // the not-found error
	}
	data, err := gitShow(rev, path)
	if err != nil {
		return nil, err
	}
	return airframe.Parse(arg, data)
}

// gitShow returns the content of path at revision rev.
func gitShow(rev, path string) ([]byte, error) {
	if strings.HasPrefix(rev, "-") {
		return nil, fmt.Errorf("revision %q: must not start with '-'", rev)
	}
	cmd := exec.Command("git", "show", "--no-textconv", rev+":"+path)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		msg := strings.TrimSpace(errb.String())
		if msg == "" {
			msg = err.Error()
		}
		return nil, fmt.Errorf("git show %s:%s: %s", rev, path, msg)
	}
	return out.Bytes(), nil
}
