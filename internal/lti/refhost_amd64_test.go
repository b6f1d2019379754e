//go:build !amd64.v3

package lti

// refHost is true where the standard library and Go's complex operators
// compute what the portable functions compute: amd64 below GOAMD64=v3,
// which never fuses a multiply-add (math.Exp aside: see hostExpFMA).
const refHost = true
