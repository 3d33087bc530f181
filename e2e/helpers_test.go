package e2e

import (
	"bytes"
	"database/sql"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/assay-dev/assay/internal/testkit"

	_ "github.com/duckdb/duckdb-go/v2"
)

// ---- fixture writing ----

// row is one fixture row. Values are rendered as DuckDB literals by lit:
// string → VARCHAR, float64 → DOUBLE, int → INTEGER, time.Time → naive
// TIMESTAMP (wall-clock fields as written), tstz → TIMESTAMP WITH TIME
// ZONE, nil → NULL.
type row []any

// tstz is an instant written as TIMESTAMP WITH TIME ZONE.
type tstz time.Time

// lit renders v as a DuckDB literal.
func lit(v any) string {
	switch x := v.(type) {
	case nil:
		return "NULL"
	case string:
		return "'" + strings.ReplaceAll(x, "'", "''") + "'"
	case float64:
		// Through a string so the stored double is exactly x.
		return "CAST('" + strconv.FormatFloat(x, 'g', -1, 64) + "' AS DOUBLE)"
	case int:
		return strconv.Itoa(x)
	case time.Time:
		return "TIMESTAMP '" + x.Format("2006-01-02 15:04:05.999999") + "'"
	case tstz:
		return "TIMESTAMPTZ '" + time.Time(x).UTC().Format("2006-01-02 15:04:05.999999") + "+00'"
	}
	panic(fmt.Sprintf("lit: unsupported %T", v))
}

// scratchDB opens a fresh in-memory DuckDB, independent of assay's engine.
func scratchDB(t testing.TB) *sql.DB {
	t.Helper()
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatalf("open scratch duckdb: %v", err)
	}
	db.SetMaxOpenConns(1)
	t.Cleanup(func() { db.Close() })
	return db
}

// writeParquet writes rows with the comma-separated column names cols to
// dir/file as Parquet through a scratch DuckDB.
func writeParquet(t testing.TB, dir, file, cols string, rows []row) {
	t.Helper()
	if len(rows) == 0 {
		t.Fatalf("writeParquet %s: no rows (column types would be unknown)", file)
	}
	var b strings.Builder
	for i, r := range rows {
		if i > 0 {
			b.WriteString(",\n")
		}
		b.WriteString("(")
		for j, v := range r {
			if j > 0 {
				b.WriteString(", ")
			}
			b.WriteString(lit(v))
		}
		b.WriteString(")")
	}
	q := fmt.Sprintf("SELECT * FROM (VALUES\n%s\n) AS v(%s)", b.String(), cols)
	copyParquet(t, dir, file, q)
}

// copyParquet writes the result of query q to dir/file as Parquet.
func copyParquet(t testing.TB, dir, file, q string) {
	t.Helper()
	db := scratchDB(t)
	path := filepath.Join(dir, file)
	stmt := fmt.Sprintf("COPY (%s) TO '%s' (FORMAT parquet)", q, strings.ReplaceAll(path, "'", "''"))
	if _, err := db.Exec(stmt); err != nil {
		t.Fatalf("write %s: %v", file, err)
	}
}

