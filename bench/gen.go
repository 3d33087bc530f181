package bench

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/assay-dev/assay/engine"
)

// Size is the shape of a generated data set.
type Size struct {
	Name  string
	Units int64 // randomisation units; about 90% of them are exposed
	Rows  int64 // outcome rows over both outcome tables (40% orders, 60% sessions)
}

// Sizes are the named sizes of the benchmark, smallest first.
var Sizes = []Size{
	{Name: "tiny", Units: 2_000, Rows: 20_000},
	{Name: "1m", Units: 100_000, Rows: 1_000_000},
	{Name: "10m", Units: 1_000_000, Rows: 10_000_000},
	{Name: "100m", Units: 10_000_000, Rows: 100_000_000},
}

// SizeByName returns the named size.
func SizeByName(name string) (Size, bool) {
	for _, s := range Sizes {
		if s.Name == name {
			return s, true
		}
	}
	return Size{}, false
}

// OrderRows is the number of rows of the orders table: 40% of s.Rows.
func (s Size) OrderRows() int64 { return s.Rows * 4 / 10 }

// SessionRows is the number of rows of the sessions table: the rest of s.Rows.
func (s Size) SessionRows() int64 { return s.Rows - s.OrderRows() }

// File is the conventional database file name for s inside dir.
func (s Size) File(dir string) string {
	return filepath.Join(dir, fmt.Sprintf("assay-bench-%s-u%d-r%d.duckdb", s.Name, s.Units, s.Rows))
}

// Time range of the generated data. Outcome rows start two months before
// the experiment so that every unit has pre-trigger activity, which the
// compiled query must leave out (and a CUPED covariate would read).
const (
	dataStartUS = 1767225600000000 // 2026-01-01T00:00:00Z
	expStartUS  = 1772409600000000 // 2026-03-02T00:00:00Z, the spec's start
	expEndUS    = 1776038400000000 // 2026-04-13T00:00:00Z, the spec's end
	dayUS       = 86400000000
)

// uniform is a deterministic pseudo-random number in [0, 1) from DuckDB's
// hash of the integer x and a stream number. The stream goes into the
// hashed value (x + stream * 2^40) rather than a second argument, because
// DuckDB combines the hashes of several arguments weakly: hash(i, 12) and
// hash(i, 17) have a correlation of -0.9 over consecutive i. DuckDB's hash
// is stable for a given DuckDB version, so the same version writes the same
// data.
func uniform(x string, stream int) string {
	return fmt.Sprintf("(hash((%s) + %d * 1099511627776) / 18446744073709551616.0)", x, stream)
}

