package e2e

import (
	"context"
	"database/sql"
	"math"
	"path/filepath"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
)

// demoEngine loads the demo spec and opens assay's DuckDB engine on its
// data directory.
func demoEngine(t *testing.T) (*metrics.Spec, *sql.DB) {
	t.Helper()
	spec := filepath.Join("..", "testdata", "demo", "reorder.toml")
	s, _, ds := metrics.LoadFile(spec)
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	dir, _ := filepath.Abs(filepath.Dir(spec))
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return s, db
}

// oneStatement is the DuckDB dialect without its optional interfaces: the
// printer then writes each query as one self-contained statement that
// computes the cohort itself, as it does for every other engine.
type oneStatement struct{ dialects.Dialect }

// TestStagedCohortSameResults runs the demo spec, overall and broken down
// by each segment, twice on DuckDB: with the cohort computed once into a
// temporary table (the default) and with each query computing it itself.
// Every unit and health count must be the same, and every statistic the
// same to 1e-12 relative (double sums in another row order differ in the
// last bits; common practice): staging moves where the cohort is computed,
// not what it is.
func TestStagedCohortSameResults(t *testing.T) {
	s, db := demoEngine(t)
	duck, _ := dialects.Lookup("duckdb")
	if _, ok := duck.(dialects.Stager); !ok {
		t.Fatal("the DuckDB dialect does not stage the cohort")
	}
	groupings := [][]string{nil, compiler.DefaultBreakdowns(s), {compiler.KeyTriggerDay}}
	for _, by := range groupings {
		p, ds := compiler.Compile(s, compiler.Options{Breakdowns: by})
		if ds.HasErrors() {
			t.Fatal(ds)
		}
		run := func(d dialects.Dialect) *results.Set {
			q, err := compiler.Print(p, d)
			if err != nil {
				t.Fatal(err)
			}
			if _, staged := d.(dialects.Stager); staged != (q.Setup != "") {
				t.Fatalf("%T: setup %q", d, q.Setup)
			}
			res, err := engine.Query(context.Background(), db, p, q, true)
			if err != nil {
				t.Fatalf("%v: %v", by, engine.CleanError(err))
			}
			return res
		}
		staged, plain := run(duck), run(oneStatement{duck})
		if len(staged.Rows) == 0 || len(staged.Health) == 0 {
			t.Fatalf("%v: got %d rows and %d health rows, want some", by, len(staged.Rows), len(staged.Health))
		}
		if len(staged.Rows) != len(plain.Rows) {
			t.Fatalf("%v: %d rows staged, %d in one statement", by, len(staged.Rows), len(plain.Rows))
		}
		for i, a := range staged.Rows {
			b := plain.Rows[i]
			if a.Variant != b.Variant || a.Units != b.Units || len(a.Stats) != len(b.Stats) || a.Group != b.Group || a.Key != b.Key {
				t.Errorf("%v row %d: staged %s/%d/%d/%s, one statement %s/%d/%d/%s", by, i, a.Variant, a.Units, a.Group, a.Key, b.Variant, b.Units, b.Group, b.Key)
				continue
			}
			for k, v := range a.Stats {
				if w, ok := b.Stats[k]; !ok || !sameStat(v, w) {
					t.Errorf("%v %s %s: staged %v, one statement %v", by, a.Variant, k, v, w)
				}
			}
		}
		if len(staged.Health) != len(plain.Health) {
			t.Fatalf("%v: %d health rows staged, %d in one statement", by, len(staged.Health), len(plain.Health))
		}
		for i := range staged.Health {
			if staged.Health[i] != plain.Health[i] {
				t.Errorf("%v health row %d: staged %+v, one statement %+v", by, i, staged.Health[i], plain.Health[i])
			}
		}
	}
}

// TestStagedCohortCleanedUp checks that a run leaves no temporary table
// behind on the connection, after success and after a failed query.
func TestStagedCohortCleanedUp(t *testing.T) {
	s, db := demoEngine(t)
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	duck, _ := dialects.Lookup("duckdb")
	q, err := compiler.Print(p, duck)
	if err != nil {
		t.Fatal(err)
	}
	temps := func() int {
		var n int
		if err := db.QueryRow("SELECT count(*) FROM duckdb_tables() WHERE temporary").Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	if _, err := engine.Query(context.Background(), db, p, q, true); err != nil {
		t.Fatal(err)
	}
	if n := temps(); n != 0 {
		t.Errorf("after a run: %d temporary tables, want 0", n)
	}
	bad := q
	bad.Health = "SELECT no_such_column FROM " + duck.(dialects.Stager).TempRef(compiler.StagedTable)
	if _, err := engine.Query(context.Background(), db, p, bad, true); err == nil {
		t.Fatal("a failing health query reported no error")
	}
	if n := temps(); n != 0 {
		t.Errorf("after a failed run: %d temporary tables, want 0", n)
	}
}

// sameStat: both NaN (NULL), or equal to 1e-12 relative.
func sameStat(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= 1e-12*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}
