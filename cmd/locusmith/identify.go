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

const identifyHelp = `Usage: locusmith identify [flags] LOG.csv [LOG.csv ...]

Fit the rate-loop plant of the airframe file to a logged command and gyro
rate, and print the TOML section to paste into the airframe file:
[axes.NAME.plant] effectiveness, motor_tau, delay (and, with --sensor,
[axes.NAME.sensor] lowpass_hz), with the fit's evidence as comments:
normalized RMS error, variance accounted for (VAF), a 95 % confidence
interval per parameter and the error on held-out data.

The model is G(s) = effectiveness/(s·(motor_tau·s + 1))·e^(−s·delay), plus
a gyro bias, fitted by output-error least squares on the exact
zero-order-hold simulation. The CSV has a header row; rows starting with
'#' are skipped; --delimiter sets the field separator. Irregular
timestamps are resampled to the median interval, gaps of more than five
intervals and rows holding NaN split the log (each part is fitted with
its own initial state), and samples where the command sits at its limits
are excluded (said on stderr). A command that is constant, or changes
value fewer than 4 times, is refused: the log must excite the axis.

Units. The airframe file's rates are in rad/s, so the rate column is
taken as rad/s, or converted from °/s with --rate-unit deg/s; the unit
is echoed in the output. A rad/s log whose |rate| exceeds 35 rad/s
(about 2000 °/s, a gyro's largest full scale) or a deg/s log whose peak
stays below 0.5 °/s gets a warning on stderr: it is likely in the other
unit.

Modes (--modes N, default 2; 0 turns them off). After the fit, the
frequency response of the fitted and of the held-out part is estimated
from Welch-averaged spectra (Hann segments of a power of two samples
near a 2 Hz resolution, 512 at 1 kHz, shortened until there are at
least 16 averages), with the estimator the log calls for:
  open loop (no --excitation): H1 = Puy/Puu. In a closed-loop log the
    command answers the gyro noise and H1 is biased (towards the
    controller's inverse), so name the injected excitation then;
  closed loop (--excitation COL): the indirect estimate Pry/Pru from the
    excitation r injected into the loop (added to the command or the
    setpoint), consistent whatever the feedback.
Lightly damped pole pairs (with zero pairs where the data demand them)
are fitted on top of the identified model; a mode is kept when it lowers
the weighted error by more than the 99.9 % point of χ² with two degrees
of freedom and the held-out part agrees. Each mode is printed with its
95 % intervals; then the plant with the modes in the airframe's zpk form
(gain, poles, zeros; gain and delay as the mode fit corrects them) as a
commented alternative [axes.NAME.plant], and a
[[axes.NAME.filter]] notch for each mode from the crossover to a decade
above it (hz the mode's frequency, width_hz the wider of 2·damping·hz
and the 95 % interval). The crossover is --crossover-hz, or estimated as
1/(2π·(motor_tau + delay + 1/(2π·lowpass_hz))). A candidate the data
cannot support is not printed: stderr says why.

Several logs of one axis (at different battery voltages or payloads):
each is fitted, and the nominal plant and the [axes.NAME.envelope] that
covers every log's 95 % intervals are printed, with the per-log
estimates as comments (modes are fitted on a single log only).

With -o DIR the TOML goes into DIR as <axis>_identified.toml instead of
standard output (-o names where a verb's output goes, on every verb);
progress and notes go to stderr. With --plots DIR the plots are written
there: the measured and fitted rate,
and the frequency-response estimate (magnitude, phase, coherence) with
the model, without and with the modes, over it.

The result is model-based: check it on the bench with propellers off and
fly tethered first; it does not replace flight testing. The TOML goes to
stdout, notes and warnings to stderr.

Examples:
  locusmith identify flight.csv
  locusmith identify --axis pitch --time t_us --time-unit us \
      --command pid_pitch --rate gyro_pitch --rate-unit deg/s \
      flight.csv >> ridgeback.toml
  locusmith identify --excitation inject --modes 2 closed_loop.csv
  locusmith identify --sensor --holdout 0.3 --plots plots bench_roll.csv
  locusmith identify --axis pitch -o identified flight.csv
  locusmith identify --delimiter ';' --saturation=-0.5,0.5 flight.csv
  locusmith identify full.csv half.csv low_battery.csv

The log is read to at most 1048576 (2^20) samples, and the rest ignored
(said on stderr); a line may be at most 65536 bytes; its median sample
interval must lie between 1 µs and 1 s. LOG.csv must be a regular file;
give - to read standard input (a pipe), once. The file's name goes into
a comment of the output quoted, with escapes, when it holds a line break
or another control character.

Exit status: 0 the model was fitted (warnings, if any, are in the output
and on stderr); 1 the fit failed, or several logs disagree beyond one
envelope; 2 bad input or usage, or an internal error.`

