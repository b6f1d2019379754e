package main

import (
	"fmt"
	"io"
	"runtime/debug"
	"strings"

	"locusmith/internal/version"
)

const versionHelp = `Usage: locusmith version

Print the tool version (the one generated code and reports name) and the
build information recorded by the Go toolchain: Go version, module
version, VCS revision and whether the tree was modified.

Examples:
  locusmith version
  locusmith --version`

// runVersion is the version verb.
func runVersion(args []string, stdout, stderr io.Writer) int {
	fs, help := newFlagSet("version")
	if done, code := parseFlags(fs, help, args, versionHelp, stdout, stderr); done {
		return code
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "locusmith version: takes no arguments, got %q\n", strings.Join(fs.Args(), " "))
		return exitUsage
	}
	var b strings.Builder
	fmt.Fprintf(&b, "locusmith %s\n", version.Version)
	if bi, ok := debug.ReadBuildInfo(); ok {
		fmt.Fprintf(&b, "go: %s\n", bi.GoVersion)
		if bi.Main.Path != "" {
			fmt.Fprintf(&b, "module: %s %s\n", bi.Main.Path, bi.Main.Version)
		}
		for _, s := range bi.Settings {
			switch s.Key {
			case "vcs.revision", "vcs.time", "vcs.modified", "GOOS", "GOARCH":
				fmt.Fprintf(&b, "%s: %s\n", s.Key, s.Value)
			}
		}
	}
	io.WriteString(stdout, b.String())
	return exitOK
}
