package metrics

import (
	"fmt"
	"sort"
	"strings"
	"unicode/utf8"
)

// Pos is a position in a source file. Line and Column are 1-based; Column
// counts characters (runes), Byte is the 0-based byte offset.
type Pos struct {
	Line, Column, Byte int
}

// Range is a half-open span [Start, End) of a file.
type Range struct {
	File       string
	Start, End Pos
}

// String returns "file:line:col".
func (r Range) String() string {
	if r.Start.Line == 0 {
		return r.File
	}
	return fmt.Sprintf("%s:%d:%d", r.File, r.Start.Line, r.Start.Column)
}

// Severity says whether a diagnostic stops compilation.
type Severity int

// Severities.
const (
	Error Severity = iota
	Warning
	// Note records how assay read something the spec left implicit, such
	// as weights it normalised; it needs no action.
	Note
)

func (s Severity) String() string {
	switch s {
	case Warning:
		return "warning"
	case Note:
		return "note"
	}
	return "error"
}

// Diagnostic is one problem found in a spec, located at Subject.
type Diagnostic struct {
	Severity Severity
	Code     string // stable code, see codes.go
	Summary  string
	Hint     string
	Subject  Range
}

// Diagnostics is a list of problems; it implements error.
type Diagnostics []Diagnostic

// HasErrors reports whether any diagnostic is an error.
func (ds Diagnostics) HasErrors() bool {
	for _, d := range ds {
		if d.Severity == Error {
			return true
		}
	}
	return false
}

// Sort orders diagnostics by file position, then code, then summary, so
// output is stable.
func (ds Diagnostics) Sort() {
	sort.SliceStable(ds, func(i, j int) bool {
		a, b := ds[i].Subject, ds[j].Subject
		if a.File != b.File {
			return a.File < b.File
		}
		if a.Start.Byte != b.Start.Byte {
			return a.Start.Byte < b.Start.Byte
		}
		if ds[i].Code != ds[j].Code {
			return ds[i].Code < ds[j].Code
		}
		return ds[i].Summary < ds[j].Summary
	})
}

// Err returns nil when there are no errors, and ds otherwise.
func (ds Diagnostics) Err() error {
	if !ds.HasErrors() {
		return nil
	}
	return ds
}

func (ds Diagnostics) Error() string {
	var b strings.Builder
	for i, d := range ds {
		if i > 0 {
			b.WriteByte('\n')
		}
		b.WriteString(d.Short())
	}
	return b.String()
}

// Short renders the one-line form "file:line:col: message".
func (d Diagnostic) Short() string {
	s := fmt.Sprintf("%s: %s", d.Subject, d.Summary)
	if d.Severity == Warning || d.Severity == Note {
		s = fmt.Sprintf("%s: %s: %s", d.Subject, d.Severity, d.Summary)
	}
	if d.Code != "" {
		s += " [" + d.Code + "]"
	}
	return s
}

// Long renders the diagnostic with the offending line, carets under the
// range and the hint, given the file's text.
func (d Diagnostic) Long(src []byte) string {
	var b strings.Builder
	b.WriteString(d.Short())
	b.WriteByte('\n')
	line := d.Subject.Start.Line
	if line > 0 && src != nil {
		text, ok := lineText(src, line)
		if ok {
			gutter := fmt.Sprintf("%4d | ", line)
			fmt.Fprintf(&b, "%s%s\n", gutter, sanitizeLine(text))
			startCol := d.Subject.Start.Column
			endCol := startCol + 1
			if d.Subject.End.Line == line && d.Subject.End.Column > startCol {
				endCol = d.Subject.End.Column
			}
			width := utf8.RuneCountInString(text)
			if endCol > width+2 {
				endCol = width + 2
			}
			if startCol < 1 {
				startCol = 1
			}
			if endCol <= startCol {
				endCol = startCol + 1
			}
			fmt.Fprintf(&b, "%s%s%s\n", strings.Repeat(" ", len(gutter)-2)+"| ",
				strings.Repeat(" ", startCol-1), strings.Repeat("^", endCol-startCol))
		}
	}
	if d.Hint != "" {
		fmt.Fprintf(&b, "     = hint: %s\n", d.Hint)
	}
	return b.String()
}

// lineText returns line n (1-based) of src without its newline.
func lineText(src []byte, n int) (string, bool) {
	cur := 1
	start := 0
	for i := 0; i < len(src) && cur < n; i++ {
		if src[i] == '\n' {
			cur++
			start = i + 1
		}
	}
	if cur != n {
		return "", false
	}
	end := start
	for end < len(src) && src[end] != '\n' {
		end++
	}
	return strings.TrimRight(string(src[start:end]), "\r"), true
}

// sanitizeLine replaces control characters and invalid UTF-8 so a snippet
// cannot corrupt a terminal.
func sanitizeLine(s string) string {
	var b strings.Builder
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size == 1:
			b.WriteRune('\uFFFD')
		case r == '\t':
			b.WriteByte(' ')
		case r < 0x20 || r == 0x7f:
			b.WriteRune('\uFFFD')
		default:
			b.WriteRune(r)
		}
		i += size
	}
	return b.String()
}

// posAt converts a byte offset of src into a Pos.
func posAt(src []byte, off int) Pos {
	return newLineIndex(src).pos(off)
}

// lineIndex maps byte offsets to line and column in O(log lines + line
// length), so that locating every key of a large spec stays linear in the
// spec's size rather than quadratic (a scan from the file's start per
// lookup made a 3000-metric spec take over a minute to check).
type lineIndex struct {
	src    []byte
	starts []int // byte offset of the first byte of each line
}

func newLineIndex(src []byte) *lineIndex {
	starts := []int{0}
	for i, c := range src {
		if c == '\n' {
			starts = append(starts, i+1)
		}
	}
	return &lineIndex{src: src, starts: starts}
}

// pos returns the position of byte offset off, clamped to the text. Columns
// count runes from 1.
func (x *lineIndex) pos(off int) Pos {
	off = min(max(off, 0), len(x.src))
	line := sort.SearchInts(x.starts, off+1) - 1 // last start <= off
	col := 1
	for i := x.starts[line]; i < off; {
		_, size := utf8.DecodeRune(x.src[i:])
		col++
		i += size
	}
	return Pos{Line: line + 1, Column: col, Byte: off}
}

// Suggest returns the candidate closest to s by edit distance when the
// distance is below 3 and at most a third of the length of s, or "": two
// edits turn any two-letter key into any other, so short names need a
// closer match.
func Suggest(s string, candidates []string) string {
	best, bestD := "", 3
	for _, c := range candidates {
		if d := editDistance(strings.ToLower(s), strings.ToLower(c)); d < bestD && 3*d <= utf8.RuneCountInString(s) {
			best, bestD = c, d
		}
	}
	return best
}

func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
