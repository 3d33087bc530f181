package results

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
)

// testPlan compiles a one-metric spec whose metric is called m.
func testPlan(t *testing.T, opt compiler.Options) *compiler.Plan {
	t.Helper()
	spec := `[experiment]
id = "t"
hypothesis = "A shorter form raises how many visitors sign up within a week."
start = 2026-05-01T00:00:00Z
end = 2026-05-29T00:00:00Z
[variants]
control = 0.5
treatment = 0.5
[sources.a]
table = "a"
unit = "u"
time = "t"
columns = ["u", "arm", "t", "tier"]
[exposure]
source = "a"
variant = "arm"
[metrics.m]
role = "primary"
kind = "count"
source = "a"
window = ["0d", "7d"]
[segments.tier]
source = "a"
column = "tier"
`
	s, ds := metrics.Load("t.toml", []byte(spec))
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	p, ds := compiler.Compile(s, opt)
	if ds.HasErrors() {
		t.Fatal(ds)
	}
	return p
}

// The same two-row result in the shapes warehouse clients export. @OPT@ is
// replaced by the plan's options text.
var exports = map[string]string{
	"plain.csv": "spec_fingerprint,compile_options,variant,units,m__n,m__mean,m__var\n" +
		"abc,@OPT@,treatment,12,12,2.5,0.25\nabc,@OPT@,control,10,10,1.5,\n",
	// Snowflake returns unquoted names in upper case; NULL as \N.
	"upper.csv": "SPEC_FINGERPRINT,COMPILE_OPTIONS,VARIANT,UNITS,M__N,M__MEAN,M__VAR\r\n" +
		"abc,@OPT@,control,10,10,1.5,\\N\r\nabc,@OPT@,treatment,12,12,2.5,0.25\r\n",
	// bq query --format=json: an array, INT64 as strings.
	"bq.json": `[{"spec_fingerprint":"abc","compile_options":"@OPT@","variant":"control","units":"10","m__n":"10","m__mean":1.5,"m__var":null},
{"spec_fingerprint":"abc","compile_options":"@OPT@","variant":"treatment","units":"12","m__n":"12","m__mean":2.5,"m__var":0.25}]`,
	// Newline-delimited (BigQuery extract, Trino CLI JSON output).
	"rows.ndjson": `{"spec_fingerprint":"abc","compile_options":"@OPT@","variant":"control","units":10,"m__n":10,"m__mean":1.5,"m__var":null}
{"spec_fingerprint":"abc","compile_options":"@OPT@","variant":"treatment","units":12,"m__n":12,"m__mean":2.5,"m__var":0.25}
`,
	// Columns and data arrays, as SQL HTTP APIs return them.
	"api.json": `{"columns":[{"name":"spec_fingerprint"},{"name":"compile_options"},{"name":"variant"},{"name":"units"},{"name":"m__n"},{"name":"m__mean"},{"name":"m__var"}],
"data":[["abc","@OPT@","control",10,10,1.5,null],["abc","@OPT@","treatment",12,12,2.5,0.25]]}`,
}

func TestReadExports(t *testing.T) {
	p := testPlan(t, compiler.Options{})
	dir := t.TempDir()
	for name, text := range exports {
		t.Run(name, func(t *testing.T) {
			path := filepath.Join(dir, name)
			if err := os.WriteFile(path, []byte(strings.ReplaceAll(text, "@OPT@", p.Options.Text())), 0o644); err != nil {
				t.Fatal(err)
			}
			tb, err := ReadTable(path)
			if err != nil {
				t.Fatal(err)
			}
			set, err := Main(p, tb.Columns, tb.Rows)
			if err != nil {
				t.Fatal(err)
			}
			if len(set.Rows) != 2 || set.SpecFingerprint != "abc" || set.Options != p.Options.Text() {
				t.Fatalf("read %+v", set)
			}
			c, tr := set.Rows[0], set.Rows[1]
			if c.Variant != "control" || tr.Variant != "treatment" {
				t.Fatalf("rows not in declared variant order: %q, %q", c.Variant, tr.Variant)
			}
			mp := p.Metrics[0]
			if c.Units != 10 || tr.Units != 12 || c.Stat(mp, compiler.StatMean) != 1.5 || tr.Stat(mp, compiler.StatVar) != 0.25 || tr.Stat(mp, compiler.StatN) != 12 {
				t.Errorf("read %+v and %+v", c, tr)
			}
			if !math.IsNaN(c.Stat(mp, compiler.StatVar)) {
				t.Errorf("NULL variance read as %v, want NaN", c.Stat(mp, compiler.StatVar))
			}
		})
	}
}

