package dialects

import (
	"strings"

	"github.com/assay-dev/assay/metrics/expr"
)

// MySQL prints SQL for the MySQL family: MySQL 8.0.17+ and MariaDB 10.6+
// (executed in CI on MariaDB). It needs the session settings that assay's
// executor makes (engine.OpenMySQL): time_zone '+00:00', a sql_mode without
// NO_BACKSLASH_ESCAPES, a group_concat_max_len large enough for the pooled
// quantile caps, and time zone tables loaded when the spec names a time
// zone other than UTC (CONVERT_TZ returns NULL without them).
//
// Strings compare with the binary collation utf8mb4_bin, as every other
// engine compares them, rather than the case-insensitive default: variant
// names and string literals of user expressions carry COLLATE utf8mb4_bin.
//
// VAR_SAMP uses a stable recurrence (Welford); there is no covariance
// aggregate, so CovarSamp uses the polarization identity over VAR_SAMP.
// There is no percentile aggregate either, so Quantile interpolates between
// the two order statistics read from a sorted GROUP_CONCAT (doubles are
// printed as shortest round-trip decimals).
//
// Engine documentation:
// https://dev.mysql.com/doc/refman/8.0/en/aggregate-functions.html,
// https://dev.mysql.com/doc/refman/8.0/en/date-and-time-functions.html,
// https://dev.mysql.com/doc/refman/8.0/en/string-literals.html and
// https://mariadb.com/kb/en/built-in-functions/.
type MySQL struct{}

func init() { Register(MySQL{}) }

// Name implements Dialect.
func (MySQL) Name() string { return "mysql" }

// Ident implements Dialect: backticks, embedded backticks doubled.
func (MySQL) Ident(name string) string { return quoteWith(name, '`') }

// String implements Dialect: backslash escapes (MySQL reads them unless
// sql_mode has NO_BACKSLASH_ESCAPES), quotes doubled.
func (MySQL) Literal(s string) string { return escapeBackslash(s, "''") }

// Table implements Dialect: database.table.
func (d MySQL) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect.
func (MySQL) File(path string) (string, error) { return "", noFiles("mysql", path) }

const mysqlEpoch = "TIMESTAMP '1970-01-01 00:00:00'"

// Micros implements Dialect. TIMESTAMPDIFF on a DATETIME is plain calendar
// arithmetic; a TIMESTAMP column is read in the session time zone, which
// the executor sets to UTC.
func (d MySQL) Micros(x, tz string) string {
	if !isUTC(tz) {
		x = "CONVERT_TZ(" + x + ", " + d.Literal(tz) + ", '+00:00')"
	}
	return "TIMESTAMPDIFF(MICROSECOND, " + mysqlEpoch + ", " + x + ")"
}

// Day implements Dialect.
func (d MySQL) Day(us, tz string) string {
	ts := "TIMESTAMPADD(MICROSECOND, " + us + ", " + mysqlEpoch + ")"
	if !isUTC(tz) {
		ts = "CONVERT_TZ(" + ts + ", '+00:00', " + d.Literal(tz) + ")"
	}
	return "DATE(" + ts + ")"
}

// Text implements Dialect: a utf8mb4 string with the binary collation.
func (MySQL) Text(x string) string {
	return "CAST(" + x + " AS CHAR CHARACTER SET utf8mb4) COLLATE utf8mb4_bin"
}

// Double implements Dialect (MySQL 8.0.17+, MariaDB 10.4+).
func (MySQL) Double(x string) string { return "CAST(" + x + " AS DOUBLE)" }

// Fixed implements Dialect.
func (MySQL) Fixed(x string) string { return "CAST(" + x + " AS DECIMAL(38, 10))" }

// VarSamp implements Dialect.
func (MySQL) VarSamp(x string) string { return "VAR_SAMP(" + x + ")" }

// CovarSamp implements Dialect by polarization over the stable VAR_SAMP.
func (d MySQL) CovarSamp(x, y string) string { return polarCovar(d.VarSamp, x, y) }

// Quantile implements Dialect: the continuous quantile at position
// h = (n−1)q of the sorted non-NULL values, interpolated between the order
// statistics floor(h) and ceil(h) (0-based), as percentile_cont does.
func (MySQL) Quantile(x string, q float64) string {
	sorted := "GROUP_CONCAT(" + x + " ORDER BY " + x + " SEPARATOR ',')"
	h := "(COUNT(" + x + ") - 1) * " + num(q)
	at := func(pos string) string {
		return "CAST(SUBSTRING_INDEX(SUBSTRING_INDEX(" + sorted + ", ',', " + pos + " + 1), ',', -1) AS DOUBLE)"
	}
	lo, hi := at("FLOOR("+h+")"), at("CEILING("+h+")")
	return "(" + lo + " + (" + hi + " - " + lo + ") * (" + h + " - FLOOR(" + h + ")))"
}

// Least implements Dialect.
func (MySQL) Least(a, b string) string { return "LEAST(" + a + ", " + b + ")" }

// OneZero implements Dialect with doubles: the engine averages a decimal
// literal to a limited scale.
func (d MySQL) OneZero(cond string) string {
	return "CASE WHEN " + cond + " THEN " + d.Double("1") + " ELSE " + d.Double("0") + " END"
}

// Expr implements Dialect.
func (d MySQL) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col,
		str: func(s string) string { return "_utf8mb4" + d.Literal(s) + " COLLATE utf8mb4_bin" },
		fn: func(name string, args []string) string {
			switch name {
			case "length":
				return call("CHAR_LENGTH", args)
			case "substr":
				return call("SUBSTRING", args)
			case "ceil":
				return call("CEILING", args)
			}
			return call(strings.ToUpper(name), args)
		},
		cast: func(x string, to expr.Type) string {
			switch to {
			case expr.TypeBigInt:
				return "CAST(" + x + " AS SIGNED)"
			case expr.TypeVarchar:
				return d.Text(x)
			case expr.TypeTimestamp:
				return "CAST(" + x + " AS DATETIME(6))"
			case expr.TypeBoolean:
				// No BOOLEAN cast target: a number is true when non-zero.
				return "(" + x + " <> 0)"
			case expr.TypeDate:
				return "CAST(" + x + " AS DATE)"
			}
			return "CAST(" + x + " AS DOUBLE)"
		},
	})
}

// SeparateGroupings implements NoGroupingSets: MySQL and MariaDB have
// ROLLUP but not GROUPING SETS.
func (MySQL) SeparateGroupings() {}
