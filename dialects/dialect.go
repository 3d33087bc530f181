// Package dialects holds one SQL dialect per engine. A dialect owns the
// engine-specific spelling of the few things assay's queries need:
// identifier quoting, string literals, timestamp arithmetic, casts, the
// variance and covariance aggregates and the percentile function. The
// compiler builds one plan and prints it through a Dialect, the way
// go/printer prints a go/ast tree.
package dialects

import (
	"fmt"
	"sort"

	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/metrics/timefmt"
)

// Dialect is the engine-specific part of SQL printing. Each method's
// comment shows what DuckDB and PostgreSQL emit.
type Dialect interface {
	// Name is the dialect's flag value, e.g. "duckdb".
	Name() string
	// Ident quotes an identifier: DuckDB and PostgreSQL `"a""b"`.
	Ident(name string) string
	// Literal quotes a string literal: `'it''s'`.
	Literal(s string) string
	// Table renders a qualified table or view name from its dot-separated parts.
	Table(parts []string) string
	// File renders a table function reading a file, or an error when the
	// engine cannot read local files: DuckDB `read_parquet('x.parquet')`.
	File(path string) (string, error)
	// Micros converts a timestamp column to integer microseconds since
	// 1970-01-01 UTC. Timestamps without a zone are wall-clock times in tz:
	// DuckDB `epoch_us(x)` (tz UTC), `epoch_us(timezone('Europe/Paris', x))`.
	Micros(x, tz string) string
	// Day converts integer microseconds since the epoch to the calendar date
	// in tz: DuckDB `CAST(make_timestamp(x) AS DATE)` for UTC.
	Day(us, tz string) string
	// Local renders a calendar part of the instant us (integer
	// microseconds since the epoch) as seen in tz; part is PartDate,
	// PartWeek (the date of the week's Monday), PartHour (0–23) or
	// PartWeekday (ISO, Monday = 1): DuckDB `hour(make_timestamp(us))` for
	// the hour in UTC, PostgreSQL `CAST(EXTRACT(HOUR FROM (TIMESTAMP
	// '1970-01-01 00:00:00' + us * INTERVAL '1 microsecond')) AS INTEGER)`.
	Local(us, tz, part string) string
	// StoredMicros converts a time column stored as f (epoch numbers or
	// text; see package timefmt) to integer microseconds since the epoch;
	// text is wall-clock time in tz: DuckDB `CAST(CAST(x AS DOUBLE) * 1000
	// AS BIGINT)` for epoch_millis, PostgreSQL `... to_timestamp(x,
	// 'YYYY-MM-DD HH24:MI:SS') ...` for "%Y-%m-%d %H:%M:%S".
	StoredMicros(x string, f timefmt.Format, tz string) string
	// Text casts to a character string: DuckDB `CAST(x AS VARCHAR)`,
	// MySQL `CAST(x AS CHAR)`.
	Text(x string) string
	// Double casts to a double-precision float: `CAST(x AS DOUBLE)`.
	Double(x string) string
	// Fixed casts a double to an exact decimal with 10 places, wide enough
	// for any per-unit total below 10^28: DuckDB `CAST(x AS DECIMAL(38, 10))`,
	// PostgreSQL `CAST(x AS NUMERIC(38, 10))`. Per-unit sums add these, so
	// the total does not depend on the order in which the engine adds rows.
	Fixed(x string) string
	// VarSamp is the numerically stable sample variance (n-1): `var_samp(x)`.
	VarSamp(x string) string
	// CovarSamp is the numerically stable sample covariance: `covar_samp(x, y)`.
	CovarSamp(x, y string) string
	// Quantile is the continuous (interpolated) quantile aggregate:
	// DuckDB `quantile_cont(x, 0.99)`, PostgreSQL
	// `percentile_cont(0.99) WITHIN GROUP (ORDER BY x)`.
	Quantile(x string, q float64) string
	// Least is the smaller of two non-NULL values: `least(a, b)`.
	Least(a, b string) string
	// OneZero is 1 when the condition holds and 0 otherwise, typed so that
	// avg and var_samp over it keep full precision: DuckDB
	// `CASE WHEN cond THEN 1.0 ELSE 0.0 END`. (Engines that average exact
	// decimals to their input's scale, such as Trino, Redshift and MySQL,
	// need doubles here.)
	OneZero(cond string) string
	// Expr renders a checked user expression; col renders a column
	// reference (already qualified and quoted).
	Expr(n expr.Node, col func(name string) string) string
}

