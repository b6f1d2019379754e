package discrete

import (
	"math"
	"unsafe"
)

// Word is a signed two's-complement integer word of the fixed-point
// arithmetic. The integer controller uses a data word D of w bits (int16
// for q15, int32 for q31) and an accumulator word A of 2w bits (int32,
// int64). The helpers below are generic over the widths so that the tests
// run the very same code on the 8-bit analogue (int8 data, int16
// accumulators), where every operand pair can be checked exhaustively.
//
// Every helper is one or two C expressions of the same widths; the doc of
// each gives the expression. None divides, none uses floating point, and
// none relies on signed wrap-around (undefined in C), so the emitted C
// behaves exactly like these functions. Two properties of the target are
// assumed, as is common practice for fixed-point C on every mainstream
// compiler: >> of a negative value is an arithmetic shift, and & of a
// negative value acts on its two's-complement bits (C99 requires two's
// complement for the exact-width types intN_t).
type Word interface {
	~int8 | ~int16 | ~int32 | ~int64
}

// Bits returns the width of T in bits.
func Bits[T Word]() int {
	var z T
	return 8 * int(unsafe.Sizeof(z))
}

// MinOf returns the most negative value of T, −2^(b−1).
func MinOf[T Word]() T { return T(-1) << (Bits[T]() - 1) }

// MaxOf returns the largest value of T, 2^(b−1) − 1.
func MaxOf[T Word]() T { return ^MinOf[T]() }

// RoundShift returns x·2^−n rounded half up, for 0 ≤ n < Bits[T]:
//
//	n = 0: x
//	n > 0: (x >> n) + ((x >> (n−1)) & 1)
//
// This equals floor((x + 2^(n−1))/2^n), the classic add-then-shift, but
// cannot overflow: x >> n is floor(x/2^n), and bit n−1 of x is 1 exactly
// when the discarded part is at least one half. (x + 2^(n−1)) >> n itself
// would overflow for x near the top of the word.
//
// Bias: the error (rounded − exact) is (b − r/2^n) for the discarded
// bits r ∈ [0, 2^n), with b = 1 when r ≥ 2^(n−1); over uniformly
// distributed r its mean is +2^−(n+1) of the result's LSB (the tie at
// r = 2^(n−1) always goes up): +¼ LSB when one bit is dropped, +1/512 LSB
// for eight. A test computes it exactly. The bias is a constant offset of
// each term, far below one output LSB for the shifts the controller uses
// (its shifts drop at least several bits); the integrator sees no bias at
// rest, since a zero product rounds to zero.
func RoundShift[T Word](x T, n int) T {
	if n <= 0 {
		return x
	}
	return (x >> n) + ((x >> (n - 1)) & 1)
}

// MulRound returns c·x·2^−sh rounded half up (sh > 0), or c·x·2^(−sh)
// exactly (sh ≤ 0), for a data-word coefficient c and an accumulator
// operand x whose product c·x fits the accumulator (the realization proves
// it for every product it renders with MulRound):
//
//	p = (A)c * x
//	sh > 0: RoundShift(p, sh);  sh = 0: p;  sh < 0: p * 2^(−sh)
//
// (in C the left shift is written as a multiplication by the constant
// 2^(−sh), since << of a negative value is undefined there).
func MulRound[D, A Word](c D, x A, sh int) A {
	p := A(c) * x
	if sh >= 0 {
		return RoundShift(p, sh)
	}
	return p << -sh
}

