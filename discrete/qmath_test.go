package discrete

import (
	"math"
	"math/big"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
)

// The Q helpers are checked against exact integer arithmetic in math/big
// (the outside reference): round-half-up of c·x·2^−sh is
// floor((c·x + 2^(sh−1)) / 2^sh) with big.Int's Euclidean division, which
// for a positive divisor is the floor. Exhaustively on the 8-bit analogue
// (int8 data, int16 accumulators: the same generic code), and on random
// plus corner operands for the 16- and 32-bit words.

// exact holds scratch big.Ints so that the sweeps do not allocate, and
// the powers of two 2^i.
type exact struct {
	p, q, h, m big.Int
	pow        []*big.Int
}

func (e *exact) pow2(i int) *big.Int {
	for len(e.pow) <= i {
		e.pow = append(e.pow, new(big.Int).Lsh(big.NewInt(1), uint(len(e.pow))))
	}
	return e.pow[i]
}

// roundShift returns round-half-up(v·2^−sh) for sh > 0 and v·2^−sh
// (exact) for sh ≤ 0, as an int64 and whether it is representable in
// bits bits.
func (e *exact) roundShift(v *big.Int, sh, bits int) (int64, bool) {
	if sh <= 0 {
		e.q.Lsh(v, uint(-sh))
	} else {
		e.q.Add(v, e.pow2(sh-1))
		e.q.DivMod(&e.q, e.pow2(sh), &e.m)
	}
	return e.q.Int64(), e.q.IsInt64() && fitsBits(e.q.Int64(), bits)
}

func (e *exact) mul(c, x int64) *big.Int {
	e.p.SetInt64(c)
	e.q.SetInt64(x)
	e.p.Mul(&e.p, &e.q)
	return &e.p
}

func fitsBits(v int64, bits int) bool {
	if bits >= 64 {
		return true
	}
	lim := int64(1) << (bits - 1)
	return v >= -lim && v < lim
}

// parallel runs f(i) for i in [0, n) on all CPUs.
func parallel(n int, f func(i int, e *exact) bool) bool {
	var wg sync.WaitGroup
	var mu sync.Mutex
	ok := true
	workers := runtime.GOMAXPROCS(0)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			var e exact
			for i := w; i < n; i += workers {
				if !f(i, &e) {
					mu.Lock()
					ok = false
					mu.Unlock()
					return
				}
			}
		}(w)
	}
	wg.Wait()
	return ok
}

func TestRoundShiftExhaustive8And16(t *testing.T) {
	var e exact
	for x := math.MinInt8; x <= math.MaxInt8; x++ {
		for n := 0; n < 8; n++ {
			want, _ := e.roundShift(big.NewInt(int64(x)), n, 8)
			if got := RoundShift(int8(x), n); int64(got) != want {
				t.Fatalf("RoundShift(int8 %d, %d) = %d, want %d", x, n, got, want)
			}
		}
	}
	for x := math.MinInt16; x <= math.MaxInt16; x++ {
		for n := 0; n < 16; n++ {
			want, _ := e.roundShift(big.NewInt(int64(x)), n, 16)
			if got := RoundShift(int16(x), n); int64(got) != want {
				t.Fatalf("RoundShift(int16 %d, %d) = %d, want %d", x, n, got, want)
			}
		}
	}
}

// TestMulRoundExhaustive8 covers every int8 coefficient and every int16
// operand whose product (and left shift) fits the int16 accumulator, the
// precondition the realization proves.
func TestMulRoundExhaustive8(t *testing.T) {
	t.Parallel()
	ok := parallel(256, func(i int, e *exact) bool {
		c := int64(i - 128)
		for x := int64(math.MinInt16); x <= math.MaxInt16; x++ {
			if !fitsBits(c*x, 16) {
				continue
			}
			for sh := -3; sh <= 15; sh++ {
				want, fit := e.roundShift(e.mul(c, x), sh, 16)
				if !fit {
					continue
				}
				if got := MulRound(int8(c), int16(x), sh); int64(got) != want {
					t.Errorf("MulRound(%d, %d, %d) = %d, want %d", c, x, sh, got, want)
					return false
				}
			}
		}
		return true
	})
	if !ok {
		t.Fatal("MulRound differs from math/big")
	}
}

