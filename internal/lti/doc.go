// Package lti is the shared linear-time-invariant math of locusmith: real
// polynomials and their roots, SISO transfer functions in polynomial (TF) and
// zero-pole-gain (ZPK) form, continuous state space (SS), exact zero-order-hold
// discretisation with and without a fractional input transport delay (Disc),
// step-response metrics and loop stability margins.
//
// Everything is float64 and SISO. The package imports nothing of the project
// (only the standard library and gonum). Degenerate input (empty polynomials,
// NaN/Inf coefficients, zero periods) never panics: functions that can fail
// return an error, the others return NaN.
//
// Every result has the same bits on every CPU, so that the designs built on
// them print the same on amd64 and arm64: no product is fused with a sum
// into a multiply-add, and complex products and quotients, the elementary
// functions, the matrix exponential and the eigenvalues are the package's
// own (portable.go, expm.go, eig.go), with the bits the standard library
// and gonum give on amd64. Packages computing figures use them too.
//
// Conventions
//
//   - Poly holds ascending powers: p[i] multiplies s^i.
//   - Root lists are always in the SortRoots order: descending real part, then
//     descending imaginary part, with conjugate pairs made exactly conjugate.
//   - SS and Disc store A row-major (A[i*N+j]), B as a column and C as a row.
//   - A Disc advances x[k+1] = A x[k] + B u[k], y[k] = C x[k] + D u[k].
//   - Phase margin is 180° + ∠L wrapped into (−180°, 180°]; gain margin is
//     −20·log10|L| at a crossing of ∠L through −180° + k·360° (any k). When
//     there are several crossovers the one with the smallest |margin| is
//     reported (ties: the lowest frequency), see LoopMargins.
package lti
