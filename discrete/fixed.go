package discrete

import "locusmith/airframe"

// QCoeff is one coefficient of the integer controller.
//
// Raw fits the data word (w bits) and stands for the normalized value
// Raw·2^−Frac (format Q(w−1−Frac).Frac). Shift is the right shift, with
// round-half-up, that brings its product to the format of the value it
// feeds (negative: an exact left shift by −Shift). Wide says the other
// operand is an accumulator-width value whose product with Raw might not
// fit the accumulator, so the product is formed by MulWide; otherwise by
// MulRound. Both compute the same exact value round(Raw·x·2^−Shift); Wide
// only says how.
type QCoeff struct {
	Raw   int64
	Frac  int
	Shift int
	Wide  bool
}

// Fixed is the bit-exact integer controller of a q15 or q31 realization:
// the specification of the emitted fixed-point code. It takes and returns
// raw data words: raw = value/full_scale·2^(w−1) (input full scale for the
// setpoint and the measurement, output full scale for the command), and
// keeps its states in accumulator words.
//
// Widths: W = 16 (q15): data int16, accumulators int32; W = 32 (q31): data
// int32, accumulators int64 (W = 8, int8/int16, is the analogue the tests
// use). Step takes and returns int32 for both; q15 values lie in the int16
// range (an argument outside it is saturated to it first, as the C
// function's int16_t parameters cannot hold it).
//
// Formats. The states and the sum carry FS, FD and FU fractional bits
// below the output LSB: the integrator S has FS, the derivative state Ud
// FD, the sum before saturation uu (and the lead state) FU. E, Vp and du
// are raw, at the input resp. output LSB, in accumulator words.
//
// The exact operation sequence of one sample. D is the data type, A the
// accumulator type; every name is an A unless marked D; (A)x widens;
// K stands for the constant K.Raw, a D; each line is one statement of the
// emitted code, in this order. The helpers (qmath.go, each one C
// expression of the same widths, tested against math/big):
//
//	rsh(x, n)   RoundShift: n = 0: x; n > 0: (x >> n) + ((x >> (n−1)) & 1)
//	mul(K, x)   K.Wide false: p = (A)K * x, then rsh(p, K.Shift), or
//	            p * 2^(−K.Shift) when K.Shift < 0   (MulRound)
//	            K.Wide true (MulWide, 0 ≤ K.Shift ≤ 2W − 2):
//	              hi = x >> W; lo = x & (2^W − 1); ch = (A)K * hi; cl = (A)K * lo
//	              K.Shift ≤ W: ch * 2^(W − K.Shift) + rsh(cl, K.Shift)
//	              K.Shift > W: rsh(ch + (cl >> W), K.Shift − W)
//	clamp(x, lo, hi), satadd(a, b), satshl(x, n)   Clamp, SatAdd, SatShiftLeft
//
// Every shift count is a constant of the realization. States persist in
// the state struct: S, Ud, Vp, E, Uu (A), Ua (D), Pending, Fresh, and the
// filter sections' X1, X2, Y1, Y2 (A).
//
// The feedback filter chain (Sections; none without one) runs first, on
// the measurement, each section in direct form I (see FixedSection):
//
//	y = (A)y
//	for each section, in the order of the chain:
//	    v = mul(B0, y) + mul(B1, X1) + mul(B2, X2) − mul(A1, Y1) − mul(A2, Y2)
//	    X2 = X1; X1 = y; Y2 = Y1; Y1 = v; y = v
//	y = rsh(y, F of the last section)          // input LSB again
//
// (a first-order section has no B2, A2, X2, Y2; the sum is evaluated
// left to right, each partial sum a proved bound). The controller below
// then works on this y, an accumulator word: its bound (the chain's ℓ1
// gain times the input full scale) may exceed the data word.
//
// PID family (p, pi, pd, pid):
//
//	if Pending && form has I:
//	    inc = mul(G01, E)                      // integrator increment, FS
//	    clamp anti-windup:
//	        ur = rsh(Uu, FU)                   // last command before saturation, output LSB
//	        if (Ua < ur && E > 0) || (Ua > ur && E < 0): inc = 0
//	    back-calculation:
//	        du = (A)Ua − rsh(Uu, FU)           // applied − unsaturated, output LSB
//	        inc = inc + mul(Kt, du)            // satadd when SatInc
//	    S = S + inc                            // satadd when SatInt
//	    S = clamp(S, −IL, IL)
//	e = (A)r − (A)y                            // input LSB, exact
//	uu = mul(KpB, (A)r) − mul(Kp, (A)y)        // FU
//	if form has I:
//	    uu = uu + rsh(S, FS − FU)
//	    uu = uu + mul(G0, e)
//	if form has D:
//	    v = −(A)y, or v = e with the derivative on the error
//	    if Fresh: Vp = v; Fresh = false
//	    Ud = mul(Ad, Ud) + mul(Bd, v − Vp)     // FD
//	    Vp = v
//	    d = Ud
//	    for each derivative section (DSections), in order:
//	        w = mul(B0, d) + mul(B1, X1) + mul(B2, X2) − mul(A1, Y1) − mul(A2, Y2)
//	        X2 = X1; X1 = d; Y2 = Y1; Y1 = w; d = w
//	    uu = uu + rsh(d, FDF − FU)             // FDF: the last section's F, or FD
//	u = (D)clamp(rsh(uu, FU), Lo, Hi)         // output LSB
//	E = e; Uu = uu; Ua = u; Pending = true
//	return u
//
// The derivative sections are the feedback chain's direct form I on the
// D term: their formats (FIn, F) count fractional bits below the output
// LSB, the first section's input is Ud (FIn = FD), and their states
// start at 0, the D term's rest.
//
// Lead form (x is kept in S, in FU):
//
//	if Pending: S = mul(B1, E) − mul(A1, Uu)
//	e = (A)r − (A)y
//	ul = mul(B0, e) + S
//	u = (D)clamp(rsh(ul, FU), Lo, Hi)
//	E = e; Uu = ul; Ua = u; Pending = true
//	return u
//
// This is model.go's operation order, term for term, with each product
// rounded once into the format of the value it feeds. No step divides, and
// the realization proves every intermediate within its word (Realization.
// Ranges); the only saturations are the output clamp and, where SatInc or
// SatInt says so, the integrator update (and Reset's satshl), whose
// saturating operations are exact under the clamp to ±IL that follows
// (see RealizeNumeric). The final (D) conversion is exact: Lo and Hi are
// data words.
type Fixed struct {
	Type              airframe.NumericType
	W                 int // data bits; accumulators have 2W
	Form              airframe.Form
	AntiWindup        AntiWindup
	DerivativeOnError bool
	// The coefficients the form uses; the others are zero.
	KpB, Kp, G0, G01, Kt, Ad, Bd, B0, B1, A1 QCoeff
	// Lo and Hi are the raw output limits (data word); IL is the
	// integrator limit in the integrator's format (accumulator word).
	Lo, Hi, IL int64
	// FS, FD, FU: fractional bits below the output LSB of the integrator,
	// the derivative state and the sum (and the lead state).
	FS, FD, FU int
	// SatInc and SatInt select saturating adds in the integrator update.
	SatInc, SatInt bool
	// Sections is the feedback filter chain, in the order it runs; nil
	// without one.
	Sections []FixedSection
	// DSections are the derivative filters, run on Ud in this order; nil
	// without them. Their FIn and F are below the output LSB.
	DSections []FixedSection
}

