// Package golden holds the golden-file tests of the generated code: every
// example airframe × language × variant is generated and compared byte for
// byte with the files under testdata/, and the generated code is compiled
// and run: host C compilers with strict warnings, the ARM cross compiler
// (with its symbol table checked for helper calls, and the vector programs
// run under qemu-arm), the Go toolchain, the CLI built for arm64 and run
// under qemu-aarch64 for cross-architecture determinism, and a closed loop
// against a plant sampled by SciPy.
//
// `go test ./golden -update` rewrites the golden files. Tests that need a
// tool that is not installed skip and say which package provides it;
// .ci/run installs them all.
package golden
