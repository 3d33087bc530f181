package dialects

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/assay-dev/assay/metrics/expr"
)

// Postgres prints SQL for PostgreSQL 12 and later (executed in CI on
// PostgreSQL 15). Since PostgreSQL 12 var_samp and covar_samp over double
// precision use the Youngs–Cramer algorithm, which is numerically stable.
// Engine documentation:
// https://www.postgresql.org/docs/current/functions-aggregate.html and
// https://www.postgresql.org/docs/current/functions-datetime.html.
type Postgres struct{}

func init() { Register(Postgres{}) }

// Name implements Dialect.
func (Postgres) Name() string { return "postgres" }

// Ident implements Dialect: double quotes, embedded quotes doubled.
func (Postgres) Ident(name string) string { return quoteWith(name, '"') }

// String implements Dialect: single quotes, embedded quotes doubled.
// Backslash is an ordinary character with standard_conforming_strings on,
// the default since PostgreSQL 9.1 (assay's executor sets it).
func (Postgres) Literal(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

// Table implements Dialect.
func (d Postgres) Table(parts []string) string { return joinParts(parts, d.Ident) }

// File implements Dialect: PostgreSQL reads tables, not the client's files.
func (Postgres) File(path string) (string, error) { return "", noFiles("postgres", path) }

// Micros implements Dialect. EXTRACT(EPOCH FROM timestamp) reads a
// timestamp without time zone as UTC and gives the instant of a timestamp
// with time zone; it returns numeric (PostgreSQL 14+), so the product is
// exact. With a time zone, a timestamp without time zone is wall-clock
// time in tz (x AT TIME ZONE tz), and a timestamp with time zone keeps its
// instant, as in DuckDB.
func (d Postgres) Micros(x, tz string) string {
	epoch := func(v string) string { return "CAST(EXTRACT(EPOCH FROM " + v + ") * 1000000 AS BIGINT)" }
	if isUTC(tz) {
		return epoch(x)
	}
	return "CASE WHEN pg_typeof(" + x + ") = 'timestamp with time zone'::regtype THEN " + epoch(x) +
		" ELSE " + epoch(x+" AT TIME ZONE "+d.Literal(tz)) + " END"
}

// Day implements Dialect with exact interval arithmetic from the epoch.
func (d Postgres) Day(us, tz string) string {
	ts := "TIMESTAMP '1970-01-01 00:00:00' + " + us + " * INTERVAL '1 microsecond'"
	if isUTC(tz) {
		return "CAST(" + ts + " AS DATE)"
	}
	return "CAST((" + ts + ") AT TIME ZONE 'UTC' AT TIME ZONE " + d.Literal(tz) + " AS DATE)"
}

// Text implements Dialect.
func (Postgres) Text(x string) string { return "CAST(" + x + " AS TEXT)" }

// Double implements Dialect.
func (Postgres) Double(x string) string { return "CAST(" + x + " AS DOUBLE PRECISION)" }

// Fixed implements Dialect.
func (Postgres) Fixed(x string) string { return "CAST(" + x + " AS NUMERIC(38, 10))" }

// VarSamp implements Dialect.
func (Postgres) VarSamp(x string) string { return "var_samp(" + x + ")" }

// CovarSamp implements Dialect.
func (Postgres) CovarSamp(x, y string) string { return "covar_samp(" + x + ", " + y + ")" }

// Quantile implements Dialect with the ordered-set aggregate percentile_cont.
func (Postgres) Quantile(x string, q float64) string {
	return "percentile_cont(" + num(q) + ") WITHIN GROUP (ORDER BY " + x + ")"
}

// Least implements Dialect.
func (Postgres) Least(a, b string) string { return "least(" + a + ", " + b + ")" }

// OneZero implements Dialect: avg and var_samp of numeric are exact.
func (Postgres) OneZero(cond string) string { return "CASE WHEN " + cond + " THEN 1.0 ELSE 0.0 END" }

// Expr implements Dialect.
func (d Postgres) Expr(n expr.Node, col func(string) string) string {
	return expr.Render(safeDivision(n, false), style{
		d:   d,
		col: col, str: d.Literal,
		fn: func(name string, args []string) string {
			switch name {
			case "length":
				return call("char_length", args)
			case "concat":
				return concatOp(args)
			case "round":
				if len(args) == 2 {
					// round(double precision, int) does not exist.
					return "round(CAST(" + args[0] + " AS NUMERIC), " + args[1] + ")"
				}
			case "mod":
				return "mod(CAST(" + args[0] + " AS NUMERIC), CAST(" + args[1] + " AS NUMERIC))"
			}
			return call(name, args)
		},
		cast: func(x string, to expr.Type) string {
			return "CAST(" + x + " AS " + ansiType(to, "TEXT") + ")"
		},
	})
}

// ---- helpers shared by the dialects ----

// ErrNoFiles is the error a dialect's File returns when its engine cannot
// read the local files that DuckDB reads (every dialect but duckdb).
var ErrNoFiles = errors.New("files are read by DuckDB only")

// style is an expr.Style assembled from functions.
type style struct {
	col  func(string) string
	str  func(string) string
	fn   func(name string, args []string) string
	cast func(x string, to expr.Type) string
	d    Dialect // prints the local-time functions
}

func (s style) Column(name string) string              { return s.col(name) }
func (s style) String(v string) string                 { return s.str(v) }
func (s style) Func(name string, args []string) string { return s.fn(name, args) }
func (s style) Cast(x string, to expr.Type) string     { return s.cast(x, to) }
func (s style) Local(f *expr.Func, x string) string    { return localCall(s.d, f, x) }
func call(name string, args []string) string           { return name + "(" + strings.Join(args, ", ") + ")" }
func concatOp(args []string) string                    { return "(" + strings.Join(args, " || ") + ")" }
func isUTC(tz string) bool                             { return tz == "" || tz == "UTC" }
func num(q float64) string                             { return strconv.FormatFloat(q, 'g', -1, 64) }
func noFiles(engine, path string) error {
	return fmt.Errorf("%w: the %s dialect cannot read the file %q; load it into a table and name it with table = \"schema.table\"", ErrNoFiles, engine, path)
}

// joinParts quotes each part of a qualified name. A part written in the
// spec as a "quoted identifier" (mail."digest sends") is unquoted first,
// so that its quotes are not taken as part of the name.
func joinParts(parts []string, q func(string) string) string {
	return joinMap(parts, func(p string) string {
		if len(p) >= 2 && p[0] == '"' && p[len(p)-1] == '"' {
			p = strings.ReplaceAll(p[1:len(p)-1], `""`, `"`)
		}
		return q(p)
	}, ".")
}

func joinMap(parts []string, f func(string) string, sep string) string {
	out := make([]string, len(parts))
	for i, p := range parts {
		out[i] = f(p)
	}
	return strings.Join(out, sep)
}

// quoteWith quotes an identifier with q, doubling embedded q.
func quoteWith(name string, q byte) string {
	s := string(q)
	return s + strings.ReplaceAll(name, s, s+s) + s
}

// ansiType spells a cast target in standard SQL, with text as the name
// of the character string type.
func ansiType(t expr.Type, text string) string {
	switch t {
	case expr.TypeDouble:
		return "DOUBLE PRECISION"
	case expr.TypeBigInt:
		return "BIGINT"
	case expr.TypeVarchar:
		return text
	case expr.TypeDate:
		return "DATE"
	case expr.TypeTimestamp:
		return "TIMESTAMP"
	case expr.TypeBoolean:
		return "BOOLEAN"
	}
	return text
}

// escapeBackslash returns s as a single-quoted literal for engines that
// read backslash escapes in string literals: backslash and quote are
// escaped with a backslash, and control characters are written as escapes
// so that the literal stays on one line.
func escapeBackslash(s string, quote string) string {
	var b strings.Builder
	b.WriteByte('\'')
	for _, r := range s {
		switch r {
		case '\\':
			b.WriteString(`\\`)
		case '\'':
			b.WriteString(quote)
		case '\n':
			b.WriteString(`\n`)
		case '\r':
			b.WriteString(`\r`)
		case '\t':
			b.WriteString(`\t`)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('\'')
	return b.String()
}

// safeDivision returns a copy of n in which every division a / b is
// rewritten as CAST(a AS DOUBLE) / nullif(CAST(b AS DOUBLE), 0): the
// quotient of two numbers is a double, as in DuckDB, even for integers
// (which PostgreSQL, Trino and Redshift would truncate), and a zero
// divisor gives NULL rather than an error. With modFunc, a % b becomes
// mod(a, b) for engines without the % operator. The input is not changed.
func safeDivision(n expr.Node, modFunc bool) expr.Node {
	var rw func(expr.Node) expr.Node
	list := func(ns []expr.Node) []expr.Node {
		out := make([]expr.Node, len(ns))
		for i, x := range ns {
			out[i] = rw(x)
		}
		return out
	}
	rw = func(n expr.Node) expr.Node {
		switch n := n.(type) {
		case *expr.Binary:
			c := *n
			c.L, c.R = rw(n.L), rw(n.R)
			if c.Op == "/" {
				c.L = &expr.Cast{X: c.L, To: expr.TypeDouble, Sp: n.Sp}
				c.R = &expr.Func{Name: "nullif", Args: []expr.Node{
					&expr.Cast{X: c.R, To: expr.TypeDouble, Sp: n.Sp},
					&expr.Literal{Kind: expr.LitInt, Text: "0", Sp: n.Sp},
				}, Sp: n.Sp}
			}
			if c.Op == "%" && modFunc {
				return &expr.Func{Name: "mod", Args: []expr.Node{c.L, c.R}, Sp: n.Sp}
			}
			return &c
		case *expr.Unary:
			c := *n
			c.X = rw(n.X)
			return &c
		case *expr.Func:
			c := *n
			c.Args = list(n.Args)
			return &c
		case *expr.Cast:
			c := *n
			c.X = rw(n.X)
			return &c
		case *expr.Case:
			c := *n
			if n.Operand != nil {
				c.Operand = rw(n.Operand)
			}
			c.Whens = make([]expr.When, len(n.Whens))
			for i, w := range n.Whens {
				c.Whens[i] = expr.When{Cond: rw(w.Cond), Result: rw(w.Result)}
			}
			if n.Else != nil {
				c.Else = rw(n.Else)
			}
			return &c
		case *expr.In:
			c := *n
			c.X, c.List = rw(n.X), list(n.List)
			return &c
		case *expr.Between:
			c := *n
			c.X, c.Lo, c.Hi = rw(n.X), rw(n.Lo), rw(n.Hi)
			return &c
		case *expr.IsNull:
			c := *n
			c.X = rw(n.X)
			return &c
		case *expr.Like:
			c := *n
			c.X, c.Pattern = rw(n.X), rw(n.Pattern)
			return &c
		}
		return n
	}
	if n == nil {
		return nil
	}
	return rw(n)
}

// polarCovar is the sample covariance from three stable sample variances
// by the polarization identity cov(x, y) = (var(x+y) − var(x) − var(y))/2,
// for engines that have a stable VAR_SAMP but no covariance aggregate. The
// pairs where either value is NULL are left out of all three, as
// covar_samp does.
func polarCovar(varSamp func(string) string, x, y string) string {
	bx := "CASE WHEN " + y + " IS NOT NULL THEN " + x + " END"
	by := "CASE WHEN " + x + " IS NOT NULL THEN " + y + " END"
	return "(" + varSamp(x+" + "+y) + " - " + varSamp(bx) + " - " + varSamp(by) + ") / 2"
}
