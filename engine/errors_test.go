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

// TestOutOfMemoryHint checks that running out of memory is reported with
// advice in terms of assay's flags (--memory-limit, --threads) and without
// DuckDB's advice, which names SQL settings (SET memory_limit=...) that a
// user of assay cannot type. The query builds one list of ten million
// strings, which a 20 MB limit cannot hold and DuckDB cannot spill.
func TestOutOfMemoryHint(t *testing.T) {
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Threads: 1, MemoryLimit: "20MB"})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var n int64
	err = db.QueryRow("SELECT len(list(x::VARCHAR || 'abcdefghijkl')) FROM range(10000000) t(x)").Scan(&n)
	if err == nil {
		t.Fatalf("query succeeded under a 20 MB limit (%d values); want an out-of-memory error", n)
	}
	msg := engine.CleanError(err).Error()
	for _, want := range []string{"Out of Memory", "--memory-limit", "--threads"} {
		if !strings.Contains(msg, want) {
			t.Errorf("message lacks %q:\n%s", want, msg)
		}
	}
	for _, bad := range []string{"SET ", "memory_limit", "preserve_insertion_order"} {
		if strings.Contains(msg, bad) {
			t.Errorf("message names the SQL setting %q:\n%s", bad, msg)
		}
	}
}
