// Package synth designs a continuous-time rate controller for one axis by
// root-locus placement and verifies the full-order closed loop against the
// spec.
//
// The loop is
//
//	r ─▶ F ─┐
//	        ├─▶ u ─▶ G(s) ─▶ y ─▶ H(s) ─▶ y_m
//	y_m ─▶ C┘
//
// with the parallel PID C(s) = Kp + Ki/s + Kd·s/(Tf·s + 1), the setpoint path
// F(s) = b·Kp + Ki/s (+ the derivative term when the derivative acts on the
// error), or the lead compensator C(s) = K(s − z)/(s − p). G includes the
// plant's transport delay e^(−sτ); H is the rate sensor.
package synth
