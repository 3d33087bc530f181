package expr

import (
	"strings"
	"testing"
)

func col(name string) Node          { return &Column{Name: name} }
func num(text string) Node          { return &Literal{Kind: LitInt, Text: text} }
func str(s string) Node             { return &Literal{Kind: LitString, Text: s} }
func bin(op string, l, r Node) Node { return &Binary{Op: op, L: l, R: r} }
func un(op string, x Node) Node     { return &Unary{Op: op, X: x} }

// TestRenderPrecedence checks parenthesization of hand-built trees, including
// trees Parse would never produce in that shape.
func TestRenderPrecedence(t *testing.T) {
	a, b, c := col("a"), col("b"), col("c")
	tests := []struct {
		name string
		n    Node
		want string
	}{
		{"left assoc minus", bin("-", bin("-", a, b), c), `"a" - "b" - "c"`},
		{"right nested minus", bin("-", a, bin("-", b, c)), `"a" - ("b" - "c")`},
		{"right nested plus", bin("+", a, bin("+", b, c)), `"a" + ("b" + "c")`},
		{"mul over add", bin("*", bin("+", a, b), c), `("a" + "b") * "c"`},
		{"add over mul", bin("+", a, bin("*", b, c)), `"a" + "b" * "c"`},
		{"div right", bin("/", a, bin("/", b, c)), `"a" / ("b" / "c")`},
		{"and in or", bin("OR", bin("AND", a, b), c), `"a" AND "b" OR "c"`},
		{"or in and", bin("AND", bin("OR", a, b), c), `("a" OR "b") AND "c"`},
		{"right and", bin("AND", a, bin("AND", b, c)), `"a" AND ("b" AND "c")`},
		{"not of cmp", un("NOT", bin("=", a, b)), `NOT "a" = "b"`},
		{"not of and", un("NOT", bin("AND", a, b)), `NOT ("a" AND "b")`},
		{"not of not", un("NOT", un("NOT", a)), `NOT NOT "a"`},
		{"cmp of not", bin("=", un("NOT", a), b), `(NOT "a") = "b"`},
		{"cmp of cmp left", bin("=", bin("<", a, b), c), `("a" < "b") = "c"`},
		{"cmp of cmp right", bin("=", a, bin("<", b, c)), `"a" = ("b" < "c")`},
		{"cmp of arith", bin("<", bin("+", a, num("1")), c), `"a" + 1 < "c"`},
		{"is null of cmp", &IsNull{X: bin("=", a, b)}, `("a" = "b") IS NULL`},
		{"is null of in", &IsNull{X: &In{X: a, List: []Node{b}}, Not: true}, `("a" IN ("b")) IS NOT NULL`},
		{"in of between", &In{X: &Between{X: a, Lo: b, Hi: c}, List: []Node{a}}, `("a" BETWEEN "b" AND "c") IN ("a")`},
		{"between with and bounds", &Between{X: a, Lo: bin("AND", a, b), Hi: bin("OR", b, c)}, `"a" BETWEEN ("a" AND "b") AND ("b" OR "c")`},
		{"between with cmp bound", &Between{X: a, Lo: b, Hi: bin("=", b, c), Not: true}, `"a" NOT BETWEEN "b" AND ("b" = "c")`},
		{"like pattern arith", &Like{X: a, Pattern: bin("+", b, c)}, `"a" LIKE ("b" + "c")`},
		{"like pattern unary", &Like{X: a, Pattern: un("-", b)}, `"a" LIKE (-"b")`},
		{"unary minus of minus", un("-", un("-", a)), `-(-"a")`},
		{"unary minus of literal", un("-", num("1")), `-1`},
		{"unary minus of sum", un("-", bin("+", a, b)), `-("a" + "b")`},
		{"minus negative", bin("-", a, un("-", num("1"))), `"a" - -1`},
		{"unary in mul", bin("*", un("-", a), b), `-"a" * "b"`},
		{"unary plus", un("+", un("-", a)), `+(-"a")`},
		{"in list with or", &In{X: a, List: []Node{bin("OR", b, c)}}, `"a" IN ("b" OR "c")`},
		{"func args", &Func{Name: "coalesce", Args: []Node{bin("OR", a, b), c}}, `COALESCE("a" OR "b", "c")`},
		{"cast of or", &Cast{X: bin("OR", a, b), To: TypeBoolean}, `CAST("a" OR "b" AS BOOLEAN)`},
		{"case", &Case{Operand: bin("+", a, b), Whens: []When{{Cond: num("1"), Result: bin("OR", a, c)}}, Else: str("x")},
			`CASE "a" + "b" WHEN 1 THEN "a" OR "c" ELSE 'x' END`},
		{"case in arith", bin("*", &Case{Whens: []When{{Cond: a, Result: num("1")}}}, num("2")), `CASE WHEN "a" THEN 1 END * 2`},
		{"null and bools", bin("OR", &Literal{Kind: LitNull}, &Literal{Kind: LitBool, Bool: false}), `NULL OR FALSE`},
		{"nil", nil, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := Render(tc.n, ANSI)
			if got != tc.want {
				t.Errorf("Render: got %v, want %v", got, tc.want)
			}
			if tc.n == nil {
				return
			}
			n2, ds := Parse(got)
			if len(ds) > 0 {
				t.Fatalf("Parse(%q): got %v, want no diagnostics", got, ds)
			}
			if !Equal(tc.n, n2) {
				t.Errorf("Parse(Render(tree)): got %v, want the same tree", Render(n2, ANSI))
			}
		})
	}
}

