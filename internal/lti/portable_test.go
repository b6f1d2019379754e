package lti

import (
	"encoding/binary"
	"hash/fnv"
	"math"
	"math/big"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"regexp"
	"runtime"
	"strings"
	"testing"
)

// ulps returns the distance between a and b in units in the last place.
func ulps(a, b float64) float64 {
	if a == b {
		return 0
	}
	return math.Abs(a-b) / math.Abs(math.Nextafter(b, math.Inf(1))-b)
}

// bigExp returns e^x to 200 bits with math/big (a reference outside the
// project): x = k·ln 2 + r, ln 2 = 2·atanh(1/3) by its series, e^r by
// Taylor's series, both summed until the terms vanish at that precision.
func bigExp(x float64) float64 {
	const prec = 200
	nf := func(v float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(v) }
	ln2 := nf(0)
	third := new(big.Float).SetPrec(prec).Quo(nf(1), nf(3))
	p := new(big.Float).SetPrec(prec).Set(third) // (1/3)^(2n+1)
	ninth := new(big.Float).SetPrec(prec).Mul(third, third)
	for n := 0; n < 200; n++ {
		term := new(big.Float).SetPrec(prec).Quo(p, nf(float64(2*n+1)))
		ln2.Add(ln2, term)
		p.Mul(p, ninth)
	}
	ln2.Mul(ln2, nf(2))
	k := math.Round(x / math.Ln2)
	r := new(big.Float).SetPrec(prec).Sub(nf(x), new(big.Float).SetPrec(prec).Mul(nf(k), ln2))
	sum, term := nf(1), nf(1)
	for n := 1; n < 100; n++ {
		term.Mul(term, r)
		term.Quo(term, nf(float64(n)))
		sum.Add(sum, term)
	}
	sum.SetMantExp(sum, int(k))
	v, _ := sum.Float64()
	return v
}

// TestPortableExpLog: exp agrees with e^x computed to 200 bits with
// math/big to within one ulp (fdlibm's bound for its exp; the 2000 points
// include those where it and the standard library's math.Exp differ by 2
// ulp, the assembly version being the less accurate), and with math.Exp
// to 2 ulp everywhere (each within an ulp of the truth); log and log10
// agree with math.Log and math.Log10 to one and two ulp; the special
// values are exact.
func TestPortableExpLog(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range 200000 {
		x := (rng.Float64()*2 - 1) * 700
		if i%2 == 0 {
			x = (rng.Float64()*2 - 1) * 20
		}
		d := ulps(exp(x), math.Exp(x))
		if d > 2 {
			t.Fatalf("exp(%v) = %v, math.Exp %v (%g ulp)", x, exp(x), math.Exp(x), d)
		}
		if d > 1 || i < 2000 {
			if e := ulps(exp(x), bigExp(x)); e > 1 {
				t.Fatalf("exp(%v) = %v, math/big %v (%g ulp)", x, exp(x), bigExp(x), e)
			}
		}
		y := math.Exp((rng.Float64()*2 - 1) * 700)
		if d := ulps(Log(y), math.Log(y)); d > 1 {
			t.Fatalf("Log(%v) = %v, math.Log %v (%g ulp)", y, Log(y), math.Log(y), d)
		}
		if d := ulps(Log10(y), math.Log10(y)); d > 2 {
			t.Fatalf("Log10(%v) = %v, math.Log10 %v (%g ulp)", y, Log10(y), math.Log10(y), d)
		}
	}
	for _, c := range []struct{ got, want float64 }{
		{exp(0), 1}, {exp(math.Inf(-1)), 0}, {exp(1000), math.Inf(1)}, {exp(-1000), 0},
		{Log(1), 0}, {Log(0), math.Inf(-1)}, {Log(math.Inf(1)), math.Inf(1)}, {Log10(1000), 3},
	} {
		if c.got != c.want {
			t.Errorf("got %v, want %v", c.got, c.want)
		}
	}
	if !math.IsNaN(exp(math.NaN())) || !math.IsNaN(Log(-1)) || !math.IsNaN(Log(math.NaN())) {
		t.Error("NaN cases")
	}
}

