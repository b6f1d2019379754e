package lti

import (
	"errors"
	"math"
)

// The matrix exponential of the sampled plants, with the same bits on
// every CPU. gonum's mat.Exp gave them until now; its BLAS and LAPACK are
// Go code that the compiler fuses into multiply-adds on arm64 (and
// assembly that rounds every product on amd64), so the discretized plants,
// and every figure after them, differed in their last bits between the
// two. expm below is the same computation step for step — the algorithm
// of mat.Exp with its products through gonum's Dgemm, Daxpy and LU solver
// (Dgetf2, Dgetrs) in the order their amd64 kernels take, each of them
// elementwise — with every product rounded before its sum. On amd64 it
// equals mat.Exp bit for bit (the test checks it on many matrices), and
// on every CPU it gives those bits. The code it follows is gonum's
// (gonum.org/v1/gonum/mat and lapack/gonum, Copyright The Gonum Authors,
// BSD 3-clause licence, a dependency of this module).

// errSingular reports a Padé denominator without an LU factorization.
var errSingular = errors.New("lti: singular Padé denominator in the matrix exponential")

// expm returns e^A for the n×n row-major matrix a (n ≥ 1) by scaling
// and squaring with a Padé approximant of degree 3, 5, 7, 9 or 13 chosen
// by the 1-norm: Higham, Functions of Matrices, Algorithm 10.20 (from
// memory of its use in gonum's mat.Exp, whose constants are those below).
func expm(n int, a []float64) ([]float64, error) {
	if n == 1 {
		return []float64{Exp(a[0])}, nil
	}
	nn := n * n
	a1 := append([]float64(nil), a[:nn]...)
	v, u := make([]float64, nn), make([]float64, nn)
	n1 := norm1(n, a1)
	pade := [...]struct {
		theta float64
		b     []float64
	}{
		{0.015, []float64{120, 60, 12, 1}},
		{0.25, []float64{30240, 15120, 3360, 420, 30, 1}},
		{0.95, []float64{17297280, 8648640, 1995840, 277200, 25200, 1512, 56, 1}},
		{2.1, []float64{17643225600, 8821612800, 2075673600, 302702400, 30270240, 2162160, 110880, 3960, 90, 1}},
	}
	for i, t := range pade {
		if n1 > t.theta {
			continue
		}
		p := make([]float64, nn)
		for k := 0; k < n; k++ {
			p[k*n+k] = 1
			v[k*n+k] = t.b[0]
			u[k*n+k] = t.b[1]
		}
		a2 := matMul(n, a1, a1)
		for j := 0; j <= i; j++ {
			p = matMul(n, p, a2)
			axpy(t.b[2*j+2], p, v)
			axpy(t.b[2*j+3], p, u)
		}
		u = matMul(n, a1, u)
		return padeSolve(n, v, u)
	}
	b := [...]float64{
		64764752532480000, 32382376266240000, 7771770303897600, 1187353796428800,
		129060195264000, 10559470521600, 670442572800, 33522128640,
		1323241920, 40840800, 960960, 16380, 182, 1,
	}
	const theta13 = 5.4
	s := Log2(n1 / theta13)
	if s >= 0 {
		s = math.Ceil(s)
		f := 1 / Pow(2, s)
		for i := range a1 {
			a1[i] *= f
		}
	}
	id := make([]float64, nn)
	for j := 0; j < n; j++ {
		id[j*n+j] = 1
	}
	a2 := matMul(n, a1, a1)
	a4 := matMul(n, a2, a2)
	a6 := matMul(n, a2, a4)
	// V = A6(b12·A6 + b10·A4 + b8·A2) + b6·A6 + b4·A4 + b2·A2 + b0·I
	axpy(b[12], a6, v)
	axpy(b[10], a4, v)
	axpy(b[8], a2, v)
	v = matMul(n, v, a6)
	axpy(b[6], a6, v)
	axpy(b[4], a4, v)
	axpy(b[2], a2, v)
	axpy(b[0], id, v)
	// U = A(A6(b13·A6 + b11·A4 + b9·A2) + b7·A6 + b5·A4 + b3·A2 + b1·I)
	axpy(b[13], a6, u)
	axpy(b[11], a4, u)
	axpy(b[9], a2, u)
	u = matMul(n, u, a6)
	axpy(b[7], a6, u)
	axpy(b[5], a4, u)
	axpy(b[3], a2, u)
	axpy(b[1], id, u)
	u = matMul(n, u, a1)
	e, err := padeSolve(n, v, u)
	if err != nil {
		return nil, err
	}
	for ; s > 0; s-- {
		e = matMul(n, e, e)
	}
	return e, nil
}

