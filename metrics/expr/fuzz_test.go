package expr

import (
	"testing"
)

// FuzzParse checks that Parse never panics, that it returns either a tree or
// diagnostics with valid spans, and that every accepted input round-trips
// through Render(…, ANSI).
func FuzzParse(f *testing.F) {
	for _, tc := range roundTrips {
		f.Add(tc.in)
	}
	for _, s := range []string{
		"", " ", "1; DROP TABLE t", `a"; DROP TABLE t; --`, "\x00", "\xff", "(SELECT 1)", "EXISTS (SELECT 1)",
		"sum(x)", "row_number() OVER ()", "x /* c */ + 1", "x -- c", "'abc", `"abc`, "1e999",
		"123456789012345678901234567890", "x || y", "{d '2024-01-01'}", "_utf8mb4 'x'", "trim('a' FROM x)",
		"x MEMBER OF ('[1]')", "CAST(x AS DATE", "CASE WHEN", "((((", "))))", "'", `"`, "`", "a.b.c.d",
		"NOT NOT NOT x", "- - - 1", "x IN (1, (2, 3))", "1.e", "1e+", ".", "..", "@", "\\", "x LIKE '\\'",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, src string) {
		n, ds := Parse(src)
		if (n == nil) == (len(ds) == 0) {
			t.Fatalf("Parse(%q): got node %v and %d diagnostics, want exactly one of them", src, n != nil, len(ds))
		}
		for i, d := range ds {
			if d.Span.Start < 0 || d.Span.End > len(src) || d.Span.Start > d.Span.End {
				t.Fatalf("Parse(%q): got diagnostic span %v, want within [0,%d]", src, d.Span, len(src))
			}
			if i > 0 && d.Span.Start < ds[i-1].Span.Start {
				t.Fatalf("Parse(%q): got unsorted diagnostics %v, want sorted by offset", src, ds)
			}
			if d.Code == CodeInternal {
				t.Fatalf("Parse(%q): got %v, want no internal errors", src, d)
			}
		}
		if n == nil {
			return
		}
		assertRoundTrip(t, src, n)
		_ = Check(n, []string{"a", "b"})
	})
}
