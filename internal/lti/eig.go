package lti

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Eigenvalues with the same bits on every CPU. The roots of every
// polynomial and the poles of every sampled loop are eigenvalues, and
// gonum's mat.Eigen gave them until now: LAPACK's Dgeev translated to Go,
// whose sums of products the compiler fuses into multiply-adds on arm64,
// over BLAS kernels that are assembly on amd64 (rounding every product,
// with their own orders of summation) and Go elsewhere. The last bits of
// the roots, and now and then a printed digit, differed between the two.
//
// eigvals below runs the same computation for the matrices of this
// project (up to 75 rows, the limit of Dhseqr's small-matrix path):
// Dgeev without eigenvectors — balancing (Dgebal), reduction to Hessenberg
// form by Householder reflectors (Dgehd2, Dlarfg, Dlarf) and the double-
// shift QR iteration (Dlahqr, Dlanv2) — with gonum's amd64 kernels for the
// matrix-vector products and norms (GemvN's two interleaved partial sums,
// GemvT's, Ger's and L2Norm's orders) and every product rounded before its
// sum. On amd64 it equals mat.Eigen bit for bit (the test checks it on
// many matrices, plant-like and random); on every CPU it gives those bits.
// The cases it does not follow (larger matrices, entries that Dgeev would
// rescale, a QR iteration that does not converge) go to mat.Eigen as
// before. The routines are LAPACK's (Anderson et al., LAPACK Users' Guide,
// from memory) and follow, step for step, the Go translation in gonum
// (gonum.org/v1/gonum/lapack/gonum, Copyright The Gonum Authors,
// BSD 3-clause licence, a dependency of this module).

// Machine constants of LAPACK's Dlamch for IEEE double precision.
const (
	dlamchE = 0x1p-53     // relative machine precision
	dlamchP = 2 * dlamchE // precision times the base
	dlamchS = 0x1p-1022   // safe minimum: smallest normal number
)

// eigvals returns the eigenvalues of the n×n row-major matrix a (not
// modified), in Dgeev's order.
func eigvals(n int, a []float64) ([]complex128, error) {
	if n == 0 {
		return []complex128{}, nil
	}
	for _, v := range a[:n*n] {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, ErrNonFinite
		}
	}
	if ev, ok := dgeev(n, append([]float64(nil), a[:n*n]...)); ok {
		return ev, nil
	}
	var e mat.Eigen
	if !e.Factorize(mat.NewDense(n, n, append([]float64(nil), a[:n*n]...)), mat.EigenNone) {
		return nil, ErrEigenFailed
	}
	return e.Values(nil), nil
}

// dgeev returns the eigenvalues of a (overwritten) as LAPACK's Dgeev
// does without eigenvectors, and false for a case it leaves to mat.Eigen.
func dgeev(n int, a []float64) ([]complex128, bool) {
	const nmin = 75 // Dhseqr's limit for Dlahqr
	if n > nmin {
		return nil, false
	}
	smlnum := math.Sqrt(dlamchS) / dlamchP
	anrm := 0.0
	for _, v := range a {
		anrm = math.Max(anrm, math.Abs(v))
	}
	if 0 < anrm && anrm < smlnum || anrm > 1/smlnum {
		return nil, false // Dgeev would rescale the matrix
	}
	ilo, ihi, ok := dgebal(n, a)
	if !ok {
		return nil, false
	}
	dgehd2(n, ilo, ihi, a)
	wr, wi := make([]float64, n), make([]float64, n)
	for i := 0; i < ilo; i++ {
		wr[i] = a[i*n+i]
	}
	for i := ihi + 1; i < n; i++ {
		wr[i] = a[i*n+i]
	}
	if ilo == ihi {
		wr[ilo] = a[ilo*n+ilo]
	} else if !dlahqr(n, ilo, ihi, a, wr, wi) {
		return nil, false
	}
	ev := make([]complex128, n)
	for i := range ev {
		ev[i] = complex(wr[i], wi[i])
	}
	return ev, true
}

