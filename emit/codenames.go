package emit

import (
	"fmt"
	"sort"
	"strings"

	"locusmith/airframe"
)

// Names of the generated code.
//
// The airframe and axis names come from the airframe file, where they are
// checked by airframe.CheckName. emit checks them again by the same rule
// set (the designs may not come from a parsed file), and checks the
// identifiers it builds from them against the same table of reserved
// words (airframe.Reserved): a reserved word anywhere, two generated names that coincide
// within an airframe, and (across the airframes of one call, which a
// firmware may link together) a C name of one airframe that is also a name
// of another (airframe "x" with axis "y_roll" against airframe "x_y" with
// axis "roll").

// NameError is a name that cannot be used in generated code.
type NameError struct {
	Airframe string
	Name     string
	Reason   string
}

func (e *NameError) Error() string {
	return fmt.Sprintf("airframe %s: name %q: %s", e.Airframe, e.Name, e.Reason)
}

// maxIdent is the longest generated identifier: C99 5.2.4.1 guarantees
// 63 significant initial characters in an internal identifier or a macro
// name; a longer name could coincide with another in a compiler that
// keeps only those. (External names have a lower guaranteed limit, 31,
// which every compiler in use exceeds; 63 is the common practical bound.)
const maxIdent = 63

// codeReservedPrefix says whether C reserves the external name w for the
// library's future directions (C99 7.26): names beginning with "is" or
// "to" and a lower-case letter (<ctype.h>, <wctype.h>), or with "str",
// "mem" or "wcs" and a lower-case letter (<stdlib.h>, <string.h>,
// <wchar.h>). No compiler rejects them and no library declares such a name
// with a suffix like _step, so this is a warning, not an error.
func codeReservedPrefix(w string) string {
	for _, p := range []string{"is", "to", "str", "mem", "wcs"} {
		if strings.HasPrefix(w, p) && len(w) > len(p) && 'a' <= w[len(p)] && w[len(p)] <= 'z' {
			return fmt.Sprintf("C reserves external names beginning with %q and a lower-case letter for future library use (C99 7.26)", p)
		}
	}
	return ""
}

// checkNames checks the airframe and axis names and the generated
// identifiers of one airframe. It returns warnings (reserved prefixes) and
// the first error.
func checkNames(u *codeUnit) (warnings []string, err error) {
	bad := func(name, why string) error { return &NameError{Airframe: u.Airframe, Name: name, Reason: why} }
	if why := airframe.CheckName(u.Airframe); why != "" {
		return nil, bad(u.Airframe, why)
	}
	for _, x := range u.Axes {
		if why := airframe.CheckName(x.Name); why != "" {
			return nil, bad(x.Name, "axis name "+why)
		}
	}
	seen := map[string]bool{}
	for _, id := range u.idents() {
		if len(id) > maxIdent {
			return nil, bad(id, fmt.Sprintf("generated identifier is %d characters long; C99 guarantees only %d significant characters in an identifier (5.2.4.1), so a compiler may take it for another: shorten the airframe or axis name", len(id), maxIdent))
		}
		if why := airframe.Reserved(id); why != "" {
			return nil, bad(id, "generated identifier is "+why)
		}
		if seen[id] {
			return nil, bad(id, "two generated identifiers coincide; rename an axis")
		}
		seen[id] = true
	}
	if u.Lang == LangC && !u.HeaderOnly {
		if why := codeReservedPrefix(u.Airframe); why != "" {
			warnings = append(warnings, fmt.Sprintf("airframe %s: %s; the generated functions %s_*_step and so on are such names", u.Airframe, why, u.Airframe))
		}
	}
	return warnings, nil
}

// claimNames records the C identifiers of unit u in owner (identifier →
// airframe), failing when another airframe of the call already declared
// one of them: a firmware linking both would not build. Go units declare
// package-scoped names, which cannot clash across packages.
func claimNames(owner map[string]string, u *codeUnit) error {
	if u.Lang != LangC {
		return nil
	}
	ids := u.idents()
	for _, id := range ids {
		if o, ok := owner[id]; ok && o != u.Airframe {
			return &NameError{Airframe: u.Airframe, Name: id, Reason: fmt.Sprintf("airframe %s generates the same C name; a firmware linking both would not build", o)}
		}
	}
	for _, id := range ids {
		owner[id] = u.Airframe
	}
	return nil
}

// idents lists the identifiers the unit declares at file scope.
func (u *codeUnit) idents() []string {
	var ids []string
	if u.Lang == LangGo {
		ids = append(ids, u.GoPackage, u.Clamp)
		if u.Fixed {
			ids = append(ids, u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl)
		}
		for _, x := range u.Axes {
			ids = append(ids, x.GoType)
			for _, c := range x.Consts {
				ids = append(ids, c.Name)
			}
		}
		return ids
	}
	ids = append(ids, u.Guard, u.Clamp, u.StampMacro)
	if u.Fixed {
		ids = append(ids, u.Rsh, u.Mul, u.MulW, u.SatAdd, u.SatShl, u.Airframe+"_arithmetic_shift_check")
	} else if u.HeaderOnly {
		ids = append(ids, u.NoContract)
	}
	if u.Vectors {
		ids = append(ids, u.Airframe+"_vector", u.QemuSys, u.QemuHeap, u.QemuHeap+"_unused")
		if !u.Fixed {
			ids = append(ids, u.Airframe+"_bits")
		}
	}
	for _, x := range u.Axes {
		ids = append(ids, x.Prefix+"_state", x.Prefix+"_reset", x.Prefix+"_step", x.Prefix+"_applied")
		if u.Vectors {
			ids = append(ids, x.VectorsName, x.VectorsName+"_run")
		}
		for _, c := range x.Consts {
			ids = append(ids, c.Name)
		}
	}
	sort.Strings(ids)
	return ids
}