// MulWide returns c·x·2^−sh rounded half up for a w-bit coefficient c and
// a 2w-bit operand x (an accumulator-width state), 0 ≤ sh ≤ 2w − 2, using
// only 2w-bit arithmetic: the full product needs 3w bits. With
// x = hi·2^w + lo, hi = x >> w (signed, w bits) and lo = x & (2^w − 1)
// (unsigned, 0 ≤ lo < 2^w), c·x = ch·2^w + cl with ch = c·hi and
// cl = c·lo, both of which fit 2w bits (|c·lo| < 2^(w−1)·2^w). Then
//
//	sh ≤ w: ch * 2^(w−sh) + RoundShift(cl, sh)
//	sh > w: RoundShift(ch + (cl >> w), sh − w)
//
// The first is exact because ch·2^w is a multiple of 2^sh; the second
// because floor((ch·2^w + cl)/2^w) = ch + floor(cl/2^w) and bit sh−1 of
// c·x is bit sh−w−1 of that sum. ch·2^(w−sh) must fit the accumulator,
// which the realization proves from the bound of x (its range table lists
// it with the product).
func MulWide[D, A Word](c D, x A, sh int) A {
	w := Bits[D]()
	hi := x >> w
	lo := x & (A(1)<<w - 1)
	ch := A(c) * hi
	cl := A(c) * lo
	if sh <= w {
		return ch<<(w-sh) + RoundShift(cl, sh)
	}
	return RoundShift(ch+(cl>>w), sh-w)
}

// SatShiftLeft returns x·2^n saturated to T, for 0 ≤ n < Bits[T]:
//
//	x > (MAX >> n) ? MAX : (x < (MIN >> n) ? MIN : x * 2^n)
func SatShiftLeft[T Word](x T, n int) T {
	if n <= 0 {
		return x
	}
	if x > MaxOf[T]()>>n {
		return MaxOf[T]()
	}
	if x < MinOf[T]()>>n {
		return MinOf[T]()
	}
	return x << n
}

// SatAdd returns a + b saturated to T, without overflow:
//
//	b > 0 && a > MAX − b: MAX;  b < 0 && a < MIN − b: MIN;  else a + b
func SatAdd[T Word](a, b T) T {
	if b > 0 && a > MaxOf[T]()-b {
		return MaxOf[T]()
	}
	if b < 0 && a < MinOf[T]()-b {
		return MinOf[T]()
	}
	return a + b
}

// Clamp returns x limited to [lo, hi] (lo ≤ hi):
//
//	x < lo ? lo : (x > hi ? hi : x)
func Clamp[T Word](x, lo, hi T) T {
	if x < lo {
		return lo
	}
	if x > hi {
		return hi
	}
	return x
}

// Sat converts x to the narrower word D, saturating:
//
//	(D)Clamp(x, MIN_D, MAX_D)
func Sat[D, A Word](x A) D {
	return D(Clamp(x, A(MinOf[D]()), A(MaxOf[D]())))
}

// RoundHalfUp returns x rounded to an integer, ties toward +∞
// (floor(x + ½), computed without the inexact addition: for |x| < 2^52,
// x − floor(x) is exact in float64).
func RoundHalfUp(x float64) float64 {
	f := math.Floor(x)
	if x-f >= 0.5 {
		return f + 1
	}
	return f
}

// ToWord returns round-half-up(x·2^n) saturated to a signed word of the
// given bits (≤ 64), and whether it saturated. NaN maps to 0, saturated.
func ToWord(x float64, n, bits int) (raw int64, saturated bool) {
	hi := math.Ldexp(1, bits-1) // 2^(bits−1), exact
	if math.IsNaN(x) {
		return 0, true
	}
	v := RoundHalfUp(math.Ldexp(x, n))
	switch {
	case v >= hi:
		if bits == 64 {
			return math.MaxInt64, true
		}
		return int64(hi) - 1, true
	case v < -hi:
		return -int64(hi), true
	}
	return int64(v), false
}

// ToRaw converts a value given as a fraction of its full scale
// (value/full_scale) to the raw integer of a q15 (bits = 16) or q31
// (bits = 32) word: raw = round-half-up(x·2^(bits−1)), saturated to
// [−2^(bits−1), 2^(bits−1) − 1] (common practice for Q0.(bits−1) data).
func ToRaw(x float64, bits int) int64 {
	r, _ := ToWord(x, bits-1, bits)
	return r
}

// FromRaw returns raw·2^−(bits−1), the fraction of full scale a raw data
// word stands for (exact in float64 for bits ≤ 54).
func FromRaw(raw int64, bits int) float64 {
	return math.Ldexp(float64(raw), 1-bits)
}
