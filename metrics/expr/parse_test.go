package expr

import (
	"fmt"
	"reflect"
	"strings"
	"sync"
	"testing"

	"github.com/pingcap/tidb/pkg/parser"
	"github.com/pingcap/tidb/pkg/parser/ast"
)

// TestParseRejects lists hostile and unsupported inputs with the expected
// diagnostic codes (in order) and the text of the first diagnostic's span.
func TestParseRejects(t *testing.T) {
	tests := []struct {
		in    string
		codes []string
		span  string // text of the first diagnostic's span
	}{
		// Empty input.
		{"", []string{CodeEmpty}, ""},
		{" \t\n ", []string{CodeEmpty}, " \t\n "},
		// Statement injection and comments. `--` starts a comment in
		// standard SQL (ISO/IEC 9075-2, 5.2 <comment>) even without a
		// following space, unlike MySQL.
		{"1; DROP TABLE t", []string{CodeSemicolon}, ";"},
		{`a"; DROP TABLE t; --`, []string{CodeUnterminated}, `"; DROP TABLE t; --`},
		{"a'; DROP TABLE t; --", []string{CodeUnterminated}, "'; DROP TABLE t; --"},
		{"x /* c */ + 1", []string{CodeComment}, "/* c */"},
		{"x /* unterminated", []string{CodeComment}, "/* unterminated"},
		{"x -- c", []string{CodeComment}, "-- c"},
		{"x -- c\n + 1", []string{CodeComment}, "-- c"},
		{"1--1", []string{CodeComment}, "--1"},
		{"x # c", []string{CodeComment}, "# c"},
		{"x = 1 /*! AND y = 2 */", []string{CodeComment}, "/*! AND y = 2 */"},
		// Encoding.
		{"a\x00", []string{CodeNUL}, "\x00"},
		{"'a\x00b'", []string{CodeNUL}, "\x00"},
		{"a = '\xff\xfe'", []string{CodeUTF8}, "\xff\xfe"},
		{"a\u00a0= b", []string{CodeChar}, "\u00a0"},
		{"a\fb", []string{CodeChar}, "\f"},
		// Quoting.
		{"'abc", []string{CodeUnterminated}, "'abc"},
		{`"abc`, []string{CodeUnterminated}, `"abc`},
		{"`x` > 0", []string{CodeBacktick}, "`x`"},
		{`"" = 1`, []string{CodeIdent}, `""`},
		{"\"a\nb\" = 1", []string{CodeIdent}, "\"a\nb\""},
		// Numbers.
		{"1e999", []string{CodeNumber}, "1e999"},
		{"1e-999", []string{CodeNumber}, "1e-999"},
		{"123456789012345678901234567890", []string{CodeNumber}, "123456789012345678901234567890"},
		{"9223372036854775808", []string{CodeNumber}, "9223372036854775808"},
		{"12345678901234567890123456789012345678.9", []string{CodeNumber}, "12345678901234567890123456789012345678.9"},
		{"1a", []string{CodeNumber}, "1a"},
		{"0x1F", []string{CodeNumber}, "0x1F"},
		{"1.5.3", []string{CodeNumber}, "1.5.3"},
		// Literal forms.
		{"x'1F'", []string{CodeLiteral}, "x'1F'"},
		{"N'abc'", []string{CodeLiteral}, "N'abc'"},
		{"a = 'x' 'y'", []string{CodeLiteral}, "'x' 'y'"},
		{"d = DATE '2024-01-01'", []string{CodeLiteral}, "DATE '2024-01-01'"},
		{"d = TIMESTAMP '2024-01-01 00:00:00'", []string{CodeLiteral}, "TIMESTAMP '2024-01-01 00:00:00'"},
		{"_utf8mb4 'x'", []string{CodeUnsupported}, "_utf8mb4"},
		// Operators.
		{"a || b", []string{CodeOperator}, "||"},
		{"a && b", []string{CodeOperator}, "&&"},
		{"!a", []string{CodeOperator}, "!"},
		{"a <=> b", []string{CodeOperator}, "a <=> b"},
		{"a DIV b", []string{CodeOperator}, "a DIV b"},
		{"a XOR b", []string{CodeOperator}, "a XOR b"},
		{"a MOD b", []string{CodeOperator}, "a MOD b"},
		{"a & b", []string{CodeOperator}, "&"},
		{"a | b", []string{CodeOperator}, "|"},
		{"a ^ b", []string{CodeOperator}, "^"},
		{"~a", []string{CodeOperator}, "~"},
		{"a << 1", []string{CodeOperator}, "<<"},
		{"x::int", []string{CodeOperator}, "::"},
		{"x -> '$.a'", []string{CodeOperator}, "->"},
		{"x ->> '$.a'", []string{CodeOperator}, "->>"},
		{"@x := 1", []string{CodeVariable, CodeOperator}, "@x"},
		{"@@sql_mode", []string{CodeVariable}, "@@sql_mode"},
		{"x = ?", []string{CodeVariable}, "?"},
		{"a $ b", []string{CodeChar}, "$"},
		{"{x a}", []string{CodeChar, CodeChar}, "{"},
		// Not a single expression.
		{"a +", []string{CodeSyntax}, ""},
		{"x AS y", []string{CodeSyntax}, "AS"},
		{"x y", []string{CodeSyntax}, "y"},
		{"x, y", []string{CodeSyntax}, ","},
		{"DISTINCT x", []string{CodeSyntax}, "DISTINCT"},
		{"*", []string{CodeSyntax}, "*"},
		{"x FROM t", []string{CodeSyntax}, "FROM"},
		{"x WHERE y", []string{CodeSyntax}, "WHERE"},
		{"SELECT 1", []string{CodeSyntax}, "SELECT"},
		{"x = 1 UNION SELECT 2", []string{CodeSyntax}, "x = 1 UNION SELECT 2"},
		{"a IN ()", []string{CodeSyntax}, ")"},
		{"CASE END", []string{CodeSyntax}, ""},
		{"a\nb c", []string{CodeSyntax}, "c"},
		// Columns.
		{"t.amount > 0", []string{CodeQualified}, "t.amount"},
		{`"o"."amount"`, []string{CodeQualified}, `"o"."amount"`},
		{"s.t.x", []string{CodeQualified}, "s.t.x"},
		// Functions.
		{"foo(x)", []string{CodeFunc}, "foo(x)"},
		{"if(a, b, c)", []string{CodeFunc}, "if(a, b, c)"},
		{"current_date", []string{CodeFunc}, "current_date"},
		{"now()", []string{CodeFunc}, "now()"},
		{"abs(x, y)", []string{CodeArity}, "abs(x, y)"},
		{"abs()", []string{CodeArity}, "abs()"},
		{"round(x, 1, 2)", []string{CodeArity}, "round(x, 1, 2)"},
		{"greatest(a)", []string{CodeArity}, "greatest(a)"},
		{"concat()", []string{CodeArity}, "concat()"},
		{"trim(BOTH 'x' FROM y)", []string{CodeFuncForm}, "trim(BOTH 'x' FROM y)"},
		{"trim('x' FROM y)", []string{CodeFuncForm}, "trim('x' FROM y)"},
		{"trim(LEADING FROM y)", []string{CodeFuncForm}, "trim(LEADING FROM y)"},
		{"t.abs(x)", []string{CodeUnsupported}, "t"},
		// Aggregates, windows, subqueries.
		{"sum(x)", []string{CodeAggregate}, "sum(x)"},
		{"count(*)", []string{CodeAggregate}, "count(*)"},
		{"COUNT(DISTINCT x) > 1", []string{CodeAggregate}, "COUNT(DISTINCT x)"},
		{"avg(x)", []string{CodeAggregate}, "avg(x)"},
		{"max(x) - min(x)", []string{CodeAggregate, CodeAggregate}, "max(x)"},
		{"STD(x)", []string{CodeAggregate}, "STD(x)"},
		{"row_number() OVER ()", []string{CodeWindow}, "row_number() OVER ()"},
		{"sum(x) OVER (PARTITION BY y ORDER BY z)", []string{CodeWindow}, "sum(x) OVER (PARTITION BY y ORDER BY z)"},
		{"lag(x) OVER w", []string{CodeWindow}, "lag(x) OVER w"},
		{"(SELECT 1)", []string{CodeSubquery}, "(SELECT 1)"},
		{"((SELECT 1))", []string{CodeSubquery}, "(SELECT 1)"},
		{"EXISTS (SELECT 1)", []string{CodeSubquery}, "EXISTS (SELECT 1)"},
		{"NOT EXISTS (SELECT 1)", []string{CodeSubquery}, "NOT EXISTS (SELECT 1)"},
		{"x IN (SELECT id FROM t)", []string{CodeSubquery}, "x IN (SELECT id FROM t)"},
		{"x = ANY (SELECT 1)", []string{CodeSubquery}, "x = ANY (SELECT 1)"},
		// Casts.
		{"CAST(x AS INT)", []string{CodeCast}, "INT"},
		{"CAST(x AS SIGNED)", []string{CodeCast}, "SIGNED"},
		{"CAST(x AS VARCHAR(10))", []string{CodeCast}, "VARCHAR(10)"},
		{"CAST(x AS DECIMAL(10, 2))", []string{CodeCast}, "DECIMAL(10, 2)"},
		{"CONVERT(x, SIGNED)", []string{CodeCast}, "CONVERT(x, SIGNED)"},
		{"BINARY x", []string{CodeCast}, "BINARY x"},
		// Other constructs.
		{"d + INTERVAL 1 DAY", []string{CodeInterval}, "INTERVAL"},
		{"x IS TRUE", []string{CodeIsTruth}, "x IS TRUE"},
		{"x IS NOT FALSE", []string{CodeIsTruth}, "x IS NOT FALSE"},
		{"x ILIKE 'a%'", []string{CodeLike}, "x ILIKE 'a%'"},
		{"x LIKE 'a!%' ESCAPE '!'", []string{CodeLike}, "x LIKE 'a!%' ESCAPE '!'"},
		{`x LIKE 'a\_b'`, []string{CodeLike}, `'a\_b'`},
		{"x REGEXP 'a+'", []string{CodeRegexp}, "x REGEXP 'a+'"},
		{"x NOT RLIKE 'a+'", []string{CodeRegexp}, "x NOT RLIKE 'a+'"},
		{"ROW(1, 2) = ROW(a, b)", []string{CodeUnsupported, CodeUnsupported}, "ROW(1, 2)"},
		{"(1, 2)", []string{CodeUnsupported}, "(1, 2)"},
		{"DEFAULT(x)", []string{CodeUnsupported}, "DEFAULT(x)"},
		{"x COLLATE utf8mb4_bin", []string{CodeUnsupported}, "x COLLATE utf8mb4_bin"},
		{"MATCH (a) AGAINST ('x')", []string{CodeUnsupported}, "MATCH"},
		// Limits.
		{strings.Repeat("(", 200) + "1" + strings.Repeat(")", 200), []string{CodeLimit}, "("},
		{strings.Repeat("NOT ", 600) + "x", []string{CodeLimit}, strings.Repeat("NOT ", 88) + "x"},
		{strings.Repeat("x", maxLen+1), []string{CodeLimit}, strings.Repeat("x", maxLen+1)},
	}
	for _, tc := range tests {
		name := tc.in
		if len(name) > 60 {
			name = name[:60]
		}
		t.Run(name, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if n != nil {
				t.Errorf("Parse(%q) node: got %v, want nil", tc.in, Render(n, ANSI))
			}
			if got := ds.Codes(); !reflect.DeepEqual(got, tc.codes) {
				t.Fatalf("Parse(%q) codes: got %v, want %v\n%v", tc.in, got, tc.codes, ds)
			}
			sp := ds[0].Span
			if got := tc.in[sp.Start:sp.End]; got != tc.span && !(len(tc.span) > 100 && strings.HasSuffix(got, "x")) {
				t.Errorf("Parse(%q) span text: got %q, want %q", tc.in, got, tc.span)
			}
			for _, d := range ds {
				if d.Msg == "" {
					t.Errorf("Parse(%q): got diagnostic %v with empty message, want a message", tc.in, d)
				}
			}
		})
	}
}

