package lti

import (
	"math"
	"math/cmplx"
)

// Arithmetic that gives the same bits on every CPU.
//
// The Go specification ("Floating-point operators") lets a compiler fuse
// x*y + z into one multiply-add that rounds once, "possibly across
// statements"; an explicit conversion, float64(x*y), rounds the product
// and forbids the fusion. The compiler fuses on arm64 (FMADD, FMSUB,
// FNMSUB, FNMADD), never on amd64 at the default GOAMD64=v1 (it does at
// v3), so a sum of products computed in plain Go differs between the two
// in its last bits. A complex product a*b is such a sum twice over, and
// complex division is Go code of the runtime, fused on arm64 like ours.
// The standard library adds its own differences: math.Exp, Log and Hypot
// are assembly on amd64 (Exp with FMA instructions on CPUs that have them,
// without on the others) and Go or other assembly elsewhere, and the Go
// functions (Sin, Tan, Atan, Pow, Log2) are fused on arm64.
//
// The functions below are the algorithms that amd64 runs, written in Go
// with every product that meets a sum rounded by a conversion (or fused
// explicitly with math.FMA where amd64's assembly fuses), so on amd64
// they return what the standard library and Go's complex operators return
// there, bit for bit, and every other CPU gets the same bits. Whatever
// feeds a printed figure or generated code computes with them: the
// outputs then do not depend on the CPU, and on amd64 with AVX and FMA3
// nothing changed, while an amd64 CPU without them, whose math.Exp rounds
// differently, now prints what the others print.
// The tests compare them with the standard library (bit for bit on
// amd64) and with math/big.

// Mul returns the complex product a·b as Go's a*b computes it on amd64,
// (ar·br − ai·bi) + j(ar·bi + ai·br), each real product rounded before
// the sum.
func Mul(a, b complex128) complex128 {
	ar, ai, br, bi := real(a), imag(a), real(b), imag(b)
	return complex(float64(ar*br)-float64(ai*bi), float64(ar*bi)+float64(ai*br))
}

// Div returns the complex quotient n/m as Go's n/m computes it on amd64:
// the runtime's method (Smith, "Algorithm 116: Complex division", CACM
// 1962, from memory), which divides by the larger part of m first, with
// each product rounded. When both parts come out NaN (a zero or infinite
// operand) the quotient is Go's own, which then only sets the infinities
// and zeros of C99's Annex G, none of them rounded.
func Div(n, m complex128) complex128 {
	nr, ni, mr, mi := real(n), imag(n), real(m), imag(m)
	var e, f float64
	if math.Abs(mr) >= math.Abs(mi) {
		ratio := mi / mr
		denom := mr + float64(ratio*mi)
		e = (nr + float64(ni*ratio)) / denom
		f = (ni - float64(nr*ratio)) / denom
	} else {
		ratio := mr / mi
		denom := mi + float64(ratio*mr)
		e = (float64(nr*ratio) + ni) / denom
		f = (float64(ni*ratio) - nr) / denom
	}
	if math.IsNaN(e) && math.IsNaN(f) {
		return n / m
	}
	return complex(e, f)
}

// Abs returns |z| as cmplx.Abs (math.Hypot) computes it on amd64, where
// it is assembly: with p ≥ q the two magnitudes, p·√(1 + (q/p)²).
func Abs(z complex128) float64 {
	p, q := math.Abs(real(z)), math.Abs(imag(z))
	switch {
	case math.IsInf(p, 1) || math.IsInf(q, 1):
		return math.Inf(1)
	case math.IsNaN(p) || math.IsNaN(q):
		return math.NaN()
	}
	if p < q {
		p, q = q, p
	}
	if p == 0 {
		return 0
	}
	q /= p
	return float64(p * math.Sqrt(1+float64(q*q)))
}

// Phase returns the argument of z in [−π, π], as cmplx.Phase.
func Phase(z complex128) float64 { return Atan2(imag(z), real(z)) }