// identifyAxisPattern is the airframe file's rule for axis names.
var identifyAxisPattern = regexp.MustCompile(`^[a-z][a-z0-9_]{0,31}$`)

// runIdentify is the identify verb.
func runIdentify(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("identify")
	timeCol := fs.String("time", "time", "name of the time column")
	timeUnit := fs.String("time-unit", "s", "unit of the time column: s, ms or us")
	cmdCol := fs.String("command", "command", "name of the command column (the actuator command, any unit)")
	rateCol := fs.String("rate", "rate", "name of the measured rate column (gyro)")
	rateUnit := fs.String("rate-unit", "rad/s", "unit of the rate column: rad/s or deg/s (converted to rad/s, the airframe file's unit)")
	excCol := fs.String("excitation", "", "name of the column of an excitation injected into a closed loop (none: the log is taken as open loop)")
	delim := fs.String("delimiter", ",", `field separator, one character (for example ";", "|" or "\t" for a tab)`)
	axis := fs.String("axis", "roll", "axis name for the section header [axes.NAME.plant]")
	sensor := fs.Bool("sensor", false, "also fit a first-order gyro lowpass (lowpass_hz)")
	holdout := fs.Float64("holdout", 0.25, "fraction of the log, at its end, kept out of the fit for validation (0 to 0.9)")
	sat := fs.String("saturation", "auto", "saturated samples to exclude: auto (repeated plateaus at the command's min/max), off, or LO,HI limits")
	maxDelay := fs.Float64("max-delay", ident.DefaultMaxDelay, "largest delay searched, s (up to 0.5)")
	modes := fs.Int("modes", 2, "most lightly damped modes fitted above the low-order model (0 to 4; 0: none)")
	crossover := fs.Float64("crossover-hz", 0, "crossover the notch suggestions are judged against, Hz (0: estimated, 1/(2π·(motor_tau + delay + gyro lag)))")
	toDir := fs.StringP("output", "o", "", "write the TOML into this directory as <axis>_identified.toml instead of standard output (created if missing), as every verb's -o names where its output goes")
	outDir := fs.String("plots", "", "write the plots into this directory: <axis>_identify.svg (measured vs fitted rate, residual; <axis>_identify_K.svg for the K-th of several logs) and, with modes, <axis>_frequency.svg (the frequency-response estimate with the model over it)")
	if done, code := parseFlags(fs, help, args, identifyHelp, stdout, stderr); done {
		return code
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "locusmith identify: "+format+"\nRun 'locusmith identify --help' for usage.\n", a...)
		return exitUsage
	}
	if fs.NArg() == 0 {
		return usage("want one LOG.csv file, or several logs of one axis, got none")
	}
	if !identifyAxisPattern.MatchString(*axis) {
		return usage("--axis %q: must match [a-z][a-z0-9_]{0,31}, like the axis names of the airframe file", *axis)
	}
	scale, ok := map[string]float64{"s": 1, "ms": 1e-3, "us": 1e-6}[*timeUnit]
	if !ok {
		return usage("--time-unit %q: must be s, ms or us", *timeUnit)
	}
	rateScale, ok := map[string]float64{"rad/s": 1, "deg/s": math.Pi / 180}[*rateUnit]
	if !ok {
		return usage("--rate-unit %q: must be rad/s or deg/s", *rateUnit)
	}
	sep, err := parseDelimiter(*delim)
	if err != nil {
		return usage("--delimiter %q: %v", *delim, err)
	}
	if !(*holdout >= 0 && *holdout <= 0.9) {
		return usage("--holdout %g: must be in [0, 0.9]", *holdout)
	}
	if !(*maxDelay > 0 && *maxDelay <= 0.5) {
		return usage("--max-delay %g: must be in (0, 0.5] s", *maxDelay)
	}
	if *modes < 0 || *modes > 4 {
		return usage("--modes %d: must be 0 to 4", *modes)
	}
	if !(*crossover >= 0) || math.IsInf(*crossover, 0) {
		return usage("--crossover-hz %g: must be a positive finite number of Hz, or 0 to estimate it", *crossover)
	}
	satOpt, err := parseIdentifySaturation(*sat)
	if err != nil {
		return usage("--saturation %q: %v", *sat, err)
	}
	stdin := 0
	for _, p := range fs.Args() {
		if p == "-" {
			stdin++
		}
	}
	if stdin > 1 {
		return usage("standard input (-) given %d times: it can be read once", stdin)
	}

	cols := ident.Columns{Time: *timeCol, Command: *cmdCol, Rate: *rateCol, Excitation: *excCol,
		TimeScale: scale, RateScale: rateScale, Delimiter: sep}
	opt := ident.Options{Sensor: *sensor, Holdout: *holdout, Saturation: satOpt, MaxDelay: *maxDelay}
	var names []string
	var results []*ident.Result
	for i, path := range fs.Args() {
		name, res, code := identifyOne(path, cols, opt, *rateUnit, stderr)
		if code != exitOK {
			return code
		}
		if *outDir != "" {
			file := *axis + "_identify.svg"
			if fs.NArg() > 1 {
				file = fmt.Sprintf("%s_identify_%d.svg", *axis, i+1)
			}
			if code := identifyPlot(*outDir, file, name, *axis, res, stderr); code != exitOK {
				return code
			}
		}
		names, results = append(names, filepath.Base(name)), append(results, res)
	}
	unitNote := fmt.Sprintf("# The log's rate was in %s; the airframe file's rates are in rad/s.\n", *rateUnit)
	if len(results) > 1 {
		rng, err := ident.Cover(names, results)
		if err != nil {
			fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
			return exitUnmet
		}
		if *modes > 0 {
			fmt.Fprintln(stderr, "locusmith identify: modes are fitted on one log at a time: run identify on a single log for them")
		}
		return identifyOutput(*toDir, *axis, unitNote+rng.TOML(*axis), stdout, stderr)
	}
	res := results[0]
	out := unitNote + res.TOML(*axis, names[0])
	if *modes > 0 {
		mr, err := res.FitModes(*modes)
		switch {
		case errors.Is(err, ident.ErrInternal):
			fmt.Fprintf(stderr, "locusmith identify: %s: %s\n", shown(names[0]), shown(err.Error()))
			return exitUsage
		case err != nil:
			// The low-order fit stands; the modes need a longer or richer log.
			fmt.Fprintf(stderr, "locusmith identify: %s: no modes: %s\n", shown(names[0]), shown(err.Error()))
		default:
			for _, n := range mr.Notes {
				fmt.Fprintf(stderr, "locusmith identify: %s: %s\n", shown(names[0]), n)
			}
			fc, from := *crossover, "--crossover-hz"
			if fc == 0 {
				fc, from = res.CrossoverEstimate(), "estimated as 1/(2π·(motor_tau + delay + gyro lag)); --crossover-hz sets it"
			}
			out += mr.TOML(*axis, res, fc, from)
			if *outDir != "" {
				if code := identifyFreqPlot(*outDir, *axis+"_frequency.svg", names[0], *axis, res, mr, stderr); code != exitOK {
					return code
				}
			}
		}
	}
	return identifyOutput(*toDir, *axis, out, stdout, stderr)
}