// genStatements returns the CREATE TABLE statements for s in schema db.
//
// Exposures: 90% of units are exposed, with one to three exposure rows each
// (surface 'home' 70%, else 'search'), starting uniformly in the
// experiment's six weeks, a day before its start to a few days after its end
// (those rows are ignored by the window). 0.5% of units see the other variant
// on their second row (crossovers). Units without a home exposure never
// trigger.
//
// Outcomes: the unit of each row is floor(units * r^2) for a uniform r, a
// heavy-tailed skew (the busiest 1% of units have 10% of the rows, the first
// unit about rows/sqrt(units)). Times are uniform from 2026-01-01 to the
// experiment's end, so most rows fall outside any unit's window. Delivered
// orders are 85%, cancelled 10%, returned 5%; amounts are log-normal, 0.1%
// NULL, 3% higher in the treatment. Session durations are exponential with a
// mean of 4 minutes and pages are skewed over 40 values.
func genStatements(s Size, db string) []string {
	span := expEndUS - dataStartUS
	treated := "(" + uniform("unit_id", 12) + " >= 0.5)"
	exposures := fmt.Sprintf(`CREATE TABLE %[1]s.exposures AS
SELECT
  unit_id,
  CASE WHEN (r_var < 0.5) <> (k = 1 AND r_cross < 0.005) THEN 'control' ELSE 'treatment' END AS variant,
  make_timestamp(CAST(%[2]d - %[3]d + r_t0 * 46 * %[3]d + k * r_gap * 4 * %[3]d AS BIGINT)) AS exposed_at,
  CASE WHEN r_surf < 0.7 THEN 'home' ELSE 'search' END AS surface,
  CASE WHEN r_plat < 0.45 THEN 'ios' WHEN r_plat < 0.85 THEN 'android' ELSE 'web' END AS platform
FROM (
  SELECT
    i // 3 AS unit_id,
    i %% 3 AS k,
    %[5]s AS r_exp,
    %[6]s AS r_var,
    %[7]s AS r_cross,
    %[8]s AS r_plat,
    %[9]s AS r_n,
    %[10]s AS r_t0,
    %[11]s AS r_gap,
    %[12]s AS r_surf
  FROM range(%[4]d) AS g(i)
)
WHERE r_exp < 0.9 AND k < 1 + floor(r_n * 3)
ORDER BY exposed_at`,
		db, expStartUS, dayUS, s.Units*3,
		uniform("i // 3", 11), uniform("i // 3", 12), uniform("i // 3", 13), uniform("i // 3", 14),
		uniform("i // 3", 15), uniform("i // 3", 16), uniform("i", 17), uniform("i", 18))

	orders := fmt.Sprintf(`CREATE TABLE %[1]s.orders AS
SELECT
  i AS order_id,
  unit_id,
  make_timestamp(CAST(%[2]d + r_t * %[3]d AS BIGINT)) AS ordered_at,
  CASE WHEN r_null < 0.001 THEN NULL
    ELSE round(exp(3.2 + 0.9 * sqrt(-2 * ln(1 - r_a1)) * cos(2 * pi() * r_a2)) * CASE WHEN %[5]s THEN 1.03 ELSE 1.0 END, 2) END AS amount,
  CASE WHEN r_s < 0.85 THEN 'delivered' WHEN r_s < 0.95 THEN 'cancelled' ELSE 'returned' END AS status
FROM (
  SELECT i, CAST(floor(%[4]d * %[6]s * %[6]s) AS BIGINT) AS unit_id,
    %[7]s AS r_t, %[8]s AS r_s, %[9]s AS r_a1, %[10]s AS r_a2, %[11]s AS r_null
  FROM range(%[12]d) AS g(i)
)`,
		db, dataStartUS, span, s.Units, treated,
		uniform("i", 21), uniform("i", 22), uniform("i", 23), uniform("i", 24), uniform("i", 25), uniform("i", 26),
		s.OrderRows())

	sessions := fmt.Sprintf(`CREATE TABLE %[1]s.sessions AS
SELECT
  CAST(floor(%[2]d * r_u * r_u) AS BIGINT) AS unit_id,
  make_timestamp(CAST(%[3]d + r_t * %[4]d AS BIGINT)) AS started_at,
  round(-ln(1 - r_d) * 240, 1) AS duration_s,
  'p' || CAST(floor(r_p * r_p * 40) AS INTEGER) AS page
FROM (
  SELECT %[5]s AS r_u, %[6]s AS r_t, %[7]s AS r_d, %[8]s AS r_p
  FROM range(%[9]d) AS g(i)
)`,
		db, s.Units, dataStartUS, span,
		uniform("i", 31), uniform("i", 32), uniform("i", 33), uniform("i", 34),
		s.SessionRows())
	return []string{exposures, orders, sessions}
}

// GenOptions control generation.
type GenOptions struct {
	Threads     int
	MemoryLimit string
	// Progress, when set, is called before each table with its name.
	Progress func(stage string)
}

// Generate writes the data set of size s into a new DuckDB file at path
// (replacing it). It generates every row inside DuckDB from range() and
// hash(), which is much faster than appending rows from Go. The file is
// written under a temporary name and renamed when complete.
func Generate(ctx context.Context, path string, s Size, opt GenOptions) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	tmp := path + ".partial"
	os.Remove(tmp)
	os.Remove(tmp + ".wal")
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Threads: opt.Threads, MemoryLimit: opt.MemoryLimit})
	if err != nil {
		return err
	}
	defer db.Close()
	spill := filepath.Join(filepath.Dir(path), "spill")
	setup := []string{
		"SET temp_directory = " + quote(spill),
		"SET preserve_insertion_order = false",
		"ATTACH " + quote(tmp) + " AS gen",
	}
	for _, q := range setup {
		if _, err := db.ExecContext(ctx, q); err != nil {
			return fmt.Errorf("%s: %w", q, engine.CleanError(err))
		}
	}
	names := []string{"exposures", "orders", "sessions"}
	for i, q := range genStatements(s, "gen") {
		if opt.Progress != nil {
			opt.Progress("generating " + names[i])
		}
		if _, err := db.ExecContext(ctx, q); err != nil {
			return fmt.Errorf("generating %s: %w", names[i], engine.CleanError(err))
		}
	}
	if _, err := db.ExecContext(ctx, "DETACH gen"); err != nil {
		return engine.CleanError(err)
	}
	db.Close()
	return os.Rename(tmp, path)
}

// quote renders a SQL string literal.
func quote(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

// tableCounts returns the row count of each generated table, for the report.
func tableCounts(ctx context.Context, db *sql.DB) (map[string]int64, error) {
	out := map[string]int64{}
	for _, t := range []string{"exposures", "orders", "sessions"} {
		var n int64
		if err := db.QueryRowContext(ctx, "SELECT count(*) FROM "+t).Scan(&n); err != nil {
			return nil, err
		}
		out[t] = n
	}
	return out, nil
}

// since formats the time elapsed since t for progress lines.
func since(t time.Time) string { return time.Since(t).Round(100 * time.Millisecond).String() }