// dnrm2 returns the Euclidean norm of the n elements of x at stride inc,
// scaled as gonum's amd64 L2Norm kernels do: after the leading zeros,
// sumsq = 1 + sumsq·(scale/|xi|)² where |xi| exceeds the scale, else
// sumsq += (|xi|/scale)², and the norm scale·√sumsq.
func dnrm2(n int, x []float64, inc int) float64 {
	switch {
	case n == 1:
		return math.Abs(x[0])
	case n < 1:
		return 0
	}
	i := 0
	for ; i < n && x[i*inc] == 0; i++ {
	}
	if i == n {
		return 0
	}
	scale, sumsq := 0.0, 1.0
	nan, inf := false, false
	for ; i < n; i++ {
		v := x[i*inc]
		nan = nan || math.IsNaN(v)
		a := math.Abs(v)
		inf = inf || math.IsInf(a, 1)
		if a > scale {
			r := scale / a
			sumsq = float64(float64(sumsq*r)*r) + 1
			scale = a
		} else {
			r := a / scale
			sumsq += float64(r * r)
		}
	}
	switch {
	case nan:
		return math.NaN()
	case inf:
		return math.Inf(1)
	}
	return math.Sqrt(sumsq) * scale
}

// dscal multiplies the n elements of x at stride inc by alpha.
func dscal(n int, alpha float64, x []float64, inc int) {
	for i := 0; i < n; i++ {
		x[i*inc] *= alpha
	}
}

// idamax returns the index of the first element of largest magnitude
// among the n elements of x at stride inc.
func idamax(n int, x []float64, inc int) int {
	idx, big := 0, math.Abs(x[0])
	for i := 1; i < n; i++ {
		if v := math.Abs(x[i*inc]); v > big {
			idx, big = i, v
		}
	}
	return idx
}

// dswap exchanges the n elements of x and y at strides incx and incy.
func dswap(n int, x []float64, incx int, y []float64, incy int) {
	for i := 0; i < n; i++ {
		x[i*incx], y[i*incy] = y[i*incy], x[i*incx]
	}
}

// gemvN sets y[r] = Σ_j a[r][j]·x[j·incx] for the m×n matrix a (row
// stride lda), as gonum's amd64 GemvN sums with α = 1 and β = 0: the
// even and the odd columns in two partial sums added at the end, and the
// last column of an odd n added after them — before them for the last
// row of an odd m, which the kernel takes alone.
func gemvN(m, n int, a []float64, lda int, x []float64, incx int, y []float64) {
	for r := 0; r < m; r++ {
		row := a[r*lda : r*lda+n]
		var even, odd float64
		for j := 0; j+1 < n; j += 2 {
			even += float64(row[j] * x[j*incx])
			odd += float64(row[j+1] * x[(j+1)*incx])
		}
		var s float64
		switch {
		case n%2 == 0:
			s = even + odd
		case m%2 == 1 && r == m-1:
			even += float64(row[n-1] * x[(n-1)*incx])
			s = even + odd
		default:
			s = even + odd + float64(row[n-1]*x[(n-1)*incx])
		}
		y[r] = 0 + s
	}
}

// gemvT sets y[j] = Σ_r x[r·incx]·a[r][j] for the m×n matrix a, the rows
// added in order (gonum's GemvT with α = 1 and β = 0).
func gemvT(m, n int, a []float64, lda int, x []float64, incx int, y []float64) {
	for j := range y[:n] {
		y[j] = 0
	}
	for r := 0; r < m; r++ {
		axpy(x[r*incx], a[r*lda:r*lda+n], y[:n])
	}
}

