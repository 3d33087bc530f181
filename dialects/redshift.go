package dialects

import (
	"github.com/assay-dev/assay/metrics/expr"
)

// Redshift prints SQL for Amazon Redshift (render-only: not executed in
// tests). Redshift has VAR_SAMP but no covariance aggregate, so CovarSamp
// uses the polarization identity over VAR_SAMP. PERCENTILE_CONT is an
// aggregate, but Redshift requires every sort-based aggregate of one query
// to share its ORDER BY: a spec with two different cap_quantile columns
// fails there.
//
// Engine documentation:
// https://docs.aws.amazon.com/redshift/latest/dg/c_Aggregate_Functions.html,
// https://docs.aws.amazon.com/redshift/latest/dg/Date_functions_header.html,
// https://docs.aws.amazon.com/redshift/latest/dg/r_QUOTE_LITERAL.html
// (quotes and backslashes are doubled in literals) and
// https://docs.aws.amazon.com/redshift/latest/dg/r_names.html.
type Redshift struct{}

func init() { Register(Redshift{}) }

// Name implements Dialect.
func (Redshift) Name() string { return "redshift" }

// Ident implements Dialect: double quotes, embedded quotes doubled.
func (Redshift) Ident(name string) string { return quoteWith(name, '"') }

// String implements Dialect: backslash is an escape character in Redshift
// literals, so it is escaped as well.
func (Redshift) Literal(s string) string { return escapeBackslash(s, "''") }

// Table implements Dialect: database.schema.table.
func (d Redshift) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (Redshift) File(path string) (string, error) { return "", noFiles("redshift", path) }

// Micros implements Dialect. CONVERT_TIMEZONE with three arguments reads a
// TIMESTAMP as wall-clock time in the source zone.
func (d Redshift) Micros(x, tz string) string {
	if !isUTC(tz) {
		x = "CONVERT_TIMEZONE(" + d.Literal(tz) + ", 'UTC', " + x + ")"
	}
	return "DATEDIFF(microsecond, TIMESTAMP '1970-01-01 00:00:00', " + x + ")"
}

// Day implements Dialect. Whole seconds are enough for the date, and keep
// the interval product in integers.
func (d Redshift) Day(us, tz string) string {
	ts := "TIMESTAMP '1970-01-01 00:00:00' + (" + us + " / 1000000) * INTERVAL '1 second'"
	if !isUTC(tz) {
		ts = "CONVERT_TIMEZONE('UTC', " + d.Literal(tz) + ", " + ts + ")"
	}
	return "CAST(" + ts + " AS DATE)"
}

// Text implements Dialect. A VARCHAR without a length is VARCHAR(256) in
// Redshift.
func (Redshift) Text(x string) string { return "CAST(" + x + " AS VARCHAR(65535))" }

// Double implements Dialect.
func (Redshift) Double(x string) string { return "CAST(" + x + " AS DOUBLE PRECISION)" }

// Fixed implements Dialect.
func (Redshift) Fixed(x string) string { return "CAST(" + x + " AS DECIMAL(38, 10))" }

// VarSamp implements Dialect.
func (Redshift) VarSamp(x string) string { return "VAR_SAMP(" + x + ")" }

// CovarSamp implements Dialect by polarization over VAR_SAMP.
func (d Redshift) CovarSamp(x, y string) string { return polarCovar(d.VarSamp, x, y) }

// Quantile implements Dialect.
func (Redshift) Quantile(x string, q float64) string {
	return "PERCENTILE_CONT(" + num(q) + ") WITHIN GROUP (ORDER BY " + x + ")"
}

// Least implements Dialect.
func (Redshift) Least(a, b string) string { return "LEAST(" + a + ", " + b + ")" }

// OneZero implements Dialect with doubles: the engine averages a decimal
// literal to a limited scale.
func (d Redshift) OneZero(cond string) string {
	return "CASE WHEN " + cond + " THEN " + d.Double("1") + " ELSE " + d.Double("0") + " END"
}

// Expr implements Dialect.
func (d Redshift) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string {
			switch name {
			case "concat":
				return concatOp(args)
			case "substr":
				return call("SUBSTRING", args)
			}
			return call(name, args)
		},
		cast: func(x string, to expr.Type) string {
			return "CAST(" + x + " AS " + ansiType(to, "VARCHAR(65535)") + ")"
		},
	})
}
