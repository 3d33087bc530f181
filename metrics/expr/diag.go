package expr

import (
	"errors"
	"fmt"
	"sort"
	"strings"
)

// Diagnostic is one problem found in an expression. Code is a stable short
// identifier (see codes.go), Msg a one-line description, Hint an optional
// suggestion, and Span the byte range of the offending text.
type Diagnostic struct {
	Code string
	Msg  string
	Hint string
	Span Span
}

// String formats d as "offset N: msg (hint) [code]".
func (d Diagnostic) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "offset %d: %s", d.Span.Start, d.Msg)
	if d.Hint != "" {
		fmt.Fprintf(&b, " (hint: %s)", d.Hint)
	}
	fmt.Fprintf(&b, " [%s]", d.Code)
	return b.String()
}

// Error implements the error interface.
func (d Diagnostic) Error() string { return d.String() }

// Diagnostics is a list of problems, sorted by offset when returned by this
// package.
type Diagnostics []Diagnostic

// Err returns nil if ds is empty and otherwise an error whose text lists
// every diagnostic, one a line; errors.As can recover each Diagnostic.
func (ds Diagnostics) Err() error {
	if len(ds) == 0 {
		return nil
	}
	errs := make([]error, len(ds))
	for i, d := range ds {
		errs[i] = d
	}
	return errors.Join(errs...)
}

// String returns every diagnostic, one a line.
func (ds Diagnostics) String() string {
	lines := make([]string, len(ds))
	for i, d := range ds {
		lines[i] = d.String()
	}
	return strings.Join(lines, "\n")
}

// Codes returns the codes of ds in order; it is handy in tests and logs.
func (ds Diagnostics) Codes() []string {
	out := make([]string, len(ds))
	for i, d := range ds {
		out[i] = d.Code
	}
	return out
}

// maxDiagnostics bounds how many problems one call reports, so that hostile
// input cannot produce unbounded output.
const maxDiagnostics = 20

// sortDiags orders ds by offset (stable for equal offsets), drops exact
// duplicates and caps the list at maxDiagnostics.
func sortDiags(ds Diagnostics) Diagnostics {
	if len(ds) == 0 {
		return nil
	}
	sort.SliceStable(ds, func(i, j int) bool { return ds[i].Span.Start < ds[j].Span.Start })
	out := ds[:0]
	for i, d := range ds {
		if i > 0 && d == ds[i-1] {
			continue
		}
		out = append(out, d)
	}
	if len(out) > maxDiagnostics {
		last := out[maxDiagnostics-1].Span
		out = append(out[:maxDiagnostics-1], Diagnostic{
			Code: CodeLimit,
			Msg:  "too many problems; stopped reporting",
			Span: last,
		})
	}
	return out
}
