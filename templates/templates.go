// Package templates holds the text/template sources from which locusmith
// renders generated controller code (code_*.tmpl) and reports. They are
// embedded in the binary, so the output depends on nothing outside it.
//
// The templates are where a reviewer looks first: they hold the structure
// of every generated file and the arithmetic of every controller, while
// the emit package only fills in names, constants and escaped text.
package templates

import "embed"

// FS holds every *.tmpl file of this directory.
//
//go:embed *.tmpl
var FS embed.FS