// TestParseReportsAll checks that every problem of a stage is reported, in
// offset order.
func TestParseReportsAll(t *testing.T) {
	tests := []struct {
		in    string
		codes []string
		spans []string
	}{
		{
			"a -- c\n; `b` || \x00",
			[]string{CodeComment, CodeSemicolon, CodeBacktick, CodeOperator, CodeNUL},
			[]string{"-- c", ";", "`b`", "||", "\x00"},
		},
		{
			"sum(x) + foo(y) > (SELECT 1) AND z IS TRUE",
			[]string{CodeAggregate, CodeFunc, CodeSubquery, CodeIsTruth},
			[]string{"sum(x)", "foo(y)", "(SELECT 1)", "z IS TRUE"},
		},
		{
			"t.a = 1 OR abs(x, y) > 0 OR x ILIKE 'a'",
			[]string{CodeQualified, CodeArity, CodeLike},
			[]string{"t.a", "abs(x, y)", "x ILIKE 'a'"},
		},
		{
			"CAST(a AS INT) + CAST(b AS TEXT)",
			[]string{CodeCast, CodeCast},
			[]string{"INT", "TEXT"},
		},
		{
			strings.Repeat("; ", 30),
			append(repeat(CodeSemicolon, maxDiagnostics-1), CodeLimit),
			append(repeat(";", maxDiagnostics-1), ";"),
		},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			_, ds := Parse(tc.in)
			if got := ds.Codes(); !reflect.DeepEqual(got, tc.codes) {
				t.Fatalf("codes: got %v, want %v\n%v", got, tc.codes, ds)
			}
			var spans []string
			for _, d := range ds {
				spans = append(spans, tc.in[d.Span.Start:d.Span.End])
			}
			if !reflect.DeepEqual(spans, tc.spans) {
				t.Errorf("spans: got %q, want %q", spans, tc.spans)
			}
		})
	}
}

