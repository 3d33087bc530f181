package engine_test

import (
	"context"
	"database/sql"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
)

// catalogSpec is a valid spec whose sources disagree with the database that
// TestCheckCatalog builds: one table is misspelt, one lacks two columns, one
// has a text time column, one matches a column only without regard to case,
// one is empty, and one file does not exist.
const catalogSpec = `[experiment]
id = "catalog"
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
columns = ["user_id", "arm", "ts", "page"]

[sources.orders]
table = "ordrs"
unit = "user_id"
time = "ordered_at"
columns = ["user_id", "ordered_at"]

[sources.trials]
table = "trials"
unit = "user_id"
time = "started_at"
columns = ["user_id", "started_at", "amout", "status"]

[sources.sessions]
table = "sessions"
unit = "user_id"
time = "began"
columns = ["user_id", "began"]

[sources.taps]
table = "taps"
unit = "user_id"
time = "tapped_at"
columns = ["user_id", "tapped_at", "Item"]

[sources.refunds]
table = "refunds"
unit = "user_id"
time = "refunded_at"
columns = ["user_id", "refunded_at"]

[sources.visits]
file = "missing/visits.parquet"
unit = "user_id"
time = "visited_at"
columns = ["user_id", "visited_at"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.orders_7d]
role = "primary"
kind = "count"
source = "orders"
window = ["0d", "7d"]
`

// catalogDB is the database the spec is checked against.
var catalogDB = []string{
	`CREATE TABLE exposures (user_id BIGINT, arm VARCHAR, ts TIMESTAMP, page VARCHAR)`,
	`INSERT INTO exposures VALUES (1, 'control', TIMESTAMP '2026-05-02 10:00:00', 'pricing')`,
	`CREATE TABLE orders (user_id BIGINT, ordered_at TIMESTAMP)`,
	`INSERT INTO orders VALUES (1, TIMESTAMP '2026-05-03 10:00:00')`,
	`CREATE TABLE trials (user_id BIGINT, started_at TIMESTAMPTZ, amount DOUBLE, plan VARCHAR)`,
	`INSERT INTO trials VALUES (1, TIMESTAMPTZ '2026-05-03 10:00:00+00', 9.5, 'pro')`,
	`CREATE TABLE sessions (user_id BIGINT, began VARCHAR)`,
	`INSERT INTO sessions VALUES (1, '2026-05-03')`,
	`CREATE TABLE taps (user_id BIGINT, tapped_at TIMESTAMP, item VARCHAR)`,
	`INSERT INTO taps VALUES (1, TIMESTAMP '2026-05-03 10:00:00', 'milk')`,
	`CREATE TABLE refunds (user_id BIGINT, refunded_at DATE)`,
}

// lineOf returns the 1-based line of text that starts with prefix, found
// independently of the loader.
func lineOf(t *testing.T, text, prefix string, nth int) int {
	t.Helper()
	for i, l := range strings.Split(text, "\n") {
		if strings.HasPrefix(l, prefix) {
			if nth == 0 {
				return i + 1
			}
			nth--
		}
	}
	t.Fatalf("no line starting with %q", prefix)
	return 0
}

