package safety_test

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"testing"

	"github.com/assay-dev/assay/cli"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
)

// dataSpec runs on a database with the data problems of issue 5: exposure
// rows without a unit or a time, outside the analysis window, or in a
// variant the spec does not declare; outcome rows without a unit or a time;
// an empty outcome source; and (TestNonFiniteValues) values that are NaN or
// infinite.
const dataSpec = `[experiment]
id = "data-problems"
hypothesis = "A clearer pricing page makes more visitors start a trial within a week."
start = 2026-05-01T00:00:00Z
end = 2026-05-31T00:00:00Z

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
unit = "user_id"
time = "ordered_at"
columns = ["user_id", "ordered_at", "amount"]

[sources.refunds]
table = "refunds"
unit = "user_id"
time = "refunded_at"
columns = ["user_id", "refunded_at"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.orders_7d]
role = "primary"
kind = "count"
source = "orders"
window = ["0d", "7d"]

[metrics.revenue]
role = "secondary"
kind = "sum"
source = "orders"
value = "amount"
window = ["0d", "7d"]

[metrics.refunds]
role = "guard"
kind = "count"
source = "refunds"
window = ["0d", "7d"]
harmful = "increase"
margin = 0.05
`

// dataDB: units 1-4 in control and 5-8 in treatment, exposed on 2 May;
// unit 9 only in the undeclared variant "ghost"; one row each without a
// unit, without a time, before the start and at the end. Orders: units 1,
// 2, 5 and 6 have one order of 10 each; one order has no unit and one no
// time. refunds is empty.
var dataDB = []string{
	"CREATE TABLE exposures (user_id BIGINT, arm VARCHAR, ts TIMESTAMP)",
	`INSERT INTO exposures VALUES
	 (1, 'control', '2026-05-02 10:00'), (2, 'control', '2026-05-02 10:00'), (3, 'control', '2026-05-02 10:00'), (4, 'control', '2026-05-02 10:00'),
	 (5, 'treatment', '2026-05-02 10:00'), (6, 'treatment', '2026-05-02 10:00'), (7, 'treatment', '2026-05-02 10:00'), (8, 'treatment', '2026-05-02 10:00'),
	 (9, 'ghost', '2026-05-02 10:00'),
	 (NULL, 'control', '2026-05-02 10:00'), (10, 'control', NULL),
	 (11, 'control', '2026-04-30 23:59:59'), (12, 'treatment', '2026-05-31 00:00:00')`,
	"CREATE TABLE orders (user_id BIGINT, ordered_at TIMESTAMP, amount DOUBLE)",
	`INSERT INTO orders VALUES
	 (1, '2026-05-03 10:00', 10), (5, '2026-05-03 10:00', 10),
	 (2, '2026-05-03 10:00', 10), (6, '2026-05-03 10:00', 10),
	 (NULL, '2026-05-03 10:00', 1), (3, NULL, 1)`,
	"CREATE TABLE refunds (user_id BIGINT, refunded_at TIMESTAMP)",
}

// TestDataProblems runs the spec on the database above and checks that each
// problem is reported with the fixture's hand count and that the catalogue
// check flags the empty source.
func TestDataProblems(t *testing.T) {
	specPath, dbPath := buildData(t, dataDB)
	// The catalogue check sees the empty source before anything runs.
	spec, _, ds := metrics.LoadFile(specPath)
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	ro, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: dbPath})
	if err != nil {
		t.Fatal(err)
	}
	d, _ := dialects.Lookup("duckdb")
	cat := engine.CheckCatalog(context.Background(), ro, spec, d, nil)
	ro.Close()
	if len(cat) != 1 || cat.HasErrors() || !regexp.MustCompile("`refunds` has no rows").MatchString(cat[0].Summary) {
		t.Errorf("catalogue check: got %v, want one warning that refunds is empty", cat.Error())
	}

	var stdout, stderr bytes.Buffer
	code := cli.Run([]string{"run", "--db", dbPath, "--format", "json", specPath}, nil, &stdout, &stderr)
	if code != cli.ExitOK {
		t.Fatalf("got exit %d, want %d; stderr:\n%s", code, cli.ExitOK, stderr.String())
	}
	out := stdout.Bytes()
	if !json.Valid(out) || regexp.MustCompile(`\bNaN\b|Infinity|[+-]Inf\b`).Match(out) {
		t.Fatalf("got invalid JSON or NaN/Inf in it:\n%s", out)
	}
	var rep struct {
		Health struct {
			Ignored    map[string]int64            `json:"ignored_exposure_rows"`
			IgnoredOut map[string]map[string]int64 `json:"ignored_outcome_rows"`
			Exclusions []struct {
				Reason    string           `json:"reason"`
				ByVariant map[string]int64 `json:"by_variant"`
			} `json:"exclusions"`
		} `json:"health"`
		Experiment struct {
			Variants []struct {
				Name     string `json:"name"`
				Eligible int64  `json:"eligible_units"`
			} `json:"variants"`
		} `json:"experiment"`
		Metrics []struct {
			Name          string `json:"name"`
			NonFiniteRows int64  `json:"nonfinite_rows"`
			Variants      []struct {
				Variant string   `json:"variant"`
				Value   *float64 `json:"value"`
				Reason  string   `json:"reason"`
			} `json:"variants"`
		} `json:"metrics"`
	}
	if err := json.Unmarshal(out, &rep); err != nil {
		t.Fatal(err)
	}
	// Hand counts from dataDB's comment.
	// Source: the orders fixture above holds one row without a unit and one
	// without a time (hand count).
	if o := rep.Health.IgnoredOut["orders"]; o["null_unit"] != 1 || o["null_time"] != 1 {
		t.Errorf("ignored orders rows: got %v, want null_unit 1 and null_time 1", o)
	}
	for reason, want := range map[string]int64{"null_unit": 1, "null_time": 1, "before_start": 1, "after_end": 1} {
		if got := rep.Health.Ignored[reason]; got != want {
			t.Errorf("ignored exposure rows %s: got %d, want %d", reason, got, want)
		}
	}
	ghost := int64(-1)
	for _, e := range rep.Health.Exclusions {
		if e.Reason == "unknown_variant" {
			ghost = e.ByVariant["ghost"]
		}
	}
	if ghost != 1 {
		t.Errorf("units excluded for an undeclared variant: got %d, want 1 (unit 9)", ghost)
	}
	for _, v := range rep.Experiment.Variants {
		if v.Eligible != 4 {
			t.Errorf("variant %s: got %d eligible units, want 4", v.Name, v.Eligible)
		}
	}
	for _, m := range rep.Metrics {
		for _, v := range m.Variants {
			switch {
			case m.Name == "orders_7d":
				// 2 orders per variant over 4 units; the orders without a unit
				// or a time count nowhere.
				if v.Value == nil || *v.Value != 0.5 {
					t.Errorf("orders_7d/%s: got %v, want 0.5", v.Variant, v.Value)
				}
			case m.Name == "revenue":
				if v.Value == nil || *v.Value != 5 {
					t.Errorf("revenue/%s: got %v, want 5 (20 over 4 units)", v.Variant, v.Value)
				}
			case m.Name == "refunds":
				// The empty source gives zero for every unit.
				if v.Value == nil || *v.Value != 0 {
					t.Errorf("refunds/%s: got %v, want 0", v.Variant, v.Value)
				}
			}
		}
	}
}