func repeat(s string, n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = s
	}
	return out
}

// TestSpans checks the spans of the nodes of parsed trees.
func TestSpans(t *testing.T) {
	tests := []struct {
		in   string
		want []string // text of every node's span, in Walk order
	}{
		{"a + b * c", []string{"a + b * c", "a", "b * c", "b", "c"}},
		{"(a + b) * c", []string{"(a + b) * c", "a + b", "a", "b", "c"}},
		{" x IS NOT NULL ", []string{"x IS NOT NULL", "x"}},
		{"NOT \"a b\" = 'x'", []string{"NOT \"a b\" = 'x'", "\"a b\" = 'x'", "\"a b\"", "'x'"}},
		{"-1", []string{"-1", "1"}},
		{"abs( x )", []string{"abs( x )", "x"}},
		{"CASE WHEN a THEN 1 END", []string{"CASE WHEN a THEN 1 END", "a", "1"}},
		{"x NOT IN (1, (2))", []string{"x NOT IN (1, (2))", "x", "1", "2"}},
		{"x BETWEEN 1 AND 2", []string{"x BETWEEN 1 AND 2", "x", "1", "2"}},
		{"CAST(x AS DOUBLE PRECISION)", []string{"CAST(x AS DOUBLE PRECISION)", "x"}},
		{"naïve = 'é'", []string{"naïve = 'é'", "naïve", "'é'"}},
		{"mod(a, b)", []string{"mod(a, b)", "a", "b"}},
		{"substr(x FROM 2 FOR 3)", []string{"substr(x FROM 2 FOR 3)", "x", "2", "3"}},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if len(ds) > 0 {
				t.Fatalf("Parse: got %v, want no diagnostics", ds)
			}
			var got []string
			Walk(n, func(n Node) bool {
				got = append(got, tc.in[n.Span().Start:n.Span().End])
				return true
			})
			if !reflect.DeepEqual(got, tc.want) {
				t.Errorf("spans: got %q, want %q", got, tc.want)
			}
		})
	}
}

