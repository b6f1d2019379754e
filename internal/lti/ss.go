package lti

import (
	"math"
)

// SS is a continuous SISO state-space model
//
//	x' = A x + B u,  y = C x + D u,
//
// with A row-major N×N (A[i*N+j]), B of length N and C of length N.
type SS struct {
	N       int
	A, B, C []float64
	D       float64
}

func (s SS) check() error {
	if s.N < 0 || len(s.A) != s.N*s.N || len(s.B) != s.N || len(s.C) != s.N {
		return ErrBadDims
	}
	for _, v := range [][]float64{s.A, s.B, s.C, {s.D}} {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return ErrNonFinite
			}
		}
	}
	return nil
}

// SS returns the controllable canonical realization of t (scipy.signal.tf2ss
// form). With Den normalised monic, Den = s^n + a_{n-1}s^{n-1} + … + a_0 and
// Num = b_n s^n + … + b_0:
//
//	A = [−a_{n-1} … −a_1 −a_0; 1 0 … 0; …; 0 … 1 0],  B = e_1,
//	C = [b_{n-1}−b_n a_{n-1}, …, b_0−b_n a_0],  D = b_n.
//
// Errors: ErrZeroPoly if Den is zero, ErrImproper if deg Num > deg Den,
// ErrNonFinite for NaN/Inf coefficients. A zero Num gives C = 0, D = 0.
func (t TF) SS() (SS, error) {
	if !t.Num.IsFinite() || !t.Den.IsFinite() {
		return SS{}, ErrNonFinite
	}
	t = t.Normalize()
	n := len(t.Den) - 1
	if n < 0 {
		return SS{}, ErrZeroPoly
	}
	if len(t.Num)-1 > n {
		return SS{}, ErrImproper
	}
	b := make([]float64, n+1)
	copy(b, t.Num)
	s := SS{N: n, A: make([]float64, n*n), B: make([]float64, n), C: make([]float64, n), D: b[n]}
	for j := 0; j < n; j++ {
		s.A[j] = -t.Den[n-1-j]
		s.C[j] = b[n-1-j] - float64(s.D*t.Den[n-1-j])
	}
	for i := 1; i < n; i++ {
		s.A[i*n+i-1] = 1
	}
	if n > 0 {
		s.B[0] = 1
	}
	return s, nil
}

// Poles returns the eigenvalues of A sorted by SortRoots.
func (s SS) Poles() ([]complex128, error) {
	if s.N < 0 || len(s.A) != s.N*s.N {
		return nil, ErrBadDims
	}
	if s.N == 0 {
		return []complex128{}, nil
	}
	ev, err := eigvals(s.N, s.A)
	if err != nil {
		return nil, err
	}
	SortRoots(ev)
	return ev, nil
}

// Eval returns C (sI−A)^{-1} B + D (complex Inf if s is an eigenvalue of A).
func (s SS) Eval(z complex128) complex128 {
	if s.N < 0 || len(s.A) != s.N*s.N || len(s.B) != s.N || len(s.C) != s.N {
		return cmplxNaN()
	}
	return resolvent(s.N, s.A, s.B, s.C, s.D, z)
}

// expAug returns Φ = e^{Aη} and Γ = ∫_0^η e^{Aσ}dσ B from the exponential of
// the augmented matrix [[A B];[0 0]]·η (Van Loan), by expm (gonum's mat.Exp
// with the same bits on every CPU). It fails with ErrNonFinite when the
// scaled matrix overflows (the squaring would multiply Inf).
func expAug(n int, a, b []float64, eta float64) (phi, gam []float64, err error) {
	m := n + 1
	aug := make([]float64, m*m)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			aug[i*m+j] = a[i*n+j] * eta
		}
		aug[i*m+n] = b[i] * eta
	}
	if nrm := norm1(m, aug); math.IsNaN(nrm) || math.IsInf(nrm, 0) {
		return nil, nil, ErrNonFinite
	}
	e, err := expm(m, aug)
	if err != nil {
		return nil, nil, err
	}
	phi = make([]float64, n*n)
	gam = make([]float64, n)
	for i := 0; i < n; i++ {
		copy(phi[i*n:i*n+n], e[i*m:i*m+n])
		gam[i] = e[i*m+n]
	}
	return phi, gam, nil
}

// ZOH returns the exact zero-order-hold equivalent with sample period T:
// Φ = e^{AT}, Γ = ∫_0^T e^{Aη}dη B, read off exp([[A B];[0 0]]·T) (expm,
// gonum's mat.Exp); C and D are unchanged. Equals scipy.signal.cont2discrete(...,
// method='zoh').
func ZOH(s SS, T float64) (Disc, error) {
	if err := s.check(); err != nil {
		return Disc{}, err
	}
	if !(T > 0) || math.IsInf(T, 0) {
		return Disc{}, ErrBadPeriod
	}
	phi, gam, err := expAug(s.N, s.A, s.B, T)
	if err != nil {
		return Disc{}, err
	}
	d := Disc{N: s.N, A: phi, B: gam, C: append([]float64(nil), s.C...), D: s.D, T: T}
	if err := d.checkFinite(); err != nil {
		return Disc{}, err
	}
	return d, nil
}

