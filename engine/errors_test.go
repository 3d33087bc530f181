package engine_test

import (
	"strings"
	"testing"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
)

// TestOutOfRangeSumHint checks that a value too large for the exact
// per-unit sum (Dialect.Fixed) fails with the engine's message plus a hint
// that says what to do, and that an unrelated error gets no hint.
func TestOutOfRangeSumHint(t *testing.T) {
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: t.TempDir()})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	d, _ := dialects.Lookup("duckdb")
	for _, tc := range []struct {
		name, query string
		hint        bool
	}{
		{"value of 1e30", "SELECT sum(" + d.Fixed("CAST(1e30 AS DOUBLE)") + ")", true},
		{"unrelated error", "SELECT CAST('x' AS INTEGER)", false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var v any
			err := db.QueryRow(tc.query).Scan(&v)
			if err == nil {
				t.Fatalf("query succeeded with %v; want an error", v)
			}
			msg := engine.CleanError(err).Error()
			if got := strings.Contains(msg, "hint: assay adds each unit's values exactly"); got != tc.hint {
				t.Errorf("hint present = %v, want %v; message:\n%s", got, tc.hint, msg)
			}
		})
	}
}
