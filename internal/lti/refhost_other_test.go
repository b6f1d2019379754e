//go:build !amd64 || amd64.v3

package lti

// refHost is false where Go code may be compiled with fused multiply-adds
// (arm64, amd64 at GOAMD64=v3 and others) or the math package is other
// assembly: there the portable functions are compared with math/big and
// with the bits recorded on amd64.
const refHost = false