// padeSolve returns (V − U)⁻¹(V + U), the Padé approximant.
func padeSolve(n int, v, u []float64) ([]float64, error) {
	vpu, vmu := make([]float64, n*n), make([]float64, n*n)
	for i := range v {
		vpu[i] = v[i] + u[i]
		vmu[i] = v[i] - u[i]
	}
	return luSolve(n, vmu, vpu)
}

// norm1 is the largest column sum of magnitudes, the rows added in order.
func norm1(n int, a []float64) float64 {
	sums := make([]float64, n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			sums[j] += math.Abs(a[i*n+j])
		}
	}
	var v float64
	for _, s := range sums {
		v = math.Max(v, s)
	}
	return v
}

// matMul returns the n×n product a·b, each row of the result the sum of
// the rows of b scaled by the row of a, in order, zero entries of a
// skipped (gonum's Dgemm for small matrices).
func matMul(n int, a, b []float64) []float64 {
	c := make([]float64, n*n)
	for i := 0; i < n; i++ {
		ci := c[i*n : i*n+n]
		for l, t := range a[i*n : i*n+n] {
			if t != 0 {
				axpy(t, b[l*n:l*n+n], ci)
			}
		}
	}
	return c
}

// axpy adds alpha·x to y.
func axpy(alpha float64, x, y []float64) {
	for i, v := range x {
		y[i] += float64(alpha * v)
	}
}

// luSolve returns a⁻¹b for the n×n matrices a and b (overwriting a) by
// LU factorization with partial pivoting (LAPACK's Dgetf2, then Dgetrs:
// the row swaps, the unit lower and the upper triangular solves).
func luSolve(n int, a, b []float64) ([]float64, error) {
	const sfmin = 0x1p-1022 // the smallest normal number
	ipiv := make([]int, n)
	for j := 0; j < n; j++ {
		jp, big := j, math.Abs(a[j*n+j])
		for i := j + 1; i < n; i++ {
			if v := math.Abs(a[i*n+j]); v > big {
				jp, big = i, v
			}
		}
		ipiv[j] = jp
		if a[jp*n+j] == 0 {
			return nil, errSingular
		}
		if jp != j {
			for k := 0; k < n; k++ {
				a[j*n+k], a[jp*n+k] = a[jp*n+k], a[j*n+k]
			}
		}
		if j == n-1 {
			break
		}
		aj := a[j*n+j]
		if !(math.Abs(aj) >= sfmin) {
			return nil, errSingular
		}
		r := 1 / aj
		for i := j + 1; i < n; i++ {
			a[i*n+j] *= r
		}
		// Rank-one update of the trailing block.
		for i := j + 1; i < n; i++ {
			axpy(-a[i*n+j], a[j*n+j+1:j*n+n], a[i*n+j+1:i*n+n])
		}
	}
	x := append([]float64(nil), b[:n*n]...)
	for k, p := range ipiv {
		if p != k {
			for j := 0; j < n; j++ {
				x[k*n+j], x[p*n+j] = x[p*n+j], x[k*n+j]
			}
		}
	}
	for i := 0; i < n; i++ {
		for k, l := range a[i*n : i*n+i] {
			if l != 0 {
				axpy(-l, x[k*n:k*n+n], x[i*n:i*n+n])
			}
		}
	}
	for i := n - 1; i >= 0; i-- {
		xi := x[i*n : i*n+n]
		for k := i + 1; k < n; k++ {
			if v := a[i*n+k]; v != 0 {
				axpy(-v, x[k*n:k*n+n], xi)
			}
		}
		r := 1 / a[i*n+i]
		for j := range xi {
			xi[j] *= r
		}
	}
	return x, nil
}
