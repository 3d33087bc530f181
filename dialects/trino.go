package dialects

import (
	"github.com/assay-dev/assay/metrics/expr"
)

// Trino prints SQL for Trino (and Starburst; render-only: not executed in
// tests). Time columns are TIMESTAMP (without time zone) read as wall-clock
// time in the spec's time zone. Trino has no exact percentile aggregate
// (approx_percentile is approximate), so Quantile picks order statistics
// from a sorted array_agg, which holds one value per unit.
//
// Engine documentation:
// https://trino.io/docs/current/functions/aggregate.html,
// https://trino.io/docs/current/functions/datetime.html,
// https://trino.io/docs/current/functions/array.html and
// https://trino.io/docs/current/language/types.html.
type Trino struct{}

func init() { Register(Trino{}) }

// Name implements Dialect.
func (Trino) Name() string { return "trino" }

// Ident implements Dialect: double quotes, embedded quotes doubled.
func (Trino) Ident(name string) string { return quoteWith(name, '"') }

// String implements Dialect: single quotes doubled; no backslash escapes.
func (Trino) Literal(s string) string { return Postgres{}.Literal(s) }

// Table implements Dialect: catalog.schema.table.
func (d Trino) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (Trino) File(path string) (string, error) { return "", noFiles("trino", path) }

// Micros implements Dialect. with_timezone reads the wall-clock timestamp
// in the zone; to_unixtime returns double seconds, exact to the
// microsecond for the dates assay handles (|µs| < 2^53, about 285 years
// from 1970), and the cast to BIGINT rounds.
func (d Trino) Micros(x, tz string) string {
	if isUTC(tz) {
		tz = "UTC"
	}
	return "CAST(to_unixtime(with_timezone(" + x + ", " + d.Literal(tz) + ")) * 1000000 AS BIGINT)"
}

// Day implements Dialect.
func (d Trino) Day(us, tz string) string {
	if isUTC(tz) {
		tz = "UTC"
	}
	return "CAST(from_unixtime_nanos(" + us + " * 1000) AT TIME ZONE " + d.Literal(tz) + " AS DATE)"
}

// Text implements Dialect.
func (Trino) Text(x string) string { return "CAST(" + x + " AS VARCHAR)" }

// Double implements Dialect.
func (Trino) Double(x string) string { return "CAST(" + x + " AS DOUBLE)" }

// Fixed implements Dialect.
func (Trino) Fixed(x string) string { return "CAST(" + x + " AS DECIMAL(38, 10))" }

// VarSamp implements Dialect.
func (Trino) VarSamp(x string) string { return "var_samp(" + x + ")" }

// CovarSamp implements Dialect.
func (Trino) CovarSamp(x, y string) string { return "covar_samp(" + x + ", " + y + ")" }

// Quantile implements Dialect: percentile_cont's interpolation between the
// order statistics at floor(h) and ceil(h), h = (n−1)q, read with
// element_at (1-based) from the sorted non-NULL values.
func (Trino) Quantile(x string, q float64) string {
	h := "(count(" + x + ") - 1) * " + num(q)
	at := func(pos string) string {
		return "element_at(array_sort(array_agg(" + x + ") FILTER (WHERE " + x + " IS NOT NULL)), CAST(" + pos + " AS BIGINT) + 1)"
	}
	lo, hi := at("floor("+h+")"), at("ceiling("+h+")")
	return "(" + lo + " + (" + hi + " - " + lo + ") * (" + h + " - floor(" + h + ")))"
}

// Least implements Dialect.
func (Trino) Least(a, b string) string { return "least(" + a + ", " + b + ")" }

// OneZero implements Dialect with doubles: the engine averages a decimal
// literal to a limited scale.
func (d Trino) OneZero(cond string) string {
	return "CASE WHEN " + cond + " THEN " + d.Double("1") + " ELSE " + d.Double("0") + " END"
}

// Expr implements Dialect.
func (d Trino) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string {
			if name == "concat" {
				return concatOp(args)
			}
			return call(name, args)
		},
		cast: func(x string, to expr.Type) string {
			t := ansiType(to, "VARCHAR")
			if to == expr.TypeDouble {
				t = "DOUBLE"
			}
			return "CAST(" + x + " AS " + t + ")"
		},
	})
}
