package dialects

import (
	"strings"

	"github.com/assay-dev/assay/metrics/expr"
)

// Snowflake prints SQL for Snowflake (render-only: not executed in tests).
// Quoted identifiers are case-sensitive in Snowflake: write table and
// column names in the spec as they are stored (upper case for names that
// were created unquoted). Unquoted result columns (spec_fingerprint,
// variant, units) come back in upper case; assay analyze accepts that.
//
// Engine documentation:
// https://docs.snowflake.com/en/sql-reference/functions-aggregation,
// https://docs.snowflake.com/en/sql-reference/functions-date-time,
// https://docs.snowflake.com/en/sql-reference/data-types-text (string
// escapes) and https://docs.snowflake.com/en/sql-reference/identifiers-syntax.
type Snowflake struct{}

func init() { Register(Snowflake{}) }

// Name implements Dialect.
func (Snowflake) Name() string { return "snowflake" }

// Ident implements Dialect: double quotes, embedded quotes doubled.
func (Snowflake) Ident(name string) string { return quoteWith(name, '"') }

// String implements Dialect: Snowflake reads backslash escapes in
// single-quoted strings, so backslashes are escaped too.
func (Snowflake) Literal(s string) string { return escapeBackslash(s, "''") }

// Table implements Dialect: database.schema.table.
func (d Snowflake) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (Snowflake) File(path string) (string, error) { return "", noFiles("snowflake", path) }

// Micros implements Dialect. CONVERT_TIMEZONE with three arguments reads a
// TIMESTAMP_NTZ as wall-clock time in the source zone.
func (d Snowflake) Micros(x, tz string) string {
	if !isUTC(tz) {
		x = "CONVERT_TIMEZONE(" + d.Literal(tz) + ", 'UTC', " + x + ")"
	}
	return "DATE_PART(EPOCH_MICROSECOND, " + x + ")"
}

// Day implements Dialect.
func (d Snowflake) Day(us, tz string) string {
	ts := "TO_TIMESTAMP_NTZ(" + us + ", 6)"
	if !isUTC(tz) {
		ts = "CONVERT_TIMEZONE('UTC', " + d.Literal(tz) + ", " + ts + ")"
	}
	return "CAST(" + ts + " AS DATE)"
}

// Text implements Dialect.
func (Snowflake) Text(x string) string { return "CAST(" + x + " AS VARCHAR)" }

// Double implements Dialect.
func (Snowflake) Double(x string) string { return "CAST(" + x + " AS DOUBLE)" }

// Fixed implements Dialect.
func (Snowflake) Fixed(x string) string { return "CAST(" + x + " AS NUMBER(38, 10))" }

// VarSamp implements Dialect.
func (Snowflake) VarSamp(x string) string { return "VAR_SAMP(" + x + ")" }

// CovarSamp implements Dialect.
func (Snowflake) CovarSamp(x, y string) string { return "COVAR_SAMP(" + x + ", " + y + ")" }

// Quantile implements Dialect.
func (Snowflake) Quantile(x string, q float64) string {
	return "PERCENTILE_CONT(" + num(q) + ") WITHIN GROUP (ORDER BY " + x + ")"
}

// Least implements Dialect.
func (Snowflake) Least(a, b string) string { return "LEAST(" + a + ", " + b + ")" }

// OneZero implements Dialect with doubles: the engine averages a decimal
// literal to a limited scale.
func (d Snowflake) OneZero(cond string) string {
	return "CASE WHEN " + cond + " THEN " + d.Double("1") + " ELSE " + d.Double("0") + " END"
}

// Expr implements Dialect.
func (d Snowflake) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string { return call(strings.ToUpper(name), args) },
		cast: func(x string, to expr.Type) string {
			t := map[expr.Type]string{expr.TypeDouble: "DOUBLE", expr.TypeBigInt: "BIGINT", expr.TypeVarchar: "VARCHAR",
				expr.TypeDate: "DATE", expr.TypeTimestamp: "TIMESTAMP_NTZ", expr.TypeBoolean: "BOOLEAN"}[to]
			return "CAST(" + x + " AS " + t + ")"
		},
	})
}
