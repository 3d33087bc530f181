package engine

import (
	"math"
	"os"
	"path/filepath"
	"testing"
)

// The same two-row result in the shapes warehouse clients export.
var exports = map[string]string{
	"plain.csv": "spec_fingerprint,variant,units,m__n,m__mean,m__var\n" +
		"abc,control,10,10,1.5,\nabc,treatment,12,12,2.5,0.25\n",
	// Snowflake returns unquoted names in upper case; NULL as \N.
	"upper.csv": "SPEC_FINGERPRINT,VARIANT,UNITS,m__n,m__mean,m__var\r\n" +
		"abc,control,10,10,1.5,\\N\r\nabc,treatment,12,12,2.5,0.25\r\n",
	// bq query --format=json: an array, INT64 as strings.
	"bq.json": `[{"spec_fingerprint":"abc","variant":"control","units":"10","m__n":"10","m__mean":1.5,"m__var":null},
{"spec_fingerprint":"abc","variant":"treatment","units":"12","m__n":"12","m__mean":2.5,"m__var":0.25}]`,
	// Newline-delimited (BigQuery extract, Trino CLI JSON output).
	"rows.ndjson": `{"spec_fingerprint":"abc","variant":"control","units":10,"m__n":10,"m__mean":1.5,"m__var":null}
{"spec_fingerprint":"abc","variant":"treatment","units":12,"m__n":12,"m__mean":2.5,"m__var":0.25}
`,
	// Columns and data arrays, as SQL HTTP APIs return them.
	"api.json": `{"columns":[{"name":"spec_fingerprint"},{"name":"variant"},{"name":"units"},{"name":"m__n"},{"name":"m__mean"},{"name":"m__var"}],
"data":[["abc","control",10,10,1.5,null],["abc","treatment",12,12,2.5,0.25]]}`,
}

func TestReadExports(t *testing.T) {
	dir := t.TempDir()
	for name, text := range exports {
		t.Run(name, func(t *testing.T) {
			p := filepath.Join(dir, name)
			if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
				t.Fatal(err)
			}
			tb, err := ReadTable(p)
			if err != nil {
				t.Fatal(err)
			}
			rows, err := tb.MainRows(nil)
			if err != nil {
				t.Fatal(err)
			}
			if len(rows) != 2 {
				t.Fatalf("%d rows, want 2", len(rows))
			}
			byV := map[string]Row{}
			for _, r := range rows {
				byV[r.Variant] = r
				if r.Fingerprint != "abc" {
					t.Errorf("fingerprint %q, want abc", r.Fingerprint)
				}
			}
			c, tr := byV["control"], byV["treatment"]
			if c.Units != 10 || tr.Units != 12 || c.Stats["m__mean"] != 1.5 || tr.Stats["m__var"] != 0.25 || tr.Stats["m__n"] != 12 {
				t.Errorf("read %+v and %+v", c, tr)
			}
			if !math.IsNaN(c.Stats["m__var"]) {
				t.Errorf("NULL variance read as %v, want NaN", c.Stats["m__var"])
			}
		})
	}
}

func TestReadHealthExport(t *testing.T) {
	p := filepath.Join(t.TempDir(), "health.csv")
	text := "KIND,REASON,VARIANT,DAY,ROW_COUNT,UNIT_COUNT\n" +
		"triggers,,control,2026-03-02 00:00:00.000,5,5\n" +
		"exposures,,control,2026-03-02T00:00:00Z,7,5\n" +
		"ignored_rows,null_unit,,,3,\n"
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	tb, err := ReadTable(p)
	if err != nil {
		t.Fatal(err)
	}
	h, err := tb.HealthRows()
	if err != nil {
		t.Fatal(err)
	}
	want := []HealthRow{
		{Kind: "exposures", Variant: "control", Day: "2026-03-02", Rows: 7, Units: 5},
		{Kind: "ignored_rows", Reason: "null_unit", Rows: 3},
		{Kind: "triggers", Variant: "control", Day: "2026-03-02", Rows: 5, Units: 5},
	}
	if len(h) != len(want) {
		t.Fatalf("got %+v", h)
	}
	for i := range want {
		if h[i] != want[i] {
			t.Errorf("row %d: got %+v, want %+v", i, h[i], want[i])
		}
	}
	if _, err := tb.MainRows(nil); err == nil {
		t.Error("a health result was accepted as the main result")
	}
}

func TestMatchStatColumns(t *testing.T) {
	rows := []Row{{Stats: map[string]float64{"orders__mean": 1, "ORDERS__VAR": 2}}}
	MatchStatColumns(rows, []string{"Orders__mean", "Orders__var"})
	if rows[0].Stats["Orders__mean"] != 1 || rows[0].Stats["Orders__var"] != 2 {
		t.Errorf("got %v", rows[0].Stats)
	}
}
