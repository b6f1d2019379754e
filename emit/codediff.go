package emit

import (
	"fmt"
	"strings"
)

// unifiedDiff returns a unified diff (the format of diff -u: "---"/"+++"
// headers, "@@ -l,n +l,n @@" hunks, context lines with ' ', removed '-',
// added '+') from a to b with ctx lines of context, cut after maxLines
// lines of hunks with a note of how many were left out. Equal texts give
// "".
//
// The edit script is a longest common subsequence of the lines, by the
// textbook dynamic program on what is left once the common head and tail
// are trimmed; when that middle is too large for it (more than
// diffCells line pairs), the middle is shown as replaced whole, which is
// still a correct diff, only not the shortest.
func unifiedDiff(aName, bName, a, b string, ctx, maxLines int) string {
	if a == b {
		return ""
	}
	al, bl := splitLines(a), splitLines(b)
	ops := diffOps(al, bl)
	var out strings.Builder
	fmt.Fprintf(&out, "--- %s\n+++ %s\n", aName, bName)
	lines, cut := 0, 0
	emit := func(s string) {
		if lines < maxLines {
			out.WriteString(s)
			lines++
		} else {
			cut++
		}
	}
	// Group the changes into hunks: a hunk starts ctx lines before a
	// change and goes on while the next change is at most 2·ctx equal
	// lines away, then ends ctx lines after the last.
	i := 0
	for i < len(ops) {
		if ops[i].kind == ' ' {
			i++
			continue
		}
		start := max(i-ctx, 0)
		last := i // the last change of the hunk
		for k := i + 1; k < len(ops) && k-last <= 2*ctx+1; k++ {
			if ops[k].kind != ' ' {
				last = k
			}
		}
		stop := min(last+1+ctx, len(ops))
		aStart, bStart := ops[start].ai, ops[start].bi
		na, nb := 0, 0
		for _, o := range ops[start:stop] {
			if o.kind != '+' {
				na++
			}
			if o.kind != '-' {
				nb++
			}
		}
		emit(fmt.Sprintf("@@ -%s +%s @@\n", hunkRange(aStart, na), hunkRange(bStart, nb)))
		for _, o := range ops[start:stop] {
			emit(string(o.kind) + o.text + "\n")
		}
		i = stop
	}
	if cut > 0 {
		fmt.Fprintf(&out, "... (%d more diff lines)\n", cut)
	}
	return out.String()
}

// hunkRange formats the "l,n" of a hunk header (1-based; diff writes the
// line before an empty range).
func hunkRange(start, n int) string {
	if n == 0 {
		return fmt.Sprintf("%d,0", start)
	}
	if n == 1 {
		return fmt.Sprintf("%d", start+1)
	}
	return fmt.Sprintf("%d,%d", start+1, n)
}

// splitLines splits s into lines without their newlines; a missing final
// newline is marked as diff marks it.
func splitLines(s string) []string {
	if s == "" {
		return nil
	}
	ls := strings.Split(s, "\n")
	if ls[len(ls)-1] == "" {
		return ls[:len(ls)-1]
	}
	ls[len(ls)-1] += "\n\\ No newline at end of file"
	return ls
}

// diffOp is one line of the edit script: kind ' ', '-' or '+', the text,
// and the 0-based line numbers in a and b where it stands.
type diffOp struct {
	kind   byte
	text   string
	ai, bi int
}

// diffCells bounds the dynamic program (line pairs of the middle).
const diffCells = 4 << 20

func diffOps(a, b []string) []diffOp {
	var ops []diffOp
	p := 0
	for p < len(a) && p < len(b) && a[p] == b[p] {
		ops = append(ops, diffOp{' ', a[p], p, p})
		p++
	}
	s := 0
	for s < len(a)-p && s < len(b)-p && a[len(a)-1-s] == b[len(b)-1-s] {
		s++
	}
	am, bm := a[p:len(a)-s], b[p:len(b)-s]
	n, m := len(am), len(bm)
	if n*m > diffCells {
		for i, t := range am {
			ops = append(ops, diffOp{'-', t, p + i, p})
		}
		for j, t := range bm {
			ops = append(ops, diffOp{'+', t, p + n, p + j})
		}
	} else {
		// l[i][j] is the LCS length of am[i:] and bm[j:].
		l := make([]int32, (n+1)*(m+1))
		at := func(i, j int) int32 { return l[i*(m+1)+j] }
		for i := n - 1; i >= 0; i-- {
			for j := m - 1; j >= 0; j-- {
				v := max(at(i+1, j), at(i, j+1))
				if am[i] == bm[j] {
					v = at(i+1, j+1) + 1
				}
				l[i*(m+1)+j] = v
			}
		}
		i, j := 0, 0
		for i < n || j < m {
			switch {
			case i < n && j < m && am[i] == bm[j]:
				ops = append(ops, diffOp{' ', am[i], p + i, p + j})
				i++
				j++
			case i < n && (j == m || at(i+1, j) >= at(i, j+1)):
				ops = append(ops, diffOp{'-', am[i], p + i, p + j})
				i++
			default:
				ops = append(ops, diffOp{'+', bm[j], p + i, p + j})
				j++
			}
		}
	}
	for k := 0; k < s; k++ {
		ia, ib := len(a)-s+k, len(b)-s+k
		ops = append(ops, diffOp{' ', a[ia], ia, ib})
	}
	return ops
}
