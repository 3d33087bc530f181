package dialects

import (
	"strings"

	"github.com/assay-dev/assay/metrics/expr"
)

// BigQuery prints GoogleSQL for BigQuery (render-only: not executed in
// tests). Time columns may be TIMESTAMP (an instant) or DATETIME (a wall
// clock, read in the spec's time zone); with a time zone other than UTC the
// time columns must be DATETIME. BigQuery has no exact percentile
// aggregate (PERCENTILE_CONT is analytic only), so Quantile picks order
// statistics from a sorted ARRAY_AGG; that array holds one value per unit
// and is bounded by BigQuery's row size limit.
//
// Engine documentation:
// https://cloud.google.com/bigquery/docs/reference/standard-sql/functions-and-operators,
// https://cloud.google.com/bigquery/docs/reference/standard-sql/statistical_aggregate_functions,
// https://cloud.google.com/bigquery/docs/reference/standard-sql/timestamp_functions and
// https://cloud.google.com/bigquery/docs/reference/standard-sql/lexical.
type BigQuery struct{}

func init() { Register(BigQuery{}) }

// Name implements Dialect.
func (BigQuery) Name() string { return "bigquery" }

// Ident implements Dialect: backticks; backslash and backtick escaped with
// a backslash.
func (BigQuery) Ident(name string) string {
	r := strings.NewReplacer(`\`, `\\`, "`", "\\`", "\n", `\n`, "\r", `\r`, "\t", `\t`)
	return "`" + r.Replace(name) + "`"
}

// String implements Dialect: backslash escapes; quoted strings cannot hold
// a raw newline.
func (BigQuery) Literal(s string) string { return escapeBackslash(s, `\'`) }

// Table implements Dialect: project.dataset.table, each part quoted.
func (d BigQuery) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (BigQuery) File(path string) (string, error) { return "", noFiles("bigquery", path) }

// Micros implements Dialect.
func (d BigQuery) Micros(x, tz string) string {
	if isUTC(tz) {
		return "UNIX_MICROS(CAST(" + x + " AS TIMESTAMP))"
	}
	return "UNIX_MICROS(TIMESTAMP(" + x + ", " + d.Literal(tz) + "))"
}

// Day implements Dialect.
func (d BigQuery) Day(us, tz string) string {
	if isUTC(tz) {
		return "DATE(TIMESTAMP_MICROS(" + us + "))"
	}
	return "DATE(TIMESTAMP_MICROS(" + us + "), " + d.Literal(tz) + ")"
}

// Text implements Dialect.
func (BigQuery) Text(x string) string { return "CAST(" + x + " AS STRING)" }

// Double implements Dialect.
func (BigQuery) Double(x string) string { return "CAST(" + x + " AS FLOAT64)" }

// Fixed implements Dialect.
// BigQuery has no DECIMAL(38, 10); BIGNUMERIC keeps 38 decimal places.
func (BigQuery) Fixed(x string) string { return "CAST(" + x + " AS BIGNUMERIC)" }

// VarSamp implements Dialect.
func (BigQuery) VarSamp(x string) string { return "VAR_SAMP(" + x + ")" }

// CovarSamp implements Dialect.
func (BigQuery) CovarSamp(x, y string) string { return "COVAR_SAMP(" + x + ", " + y + ")" }

// Quantile implements Dialect: percentile_cont's interpolation between the
// order statistics at floor(h) and ceil(h), h = (n−1)q, read by offset from
// the sorted array of non-NULL values.
func (BigQuery) Quantile(x string, q float64) string {
	h := "(COUNT(" + x + ") - 1) * " + num(q)
	at := func(pos string) string {
		return "ARRAY_AGG(" + x + " IGNORE NULLS ORDER BY " + x + ")[SAFE_OFFSET(CAST(" + pos + " AS INT64))]"
	}
	lo, hi := at("FLOOR("+h+")"), at("CEIL("+h+")")
	return "(" + lo + " + (" + hi + " - " + lo + ") * (" + h + " - FLOOR(" + h + ")))"
}

// Least implements Dialect.
func (BigQuery) Least(a, b string) string { return "LEAST(" + a + ", " + b + ")" }

// OneZero implements Dialect: 1.0 is a FLOAT64 literal in GoogleSQL.
func (BigQuery) OneZero(cond string) string { return "CASE WHEN " + cond + " THEN 1.0 ELSE 0.0 END" }

// Expr implements Dialect.
func (d BigQuery) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, true), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string {
			switch name {
			case "power":
				return call("POW", args)
			}
			return call(strings.ToUpper(name), args)
		},
		cast: func(x string, to expr.Type) string {
			t := map[expr.Type]string{expr.TypeDouble: "FLOAT64", expr.TypeBigInt: "INT64", expr.TypeVarchar: "STRING",
				expr.TypeDate: "DATE", expr.TypeTimestamp: "DATETIME", expr.TypeBoolean: "BOOL"}[to]
			return "CAST(" + x + " AS " + t + ")"
		},
	})
}