// ZOHDelay returns the exact ZOH equivalent, period T, of s driven through an
// input transport delay tau >= 0, i.e. of y(t) = G(s)·e^{−sτ} u(t) with u
// held constant over each sample interval.
//
// Method (modified z-transform / split interval, Åström & Wittenmark,
// Computer-Controlled Systems, sampling of systems with time delay; quoted
// from memory, and re-derived here): write
// τ = d·T + f with d = floor(τ/T) and f ∈ [0,T). Over [kT,(k+1)T) the
// delayed input equals u[k−d−1] on the first f seconds and u[k−d] on the
// remaining T−f seconds, hence
//
//	x[k+1] = Φ x[k] + Γ1 u[k−d−1] + Γ0 u[k−d],
//	Φ  = e^{AT},
//	Γ0 = ∫_0^{T−f} e^{Aη}dη B,
//	Γ1 = e^{A(T−f)} ∫_0^{f} e^{Aη}dη B,
//	y[k] = C x[k] + D·u(kT−τ)  (= D·u[k−d−1] if f > 0, D·u[k−d] if f = 0).
//
// The past inputs are realized as m extra shift-register states appended
// after the n plant states: w_i[k] = u[k−i], i = 1..m, with m = d+1 when
// f > 0 and m = d when f = 0 (m = 0 reproduces ZOH exactly). The returned
// Disc has N = n+m; its u→y map is exact at the sampling instants. The
// feedthrough D moves onto the delayed state (Disc.D = 0) whenever τ > 0.
//
// f is snapped to 0 (or d incremented) when it is within 1e-12·T of a grid
// point so that delays that are integer multiples of T in exact arithmetic
// do not produce a spurious extra state.
func ZOHDelay(s SS, T, tau float64) (Disc, error) {
	if err := s.check(); err != nil {
		return Disc{}, err
	}
	if !(T > 0) || math.IsInf(T, 0) {
		return Disc{}, ErrBadPeriod
	}
	if !(tau >= 0) || math.IsInf(tau, 0) {
		return Disc{}, ErrBadDelay
	}
	if tau == 0 {
		return ZOH(s, T)
	}
	d, f := SplitDelay(tau, T)
	n := s.N
	phi, gam0, err := expAug(n, s.A, s.B, T)
	if err != nil {
		return Disc{}, err
	}
	var gam1 []float64
	m := d
	if f > 0 {
		m = d + 1
		phiA, g0, err := expAug(n, s.A, s.B, T-f)
		if err != nil {
			return Disc{}, err
		}
		_, gf, err := expAug(n, s.A, s.B, f)
		if err != nil {
			return Disc{}, err
		}
		gam0 = g0
		gam1 = make([]float64, n)
		for i := 0; i < n; i++ {
			var acc float64
			for j := 0; j < n; j++ {
				acc += float64(phiA[i*n+j] * gf[j])
			}
			gam1[i] = acc
		}
	}
	N := n + m
	out := Disc{N: N, A: make([]float64, N*N), B: make([]float64, N), C: make([]float64, N), T: T}
	for i := 0; i < n; i++ {
		copy(out.A[i*N:i*N+n], phi[i*n:i*n+n])
		out.C[i] = s.C[i]
	}
	// Column carrying u[k−d] (Γ0) and, if f > 0, u[k−d−1] (Γ1).
	// u[k−0] is the input itself (B), u[k−i] is state n+i−1.
	addIn := func(lag int, g []float64) {
		if lag == 0 {
			for i := 0; i < n; i++ {
				out.B[i] += g[i]
			}
			return
		}
		col := n + lag - 1
		for i := 0; i < n; i++ {
			out.A[i*N+col] += g[i]
		}
	}
	addIn(d, gam0)
	if f > 0 {
		addIn(d+1, gam1)
	}
	// Shift register: w_1[k+1] = u[k], w_i[k+1] = w_{i−1}[k].
	if m > 0 {
		out.B[n] = 1
		for i := 1; i < m; i++ {
			out.A[(n+i)*N+n+i-1] = 1
		}
	}
	// Feedthrough: y[k] = C x + D·u[k−lagD].
	lagD := d
	if f > 0 {
		lagD = d + 1
	}
	if lagD == 0 {
		out.D = s.D
	} else {
		out.C[n+lagD-1] += s.D
	}
	if err := out.checkFinite(); err != nil {
		return Disc{}, err
	}
	return out, nil
}

// SplitDelay splits the delay τ ≥ 0 into d whole samples of period T and a
// fraction f in [0, T), τ = d·T + f. A fraction within 1e-12·T of a sample
// boundary is snapped to it, so that a delay of exactly d samples in
// decimal gives d samples and no spurious fractional state.
func SplitDelay(tau, T float64) (d int, f float64) {
	if !(tau > 0) {
		return 0, 0
	}
	q := math.Floor(tau / T)
	f = tau - float64(q*T)
	if f < 1e-12*T {
		f = 0
	} else if T-f < 1e-12*T {
		q++
		f = 0
	}
	return int(q), math.Max(f, 0)
}
