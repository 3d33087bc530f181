package dialects_test

// Render-only dialects are validated as far as this machine allows:
//
//   - every dialect's output, for every golden spec, the demo and a spec
//     that uses every allow-listed expression function, is lexed with the
//     dialect's own quoting rules: every string literal, quoted identifier
//     and parenthesis must close, and each literal must read back to the
//     text it was printed from;
//   - every function called in the output must be on the dialect's
//     allow-list below, which names the engine documentation page it was
//     checked against;
//   - the mysql output must parse with the TiDB parser (MySQL grammar).
//
// PostgreSQL and MariaDB also execute the SQL in ../crossengine.

import (
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"github.com/pingcap/tidb/pkg/parser"
	_ "github.com/pingcap/tidb/pkg/parser/test_driver"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

// Functions each dialect's output may call, lower case. The local-time
// and stored-time functions (date_trunc, hour, isodow, strptime,
// to_timestamp, str_to_date, weekday, date_sub, parse_datetime, dateadd,
// dayofweekiso, date_parse, day_of_week) were added from the same pages,
// from memory of them. Aggregates and
// window functions included; CAST, EXTRACT and type names with a length
// such as VARCHAR(65535) are syntax, not calls.
var allowed = map[string][]string{
	// https://duckdb.org/docs/sql/functions/overview (aggregates:
	// /docs/sql/functions/aggregates, timestamps:
	// /docs/sql/functions/timestamptz, files: /docs/data/overview)
	"duckdb": {"date_trunc", "hour", "isodow", "strptime", "abs", "max", "min", "avg", "ceil", "coalesce", "concat", "count", "covar_samp", "epoch_us", "exp", "floor",
		"greatest", "least", "length", "ln", "lower", "make_timestamp", "mod", "nullif", "pow", "quantile_cont",
		"read_csv", "read_json", "read_parquet", "round", "row_number", "sign", "sqrt", "substr", "sum", "timezone",
		"trim", "typeof", "upper", "var_samp"},
	// https://www.postgresql.org/docs/current/functions-aggregate.html,
	// /functions-math.html, /functions-string.html, /functions-window.html
	"postgres": {"date_trunc", "to_timestamp", "abs", "max", "min", "avg", "ceil", "char_length", "coalesce", "count", "covar_samp", "exp", "floor", "greatest",
		"least", "ln", "lower", "mod", "nullif", "percentile_cont", "pg_typeof", "power", "round", "row_number",
		"sign", "sqrt", "substr", "sum", "trim", "upper", "var_samp"},
	// https://dev.mysql.com/doc/refman/8.0/en/built-in-function-reference.html
	// and https://mariadb.com/kb/en/built-in-functions/ (both list each one)
	"mysql": {"date_sub", "hour", "str_to_date", "weekday", "abs", "max", "min", "avg", "ceiling", "char_length", "coalesce", "concat", "convert_tz", "count", "date", "exp",
		"floor", "greatest", "group_concat", "least", "ln", "lower", "mod", "nullif", "power", "round", "row_number",
		"sign", "sqrt", "substring", "substring_index", "sum", "timestampadd", "timestampdiff", "trim", "upper",
		"var_samp"},
	// https://cloud.google.com/bigquery/docs/reference/standard-sql/functions-all
	"bigquery": {"date_trunc", "parse_datetime", "abs", "max", "min", "array_agg", "avg", "ceil", "coalesce", "concat", "count", "covar_samp", "date", "exp",
		"floor", "greatest", "least", "length", "ln", "lower", "mod", "nullif", "pow", "round", "row_number",
		"safe_offset", "sign", "sqrt", "substr", "sum", "timestamp", "timestamp_micros", "trim", "unix_micros",
		"upper", "var_samp"},
	// https://docs.snowflake.com/en/sql-reference/functions-all
	"snowflake": {"dateadd", "dayofweekiso", "hour", "abs", "max", "min", "avg", "ceil", "coalesce", "concat", "convert_timezone", "count", "covar_samp", "date_part",
		"exp", "floor", "greatest", "least", "length", "ln", "lower", "mod", "nullif", "percentile_cont", "power",
		"round", "row_number", "sign", "sqrt", "substr", "sum", "to_timestamp_ntz", "trim", "upper", "var_samp"},
	// https://trino.io/docs/current/functions/list.html
	"trino": {"date_parse", "date_trunc", "day_of_week", "hour", "abs", "max", "min", "array_agg", "array_sort", "avg", "ceil", "ceiling", "coalesce", "count", "covar_samp",
		"element_at", "exp", "floor", "from_unixtime_nanos", "greatest", "least", "length", "ln", "lower", "mod",
		"nullif", "power", "round", "row_number", "sign", "sqrt", "substr", "sum", "to_unixtime", "trim", "upper",
		"var_samp", "with_timezone"},
	// https://spark.apache.org/docs/latest/api/sql/index.html
	"spark": {"date_trunc", "hour", "to_timestamp", "weekday", "abs", "max", "min", "avg", "ceil", "char_length", "coalesce", "concat", "count", "covar_samp", "exp", "floor",
		"from_utc_timestamp", "greatest", "least", "ln", "lower", "mod", "nullif", "percentile", "power", "round",
		"row_number", "sign", "sqrt", "substr", "sum", "timestamp_micros", "to_utc_timestamp", "trim",
		"unix_micros", "upper", "var_samp"},
	// https://docs.aws.amazon.com/redshift/latest/dg/c_SQL_functions.html
	"redshift": {"date_trunc", "to_timestamp", "abs", "max", "min", "avg", "ceil", "coalesce", "convert_timezone", "count", "datediff", "exp", "floor",
		"greatest", "least", "length", "ln", "lower", "mod", "nullif", "percentile_cont", "power", "round",
		"row_number", "sign", "sqrt", "substring", "sum", "trim", "upper", "var_samp"},
}

// notCalls are words that precede "(" in the output without being
// function calls: keywords and parameterised type names.
var notCalls = map[string]bool{
	"as": true, "in": true, "exists": true, "over": true, "from": true, "join": true, "and": true, "or": true,
	"not": true, "when": true, "then": true, "else": true, "where": true, "on": true, "cast": true, "extract": true,
	"filter": true, "group": true, "select": true, "by": true, "varchar": true, "datetime": true, "char": true,
	"decimal": true, "numeric": true, "number": true, "values": true, "using": true, "all": true,
}

// lexRules are a dialect's quoting rules.
type lexRules struct {
	identQuote     byte // '"' or '`'
	backslash      bool // string literals read backslash escapes
	identBackslash bool // quoted identifiers read backslash escapes (BigQuery)
}

var rules = map[string]lexRules{
	"duckdb": {'"', false, false}, "postgres": {'"', false, false}, "trino": {'"', false, false},
	"mysql": {'`', true, false}, "bigquery": {'`', true, true}, "spark": {'`', true, false},
	"snowflake": {'"', true, false}, "redshift": {'"', true, false},
}

// lexed is what lex found in a query.
type lexed struct {
	calls   []string // lower-case names called
	strings []string // string literal values, unescaped
	idents  []string // quoted identifier names, unescaped
}

// lex scans q with the dialect's rules; it fails on an unterminated
// literal, quoted identifier or comment, and on unbalanced parentheses.
func lex(q string, r lexRules) (*lexed, error) {
	out := &lexed{}
	depth := 0
	i := 0
	for i < len(q) {
		c := q[i]
		switch {
		case c == '-' && i+1 < len(q) && q[i+1] == '-':
			j := strings.IndexByte(q[i:], '\n')
			if j < 0 {
				return nil, fmt.Errorf("comment at byte %d does not end with a newline", i)
			}
			i += j + 1
		case c == '\'':
			var b strings.Builder
			j := i + 1
			for {
				if j >= len(q) {
					return nil, fmt.Errorf("string literal at byte %d is not closed", i)
				}
				if q[j] == '\n' {
					return nil, fmt.Errorf("string literal at byte %d holds a raw newline", i)
				}
				if r.backslash && q[j] == '\\' && j+1 < len(q) {
					e := q[j+1]
					switch e {
					case 'n':
						b.WriteByte('\n')
					case 'r':
						b.WriteByte('\r')
					case 't':
						b.WriteByte('\t')
					default:
						b.WriteByte(e)
					}
					j += 2
					continue
				}
				if q[j] == '\'' {
					if j+1 < len(q) && q[j+1] == '\'' {
						b.WriteByte('\'')
						j += 2
						continue
					}
					break
				}
				b.WriteByte(q[j])
				j++
			}
			out.strings = append(out.strings, b.String())
			i = j + 1
		case c == r.identQuote || c == '"' || c == '`':
			if c != r.identQuote {
				return nil, fmt.Errorf("quote %q at byte %d is not this dialect's identifier quote %q", c, i, r.identQuote)
			}
			var b strings.Builder
			j := i + 1
			for {
				if j >= len(q) {
					return nil, fmt.Errorf("quoted identifier at byte %d is not closed", i)
				}
				if r.identBackslash && q[j] == '\\' && j+1 < len(q) {
					b.WriteByte(q[j+1])
					j += 2
					continue
				}
				if q[j] == c {
					if j+1 < len(q) && q[j+1] == c {
						b.WriteByte(c)
						j += 2
						continue
					}
					break
				}
				b.WriteByte(q[j])
				j++
			}
			out.idents = append(out.idents, b.String())
			i = j + 1
		case c == '(':
			depth++
			i++
		case c == ')':
			depth--
			if depth < 0 {
				return nil, fmt.Errorf("unbalanced ')' at byte %d", i)
			}
			i++
		case c == '_' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z':
			j := i
			for j < len(q) && (q[j] == '_' || q[j] >= 'a' && q[j] <= 'z' || q[j] >= 'A' && q[j] <= 'Z' || q[j] >= '0' && q[j] <= '9') {
				j++
			}
			word := strings.ToLower(q[i:j])
			if j < len(q) && q[j] == '(' && !notCalls[word] {
				out.calls = append(out.calls, word)
			}
			i = j
		default:
			i++
		}
	}
	if depth != 0 {
		return nil, fmt.Errorf("%d parenthesis(es) not closed", depth)
	}
	return out, nil
}

var fileSource = regexp.MustCompile(`(?m)^file = "([^"]*?)([A-Za-z_]+)\.(parquet|csv|json)"`)

// testSpecs returns every spec the dialect tests compile: name → path.
// For dialects other than duckdb, file sources are rewritten to tables.
func testSpecs(t *testing.T, tables bool) map[string]string {
	t.Helper()
	paths, _ := filepath.Glob("../testdata/golden/*/spec.toml")
	local, _ := filepath.Glob("testdata/golden/*/spec.toml")
	paths = append(append(paths, local...), "../testdata/demo/reorder.toml")
	out := map[string]string{}
	dir := t.TempDir()
	for _, p := range paths {
		name := filepath.Base(filepath.Dir(p))
		if strings.HasSuffix(p, "reorder.toml") {
			name = "demo"
		}
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		text := string(b)
		// A copy of the demo uses the demo's shared library and calendar,
		// by absolute path.
		lib, _ := filepath.Abs("../testdata/library/grocery.toml")
		text = strings.Replace(text, `library = "../library/grocery.toml"`, `library = "`+filepath.ToSlash(lib)+`"`, 1)
		cal, _ := filepath.Abs("../testdata/library/grocery-calendar.toml")
		text = strings.Replace(text, `files = ["../library/grocery-calendar.toml"]`, `files = ["`+filepath.ToSlash(cal)+`"]`, 1)
		if tables {
			text = fileSource.ReplaceAllString(text, `table = "fixtures.$2"`)
		}
		f := filepath.Join(dir, name+".toml")
		if err := os.WriteFile(f, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		out[name] = f
	}
	out["functions"] = filepath.Join(dir, "functions.toml")
	if err := os.WriteFile(out["functions"], []byte(functionsSpec), 0o644); err != nil {
		t.Fatal(err)
	}
	return out
}

// functionsSpec uses every allow-listed expression function, every cast
// target and the awkward literals.
const functionsSpec = `[experiment]
id = "functions"
hypothesis = "Every expression function and cast is printed in each dialect's spelling."
start = 2026-05-01T00:00:00Z
end = 2026-05-29T00:00:00Z
time_zone = "America/New_York"

[variants]
"it's" = 0.5
'back\slash' = 0.5

[sources.ex]
table = "db.ex"
unit = "u"
time = "t"
columns = ["u", "v", "t", "a", "b", "s", "odd ` + "`" + ` col\"q"]

[exposure]
source = "ex"
variant = "v"
filter = '''lower(s) = 'x' OR upper(trim(s)) LIKE 'A%' OR substr(s, 1, 2) IN ('ab', 'cd') OR concat(s, 'it''s', s) = 'a\b' OR CAST(a AS VARCHAR) = '' OR CAST('2026-05-01' AS DATE) IS NULL OR CAST('2026-05-01 00:00:00' AS TIMESTAMP) IS NOT NULL OR local_date(t) = CAST('2026-05-01' AS DATE) OR local_week(t) = CAST('2026-04-27' AS DATE) OR local_hour(t) = 9 OR local_weekday(t) = 7 OR CAST(a AS BOOLEAN) OR a BETWEEN 1 AND 2 OR CASE WHEN a > 1 THEN TRUE ELSE FALSE END OR "odd ` + "`" + ` col""q" = 'tab	here''''

[metrics.everything]
role = "primary"
kind = "sum"
source = "ex"
value = '''abs(a) + ceil(a) + floor(a) + round(a, 2) + round(a) + sqrt(abs(a)) + ln(abs(a) + 1) + exp(0.5) + power(a, 2) + mod(b, 3) + sign(a) + coalesce(a, 0) + nullif(a, 0) + greatest(a, 1) + least(a, 1) + length(s) + a / b + b % 2 + CAST(s AS DOUBLE PRECISION) + CAST(a AS BIGINT) + -a'''
cap_quantile = 0.9
window = ["0d", "7d"]

[metrics.ratio]
role = "secondary"
kind = "ratio"
window = ["0d", "7d"]
numerator = { source = "ex", kind = "sum", value = "a" }
denominator = { source = "ex", kind = "count" }
`

func compile(t *testing.T, spec string, d dialects.Dialect) []string {
	t.Helper()
	s, src, ds := metrics.LoadFile(spec)
	if ds.HasErrors() {
		var b strings.Builder
		for _, x := range ds {
			b.WriteString(x.Long(src))
		}
		t.Fatalf("%s:\n%s", spec, b.String())
	}
	p, ds := compiler.Compile(s, compiler.Options{})
	if ds.HasErrors() {
		t.Fatalf("%s: %v", spec, ds)
	}
	q, err := compiler.Print(p, d)
	if err != nil {
		t.Fatalf("%s: %v", spec, err)
	}
	if q.Setup != "" {
		// Staged: the exposure filter is in the setup statement, so the
		// checks read the whole script.
		return []string{q.Script(true, true)}
	}
	return []string{q.Main, q.Health}
}

func TestQuotingAndFunctions(t *testing.T) {
	for _, name := range dialects.Names() {
		d, _ := dialects.Lookup(name)
		r, ok := rules[name]
		if !ok {
			t.Errorf("dialect %s has no lexing rules in this test", name)
			continue
		}
		allow := map[string]bool{}
		for _, f := range allowed[name] {
			allow[f] = true
		}
		for caseName, spec := range testSpecs(t, name != "duckdb") {
			t.Run(name+"/"+caseName, func(t *testing.T) {
				for _, q := range compile(t, spec, d) {
					lx, err := lex(q, r)
					if err != nil {
						t.Fatalf("%v\n%s", err, q)
					}
					if len(lx.calls) < 5 {
						t.Errorf("found only %d function calls: the lexer is not reading the query", len(lx.calls))
					}
					var bad []string
					for _, c := range lx.calls {
						if !allow[c] {
							bad = append(bad, c)
						}
					}
					if len(bad) > 0 {
						sort.Strings(bad)
						t.Errorf("calls functions not on the %s allow-list: %v", name, bad)
					}
					if caseName == "functions" {
						for _, want := range []string{"it's", `back\slash`, `a\b`, "tab\there", "America/New_York"} {
							if !contains(lx.strings, want) {
								t.Errorf("no string literal reads back as %q; literals: %q", want, lx.strings)
							}
						}
						if !contains(lx.idents, "odd ` col\"q") {
							t.Errorf("no quoted identifier reads back as %q; identifiers: %q", "odd ` col\"q", lx.idents)
						}
					}
				}
			})
		}
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// TestMySQLParses parses the mysql dialect's output with the TiDB parser,
// which implements MySQL's grammar.
func TestMySQLParses(t *testing.T) {
	d, _ := dialects.Lookup("mysql")
	for caseName, spec := range testSpecs(t, true) {
		t.Run(caseName, func(t *testing.T) {
			for _, q := range compile(t, spec, d) {
				p := parser.New()
				stmts, _, err := p.Parse(q, "utf8mb4", "utf8mb4_bin")
				if err != nil {
					t.Fatalf("TiDB parser: %v\n%s", err, q)
				}
				if len(stmts) != 1 {
					t.Errorf("parsed %d statements, want 1", len(stmts))
				}
			}
		})
	}
}