// identifyOutput prints the TOML on stdout, or with -o DIR writes it into
// DIR as <axis>_identified.toml through the one file writer.
func identifyOutput(dir, axis, toml string, stdout, stderr io.Writer) int {
	if dir == "" {
		io.WriteString(stdout, toml)
		return exitOK
	}
	file := axis + "_identified.toml"
	if err := writeFiles(dir, []emit.Source{{Name: file, Data: []byte(toml)}}); err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return exitUsage
	}
	fmt.Fprintf(stderr, "locusmith identify: wrote %s\n", shown(filepath.Join(dir, file)))
	return exitOK
}

// identifyOne reads and fits the log at path ("-": standard input),
// reporting on stderr. It returns the log's name for messages, the
// result, and exitOK or the status to exit with.
func identifyOne(path string, cols ident.Columns, opt ident.Options, rateUnit string, stderr io.Writer) (string, *ident.Result, int) {
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
			return name, nil, exitUsage
		}
		defer f.Close()
		src = f
	}
	log, err := ident.ReadCSV(src, name, cols)
	if err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return name, nil, exitUsage
	}
	if w := rateUnitWarning(log.Rate, rateUnit); w != "" {
		fmt.Fprintf(stderr, "locusmith identify: %s: warning: %s\n", shown(name), w)
	}
	res, err := ident.Identify(log, opt)
	if err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return name, nil, identifyStatus(err)
	}
	for _, n := range res.Notes {
		fmt.Fprintf(stderr, "locusmith identify: %s: %s\n", shown(name), n)
	}
	for _, w := range res.Warnings {
		fmt.Fprintf(stderr, "locusmith identify: %s: warning: %s\n", shown(name), w)
	}
	return name, res, exitOK
}

