package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"locusmith/emit"
	"locusmith/internal/ident"
)

const identifyHelp = `Usage: locusmith identify [flags] LOG.csv

Fit the rate-loop plant of the airframe file to a logged command and gyro
rate, and print the TOML section to paste into the airframe file:
[axes.NAME.plant] effectiveness, motor_tau, delay (and, with --sensor,
[axes.NAME.sensor] lowpass_hz), with the fit's evidence as comments:
normalized RMS error, variance accounted for (VAF), a 95 % confidence
interval per parameter and the error on held-out data.

The model is G(s) = effectiveness/(s·(motor_tau·s + 1))·e^(−s·delay), plus
a gyro bias, fitted by output-error least squares on the exact
zero-order-hold simulation. The CSV has a header row; rows starting with
'#' are skipped. Irregular timestamps are resampled to the median interval,
gaps of more than five intervals split the log, and samples where the
command sits at its limits are excluded (said on stderr).

The result is model-based: check it on the bench with propellers off and
fly tethered first; it does not replace flight testing.

Examples:
  locusmith identify flight.csv
  locusmith identify --axis pitch --time t_us --time-unit us \
      --command pid_pitch --rate gyro_pitch flight.csv >> ridgeback.toml
  locusmith identify --sensor --holdout 0.3 -o plots bench_roll.csv
  locusmith identify --saturation=-0.5,0.5 flight.csv

The log is read to at most 1048576 (2^20) samples, and the rest ignored
(said on stderr); a line may be at most 65536 bytes; its median sample
interval must lie between 1 µs and 1 s. LOG.csv must be a regular file;
give - to read standard input (a pipe). The file's name goes into a
comment of the output quoted, with escapes, when it holds a line break
or another control character.

Exit status: 0 the model was fitted (warnings, if any, are in the output
and on stderr); 1 the fit failed; 2 bad input or usage, or an internal
error.`

// identifyAxisPattern is the airframe file's rule for axis names.
var identifyAxisPattern = regexp.MustCompile(`^[a-z][a-z0-9_]{0,31}$`)

