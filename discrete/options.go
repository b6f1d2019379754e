// Package discrete realizes a continuous rate-loop design at the loop rate
// and verifies the sampled loop: controller discretization, derivative
// filter, anti-windup, ZOH plant with compute and transport delay, and the
// numeric realization (float or fixed point).
package discrete

//go:generate sh -c "python3 testdata/gen_pairkernels.py > pairkernels_gen.go && gofmt -w pairkernels_gen.go"

// Loop is the sampling of the rate loop.
type Loop struct {
	Hz float64 // loop rate, samples per second
	// ComputeDelay is d: the command computed from the sample at t_k is
	// applied over [t_(k+d), t_(k+d+1)).
	ComputeDelay int
}

// NumericType names the arithmetic of the generated controller.
type NumericType string

// The numeric types.
const (
	Float32 NumericType = "float32"
	Float64 NumericType = "float64"
	Q15     NumericType = "q15"
	Q31     NumericType = "q31"
)

// IsFixed reports whether the type is a fixed-point type.
func (t NumericType) IsFixed() bool { return t == Q15 || t == Q31 }

// Numeric is the numeric realization of the controller.
type Numeric struct {
	Type NumericType
	// InputFullScale is the largest |setpoint| or |measured rate|, in rate
	// units; OutputFullScale the largest |command|. Both matter for the
	// fixed-point types; for float types they are 0 when not given.
	InputFullScale  float64
	OutputFullScale float64
}