// identifyPlot writes the plot of res into dir as file.
func identifyPlot(dir, file, name, axis string, res *ident.Result, stderr io.Writer) int {
	title := fmt.Sprintf("%s: axis %s, measured and fitted rate", shown(filepath.Base(name)), axis)
	return writePlot(dir, file, stderr, func(w io.Writer) error { return res.WriteSVG(w, title) })
}

// identifyFreqPlot writes the frequency-response plot of mr into dir as
// file.
func identifyFreqPlot(dir, file, name, axis string, res *ident.Result, mr *ident.ModeReport, stderr io.Writer) int {
	title := fmt.Sprintf("%s: axis %s, frequency response and model", shown(filepath.Base(name)), axis)
	return writePlot(dir, file, stderr, func(w io.Writer) error { return mr.WriteSVG(w, res, title) })
}

// writePlot renders a plot with draw and writes it into dir as file
// through the one file writer, saying so on stderr.
func writePlot(dir, file string, stderr io.Writer, draw func(io.Writer) error) int {
	var buf bytes.Buffer
	if err := draw(&buf); err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %v\n", err)
		return exitUsage
	}
	if err := writeFiles(dir, []emit.Source{{Name: file, Data: buf.Bytes()}}); err != nil {
		fmt.Fprintf(stderr, "locusmith identify: %s\n", shown(err.Error()))
		return exitUsage
	}
	fmt.Fprintf(stderr, "locusmith identify: wrote %s\n", shown(filepath.Join(dir, file)))
	return exitOK
}

// Magnitudes that suggest the other rate unit. A rate-loop gyro's full
// scale is at most about 2000 °/s = 34.9 rad/s (the largest range of
// common MEMS gyros, from memory), so a rad/s log beyond 35 is most
// likely in °/s; a °/s log whose peak stays below 0.5 °/s (0.0087 rad/s)
// moved the airframe less than a gyro's typical noise and bias, and is
// more likely a rad/s log of an ordinary test (peaks of 0.1 to 10).
const (
	maxRadPerSec = 35.0
	minDegPerSec = 0.5
)

// rateUnitWarning returns a warning when the rate's magnitude (rad/s,
// after conversion) suggests the other unit than unit, or "".
func rateUnitWarning(rate []float64, unit string) string {
	var peak float64
	for _, v := range rate {
		peak = math.Max(peak, math.Abs(v))
	}
	switch unit {
	case "rad/s":
		if peak > maxRadPerSec {
			return fmt.Sprintf("the rate reaches %.4g rad/s (%.4g °/s), beyond a gyro's full scale of about %g rad/s: is the log in deg/s? (--rate-unit deg/s)", peak, peak*180/math.Pi, maxRadPerSec)
		}
	case "deg/s":
		if d := peak * 180 / math.Pi; d < minDegPerSec {
			return fmt.Sprintf("the rate never exceeds %.4g °/s, below %g °/s: is the log in rad/s? (--rate-unit rad/s)", d, minDegPerSec)
		}
	}
	return ""
}

// parseDelimiter reads the --delimiter value: one character, or the
// escape \t (a tab is awkward to type in a shell).
func parseDelimiter(s string) (rune, error) {
	if s == `\t` || s == "tab" {
		return '\t', nil
	}
	r := []rune(s)
	if len(r) != 1 {
		return 0, fmt.Errorf(`must be one character (for example "," ";" "|", or "\t" for a tab)`)
	}
	if !ident.ValidDelimiter(r[0]) {
		return 0, fmt.Errorf(`cannot be '#', '"', a space or a line break (they mark comments, quotes and rows)`)
	}
	return r[0], nil
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
