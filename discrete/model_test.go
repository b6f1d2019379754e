package discrete

import (
	"math"
	"math/rand/v2"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// modelCase is one controller structure of the reference model.
type modelCase struct {
	name string
	k    Coeffs
}

// modelCases realizes one controller per structure the model handles
// (every form, every anti-windup, the derivative on the measurement and
// on the error) at 1 kHz with Tustin, without a design search: the gains
// of antiWindupCtrls, a lead with its zero at −20 rad/s and pole at
// −200 rad/s. The output limits ±0.5 and integrator limit 0.4 are
// reached by the sequences below.
func modelCases(t testing.TB) []modelCase {
	t.Helper()
	tf := 1 / (2 * math.Pi * 125)
	type cs struct {
		name string
		c    synth.Controller
		aw   string
	}
	var all []cs
	all = append(all,
		cs{"p", synth.Controller{Form: airframe.FormP, Kp: 0.05, B: 0.8}, "none"},
		cs{"pd_meas", synth.Controller{Form: airframe.FormPD, Kp: 0.05, Kd: 0.001, Tf: tf, B: 1}, "none"},
		cs{"pd_err", synth.Controller{Form: airframe.FormPD, Kp: 0.05, Kd: 0.001, Tf: tf, B: 1, DerivativeOnError: true}, "none"},
		cs{"lead", synth.Controller{Form: airframe.FormLead, K: 0.3, Zero: -20, Pole: -200}, "none"},
	)
	for _, aw := range []string{"none", "clamp", "backcalc"} {
		all = append(all,
			cs{"pi_" + aw, synth.Controller{Form: airframe.FormPI, Kp: 0.02, Ki: 0.3, B: 0.7}, aw},
			cs{"pid_meas_" + aw, synth.Controller{Form: airframe.FormPID, Kp: 0.0217, Ki: 0.1525, Kd: 0.000587, Tf: tf, B: 0.5}, aw},
			cs{"pid_err_" + aw, synth.Controller{Form: airframe.FormPID, Kp: 0.0217, Ki: 0.1525, Kd: 0.000587, Tf: tf, B: 1, DerivativeOnError: true}, aw},
		)
	}
	var out []modelCase
	for _, c := range all {
		ctrl := airframe.Control{Form: c.c.Form, OutputLimit: [2]float64{-0.5, 0.5}, IntegratorLimit: 0.4, AntiWindup: c.aw, Discretize: "tustin"}
		k, _, err := Realize(c.c, ctrl, 0.001, math.NaN())
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		out = append(out, modelCase{c.name, k})
	}
	return out
}

// modelInputs is a sequence of setpoints and measurements that saturates
// the command both ways and winds the integrator to its limit: a random
// walk of the measurement around setpoint steps of ±40 rad/s, with
// a fixed seed.
func modelInputs(n int, seed uint64) (r, y []float64) {
	rng := rand.New(rand.NewPCG(seed, 99))
	ym := 0.0
	for i := 0; i < n; i++ {
		sp := []float64{5, -40, 40, 0}[i/50%4]
		ym += 0.1*(sp-ym) + rng.NormFloat64()
		r = append(r, sp)
		y = append(y, ym)
	}
	return r, y
}

// TestNonFiniteInputHeld: a setpoint or measurement that is NaN or
// infinite leaves the state untouched, returns the last command again and
// counts a fault; the run with such samples inserted gives, at every
// finite sample, the bits of the run without them. (Before this rule one
// NaN measurement returned the lower limit and latched: the derivative
// state stayed NaN and the integrator ran to its negative limit until
// Reset.) A non-finite applied command is ignored and counted too.
func TestNonFiniteInputHeld(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	bad := [][2]float64{{nan, 0}, {0, nan}, {inf, 0}, {0, -inf}, {nan, nan}, {inf, inf}, {-inf, 3}}
	for _, c := range modelCases(t) {
		p := ParamsOf[float32](c.k)
		r, y := modelInputs(400, 1)
		var clean, dirty State[float32]
		Reset(&p, &clean, 0.1, 2)
		Reset(&p, &dirty, 0.1, 2)
		faults := uint32(0)
		for i := range r {
			want := Step(&p, &clean, float32(r[i]), float32(y[i]))
			if i%37 == 5 {
				b := bad[(i/37)%len(bad)]
				held := dirty.Ua
				before := dirty
				got := Step(&p, &dirty, float32(b[0]), float32(b[1]))
				faults++
				if math.Float32bits(got) != math.Float32bits(held) {
					t.Fatalf("%s: sample %d (%v, %v): returned %v, want the held command %v", c.name, i, b[0], b[1], got, held)
				}
				before.Faults = faults
				if dirty != before {
					t.Fatalf("%s: sample %d (%v, %v): state changed from %+v to %+v", c.name, i, b[0], b[1], before, dirty)
				}
			}
			got := Step(&p, &dirty, float32(r[i]), float32(y[i]))
			if math.Float32bits(got) != math.Float32bits(want) {
				t.Fatalf("%s: sample %d: %v after non-finite samples, %v without", c.name, i, got, want)
			}
			if i%53 == 7 {
				before := dirty
				Applied(&p, &dirty, float32(nan))
				faults++
				before.Faults = faults
				if dirty != before {
					t.Fatalf("%s: Applied(NaN) changed the state from %+v to %+v", c.name, before, dirty)
				}
			}
			if !(got >= float32(c.k.Lo) && got <= float32(c.k.Hi)) {
				t.Fatalf("%s: sample %d: command %v outside [%g, %g]", c.name, i, got, c.k.Lo, c.k.Hi)
			}
		}
		if dirty.Faults != faults || clean.Faults != 0 {
			t.Errorf("%s: faults %d, want %d (clean run %d)", c.name, dirty.Faults, faults, clean.Faults)
		}
		dirty.Faults = 0
		if dirty != clean {
			t.Errorf("%s: final state %+v, without the bad samples %+v", c.name, dirty, clean)
		}
	}
}

// TestFaultCounterSaturates: the counter stops at the largest uint32
// instead of wrapping to 0 (which would hide a failed sensor).
func TestFaultCounterSaturates(t *testing.T) {
	p := ParamsOf[float64](modelCases(t)[0].k)
	var s State[float64]
	Reset(&p, &s, 0, 0)
	s.Faults = math.MaxUint32 - 1
	Step(&p, &s, math.NaN(), 0)
	Step(&p, &s, math.NaN(), 0)
	if s.Faults != math.MaxUint32 {
		t.Errorf("faults %d, want %d", s.Faults, uint32(math.MaxUint32))
	}
}

// TestResetNonFinite: a non-finite output or measurement given to Reset
// is taken as 0 (both), and counted; the state holds no NaN.
func TestResetNonFinite(t *testing.T) {
	for _, c := range modelCases(t) {
		p := ParamsOf[float64](c.k)
		for _, in := range [][2]float64{{math.NaN(), 1}, {0.2, math.Inf(-1)}} {
			var s, z State[float64]
			Reset(&p, &s, in[0], in[1])
			Reset(&p, &z, 0, 0)
			z.Faults = 1
			if s != z {
				t.Errorf("%s: Reset(%v, %v) = %+v, want %+v", c.name, in[0], in[1], s, z)
			}
			if u := Step(&p, &s, 0, 0); u != 0 {
				t.Errorf("%s: first command after Reset(%v, %v) at rest: %v, want 0", c.name, in[0], in[1], u)
			}
		}
		// The held command before the first step is Reset's output.
		var s State[float64]
		Reset(&p, &s, 0.3, 1)
		if u := Step(&p, &s, math.NaN(), 1); u != 0.3 {
			t.Errorf("%s: held command after Reset(0.3, 1): %v", c.name, u)
		}
	}
}

// deferred is the reference model as it was before the eager integrator
// update (kept here as the oracle of the rewrite): the integrator update
// of a step waited for the applied command and was done at the start of
// the next step, from the stored error and unsaturated command.
type deferred struct {
	S, Ud, Vp, E, Uu, Ua float64
	Pending, Fresh       bool
}

func (s *deferred) reset(p *Params[float64], output, measured float64) {
	*s = deferred{}
	if p.Form == airframe.FormLead {
		s.S = output
		return
	}
	if p.Form.HasIntegral() {
		s.S = clamp(output-(float64(p.KpB*measured)-float64(p.Kp*measured)), -p.IL, p.IL)
	}
	if p.DerivativeOnError {
		s.Fresh = true
	} else {
		s.Vp = -measured
	}
}

func (s *deferred) step(p *Params[float64], r, y float64) float64 {
	if p.Form == airframe.FormLead {
		if s.Pending {
			s.S = float64(p.B1*s.E) - float64(p.A1*s.Uu)
		}
		e := r - y
		ul := float64(p.B0*e) + s.S
		u := clamp(ul, p.Lo, p.Hi)
		s.E, s.Uu, s.Ua, s.Pending = e, ul, u, true
		return u
	}
	if s.Pending && p.Form.HasIntegral() {
		inc := float64(p.G01 * s.E)
		switch p.AntiWindup {
		case AWClamp:
			if s.Ua < s.Uu && s.E > 0 || s.Ua > s.Uu && s.E < 0 {
				inc = 0
			}
		case AWBackcalc:
			inc += float64(p.Kt * (s.Ua - s.Uu))
		}
		s.S = clamp(s.S+inc, -p.IL, p.IL)
	}
	e := r - y
	uu := float64(p.KpB*r) - float64(p.Kp*y)
	if p.Form.HasIntegral() {
		uu += s.S + float64(p.G0*e)
	}
	if p.Form.HasDerivative() {
		v := -y
		if p.DerivativeOnError {
			v = e
		}
		if s.Fresh {
			s.Vp, s.Fresh = v, false
		}
		s.Ud = float64(p.Ad*s.Ud) + float64(p.Bd*(v-s.Vp))
		s.Vp = v
		uu += s.Ud
	}
	u := clamp(uu, p.Lo, p.Hi)
	s.E, s.Uu, s.Ua, s.Pending = e, uu, u, true
	return u
}

// TestEagerMatchesDeferred: without Applied, the eager update gives the
// bits of the deferred one at every sample (the same operations on the
// same values, one step earlier), through saturation both ways, for every
// structure.
func TestEagerMatchesDeferred(t *testing.T) {
	for _, c := range modelCases(t) {
		p := ParamsOf[float64](c.k)
		r, y := modelInputs(1000, 2)
		var s State[float64]
		var o deferred
		Reset(&p, &s, -0.2, 1)
		o.reset(&p, -0.2, 1)
		sat := 0
		for i := range r {
			got, want := Step(&p, &s, r[i], y[i]), o.step(&p, r[i], y[i])
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("%s: sample %d: eager %v, deferred %v", c.name, i, got, want)
			}
			if got == p.Lo || got == p.Hi {
				sat++
			}
		}
		if sat < 50 {
			t.Errorf("%s: the command saturated at %d samples only: the test does not reach the anti-windup", c.name, sat)
		}
	}
}