// TestMulWideExhaustive8 covers every (int8, int16) operand pair: the
// shift walks through 0..14 = 2w − 2 with the pair index, so each pair is
// checked once and each shift on more than a million pairs; every shift
// is also checked on all coefficients against a dense set of operands.
func TestMulWideExhaustive8(t *testing.T) {
	t.Parallel()
	const w = 8
	check := func(e *exact, c, x int64, sh int) bool {
		want, fit := e.roundShift(e.mul(c, x), sh, 16)
		if !fit {
			return true // the result does not fit: outside the precondition
		}
		// The intermediate ch·2^(w−sh) must fit too (the realization
		// proves it from the operand's bound).
		hi := x >> w
		if sh <= w && !fitsBits(c*hi<<(w-sh), 16) {
			return true
		}
		if got := MulWide(int8(c), int16(x), sh); int64(got) != want {
			t.Errorf("MulWide(%d, %d, %d) = %d, want %d", c, x, sh, got, want)
			return false
		}
		return true
	}
	stride := int64(1)
	if testing.Short() {
		stride = 7
	}
	ok := parallel(256, func(i int, e *exact) bool {
		c := int64(i - 128)
		for x := int64(math.MinInt16); x <= math.MaxInt16; x += stride {
			if !check(e, c, x, int((c+x+128+32768)%(2*w-1))) {
				return false
			}
		}
		for sh := 0; sh <= 2*w-2; sh++ {
			for x := int64(math.MinInt16); x <= math.MaxInt16; x += 251 {
				if !check(e, c, x, sh) || !check(e, c, x|0xff, sh) {
					return false
				}
			}
		}
		return true
	})
	if !ok {
		t.Fatal("MulWide differs from math/big")
	}
}

func TestSatAddClampSatExhaustive8(t *testing.T) {
	for a := math.MinInt8; a <= math.MaxInt8; a++ {
		for b := math.MinInt8; b <= math.MaxInt8; b++ {
			want := min(max(a+b, math.MinInt8), math.MaxInt8) // exact in int
			if got := SatAdd(int8(a), int8(b)); int(got) != want {
				t.Fatalf("SatAdd(%d, %d) = %d, want %d", a, b, got, want)
			}
			if b >= a {
				for x := math.MinInt8; x <= math.MaxInt8; x++ {
					if got, want := Clamp(int8(x), int8(a), int8(b)), min(max(x, a), b); int(got) != want {
						t.Fatalf("Clamp(%d, %d, %d) = %d, want %d", x, a, b, got, want)
					}
				}
			}
		}
	}
	for x := math.MinInt16; x <= math.MaxInt16; x++ {
		if got, want := Sat[int8](int16(x)), min(max(x, math.MinInt8), math.MaxInt8); int(got) != want {
			t.Fatalf("Sat(%d) = %d, want %d", x, got, want)
		}
	}
}

// corners returns the extremes of a bits-bit word and values around
// them.
func corners(bits int) []int64 {
	lo := -int64(1) << (bits - 1)
	if bits == 64 {
		lo = math.MinInt64
	}
	hi := -(lo + 1)
	return []int64{lo, lo + 1, lo + 2, -2, -1, 0, 1, 2, hi - 2, hi - 1, hi, lo / 2, hi / 2, lo/2 - 1, hi/2 + 1}
}

func randWord(rng *rand.Rand, bits int) int64 {
	v := int64(rng.Uint64())
	if bits < 64 {
		v >>= 64 - bits // arithmetic: uniform over the bits-bit word
	}
	// Half the draws are small magnitudes, where rounding ties matter.
	if rng.IntN(2) == 0 {
		v >>= rng.IntN(bits)
	}
	return v
}

// tie returns an operand within ±1 of a rounding tie of shift n, scaled
// by a random multiple.
func tie(rng *rand.Rand, n, bits int) int64 {
	if n == 0 {
		return randWord(rng, bits)
	}
	k := randWord(rng, bits-n)
	return k<<n + int64(1)<<(n-1) + int64(rng.IntN(3)-1)
}

const randomCases = 1_000_000

