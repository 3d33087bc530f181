package bench

import (
	"context"
	"path/filepath"
	"testing"

	"github.com/assay-dev/assay/engine"
)

// tol is the agreement required between approaches: 1e-9 relative.
const tol = 1e-9

// TestAgree generates the tiny data set and checks that assay's compiled
// query (a), its full run through engine.Query, the hand-written reference
// query (c, reference.sql) and the notebook computation (d, gonum over
// per-unit rows) give the same aggregates. It is the CI smoke test of the
// harness; it times nothing.
func TestAgree(t *testing.T) {
	ctx := context.Background()
	size, _ := SizeByName("tiny")
	path := filepath.Join(t.TempDir(), "tiny.duckdb")
	if err := Generate(ctx, path, size, GenOptions{Threads: 2}); err != nil {
		t.Fatal(err)
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path, Threads: 2})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()

	plan, q, err := Compile("spec10.toml", Spec10)
	if err != nil {
		t.Fatal(err)
	}
	if len(plan.Metrics) != 10 || len(plan.Sources) != 2 {
		t.Fatalf("spec10 has %d metrics over %d sources, want 10 over 2", len(plan.Metrics), len(plan.Sources))
	}
	a, err := RunAssay(ctx, db, q)
	if err != nil {
		t.Fatal(err)
	}
	_, full, err := RunAssayReport(ctx, db, plan, q)
	if err != nil {
		t.Fatal(err)
	}
	c, err := RunReference(ctx, db)
	if err != nil {
		t.Fatal(err)
	}
	d, _, err := RunNotebook(ctx, db)
	if err != nil {
		t.Fatal(err)
	}

	// The data must exercise what the comparison is about: both variants,
	// units left out as immature, and outcomes in every metric.
	for _, v := range []string{"control", "treatment"} {
		row := a[v]
		if row == nil {
			t.Fatalf("no result row for variant %s", v)
		}
		if row["units"] < 100 {
			t.Errorf("%s: %v eligible units, want at least 100", v, row["units"])
		}
		if n := row["orders_14d__n"]; !(n > 0 && n < row["units"]) {
			t.Errorf("%s: %v mature units of %v, want some but not all", v, n, row["units"])
		}
		if row["cancelled_7d__n"] <= row["orders_14d__n"] {
			t.Errorf("%s: a 7-day window should leave fewer units immature than a 14-day one", v)
		}
		for _, col := range []string{"orders_14d__mean", "revenue_capped__mean", "cancelled_7d__mean", "pages_seen__mean", "engaged__mean", "basket_value__cov"} {
			if !(row[col] > 0) {
				t.Errorf("%s: %s = %v, want > 0", v, col, row[col])
			}
		}
	}

	checks := []struct {
		name      string
		got, want Aggregates
	}{
		// Independent computation: the hand-written SQL in reference.sql.
		{"assay main vs hand-written reference.sql", a, c},
		// Independent computation: gonum over per-unit rows (notebook.sql).
		{"assay main vs gonum over per-unit rows", a, d},
		// Same query read through engine.Query instead of database/sql.
		{"engine.Query vs direct read", full, a},
	}
	for _, ck := range checks {
		for _, m := range Compare(ck.got, ck.want, tol) {
			t.Errorf("%s: %v", ck.name, m)
		}
	}

	// Independent value: the generator's requested row counts.
	b, err := RunBound(ctx, db)
	if err != nil {
		t.Fatal(err)
	}
	if got := b["bound"]["order_rows"]; got != float64(size.OrderRows()) {
		t.Errorf("bound order rows = %v, want %d (generator's requested count)", got, size.OrderRows())
	}
	if got := b["bound"]["session_rows"]; got != float64(size.SessionRows()) {
		t.Errorf("bound session rows = %v, want %d (generator's requested count)", got, size.SessionRows())
	}
}

// TestSpecVariants checks the derived specs compile with the metric counts
// they are named for.
func TestSpecVariants(t *testing.T) {
	for _, tc := range []struct {
		name    string
		src     []byte
		metrics int
	}{
		{"spec1", Spec1(), 1},
		{"spec2", Spec2(), 2},
		{"spec2cov", Spec2Cov(), 2},
		{"spec50", Spec50(), 50},
	} {
		t.Run(tc.name, func(t *testing.T) {
			plan, _, err := Compile(tc.name+".toml", tc.src)
			if err != nil {
				t.Fatal(err)
			}
			if got := len(plan.Metrics); got != tc.metrics {
				t.Errorf("got %d metrics, want %d", got, tc.metrics)
			}
		})
	}
}

// BenchmarkCompile50 measures loading, compiling and printing a 50-metric
// spec (target: under 50 ms per operation).
func BenchmarkCompile50(b *testing.B) {
	src := Spec50()
	for b.Loop() {
		if _, _, err := Compile("spec50.toml", src); err != nil {
			b.Fatal(err)
		}
	}
}
