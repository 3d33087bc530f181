package expr

import (
	"bufio"
	"fmt"
	"os"
	"strings"
	"testing"
)

// roundTrips pairs an expression with its ANSI rendering. Every rendering
// must parse back to a tree equal to the original's, and render to itself.
var roundTrips = []struct{ in, want string }{
	// Columns and quoting.
	{`amount`, `"amount"`},
	{`"amount"`, `"amount"`},
	{`"a""b"`, `"a""b"`},
	{`"naïve col"`, `"naïve col"`},
	{`naïve`, `"naïve"`},
	{`"a""; DROP TABLE t; --"`, `"a""; DROP TABLE t; --"`},
	{`"Amount" > 0`, `"Amount" > 0`},
	{`"order id" IS NOT NULL`, `"order id" IS NOT NULL`},
	{`date`, `"date"`},
	{`count + sum`, `"count" + "sum"`},
	{`"true"`, `"true"`},
	{`"select"`, `"select"`},
	// Literals.
	{`NULL`, `NULL`},
	{`true`, `TRUE`},
	{`FALSE`, `FALSE`},
	{`0`, `0`},
	{`007`, `7`},
	{`9223372036854775807`, `9223372036854775807`},
	{`0.1`, `0.1`},
	{`1.50`, `1.50`},
	{`.5`, `0.5`},
	{`1.`, `1.0`},
	{`1e3`, `1e3`},
	{`1E+03`, `1e3`},
	{`2.5e-7`, `2.5e-7`},
	{`.5e3`, `0.5e3`},
	{`1.e3`, `1e3`},
	{`123456789012345678901234567890.0`, `123456789012345678901234567890.0`},
	{`''`, `''`},
	{`'it''s'`, `'it''s'`},
	{`'a\b'`, `'a\b'`},
	{`'\'`, `'\'`},
	{`'a"b'`, `'a"b'`},
	{`'; DROP TABLE t; --'`, `'; DROP TABLE t; --'`},
	{"'two\nlines'", "'two\nlines'"},
	{`'日本'`, `'日本'`},
	// Arithmetic and precedence.
	{`amount - discount`, `"amount" - "discount"`},
	{`a + b * c`, `"a" + "b" * "c"`},
	{`(a + b) * c`, `("a" + "b") * "c"`},
	{`a - b - c`, `"a" - "b" - "c"`},
	{`a - (b - c)`, `"a" - ("b" - "c")`},
	{`a / (b * c)`, `"a" / ("b" * "c")`},
	{`a * (b / c)`, `"a" * ("b" / "c")`},
	{`(a * b) / c`, `"a" * "b" / "c"`},
	{`a % b`, `"a" % "b"`},
	{`-a`, `-"a"`},
	{`- - 1`, `-(-1)`},
	{`+ - x`, `+(-"x")`},
	{`1 - -1`, `1 - -1`},
	{`-a * b`, `-"a" * "b"`},
	{`-(a * b)`, `-("a" * "b")`},
	{`a * -b`, `"a" * -"b"`},
	{`((a))`, `"a"`},
	// Logic and comparison.
	{`status = 'delivered' AND amount > 0`, `"status" = 'delivered' AND "amount" > 0`},
	{`a = 1 OR b = 2 AND c = 3`, `"a" = 1 OR "b" = 2 AND "c" = 3`},
	{`(a = 1 OR b = 2) AND c = 3`, `("a" = 1 OR "b" = 2) AND "c" = 3`},
	{`a AND (b AND c)`, `"a" AND ("b" AND "c")`},
	{`NOT a = b`, `NOT "a" = "b"`},
	{`(NOT a) = b`, `(NOT "a") = "b"`},
	{`NOT (a AND b)`, `NOT ("a" AND "b")`},
	{`NOT NOT x`, `NOT NOT "x"`},
	{`NOT a AND b`, `NOT "a" AND "b"`},
	{`a != b`, `"a" <> "b"`},
	{`a <> b`, `"a" <> "b"`},
	{`a <= b`, `"a" <= "b"`},
	{`a >= b`, `"a" >= "b"`},
	// Comparisons are left-associative in TiDB's grammar (parser.y, rule
	// BoolPri); standard SQL has no chained comparisons, hence the parens.
	{`a = b = c`, `("a" = "b") = "c"`},
	{`a < b < c`, `("a" < "b") < "c"`},
	{`a = (b = c)`, `"a" = ("b" = "c")`},
	{`a + 1 > b * 2`, `"a" + 1 > "b" * 2`},
	// Predicates.
	{`x IN (1, 2, 3)`, `"x" IN (1, 2, 3)`},
	{`x NOT IN ('a', 'b')`, `"x" NOT IN ('a', 'b')`},
	{`x IN ((1))`, `"x" IN (1)`},
	{`x IN (a = b, c)`, `"x" IN ("a" = "b", "c")`},
	{`x BETWEEN 1 AND 10`, `"x" BETWEEN 1 AND 10`},
	{`x NOT BETWEEN a - 1 AND a + 1`, `"x" NOT BETWEEN "a" - 1 AND "a" + 1`},
	{`x BETWEEN 1 AND 2 AND y`, `"x" BETWEEN 1 AND 2 AND "y"`},
	// The upper bound of BETWEEN is a predicate in TiDB's grammar
	// (parser.y, rule PredicateExpr), so this nests to the right.
	{`x BETWEEN a AND b BETWEEN c AND d`, `"x" BETWEEN "a" AND ("b" BETWEEN "c" AND "d")`},
	{`x IS NULL`, `"x" IS NULL`},
	// IS UNKNOWN is IS NULL (TiDB parser.y, rule `BoolPri IsOrNotOp
	// "UNKNOWN"`, after the MySQL manual's comparison operators page).
	{`x IS UNKNOWN`, `"x" IS NULL`},
	{`a = b IS NULL`, `("a" = "b") IS NULL`},
	{`a IS NULL IS NULL`, `("a" IS NULL) IS NULL`},
	{`NOT x IS NULL`, `NOT "x" IS NULL`},
	{`x LIKE 'a%'`, `"x" LIKE 'a%'`},
	{`x NOT LIKE '_b'`, `"x" NOT LIKE '_b'`},
	{`x LIKE y`, `"x" LIKE "y"`},
	{`x LIKE concat(y, '%')`, `"x" LIKE CONCAT("y", '%')`},
	{`(x LIKE 'a') = TRUE`, `("x" LIKE 'a') = TRUE`},
	// CASE and CAST.
	{`CASE WHEN a > 1 THEN 'x' ELSE 'y' END`, `CASE WHEN "a" > 1 THEN 'x' ELSE 'y' END`},
	{`case a when 1 then 2 end`, `CASE "a" WHEN 1 THEN 2 END`},
	{`CASE WHEN a OR b THEN x + 1 END * 2`, `CASE WHEN "a" OR "b" THEN "x" + 1 END * 2`},
	{`CAST(x AS DOUBLE PRECISION)`, `CAST("x" AS DOUBLE PRECISION)`},
	{`cast(x as double)`, `CAST("x" AS DOUBLE PRECISION)`},
	{`CAST(x AS BIGINT) + 1`, `CAST("x" AS BIGINT) + 1`},
	{`CAST(x AS VARCHAR)`, `CAST("x" AS VARCHAR)`},
	{`CAST(created_at AS DATE) >= '2024-01-01'`, `CAST("created_at" AS DATE) >= '2024-01-01'`},
	{`CAST(x AS TIMESTAMP)`, `CAST("x" AS TIMESTAMP)`},
	{`CAST(flag AS BOOLEAN)`, `CAST("flag" AS BOOLEAN)`},
	{`CAST(CAST(x AS DATE) AS VARCHAR)`, `CAST(CAST("x" AS DATE) AS VARCHAR)`},
	{`cast (x as bigint)`, `CAST("x" AS BIGINT)`},
	// Functions.
	{`abs(x)`, `ABS("x")`},
	{`ceil(x) + ceiling(y)`, `CEIL("x") + CEIL("y")`},
	{`floor(x / 2)`, `FLOOR("x" / 2)`},
	{`round(x)`, `ROUND("x")`},
	{`round(x, 2)`, `ROUND("x", 2)`},
	{`sqrt(x)`, `SQRT("x")`},
	{`ln(x) + exp(y)`, `LN("x") + EXP("y")`},
	{`power(x, 2) + pow(y, 3)`, `POWER("x", 2) + POWER("y", 3)`},
	{`mod(a, b)`, `MOD("a", "b")`},
	{`MOD (a, 7)`, `MOD("a", 7)`},
	{`sign(x)`, `SIGN("x")`},
	{`coalesce(discount, 0)`, `COALESCE("discount", 0)`},
	{`coalesce (a, b)`, `COALESCE("a", "b")`},
	{`nullif(a, '')`, `NULLIF("a", '')`},
	{`greatest(a, b, 0)`, `GREATEST("a", "b", 0)`},
	{`least(a, b)`, `LEAST("a", "b")`},
	{`lower(x) = 'a'`, `LOWER("x") = 'a'`},
	{`UPPER(x)`, `UPPER("x")`},
	{`Trim(x)`, `TRIM("x")`},
	{`length(x) > 3`, `CHAR_LENGTH("x") > 3`},
	{`char_length(x)`, `CHAR_LENGTH("x")`},
	{`substr(x, 1, 2)`, `SUBSTRING("x" FROM 1 FOR 2)`},
	{`substring(x, 2)`, `SUBSTRING("x" FROM 2)`},
	{`SUBSTRING(x FROM 1 FOR 2)`, `SUBSTRING("x" FROM 1 FOR 2)`},
	{`concat(a, 'b', c)`, `CONCAT("a", 'b', "c")`},
	{`abs(-(x))`, `ABS(-"x")`},
}