// dger adds alpha·x·yᵀ to the m×n matrix a: a[i][j] += (alpha·x[i])·y[j].
func dger(m, n int, alpha float64, x []float64, incx int, y []float64, incy int, a []float64, lda int) {
	for i := 0; i < m; i++ {
		t := alpha * x[i*incx]
		row := a[i*lda : i*lda+n]
		for j := range row {
			row[j] += float64(t * y[j*incy])
		}
	}
}

// dlarfg returns β and τ of the elementary reflector H = I − τ·v·vᵀ with
// H·(α; x) = (β; 0), and overwrites x (n − 1 elements at stride inc) with
// v's tail (v₀ = 1): Dlarfg.
func dlarfg(n int, alpha float64, x []float64, inc int) (beta, tau float64) {
	if n <= 1 {
		return alpha, 0
	}
	xnorm := dnrm2(n-1, x, inc)
	if xnorm == 0 {
		return alpha, 0
	}
	beta = -math.Copysign(Abs(complex(alpha, xnorm)), alpha)
	const safmin = dlamchS / dlamchE
	knt := 0
	if math.Abs(beta) < safmin {
		for {
			knt++
			dscal(n-1, 1/safmin, x, inc)
			beta *= 1 / safmin
			alpha *= 1 / safmin
			if math.Abs(beta) >= safmin {
				break
			}
		}
		xnorm = dnrm2(n-1, x, inc)
		beta = -math.Copysign(Abs(complex(alpha, xnorm)), alpha)
	}
	tau = (beta - alpha) / beta
	dscal(n-1, 1/(alpha-beta), x, inc)
	for j := 0; j < knt; j++ {
		beta *= safmin
	}
	return beta, tau
}

// dlarf applies H = I − τ·v·vᵀ to the m×n matrix c from the left (H·c) or
// the right (c·H), v at stride incv, its trailing zeros skipped: Dlarf.
func dlarf(left bool, m, n int, v []float64, incv int, tau float64, c []float64, ldc int, work []float64) {
	if tau == 0 {
		return
	}
	lastv := n - 1
	if left {
		lastv = m - 1
	}
	for lastv >= 0 && v[lastv*incv] == 0 {
		lastv--
	}
	if lastv < 0 {
		return
	}
	if left {
		lastc := lastCol(lastv+1, n, c, ldc)
		if lastc < 0 {
			return
		}
		gemvT(lastv+1, lastc+1, c, ldc, v, incv, work)
		dger(lastv+1, lastc+1, -tau, v, incv, work, 1, c, ldc)
		return
	}
	lastc := lastRow(m, lastv+1, c, ldc)
	if lastc < 0 {
		return
	}
	gemvN(lastc+1, lastv+1, c, ldc, v, incv, work)
	dger(lastc+1, lastv+1, -tau, work, 1, v, incv, c, ldc)
}

// lastCol returns the last column of the m×n matrix a with a non-zero
// entry, −1 if none (Iladlc).
func lastCol(m, n int, a []float64, lda int) int {
	if a[n-1] != 0 || a[(m-1)*lda+n-1] != 0 {
		return n - 1
	}
	last := -1
	for i := 0; i < m; i++ {
		for j := n - 1; j >= 0; j-- {
			if a[i*lda+j] != 0 {
				last = max(last, j)
				break
			}
		}
	}
	return last
}

// lastRow returns the last row of the m×n matrix a with a non-zero
// entry, −1 if none (Iladlr).
func lastRow(m, n int, a []float64, lda int) int {
	if a[(m-1)*lda] != 0 || a[(m-1)*lda+n-1] != 0 {
		return m - 1
	}
	for i := m - 1; i >= 0; i-- {
		for j := 0; j < n; j++ {
			if a[i*lda+j] != 0 {
				return i
			}
		}
	}
	return -1
}