// Cis returns e^(jθ) = cos θ + j sin θ.
func Cis(theta float64) complex128 {
	s, c := Sincos(theta)
	return complex(c, s)
}

// CExp returns e^z as cmplx.Exp computes it (e^re · e^(j·im)); an
// infinite or NaN part gives cmplx.Exp's own special values.
func CExp(z complex128) complex128 {
	re, im := real(z), imag(z)
	if math.IsInf(re, 0) || math.IsNaN(re) || math.IsInf(im, 0) || math.IsNaN(im) {
		return cmplx.Exp(z)
	}
	r := Exp(re)
	s, c := Sincos(im)
	return complex(float64(r*c), float64(r*s))
}

// Constants of the reductions: ln 2 split in a high part with trailing
// zero bits and the rest, and 1/ln 2.
const (
	ln2Hi = 6.93147180369123816490e-01
	ln2Lo = 1.90821492927058770002e-10
	log2e = 1.44269504088896338700e+00
)

// Exp returns e^x as math.Exp computes it on amd64 with FMA (its
// assembly takes that path on every x86-64 CPU with AVX and FMA3; the
// others get other last bits): Shibata's method, "Efficient evaluation
// methods of elementary functions suitable for SIMD computation" (ISC
// 2010, from memory of its use in Go's exp_amd64.s). With x = k·ln 2 + r
// and t = r/16, e^t − 1 from its Taylor polynomial to t⁸, squared up four
// times as (e^t − 1)·(e^t + 1) = e^(2t) − 1, then scaled by 2^k. The fused
// steps are math.FMA, exact on every CPU. Within an ulp of e^x (the test
// checks it with math/big).
func Exp(x float64) float64 {
	const (
		ln2U     = 0.69314718055966295651160180568695068359375
		ln2L     = 0.28235290563031577122588448175013436025525412068e-12
		overflow = 7.09782712893384e+02
	)
	switch {
	case math.IsNaN(x) || math.IsInf(x, 1):
		return x
	case math.IsInf(x, -1):
		return 0
	case x > overflow:
		return math.Inf(1)
	}
	// k = round(x/ln 2) as the CPU converts to int32: to nearest even,
	// and the most negative int32 when out of range.
	kf := math.RoundToEven(log2e * x)
	k := int64(math.MinInt32)
	if kf >= math.MinInt32 {
		k = int64(kf)
	}
	kf = float64(k)
	r := math.FMA(-ln2U, kf, x)
	r = math.FMA(-ln2L, kf, r)
	r *= 0.0625
	p := 2.4801587301587301587e-5
	for _, c := range [...]float64{1.9841269841269841270e-4, 1.3888888888888888889e-3, 8.3333333333333333333e-3,
		4.1666666666666666667e-2, 1.6666666666666666667e-1, 0.5, 1} {
		p = math.FMA(p, r, c)
	}
	r *= p // e^t − 1
	for range 3 {
		r *= r + 2
	}
	y := math.FMA(r, r+2, 1) // e^(16t)
	// y·2^k, in two steps below the normal range.
	e := k + 0x3ff
	switch {
	case e >= 0x7ff:
		return math.Inf(1)
	case e > 0:
		return float64(y * math.Float64frombits(uint64(e)<<52))
	case e < -52:
		return 0
	}
	return float64(y * math.Float64frombits(uint64(e+0x3fe)<<52) * math.Float64frombits(1<<52))
}