// FixedState is the memory of the integer controller between samples.
// The accumulator-width values are held in int64 (q15 keeps them in the
// int32 range).
type FixedState struct {
	S, Ud, Vp, E, Uu int64
	Ua               int32
	Pending          bool
	Fresh            bool
	// F holds the states X1, X2, Y1, Y2 of each filter section (X2 and
	// Y2 stay 0 in a first-order section).
	F [airframe.MaxFilters][4]int64
	// D holds the states X1, X2, Y1, Y2 of each derivative section; 0 at
	// rest (the D term of a constant measurement).
	D [airframe.MaxFilters][4]int64
}

// Reset makes the transfer bumpless, as Reset of the reference model: the
// next command equals the raw output when the setpoint then equals the
// measurement, so the integrator (lead: the filter state) takes the output
// minus the proportional part (KpB − Kp)·measured, and the derivative
// history takes the raw measurement:
//
//	*s = {}
//	lead:    S = (A)output * 2^FU
//	form I:  q = (A)output * 2^FU − (mul(KpB, (A)measured) − mul(Kp, (A)measured))
//	         S = clamp(satshl(q, FS − FU), −IL, IL)
//	form D:  on the error: Fresh = true; on the measurement: Vp = −(A)measured
//	each filter section: X1 = X2 = (A)measured * 2^FIn, Y1 = Y2 = (A)measured * 2^F
//	each derivative section: 0 (the zeroed state: the rest of the D term)
//
// (q is in the sum's format FU, as the step's proportional terms; the
// saturating shift SatShiftLeft is exact under the clamp that follows.)
// Each filter section starts at its steady state for a constant input
// measured: its quantized DC gain is exactly 1 (see FixedSection), so its
// input and its output both stand for measured, and the controller sees
// no step at engagement.
func (f *Fixed) Reset(s *FixedState, output, measured int32) {
	switch f.W {
	case 8:
		fixedReset[int8, int16](f, s, int8(f.sat(output)), int8(f.sat(measured)))
	case 16:
		fixedReset[int16, int32](f, s, int16(f.sat(output)), int16(f.sat(measured)))
	case 32:
		fixedReset[int32, int64](f, s, output, measured)
	}
}