func TestCheckCatalog(t *testing.T) {
	spec, ds := metrics.Load("catalog.toml", []byte(catalogSpec))
	if ds.HasErrors() {
		t.Fatalf("fixture spec does not load:\n%s", ds.Error())
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, q := range catalogDB {
		if _, err := db.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	d, err := dialects.Lookup("duckdb")
	if err != nil {
		t.Fatal(err)
	}
	got := engine.CheckCatalog(context.Background(), db, spec, d, nil)

	// Expected diagnostics, written from the fixture above. Columns lines
	// are the n-th "columns = " line of the spec (0-based n).
	tests := []struct {
		name     string
		line     int
		severity metrics.Severity
		code     string
		summary  string // regexp
		hint     string // regexp
	}{
		{"misspelt table", lineOf(t, catalogSpec, `table = "ordrs"`, 0), metrics.Error, metrics.CodeSource,
			"^source `orders`: table `ordrs` does not exist in the database; did you mean `orders`\\?$",
			"^tables and views in the database: exposures, orders, refunds, sessions, taps, trials$"},
		{"two missing columns", lineOf(t, catalogSpec, "columns = ", 2), metrics.Error, metrics.CodeColumn,
			"^source `trials`: table `trials` has no columns `amout` \\(did you mean `amount`\\?\\), `status`$",
			"^it has: user_id BIGINT, started_at TIMESTAMPTZ, amount DOUBLE, plan VARCHAR$"},
		{"text time column", lineOf(t, catalogSpec, `time = "began"`, 0), metrics.Error, metrics.CodeSource,
			"^source `sessions`: time column `began` is VARCHAR, not a date or timestamp$", "TIMESTAMP"},
		{"case-only column", lineOf(t, catalogSpec, "columns = ", 4), metrics.Warning, metrics.CodeColumn,
			"^source `taps`: column `Item` matches `item` of table `taps` only without regard to letter case$", `"item"`},
		{"empty table", lineOf(t, catalogSpec, `table = "refunds"`, 0), metrics.Warning, metrics.CodeSource,
			"^source `refunds`: table `refunds` has no rows$", "zero"},
		{"missing file", lineOf(t, catalogSpec, `file = "missing/visits.parquet"`, 0), metrics.Error, metrics.CodeSource,
			"^source `visits`: cannot read file \"missing/visits.parquet\": .*No files found", "relative"},
	}
	if len(got) != len(tests) {
		t.Errorf("got %d diagnostics, want %d:\n%s", len(got), len(tests), got.Error())
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			for _, d := range got {
				if d.Subject.Start.Line != tc.line || !regexp.MustCompile(tc.summary).MatchString(d.Summary) {
					continue
				}
				if d.Severity != tc.severity || d.Code != tc.code {
					t.Errorf("got %v %s, want %v %s", d.Severity, d.Code, tc.severity, tc.code)
				}
				if !regexp.MustCompile(tc.hint).MatchString(d.Hint) {
					t.Errorf("got hint %q, want match for %q", d.Hint, tc.hint)
				}
				if d.Subject.File != "catalog.toml" || d.Subject.Start.Column < 1 {
					t.Errorf("got position %s, want catalog.toml:%d:col", d.Subject, tc.line)
				}
				return
			}
			t.Errorf("no diagnostic at line %d matching %q; got:\n%s", tc.line, tc.summary, got.Error())
		})
	}
}

// TestCheckCatalogDemo checks the demo spec against its own Parquet files:
// every source exists with every declared column, so nothing is reported.
func TestCheckCatalogDemo(t *testing.T) {
	spec, _, ds := metrics.LoadFile("../testdata/demo/reorder.toml")
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	dir, err := filepath.Abs("../testdata/demo")
	if err != nil {
		t.Fatal(err)
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	d, _ := dialects.Lookup("duckdb")
	if got := engine.CheckCatalog(context.Background(), db, spec, d, nil); len(got) != 0 {
		t.Errorf("got diagnostics for the demo data, want none:\n%s", got.Error())
	}
}

// TestCheckCatalogReadOnly checks a database file opened read-only, as a
// run opens it: the check needs no write access.
func TestCheckCatalogReadOnly(t *testing.T) {
	path := filepath.Join(t.TempDir(), "w.duckdb")
	rw, err := sql.Open("duckdb", path) // read-write, to build the fixture
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range catalogDB {
		if _, err := rw.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	rw.Close()
	before, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path, FileDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	spec, _ := metrics.Load("catalog.toml", []byte(catalogSpec))
	d, _ := dialects.Lookup("duckdb")
	if got := engine.CheckCatalog(context.Background(), db, spec, d, nil); len(got) != 6 {
		t.Errorf("got %d diagnostics on the read-only database, want 6:\n%s", len(got), got.Error())
	}
	db.Close()
	after, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if string(before) != string(after) {
		t.Errorf("got a changed database file after the check, want it byte-identical")
	}
}

// TestCheckCatalogCancelled checks that a cancelled context stops the check
// with a diagnostic instead of hanging or reporting nothing.
func TestCheckCatalogCancelled(t *testing.T) {
	spec, _ := metrics.Load("catalog.toml", []byte(catalogSpec))
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	d, _ := dialects.Lookup("duckdb")
	got := engine.CheckCatalog(ctx, db, spec, d, nil)
	if len(got) != 1 || !strings.Contains(got[0].Summary, "interrupted") || !got.HasErrors() {
		t.Errorf("got %v, want one error saying the check was interrupted", got.Error())
	}
}
