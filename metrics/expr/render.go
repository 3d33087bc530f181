package expr

import (
	"strings"
)

// Style is what a SQL dialect printer supplies to Render: the engine's
// spelling of the parts of an expression that differ between engines.
// Everything else (operators, CASE, IN, BETWEEN, IS NULL, LIKE, NULL, TRUE,
// FALSE and numbers) is printed by Render in standard SQL.
type Style interface {
	// Column returns the SQL for a reference to the named column: quoted,
	// and qualified if the caller wants that, e.g. o."amount".
	Column(name string) string
	// String returns s as a string literal, escaped for the engine.
	String(s string) string
	// Func returns the engine's spelling of a call of the allow-listed
	// function name (canonical, lower case) on the already rendered args,
	// e.g. char_length(x) for length.
	Func(name string, args []string) string
	// Cast returns the engine's spelling of a cast of the rendered x to to.
	Cast(x string, to Type) string
}

// LocalStyle is implemented by styles that print the local-time functions
// (LocalFuncs) in their engine's spelling. Styles without it print them as
// ordinary calls, as ANSI does, which Parse reads back.
type LocalStyle interface {
	// Local returns the SQL for f applied to the rendered column x, read in
	// f.Time's zone and format (UTC and a native timestamp when f.Time is
	// nil).
	Local(f *Func, x string) string
}

// ANSI is a Style that prints standard SQL: double-quoted identifiers (with
// " doubled), single-quoted strings (with ' doubled, backslash literal),
// CAST(x AS DOUBLE PRECISION) and upper-case function names, with
// CHAR_LENGTH for length and SUBSTRING(x FROM s FOR n) for substr. Parse
// reads its output back to an equal tree.
var ANSI Style = ansiStyle{}

type ansiStyle struct{}

func (ansiStyle) Column(name string) string { return quoteIdent(name) }

func (ansiStyle) String(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

func (ansiStyle) Func(name string, args []string) string {
	switch name {
	case "length":
		name = "char_length"
	case "substr":
		s := "SUBSTRING(" + args[0] + " FROM " + args[1]
		if len(args) > 2 {
			s += " FOR " + args[2]
		}
		return s + ")"
	}
	return strings.ToUpper(name) + "(" + strings.Join(args, ", ") + ")"
}

func (ansiStyle) Cast(x string, to Type) string { return "CAST(" + x + " AS " + to.String() + ")" }

// Precedence levels used for printing, loosest first. The relative order of
// comparisons and the predicates IS NULL, IN, BETWEEN and LIKE differs
// between engines, so they share one level and never nest without
// parentheses.
const (
	precOr = iota + 1
	precAnd
	precNot
	precCmp // = <> < <= > >= IS NULL IN BETWEEN LIKE
	precAdd // binary + -
	precMul // * / %
	precUnary
	precAtom
)

func precedence(n Node) int {
	switch n := n.(type) {
	case *Binary:
		switch n.Op {
		case "OR":
			return precOr
		case "AND":
			return precAnd
		case "+", "-":
			return precAdd
		case "*", "/", "%":
			return precMul
		}
		return precCmp
	case *Unary:
		if n.Op == "NOT" {
			return precNot
		}
		return precUnary
	case *In, *Between, *IsNull, *Like:
		return precCmp
	}
	return precAtom
}

// Render prints n as SQL in style s, with the fewest parentheses that keep
// the tree's structure in every mainstream engine: binary operators are left
// associative, so an operand at the same level gets parentheses only on the
// right; comparison and predicate operands are always arithmetic or tighter.
// User text reaches the output only through s.Column and s.String. Render
// returns "" for a nil n.
func Render(n Node, s Style) string {
	if n == nil {
		return ""
	}
	var b strings.Builder
	r := renderer{b: &b, s: s}
	r.node(n, 0)
	return b.String()
}

type renderer struct {
	b *strings.Builder
	s Style
}

// node prints n, in parentheses if it binds looser than min.
func (r renderer) node(n Node, min int) {
	if precedence(n) < min {
		r.b.WriteByte('(')
		r.node(n, 0)
		r.b.WriteByte(')')
		return
	}
	switch n := n.(type) {
	case *Column:
		r.b.WriteString(r.s.Column(n.Name))
	case *Literal:
		switch n.Kind {
		case LitNull:
			r.b.WriteString("NULL")
		case LitBool:
			if n.Bool {
				r.b.WriteString("TRUE")
			} else {
				r.b.WriteString("FALSE")
			}
		case LitString:
			r.b.WriteString(r.s.String(n.Text))
		default:
			r.b.WriteString(n.Text)
		}
	case *Unary:
		if n.Op == "NOT" {
			r.b.WriteString("NOT ")
			r.node(n.X, precNot)
			return
		}
		// The operand is an atom or parenthesized, so "- -x" (or "--x",
		// a comment) cannot arise.
		r.b.WriteString(n.Op)
		r.node(n.X, precAtom)
	case *Binary:
		p := precedence(n)
		lmin, rmin := p, p+1
		if p == precCmp {
			lmin, rmin = precAdd, precAdd
		}
		r.node(n.L, lmin)
		r.b.WriteString(" " + n.Op + " ")
		r.node(n.R, rmin)
	case *Func:
		if ls, ok := r.s.(LocalStyle); ok && IsLocal(n.Name) && len(n.Args) == 1 {
			r.b.WriteString(ls.Local(n, Render(n.Args[0], r.s)))
			return
		}
		args := make([]string, len(n.Args))
		for i, a := range n.Args {
			args[i] = Render(a, r.s)
		}
		r.b.WriteString(r.s.Func(n.Name, args))
	case *Cast:
		r.b.WriteString(r.s.Cast(Render(n.X, r.s), n.To))
	case *Case:
		r.b.WriteString("CASE")
		if n.Operand != nil {
			r.b.WriteByte(' ')
			r.node(n.Operand, 0)
		}
		for _, w := range n.Whens {
			r.b.WriteString(" WHEN ")
			r.node(w.Cond, 0)
			r.b.WriteString(" THEN ")
			r.node(w.Result, 0)
		}
		if n.Else != nil {
			r.b.WriteString(" ELSE ")
			r.node(n.Else, 0)
		}
		r.b.WriteString(" END")
	case *In:
		r.node(n.X, precAdd)
		r.b.WriteString(not(n.Not) + " IN (")
		for i, x := range n.List {
			if i > 0 {
				r.b.WriteString(", ")
			}
			r.node(x, 0)
		}
		r.b.WriteByte(')')
	case *Between:
		r.node(n.X, precAdd)
		r.b.WriteString(not(n.Not) + " BETWEEN ")
		r.node(n.Lo, precAdd)
		r.b.WriteString(" AND ")
		r.node(n.Hi, precAdd)
	case *IsNull:
		r.node(n.X, precAdd)
		if n.Not {
			r.b.WriteString(" IS NOT NULL")
		} else {
			r.b.WriteString(" IS NULL")
		}
	case *Like:
		r.node(n.X, precAdd)
		r.b.WriteString(not(n.Not) + " LIKE ")
		r.node(n.Pattern, precAtom)
	}
}

func not(b bool) string {
	if b {
		return " NOT"
	}
	return ""
}