// TestLiterals checks literal kinds and canonical text.
func TestLiterals(t *testing.T) {
	tests := []struct {
		in   string
		kind LitKind
		text string
		b    bool
	}{
		{"NULL", LitNull, "", false},
		{"true", LitBool, "", true},
		{"False", LitBool, "", false},
		{"42", LitInt, "42", false},
		{"0042", LitInt, "42", false},
		{"000", LitInt, "0", false},
		{"9223372036854775807", LitInt, "9223372036854775807", false},
		{"0.1", LitDecimal, "0.1", false},
		{"00.10", LitDecimal, "0.10", false},
		{".5", LitDecimal, "0.5", false},
		{"1.", LitDecimal, "1.0", false},
		{"1e3", LitFloat, "1e3", false},
		{"1E+03", LitFloat, "1e3", false},
		{"1.5e-07", LitFloat, "1.5e-7", false},
		{"1e-0", LitFloat, "1e0", false},
		{"0e999", LitFloat, "0e999", false},
		{"''", LitString, "", false},
		// A doubled quote is one quote (ISO/IEC 9075-2, 5.3 <character
		// string literal>).
		{"'it''s'", LitString, "it's", false},
		// With NO_BACKSLASH_ESCAPES, backslash is an ordinary character (MySQL
		// 8.0 Reference Manual, "Server SQL Modes").
		{`'a\b'`, LitString, `a\b`, false},
		{`'a\'`, LitString, `a\`, false},
		{`'\n'`, LitString, `\n`, false},
		{`'"'`, LitString, `"`, false},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if len(ds) > 0 {
				t.Fatalf("Parse: got %v, want no diagnostics", ds)
			}
			l, ok := n.(*Literal)
			if !ok {
				t.Fatalf("node: got %T, want *Literal", n)
			}
			if l.Kind != tc.kind || l.Text != tc.text || l.Bool != tc.b {
				t.Errorf("literal: got %v %q %v, want %v %q %v", l.Kind, l.Text, l.Bool, tc.kind, tc.text, tc.b)
			}
		})
	}
}