// hostExpFMA reports whether math.Exp takes the FMA path of its amd64
// assembly here, the one Exp reproduces: amd64 with AVX and FMA3.
func hostExpFMA() bool {
	if runtime.GOARCH != "amd64" {
		return false
	}
	b, err := os.ReadFile("/proc/cpuinfo")
	if err != nil {
		return false
	}
	flags := regexp.MustCompile(`(?m)^flags\s*:.*$`).Find(b)
	return regexp.MustCompile(`\bavx\b`).Match(flags) && regexp.MustCompile(`\bfma\b`).Match(flags)
}

// round53 returns x op y rounded once to the nearest float64 (ties to
// even), computed with math/big at 53 bits: an IEEE 754 double operation
// for results in the normal range, fused with nothing.
func round53(op byte, x, y float64) float64 {
	a, b := new(big.Float).SetFloat64(x), new(big.Float).SetFloat64(y)
	z := new(big.Float).SetPrec(53).SetMode(big.ToNearestEven)
	switch op {
	case '+':
		z.Add(a, b)
	case '-':
		z.Sub(a, b)
	case '*':
		z.Mul(a, b)
	case '/':
		z.Quo(a, b)
	}
	v, _ := z.Float64()
	return v
}

// randComplex returns a complex number with parts of random sign and
// magnitude between 2^-40 and 2^40, zero now and then.
func randComplex(rng *rand.Rand) complex128 {
	part := func() float64 {
		if rng.IntN(20) == 0 {
			return 0
		}
		v := math.Ldexp(1+rng.Float64(), rng.IntN(81)-40)
		if rng.IntN(2) == 0 {
			v = -v
		}
		return v
	}
	return complex(part(), part())
}

// TestMulDiv: Mul and Div equal the textbook formulas with every
// operation rounded on its own, from math/big: the complex product
// (ar·br − ai·bi) + j(ar·bi + ai·br) and Smith's quotient (Smith,
// "Algorithm 116: Complex division", CACM 1962, from memory), dividing
// by the larger part of the divisor. A fused multiply-add, as Go emits
// for a*b on arm64, fails it. On amd64 below GOAMD64=v3 they also equal
// Go's own a*b and a/b bit for bit.
func TestMulDiv(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	r := round53
	for range 100000 {
		a, b := randComplex(rng), randComplex(rng)
		ar, ai, br, bi := real(a), imag(a), real(b), imag(b)
		want := complex(r('-', r('*', ar, br), r('*', ai, bi)), r('+', r('*', ar, bi), r('*', ai, br)))
		if got := Mul(a, b); !sameBits(got, want) {
			t.Fatalf("Mul(%v, %v) = %v, math/big %v", a, b, got, want)
		}
		if refHost && !sameBits(Mul(a, b), a*b) {
			t.Fatalf("Mul(%v, %v) = %v, Go's a*b %v", a, b, Mul(a, b), a*b)
		}
		if b == 0 {
			continue
		}
		var e, f float64
		if math.Abs(br) >= math.Abs(bi) {
			ratio := r('/', bi, br)
			den := r('+', br, r('*', ratio, bi))
			e = r('/', r('+', ar, r('*', ai, ratio)), den)
			f = r('/', r('-', ai, r('*', ar, ratio)), den)
		} else {
			ratio := r('/', br, bi)
			den := r('+', bi, r('*', ratio, br))
			e = r('/', r('+', r('*', ar, ratio), ai), den)
			f = r('/', r('-', r('*', ai, ratio), ar), den)
		}
		if got := Div(a, b); !sameBits(got, complex(e, f)) {
			t.Fatalf("Div(%v, %v) = %v, math/big %v", a, b, got, complex(e, f))
		}
		if refHost && !sameBits(Div(a, b), a/b) {
			t.Fatalf("Div(%v, %v) = %v, Go's a/b %v", a, b, Div(a, b), a/b)
		}
	}
	// Division by zero and infinities: Go's own special values.
	for _, c := range [][2]complex128{{1, 0}, {complex(1, 2), 0}, {0, 0}, {complex(math.Inf(1), 1), 2}, {1, complex(math.Inf(1), 0)}} {
		if got, want := Div(c[0], c[1]), c[0]/c[1]; !sameBits(got, want) && !(cmplx.IsNaN(got) && cmplx.IsNaN(want)) {
			t.Errorf("Div(%v, %v) = %v, Go %v", c[0], c[1], got, want)
		}
	}
}