func TestQHelpersRandom16And32(t *testing.T) {
	t.Parallel()
	n := randomCases
	if testing.Short() {
		n /= 20
	}
	rng := rand.New(rand.NewPCG(1, 2))
	var e exact
	for _, bits := range []int{16, 32} {
		acc := 2 * bits
		cs := corners(bits)
		xs := corners(acc)
		for i := 0; i < n; i++ {
			var c, x int64
			if i < len(cs)*len(xs) {
				c, x = cs[i%len(cs)], xs[i/len(cs)]
			} else {
				c = randWord(rng, bits)
				x = randWord(rng, acc)
			}
			sh := rng.IntN(2*bits - 1)
			if t := tie(rng, sh, acc); i%3 == 0 && i >= len(cs)*len(xs) && fitsBits(t, acc) {
				c, x = 1, t // exactly at and around ties
			}
			// RoundShift on the accumulator word.
			xr := tie(rng, sh, acc)
			if !fitsBits(xr, acc) {
				xr = x
			}
			want, _ := e.roundShift(big.NewInt(xr), sh, acc)
			var got int64
			if bits == 16 {
				got = int64(RoundShift(int32(xr), sh))
			} else {
				got = RoundShift(xr, sh)
			}
			if got != want {
				t.Fatalf("RoundShift(%d, %d) = %d, want %d", xr, sh, got, want)
			}
			// MulWide: the exact result and ch·2^(w−sh) must fit.
			if want, fit := e.roundShift(e.mul(c, x), sh, acc); fit {
				var chFit bool
				e.q.SetInt64(c)
				e.h.SetInt64(x >> bits)
				e.q.Mul(&e.q, &e.h)
				if sh <= bits {
					e.q.Lsh(&e.q, uint(bits-sh))
				}
				chFit = e.q.IsInt64() && fitsBits(e.q.Int64(), acc)
				if chFit {
					if bits == 16 {
						got = int64(MulWide(int16(c), int32(x), sh))
					} else {
						got = MulWide(int32(c), x, sh)
					}
					if got != want {
						t.Fatalf("MulWide(%d, %d, %d) = %d, want %d", c, x, sh, got, want)
					}
				}
			}
			// MulRound: operands whose product fits (|x| ≤ 2^w − 1).
			xm := x >> (bits - 1)
			if p := e.mul(c, xm); p.IsInt64() && fitsBits(p.Int64(), acc) {
				want, _ := e.roundShift(p, sh, acc)
				if bits == 16 {
					got = int64(MulRound(int16(c), int32(xm), sh))
				} else {
					got = MulRound(int32(c), xm, sh)
				}
				if got != want {
					t.Fatalf("MulRound(%d, %d, %d) = %d, want %d", c, xm, sh, got, want)
				}
			}
			// SatAdd on the accumulator and Sat to the data word.
			a, b := randWord(rng, acc), randWord(rng, acc)
			if i < len(xs)*len(xs) {
				a, b = xs[i%len(xs)], xs[(i/len(xs))%len(xs)]
			}
			e.q.SetInt64(a)
			e.h.SetInt64(b)
			e.q.Add(&e.q, &e.h)
			e.q.SetInt64(clampBig(&e.q, acc))
			if bits == 16 {
				got = int64(SatAdd(int32(a), int32(b)))
			} else {
				got = SatAdd(a, b)
			}
			if got != e.q.Int64() {
				t.Fatalf("SatAdd(%d, %d) = %d, want %d", a, b, got, e.q.Int64())
			}
			if bits == 16 {
				got = int64(Sat[int16](int32(a)))
			} else {
				got = int64(Sat[int32](a))
			}
			if want := clampBig(big.NewInt(a), bits); got != want {
				t.Fatalf("Sat(%d) = %d, want %d", a, got, want)
			}
		}
	}
}

// clampBig clamps v to a signed bits-bit word.
func clampBig(v *big.Int, bits int) int64 {
	lo := new(big.Int).Lsh(big.NewInt(1), uint(bits-1))
	hi := new(big.Int).Sub(lo, big.NewInt(1))
	lo.Neg(lo)
	switch {
	case v.Cmp(lo) < 0:
		return lo.Int64()
	case v.Cmp(hi) > 0:
		return hi.Int64()
	}
	return v.Int64()
}

// bigRoundHalfUp returns floor(x·2^n + ½) exactly (big.Float holds the
// float64 and the power of two without rounding at 200 bits).
func bigRoundHalfUp(x float64, n int) *big.Int {
	f := new(big.Float).SetPrec(200).SetFloat64(x)
	f.SetMantExp(f, n)
	f.Add(f, big.NewFloat(0.5).SetPrec(200))
	i, acc := f.Int(nil) // truncates toward zero
	if acc == big.Above {
		i.Sub(i, big.NewInt(1)) // negative non-integer: floor is one below
	}
	return i
}

