package lti

import (
	"encoding/binary"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// expmCases passes random square matrices to f: sizes 1 to 12 (the
// augmented plants have up to a dozen states), 1-norms from 1e-3 to 1e3
// so that every Padé degree and the squaring are taken, some entries zero
// (the products skip them) and some matrices lower Hessenberg like a
// plant's companion form. The generator is seeded: the same matrices on
// every CPU.
func expmCases(f func(n int, a []float64)) {
	rng := rand.New(rand.NewPCG(9, 10))
	for i := range 3000 {
		n := 1 + i%12
		a := make([]float64, n*n)
		scale := Pow(10, float64(i%7)-3) / float64(n)
		for k := range a {
			switch {
			case i%5 == 0 && k%n > k/n+1: // Hessenberg
			case rng.IntN(6) == 0:
			default:
				a[k] = (rng.Float64()*2 - 1) * scale
			}
		}
		f(n, a)
	}
}

// expmBits is the FNV-1a hash of the bits of every result of expmCases,
// recorded on amd64, where TestExpm checks each against mat.Exp bit for
// bit.
const expmBits = 0xc88d75ccb93ae55c

// TestExpm: expm equals gonum's mat.Exp bit for bit on amd64 below
// GOAMD64=v3 with FMA for math.Exp (the CPUs whose bits expm reproduces),
// and within 1e-12 of it, relative to the largest entry, everywhere;
// everywhere its results hash to expmBits, recorded on amd64.
func TestExpm(t *testing.T) {
	bitwise := refHost && hostExpFMA()
	h := fnv.New64a()
	expmCases(func(n int, a []float64) {
		got, err := expm(n, a)
		if err != nil {
			t.Fatalf("expm(%d, %v): %v", n, a, err)
		}
		var want mat.Dense
		want.Exp(mat.NewDense(n, n, append([]float64(nil), a...)))
		w := want.RawMatrix().Data
		big := 0.0
		for _, v := range w {
			big = math.Max(big, math.Abs(v))
		}
		for k := range got {
			var b [8]byte
			binary.LittleEndian.PutUint64(b[:], math.Float64bits(got[k]))
			h.Write(b[:])
			if bitwise && math.Float64bits(got[k]) != math.Float64bits(w[k]) {
				t.Fatalf("n = %d: entry %d of expm is %v, mat.Exp %v (a = %v)", n, k, got[k], w[k], a)
			}
			if math.Abs(got[k]-w[k]) > 1e-12*big {
				t.Fatalf("n = %d: entry %d of expm is %v, mat.Exp %v", n, k, got[k], w[k])
			}
		}
	})
	if got := h.Sum64(); got != expmBits {
		t.Errorf("the results hash to %#x, on amd64 to %#x: some bits differ from amd64's", got, uint64(expmBits))
	}
}