// buildData writes dataSpec and a database made by stmts into a fresh
// directory.
func buildData(t *testing.T, stmts []string) (specPath, dbPath string) {
	t.Helper()
	dir := t.TempDir()
	specPath = filepath.Join(dir, "data.toml")
	if err := os.WriteFile(specPath, []byte(dataSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	dbPath = filepath.Join(dir, "data.duckdb")
	rw, err := sql.Open("duckdb", dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer rw.Close()
	for _, q := range stmts {
		if _, err := rw.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	return specPath, dbPath
}

// TestNonFiniteValues runs the spec with a NaN amount in control and an
// infinite one in treatment. Such rows are left out of the sums and
// counted (issue 5): the run succeeds, the JSON holds no NaN/Inf, and the
// metric reports the two rows (hand count of the fixture).
func TestNonFiniteValues(t *testing.T) {
	stmts := append([]string(nil), dataDB[:3]...)
	stmts = append(stmts, `INSERT INTO orders VALUES (1, '2026-05-03 10:00', 'NaN'), (5, '2026-05-03 10:00', 'Infinity'), (2, '2026-05-03 10:00', 10)`, dataDB[4])
	specPath, dbPath := buildData(t, stmts)
	var stdout, stderr bytes.Buffer
	code := cli.Run([]string{"run", "--db", dbPath, "--format", "json", specPath}, nil, &stdout, &stderr)
	if bytes.Contains(stderr.Bytes(), []byte("internal error")) || bytes.Contains(stderr.Bytes(), []byte("goroutine ")) {
		t.Fatalf("got a panic:\n%s", stderr.String())
	}
	if code != cli.ExitOK {
		t.Fatalf("got exit %d, stderr %q; want 0 (non-finite values are counted, not fatal)", code, stderr.String())
	}
	out := stdout.Bytes()
	if !json.Valid(out) || regexp.MustCompile(`\bNaN\b|Infinity|[+-]Inf\b`).Match(out) {
		t.Fatalf("got invalid JSON or NaN/Inf in it:\n%s", out)
	}
	var rep struct {
		Metrics []struct {
			Name          string `json:"name"`
			NonFiniteRows int64  `json:"nonfinite_rows"`
			Variants      []struct {
				Variant string   `json:"variant"`
				Value   *float64 `json:"value"`
				Reason  string   `json:"reason"`
			} `json:"variants"`
		} `json:"metrics"`
	}
	if err := json.Unmarshal(out, &rep); err != nil {
		t.Fatal(err)
	}
	for _, m := range rep.Metrics {
		if m.Name != "revenue" {
			continue
		}
		// Source: the fixture above holds one NaN and one Infinity amount.
		if m.NonFiniteRows != 2 {
			t.Errorf("revenue nonfinite_rows: got %d, want 2", m.NonFiniteRows)
		}
		for _, v := range m.Variants {
			if v.Value == nil && v.Reason == "" {
				t.Errorf("revenue/%s: got null without a reason", v.Variant)
			}
		}
	}
}
