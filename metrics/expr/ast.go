package expr

import "github.com/assay-dev/assay/metrics/timefmt"

// Span is a half-open byte range [Start, End) in the expression text that
// Parse was given.
type Span struct {
	Start int
	End   int
}

// Node is a node of an assay expression tree. The set of node types is closed:
// only the types declared in this package implement Node.
type Node interface {
	// Span returns the byte range of the node in the parsed text.
	Span() Span
	node()
}

// LitKind is the kind of a Literal.
type LitKind uint8

// The literal kinds. LitInt is a 64-bit signed integer, LitDecimal an exact
// fixed-point number with at most 38 digits, LitFloat a finite IEEE 754
// double.
const (
	LitNull LitKind = iota + 1
	LitBool
	LitInt
	LitDecimal
	LitFloat
	LitString
)

// String returns the lower-case name of the literal kind.
func (k LitKind) String() string {
	switch k {
	case LitNull:
		return "null"
	case LitBool:
		return "bool"
	case LitInt:
		return "int"
	case LitDecimal:
		return "decimal"
	case LitFloat:
		return "float"
	case LitString:
		return "string"
	}
	return "invalid"
}

// Type is the target type of a Cast.
type Type uint8

// The cast target types, named after their standard SQL spelling.
const (
	TypeDouble    Type = iota + 1 // DOUBLE PRECISION
	TypeBigInt                    // BIGINT
	TypeVarchar                   // VARCHAR
	TypeDate                      // DATE
	TypeTimestamp                 // TIMESTAMP (without time zone)
	TypeBoolean                   // BOOLEAN
)

// String returns the standard SQL spelling of the type, such as
// "DOUBLE PRECISION".
func (t Type) String() string {
	switch t {
	case TypeDouble:
		return "DOUBLE PRECISION"
	case TypeBigInt:
		return "BIGINT"
	case TypeVarchar:
		return "VARCHAR"
	case TypeDate:
		return "DATE"
	case TypeTimestamp:
		return "TIMESTAMP"
	case TypeBoolean:
		return "BOOLEAN"
	}
	return "INVALID"
}

// Column is a reference to a column of the metric's source, by its exact,
// unqualified name.
type Column struct {
	Name string
	Sp   Span
}

// Literal is a constant. Text holds the canonical numeric text for LitInt,
// LitDecimal and LitFloat (for example "0.5" for ".5" and "1e3" for
// "1E+03"), the unescaped value for LitString, and is empty for LitNull and
// LitBool, whose value is in Bool.
type Literal struct {
	Kind LitKind
	Text string
	Bool bool
	Sp   Span
}

// Unary is a prefix operation. Op is "NOT", "-" or "+".
type Unary struct {
	Op string
	X  Node
	Sp Span
}

// Binary is an infix operation. Op is one of "AND", "OR", "=", "<>", "<",
// "<=", ">", ">=", "+", "-", "*", "/" and "%".
type Binary struct {
	Op   string
	L, R Node
	Sp   Span
}

// Func is a call of an allow-listed function; Name is its lower-case canonical
// name (see the allow-list in funcs.go).
type Func struct {
	Name string
	Args []Node
	Sp   Span
	// Time is how a local-time function (see LocalFuncs) reads its column:
	// set by the spec loader, nil until then (printers then use UTC and a
	// native timestamp). Equal ignores it.
	Time *TimeRead
}

// TimeRead is the time zone a local-time function works in and how its
// column stores times.
type TimeRead struct {
	Zone   string // IANA name; "" or "UTC" for UTC
	Format timefmt.Format
}

// Case is a CASE expression. Operand is nil for a searched CASE
// (CASE WHEN cond THEN ...); Else is nil when there is no ELSE branch.
type Case struct {
	Operand Node
	Whens   []When
	Else    Node
	Sp      Span
}

// When is one WHEN ... THEN ... branch of a Case.
type When struct {
	Cond, Result Node
}

// In is "X [NOT] IN (List...)" with a non-empty list of expressions.
type In struct {
	X    Node
	List []Node
	Not  bool
	Sp   Span
}

// Between is "X [NOT] BETWEEN Lo AND Hi".
type Between struct {
	X, Lo, Hi Node
	Not       bool
	Sp        Span
}

// IsNull is "X IS [NOT] NULL".
type IsNull struct {
	X   Node
	Not bool
	Sp  Span
}

// Like is "X [NOT] LIKE Pattern", case-sensitive and without an ESCAPE clause.
type Like struct {
	X, Pattern Node
	Not        bool
	Sp         Span
}

// Cast is "CAST(X AS To)".
type Cast struct {
	X  Node
	To Type
	Sp Span
}

// Span implements Node.
func (n *Column) Span() Span { return n.Sp }