// writeText writes a text file (a spec) into dir and returns its path.
func writeText(t testing.TB, dir, file, text string) string {
	t.Helper()
	path := filepath.Join(dir, file)
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// ts parses a UTC wall-clock time "2006-01-02 15:04:05".
func ts(s string) time.Time {
	t, err := time.ParseInLocation("2006-01-02 15:04:05", s, time.UTC)
	if err != nil {
		panic(err)
	}
	return t
}

const (
	day  = 24 * time.Hour
	week = 7 * day
)

// ---- specs ----

// specParts fill the skeleton spec of the hand-built fixtures: sources
// exposures(unit_id, variant, exposed_at, surface) and events(unit_id,
// happened_at, w), variants control/treatment 50/50.
type specParts struct {
	Start, End     string // TOML datetimes; defaults 2026-03-02T00:00:00Z and 2026-04-13T00:00:00Z
	TimeZone       string // "" leaves the default (UTC)
	ExposureFilter string
	Extra          string // more [sources.*] or [eligibility.*] tables
	Metrics        string // [metrics.*] tables; one must be primary
}

func (p specParts) toml() string {
	return testkit.Spec{ID: "e2e-fixture", Hypothesis: "An end-to-end fixture whose expected values are worked out by hand in the test.",
		Start: p.Start, End: p.End, TimeZone: p.TimeZone, ExposureCols: []string{"surface"}, EventCols: []string{"w"},
		ExposureFilter: p.ExposureFilter, Extra: p.Extra, Metrics: p.Metrics}.TOML()
}

// metricSumW is a primary metric: per-unit sum of events.w in [0d, 14d).
const metricSumW = `
[metrics.w14]
role = "primary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "14d"]
`

const exposureCols = "unit_id, variant, exposed_at, surface"
const eventCols = "unit_id, happened_at, w"

// ---- running assay ----

// runCLI runs the command line in-process.
func runCLI(args ...string) (code int, stdout, stderr string) { return testkit.Run(args...) }

// runReport runs `assay run --format json` on spec with extra flags and
// decodes the report; a non-zero exit fails the test.
func runReport(t testing.TB, spec string, flags ...string) *report {
	t.Helper()
	args := append([]string{"run", "--format", "json"}, flags...)
	args = append(args, spec)
	code, out, errs := runCLI(args...)
	if code != 0 {
		t.Fatalf("assay %s: exit code %d, want 0\nstderr:\n%s\nstdout:\n%s", strings.Join(args, " "), code, errs, out)
	}
	return decodeReport(t, []byte(out))
}

func decodeReport(t testing.TB, b []byte) *report {
	t.Helper()
	var r report
	dec := json.NewDecoder(bytes.NewReader(b))
	if err := dec.Decode(&r); err != nil {
		t.Fatalf("decode JSON report: %v\n%s", err, b)
	}
	if r.SchemaVersion != 2 {
		t.Fatalf("schema_version: got %v, want 2", r.SchemaVersion)
	}
	return &r
}

// compileMain returns the main query printed by `assay compile --query
// main`, including its final semicolon.
func compileMain(t testing.TB, spec string, flags ...string) string {
	t.Helper()
	args := append([]string{"compile", "--query", "main"}, flags...)
	args = append(args, spec)
	code, out, errs := runCLI(args...)
	if code != 0 {
		t.Fatalf("assay %s: exit code %d, want 0\n%s", strings.Join(args, " "), code, errs)
	}
	return out
}

// dirDB opens a scratch DuckDB whose relative file paths resolve in dir,
// as they do for assay's engine.
func dirDB(t testing.TB, dir string) *sql.DB {
	t.Helper()
	db := scratchDB(t)
	if _, err := db.Exec("SET file_search_path = '" + strings.ReplaceAll(dir, "'", "''") + "'"); err != nil {
		t.Fatal(err)
	}
	return db
}

// statements splits a compiled script at its statement separators (outside
// quotes and comments) and drops the separators.
func statements(script string) []string {
	var out []string
	last := 0
	for _, i := range semicolons(script) {
		out = append(out, strings.TrimSpace(script[last:i]))
		last = i + 1
	}
	if rest := strings.TrimSpace(script[last:]); rest != "" {
		out = append(out, rest)
	}
	return out
}

// runScript runs the script that assay compile prints for one query on db
// (which holds one connection): the setup statement and the cleanup, if
// the dialect stages the cohort, around the query, whose rows it returns.
func runScript(t testing.TB, db *sql.DB, script string) []map[string]any {
	t.Helper()
	st := statements(script)
	switch len(st) {
	case 1:
		return queryMaps(t, db, st[0])
	case 3:
		if _, err := db.Exec(st[0]); err != nil {
			t.Fatalf("setup statement: %v\n%s", err, st[0])
		}
		rows := queryMaps(t, db, st[1])
		if _, err := db.Exec(st[2]); err != nil {
			t.Fatalf("cleanup statement: %v\n%s", err, st[2])
		}
		return rows
	}
	t.Fatalf("got %d statements, want a query alone or setup, query and cleanup", len(st))
	return nil
}

// queryMaps runs q on db and returns its rows as column → value maps.
func queryMaps(t testing.TB, db *sql.DB, q string) []map[string]any {
	t.Helper()
	rs, err := db.Query(q)
	if err != nil {
		t.Fatalf("query: %v\n%s", err, q)
	}
	defer rs.Close()
	cols, err := rs.Columns()
	if err != nil {
		t.Fatal(err)
	}
	var out []map[string]any
	for rs.Next() {
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rs.Scan(ptrs...); err != nil {
			t.Fatal(err)
		}
		m := map[string]any{}
		for i, c := range cols {
			m[c] = vals[i]
		}
		out = append(out, m)
	}
	if err := rs.Err(); err != nil {
		t.Fatalf("query: %v\n%s", err, q)
	}
	return out
}

// mainAggregates compiles spec's main query and executes it on a scratch
// DuckDB in the spec's directory, returning the raw aggregate rows keyed
// by variant.
func mainAggregates(t testing.TB, spec string) map[string]map[string]any {
	t.Helper()
	db := dirDB(t, filepath.Dir(spec))
	out := map[string]map[string]any{}
	for _, r := range runScript(t, db, compileMain(t, spec)) {
		v, _ := r["variant"].(string)
		out[v] = r
	}
	return out
}

// toFloat converts a scanned numeric value to float64 (NULL → NaN).
func toFloat(t testing.TB, v any) float64 {
	t.Helper()
	switch x := v.(type) {
	case nil:
		return math.NaN()
	case float64:
		return x
	case float32:
		return float64(x)
	case int64:
		return float64(x)
	case int32:
		return float64(x)
	case int:
		return float64(x)
	case uint64:
		return float64(x)
	}
	t.Fatalf("toFloat: unexpected %T %v", v, v)
	return 0
}

// ---- the assay binary, for subprocess runs ----

var (
	binOnce sync.Once
	binPath string
	binErr  error
	binDir  string
)

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "assay-e2e-bin-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	binDir = dir
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// assayBinary builds cmd/assay once per test process.
func assayBinary(t testing.TB) string {
	t.Helper()
	binOnce.Do(func() {
		binPath = filepath.Join(binDir, "assay")
		cmd := exec.Command("go", "build", "-o", binPath, "./cmd/assay")
		cmd.Dir = ".."
		out, err := cmd.CombinedOutput()
		if err != nil {
			binErr = fmt.Errorf("go build ./cmd/assay: %v\n%s", err, out)
		}
	})
	if binErr != nil {
		t.Fatal(binErr)
	}
	return binPath
}

// ---- the JSON report ----

// num is a JSON number that may be null.
type num = *float64

type report struct {
	SchemaVersion int      `json:"schema_version"`
	Cautions      []string `json:"cautions"`
	Experiment    struct {
		TimeZone string `json:"time_zone"`
		Variants []struct {
			Name           string `json:"name"`
			Baseline       bool   `json:"baseline"`
			TriggeredUnits int64  `json:"triggered_units"`
			EligibleUnits  int64  `json:"eligible_units"`
		} `json:"variants"`
	} `json:"experiment"`
	Alarms []string `json:"alarms"`
	Health struct {
		ExposedUnits   int64 `json:"exposed_units"`
		NeverTriggered int64 `json:"never_triggered_units"`
		Triggered      int64 `json:"triggered_units"`
		Eligible       int64 `json:"eligible_units"`
		Exclusions     []struct {
			Reason    string           `json:"reason"`
			Units     int64            `json:"units"`
			ByVariant map[string]int64 `json:"by_variant"`
		} `json:"exclusions"`
		IgnoredRows map[string]int64 `json:"ignored_exposure_rows"`
		Daily       []struct {
			Day            string `json:"day"`
			Variant        string `json:"variant"`
			ExposureRows   int64  `json:"exposure_rows"`
			ExposedUnits   int64  `json:"exposed_units"`
			TriggeredUnits int64  `json:"triggered_units"`
		} `json:"daily"`
	} `json:"health"`
	Metrics []metricJSON `json:"metrics"`
}

type metricJSON struct {
	Name     string `json:"name"`
	Variants []struct {
		Variant  string `json:"variant"`
		N        int64  `json:"n"`
		Immature int64  `json:"immature"`
		Value    num    `json:"value"`
		StdError num    `json:"std_error"`
	} `json:"variants"`
	Comparisons []comparisonJSON `json:"comparisons"`
}

type comparisonJSON struct {
	Variant        string `json:"variant"`
	Method         string `json:"method"`
	Difference     num    `json:"difference"`
	StdError       num    `json:"std_error"`
	CILow          num    `json:"ci_low"`
	CIHigh         num    `json:"ci_high"`
	Relative       num    `json:"relative"`
	RelativeCILow  num    `json:"relative_ci_low"`
	RelativeCIHigh num    `json:"relative_ci_high"`
	PValue         num    `json:"p_value"`
	Statistic      num    `json:"statistic"`
	DF             num    `json:"df"`
	// CUPED is set when the metric has a covariate; Unadjusted is then
	// the plain comparison of the raw means.
	CUPED *struct {
		Unadjusted *comparisonJSON `json:"unadjusted"`
	} `json:"cuped"`
}

// raw returns the comparison of the unadjusted means: the CUPED
// unadjusted comparison when there is one, else c itself.
func (c *comparisonJSON) raw() *comparisonJSON {
	if c.CUPED != nil && c.CUPED.Unadjusted != nil {
		return c.CUPED.Unadjusted
	}
	return c
}

func (r *report) metric(t testing.TB, name string) *metricJSON {
	t.Helper()
	for i := range r.Metrics {
		if r.Metrics[i].Name == name {
			return &r.Metrics[i]
		}
	}
	t.Fatalf("metric %q not in report", name)
	return nil
}

// unitVal is a metric's per-variant value.
type unitVal struct {
	N, Immature     int64
	Value, StdError float64 // NaN for JSON null
}

func (m *metricJSON) variant(t testing.TB, name string) unitVal {
	t.Helper()
	for _, v := range m.Variants {
		if v.Variant == name {
			return unitVal{N: v.N, Immature: v.Immature, Value: f(v.Value), StdError: f(v.StdError)}
		}
	}
	t.Fatalf("metric %s: variant %q not in report", m.Name, name)
	return unitVal{}
}

func (m *metricJSON) comparison(t testing.TB, variant string) *comparisonJSON {
	t.Helper()
	for i := range m.Comparisons {
		if m.Comparisons[i].Variant == variant {
			return &m.Comparisons[i]
		}
	}
	t.Fatalf("metric %s: no comparison for %q", m.Name, variant)
	return nil
}

// units returns the experiment's triggered and eligible units of a variant.
func (r *report) units(t testing.TB, variant string) (triggered, eligible int64) {
	t.Helper()
	for _, v := range r.Experiment.Variants {
		if v.Name == variant {
			return v.TriggeredUnits, v.EligibleUnits
		}
	}
	t.Fatalf("variant %q not in experiment.variants", variant)
	return 0, 0
}

// exclusion returns the units excluded for reason and their split by
// variant (zero and nil when the reason is absent).
func (r *report) exclusion(reason string) (int64, map[string]int64) {
	for _, e := range r.Health.Exclusions {
		if e.Reason == reason {
			return e.Units, e.ByVariant
		}
	}
	return 0, nil
}

// f turns a nullable JSON number into a float (null → NaN).
func f(n num) float64 {
	if n == nil {
		return math.NaN()
	}
	return *n
}

// ---- comparisons ----

// closeAbs reports whether got is within tol of want.
func closeAbs(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

// closeRel reports whether got is within a relative tol of want.
func closeRel(got, want, tol float64) bool {
	if want == 0 {
		return got == 0
	}
	return math.Abs(got-want) <= tol*math.Abs(want)
}
