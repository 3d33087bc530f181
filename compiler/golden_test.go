package compiler_test

// Golden SQL cases. Each folder under testdata/golden holds one case:
//
//	testdata/golden/<case>/spec.toml   the input spec
//	testdata/golden/<case>/<dialect>.sql   the SQL `assay compile --dialect <dialect>` prints
//	testdata/golden/<case>/options.txt     compile options (compiler.Options.Text), if any;
//	                                       without it, compile's defaults (every segment)
//
// The demo spec testdata/demo/reorder.toml is a case too, with its SQL in
// testdata/demo/reorder.<dialect>.sql. Refresh the expected files with
//
//	go test ./compiler/ -update
//
// and review the diff like any other code change.

import (
	"flag"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

var update = flag.Bool("update", false, "rewrite golden files")

type goldenCase struct {
	name, spec string
	want       func(dialect string) string
}

func goldenCases(t *testing.T) []goldenCase {
	t.Helper()
	dirs, err := filepath.Glob("../testdata/golden/*/spec.toml")
	if err != nil {
		t.Fatal(err)
	}
	var cases []goldenCase
	for _, spec := range dirs {
		dir := filepath.Dir(spec)
		cases = append(cases, goldenCase{name: filepath.Base(dir), spec: spec,
			want: func(d string) string { return filepath.Join(dir, d+".sql") }})
	}
	cases = append(cases, goldenCase{name: "demo", spec: "../testdata/demo/reorder.toml",
		want: func(d string) string { return "../testdata/demo/reorder." + d + ".sql" }})
	if len(cases) < 4 {
		t.Fatalf("found %d golden cases, want at least 4", len(cases))
	}
	return cases
}

// compileText returns what `assay compile` prints for spec in dialect d.
// Specs with file sources compile only for dialects that read files (DuckDB);
// for the others the test is skipped and no golden file may exist.
func compileText(t *testing.T, spec string, d dialects.Dialect) string {
	t.Helper()
	s, _, ds := metrics.LoadFile(spec)
	if ds.HasErrors() {
		t.Fatalf("%s: %v", spec, ds)
	}
	opt := compiler.Options{Breakdowns: compiler.DefaultBreakdowns(s)}
	if b, err := os.ReadFile(filepath.Join(filepath.Dir(spec), "options.txt")); err == nil {
		if opt, err = compiler.ParseOptions(strings.TrimSpace(string(b))); err != nil {
			t.Fatal(err)
		}
	}
	p, ds := compiler.Compile(s, opt)
	if ds.HasErrors() {
		t.Fatalf("%s: %v", spec, ds)
	}
	q, err := compiler.Print(p, d)
	if err != nil {
		if _, ok := d.(dialects.Resplitter); p.Splits > 0 && !ok {
			t.Skipf("the %s dialect cannot re-split units: %v", d.Name(), err)
		}
		if usesFiles(s) && d.Name() != "duckdb" {
			t.Skipf("%s reads files, which the %s dialect cannot: %v", spec, d.Name(), err)
		}
		t.Fatal(err)
	}
	return q.Script(true, true)
}

func usesFiles(s *metrics.Spec) bool {
	for _, src := range s.Sources {
		if src.File != "" {
			return true
		}
	}
	return false
}

func TestGolden(t *testing.T) {
	for _, tc := range goldenCases(t) {
		for _, name := range dialects.Names() {
			d, _ := dialects.Lookup(name)
			t.Run(tc.name+"/"+name, func(t *testing.T) {
				path := tc.want(name)
				t.Cleanup(func() {
					if t.Skipped() {
						if _, err := os.Stat(path); err == nil {
							t.Errorf("%s exists, but the spec cannot be compiled for %s: delete it", path, name)
						}
					}
				})
				got := compileText(t, tc.spec, d)
				if *update {
					if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
						t.Fatal(err)
					}
					return
				}
				want, err := os.ReadFile(path)
				if err != nil {
					t.Fatalf("%v (run go test ./compiler/ -update to create it)", err)
				}
				if got != string(want) {
					t.Errorf("%s differs from the compiled SQL (-want +got):\n%s", path, lineDiff(string(want), got))
				}
			})
		}
	}
}

// TestDeterministic compiles every case twice from freshly loaded specs:
// the SQL must be byte-identical.
func TestDeterministic(t *testing.T) {
	d, _ := dialects.Lookup("duckdb")
	for _, tc := range goldenCases(t) {
		t.Run(tc.name, func(t *testing.T) {
			a := compileText(t, tc.spec, d)
			for i := 0; i < 5; i++ {
				if b := compileText(t, tc.spec, d); a != b {
					t.Fatalf("compile %d differs from the first:\n%s", i+2, lineDiff(a, b))
				}
			}
		})
	}
}

// lineDiff is a small line-based diff for test failures.
func lineDiff(want, got string) string {
	w, g := strings.Split(want, "\n"), strings.Split(got, "\n")
	var b strings.Builder
	n := max(len(w), len(g))
	shown := 0
	for i := 0; i < n && shown < 40; i++ {
		var wl, gl string
		if i < len(w) {
			wl = w[i]
		}
		if i < len(g) {
			gl = g[i]
		}
		if wl != gl {
			b.WriteString("line " + strconv.Itoa(i+1) + ":\n- " + wl + "\n+ " + gl + "\n")
			shown++
		}
	}
	return b.String()
}