// TestToWordAgainstBig checks the conversions: a dense grid through the
// 8-bit word (every tie and its neighbours a quarter LSB away), and random
// values for 16 and 32 bits.
func TestToWordAgainstBig(t *testing.T) {
	check := func(x float64, n, bits int) {
		t.Helper()
		want := clampBig(bigRoundHalfUp(x, n), bits)
		got, sat := ToWord(x, n, bits)
		if got != want {
			t.Fatalf("ToWord(%v, %d, %d) = %d, want %d", x, n, bits, got, want)
		}
		if e := bigRoundHalfUp(x, n); sat != (e.Cmp(big.NewInt(want)) != 0) {
			t.Fatalf("ToWord(%v, %d, %d): saturated = %v", x, n, bits, sat)
		}
	}
	for k := -600; k <= 600; k++ {
		x := float64(k) / 512 // steps of ¼ LSB of Q0.7: ties at odd multiples of 2^−8
		check(x, 7, 8)
		if got := ToRaw(x, 8); got != clampBig(bigRoundHalfUp(x, 7), 8) {
			t.Fatalf("ToRaw(%v, 8) = %d", x, got)
		}
		check(math.Nextafter(x, math.Inf(1)), 7, 8)
		check(math.Nextafter(x, math.Inf(-1)), 7, 8)
	}
	rng := rand.New(rand.NewPCG(3, 4))
	n := randomCases / 4
	if testing.Short() {
		n /= 20
	}
	for i := 0; i < n; i++ {
		bits := []int{16, 32}[i%2]
		x := (rng.Float64()*2.2 - 1.1) * math.Ldexp(1, rng.IntN(8))
		fr := rng.IntN(2*bits) - bits/2
		if i%4 == 0 { // a tie exactly, or one ulp beside it
			x = (math.Floor(x*math.Ldexp(1, fr)) + 0.5) * math.Ldexp(1, -fr)
			x = math.Nextafter(x, []float64{x, math.Inf(1), math.Inf(-1)}[i/4%3])
		}
		check(x, fr, bits)
	}
	if got := FromRaw(-32768, 16); got != -1 {
		t.Errorf("FromRaw(-32768, 16) = %v, want -1", got)
	}
	if got := FromRaw(1<<30, 32); got != 0.5 {
		t.Errorf("FromRaw(2^30, 32) = %v, want 0.5", got)
	}
}

// TestRoundingBias computes the mean error of round-half-up over every
// pattern of the discarded bits exactly (math/big rationals): it is
// +2^−(n+1) of the result's LSB, +¼ LSB for one discarded bit, as the doc
// of RoundShift says (common practice: round-half-up is biased by half of
// the weight of the discarded LSB).
func TestRoundingBias(t *testing.T) {
	for n := 1; n <= 10; n++ {
		sum := new(big.Rat)
		for r := int16(0); r < 1<<n; r++ {
			// x = 5·2^n + r: the exact value is 5 + r/2^n.
			x := int16(5)<<n + r
			got := RoundShift(x, n)
			err := new(big.Rat).Sub(new(big.Rat).SetInt64(int64(got)), new(big.Rat).SetFrac64(int64(x), 1<<n))
			sum.Add(sum, err)
		}
		mean := sum.Quo(sum, new(big.Rat).SetInt64(1<<n))
		if want := new(big.Rat).SetFrac64(1, 1<<(n+1)); mean.Cmp(want) != 0 {
			t.Errorf("n = %d: mean error %s LSB, want %s", n, mean.RatString(), want.RatString())
		}
	}
}

func TestBitsMinMax(t *testing.T) {
	if Bits[int8]() != 8 || Bits[int16]() != 16 || Bits[int32]() != 32 || Bits[int64]() != 64 {
		t.Error("Bits")
	}
	if MinOf[int16]() != math.MinInt16 || MaxOf[int16]() != math.MaxInt16 || MinOf[int64]() != math.MinInt64 || MaxOf[int64]() != math.MaxInt64 {
		t.Error("MinOf/MaxOf")
	}
}

// TestSatShiftLeft: x·2^n saturated, against math/big, exhaustively for
// int8 and int16 and on random plus corner values for int32 and int64.
func TestSatShiftLeft(t *testing.T) {
	sat := func(x int64, n, bits int) int64 {
		return clampBig(new(big.Int).Lsh(big.NewInt(x), uint(n)), bits)
	}
	for x := math.MinInt16; x <= math.MaxInt16; x++ {
		for n := 0; n < 16; n++ {
			if got, want := SatShiftLeft(int16(x), n), sat(int64(x), n, 16); int64(got) != want {
				t.Fatalf("SatShiftLeft(int16 %d, %d) = %d, want %d", x, n, got, want)
			}
			if x >= math.MinInt8 && x <= math.MaxInt8 && n < 8 {
				if got, want := SatShiftLeft(int8(x), n), sat(int64(x), n, 8); int64(got) != want {
					t.Fatalf("SatShiftLeft(int8 %d, %d) = %d, want %d", x, n, got, want)
				}
			}
		}
	}
	rng := rand.New(rand.NewPCG(5, 6))
	for i := 0; i < randomCases/10; i++ {
		for _, bits := range []int{32, 64} {
			x := randWord(rng, bits)
			if cs := corners(bits); i < len(cs) {
				x = cs[i]
			}
			n := rng.IntN(bits)
			var got int64
			if bits == 32 {
				got = int64(SatShiftLeft(int32(x), n))
			} else {
				got = SatShiftLeft(x, n)
			}
			if want := sat(x, n, bits); got != want {
				t.Fatalf("SatShiftLeft(%d, %d) at %d bits = %d, want %d", x, n, bits, got, want)
			}
		}
	}
}
