// Package ident identifies the rate-loop plant of the airframe file from a
// logged command and gyro rate.
//
// Model. From the command u to the measured rate y,
//
//	y = H(s)·G(s)·u + b,   G(s) = effectiveness/(s·(motor_tau·s + 1))·e^(−s·delay),
//
// with H(s) = ωs/(s + ωs), ωs = 2π·lowpass_hz, when a gyro lowpass is
// fitted (H = 1 otherwise) and b the gyro bias. This is the physical plant
// of the airframe file ([axes.NAME.plant] effectiveness, motor_tau, delay;
// [axes.NAME.sensor] lowpass_hz).
//
// Method. Output-error least squares (Ljung, System Identification: Theory
// for the User, 2nd ed., 1999, from memory): the parameters minimize the
// squared difference between the measured rate and the simulated response
// of the model to the logged command. The simulation is the exact
// zero-order-hold equivalent between samples, with the delay split into
// whole and fractional samples (modified z-transform), so the fit is exact
// for a command held between log rows, whatever the delay. The search
// starts from an ARX (equation-error) estimate refined by instrumental
// variables, then a coarse scan of the output-error cost, then gonum's
// Newton method on the cost with the linear parameters projected out
// (variable projection). See fit.go for the details and arx.go for the
// starting point.
//
// Initial state. The plant integrates: any command offset makes the rate
// drift, and a simulation started from an assumed state accumulates that
// assumption's error over the whole log. So every segment (a stretch
// between gaps, saturations and the held-out split) gets its own initial
// state, estimated linearly with the rest: a constant (initial rate plus
// gyro bias: the two cannot be told apart for an integrating plant, and
// the constant is the bias when the segment starts at rest), an initial
// angular acceleration (the motor's state) and a command offset (trim).
// The first samples of each segment, which cover the delay line whose
// history is unknown, are simulated but not fitted.
//
// Confidence intervals. The covariance of the estimate is σ²(JᵀJ)⁻¹ with J
// the Jacobian of the simulated output with respect to every parameter
// (nuisance included) at the optimum and σ² the residual variance; the 95 %
// interval is ±1.96 standard errors. This assumes white measurement noise;
// colored residuals (vibration, unmodelled dynamics) make the intervals
// optimistic.
//
// Data handling. Irregular timestamps are resampled to the median interval:
// the command is averaged over each new interval (which keeps its
// integral, and so the integrating plant's response, right), the rate is
// interpolated linearly. Intervals longer than five median intervals are
// gaps: each part is fitted with its own initial state, and so is each
// part between rows that hold NaN (ReadCSV skips them). A row lost from an
// otherwise regular log is interpolated over, and the command it carried
// is unknown: with an integrating plant its error persists to the end of
// the segment, so logs that lose many rows fit worse. Samples where the
// command sits on a saturation plateau (repeated runs at its minimum or
// maximum, or beyond limits given explicitly) are excluded, and the
// stretch after each starts with its own initial state. The last part of
// the log (25 % by default) is held out and the error on it reported.
//
// Identifiability. The fitted lags are symmetric: motor_tau and the
// sensor's 1/(2π·lowpass_hz) can be swapped without changing the output,
// so with a sensor the slower lag is reported as the motor's. A gyro
// lowpass well above the loop bandwidth looks like extra delay; the
// correlation and interval warnings say when the data cannot separate
// them. The effectiveness needs little excitation; the delay and the lags
// need rate content at and above the motor's corner frequency 1/(2π·motor_tau):
// doublets of a few samples and frequency sweeps, with a zero-mean command
// so that the rate does not wander (a wandering rate's slow power hides the
// fast content at a given noise level).
//
// Frequency response and modes. Result.FitModes estimates the frequency
// response of the fitted and the held-out samples separately (Welch,
// freq.go; H1 for an open-loop log, the indirect Pry/Pru with an
// injected excitation), each stretch between breaks on its own, and fits
// lightly damped modes on top of the identified model (modes.go); the
// held-out estimate confirms or drops each. ModeReport.TOML prints them,
// the plant with them in zpk form and the notches they call for.
//
// Determinism. The result is a pure function of the log and the options:
// no randomness, a fixed order of summation, and explicit float64
// conversions in the inner loops against fused multiply-adds.
package ident
