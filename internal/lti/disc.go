package lti

import (
	"math"
	"math/cmplx"
)

//go:generate go run locusmith/internal/lti/internal/kernelgen/gen

// Disc is a discrete SISO state-space model with sample period T:
//
//	x[k+1] = A x[k] + B u[k],  y[k] = C x[k] + D u[k],
//
// A row-major N×N, B and C of length N.
type Disc struct {
	N       int
	A, B, C []float64
	D       float64
	T       float64
}

func (d Disc) dimsOK() bool {
	return d.N >= 0 && len(d.A) == d.N*d.N && len(d.B) == d.N && len(d.C) == d.N
}

func (d Disc) checkFinite() error {
	for _, v := range [][]float64{d.A, d.B, d.C, {d.D}} {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return ErrNonFinite
			}
		}
	}
	return nil
}

// stackN is the state size up to which Simulate/StepInto keep their state on
// the stack (no heap allocation).
const stackN = 32

// Simulate returns y[k] for the input sequence u, starting from x[0] = 0.
// Inconsistent dimensions give a slice of NaN.
func (d Disc) Simulate(u []float64) []float64 {
	y := make([]float64, len(u))
	d.SimulateInto(y, u)
	return y
}

// SimulateInto writes the response to u into y[:len(u)] (y must be at least
// as long as u; extra entries are untouched). No allocation for N <= 32;
// unrolled kernels for N <= 10.
func (d Disc) SimulateInto(y, u []float64) {
	if len(y) < len(u) {
		u = u[:len(y)]
	}
	if !d.dimsOK() {
		for k := range u {
			y[k] = math.NaN()
		}
		return
	}
	if simKernel(d.N, d.A, d.B, d.C, d.D, y, u) {
		return
	}
	simGeneric(d.N, d.A, d.B, d.C, d.D, y, u)
}

// simGeneric is the reference loop; the unrolled kernels in kernels_gen.go
// reproduce its summation order exactly.
func simGeneric(n int, A, B, C []float64, D float64, y, u []float64) {
	var xa, xb [stackN]float64
	var x, xn []float64
	if n <= stackN {
		x, xn = xa[:n], xb[:n]
	} else {
		buf := make([]float64, 2*n)
		x, xn = buf[:n], buf[n:]
	}
	A, B, C = A[:n*n], B[:n], C[:n]
	y = y[:len(u)]
	for k, uk := range u {
		var acc float64
		for i, c := range C {
			acc += float64(c * x[i])
		}
		y[k] = acc + float64(D*uk)
		for i := 0; i < n; i++ {
			row := A[i*n : i*n+n]
			s := float64(B[i] * uk)
			for j, a := range row {
				s += float64(a * x[j])
			}
			xn[i] = s
		}
		x, xn = xn, x
	}
}

// Step returns the unit-step response y[0..n-1] (x[0] = 0, u[k] = 1).
func (d Disc) Step(n int) []float64 {
	if n < 0 {
		n = 0
	}
	y := make([]float64, n)
	d.StepInto(y)
	return y
}

// StepInto writes the unit-step response into y (len(y) samples, x[0] = 0)
// without allocating (for N <= 32). It is the inner loop of design searches:
// for N <= 10 it runs a fully unrolled kernel (kernels_gen.go), about 10 ns
// per sample for N = 6.
func (d Disc) StepInto(y []float64) {
	if !d.dimsOK() {
		for k := range y {
			y[k] = math.NaN()
		}
		return
	}
	if stepKernel(d.N, d.A, d.B, d.C, d.D, y) {
		return
	}
	stepGeneric(d.N, d.A, d.B, d.C, d.D, y)
}

// stepGeneric is the reference loop for StepInto (see simGeneric).
func stepGeneric(n int, A, B, C []float64, D float64, y []float64) {
	var xa, xb [stackN]float64
	var x, xn []float64
	if n <= stackN {
		x, xn = xa[:n], xb[:n]
	} else {
		buf := make([]float64, 2*n)
		x, xn = buf[:n], buf[n:]
	}
	A, B, C = A[:n*n], B[:n], C[:n]
	for k := range y {
		acc := D
		for i, c := range C {
			acc += float64(c * x[i])
		}
		y[k] = acc
		for i := 0; i < n; i++ {
			row := A[i*n : i*n+n]
			s := B[i]
			for j, a := range row {
				s += float64(a * x[j])
			}
			xn[i] = s
		}
		x, xn = xn, x
	}
}

// Eval returns C (zI−A)^{-1} B + D (complex Inf if z is an eigenvalue of A).
func (d Disc) Eval(z complex128) complex128 {
	if !d.dimsOK() {
		return cmplxNaN()
	}
	return resolvent(d.N, d.A, d.B, d.C, d.D, z)
}

// Poles returns the eigenvalues of A sorted by SortRoots.
func (d Disc) Poles() ([]complex128, error) {
	if !d.dimsOK() {
		return nil, ErrBadDims
	}
	if d.N == 0 {
		return []complex128{}, nil
	}
	ev, err := eigvals(d.N, d.A)
	if err != nil {
		return nil, err
	}
	SortRoots(ev)
	return ev, nil
}

func cmplxNaN() complex128 { return cmplx.NaN() }