func TestRoundTripTable(t *testing.T) {
	for _, tc := range roundTrips {
		t.Run(tc.in, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if len(ds) > 0 {
				t.Fatalf("Parse(%q): got %v, want no diagnostics", tc.in, ds)
			}
			if got := Render(n, ANSI); got != tc.want {
				t.Errorf("Render(Parse(%q)): got %v, want %v", tc.in, got, tc.want)
			}
			assertRoundTrip(t, tc.in, n)
		})
	}
}

// TestRoundTripCorpus checks the round-trip property on testdata/roundtrip.txt
// (one expression a line; blank lines and lines starting with "//" skipped).
func TestRoundTripCorpus(t *testing.T) {
	f, err := os.Open("testdata/roundtrip.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	count := 0
	for sc.Scan() {
		line := sc.Text()
		if strings.TrimSpace(line) == "" || strings.HasPrefix(line, "//") {
			continue
		}
		count++
		t.Run(line, func(t *testing.T) {
			n, ds := Parse(line)
			if len(ds) > 0 {
				t.Fatalf("Parse(%q): got %v, want no diagnostics", line, ds)
			}
			assertRoundTrip(t, line, n)
		})
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if count < 50 {
		t.Errorf("corpus size: got %v, want at least %v", count, 50)
	}
}

// assertRoundTrip checks that n (parsed from src) has consistent spans, that
// its ANSI rendering parses to an equal tree, and that rendering is
// idempotent.
func assertRoundTrip(t *testing.T, src string, n Node) {
	t.Helper()
	if err := checkSpans(n, len(src)); err != "" {
		t.Errorf("spans of %q: got %v, want nested spans within the text", src, err)
	}
	out := Render(n, ANSI)
	n2, ds := Parse(out)
	if len(ds) > 0 {
		t.Fatalf("Parse(Render(%q)) = Parse(%q): got %v, want no diagnostics", src, out, ds)
	}
	if !Equal(n, n2) {
		t.Errorf("Parse(Render(%q)): got tree of %v, want tree equal to the original", src, Render(n2, ANSI))
	}
	if again := Render(n2, ANSI); again != out {
		t.Errorf("Render(Parse(Render(%q))): got %v, want %v", src, again, out)
	}
}

// checkSpans verifies that every span lies within [0, n), that children lie
// within their parent and follow one another in source order; it returns a
// description of the first violation, or "".
func checkSpans(root Node, n int) string {
	var bad string
	var visit func(Node, Span)
	visit = func(x Node, outer Span) {
		if bad != "" {
			return
		}
		sp := x.Span()
		if sp.Start < outer.Start || sp.End > outer.End || sp.Start >= sp.End {
			bad = "node span " + spanText(sp) + " outside " + spanText(outer)
			return
		}
		prevEnd := sp.Start
		for _, c := range Children(x) {
			if c.Span().Start < prevEnd {
				bad = "child span " + spanText(c.Span()) + " overlaps its predecessor"
				return
			}
			visit(c, sp)
			prevEnd = c.Span().End
		}
	}
	visit(root, Span{0, n})
	return bad
}

func spanText(s Span) string { return fmt.Sprintf("[%d,%d)", s.Start, s.End) }