// markStyle marks every piece of user text so the test can tell that only
// Style methods emitted it.
type markStyle struct{}

func (markStyle) Column(name string) string { return "o.<" + name + ">" }
func (markStyle) String(s string) string    { return "<s:" + s + ">" }
func (markStyle) Func(name string, args []string) string {
	if name == "length" {
		name = "char_length"
	}
	return name + "[" + strings.Join(args, "; ") + "]"
}
func (markStyle) Cast(x string, to Type) string { return "cast<" + x + " to " + to.String() + ">" }

func TestRenderStyle(t *testing.T) {
	tests := []struct{ in, want string }{
		{`amount - discount`, `o.<amount> - o.<discount>`},
		{`"a""b" = 'it''s'`, `o.<a"b> = <s:it's>`},
		{`length(name) > 3`, `char_length[o.<name>] > 3`},
		{`substr(x, 1, 2)`, `substr[o.<x>; 1; 2]`},
		{`CAST(x AS DOUBLE PRECISION) / 2`, `cast<o.<x> to DOUBLE PRECISION> / 2`},
		{`x IN ('a', 'b') AND y IS NULL`, `o.<x> IN (<s:a>, <s:b>) AND o.<y> IS NULL`},
		{`"; DROP TABLE t; --" = '; DROP TABLE t; --'`, `o.<; DROP TABLE t; --> = <s:; DROP TABLE t; -->`},
	}
	for _, tc := range tests {
		t.Run(tc.in, func(t *testing.T) {
			if got := Render(mustParse(t, tc.in), markStyle{}); got != tc.want {
				t.Errorf("Render: got %v, want %v", got, tc.want)
			}
		})
	}
}

func TestANSIStyle(t *testing.T) {
	tests := []struct{ name, got, want string }{
		{"plain column", ANSI.Column("amount"), `"amount"`},
		{"quote in column", ANSI.Column(`a"b`), `"a""b"`},
		{"hostile column", ANSI.Column(`x"; DROP TABLE t; --`), `"x""; DROP TABLE t; --"`},
		{"unicode column", ANSI.Column("naïve col"), `"naïve col"`},
		{"plain string", ANSI.String("abc"), `'abc'`},
		{"quote in string", ANSI.String("it's"), `'it''s'`},
		// Standard SQL has no backslash escapes in string literals
		// (ISO/IEC 9075-2, 5.3), so a backslash is printed as is.
		{"backslash string", ANSI.String(`a\'b`), `'a\''b'`},
		{"func", ANSI.Func("coalesce", []string{"a", "b"}), `COALESCE(a, b)`},
		{"length", ANSI.Func("length", []string{"a"}), `CHAR_LENGTH(a)`},
		{"substr2", ANSI.Func("substr", []string{"a", "1"}), `SUBSTRING(a FROM 1)`},
		{"cast", ANSI.Cast("x", TypeDouble), `CAST(x AS DOUBLE PRECISION)`},
		{"cast ts", ANSI.Cast("x", TypeTimestamp), `CAST(x AS TIMESTAMP)`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if tc.got != tc.want {
				t.Errorf("got %v, want %v", tc.got, tc.want)
			}
		})
	}
}

func TestEqual(t *testing.T) {
	tests := []struct {
		a, b string
		want bool
	}{
		{"a + b", " ( a )+b ", true},
		{"a + b", "a - b", false},
		{"a + b", "b + a", false},
		{"x IN (1, 2)", "x IN (1, 2)", true},
		{"x IN (1, 2)", "x NOT IN (1, 2)", false},
		{"x IN (1, 2)", "x IN (1)", false},
		{"1.0", "1.", true},
		{"1.0", "1.00", false},
		{"1", "1.0", false},
		{"'a'", `"a"`, false},
		{"CASE WHEN a THEN 1 END", "CASE WHEN a THEN 1 ELSE NULL END", false},
		{"CAST(x AS DOUBLE)", "CAST(x AS DOUBLE PRECISION)", true},
		{"length(x)", "char_length(x)", true},
	}
	for _, tc := range tests {
		t.Run(tc.a+" vs "+tc.b, func(t *testing.T) {
			if got := Equal(mustParse(t, tc.a), mustParse(t, tc.b)); got != tc.want {
				t.Errorf("Equal: got %v, want %v", got, tc.want)
			}
		})
	}
}
