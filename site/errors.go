package site

import (
	"fmt"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// Error is one problem in a site file, with its position.
type Error struct {
	File      string
	Line, Col int
	Msg       string
}

func (e Error) Error() string {
	return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Col, e.Msg)
}

// ErrorList is every problem found in a file, sorted by line and column.
// Parse returns it (as error) when the file has any problem.
type ErrorList []Error

func (l ErrorList) Error() string {
	parts := make([]string, len(l))
	for i, e := range l {
		parts[i] = e.Error()
	}
	return strings.Join(parts, "\n")
}

// errs collects errors while a file is decoded.
type errs struct {
	file string
	list ErrorList
	seen map[Error]bool
	n    int // errors reported, duplicates included
}

// dedupeKey drops the leading subject ("terminal VAV-1-03 coil: ...") so a
// mistake inside a template, reported once for the template, is not
// reported again for each terminal that uses it.
func dedupeKey(line, col int, msg string) Error {
	if _, tail, ok := strings.Cut(msg, ": "); ok {
		msg = tail
	}
	return Error{Line: line, Col: col, Msg: msg}
}

func newErrs(file string) *errs { return &errs{file: file, seen: map[Error]bool{}} }

// at records an error at node n (line/col 1 when n is nil). Identical errors
// are kept once: a bad value in a template is reported once, not once per
// terminal that uses it.
func (e *errs) at(n *yaml.Node, format string, args ...any) {
	line, col := 1, 1
	if n != nil && n.Line > 0 {
		line, col = n.Line, n.Column
	}
	e.atPos(line, col, fmt.Sprintf(format, args...))
}

func (e *errs) atPos(line, col int, msg string) {
	e.n++
	k := dedupeKey(line, col, msg)
	if e.seen[k] {
		return
	}
	e.seen[k] = true
	e.list = append(e.list, Error{File: e.file, Line: line, Col: col, Msg: msg})
}

func (e *errs) err() error {
	if len(e.list) == 0 {
		return nil
	}
	l := append(ErrorList(nil), e.list...)
	sort.SliceStable(l, func(i, j int) bool {
		if l[i].Line != l[j].Line {
			return l[i].Line < l[j].Line
		}
		if l[i].Col != l[j].Col {
			return l[i].Col < l[j].Col
		}
		return l[i].Msg < l[j].Msg
	})
	return l
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// syntax turns a yaml.v3 syntax error into an Error. yaml.v3 reports a line
// but no column, so the column is that of the line's first non-blank
// character.
func (e *errs) syntax(err error, data []byte) {
	msg := err.Error()
	line := 1
	if m := yamlLine.FindStringSubmatch(msg); m != nil {
		line, _ = strconv.Atoi(m[1])
		msg = m[2]
	} else {
		msg = strings.TrimPrefix(msg, "yaml: ")
	}
	lines := strings.Split(string(data), "\n")
	col := 1
	if strings.Contains(msg, "tab") {
		// yaml.v3 may name the line before the tab; point at the tab.
		for l := max(line, 1); l <= len(lines) && l <= line+2; l++ {
			if i := strings.IndexByte(lines[l-1], '\t'); i >= 0 {
				line = l
				break
			}
		}
	}
	if line >= 1 && line <= len(lines) {
		text := lines[line-1]
		col = len(text) - len(strings.TrimLeft(text, " ")) + 1
		if strings.Contains(text, "\t") || strings.Contains(msg, "tab") {
			msg += " (YAML indentation must use spaces, not tabs)"
		}
	}
	if strings.Contains(msg, "cannot start any token") {
		msg += `; quote values that begin with '%', '@' or '` + "`" + `' (e.g. unit: "%")`
	}
	e.atPos(line, col, "YAML syntax: "+msg)
}

// Closest returns the candidate nearest to s (Levenshtein edit distance at
// most 2), or "": the "did you mean" of every configuration error message.
func Closest(s string, candidates []string) string {
	best, bestD := "", 3
	for _, c := range candidates {
		if d := editDistance(s, c); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

func editDistance(a, b string) int {
	if len(a) > 64 || len(b) > 64 {
		return 99
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}