// dgebal permutes a to isolate the eigenvalues it can read off and
// scales rows and columns by powers of 2 to balance their norms (Dgebal
// with job PermuteScale). It returns the active block [ilo, ihi], and
// false on a NaN, which Dgebal refuses.
func dgebal(n int, a []float64) (ilo, ihi int, ok bool) {
	ihi = n - 1
	scale := make([]float64, n)
	for swapped := true; swapped; {
		swapped = false
	rows:
		for i := ihi; i >= 0; i-- {
			for j := 0; j <= ihi; j++ {
				if i != j && a[i*n+j] != 0 {
					continue rows
				}
			}
			scale[ihi] = float64(i)
			if i != ihi {
				dswap(ihi+1, a[i:], n, a[ihi:], n)
				dswap(n, a[i*n:], 1, a[ihi*n:], 1)
			}
			if ihi == 0 {
				return ilo, ihi, true
			}
			ihi--
			swapped = true
			break
		}
	}
	for swapped := true; swapped; {
		swapped = false
	columns:
		for j := ilo; j <= ihi; j++ {
			for i := ilo; i <= ihi; i++ {
				if i != j && a[i*n+j] != 0 {
					continue columns
				}
			}
			scale[ilo] = float64(j)
			if j != ilo {
				dswap(ihi+1, a[j:], n, a[ilo:], n)
				dswap(n-ilo, a[j*n+ilo:], 1, a[ilo*n+ilo:], 1)
			}
			swapped = true
			ilo++
			break
		}
	}
	for i := ilo; i <= ihi; i++ {
		scale[i] = 1
	}
	const (
		sclfac = 2
		factor = 0.95
		sfmin1 = dlamchS / dlamchP
		sfmax1 = 1 / sfmin1
		sfmin2 = sfmin1 * sclfac
		sfmax2 = 1 / sfmin2
	)
	for conv := false; !conv; {
		conv = true
		for i := ilo; i <= ihi; i++ {
			c := dnrm2(ihi-ilo+1, a[ilo*n+i:], n)
			r := dnrm2(ihi-ilo+1, a[i*n+ilo:], 1)
			ca := math.Abs(a[idamax(ihi+1, a[i:], n)*n+i])
			ra := math.Abs(a[i*n+ilo+idamax(n-ilo, a[i*n+ilo:], 1)])
			if c == 0 || r == 0 {
				continue
			}
			g := r / sclfac
			f := 1.0
			s := c + r
			for c < g && math.Max(f, math.Max(c, ca)) < sfmax2 && math.Min(r, math.Min(g, ra)) > sfmin2 {
				if math.IsNaN(c + f + ca + r + g + ra) {
					return 0, 0, false
				}
				f *= sclfac
				c *= sclfac
				ca *= sclfac
				g /= sclfac
				r /= sclfac
				ra /= sclfac
			}
			g = c / sclfac
			for r <= g && math.Max(r, ra) < sfmax2 && math.Min(math.Min(f, c), math.Min(g, ca)) > sfmin2 {
				f /= sclfac
				c /= sclfac
				ca /= sclfac
				g /= sclfac
				r *= sclfac
				ra *= sclfac
			}
			if c+r >= factor*s {
				continue
			}
			if f < 1 && scale[i] < 1 && f*scale[i] <= sfmin1 {
				continue
			}
			if f > 1 && scale[i] > 1 && scale[i] >= sfmax1/f {
				continue
			}
			scale[i] *= f
			dscal(n-ilo, 1/f, a[i*n+ilo:], 1)
			dscal(ihi+1, f, a[i:], n)
			conv = false
		}
	}
	return ilo, ihi, true
}

// dgehd2 reduces the block [ilo, ihi] of a to upper Hessenberg form by
// Householder reflectors from both sides (Dgehd2; the reflectors' tails
// are left below the subdiagonal, as LAPACK stores them).
func dgehd2(n, ilo, ihi int, a []float64) {
	work := make([]float64, n)
	for i := ilo; i < ihi; i++ {
		aii, tau := dlarfg(ihi-i, a[(i+1)*n+i], a[min(i+2, n-1)*n+i:], n)
		a[(i+1)*n+i] = 1
		dlarf(false, ihi+1, ihi-i, a[(i+1)*n+i:], n, tau, a[i+1:], n, work)
		dlarf(true, ihi-i, n-i-1, a[(i+1)*n+i:], n, tau, a[(i+1)*n+i+1:], n, work)
		a[(i+1)*n+i] = aii
	}
}