// sameBits reports whether a and b have the same bits, part for part.
func sameBits(a, b complex128) bool {
	return math.Float64bits(real(a)) == math.Float64bits(real(b)) && math.Float64bits(imag(a)) == math.Float64bits(imag(b))
}

// portableCases evaluates every portable function on a fixed set of
// arguments (PCG seeded, so the same everywhere) and passes each result
// to check with its name, its arguments and the standard library's (or
// Go's operators') value for the same arguments.
func portableCases(check func(name string, args []float64, got, std float64)) {
	rng := rand.New(rand.NewPCG(5, 6))
	sym := func(scale float64) float64 { return (rng.Float64()*2 - 1) * scale }
	for i := range 20000 {
		// Magnitudes over the range the frequency responses use, and
		// the reductions' edges.
		x := sym([...]float64{1, 4, 40, 1e4}[i%4])
		if i%97 == 0 {
			x = float64(i%16) * math.Pi / 4
		}
		s, c := Sincos(x)
		ss, sc := math.Sincos(x)
		check("Sincos.sin", []float64{x}, s, ss)
		check("Sincos.cos", []float64{x}, c, sc)
		check("Sin", []float64{x}, Sin(x), math.Sin(x))
		check("Tan", []float64{x}, Tan(x), math.Tan(x))
		y := sym([...]float64{1, 1e-3, 1e3, 1e12}[i%4])
		check("Atan2", []float64{y, x}, Atan2(y, x), math.Atan2(y, x))
		z := complex(x, y)
		check("Abs", []float64{x, y}, Abs(z), cmplx.Abs(z))
		check("Phase", []float64{x, y}, Phase(z), cmplx.Phase(z))
		check("Cis.re", []float64{x}, real(Cis(x)), real(cmplx.Exp(complex(0, x))))
		check("Cis.im", []float64{x}, imag(Cis(x)), imag(cmplx.Exp(complex(0, x))))
		e := sym(700)
		if i%2 == 0 {
			e = sym(20)
		}
		check("Exp", []float64{e}, Exp(e), math.Exp(e))
		cz := complex(sym(5), x)
		check("CExp.re", []float64{real(cz), imag(cz)}, real(CExp(cz)), real(cmplx.Exp(cz)))
		check("CExp.im", []float64{real(cz), imag(cz)}, imag(CExp(cz)), imag(cmplx.Exp(cz)))
		p := Exp(sym(700))
		if i%101 == 0 {
			p = math.Ldexp(math.Sqrt2/2, i%64-32) // Log's branch edge
		}
		check("Log", []float64{p}, Log(p), math.Log(p))
		check("Log10", []float64{p}, Log10(p), math.Log10(p))
		check("Log2", []float64{p}, Log2(p), math.Log2(p))
		b, q := rng.Float64()*1000, sym(30)
		if i%3 == 0 {
			b = 10 // the searches' Pow(10, u)
		}
		if i%5 == 0 {
			q = math.Round(q) // integer exponents square up
		}
		check("Pow", []float64{b, q}, Pow(b, q), math.Pow(b, q))
	}
}

// portableBits is the FNV-1a hash of every result of portableCases,
// recorded on amd64 (GOAMD64=v1), where TestPortableMath checks each of
// them against the standard library bit for bit.
const portableBits = 0x2c1cc450d8899117

