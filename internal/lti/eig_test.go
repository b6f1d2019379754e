package lti

import (
	"encoding/binary"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// eigCases passes square matrices to f, seeded so that they are the same
// on every CPU: companion matrices of polynomials with random roots (the
// form Poly.Roots factors; real, complex, repeated and widely spread),
// dense random matrices, upper Hessenberg ones, matrices with zero rows
// and columns (Dgebal's permutations) and with rows scaled by up to 1e±8
// (its scaling), of sizes 1 to 24, and a few up to 80 (beyond Dlahqr's 75,
// left to mat.Eigen).
func eigCases(f func(n int, a []float64)) {
	rng := rand.New(rand.NewPCG(11, 12))
	sym := func() float64 { return rng.Float64()*2 - 1 }
	for i := range 4000 {
		n := 1 + i%24
		if i%400 == 399 {
			n = 70 + i%11
		}
		a := make([]float64, n*n)
		switch i % 5 {
		case 0: // companion matrix of Π(s − r)
			var roots []complex128
			for len(roots) < n {
				mag := Pow(10, 3*sym())
				switch {
				case len(roots)+1 < n && rng.IntN(2) == 0:
					r := complex(-mag*rng.Float64(), mag*rng.Float64())
					roots = append(roots, r, complex(real(r), -imag(r)))
				case len(roots) > 0 && rng.IntN(5) == 0:
					roots = append(roots, roots[len(roots)-1]) // a double root
				default:
					roots = append(roots, complex(mag*sym(), 0))
				}
			}
			p, err := FromRoots(roots[:n])
			if err != nil {
				p = Poly{1}
				for range n {
					p = PolyMul(p, Poly{sym(), 1})
				}
			}
			for j := 0; j < n; j++ {
				a[j] = -p[n-1-j] / p[n]
			}
			for r := 1; r < n; r++ {
				a[r*n+r-1] = 1
			}
		case 1, 2: // dense, now and then Hessenberg
			for k := range a {
				if i%5 == 2 && k/n > k%n+1 {
					continue
				}
				a[k] = sym()
			}
		case 3: // zero rows and columns to permute away
			for k := range a {
				if rng.IntN(3) > 0 {
					a[k] = sym()
				}
			}
			z := rng.IntN(n)
			for k := 0; k < n; k++ {
				a[z*n+k] = 0
				if k != z && rng.IntN(2) == 0 {
					a[k*n+(n-1-z)] = 0
				}
			}
			a[z*n+z] = sym()
		case 4: // badly scaled rows and columns
			for k := range a {
				a[k] = sym() * Pow(10, float64(8*(k/n)/n-4)) * Pow(10, float64(4-8*(k%n)/n))
			}
		}
		f(n, a)
	}
}

// eigBits is the FNV-1a hash of every eigenvalue of eigCases, recorded on
// amd64, where TestEigvals checks each against mat.Eigen bit for bit.
const eigBits = 0xf689a949fe7a5bfe

// TestEigvals: eigvals equals gonum's mat.Eigen bit for bit on amd64
// below GOAMD64=v3 (whose kernels it follows; mat.Eigen, numpy.roots'
// method, is the reference outside the project), and on every CPU its
// eigenvalues up to 75 rows hash to eigBits, recorded there, and sum to
// the trace (a property of every square matrix; from memory). Beyond 75
// rows it is mat.Eigen itself.
func TestEigvals(t *testing.T) {
	h := fnv.New64a()
	cases := 0
	eigCases(func(n int, a []float64) {
		cases++
		orig := append([]float64(nil), a...)
		got, err := eigvals(n, a)
		if err != nil {
			t.Fatalf("case %d (n = %d): %v", cases, n, err)
		}
		for k := range a {
			if math.Float64bits(a[k]) != math.Float64bits(orig[k]) {
				t.Fatalf("case %d: eigvals modified its matrix", cases)
			}
		}
		var e mat.Eigen
		if !e.Factorize(mat.NewDense(n, n, append([]float64(nil), a...)), mat.EigenNone) {
			t.Fatalf("case %d: mat.Eigen failed", cases)
		}
		want := e.Values(nil)
		for k := range got {
			if n > 75 || refHost {
				// Beyond 75 rows eigvals is mat.Eigen.
				if !sameBits(got[k], want[k]) {
					t.Fatalf("case %d (n = %d): eigenvalue %d is %v, mat.Eigen %v", cases, n, k, got[k], want[k])
				}
			}
			if n > 75 {
				continue
			}
			for _, p := range []float64{real(got[k]), imag(got[k])} {
				var b [8]byte
				binary.LittleEndian.PutUint64(b[:], math.Float64bits(p))
				h.Write(b[:])
			}
		}
		// The eigenvalues sum to the trace.
		var sum complex128
		var tr, mag float64
		for k := range got {
			sum += got[k]
			mag += Abs(got[k])
		}
		for k := 0; k < n; k++ {
			tr += a[k*n+k]
			mag += math.Abs(a[k*n+k])
		}
		if d := Abs(sum - complex(tr, 0)); !(d <= 1e-10*mag) {
			t.Errorf("case %d (n = %d): the eigenvalues sum to %v, the trace is %v", cases, n, sum, tr)
		}
	})
	if got := h.Sum64(); got != eigBits {
		t.Errorf("the eigenvalues hash to %#x, on amd64 to %#x: some bits differ from amd64's", got, uint64(eigBits))
	}
}