// Resplitter is implemented by dialects that can re-split units at random
// for calibration runs (assay calibrate).
type Resplitter interface {
	// Splits renders a relation with one integer column named split
	// holding 0 … n-1: DuckDB `range(200) AS z(split)`.
	Splits(n int) string
	// Uniform renders a pseudo-random number in [0, 1) that depends only on
	// the unit id, the split number and the salt: DuckDB
	// `CAST(hash(CAST(u AS VARCHAR), s, 7) % 1000000 AS DOUBLE) / 1000000`.
	Uniform(unit, split string, salt int64) string
}

// TimeLiterals is implemented by dialects that can write a timestamp
// literal. The compiler uses it for a static, deliberately widened range
// on every scan of an event source, which lets the engine skip data early
// (filter pushdown); the exact, time-zone-proof comparisons stay in
// integer microseconds.
type TimeLiterals interface {
	// TimeLiteral renders the UTC wall-clock time us (microseconds since
	// the epoch) as a timestamp literal: DuckDB `TIMESTAMP '2026-03-02 00:00:00'`.
	TimeLiteral(us int64) string
}

// Inliner is implemented by dialects that can be told not to materialise
// a common table expression referenced more than once. The exposure rows
// are read by the trigger aggregate and again, for the few units whose
// trigger variant the aggregate does not settle, by a join; an engine
// that pushes that join's filters into a second scan of the table does
// less work than one that first writes every exposure row aside.
type Inliner interface {
	// Inline is the keyword placed between a CTE's AS and its opening
	// parenthesis: DuckDB `NOT MATERIALIZED`.
	Inline() string
}

// NoGroupingSets is implemented by dialects whose engine has no GROUP BY
// GROUPING SETS (MySQL, MariaDB): the compiler prints one query per
// breakdown beside the overall one (compiler.Queries.Breakdowns). A UNION
// ALL of the groupings in one statement was tried first: MariaDB computes
// every CTE again for each reference, and the demo with two segments did
// not finish in ten minutes.
type NoGroupingSets interface {
	SeparateGroupings()
}

// Stager is implemented by dialects whose engine keeps a temporary table
// for the length of a connection. assay then computes the cohort (every
// exposed unit, its trigger, variant and exclusion reasons) once per run,
// in a setup statement, and the main and health queries read it, instead
// of each query computing it again.
type Stager interface {
	// CreateTemp is the statement prefix that creates, or replaces, the
	// temporary table name from the query that follows it.
	CreateTemp(name string) string
	// TempRef is how a query refers to the temporary table name.
	TempRef(name string) string
	// DropTemp is the statement that drops it, if it exists.
	DropTemp(name string) string
}

var registry = map[string]Dialect{}

// Register makes a dialect available by name; engine files call it from init.
func Register(d Dialect) { registry[d.Name()] = d }

// Lookup returns the dialect called name.
func Lookup(name string) (Dialect, error) {
	d, ok := registry[name]
	if !ok {
		return nil, fmt.Errorf("unknown dialect %q (known: %v)", name, Names())
	}
	return d, nil
}

// Names lists the registered dialects in sorted order.
func Names() []string {
	out := make([]string, 0, len(registry))
	for n := range registry {
		out = append(out, n)
	}
	sort.Strings(out)
	return out
}