// TestColumnNames checks identifier reading: bare words are kept as
// written, quoted names are unescaped, and keywords that TiDB allows as
// column names stay columns.
func TestColumnNames(t *testing.T) {
	tests := []struct{ in, want string }{
		{"amount", "amount"},
		{"Amount", "Amount"},
		{`"Amount"`, "Amount"},
		{`"a""b"`, `a"b`},
		{`"naïve col"`, "naïve col"},
		{`" padded "`, " padded "},
		{`"a;b--c/*d*/"`, "a;b--c/*d*/"},
		{"status", "status"},
		{"date", "date"},
		{"timestamp", "timestamp"},
		{"count", "count"},
		{"_x1", "_x1"},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if len(ds) > 0 {
				t.Fatalf("Parse: got %v, want no diagnostics", ds)
			}
			c, ok := n.(*Column)
			if !ok {
				t.Fatalf("node: got %T, want *Column", n)
			}
			if c.Name != tc.want {
				t.Errorf("name: got %q, want %q", c.Name, tc.want)
			}
		})
	}
}

// TestErrorOffset checks the recovery of byte offsets from TiDB's error text
// (its format is `line L column C near "REST"`, see Scanner.Errorf in the
// parser's lexer.go).
func TestErrorOffset(t *testing.T) {
	long := "SELECT a + " + strings.Repeat("b + ", 700) + ")"
	tests := []struct {
		name, msg, full string
		want            int
	}{
		{"middle", `line 1 column 12 near "c d" `, "SELECT a b c d", 11},
		{"end", `line 1 column 10 near "" `, "SELECT x +", 10},
		{"quote in text", `line 1 column 9 near ""abc" `, `SELECT "abc`, 7},
		{"truncated", `line 1 column 9 near "` + long[11:11+2048] + `"(total length 2801) `, long, len(long) - 2801},
		{"other form", `something else`, "SELECT 1", 8},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := errorOffset(tc.msg, tc.full); got != tc.want {
				t.Errorf("errorOffset: got %v, want %v", got, tc.want)
			}
		})
	}
}

