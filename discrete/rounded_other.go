//go:build !amd64 || amd64.v3

package discrete

// rounded returns the product x of the unrolled kernels (pairkernels_gen.go)
// rounded to float64: the explicit conversion forbids the compiler to fuse
// it with the sum it enters into one multiply-add (The Go Programming
// Language Specification, "Floating-point operators"), which it does on
// arm64 and on amd64 from GOAMD64=v3, so the kernels give the same bits
// on every CPU.
func rounded(x float64) float64 { return float64(x) }