// resolvent computes C (zI−A)^{-1} B + D by complex Gaussian elimination
// with partial pivoting on (zI−A) v = B; no heap allocation for n <= 12.
func resolvent(n int, a, b, c []float64, dd float64, z complex128) complex128 {
	if n == 0 {
		return complex(dd, 0)
	}
	const small = 12
	var mbuf [small * (small + 1)]complex128
	var vbuf [small]complex128
	var m, v []complex128 // augmented [zI−A | B], solution
	if n <= small {
		m, v = mbuf[:n*(n+1)], vbuf[:n]
	} else {
		m, v = make([]complex128, n*(n+1)), make([]complex128, n)
	}
	w := n + 1
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			m[i*w+j] = complex(-a[i*n+j], 0)
		}
		m[i*w+i] += z
		m[i*w+n] = complex(b[i], 0)
	}
	for col := 0; col < n; col++ {
		p, best := col, -1.0
		for r := col; r < n; r++ {
			e := m[r*w+col]
			if v := math.Abs(real(e)) + math.Abs(imag(e)); v > best {
				p, best = r, v
			}
		}
		if math.IsNaN(best) {
			return cmplxNaN()
		}
		if best == 0 {
			return cmplx.Inf()
		}
		if p != col {
			for j := col; j < w; j++ {
				m[p*w+j], m[col*w+j] = m[col*w+j], m[p*w+j]
			}
		}
		// One division per pivot; the rows are eliminated and the
		// unknowns solved with its reciprocal.
		inv := Div(1, m[col*w+col])
		m[col*w+col] = inv
		for r := col + 1; r < n; r++ {
			f := Mul(m[r*w+col], inv)
			if f == 0 {
				continue
			}
			for j := col + 1; j < w; j++ {
				m[r*w+j] -= Mul(f, m[col*w+j])
			}
		}
	}
	var acc complex128
	for i := n - 1; i >= 0; i-- {
		s := m[i*w+n]
		for j := i + 1; j < n; j++ {
			s -= Mul(m[i*w+j], v[j])
		}
		v[i] = Mul(s, m[i*w+i])
		acc += Mul(complex(c[i], 0), v[i])
	}
	return acc + complex(dd, 0)
}

// TF returns C(zI − A)⁻¹B + D as a rational function of z. The
// denominator det(zI − A) and det(zI − A + B·C) come from eigenvalues, and
// the numerator follows from the matrix determinant lemma,
// det(zI − A + B·C) = det(zI − A)·(1 + C(zI − A)⁻¹B):
// Num = det(zI − (A − B·C)) − det(zI − A) + D·det(zI − A). The difference
// cancels the leading terms exactly in theory but not always in floating
// point; callers that need the numerator's roots trim the residue.
func (d Disc) TF() (TF, error) {
	if !d.dimsOK() {
		return TF{}, ErrBadDims
	}
	n := d.N
	ev, err := d.Poles()
	if err != nil {
		return TF{}, err
	}
	den, err := FromRoots(ev)
	if err != nil {
		return TF{}, err
	}
	abc := make([]float64, n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			abc[i*n+j] = d.A[i*n+j] - float64(d.B[i]*d.C[j])
		}
	}
	ev2, err := Disc{N: n, A: abc, B: d.B, C: d.C, T: d.T}.Poles()
	if err != nil {
		return TF{}, err
	}
	c2, err := FromRoots(ev2)
	if err != nil {
		return TF{}, err
	}
	num := PolyAdd(c2, den.Scale(-1))
	if d.D != 0 {
		num = PolyAdd(num, den.Scale(d.D))
	}
	return TF{Num: num, Den: den}, nil
}

// StepPair is the unit-step response of two outputs, C0·x + D0 and
// C1·x + D1, of one state x[k+1] = A x[k] + B, simulated once for both and
// resumable: Run continues where the last call ended, so a caller can stop
// a response as soon as it has seen enough of it.
type StepPair struct {
	n      int
	a, b   []float64
	c0, c1 []float64
	d0, d1 float64
	x, xn  []float64
}

// NewStepPair starts the step of d with the two output rows; d's own C and
// D are not used. The state starts at rest.
func (d Disc) NewStepPair(c0, c1 []float64, d0, d1 float64) *StepPair {
	buf := make([]float64, 2*d.N)
	return &StepPair{n: d.N, a: d.A[:d.N*d.N], b: d.B[:d.N], c0: c0[:d.N], c1: c1[:d.N], d0: d0, d1: d1, x: buf[:d.N], xn: buf[d.N:]}
}

// Run writes the next len(y0) samples of both outputs into y0 and y1
// (len(y1) = len(y0)).
func (s *StepPair) Run(y0, y1 []float64) {
	n, a, b, c0, c1 := s.n, s.a, s.b, s.c0, s.c1
	x, xn := s.x, s.xn
	y1 = y1[:len(y0)]
	for k := range y0 {
		v0, v1 := s.d0, s.d1
		for i, xi := range x[:n] {
			v0 += float64(c0[i] * xi)
			v1 += float64(c1[i] * xi)
		}
		y0[k], y1[k] = v0, v1
		for i := range n {
			acc := b[i]
			for j, aij := range a[i*n : i*n+n] {
				acc += float64(aij * x[j])
			}
			xn[i] = acc
		}
		x, xn = xn, x
	}
	s.x, s.xn = x, xn
}
