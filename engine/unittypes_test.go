package engine_test

import (
	"context"
	"regexp"
	"testing"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
)

// unitTypesSpec joins five sources to the exposures on unit id; the
// database below gives their unit columns different types.
const unitTypesSpec = `[experiment]
id = "unit-types"
hypothesis = "A shorter checkout makes more visitors place an order within a week."
start = 2026-05-01T00:00:00Z
end = 2026-06-01T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "exposures"
unit = "user_id"
time = "ts"
columns = ["user_id", "arm", "ts"]

[sources.orders]
table = "orders"
unit = "customer"
time = "ordered_at"
columns = ["customer", "ordered_at"]

[sources.refunds]
table = "refunds"
unit = "user_id"
time = "refunded_at"
columns = ["user_id", "refunded_at"]

[sources.visits]
table = "visits"
unit = "user_id"
time = "visited_at"
columns = ["user_id", "visited_at"]

[sources.ledger]
table = "ledger"
unit = "user_id"
time = "booked_at"
columns = ["user_id", "booked_at"]

[sources.scores]
table = "scores"
unit = "user_id"
time = "scored_at"
columns = ["user_id", "scored_at"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.orders_7d]
role = "primary"
kind = "count"
source = "orders"
window = ["0d", "7d"]
`

// TestCheckCatalogUnitTypes checks that unit id columns of different kinds
// of type are refused before any query, naming both sources and both
// types, while integers of other widths and exact decimals pass. DuckDB
// would otherwise join '007' (VARCHAR) to 7 (BIGINT) by casting.
func TestCheckCatalogUnitTypes(t *testing.T) {
	spec, ds := metrics.Load("units.toml", []byte(unitTypesSpec))
	if ds.HasErrors() {
		t.Fatalf("fixture spec does not load:\n%s", ds.Error())
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, q := range []string{
		`CREATE TABLE exposures (user_id BIGINT, arm VARCHAR, ts TIMESTAMP)`,
		`INSERT INTO exposures VALUES (7, 'control', TIMESTAMP '2026-05-02 10:00:00')`,
		`CREATE TABLE orders (customer VARCHAR, ordered_at TIMESTAMP)`,
		`INSERT INTO orders VALUES ('007', TIMESTAMP '2026-05-03 10:00:00')`,
		`CREATE TABLE refunds (user_id INTEGER, refunded_at TIMESTAMP)`,
		`INSERT INTO refunds VALUES (7, TIMESTAMP '2026-05-03 10:00:00')`,
		`CREATE TABLE visits (user_id UBIGINT, visited_at TIMESTAMP)`,
		`INSERT INTO visits VALUES (7, TIMESTAMP '2026-05-03 10:00:00')`,
		`CREATE TABLE ledger (user_id DECIMAL(20,0), booked_at TIMESTAMP)`,
		`INSERT INTO ledger VALUES (7, TIMESTAMP '2026-05-03 10:00:00')`,
		`CREATE TABLE scores (user_id DOUBLE, scored_at TIMESTAMP)`,
		`INSERT INTO scores VALUES (7, TIMESTAMP '2026-05-03 10:00:00')`,
	} {
		if _, err := db.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	d, _ := dialects.Lookup("duckdb")
	got := engine.CheckCatalog(context.Background(), db, spec, d, nil)
	want := []struct {
		line    int
		summary string
	}{
		{lineOf(t, unitTypesSpec, `unit = "customer"`, 0),
			"^source `orders`: unit column `customer` is VARCHAR, but the exposure source `exposures` has unit column `user_id` of type BIGINT$"},
		{lineOf(t, unitTypesSpec, `unit = "user_id"`, 4),
			"^source `scores`: unit column `user_id` is DOUBLE, but the exposure source `exposures` has unit column `user_id` of type BIGINT$"},
	}
	if len(got) != len(want) {
		t.Errorf("got %d diagnostics, want %d:\n%s", len(got), len(want), got.Error())
	}
	for _, w := range want {
		found := false
		for _, g := range got {
			if g.Subject.Start.Line == w.line && regexp.MustCompile(w.summary).MatchString(g.Summary) {
				found = true
				if g.Severity != metrics.Error || g.Code != metrics.CodeSource {
					t.Errorf("got %v %s, want an error with code %s", g.Severity, g.Code, metrics.CodeSource)
				}
				if g.Hint == "" {
					t.Errorf("no hint for %q", g.Summary)
				}
			}
		}
		if !found {
			t.Errorf("no diagnostic at line %d matching %q; got:\n%s", w.line, w.summary, got.Error())
		}
	}
	if !got.HasErrors() {
		t.Error("the check passed; want it to refuse the run")
	}
}