// A breakdown row has its key set; overall rows have none.
func TestReadBreakdownRows(t *testing.T) {
	p := testPlan(t, compiler.Options{Breakdowns: []string{"tier", compiler.KeyTriggerDay}})
	cols := []string{"spec_fingerprint", "compile_options", "variant", "seg_tier", "trigger_day", "units", "m__n", "m__mean", "m__var"}
	o := p.Options.Text()
	rows := [][]any{
		{"f", o, "control", "gold", nil, "4", "4", "1", "0"},
		{"f", o, "control", nil, nil, "10", "10", "1", "0"},
		{"f", o, "control", nil, "2026-05-02T00:00:00Z", "3", "3", "1", "0"},
	}
	set, err := Main(p, cols, rows)
	if err != nil {
		t.Fatal(err)
	}
	if g := set.Overall(); len(g) != 1 || g[0].Units != 10 {
		t.Errorf("overall rows %+v", g)
	}
	if g := set.Group(0); len(g) != 1 || g[0].Key != "gold" {
		t.Errorf("tier rows %+v", g)
	}
	if g := set.Group(1); len(g) != 1 || g[0].Key != "2026-05-02" {
		t.Errorf("trigger day rows %+v", g)
	}
	rows[0][4] = "2026-05-03"
	if _, err := Main(p, cols, rows); err == nil {
		t.Error("a row with two keys set was accepted")
	}
}

// A result missing a statistic, or with columns of another plan, is
// refused with the names.
func TestReadRefusesOtherContract(t *testing.T) {
	p := testPlan(t, compiler.Options{})
	_, err := Main(p, []string{"spec_fingerprint", "compile_options", "variant", "units", "m__n", "m__mean", "x__var"}, nil)
	if err == nil || !strings.Contains(err.Error(), "m__var") || !strings.Contains(err.Error(), "x__var") {
		t.Errorf("got %v", err)
	}
}

func TestReadHealthExport(t *testing.T) {
	path := filepath.Join(t.TempDir(), "health.csv")
	text := "KIND,REASON,SOURCE,VARIANT,DAY,ROW_COUNT,UNIT_COUNT\n" +
		"triggers,,,control,2026-03-02 00:00:00.000,5,5\n" +
		"exposures,,,control,2026-03-02T00:00:00Z,7,5\n" +
		"ignored_outcome_rows,null_unit,orders,,,3,\n"
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	tb, err := ReadTable(path)
	if err != nil {
		t.Fatal(err)
	}
	h, err := Health(tb.Columns, tb.Rows)
	if err != nil {
		t.Fatal(err)
	}
	want := []HealthRow{
		{Kind: compiler.HealthExposures, Variant: "control", Day: "2026-03-02", Rows: 7, Units: 5},
		{Kind: compiler.HealthOutcomeRows, Reason: "null_unit", Source: "orders", Rows: 3},
		{Kind: compiler.HealthTriggers, Variant: "control", Day: "2026-03-02", Rows: 5, Units: 5},
	}
	if len(h) != len(want) {
		t.Fatalf("got %+v", h)
	}
	for i := range want {
		if h[i] != want[i] {
			t.Errorf("row %d: got %+v, want %+v", i, h[i], want[i])
		}
	}
	if _, err := Main(testPlan(t, compiler.Options{}), tb.Columns, tb.Rows); err == nil {
		t.Error("a health result was accepted as the main result")
	}
}