// TestAppliedCorrection: with a mixer that clips the command and reports
// it, the eager update with Applied's correction follows the deferred
// update (which used the applied command directly): back-calculation
// adds Kt·(applied − returned) to the integrator, so the two integrators
// differ by rounding only: |ΔS| below 1e-14 over 600 samples in float64
// (the integrator stays within its limit 0.4, whose ulp is 5.6e-17; each
// step adds a few roundings, and the anti-windup's contraction keeps them
// from growing: 2.2e-16 is seen). With conditional
// integration the withdrawn increment makes the integrator stop where the
// deferred one stops: both hold still while the mixer clips.
func TestAppliedCorrection(t *testing.T) {
	for _, c := range modelCases(t) {
		if !c.k.Form.HasIntegral() || c.k.AntiWindup == AWNone {
			continue
		}
		p := ParamsOf[float64](c.k)
		r, y := modelInputs(600, 3)
		var s State[float64]
		var o deferred
		Reset(&p, &s, 0, 0)
		o.reset(&p, 0, 0)
		clipped, worst := 0, 0.0
		for i := range r {
			u := Step(&p, &s, r[i], y[i])
			uo := o.step(&p, r[i], y[i])
			if math.Abs(u-uo) > 1e-9 {
				t.Fatalf("%s: sample %d: eager %v, deferred %v", c.name, i, u, uo)
			}
			// The mixer: at most 0.2 either way.
			if a := math.Max(-0.2, math.Min(0.2, u)); a != u {
				clipped++
				Applied(&p, &s, a)
				o.Ua = a
				if s.Ua != a {
					t.Fatalf("%s: Applied did not record %v", c.name, a)
				}
			}
			// The deferred model's integrator lags one step: compare it
			// after its update, which the next step does first.
			var oNext deferred = o
			oNext.step(&p, r[min(i+1, len(r)-1)], y[min(i+1, len(y)-1)])
			worst = math.Max(worst, math.Abs(s.S-oNext.S))
		}
		if clipped < 50 {
			t.Errorf("%s: the mixer clipped %d samples only", c.name, clipped)
		}
		t.Logf("%s: largest difference of the integrators %g", c.name, worst)
		if worst > 1e-14 {
			t.Errorf("%s: integrators differ by %g", c.name, worst)
		}
	}
}

