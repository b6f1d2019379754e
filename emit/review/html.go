package review

import (
	"bytes"
	"errors"
	"fmt"
	"html"
	"strings"
)

// HTML turns a report (the files of Build: the Markdown page first, then
// its SVG plots) into one self-contained page, AIRFRAME.html: the same
// text and tables, every plot inlined as SVG, a style sheet in the page,
// no script and nothing fetched from anywhere. It is the one file a
// reviewer signs.
//
// The Markdown is the report's own (templates/report.md.tmpl), so the
// converter handles what that template writes and nothing more: headings,
// paragraphs, block quotes, lists with indented continuation lines,
// tables, rules, images alone on a line, and inline code, strong and
// emphasis with backslash escapes; a construct it does not know stays
// text, escaped.
func HTML(files []File) (File, error) {
	if len(files) == 0 || !strings.HasSuffix(files[0].Name, ".md") {
		return File{}, errors.New("review: no report page to convert")
	}
	svgs := map[string][]byte{}
	for _, f := range files[1:] {
		if strings.HasSuffix(f.Name, ".svg") {
			svgs[f.Name] = f.Data
		}
	}
	name := strings.TrimSuffix(files[0].Name, ".md")
	c := &mdConv{svgs: svgs, used: map[string]bool{}}
	body := c.blocks(strings.Split(string(files[0].Data), "\n"))
	for n := range svgs {
		if !c.used[n] {
			return File{}, fmt.Errorf("review: plot %s is not linked from the page", n)
		}
	}
	if c.err != nil {
		return File{}, c.err
	}
	var b bytes.Buffer
	b.WriteString("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
	fmt.Fprintf(&b, "<title>Design review: %s</title>\n", html.EscapeString(name))
	b.WriteString("<style>\n" + pageStyle + "</style>\n</head>\n<body>\n")
	b.WriteString(body)
	b.WriteString("</body>\n</html>\n")
	return File{Name: name + ".html", Data: b.Bytes()}, nil
}

// pageStyle is the page's only styling: readable widths, ruled tables,
// figures that scale with the window.
const pageStyle = `body { font-family: "Liberation Sans", Arial, Helvetica, sans-serif; max-width: 60em; margin: 2em auto; padding: 0 1em; line-height: 1.4; color: #111; }
h1, h2, h3 { line-height: 1.2; }
h2 { border-bottom: 1px solid #999; padding-bottom: 0.2em; margin-top: 2em; }
table { border-collapse: collapse; margin: 0.8em 0; font-size: 0.9em; }
th, td { border: 1px solid #bbb; padding: 0.2em 0.5em; text-align: left; vertical-align: top; }
th { background: #eee; }
code { font-family: "Liberation Mono", monospace; font-size: 0.95em; }
blockquote { margin: 1em 0; padding: 0 1em; border-left: 4px solid #bbb; color: #333; }
figure { margin: 1em 0; }
figure svg { max-width: 100%; height: auto; }
hr { border: 0; border-top: 1px solid #999; margin: 2em 0; }
`

// mdConv converts the report's Markdown.
type mdConv struct {
	svgs map[string][]byte
	used map[string]bool
	err  error
}

// blocks converts a sequence of lines.
func (c *mdConv) blocks(lines []string) string {
	var b strings.Builder
	for i := 0; i < len(lines); {
		line := lines[i]
		switch {
		case strings.TrimSpace(line) == "":
			i++
		case line == "---":
			b.WriteString("<hr>\n")
			i++
		case strings.HasPrefix(line, "#"):
			n := len(line) - len(strings.TrimLeft(line, "#"))
			if n > 6 || !strings.HasPrefix(line[n:], " ") {
				i = c.paragraph(&b, lines, i)
				continue
			}
			fmt.Fprintf(&b, "<h%d>%s</h%d>\n", n, c.inline(strings.TrimSpace(line[n:])), n)
			i++
		case strings.HasPrefix(line, "> "):
			var q []string
			for ; i < len(lines) && strings.HasPrefix(lines[i], "> "); i++ {
				q = append(q, lines[i][2:])
			}
			b.WriteString("<blockquote>\n" + c.blocks(q) + "</blockquote>\n")
		case strings.HasPrefix(line, "|"):
			i = c.table(&b, lines, i)
		case strings.HasPrefix(line, "- "):
			b.WriteString("<ul>\n")
			for i < len(lines) && strings.HasPrefix(lines[i], "- ") {
				item := []string{lines[i][2:]}
				for i++; i < len(lines) && strings.HasPrefix(lines[i], "  ") && strings.TrimSpace(lines[i]) != ""; i++ {
					item = append(item, strings.TrimSpace(lines[i]))
				}
				b.WriteString("<li>" + c.inline(strings.Join(item, "\n")) + "</li>\n")
			}
			b.WriteString("</ul>\n")
		default:
			i = c.paragraph(&b, lines, i)
		}
	}
	return b.String()
}

// paragraph converts the lines from i to the next blank line or block
// start; an image alone in it becomes a figure.
func (c *mdConv) paragraph(b *strings.Builder, lines []string, i int) int {
	var p []string
	for ; i < len(lines); i++ {
		l := lines[i]
		if strings.TrimSpace(l) == "" || len(p) > 0 && (strings.HasPrefix(l, "|") || strings.HasPrefix(l, "- ") || strings.HasPrefix(l, "> ") || l == "---" || strings.HasPrefix(l, "# ") || strings.HasPrefix(l, "## ") || strings.HasPrefix(l, "### ")) {
			break
		}
		p = append(p, l)
	}
	text := strings.Join(p, "\n")
	if alt, src, ok := imageLine(text); ok {
		b.WriteString(c.figure(alt, src))
		return i
	}
	b.WriteString("<p>" + c.inline(text) + "</p>\n")
	return i
}

// imageLine reports whether s is one image, ![alt](src), and returns its
// parts (alt still in Markdown).
func imageLine(s string) (alt, src string, ok bool) {
	if !strings.HasPrefix(s, "![") || !strings.HasSuffix(s, ")") || strings.Contains(s, "\n") {
		return "", "", false
	}
	mid := strings.LastIndex(s, "](")
	if mid < 0 {
		return "", "", false
	}
	return s[2:mid], s[mid+2 : len(s)-1], true
}

// figure inlines the SVG named src, labelled by alt.
func (c *mdConv) figure(alt, src string) string {
	data, ok := c.svgs[src]
	if !ok {
		if c.err == nil {
			c.err = fmt.Errorf("review: the page links %s, which the report does not have", src)
		}
		return "<p>" + c.inline(alt) + "</p>\n"
	}
	c.used[src] = true
	svg := string(data)
	// The XML declaration and comments before the root element have no
	// place inside an HTML page.
	if k := strings.Index(svg, "<svg"); k >= 0 {
		svg = svg[k:]
	}
	label := html.EscapeString(plain(alt))
	svg = strings.Replace(svg, "<svg", `<svg role="img" aria-label="`+label+`"`, 1)
	return "<figure data-plot=\"" + html.EscapeString(src) + "\">\n" + strings.TrimSpace(svg) + "\n</figure>\n"
}

// plain is Markdown text without its escapes, for an attribute.
func plain(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		if s[i] == '\\' && i+1 < len(s) && isPunct(s[i+1]) {
			i++
		}
		b.WriteByte(s[i])
	}
	return b.String()
}

