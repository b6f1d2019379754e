package emit

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"regexp"
	"sort"
	"strings"
)

// The content stamp of a C header and its source file.
//
// The header defines <AIRFRAME>_RATE_STAMP, a 64-bit hexadecimal value:
// the first 16 hexadecimal digits of the SHA-256 of the header and the
// source file (or of the header alone, for the header-only variant), each
// with its stamp value replaced by a placeholder. The source file and the
// vector program include the header and stop the build with #error when
// the macro is missing or has another value: a header and a source of two
// different runs (an interrupted write, a file copied from another build)
// cannot be compiled together. CheckStamps makes the same check on files
// read back from a directory, without a compiler, and also sees a file
// whose content no longer matches its stamp (an edit by hand).

// stampZero is the stamp value the templates render before the stamp is
// known.
const stampZero = "0x0000000000000000"

// stampPlaceholder stands for the stamp value in the text that is hashed.
const stampPlaceholder = "<stamp>"

// stampLine matches a line that carries a stamp value: the header's
// #define and the #if of the source file and of the vector program.
// Group 1 is the macro's name, group 2 the value.
var stampLine = regexp.MustCompile(`(?m)^(?:#define ([A-Z][A-Z0-9_]*_RATE_STAMP) |#if !defined\(([A-Z][A-Z0-9_]*_RATE_STAMP)\) \|\| [A-Z][A-Z0-9_]*_RATE_STAMP != )(0x[0-9a-f]{16})$`)

// stampNormal returns data with every stamp value replaced by the
// placeholder.
func stampNormal(data []byte) []byte {
	return stampLine.ReplaceAllFunc(data, func(l []byte) []byte {
		return append(l[:len(l)-len(stampZero):len(l)-len(stampZero)], stampPlaceholder...)
	})
}

// stampOf is the stamp of a header and its source file (nil for the
// header-only variant).
func stampOf(header, source []byte) string {
	h := sha256.New()
	h.Write(stampNormal(header))
	h.Write([]byte("\x00"))
	h.Write(stampNormal(source))
	return "0x" + hex.EncodeToString(h.Sum(nil))[:16]
}

// stampSet returns data with every stamp value set to v.
func stampSet(data []byte, v string) []byte {
	return stampLine.ReplaceAllFunc(data, func(l []byte) []byte {
		out := append([]byte{}, l[:len(l)-len(stampZero)]...)
		return append(out, v...)
	})
}

// setStamps computes the stamp of the unit's C files (rendered with the
// zero stamp) and writes it into each of them.
func setStamps(u *codeUnit, srcs []Source) {
	var header, source []byte
	for _, s := range srcs {
		switch s.Name {
		case u.Header:
			header = s.Data
		case u.Airframe + "_rate.c":
			source = s.Data
		}
	}
	v := stampOf(header, source)
	u.Stamp = v
	for i := range srcs {
		srcs[i].Data = stampSet(srcs[i].Data, v)
	}
}

// StampError is a generated C file whose content stamp does not agree
// with its header or with its own content.
type StampError struct {
	File   string // base name
	Reason string
}

func (e *StampError) Error() string { return e.File + ": " + e.Reason }

// stampValues returns the macro and the values of the stamp lines of
// data.
func stampValues(data []byte) (macro string, values []string) {
	for _, m := range stampLine.FindAllSubmatch(data, -1) {
		if macro == "" {
			macro = string(m[1]) + string(m[2])
		}
		values = append(values, string(m[3]))
	}
	return macro, values
}

// CheckStamps checks the content stamps of generated C files as read
// from an output directory (base names and contents; other files are
// ignored), for `emit --check`: each header <airframe>_rate.h must carry
// the stamp of its own content and of <airframe>_rate.c when that file is
// present (of the header alone when it is the header-only variant), and
// the source file and the vector program <airframe>_rate_vectors.c must
// name the stamp of the header beside them. It returns one error per file
// that fails, sorted by name; none when every pair is consistent. A file
// from another run than its header, or a file changed by hand since it was
// generated, fails.
func CheckStamps(files []Source) []error {
	byName := map[string][]byte{}
	for _, f := range files {
		byName[f.Name] = f.Data
	}
	var errs []error
	bad := func(name, format string, a ...any) {
		errs = append(errs, &StampError{File: name, Reason: fmt.Sprintf(format, a...)})
	}
	for name, data := range byName {
		var base string
		switch {
		case strings.HasSuffix(name, "_rate.h"):
			base = strings.TrimSuffix(name, "_rate.h")
		case strings.HasSuffix(name, "_rate.c"):
			base = strings.TrimSuffix(name, "_rate.c")
		case strings.HasSuffix(name, "_rate_vectors.c"):
			base = strings.TrimSuffix(name, "_rate_vectors.c")
		default:
			continue
		}
		hname, cname := base+"_rate.h", base+"_rate.c"
		_, vals := stampValues(data)
		if len(vals) != 1 {
			bad(name, "no content stamp (%d stamp lines): not a file of this version of locusmith, or edited by hand", len(vals))
			continue
		}
		header, ok := byName[hname]
		if !ok {
			if name != hname {
				bad(name, "its header %s is missing", hname)
			}
			continue
		}
		_, hv := stampValues(header)
		if len(hv) != 1 {
			if name != hname {
				bad(name, "its header %s has no content stamp", hname)
			}
			continue
		}
		switch name {
		case hname:
			source, pair := byName[cname]
			if pair && stampOf(header, source) == hv[0] {
				continue
			}
			if stampOf(header, nil) == hv[0] {
				continue // header-only; a source file beside it is reported on its own
			}
			if pair {
				bad(name, "content stamp %s is not that of %s and %s: a file was changed after it was generated, or the two come from different runs", hv[0], hname, cname)
			} else {
				bad(name, "content stamp %s is not that of its content: changed after it was generated, or its %s is missing", hv[0], cname)
			}
		default:
			if vals[0] != hv[0] {
				bad(name, "written for the header of stamp %s, but %s has %s: the files come from different runs of locusmith; generate them again", vals[0], hname, hv[0])
			}
		}
	}
	sort.Slice(errs, func(i, j int) bool { return errs[i].(*StampError).File < errs[j].(*StampError).File })
	return errs
}