// FuzzStepNonFinite drives every structure of the model with arbitrary
// inputs (each byte pair picks a setpoint and a measurement among finite
// values, zeros of both signs, NaN and the infinities; some bytes call
// Applied or Reset) and checks: the command is always inside the output
// limits or the held command, the state never holds a NaN or an infinity,
// and removing the non-finite samples gives the same commands.
func FuzzStepNonFinite(f *testing.F) {
	f.Add([]byte{1, 2, 3, 200, 201, 7, 9, 250, 13})
	f.Add([]byte{0, 255, 128, 129, 254, 253, 252, 251})
	cases := modelCases(f)
	vals := []float64{0, math.Copysign(0, -1), 1, -1, 40, -40, 1e3, -1e3, 0.25, 3.5, math.NaN(), math.Inf(1), math.Inf(-1)}
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, c := range cases {
			p := ParamsOf[float32](c.k)
			var dirty, clean State[float32]
			Reset(&p, &dirty, 0, 0)
			Reset(&p, &clean, 0, 0)
			for i := 0; i+1 < len(data); i += 2 {
				a, b := data[i], data[i+1]
				switch {
				case a >= 250: // Applied with a value of b
					v := float32(vals[int(b)%len(vals)])
					Applied(&p, &dirty, v)
					if finite(v) {
						Applied(&p, &clean, v)
					}
				case a >= 245: // Reset
					o, m := float32(vals[int(b)%len(vals)]), float32(vals[int(b/16)%len(vals)])
					Reset(&p, &dirty, o, m)
					Reset(&p, &clean, o, m)
				default:
					r, y := float32(vals[int(a)%len(vals)]), float32(vals[int(b)%len(vals)])
					held := dirty.Ua
					u := Step(&p, &dirty, r, y)
					if finite(r) && finite(y) {
						if w := Step(&p, &clean, r, y); math.Float32bits(u) != math.Float32bits(w) {
							t.Fatalf("%s: step %d: %v, without the non-finite samples %v", c.name, i/2, u, w)
						}
						if !(u >= p.Lo && u <= p.Hi) {
							t.Fatalf("%s: step %d: command %v outside [%v, %v]", c.name, i/2, u, p.Lo, p.Hi)
						}
					} else if math.Float32bits(u) != math.Float32bits(held) {
						t.Fatalf("%s: step %d: non-finite input gave %v, held %v", c.name, i/2, u, held)
					}
				}
				for _, x := range []float32{dirty.S, dirty.Ud, dirty.Vp, dirty.Inc, dirty.Ua} {
					if !finite(x) {
						t.Fatalf("%s: state %+v holds a non-finite value", c.name, dirty)
					}
				}
			}
		}
	})
}