// table converts a table: a header row, the delimiter row, body rows.
func (c *mdConv) table(b *strings.Builder, lines []string, i int) int {
	var rows [][]string
	for ; i < len(lines) && strings.HasPrefix(lines[i], "|"); i++ {
		rows = append(rows, cells(lines[i]))
	}
	b.WriteString("<table>\n")
	for r, cs := range rows {
		if r == 1 && isDelimiterRow(cs) {
			continue
		}
		tag := "td"
		if r == 0 {
			tag = "th"
		}
		b.WriteString("<tr>")
		for _, cell := range cs {
			fmt.Fprintf(b, "<%s>%s</%s>", tag, c.inline(cell), tag)
		}
		b.WriteString("</tr>\n")
	}
	b.WriteString("</table>\n")
	return i
}

// cells splits a table row at its unescaped pipes.
func cells(line string) []string {
	line = strings.TrimSpace(line)
	line = strings.TrimPrefix(line, "|")
	var out []string
	var cur strings.Builder
	for i := 0; i < len(line); i++ {
		switch {
		case line[i] == '\\' && i+1 < len(line):
			cur.WriteByte(line[i])
			cur.WriteByte(line[i+1])
			i++
		case line[i] == '|':
			out = append(out, strings.TrimSpace(cur.String()))
			cur.Reset()
		default:
			cur.WriteByte(line[i])
		}
	}
	if rest := strings.TrimSpace(cur.String()); rest != "" {
		out = append(out, rest)
	}
	return out
}