// Log returns the natural logarithm of x as math.Log computes it on
// amd64, where it is assembly (subnormal x aside, which it does not
// normalize): the method of Sun's fdlibm (e_log.c, from memory, with its
// minimax coefficients). With x = 2^k·(1 + f), √2/2 < 1 + f ≤ √2 and
// s = f/(2 + f), log(1 + f) = 2s + s·R(s²).
func Log(x float64) float64 {
	const (
		l1 = 6.666666666666735130e-01
		l2 = 3.999999999940941908e-01
		l3 = 2.857142874366239149e-01
		l4 = 2.222219843214978396e-01
		l5 = 1.818357216161805012e-01
		l6 = 1.531383769920937332e-01
		l7 = 1.479819860511658591e-01
	)
	switch {
	case math.IsNaN(x) || math.IsInf(x, 1):
		return x
	case x < 0:
		return math.NaN()
	case x == 0:
		return math.Inf(-1)
	}
	f1, ki := math.Frexp(x)
	if f1 <= math.Sqrt2/2 {
		f1 *= 2
		ki--
	}
	f := f1 - 1
	k := float64(ki)
	s := f / (2 + f)
	s2 := s * s
	s4 := s2 * s2
	t1 := l5 + float64(s4*l7)
	t1 = l3 + float64(s4*t1)
	t1 = l1 + float64(s4*t1)
	t1 = float64(s2 * t1)
	t2 := l4 + float64(s4*l6)
	t2 = l2 + float64(s4*t2)
	t2 = float64(s4 * t2)
	R := t1 + t2
	hfsq := float64(0.5 * f * f)
	return float64(k*ln2Hi) - ((hfsq - (float64(s*(hfsq+R)) + float64(k*ln2Lo))) - f)
}

// Log10 returns log₁₀ x as math.Log10 does: Log(x)·(1/ln 10).
func Log10(x float64) float64 { return float64(Log(x) * (1 / math.Ln10)) }

// Log2 returns log₂ x as math.Log2 does: exact at powers of two, else
// Log of the mantissa over ln 2 plus the exponent.
func Log2(x float64) float64 {
	frac, e := math.Frexp(x)
	if frac == 0.5 {
		return float64(e - 1)
	}
	return float64(Log(frac)*(1/math.Ln2)) + float64(e)
}

// Pow returns x^y as math.Pow computes it on amd64: the special cases of
// IEEE 754's pow, then x^yf = Exp(yf·Log x) for the fraction yf of y in
// [−½, ½] and x^yi by repeated squaring of x's mantissa, its exponent
// kept apart.
func Pow(x, y float64) float64 {
	switch {
	case y == 0 || x == 1 || y == 1 || math.IsNaN(x) || math.IsNaN(y) || x == 0 ||
		math.IsInf(x, 0) || math.IsInf(y, 0) || y == 0.5 || y == -0.5:
		return math.Pow(x, y) // exact or a square root, the same everywhere
	}
	yi, yf := math.Modf(math.Abs(y))
	if yf != 0 && x < 0 {
		return math.NaN()
	}
	if yi >= 1<<63 {
		return math.Pow(x, y) // overflow, underflow or 1
	}
	a1, ae := 1.0, 0
	if yf != 0 {
		if yf > 0.5 {
			yf--
			yi++
		}
		a1 = Exp(yf * Log(x))
	}
	x1, xe := math.Frexp(x)
	for i := int64(yi); i != 0; i >>= 1 {
		if xe < -1<<12 || 1<<12 < xe {
			ae += xe // the result under- or overflows
			break
		}
		if i&1 == 1 {
			a1 *= x1
			ae += xe
		}
		x1 = float64(x1 * x1)
		xe <<= 1
		if x1 < .5 {
			x1 += x1
			xe--
		}
	}
	if y < 0 {
		a1 = 1 / a1
		ae = -ae
	}
	return math.Ldexp(a1, ae)
}

// reduceThreshold is the argument above which math's trigonometric
// functions reduce by Payne and Hanek's method instead of Cody and
// Waite's. The frequency responses here stay far below it; the functions
// below hand such arguments to the math package.
const reduceThreshold = 1 << 29