// dlahqr computes the eigenvalues of the Hessenberg block [ilo, ihi] of h
// by the double-shift QR iteration into wr and wi (Dlahqr without the
// Schur form or vectors), and reports whether it converged.
func dlahqr(n, ilo, ihi int, h, wr, wi []float64) bool {
	for j := ilo; j < ihi-2; j++ {
		h[(j+2)*n+j] = 0
		h[(j+3)*n+j] = 0
	}
	if ilo <= ihi-2 {
		h[ihi*n+ihi-2] = 0
	}
	nh := ihi - ilo + 1
	const ulp = dlamchP
	smlnum := float64(nh) / ulp * dlamchS
	itmax := 30 * max(10, nh)
	kdefl := 0
	for i := ihi; i >= ilo; {
		l := ilo
		converged := false
		for its := 0; its <= itmax; its++ {
			// Look for a single small subdiagonal element.
			var k int
			for k = i; k > l; k-- {
				if math.Abs(h[k*n+k-1]) <= smlnum {
					break
				}
				tst := math.Abs(h[(k-1)*n+k-1]) + math.Abs(h[k*n+k])
				if tst == 0 {
					if k-2 >= ilo {
						tst += math.Abs(h[(k-1)*n+k-2])
					}
					if k+1 <= ihi {
						tst += math.Abs(h[(k+1)*n+k])
					}
				}
				if math.Abs(h[k*n+k-1]) <= ulp*tst {
					ab := math.Max(math.Abs(h[k*n+k-1]), math.Abs(h[(k-1)*n+k]))
					ba := math.Min(math.Abs(h[k*n+k-1]), math.Abs(h[(k-1)*n+k]))
					aa := math.Max(math.Abs(h[k*n+k]), math.Abs(h[(k-1)*n+k-1]-h[k*n+k]))
					bb := math.Min(math.Abs(h[k*n+k]), math.Abs(h[(k-1)*n+k-1]-h[k*n+k]))
					s := aa + ab
					if ab/s*ba <= math.Max(smlnum, aa/s*bb*ulp) {
						break
					}
				}
			}
			l = k
			if l > ilo {
				h[l*n+l-1] = 0
			}
			if l >= i-1 {
				converged = true
				break
			}
			kdefl++
			i1, i2 := l, i
			const (
				dat1  = 0.75
				dat2  = -0.4375
				kexsh = 10
			)
			var h11, h21, h12, h22 float64
			switch {
			case kdefl%(2*kexsh) == 0: // exceptional shift
				s := math.Abs(h[i*n+i-1]) + math.Abs(h[(i-1)*n+i-2])
				h11 = float64(dat1*s) + h[i*n+i]
				h12 = dat2 * s
				h21 = s
				h22 = h11
			case kdefl%kexsh == 0: // exceptional shift
				s := math.Abs(h[(l+1)*n+l]) + math.Abs(h[(l+2)*n+l+1])
				h11 = float64(dat1*s) + h[l*n+l]
				h12 = dat2 * s
				h21 = s
				h22 = h11
			default: // Francis' double shift
				h11 = h[(i-1)*n+i-1]
				h21 = h[i*n+i-1]
				h12 = h[(i-1)*n+i]
				h22 = h[i*n+i]
			}
			s := math.Abs(h11) + math.Abs(h12) + math.Abs(h21) + math.Abs(h22)
			var rt1r, rt1i, rt2r, rt2i float64
			if s != 0 {
				h11 /= s
				h21 /= s
				h12 /= s
				h22 /= s
				tr := float64((h11 + h22) / 2)
				det := float64((h11-tr)*(h22-tr)) - float64(h12*h21)
				rtdisc := math.Sqrt(math.Abs(det))
				if det >= 0 {
					rt1r = tr * s
					rt2r = rt1r
					rt1i = rtdisc * s
					rt2i = -rt1i
				} else {
					rt1r = tr + rtdisc
					rt2r = tr - rtdisc
					if math.Abs(rt1r-h22) <= math.Abs(rt2r-h22) {
						rt1r *= s
						rt2r = rt1r
					} else {
						rt2r *= s
						rt1r = rt2r
					}
				}
			}
			// Look for two consecutive small subdiagonal elements.
			var m int
			var v [3]float64
			for m = i - 2; m >= l; m-- {
				h21s := h[(m+1)*n+m]
				s := math.Abs(h[m*n+m]-rt2r) + math.Abs(rt2i) + math.Abs(h21s)
				h21s /= s
				v[0] = float64(h21s*h[m*n+m+1]) + float64((h[m*n+m]-rt1r)*((h[m*n+m]-rt2r)/s)) - float64(rt2i/s*rt1i)
				v[1] = h21s * (h[m*n+m] + h[(m+1)*n+m+1] - rt1r - rt2r)
				v[2] = h21s * h[(m+2)*n+m+1]
				s = math.Abs(v[0]) + math.Abs(v[1]) + math.Abs(v[2])
				v[0] /= s
				v[1] /= s
				v[2] /= s
				if m == l {
					break
				}
				dsum := math.Abs(h[(m-1)*n+m-1]) + math.Abs(h[m*n+m]) + math.Abs(h[(m+1)*n+m+1])
				if math.Abs(h[m*n+m-1])*(math.Abs(v[1])+math.Abs(v[2])) <= ulp*math.Abs(v[0])*dsum {
					break
				}
			}
			// Double-shift QR step.
			for k := m; k < i; k++ {
				nr := min(3, i-k+1)
				if k > m {
					for j := 0; j < nr; j++ {
						v[j] = h[(k+j)*n+k-1]
					}
				}
				var t0 float64
				v[0], t0 = dlarfg(nr, v[0], v[1:], 1)
				if k > m {
					h[k*n+k-1] = v[0]
					h[(k+1)*n+k-1] = 0
					if k < i-1 {
						h[(k+2)*n+k-1] = 0
					}
				} else if m > l {
					h[k*n+k-1] *= 1 - t0
				}
				t1 := t0 * v[1]
				if nr == 3 {
					t2 := t0 * v[2]
					for j := k; j <= i2; j++ {
						sum := h[k*n+j] + float64(v[1]*h[(k+1)*n+j]) + float64(v[2]*h[(k+2)*n+j])
						h[k*n+j] -= float64(sum * t0)
						h[(k+1)*n+j] -= float64(sum * t1)
						h[(k+2)*n+j] -= float64(sum * t2)
					}
					for j := i1; j <= min(k+3, i); j++ {
						sum := h[j*n+k] + float64(v[1]*h[j*n+k+1]) + float64(v[2]*h[j*n+k+2])
						h[j*n+k] -= float64(sum * t0)
						h[j*n+k+1] -= float64(sum * t1)
						h[j*n+k+2] -= float64(sum * t2)
					}
				} else if nr == 2 {
					for j := k; j <= i2; j++ {
						sum := h[k*n+j] + float64(v[1]*h[(k+1)*n+j])
						h[k*n+j] -= float64(sum * t0)
						h[(k+1)*n+j] -= float64(sum * t1)
					}
					for j := i1; j <= i; j++ {
						sum := h[j*n+k] + float64(v[1]*h[j*n+k+1])
						h[j*n+k] -= float64(sum * t0)
						h[j*n+k+1] -= float64(sum * t1)
					}
				}
			}
		}
		if !converged {
			return false
		}
		if l == i {
			wr[i], wi[i] = h[i*n+i], 0
		} else if l == i-1 {
			a, b, c, d := dlanv2(h[(i-1)*n+i-1], h[(i-1)*n+i], h[i*n+i-1], h[i*n+i])
			h[(i-1)*n+i-1], h[(i-1)*n+i], h[i*n+i-1], h[i*n+i] = a, b, c, d
			wr[i-1], wr[i] = a, d
			wi[i-1], wi[i] = 0, 0
			if c != 0 {
				wi[i-1] = math.Sqrt(math.Abs(b)) * math.Sqrt(math.Abs(c))
				wi[i] = -wi[i-1]
			}
		}
		kdefl = 0
		i = l - 1
	}
	return true
}

