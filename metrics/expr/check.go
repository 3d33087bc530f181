package expr

import (
	"fmt"
	"strings"
)

// Kind is the coarse type of an expression's value, enough for the spec
// loader to require a filter to be a condition and a value to be a number.
type Kind uint8

// The kinds. KindUnknown is the kind of columns and NULL (their type is the
// warehouse's business) and is compatible with every kind.
const (
	KindUnknown Kind = iota
	KindBoolean
	KindNumeric
	KindString
	KindTemporal // DATE or TIMESTAMP
)

// String returns the lower-case name of the kind.
func (k Kind) String() string {
	switch k {
	case KindBoolean:
		return "boolean"
	case KindNumeric:
		return "numeric"
	case KindString:
		return "string"
	case KindTemporal:
		return "date/time"
	}
	return "unknown"
}

// Check validates n against the source's columns and checks that operands
// have fitting kinds. Every Column must name one of columns exactly (names
// are case-sensitive). It returns all problems, sorted by offset.
func Check(n Node, columns []string) Diagnostics {
	if n == nil {
		return nil
	}
	var ds Diagnostics
	known := make(map[string]bool, len(columns))
	for _, c := range columns {
		known[c] = true
	}
	Walk(n, func(n Node) bool {
		if c, ok := n.(*Column); ok && !known[c.Name] {
			ds = append(ds, unknownColumn(c, columns))
		}
		return true
	})
	t := &typer{diags: &ds}
	t.kind(n)
	return sortDiags(ds)
}

// maxListedColumns bounds the column list in an unknown-column hint.
const maxListedColumns = 20

func unknownColumn(c *Column, columns []string) Diagnostic {
	d := Diagnostic{Code: CodeColumn, Msg: "unknown column `" + c.Name + "`", Span: c.Sp}
	if s := suggest(c.Name, columns); s != "" {
		d.Msg += "; did you mean `" + s + "`?"
	}
	switch {
	case len(columns) == 0:
		d.Hint = "the source has no columns"
	case len(columns) <= maxListedColumns:
		d.Hint = "available columns: " + strings.Join(quoteAll(columns), ", ")
	default:
		d.Hint = fmt.Sprintf("available columns: %s, and %d more",
			strings.Join(quoteAll(columns[:maxListedColumns]), ", "), len(columns)-maxListedColumns)
	}
	return d
}

func quoteAll(names []string) []string {
	out := make([]string, len(names))
	for i, n := range names {
		out[i] = "`" + n + "`"
	}
	return out
}

// suggest returns the column closest to name: one equal ignoring case, or
// else the first at the smallest edit distance below 3; "" if none.
func suggest(name string, columns []string) string {
	for _, c := range columns {
		if strings.EqualFold(c, name) {
			return c
		}
	}
	best, bestD := "", 3
	for _, c := range columns {
		if d := editDistance(name, c, bestD); d < bestD {
			best, bestD = c, d
		}
	}
	return best
}