// octant returns j, the octant of x ≥ 0 rounded up to even, and
// z = x − j·π/4 by Cody and Waite's reduction with π/4 in three parts (as
// the math package's Sin, Cos and Tan do: Cephes' sin.c, from memory).
func octant(x float64) (uint64, float64) {
	const (
		pi4A = 7.85398125648498535156e-1
		pi4B = 3.77489470793079817668e-8
		pi4C = 2.69515142907905952645e-15
	)
	j := uint64(x * (4 / math.Pi))
	y := float64(j)
	if j&1 == 1 {
		j++
		y++
	}
	return j, ((x - float64(y*pi4A)) - float64(y*pi4B)) - float64(y*pi4C)
}

// sinPoly and cosPoly return sin z and cos z for |z| ≤ π/4 by Cephes'
// polynomials (the coefficients of Go's sin.go).
func sinPoly(z, zz float64) float64 {
	p := float64(1.58962301576546568060e-10*zz) + -2.50507477628578072866e-8
	p = float64(p*zz) + 2.75573136213857245213e-6
	p = float64(p*zz) + -1.98412698295895385996e-4
	p = float64(p*zz) + 8.33333333332211858878e-3
	p = float64(p*zz) + -1.66666666666666307295e-1
	return z + float64(z*zz*p)
}

func cosPoly(zz float64) float64 {
	p := float64(-1.13585365213876817300e-11*zz) + 2.08757008419747316778e-9
	p = float64(p*zz) + -2.75573141792967388112e-7
	p = float64(p*zz) + 2.48015872888517045348e-5
	p = float64(p*zz) + -1.38888888888730564116e-3
	p = float64(p*zz) + 4.16666666666665929218e-2
	return 1.0 - float64(0.5*zz) + float64(zz*zz*p)
}

// Sincos returns sin x and cos x as math.Sincos computes them on amd64.
func Sincos(x float64) (sin, cos float64) {
	switch {
	case x == 0:
		return x, 1
	case math.IsNaN(x) || math.IsInf(x, 0) || math.Abs(x) >= reduceThreshold:
		return math.Sincos(x)
	}
	sinSign, cosSign := false, false
	if x < 0 {
		x = -x
		sinSign = true
	}
	j, z := octant(x)
	j &= 7
	if j > 3 {
		j -= 4
		sinSign, cosSign = !sinSign, !cosSign
	}
	if j > 1 {
		cosSign = !cosSign
	}
	zz := z * z
	cos = cosPoly(zz)
	sin = sinPoly(z, zz)
	if j == 1 || j == 2 {
		sin, cos = cos, sin
	}
	if cosSign {
		cos = -cos
	}
	if sinSign {
		sin = -sin
	}
	return sin, cos
}

// Sin returns sin x as math.Sin computes it on amd64.
func Sin(x float64) float64 {
	s, _ := Sincos(x)
	return s
}

// Tan returns tan x as math.Tan computes it on amd64: Cephes' tan.c (from
// memory), a rational function of z² on |z| ≤ π/4.
func Tan(x float64) float64 {
	switch {
	case x == 0 || math.IsNaN(x):
		return x
	case math.IsInf(x, 0) || math.Abs(x) >= reduceThreshold:
		return math.Tan(x)
	}
	sign := false
	if x < 0 {
		x = -x
		sign = true
	}
	j, z := octant(x)
	zz := float64(z * z)
	y := z
	if zz > 1e-14 {
		p := float64(-1.30936939181383777646e4*zz) + 1.15351664838587416140e6
		p = float64(p*zz) + -1.79565251976484877988e7
		q := float64((zz+1.36812963470692954678e4)*zz) + -1.32089234440210967447e6
		q = float64(q*zz) + 2.50083801823357915839e7
		q = float64(q*zz) + -5.38695755929454629881e7
		y = z + float64(z*(zz*p/q))
	}
	if j&2 == 2 {
		y = -1 / y
	}
	if sign {
		y = -y
	}
	return y
}

