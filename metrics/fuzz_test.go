package metrics_test

import (
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/assay-dev/assay/metrics"
)

// FuzzLoad checks the spec loader on arbitrary bytes: it never panics, it is
// deterministic, every rejected input gets at least one diagnostic, and
// every diagnostic has a code and a position inside the file. The seed
// corpus is the bad-spec catalogue, the golden specs and the demo spec.
//
//	go test ./metrics/ -run '^$' -fuzz FuzzLoad -fuzztime 10s
func FuzzLoad(f *testing.F) {
	for _, pattern := range []string{"../testdata/bad/*.toml", "../testdata/golden/*/spec.toml", "../testdata/demo/*.toml"} {
		files, err := filepath.Glob(pattern)
		if err != nil {
			f.Fatal(err)
		}
		for _, file := range files {
			src, err := os.ReadFile(file)
			if err != nil {
				f.Fatal(err)
			}
			f.Add(src)
		}
	}
	for _, s := range []string{
		"", "\n", "[", "[[metrics]]", "a = ", "\ufeff", "\xff\xfe", "[experiment]\nid = \"\\u0000\"",
		"[metrics.\"a\\\"b\"]\nrole = 1", "x = [[[[[[[[[[]]]]]]]]]]", "[sources.s]\ncolumns = [\"a\", \"A\"]",
		"[variants]\na = 1e308\nb = 1e308", "[variants]\na = -0.0\nb = nan",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		const name = "fuzz.toml"
		spec, ds := metrics.Load(name, src)
		if spec == nil && !ds.HasErrors() {
			t.Fatalf("Load returned no spec and no errors, want at least one error")
		}
		for _, d := range ds {
			if d.Code == "" {
				t.Errorf("got diagnostic without a code: %s", d.Short())
			}
			if d.Summary == "" {
				t.Errorf("got diagnostic without a message: %s", d.Short())
			}
			r := d.Subject
			if r.File != name {
				t.Errorf("got file %q, want %q: %s", r.File, name, d.Short())
			}
			if r.Start.Line < 1 || r.Start.Column < 1 {
				t.Errorf("got position %d:%d, want line and column from 1: %s", r.Start.Line, r.Start.Column, d.Short())
			}
			if r.Start.Byte < 0 || r.Start.Byte > len(src) || r.End.Byte > len(src)+1 {
				t.Errorf("got byte range [%d, %d), want within the %d-byte file: %s", r.Start.Byte, r.End.Byte, len(src), d.Short())
			}
			_ = d.Long(src) // must not panic
		}
		_, again := metrics.Load(name, src)
		if !reflect.DeepEqual(ds, again) {
			t.Errorf("got different diagnostics on a second load:\n%s\nthen\n%s", ds.Error(), again.Error())
		}
		if spec == nil || ds.HasErrors() {
			return
		}
		// An accepted spec satisfies the rules the loader promises.
		if len(spec.Variants) < 2 {
			t.Errorf("accepted spec has %d variants, want at least 2", len(spec.Variants))
		}
		primaries := 0
		for _, m := range spec.Metrics {
			if m.Role == metrics.Primary {
				primaries++
			}
		}
		if primaries != 1 {
			t.Errorf("accepted spec has %d primary metrics, want 1", primaries)
		}
		if spec.Exposure.Source == nil {
			t.Errorf("accepted spec has no exposure source")
		}
	})
}

// exprTemplate is a valid spec whose exposure filter is replaced by the
// fuzzed text, written as a TOML multi-line literal string (no escapes, so
// offsets inside the expression map one to one onto the file).
const exprTemplate = `[experiment]
id = "fuzz"
hypothesis = "A clearer pricing page makes more visitors start a trial within a week."
start = 2026-05-01T00:00:00Z
end = 2026-06-01T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "exposures"
unit = "user_id"
time = "ts"
columns = ["user_id", "arm", "ts", "page", "amount", "naïve col", "a\"b"]

[exposure]
source = "exposures"
variant = "arm"
filter = '''`

const exprTail = `'''

[metrics.trials_7d]
role = "primary"
kind = "count"
source = "exposures"
window = ["0d", "7d"]
`

// FuzzLoadExpr puts arbitrary text into a spec's filter and checks that every
// expression diagnostic points inside the filter's string, and that an
// accepted filter has a tree.
//
//	go test ./metrics/ -run '^$' -fuzz FuzzLoadExpr -fuzztime 10s
func FuzzLoadExpr(f *testing.F) {
	for _, s := range []string{
		"page = 'pricing'", "amount > 0 AND page IN ('a', 'b')", `"naïve col" = 1`, `"a""b" IS NULL`,
		"page = 'a'; DROP TABLE t", "x -- c", "(SELECT 1)", "sum(amount) > 0", "page = '", `"page`,
		"1e999 > amount", "\x00", "\xff", "page = 'it''s'", "CASE WHEN amount > 0 THEN 1 END = 1",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, text string) {
		src := []byte(exprTemplate + text + exprTail)
		// A diagnostic about the whole value may start at its opening quotes.
		start := len(exprTemplate) - len("'''")
		end := len(exprTemplate) + len(text)
		spec, ds := metrics.Load("fuzz.toml", src)
		for _, d := range ds {
			if d.Code != metrics.CodeExpr && d.Code != metrics.CodeColumn {
				continue
			}
			if b := d.Subject.Start.Byte; b < start || b > end {
				t.Errorf("got %s at byte %d, want inside the filter value [%d, %d]", d.Short(), b, start, end)
			}
		}
		if spec != nil && !ds.HasErrors() && text != "" && spec.Exposure.Filter == nil {
			t.Errorf("accepted filter %q has no expression tree", text)
		}
	})
}