// TestParseConcurrent checks that pooled parsers are not shared between
// goroutines (results must match the sequential ones).
func TestParseConcurrent(t *testing.T) {
	inputs := []string{"a + 1", "status = 'x' AND amount > 0", "sum(x)", "CAST(x AS DATE)", "'abc"}
	want := make([]string, len(inputs))
	for i, in := range inputs {
		n, ds := Parse(in)
		want[i] = Render(n, ANSI) + ds.String()
	}
	var wg sync.WaitGroup
	errs := make(chan string, 64)
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := 0; k < 200; k++ {
				i := k % len(inputs)
				n, ds := Parse(inputs[i])
				if got := Render(n, ANSI) + ds.String(); got != want[i] {
					errs <- fmt.Sprintf("Parse(%q): got %v, want %v", inputs[i], got, want[i])
					return
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Error(e)
	}
}

func TestDiagnosticsErr(t *testing.T) {
	tests := []struct {
		name string
		ds   Diagnostics
		want string
	}{
		{"none", nil, ""},
		{"one", Diagnostics{{Code: CodeColumn, Msg: "unknown column", Hint: "h", Span: Span{3, 4}}},
			"offset 3: unknown column (hint: h) [E-EXPR-COLUMN]"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.ds.Err()
			got := ""
			if err != nil {
				got = err.Error()
			}
			if got != tc.want {
				t.Errorf("Err(): got %v, want %v", got, tc.want)
			}
		})
	}
}

// TestParsePanicGuard checks that a panic inside the SQL parser becomes an
// E-EXPR-INTERNAL diagnostic instead of crashing the caller.
func TestParsePanicGuard(t *testing.T) {
	saved := parseOne
	defer func() { parseOne = saved }()
	parseOne = func(*parser.Parser, string) (ast.StmtNode, error) { panic("boom") }
	tests := []struct{ in string }{{"a + 1"}, {"x = 'y'"}}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			n, ds := Parse(tc.in)
			if n != nil || len(ds) != 1 || ds[0].Code != CodeInternal {
				t.Fatalf("Parse(%q): got %v %v, want nil and one %v", tc.in, n, ds, CodeInternal)
			}
			if want := "SQL parser failed: boom"; ds[0].Msg != want {
				t.Errorf("message: got %v, want %v", ds[0].Msg, want)
			}
		})
	}
	parseOne = saved
	if _, ds := Parse("a + 1"); len(ds) != 0 {
		t.Errorf("Parse after a panic: got %v, want no diagnostics", ds)
	}
}

func BenchmarkParse(b *testing.B) {
	const filter = "status = 'delivered' AND amount > 0 AND country IN ('DE', 'AT') AND coalesce(discount, 0) < amount"
	for b.Loop() {
		if _, ds := Parse(filter); len(ds) > 0 {
			b.Fatal(ds)
		}
	}
}