// TestPortableMath: the portable functions give the same bits on every
// CPU, those of amd64: there each equals the standard library's function
// (or Go's operator) bit for bit, Exp only where math.Exp takes its FMA
// path; everywhere the results hash to portableBits, recorded there, and
// each is within a few ulp of the standard library's (which may fuse or
// be other assembly). The special values are the standard library's.
func TestPortableMath(t *testing.T) {
	h := fnv.New64a()
	fma := hostExpFMA()
	// Where the standard library differs (other CPUs), it is within an
	// ulp of the truth for the elementary functions and a few for those
	// built of them: e^x·cos y two roundings, x^y up to 30 squarings.
	tol := func(name string) float64 {
		switch {
		case name == "Pow":
			return 8
		case strings.HasPrefix(name, "CExp"):
			return 4
		}
		return 2
	}
	portableCases(func(name string, args []float64, got, std float64) {
		var b [8]byte
		binary.LittleEndian.PutUint64(b[:], math.Float64bits(got))
		h.Write(b[:])
		bitwise := refHost && (name != "Exp" && !strings.HasPrefix(name, "CExp") && name != "Pow" || fma)
		switch {
		case bitwise && math.Float64bits(got) != math.Float64bits(std):
			t.Errorf("%s%v = %v (%#x), the standard library %v (%#x)", name, args, got, math.Float64bits(got), std, math.Float64bits(std))
		case ulps(got, std) > tol(name):
			t.Errorf("%s%v = %v, the standard library %v (%g ulp)", name, args, got, std, ulps(got, std))
		}
	})
	if got := h.Sum64(); got != portableBits {
		t.Errorf("the results hash to %#x, on amd64 to %#x: some bits differ from amd64's", got, uint64(portableBits))
	}
	nan, inf := math.NaN(), math.Inf(1)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"Exp(-Inf)", Exp(-inf), 0}, {"Exp(1000)", Exp(1000), inf}, {"Exp(-1000)", Exp(-1000), 0}, {"Exp(0)", Exp(0), 1},
		{"Exp(-740)", Exp(-740), math.Exp(-740)}, {"Log(0)", Log(0), -inf}, {"Log(1)", Log(1), 0}, {"Log2(8)", Log2(8), 3},
		{"Log10(1000)", Log10(1000), 3}, {"Pow(10, 2)", Pow(10, 2), 100}, {"Pow(2, -3)", Pow(2, -3), 0.125},
		{"Pow(4, 0.5)", Pow(4, 0.5), 2}, {"Sin(0)", Sin(0), 0}, {"Tan(0)", Tan(0), 0}, {"Atan2(0, -1)", Atan2(0, -1), math.Pi},
		{"Atan2(1, 0)", Atan2(1, 0), math.Pi / 2}, {"Abs(3+4j)", Abs(3 + 4i), 5}, {"Abs(Inf+NaN j)", Abs(complex(inf, nan)), inf},
	} {
		if c.got != c.want {
			t.Errorf("%s = %v, want %v", c.name, c.got, c.want)
		}
	}
	for _, v := range []float64{Exp(nan), Log(-1), Log(nan), Pow(-2, 0.5), Sin(inf), Tan(nan), Atan2(nan, 1), Abs(complex(nan, 1))} {
		if !math.IsNaN(v) {
			t.Errorf("got %v, want NaN", v)
		}
	}
}

// TestExpAccuracy: Exp is within an ulp of e^x from math/big, as the
// paper's method promises (Shibata, ISC 2010, from memory).
func TestExpAccuracy(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for i := range 4000 {
		x := (rng.Float64()*2 - 1) * 700
		if i%2 == 0 {
			x = (rng.Float64()*2 - 1) * 20
		}
		if d := ulps(Exp(x), bigExp(x)); d > 1 {
			t.Fatalf("Exp(%v) = %v, math/big %v (%g ulp)", x, Exp(x), bigExp(x), d)
		}
	}
}