// atanSmall returns atan x for 0 ≤ x ≤ 0.66 by Cephes' atan.c (from
// memory): x + x·z·P(z)/Q(z), z = x².
func atanSmall(x float64) float64 {
	z := float64(x * x)
	p := float64(-8.750608600031904122785e-01*z) + -1.615753718733365076637e+01
	p = float64(p*z) + -7.500855792314704667340e+01
	p = float64(p*z) + -1.228866684490136173410e+02
	p = float64(p*z) + -6.485021904942025371773e+01
	q := float64((z+2.485846490142306297962e+01)*z) + 1.650270098316988542046e+02
	q = float64(q*z) + 4.328810604912902668951e+02
	q = float64(q*z) + 4.853903996359136964868e+02
	q = float64(q*z) + 1.945506571482613964425e+02
	z = z * p / q
	return float64(x*z) + x
}

// atanPos returns atan x for x > 0, reduced to atanSmall by
// atan x = π/2 − atan(1/x) above tan(3π/8) and π/4 + atan((x−1)/(x+1))
// above 0.66, π/2 carrying its next bits.
func atanPos(x float64) float64 {
	const (
		morebits = 6.123233995736765886130e-17 // π/2 = math.Pi/2 + morebits
		tan3pio8 = 2.41421356237309504880
	)
	switch {
	case x <= 0.66:
		return atanSmall(x)
	case x > tan3pio8:
		return math.Pi/2 - atanSmall(1/x) + morebits
	}
	return math.Pi/4 + atanSmall((x-1)/(x+1)) + 0.5*morebits
}

// Atan2 returns the angle of the point (x, y) in [−π, π] as math.Atan2
// computes it on amd64; zeros, infinities and NaN give math.Atan2's own
// special values.
func Atan2(y, x float64) float64 {
	if math.IsNaN(x) || math.IsNaN(y) || x == 0 || y == 0 || math.IsInf(x, 0) || math.IsInf(y, 0) {
		return math.Atan2(y, x)
	}
	var q float64
	switch v := y / x; {
	case v > 0:
		q = atanPos(v)
	case v < 0:
		q = -atanPos(-v)
	default:
		q = v // ±0: the quotient underflowed
	}
	if x < 0 {
		if q <= 0 {
			return q + math.Pi
		}
		return q - math.Pi
	}
	return q
}

// exp returns e^x for the margin sweeps: the method of Sun's fdlibm
// (e_exp.c, from memory, with its minimax coefficients), within an ulp of
// e^x. It is not Exp: the sweeps moved to it, from math.Exp, before Exp
// existed, and keep its bits (both are the same on every CPU).
func exp(x float64) float64 {
	const (
		p1 = 1.66666666666666657415e-01
		p2 = -2.77777777770155933842e-03
		p3 = 6.61375632143793436117e-05
		p4 = -1.65339022054652515390e-06
		p5 = 4.13813679705723846039e-08

		overflow  = 7.09782712893383973096e+02
		underflow = -7.45133219101941108420e+02
		nearZero  = 1.0 / (1 << 28)
	)
	switch {
	case math.IsNaN(x) || math.IsInf(x, 1):
		return x
	case math.IsInf(x, -1):
		return 0
	case x > overflow:
		return math.Inf(1)
	case x < underflow:
		return 0
	case -nearZero < x && x < nearZero:
		return 1 + x
	}
	// x = k·ln 2 + r, |r| ≤ ln 2 / 2, r = hi − lo.
	var k int
	switch {
	case x < 0:
		k = int(float64(log2e*x) - 0.5)
	case x > 0:
		k = int(float64(log2e*x) + 0.5)
	}
	hi := x - float64(float64(k)*ln2Hi)
	lo := float64(float64(k) * ln2Lo)
	r := hi - lo
	t := r * r
	poly := p4 + float64(t*p5)
	poly = p3 + float64(t*poly)
	poly = p2 + float64(t*poly)
	poly = p1 + float64(t*poly)
	c := r - float64(t*poly)
	y := 1 - ((lo - float64(r*c)/(2-c)) - hi)
	return math.Ldexp(y, k)
}