func fixedReset[D, A Word](f *Fixed, s *FixedState, output, measured D) {
	*s = FixedState{}
	for k := range f.Sections {
		q := &f.Sections[k]
		in, out := int64(shl(A(measured), q.FIn)), int64(shl(A(measured), q.F))
		s.F[k][0], s.F[k][2] = in, out
		if q.Second {
			s.F[k][1], s.F[k][3] = in, out
		}
	}
	if f.Form == airframe.FormLead {
		s.S = int64(shl(A(output), f.FU))
		return
	}
	if f.Form.HasIntegral() {
		q := shl(A(output), f.FU) - (mulQ[D](&f.KpB, A(measured)) - mulQ[D](&f.Kp, A(measured)))
		s.S = int64(Clamp(SatShiftLeft(q, f.FS-f.FU), -A(f.IL), A(f.IL)))
	}
	if f.Form.HasDerivative() {
		if f.DerivativeOnError {
			s.Fresh = true
		} else {
			s.Vp = -int64(measured)
		}
	}
}

// Applied records the raw command actually applied downstream; the next
// step's anti-windup works from it (Ua = applied).
func (f *Fixed) Applied(s *FixedState, applied int32) {
	s.Ua = f.sat(applied)
}

// sat saturates x to the data word.
func (f *Fixed) sat(x int32) int32 {
	switch f.W {
	case 8:
		return int32(Sat[int8](x))
	case 16:
		return int32(Sat[int16](x))
	}
	return x
}

// Step runs one sample: raw setpoint r and raw measurement y in, raw
// command out (see Fixed for the operation sequence). An unsupported W
// returns 0.
func (f *Fixed) Step(s *FixedState, r, y int32) int32 {
	switch f.W {
	case 8:
		return int32(fixedStep[int8, int16](f, s, int8(f.sat(r)), int8(f.sat(y))))
	case 16:
		return int32(fixedStep[int16, int32](f, s, int16(f.sat(r)), int16(f.sat(y))))
	case 32:
		return int32(fixedStep[int32, int64](f, s, r, y))
	}
	return 0
}

// shl is x·2^n for the format shifts, which the realization keeps ≥ 0 (a
// negative n, possible only in a hand-made Fixed, shifts by nothing
// rather than panic).
func shl[A Word](x A, n int) A { return x << max(n, 0) }

// mulQ is mul(K, x) of the operation sequence.
func mulQ[D, A Word](k *QCoeff, x A) A {
	if k.Wide {
		return MulWide(D(k.Raw), x, k.Shift)
	}
	return MulRound(D(k.Raw), x, k.Shift)
}