// Span implements Node.
func (n *Literal) Span() Span { return n.Sp }

// Span implements Node.
func (n *Unary) Span() Span { return n.Sp }

// Span implements Node.
func (n *Binary) Span() Span { return n.Sp }

// Span implements Node.
func (n *Func) Span() Span { return n.Sp }

// Span implements Node.
func (n *Case) Span() Span { return n.Sp }

// Span implements Node.
func (n *In) Span() Span { return n.Sp }

// Span implements Node.
func (n *Between) Span() Span { return n.Sp }

// Span implements Node.
func (n *IsNull) Span() Span { return n.Sp }

// Span implements Node.
func (n *Like) Span() Span { return n.Sp }

// Span implements Node.
func (n *Cast) Span() Span { return n.Sp }

func (*Column) node()  {}
func (*Literal) node() {}
func (*Unary) node()   {}
func (*Binary) node()  {}
func (*Func) node()    {}
func (*Case) node()    {}
func (*In) node()      {}
func (*Between) node() {}
func (*IsNull) node()  {}
func (*Like) node()    {}
func (*Cast) node()    {}

// Children returns the direct operands of n in source order.
func Children(n Node) []Node {
	switch n := n.(type) {
	case *Unary:
		return []Node{n.X}
	case *Binary:
		return []Node{n.L, n.R}
	case *Func:
		return n.Args
	case *Case:
		var out []Node
		if n.Operand != nil {
			out = append(out, n.Operand)
		}
		for _, w := range n.Whens {
			out = append(out, w.Cond, w.Result)
		}
		if n.Else != nil {
			out = append(out, n.Else)
		}
		return out
	case *In:
		return append([]Node{n.X}, n.List...)
	case *Between:
		return []Node{n.X, n.Lo, n.Hi}
	case *IsNull:
		return []Node{n.X}
	case *Like:
		return []Node{n.X, n.Pattern}
	case *Cast:
		return []Node{n.X}
	}
	return nil
}

// Walk calls fn for n and then, if fn returned true, for each operand of n,
// depth first in source order. A nil n is not visited.
func Walk(n Node, fn func(Node) bool) {
	if n == nil || !fn(n) {
		return
	}
	for _, c := range Children(n) {
		Walk(c, fn)
	}
}

// Columns returns the distinct column names referenced by n, in order of
// first appearance.
func Columns(n Node) []string {
	var out []string
	seen := map[string]bool{}
	Walk(n, func(n Node) bool {
		if c, ok := n.(*Column); ok && !seen[c.Name] {
			seen[c.Name] = true
			out = append(out, c.Name)
		}
		return true
	})
	return out
}

// Equal reports whether a and b are the same tree, ignoring spans.
func Equal(a, b Node) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	switch a := a.(type) {
	case *Column:
		b, ok := b.(*Column)
		return ok && a.Name == b.Name
	case *Literal:
		b, ok := b.(*Literal)
		return ok && a.Kind == b.Kind && a.Text == b.Text && a.Bool == b.Bool
	case *Unary:
		b, ok := b.(*Unary)
		return ok && a.Op == b.Op && Equal(a.X, b.X)
	case *Binary:
		b, ok := b.(*Binary)
		return ok && a.Op == b.Op && Equal(a.L, b.L) && Equal(a.R, b.R)
	case *Func:
		b, ok := b.(*Func)
		return ok && a.Name == b.Name && equalList(a.Args, b.Args)
	case *Case:
		b, ok := b.(*Case)
		if !ok || len(a.Whens) != len(b.Whens) || !Equal(a.Operand, b.Operand) || !Equal(a.Else, b.Else) {
			return false
		}
		for i := range a.Whens {
			if !Equal(a.Whens[i].Cond, b.Whens[i].Cond) || !Equal(a.Whens[i].Result, b.Whens[i].Result) {
				return false
			}
		}
		return true
	case *In:
		b, ok := b.(*In)
		return ok && a.Not == b.Not && Equal(a.X, b.X) && equalList(a.List, b.List)
	case *Between:
		b, ok := b.(*Between)
		return ok && a.Not == b.Not && Equal(a.X, b.X) && Equal(a.Lo, b.Lo) && Equal(a.Hi, b.Hi)
	case *IsNull:
		b, ok := b.(*IsNull)
		return ok && a.Not == b.Not && Equal(a.X, b.X)
	case *Like:
		b, ok := b.(*Like)
		return ok && a.Not == b.Not && Equal(a.X, b.X) && Equal(a.Pattern, b.Pattern)
	case *Cast:
		b, ok := b.(*Cast)
		return ok && a.To == b.To && Equal(a.X, b.X)
	}
	return false
}

func equalList(a, b []Node) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !Equal(a[i], b[i]) {
			return false
		}
	}
	return true
}
