//go:build !amd64.v3

package discrete

// rounded returns the product x of the unrolled kernels (pairkernels_gen.go)
// as it is: below GOAMD64=v3 the compiler never fuses a multiply-add on
// amd64 (the CPUs have no such instruction), and there the conversion
// float64(x) would only cost the kernels registers: spilled to the stack,
// a fifth of their time for the larger plants.
func rounded(x float64) float64 { return x }
