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

const compareHelp = `Usage: locusmith compare [--json] [--fail-on-regression] OLD NEW

Design both versions of an airframe file and show what the change does:

  inputs    every key of the file whose value differs (key path, old,
            new; "(absent)" where a key is missing and its default applies)
  results   every figure of the design that differs, axis by axis: gains,
            closed-loop poles, step metrics, margins, the saturated step,
            fixed-point coefficients and headroom, checks, warnings

A change for the worse is flagged as a REGRESSION: a margin (phase, gain,
delay, stability) or a fixed-point headroom that went down, an overshoot,
settling or recovery time that went up, a check that newly fails, an axis
that no longer designs or meets its spec. Changes within 0.1 % are listed
but not flagged.

OLD and NEW are file paths or git revisions and paths, REV:PATH, read with
'git show REV:PATH' in the current directory (as git takes it: the path
from the top of the repository, or ./PATH relative to the current
directory). A path that exists as a file is always read as a file.

Exit status: 0 compared (regressions or not); 1 with --fail-on-regression
when a regression is flagged; 2 bad input or usage (a file that does not
load, a revision git cannot show).

Examples:
  locusmith compare old/quadrotor.toml examples/quadrotor.toml
  locusmith compare HEAD~1:examples/quadrotor.toml examples/quadrotor.toml
  locusmith compare --fail-on-regression main:./quadrotor.toml ./quadrotor.toml
  locusmith compare --json HEAD:examples/gimbal.toml examples/gimbal.toml`

// runCompare is the compare verb.
func runCompare(args []string, stdout, stderr io.Writer) int {
	flags, help := newFlagSet("compare")
	asJSON := flags.Bool("json", false, "print the comparison as JSON")
	failOn := flags.Bool("fail-on-regression", false, "exit 1 when a regression is flagged")
	if done, code := parseFlags(flags, help, args, compareHelp, stdout, stderr); done {
		return code
	}
	if flags.NArg() != 2 {
		fmt.Fprintf(stderr, "locusmith compare: want OLD and NEW, got %d argument%s\nRun 'locusmith compare --help' for usage.\n", flags.NArg(), map[bool]string{true: "", false: "s"}[flags.NArg() == 1])
		return exitUsage
	}
	var designs [2]*discrete.Airframe
	for i, arg := range flags.Args() {
		f, err := loadVersion(arg)
		if err != nil {
			reportLoadError(stderr, arg, err)
			return exitUsage
		}
		designs[i] = discrete.DesignAirframe(f)
	}
	c, err := review.Compare(flags.Arg(0), designs[0], flags.Arg(1), designs[1])
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
