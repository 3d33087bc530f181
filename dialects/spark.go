package dialects

import (
	"github.com/assay-dev/assay/metrics/expr"
)

// Spark prints Spark SQL for Apache Spark 3.4+ and Databricks
// (render-only: not executed in tests). The session time zone
// (spark.sql.session.timeZone) must be UTC: Spark reads TIMESTAMP values
// and casts to DATE in it. Percentile is Spark's exact percentile
// aggregate, which interpolates as percentile_cont does.
//
// Engine documentation:
// https://spark.apache.org/docs/latest/api/sql/index.html (built-in
// functions) and https://spark.apache.org/docs/latest/sql-ref-literals.html.
type Spark struct{}

func init() { Register(Spark{}) }

// Name implements Dialect.
func (Spark) Name() string { return "spark" }

// Ident implements Dialect: backticks, embedded backticks doubled.
func (Spark) Ident(name string) string { return quoteWith(name, '`') }

// String implements Dialect: Spark reads backslash escapes, and two
// adjacent literals 'a' 'b' concatenate, so a quote is escaped with a
// backslash rather than doubled.
func (Spark) Literal(s string) string { return escapeBackslash(s, `\'`) }

// Table implements Dialect: catalog.schema.table.
func (d Spark) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (Spark) File(path string) (string, error) { return "", noFiles("spark", path) }

// Micros implements Dialect. to_utc_timestamp reads the wall-clock time in
// the zone.
func (d Spark) Micros(x, tz string) string {
	if !isUTC(tz) {
		x = "to_utc_timestamp(" + x + ", " + d.Literal(tz) + ")"
	}
	return "unix_micros(" + x + ")"
}

// Day implements Dialect.
func (d Spark) Day(us, tz string) string {
	ts := "timestamp_micros(" + us + ")"
	if !isUTC(tz) {
		ts = "from_utc_timestamp(" + ts + ", " + d.Literal(tz) + ")"
	}
	return "CAST(" + ts + " AS DATE)"
}

// Text implements Dialect.
func (Spark) Text(x string) string { return "CAST(" + x + " AS STRING)" }

// Double implements Dialect.
func (Spark) Double(x string) string { return "CAST(" + x + " AS DOUBLE)" }

// Fixed implements Dialect.
func (Spark) Fixed(x string) string { return "CAST(" + x + " AS DECIMAL(38, 10))" }

// VarSamp implements Dialect.
func (Spark) VarSamp(x string) string { return "var_samp(" + x + ")" }

// CovarSamp implements Dialect.
func (Spark) CovarSamp(x, y string) string { return "covar_samp(" + x + ", " + y + ")" }

// Quantile implements Dialect.
func (Spark) Quantile(x string, q float64) string {
	return "percentile(" + x + ", " + num(q) + ")"
}

// Least implements Dialect.
func (Spark) Least(a, b string) string { return "least(" + a + ", " + b + ")" }

// OneZero implements Dialect with doubles: the engine averages a decimal
// literal to a limited scale.
func (d Spark) OneZero(cond string) string {
	return "CASE WHEN " + cond + " THEN " + d.Double("1") + " ELSE " + d.Double("0") + " END"
}

// Expr implements Dialect.
func (d Spark) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string {
			if name == "length" {
				return call("char_length", args)
			}
			return call(name, args)
		},
		cast: func(x string, to expr.Type) string {
			t := ansiType(to, "STRING")
			if to == expr.TypeDouble {
				t = "DOUBLE"
			}
			return "CAST(" + x + " AS " + t + ")"
		},
	})
}