func addQ[A Word](a, b A, sat bool) A {
	if sat {
		return SatAdd(a, b)
	}
	return a + b
}

// fixedChain runs the feedback filter chain on the raw measurement y and
// returns its output at the input LSB (y itself without a chain).
func fixedChain[D, A Word](f *Fixed, s *FixedState, y A) A {
	if len(f.Sections) == 0 {
		return y
	}
	y = runSections[D](f.Sections, s.F[:], y)
	return RoundShift(y, f.Sections[len(f.Sections)-1].F)
}

// runSections runs the direct form I sections qs, whose states are st, on
// x and returns the last one's output in its format.
func runSections[D, A Word](qs []FixedSection, st [][4]int64, x A) A {
	for k := range qs {
		q, st := &qs[k], &st[k]
		x1, x2, y1, y2 := A(st[0]), A(st[1]), A(st[2]), A(st[3])
		v := mulQ[D](&q.B0, x) + mulQ[D](&q.B1, x1)
		if q.Second {
			v += mulQ[D](&q.B2, x2)
		}
		v -= mulQ[D](&q.A1, y1)
		if q.Second {
			v -= mulQ[D](&q.A2, y2)
			st[1], st[3] = int64(x1), int64(y1)
		}
		st[0], st[2] = int64(x), int64(v)
		x = v
	}
	return x
}

// dChainF is the format of the D term where it joins the sum: the last
// derivative section's F, or FD without them.
func (f *Fixed) dChainF() int {
	if n := len(f.DSections); n > 0 {
		return f.DSections[n-1].F
	}
	return f.FD
}

// fixedStep is Step in the data word D and the accumulator word A.
func fixedStep[D, A Word](f *Fixed, s *FixedState, r, yd D) D {
	y := fixedChain[D](f, s, A(yd))
	S, Ud, Vp, E, Uu, Ua := A(s.S), A(s.Ud), A(s.Vp), A(s.E), A(s.Uu), A(s.Ua)
	lo, hi := A(f.Lo), A(f.Hi)
	var uu, e A
	if f.Form == airframe.FormLead {
		if s.Pending {
			S = mulQ[D](&f.B1, E) - mulQ[D](&f.A1, Uu)
		}
		e = A(r) - y
		uu = mulQ[D](&f.B0, e) + S
	} else {
		if s.Pending && f.Form.HasIntegral() {
			inc := mulQ[D](&f.G01, E)
			switch f.AntiWindup {
			case AWClamp:
				ur := RoundShift(Uu, f.FU)
				if Ua < ur && E > 0 || Ua > ur && E < 0 {
					inc = 0
				}
			case AWBackcalc:
				du := Ua - RoundShift(Uu, f.FU)
				inc = addQ(inc, mulQ[D](&f.Kt, du), f.SatInc)
			}
			S = addQ(S, inc, f.SatInt)
			S = Clamp(S, -A(f.IL), A(f.IL))
		}
		e = A(r) - y
		uu = mulQ[D](&f.KpB, A(r)) - mulQ[D](&f.Kp, y)
		if f.Form.HasIntegral() {
			uu += RoundShift(S, f.FS-f.FU)
			uu += mulQ[D](&f.G0, e)
		}
		if f.Form.HasDerivative() {
			v := -y
			if f.DerivativeOnError {
				v = e
			}
			if s.Fresh {
				Vp, s.Fresh = v, false
			}
			Ud = mulQ[D](&f.Ad, Ud) + mulQ[D](&f.Bd, v-Vp)
			Vp = v
			// The derivative filters, if any, run on Ud.
			uu += RoundShift(runSections[D](f.DSections, s.D[:], Ud), f.dChainF()-f.FU)
		}
	}
	u := Clamp(RoundShift(uu, f.FU), lo, hi)
	s.S, s.Ud, s.Vp, s.E, s.Uu = int64(S), int64(Ud), int64(Vp), int64(e), int64(uu)
	s.Ua, s.Pending = int32(u), true
	return D(u)
}
