// Package version holds the tool version, the one place it is written.
//
// The CLI prints it, the JSON report carries it and generated code names
// it in its first line, so a change of version changes all three
// together; and since generated code is a pure function of the airframe
// file and the tool version, a design change that changes generated code
// comes with a new version.
package version

// Version is the tool version.
const Version = "0.1.0"
