package expr

import (
	"strings"
	"testing"
)

// FuzzCheck checks the column and kind checker on every tree the parser
// accepts: it never panics; with every referenced column declared it
// reports no unknown column; with none declared it reports each column
// occurrence, at that occurrence; its spans lie within the text and are
// sorted; and KindOf agrees with ExpectKind. The column occurrences are
// counted here with a walk of the tree, independently of Check.
//
//	go test ./metrics/expr/ -run '^$' -fuzz FuzzCheck -fuzztime 10s
func FuzzCheck(f *testing.F) {
	for _, tc := range roundTrips {
		f.Add(tc.in)
	}
	for _, s := range []string{
		"amount + 'x'", "a = b AND c", "NOT amount", "CASE WHEN a THEN 'x' ELSE 1 END", "a IN (1, 'x')",
		"a BETWEEN 'x' AND 2", "lower(a) LIKE 'x%'", "CAST(a AS DATE) > 1", "coalesce(a, b, 'c') + 1",
		"abs(a) + abs(a) + abs(a)", strings.Repeat("a + ", 30) + "a", `"a""b" = "naïve col"`,
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, src string) {
		n, _ := Parse(src)
		if n == nil {
			return
		}
		var occurrences []Span
		Walk(n, func(x Node) bool {
			if c, ok := x.(*Column); ok {
				occurrences = append(occurrences, c.Sp)
			}
			return true
		})
		checkDiags := func(ds Diagnostics) {
			for i, d := range ds {
				if d.Span.Start < 0 || d.Span.End > len(src) || d.Span.Start > d.Span.End {
					t.Fatalf("Check(%q): got span %v, want within [0,%d]", src, d.Span, len(src))
				}
				if i > 0 && d.Span.Start < ds[i-1].Span.Start {
					t.Fatalf("Check(%q): got unsorted diagnostics %v", src, ds)
				}
				if d.Code == "" || d.Msg == "" {
					t.Fatalf("Check(%q): got diagnostic without code or message: %v", src, d)
				}
			}
		}
		all := Check(n, Columns(n))
		checkDiags(all)
		for _, d := range all {
			if d.Code == CodeColumn {
				t.Errorf("Check(%q, its own columns): got %v, want no unknown column", src, d)
			}
		}
		none := Check(n, nil)
		checkDiags(none)
		var got []Span
		limited := false
		for _, d := range none {
			switch d.Code {
			case CodeColumn:
				got = append(got, d.Span)
			case CodeLimit:
				limited = true
			}
		}
		if !limited {
			if len(got) != len(occurrences) {
				t.Fatalf("Check(%q, no columns): got %d unknown-column diagnostics, want %d (one per occurrence)", src, len(got), len(occurrences))
			}
			want := map[Span]int{}
			for _, sp := range occurrences {
				want[sp]++
			}
			for _, sp := range got {
				want[sp]--
			}
			for sp, k := range want {
				if k != 0 {
					t.Errorf("Check(%q, no columns): got unknown-column diagnostics at %v off by %d from the column occurrences there, want one each", src, sp, -k)
				}
			}
		}
		k := KindOf(n)
		for _, want := range []Kind{KindBoolean, KindNumeric, KindString, KindTemporal} {
			ds := ExpectKind(n, want, "value")
			if mismatch := k != KindUnknown && k != want; mismatch != (len(ds) == 1) {
				t.Errorf("ExpectKind(%q, %v): got %v with KindOf %v, want a diagnostic exactly when the kinds differ", src, want, ds, k)
			}
		}
	})
}