// dlanv2 returns the standardized Schur form (aa, bb; cc, dd) of the real
// 2×2 matrix (a, b; c, d): cc = 0 for real eigenvalues aa and dd, else
// aa = dd and bb·cc < 0 for the pair aa ± √(bb·cc) (Dlanv2, without the
// rotation).
func dlanv2(a, b, c, d float64) (aa, bb, cc, dd float64) {
	switch {
	case c == 0:
		return a, b, 0, d
	case b == 0:
		return d, -c, 0, a
	case a == d && math.Signbit(b) != math.Signbit(c):
		return a, b, c, d
	}
	temp := a - d
	p := float64(temp / 2)
	bcmax := math.Max(math.Abs(b), math.Abs(c))
	bcmis := math.Min(math.Abs(b), math.Abs(c))
	if b*c < 0 {
		bcmis *= -1
	}
	scale := math.Max(math.Abs(p), bcmax)
	z := float64(p/scale*p) + float64(bcmax/scale*bcmis)
	if z >= 4*dlamchP {
		if p > 0 {
			z = p + float64(math.Sqrt(scale)*math.Sqrt(z))
		} else {
			z = p - float64(math.Sqrt(scale)*math.Sqrt(z))
		}
		return d + z, b - c, 0, d - float64(bcmax/z*bcmis)
	}
	const base = 2
	safmn2 := Pow(base, Log(dlamchS/dlamchE)/Log(base)/2)
	safmx2 := 1 / safmn2
	sigma := b + c
	for iter := 0; iter < 20; iter++ {
		scale = math.Max(math.Abs(temp), math.Abs(sigma))
		if scale >= safmx2 {
			sigma *= safmn2
			temp *= safmn2
		} else if scale <= safmn2 {
			sigma *= safmx2
			temp *= safmx2
		} else {
			break
		}
	}
	p = temp / 2
	tau := Abs(complex(sigma, temp))
	cs := math.Sqrt((1 + math.Abs(sigma)/tau) / 2)
	sn := -p / (tau * cs)
	if sigma < 0 {
		sn *= -1
	}
	aa = float64(a*cs) + float64(b*sn)
	bb = float64(-a*sn) + float64(b*cs)
	cc = float64(c*cs) + float64(d*sn)
	dd = float64(-c*sn) + float64(d*cs)
	a = float64(aa*cs) + float64(cc*sn)
	b = float64(bb*cs) + float64(dd*sn)
	c = float64(-aa*sn) + float64(cc*cs)
	d = float64(-bb*sn) + float64(dd*cs)
	temp = float64((a + d) / 2)
	aa, bb, cc, dd = temp, b, c, temp
	if cc != 0 {
		if bb != 0 {
			if math.Signbit(bb) == math.Signbit(cc) {
				sab := math.Sqrt(math.Abs(bb))
				sac := math.Sqrt(math.Abs(cc))
				p = float64(sab * sac)
				if cc < 0 {
					p *= -1
				}
				aa = temp + p
				bb = bb - cc
				cc = 0
				dd = temp - p
			}
		} else {
			bb = -cc
			cc = 0
		}
	}
	return aa, bb, cc, dd
}
