// Package examples holds the demo airframes: invented vehicles (each file
// says so in its header and description), for the README's commands, the
// tests and the benchmarks.
package examples

import "embed"

// FS holds every *.toml file of this directory.
//
//go:embed *.toml
var FS embed.FS
