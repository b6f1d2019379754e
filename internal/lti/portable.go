package lti

import "math"

// The margins are searched on a logarithmic frequency axis, and the
// figures they print (crossover, delay margin) follow the last bits of
// exp and log. Go's math.Exp and math.Log are assembly on some CPUs and
// Go on others (and Go code may fuse a multiply-add on arm64), so their
// last bits differ between amd64 and arm64, and now and then a printed
// tenth digit with them. exp and log below are the same algorithms in
// plain Go with every product rounded on its own (float64(x*y) forbids
// the fusion), so they give the same bits on every CPU. Both are the
// classic reduction-and-polynomial methods of Sun's fdlibm (e_exp.c,
// e_log.c; the coefficients are its minimax polynomials, from memory),
// accurate to within an ulp of the true value; the test checks them
// against math.Exp and math.Log to one ulp.

// Constants of the reductions: ln 2 split in a high part with trailing
// zero bits and the rest, and 1/ln 2.
const (
	ln2Hi = 6.93147180369123816490e-01
	ln2Lo = 1.90821492927058770002e-10
	log2e = 1.44269504088896338700e+00
)

// exp returns e^x on every CPU to the same bits.
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
	lo := float64(k) * ln2Lo
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

// log returns the natural logarithm of x on every CPU to the same bits.
func log(x float64) float64 {
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
	// x = 2^k · (1 + f), √2/2 < 1 + f < √2.
	f1, ki := math.Frexp(x)
	if f1 < math.Sqrt2/2 {
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
	t1 = s2 * t1
	t2 := l4 + float64(s4*l6)
	t2 = l2 + float64(s4*t2)
	t2 = s4 * t2
	R := t1 + t2
	hfsq := 0.5 * f * f
	return float64(k*ln2Hi) - ((hfsq - (float64(s*(hfsq+R)) + float64(k*ln2Lo))) - f)
}

// log10 returns log(x)/ln 10 on every CPU to the same bits.
func log10(x float64) float64 { return log(x) * (1 / math.Ln10) }