// editDistance is the Levenshtein distance between a and b in runes, or
// any value >= limit once it is known to be at least limit.
func editDistance(a, b string, limit int) int {
	ra, rb := []rune(a), []rune(b)
	if d := len(ra) - len(rb); d >= limit || -d >= limit {
		return limit
	}
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		rowMin := cur[0]
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
			rowMin = min(rowMin, cur[j])
		}
		if rowMin >= limit {
			return limit
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

// KindOf returns the kind of n's value without reporting problems; operands
// of the wrong kind make the result KindUnknown where it cannot be inferred.
func KindOf(n Node) Kind {
	if n == nil {
		return KindUnknown
	}
	return (&typer{}).kind(n)
}

// ExpectKind reports an E-EXPR-KIND diagnostic if n's kind is known and is
// not want; what names the expression's role in the message, e.g. "filter".
func ExpectKind(n Node, want Kind, what string) Diagnostics {
	if n == nil {
		return nil
	}
	got := KindOf(n)
	if got == KindUnknown || got == want {
		return nil
	}
	hint := ""
	switch want {
	case KindBoolean:
		hint = "write a condition, e.g. amount > 0"
	case KindNumeric:
		hint = "write a numeric expression, e.g. CASE WHEN x THEN 1 ELSE 0 END"
	}
	return Diagnostics{{Code: CodeKind, Span: n.Span(), Hint: hint,
		Msg: fmt.Sprintf("a %s must be %s, but this expression is %s", what, want, got)}}
}

// typer infers kinds, reporting mismatches to diags when it is not nil.
type typer struct {
	diags *Diagnostics
}

func (t *typer) errorf(sp Span, hint, format string, args ...any) {
	if t.diags != nil {
		*t.diags = append(*t.diags, Diagnostic{Code: CodeType, Msg: fmt.Sprintf(format, args...), Hint: hint, Span: sp})
	}
}

func (t *typer) errorf2(code string, sp Span, hint, format string, args ...any) {
	if t.diags != nil {
		*t.diags = append(*t.diags, Diagnostic{Code: code, Msg: fmt.Sprintf(format, args...), Hint: hint, Span: sp})
	}
}

// want checks that operand n, of kind got, has kind k (or is unknown).
func (t *typer) want(n Node, got, k Kind, what string) {
	if got != KindUnknown && got != k {
		t.errorf(n.Span(), castHintFor(k), "%s needs a %s operand, got %s", what, k, got)
	}
}

func castHintFor(k Kind) string {
	switch k {
	case KindNumeric:
		return "convert with CAST(x AS DOUBLE PRECISION)"
	case KindString:
		return "convert with CAST(x AS VARCHAR)"
	case KindBoolean:
		return "compare explicitly, e.g. x <> 0"
	}
	return ""
}

// compatible reports whether values of kinds a and b can be compared
// portably: same kind, or either unknown, or a date/time against a string
// literal.
func compatible(a, b Kind) bool {
	return a == KindUnknown || b == KindUnknown || a == b ||
		(a == KindTemporal && b == KindString) || (a == KindString && b == KindTemporal)
}

// unify checks that every node in ns has a kind comparable with the others
// and returns the common known kind.
func (t *typer) unify(ns []Node, what string) Kind {
	common := KindUnknown
	for _, n := range ns {
		k := t.kind(n)
		switch {
		case common == KindUnknown:
			common = k
		case !compatible(common, k):
			t.errorf(n.Span(), "", "%s mixes %s and %s values", what, common, k)
		case k == KindTemporal:
			common = KindTemporal
		}
	}
	return common
}

func (t *typer) kind(n Node) Kind {
	switch n := n.(type) {
	case *Column:
		return KindUnknown
	case *Literal:
		switch n.Kind {
		case LitBool:
			return KindBoolean
		case LitInt, LitDecimal, LitFloat:
			return KindNumeric
		case LitString:
			return KindString
		}
		return KindUnknown
	case *Unary:
		x := t.kind(n.X)
		if n.Op == "NOT" {
			t.want(n.X, x, KindBoolean, "NOT")
			return KindBoolean
		}
		t.want(n.X, x, KindNumeric, "unary "+n.Op)
		return KindNumeric
	case *Binary:
		l, r := t.kind(n.L), t.kind(n.R)
		switch n.Op {
		case "AND", "OR":
			t.want(n.L, l, KindBoolean, n.Op)
			t.want(n.R, r, KindBoolean, n.Op)
			return KindBoolean
		case "+", "-", "*", "/", "%":
			t.want(n.L, l, KindNumeric, "`"+n.Op+"`")
			t.want(n.R, r, KindNumeric, "`"+n.Op+"`")
			return KindNumeric
		}
		if !compatible(l, r) {
			t.errorf(n.Sp, "convert one side with CAST", "cannot compare %s with %s", l, r)
		}
		return KindBoolean
	case *Func:
		if IsLocal(n.Name) {
			for _, a := range n.Args {
				if _, ok := a.(*Column); !ok {
					t.errorf2(CodeLocalArg, a.Span(), "write e.g. "+n.Name+"(created_at)", "`%s` takes a column name", n.Name)
				}
			}
			return funcs[n.Name].result
		}
		spec := funcs[n.Name]
		if spec.args == nil {
			k := t.unify(n.Args, "`"+n.Name+"`")
			if spec.result != KindUnknown {
				return spec.result
			}
			return k
		}
		for i, a := range n.Args {
			k := spec.args[min(i, len(spec.args)-1)]
			t.want(a, t.kind(a), k, "`"+n.Name+"`")
		}
		return spec.result
	case *Case:
		if n.Operand != nil {
			vals := []Node{n.Operand}
			for _, w := range n.Whens {
				vals = append(vals, w.Cond)
			}
			t.unify(vals, "CASE")
		} else {
			for _, w := range n.Whens {
				t.want(w.Cond, t.kind(w.Cond), KindBoolean, "WHEN")
			}
		}
		results := make([]Node, 0, len(n.Whens)+1)
		for _, w := range n.Whens {
			results = append(results, w.Result)
		}
		if n.Else != nil {
			results = append(results, n.Else)
		}
		return t.unify(results, "CASE")
	case *In:
		t.unify(append([]Node{n.X}, n.List...), "IN")
		return KindBoolean
	case *Between:
		t.unify([]Node{n.X, n.Lo, n.Hi}, "BETWEEN")
		return KindBoolean
	case *IsNull:
		t.kind(n.X)
		return KindBoolean
	case *Like:
		t.want(n.X, t.kind(n.X), KindString, "LIKE")
		t.want(n.Pattern, t.kind(n.Pattern), KindString, "LIKE")
		return KindBoolean
	case *Cast:
		t.kind(n.X)
		if _, lit := n.X.(*Literal); !lit && (n.To == TypeDate || n.To == TypeTimestamp) {
			t.errorf2(CodeTimeCast, n.Sp, "use local_date(col), local_week(col), local_hour(col) or local_weekday(col), which read the time in the experiment's time_zone",
				"CAST to %s of a value that is not a literal depends on the engine's session time zone", n.To)
		}
		switch n.To {
		case TypeDouble, TypeBigInt:
			return KindNumeric
		case TypeVarchar:
			return KindString
		case TypeDate, TypeTimestamp:
			return KindTemporal
		case TypeBoolean:
			return KindBoolean
		}
	}
	return KindUnknown
}