// runIdentify is the identify verb.
func runIdentify(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("identify")
	timeCol := fs.String("time", "time", "name of the time column")
	timeUnit := fs.String("time-unit", "s", "unit of the time column: s, ms or us")
	cmdCol := fs.String("command", "command", "name of the command column (the actuator command, any unit)")
	rateCol := fs.String("rate", "rate", "name of the measured rate column (gyro)")
	axis := fs.String("axis", "roll", "axis name for the section header [axes.NAME.plant]")
	sensor := fs.Bool("sensor", false, "also fit a first-order gyro lowpass (lowpass_hz)")
	holdout := fs.Float64("holdout", 0.25, "fraction of the log, at its end, kept out of the fit for validation (0 to 0.9)")
	sat := fs.String("saturation", "auto", "saturated samples to exclude: auto (repeated plateaus at the command's min/max), off, or LO,HI limits")
	maxDelay := fs.Float64("max-delay", ident.DefaultMaxDelay, "largest delay searched, s (up to 0.5)")
	outDir := fs.StringP("output", "o", "", "write the plot <axis>_identify.svg (measured vs fitted rate, residual) into this directory")
	if done, code := parseFlags(fs, help, args, identifyHelp, stdout, stderr); done {
		return code
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "locusmith identify: "+format+"\nRun 'locusmith identify --help' for usage.\n", a...)
		return exitUsage
	}
	if fs.NArg() != 1 {
		return usage("want one LOG.csv file, got %d arguments", fs.NArg())
	}
	if !identifyAxisPattern.MatchString(*axis) {
		return usage("--axis %q: must match [a-z][a-z0-9_]{0,31}, like the axis names of the airframe file", *axis)
	}
	scale, ok := map[string]float64{"s": 1, "ms": 1e-3, "us": 1e-6}[*timeUnit]
	if !ok {
		return usage("--time-unit %q: must be s, ms or us", *timeUnit)
	}
	if !(*holdout >= 0 && *holdout <= 0.9) {
		return usage("--holdout %g: must be in [0, 0.9]", *holdout)
	}
	if !(*maxDelay > 0 && *maxDelay <= 0.5) {
		return usage("--max-delay %g: must be in (0, 0.5] s", *maxDelay)
	}
	satOpt, err := parseIdentifySaturation(*sat)
	if err != nil {
		return usage("--saturation %q: %v", *sat, err)
	}

	path := fs.Arg(0)
	var src io.Reader
	name := path
	if path == "-" {
		src, name = os.Stdin, "stdin"
	} else {
		// Only a regular file: a named pipe would block, a device never
		// end (a pipe can come in on stdin, as "-").
		f, err := openRegular(path)
		if err != nil {
			fmt.Fprintf(stderr, "locusmith identify: %s: %s\n", shown(path), shown(err.Error()))
			if errors.Is(err, errNotRegular) {
				fmt.Fprintln(stderr, "locusmith identify: to read a pipe, give - and send it on standard input")
			}
			return exitUsage
		}
		defer f.Close()
		src = f
	}
	cols := ident.Columns{Time: *timeCol, Command: *cmdCol, Rate: *rateCol, TimeScale: scale}
	log, err := ident.ReadCSV(src, name, cols)
	if err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return exitUsage
	}
	res, err := ident.Identify(log, ident.Options{Sensor: *sensor, Holdout: *holdout, Saturation: satOpt, MaxDelay: *maxDelay})
	if err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return identifyStatus(err)
	}
	for _, n := range res.Notes {
		fmt.Fprintf(stderr, "locusmith identify: %s: %s\n", shown(name), n)
	}
	for _, w := range res.Warnings {
		fmt.Fprintf(stderr, "locusmith identify: %s: warning: %s\n", shown(name), w)
	}
	if *outDir != "" {
		var buf bytes.Buffer
		title := fmt.Sprintf("%s: axis %s, measured and fitted rate", shown(filepath.Base(name)), *axis)
		if err := res.WriteSVG(&buf, title); err != nil {
			fmt.Fprintf(stderr, "locusmith identify: %v\n", err)
			return exitUsage
		}
		out := filepath.Join(*outDir, *axis+"_identify.svg")
		if err := writeFiles(*outDir, []emit.Source{{Name: filepath.Base(out), Data: buf.Bytes()}}); err != nil {
			fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
			return exitUsage
		}
		fmt.Fprintf(stderr, "locusmith identify: wrote %s\n", shown(out))
	}
	io.WriteString(stdout, res.TOML(*axis, filepath.Base(name)))
	return exitOK
}

// parseIdentifySaturation reads the --saturation value.
func parseIdentifySaturation(s string) (ident.Saturation, error) {
	switch s {
	case "auto":
		return ident.Saturation{Mode: ident.SatAuto}, nil
	case "off":
		return ident.Saturation{Mode: ident.SatOff}, nil
	}
	lo, hi, ok := strings.Cut(s, ",")
	if !ok {
		return ident.Saturation{}, fmt.Errorf("must be auto, off or LO,HI")
	}
	l, err1 := strconv.ParseFloat(strings.TrimSpace(lo), 64)
	h, err2 := strconv.ParseFloat(strings.TrimSpace(hi), 64)
	if err1 != nil || err2 != nil || math.IsNaN(l) || math.IsNaN(h) || math.IsInf(l, 0) || math.IsInf(h, 0) {
		return ident.Saturation{}, fmt.Errorf("LO and HI must be finite numbers")
	}
	if !(l < h) {
		return ident.Saturation{}, fmt.Errorf("LO must be below HI")
	}
	return ident.Saturation{Mode: ident.SatLimits, Lo: l, Hi: h}, nil
}

// identifyStatus is the exit status of an error of ident.Identify: bad
// input and an internal error (a recovered panic: a bug, which the
// status of a failed fit would pass off as a property of the log) are 2,
// as for every verb (README, "Exit status"); a fit that fails on good
// input is 1.
func identifyStatus(err error) int {
	if ident.IsInputError(err) || errors.Is(err, ident.ErrInternal) {
		return exitUsage
	}
	return exitUnmet
}