func isDelimiterRow(cs []string) bool {
	for _, c := range cs {
		if strings.Trim(c, "-:") != "" || c == "" {
			return false
		}
	}
	return len(cs) > 0
}

// isPunct reports whether b is ASCII punctuation, which a backslash
// escapes (CommonMark).
func isPunct(b byte) bool {
	return b >= '!' && b <= '/' || b >= ':' && b <= '@' || b >= '[' && b <= '`' || b >= '{' && b <= '~'
}

// inline converts the inline Markdown of s: backslash escapes, code
// spans, strong and emphasis; everything else is escaped text. Line
// breaks inside a paragraph stay as breaks of the source.
func (c *mdConv) inline(s string) string {
	var b strings.Builder
	var open []string // the open delimiters, "**" or "*"
	for i := 0; i < len(s); {
		ch := s[i]
		switch {
		case ch == '\\' && i+1 < len(s) && isPunct(s[i+1]):
			b.WriteString(html.EscapeString(s[i+1 : i+2]))
			i += 2
		case ch == '`':
			n := len(s[i:]) - len(strings.TrimLeft(s[i:], "`"))
			fence := s[i : i+n]
			end := closingFence(s, i+n, fence)
			if end < 0 {
				b.WriteString(html.EscapeString(fence))
				i += n
				continue
			}
			code := s[i+n : end]
			if len(code) >= 2 && code[0] == ' ' && code[len(code)-1] == ' ' && strings.Trim(code, " ") != "" {
				code = code[1 : len(code)-1]
			}
			// In a table cell a pipe in code is written \| (GFM).
			code = strings.ReplaceAll(code, "\\|", "|")
			b.WriteString("<code>" + html.EscapeString(code) + "</code>")
			i = end + n
		case ch == '*':
			d := "*"
			if strings.HasPrefix(s[i:], "**") {
				d = "**"
			}
			tag := map[string]string{"*": "em", "**": "strong"}[d]
			if k := len(open) - 1; k >= 0 && open[k] == d {
				b.WriteString("</" + tag + ">")
				open = open[:k]
			} else if strings.Contains(s[i+len(d):], d) {
				b.WriteString("<" + tag + ">")
				open = append(open, d)
			} else {
				b.WriteString(html.EscapeString(d))
			}
			i += len(d)
		default:
			j := i + 1
			for j < len(s) && s[j] != '\\' && s[j] != '`' && s[j] != '*' {
				j++
			}
			b.WriteString(html.EscapeString(s[i:j]))
			i = j
		}
	}
	for k := len(open) - 1; k >= 0; k-- {
		b.WriteString("</" + map[string]string{"*": "em", "**": "strong"}[open[k]] + ">")
	}
	return b.String()
}

// closingFence returns the index of the backtick run of exactly the
// fence's length at or after from, or −1.
func closingFence(s string, from int, fence string) int {
	for i := from; i < len(s); {
		if s[i] != '`' {
			i++
			continue
		}
		j := i
		for j < len(s) && s[j] == '`' {
			j++
		}
		if j-i == len(fence) {
			return i
		}
		i = j
	}
	return -1
}
