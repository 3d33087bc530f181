package expr

import (
	"fmt"
	"strconv"
	"strings"
	"sync"

	"github.com/pingcap/tidb/pkg/parser"
	"github.com/pingcap/tidb/pkg/parser/ast"
	"github.com/pingcap/tidb/pkg/parser/mysql"
	"github.com/pingcap/tidb/pkg/parser/opcode"
	"github.com/pingcap/tidb/pkg/parser/test_driver"
)

// selectPrefix is prepended to the expression so that the SQL parser reads it
// as the only field of a SELECT.
const selectPrefix = "SELECT "

// sqlMode is the parser mode: "x" is an identifier (ANSI_QUOTES), backslash
// is an ordinary character in '...' (NO_BACKSLASH_ESCAPES, as in standard
// SQL), and built-in function names may be followed by a space before "("
// (IGNORE_SPACE).
const sqlMode = mysql.ModeANSIQuotes | mysql.ModeNoBackslashEscapes | mysql.ModeIgnoreSpace

// parsers pools SQL parsers, which are not safe for concurrent use and cost
// several microseconds to create.
var parsers = sync.Pool{New: func() any {
	p := parser.New()
	p.SetSQLMode(sqlMode)
	return p
}}

// Parse parses one assay expression. On success it returns the tree and no
// diagnostics. Otherwise it returns a nil Node and every problem it found,
// sorted by offset: first all lexical problems (comments, semicolons, bad
// characters and literals, ...); if there are none, the syntax error, if
// any; and if the text parses, every unsupported construct. Parse never
// panics.
func Parse(src string) (Node, Diagnostics) {
	if len(src) > maxLen {
		return nil, Diagnostics{{Code: CodeLimit, Msg: fmt.Sprintf("expression is longer than %d bytes", maxLen),
			Span: Span{0, len(src)}}}
	}
	toks, psrc, diags := lex(src)
	if len(diags) > 0 {
		return nil, sortDiags(diags)
	}
	if len(toks) == 0 {
		return nil, Diagnostics{{Code: CodeEmpty, Msg: "expression is empty", Span: Span{0, len(src)}}}
	}
	stmt, diag := parseSQL(psrc)
	if diag != nil {
		if diag.Code == CodeSyntax {
			diag.Span = tokenSpanAt(toks, diag.Span.Start, len(src))
			if diag.Span.Start == diag.Span.End {
				diag.Msg = "syntax error: unexpected end of expression"
			} else {
				diag.Msg = "syntax error near `" + src[diag.Span.Start:diag.Span.End] + "`"
			}
		}
		return nil, Diagnostics{*diag}
	}
	b := &builder{src: src, toks: toks}
	n := b.statement(stmt)
	if len(b.diags) > 0 {
		return nil, sortDiags(b.diags)
	}
	return n, nil
}

// parseOne is the SQL parser call; tests replace it to exercise the panic
// guard in parseSQL.
var parseOne = func(p *parser.Parser, sql string) (ast.StmtNode, error) {
	return p.ParseOneStmt(sql, "", "")
}

// parseSQL runs the SQL parser on "SELECT "+src, turning errors and panics
// into a diagnostic whose Span.Start is the byte offset in src.
func parseSQL(src string) (stmt ast.StmtNode, diag *Diagnostic) {
	p := parsers.Get().(*parser.Parser)
	full := selectPrefix + src
	defer func() {
		if r := recover(); r != nil {
			// The parser may be in a bad state: do not return it to the pool.
			stmt, diag = nil, &Diagnostic{Code: CodeInternal, Msg: fmt.Sprintf("SQL parser failed: %v", r),
				Span: Span{0, len(src)}}
		}
	}()
	stmt, err := parseOne(p, full)
	parsers.Put(p)
	if err != nil {
		off := errorOffset(err.Error(), full) - len(selectPrefix)
		off = max(0, min(off, len(src)))
		return nil, &Diagnostic{Code: CodeSyntax, Msg: "syntax error", Span: Span{off, off}}
	}
	return stmt, nil
}

// errorOffset recovers the byte offset of a parse error in full from the
// parser's message `line L column C near "REST"...`, where REST is full from
// the offending token to the end (cut at 2048 bytes, with "(total length
// N)" appended). It returns len(full) if the message has another form.
func errorOffset(msg, full string) int {
	const near = ` near "`
	i := strings.Index(msg, near)
	if i < 0 {
		return len(full)
	}
	rest := msg[i+len(near):]
	if j := strings.LastIndex(rest, "(total length "); j >= 0 {
		if n, err := strconv.Atoi(strings.TrimSuffix(strings.TrimSpace(rest[j+len("(total length "):]), ")")); err == nil && n <= len(full) {
			return len(full) - n
		}
	}
	// The longest prefix of rest that is a suffix of full and is followed by
	// the closing quote is the near text.
	for j := min(len(rest)-1, len(full)); j >= 0; j-- {
		if rest[j] == '"' && strings.HasSuffix(full, rest[:j]) {
			return len(full) - j
		}
	}
	return len(full)
}

// tokenSpanAt returns the span of the token starting at off, or an empty span
// at off.
func tokenSpanAt(toks []token, off, n int) Span {
	for _, t := range toks {
		if t.start == off {
			return Span{t.start, t.end}
		}
	}
	return Span{min(off, n), min(off, n)}
}

// builder converts the SQL parser's tree into assay's tree while consuming
// the lexer's tokens in step. Each conversion step checks that the tokens
// at the current position are exactly the ones the parser's node stands for
// (and, where the parser records one, that the node starts there). This
// gives every node an exact span, and any text the parser silently dropped,
// reordered or reinterpreted shows up as a mismatch, which is reported as
// unsupported syntax rather than accepted.
type builder struct {
	src    string
	toks   []token
	pos    int
	diags  Diagnostics
	failed bool // lost step with the tokens; stop converting
	depth  int
}

func (b *builder) peek() token {
	if b.pos < len(b.toks) {
		return b.toks[b.pos]
	}
	return token{kind: tkEOF, start: len(b.src), end: len(b.src)}
}

func (b *builder) peekAt(k int) token {
	if b.pos+k < len(b.toks) {
		return b.toks[b.pos+k]
	}
	return token{kind: tkEOF, start: len(b.src), end: len(b.src)}
}

// lastEnd is the end offset of the last consumed token.
func (b *builder) lastEnd() int {
	if b.pos == 0 {
		return 0
	}
	return b.toks[b.pos-1].end
}

func (b *builder) spanFrom(start int) Span { return Span{start, b.lastEnd()} }

func (b *builder) errorf(code string, sp Span, hint, format string, args ...any) {
	b.diags = append(b.diags, Diagnostic{Code: code, Msg: fmt.Sprintf(format, args...), Hint: hint, Span: sp})
}

// lost records that the tokens no longer match the parser's tree.
func (b *builder) lost() {
	if b.failed {
		return
	}
	b.failed = true
	t := b.peek()
	if t.kind == tkEOF {
		b.errorf(CodeUnsupported, Span{t.start, t.end}, "", "unsupported syntax")
		return
	}
	b.errorf(CodeUnsupported, Span{t.start, t.end}, "", "unsupported syntax near `%s`", b.src[t.start:t.end])
}

// keyword consumes the bare keyword kw or loses step.
func (b *builder) keyword(kw string) bool {
	if b.failed {
		return false
	}
	if !b.peek().is(kw) {
		b.lost()
		return false
	}
	b.pos++
	return true
}

// punct consumes the operator op or loses step.
func (b *builder) punct(op string) bool {
	if b.failed {
		return false
	}
	if !b.peek().isOp(op) {
		b.lost()
		return false
	}
	b.pos++
	return true
}

// optKeyword consumes kw if it is next.
func (b *builder) optKeyword(kw string) bool {
	if !b.failed && b.peek().is(kw) {
		b.pos++
		return true
	}
	return false
}

// skipParens consumes a balanced "( ... )" group, or loses step.
func (b *builder) skipParens() bool {
	if !b.punct("(") {
		return false
	}
	for depth := 1; depth > 0; b.pos++ {
		t := b.peek()
		switch {
		case t.kind == tkEOF:
			b.lost()
			return false
		case t.isOp("("):
			depth++
		case t.isOp(")"):
			depth--
		}
	}
	return true
}

// statement checks that stmt is "SELECT <one expression>" with nothing else,
// and converts the expression.
func (b *builder) statement(stmt ast.StmtNode) Node {
	sel, ok := stmt.(*ast.SelectStmt)
	if !ok || sel.Fields == nil || len(sel.Fields.Fields) == 0 {
		b.errorf(CodeSyntax, Span{0, len(b.src)}, "write a single SQL expression", "not a single expression")
		return nil
	}
	first := b.peek()
	if sel.Fields.Fields[0].Expr == nil || sel.Fields.Fields[0].Offset-len(selectPrefix) != first.start {
		b.errorf(CodeSyntax, Span{first.start, first.end}, "write a single SQL expression",
			"unexpected `%s`", b.src[first.start:first.end])
		return nil
	}
	n := b.expr(sel.Fields.Fields[0].Expr)
	if b.failed {
		return nil
	}
	if t := b.peek(); t.kind != tkEOF {
		hint := "write a single SQL expression"
		switch {
		case t.isOp(","):
			hint = "write one expression, not a list"
		case t.is("AS") || t.kind == tkIdent || t.kind == tkQuoted || t.kind == tkString:
			hint = "aliases are not allowed; the spec names the expression"
		}
		b.errorf(CodeSyntax, Span{t.start, t.end}, hint, "unexpected `%s` after the expression", b.src[t.start:t.end])
		return nil
	}
	return n
}

// expr converts one parser node, consuming its tokens. It returns nil for
// rejected constructs (after reporting them) and when step is lost.
func (b *builder) expr(e ast.ExprNode) Node {
	if b.failed {
		return nil
	}
	if e == nil {
		b.lost()
		return nil
	}
	start := b.peek().start
	// Where the parser records a start offset (every real node's offset is at
	// least len(selectPrefix)), it must be the current token.
	// (An EXISTS node records the offset of EXISTS, after any NOT.)
	_, exists := e.(*ast.ExistsSubqueryExpr)
	if off := e.OriginTextPosition(); !exists && off >= len(selectPrefix) && off-len(selectPrefix) != start {
		b.lost()
		return nil
	}
	b.depth++
	defer func() { b.depth-- }()
	if b.depth > maxDepth {
		b.errorf(CodeLimit, Span{start, len(b.src)}, "split the expression or simplify it",
			"expression is too complex (nested more than %d levels)", maxDepth)
		b.failed = true
		return nil
	}
	switch e := e.(type) {
	case *ast.ParenthesesExpr:
		b.punct("(")
		n := b.expr(e.Expr)
		b.punct(")")
		return n
	case *ast.ColumnNameExpr:
		return b.column(e, start)
	case *test_driver.ValueExpr:
		return b.literal(e, start)
	case *ast.UnaryOperationExpr:
		return b.unary(e, start)
	case *ast.BinaryOperationExpr:
		return b.binary(e, start)
	case *ast.FuncCallExpr:
		return b.call(e, start)
	case *ast.FuncCastExpr:
		return b.cast(e, start)
	case *ast.CaseExpr:
		return b.caseExpr(e, start)
	case *ast.PatternInExpr:
		return b.in(e, start)
	case *ast.BetweenExpr:
		x := b.expr(e.Expr)
		not := b.optKeyword("NOT")
		b.keyword("BETWEEN")
		lo := b.expr(e.Left)
		b.keyword("AND")
		hi := b.expr(e.Right)
		if b.failed || not != e.Not || x == nil || lo == nil || hi == nil {
			b.checkStep(not == e.Not)
			return nil
		}
		return &Between{X: x, Lo: lo, Hi: hi, Not: not, Sp: b.spanFrom(start)}
	case *ast.IsNullExpr:
		x := b.expr(e.Expr)
		b.keyword("IS")
		not := b.optKeyword("NOT")
		if !b.optKeyword("NULL") {
			b.keyword("UNKNOWN")
		}
		if b.failed || not != e.Not || x == nil {
			b.checkStep(not == e.Not)
			return nil
		}
		return &IsNull{X: x, Not: not, Sp: b.spanFrom(start)}
	case *ast.IsTruthExpr:
		b.expr(e.Expr)
		b.keyword("IS")
		b.optKeyword("NOT")
		if !b.optKeyword("TRUE") {
			b.keyword("FALSE")
		}
		if !b.failed {
			b.errorf(CodeIsTruth, b.spanFrom(start), "write the condition itself, NOT x, or coalesce(x, FALSE)",
				"IS TRUE / IS FALSE is not allowed")
		}
		return nil
	case *ast.PatternLikeOrIlikeExpr:
		return b.like(e, start)
	case *ast.PatternRegexpExpr:
		b.expr(e.Expr)
		b.optKeyword("NOT")
		if !b.optKeyword("REGEXP") {
			b.keyword("RLIKE")
		}
		b.expr(e.Pattern)
		if !b.failed {
			b.errorf(CodeRegexp, b.spanFrom(start), "use LIKE with % and _ wildcards",
				"regular expression matching is not portable and is not allowed")
		}
		return nil
	case *ast.AggregateFuncExpr:
		name := strings.ToLower(b.peek().val)
		if b.anyName() && b.skipParens() {
			b.errorf(CodeAggregate, b.spanFrom(start), "an expression is evaluated per row; the metric's aggregation is declared in the spec",
				"aggregate function `%s` is not allowed in an expression", name)
		}
		return nil
	case *ast.WindowFuncExpr:
		name := strings.ToLower(b.peek().val)
		if b.anyName() && b.skipParens() && b.windowTail() {
			b.errorf(CodeWindow, b.spanFrom(start), "an expression is evaluated per row of the source",
				"window function `%s` is not allowed", name)
		}
		return nil
	case *ast.SubqueryExpr:
		if b.skipParens() {
			b.errorf(CodeSubquery, b.spanFrom(start), "refer to columns of the source; join other data in the source definition",
				"subqueries are not allowed")
		}
		return nil
	case *ast.ExistsSubqueryExpr:
		for b.optKeyword("NOT") {
		}
		if b.keyword("EXISTS") && b.skipParens() {
			b.errorf(CodeSubquery, b.spanFrom(start), "refer to columns of the source; join other data in the source definition",
				"EXISTS subqueries are not allowed")
		}
		return nil
	case *ast.CompareSubqueryExpr:
		b.expr(e.L)
		b.compareOp()
		if !b.optKeyword("ANY") && !b.optKeyword("SOME") {
			b.keyword("ALL")
		}
		if b.skipParens() {
			b.errorf(CodeSubquery, b.spanFrom(start), "refer to columns of the source; join other data in the source definition",
				"subqueries are not allowed")
		}
		return nil
	case *ast.RowExpr:
		b.optKeyword("ROW")
		if b.skipParens() {
			b.errorf(CodeUnsupported, b.spanFrom(start), "compare one value at a time, joined with AND",
				"row constructors are not allowed")
		}
		return nil
	case *ast.DefaultExpr:
		if b.keyword("DEFAULT") && b.skipParens() {
			b.errorf(CodeUnsupported, b.spanFrom(start), "", "DEFAULT is not allowed")
		}
		return nil
	case *ast.ValuesExpr:
		if b.keyword("VALUES") && b.skipParens() {
			b.errorf(CodeUnsupported, b.spanFrom(start), "", "VALUES() is not allowed")
		}
		return nil
	case *ast.SetCollationExpr:
		b.expr(e.Expr)
		if b.keyword("COLLATE") {
			if t := b.peek(); t.kind == tkIdent || t.kind == tkQuoted || t.kind == tkString {
				b.pos++
				b.errorf(CodeUnsupported, b.spanFrom(start), "use lower(x) or upper(x) to compare case-insensitively",
					"COLLATE is not allowed")
				return nil
			}
			b.lost()
		}
		return nil
	}
	b.lost()
	return nil
}

// checkStep loses step if ok is false; it is used where the parser's tree
// and the tokens disagree on a flag such as NOT.
func (b *builder) checkStep(ok bool) {
	if !ok {
		b.lost()
	}
}

// name consumes a function-name token equal (ignoring case) to name.
func (b *builder) name(name string) bool {
	if b.failed {
		return false
	}
	if t := b.peek(); t.kind != tkIdent || !strings.EqualFold(t.val, name) {
		b.lost()
		return false
	}
	b.pos++
	return true
}

// anyName consumes a bare word that names a rejected function; the parser
// may have normalized the name (STD becomes stddev_pop), so it is not
// compared.
func (b *builder) anyName() bool {
	if b.failed {
		return false
	}
	if b.peek().kind != tkIdent {
		b.lost()
		return false
	}
	b.pos++
	return true
}

// windowTail consumes what follows a window function's argument list:
// optional RESPECT/IGNORE NULLS and FROM FIRST/LAST, then OVER (...) or
// OVER name.
func (b *builder) windowTail() bool {
	for !b.failed {
		t := b.peek()
		if t.is("RESPECT") || t.is("IGNORE") || t.is("NULLS") || t.is("FROM") || t.is("FIRST") || t.is("LAST") {
			b.pos++
			continue
		}
		break
	}
	if !b.keyword("OVER") {
		return false
	}
	if b.peek().isOp("(") {
		return b.skipParens()
	}
	if t := b.peek(); t.kind == tkIdent || t.kind == tkQuoted {
		b.pos++
		return true
	}
	b.lost()
	return false
}

func (b *builder) column(e *ast.ColumnNameExpr, start int) Node {
	name := e.Name
	qualified := name.Schema.O != "" || name.Table.O != ""
	parts := []string{name.Name.O}
	if name.Table.O != "" {
		parts = []string{name.Table.O, name.Name.O}
	}
	if name.Schema.O != "" {
		parts = []string{name.Schema.O, name.Table.O, name.Name.O}
	}
	for i, part := range parts {
		if i > 0 && !b.punct(".") {
			return nil
		}
		t := b.peek()
		if (t.kind != tkIdent && t.kind != tkQuoted) || t.val != part {
			b.lost()
			return nil
		}
		b.pos++
	}
	if qualified {
		b.errorf(CodeQualified, b.spanFrom(start), fmt.Sprintf("write the bare column name, e.g. %s", quoteIdent(name.Name.O)),
			"qualified column names are not allowed")
		return nil
	}
	return &Column{Name: name.Name.O, Sp: b.spanFrom(start)}
}

func (b *builder) literal(e *test_driver.ValueExpr, start int) Node {
	t := b.peek()
	d := &e.Datum
	k := d.Kind()
	switch {
	case t.is("NULL") && k == test_driver.KindNull:
		b.pos++
		return &Literal{Kind: LitNull, Sp: b.spanFrom(start)}
	case (t.is("TRUE") || t.is("FALSE")) && k == test_driver.KindInt64:
		b.pos++
		return &Literal{Kind: LitBool, Bool: t.is("TRUE"), Sp: b.spanFrom(start)}
	case t.kind == tkNumber && numberAgrees(t.num, k):
		b.pos++
		return &Literal{Kind: t.num, Text: t.val, Sp: b.spanFrom(start)}
	case t.kind == tkString && k == test_driver.KindString:
		b.pos++
		val := t.val
		if b.peek().kind == tkString {
			for b.peek().kind == tkString {
				val += b.peek().val
				b.pos++
			}
			if val != d.GetString() {
				b.lost()
				return nil
			}
			b.errorf(CodeLiteral, b.spanFrom(start), "join strings with concat(a, b)",
				"adjacent string literals are not allowed")
			return nil
		}
		if val != d.GetString() {
			b.lost()
			return nil
		}
		return &Literal{Kind: LitString, Text: val, Sp: b.spanFrom(start)}
	}
	b.lost()
	return nil
}

// numberAgrees reports whether the parser's datum kind matches the lexer's
// reading of a number.
func numberAgrees(k LitKind, d byte) bool {
	switch k {
	case LitInt:
		return d == test_driver.KindInt64 || d == test_driver.KindUint64
	case LitDecimal:
		return d == test_driver.KindMysqlDecimal
	case LitFloat:
		return d == test_driver.KindFloat64
	}
	return false
}

func (b *builder) unary(e *ast.UnaryOperationExpr, start int) Node {
	var op string
	switch e.Op {
	case opcode.Not:
		if !b.keyword("NOT") {
			return nil
		}
		op = "NOT"
	case opcode.Minus:
		if !b.punct("-") {
			return nil
		}
		op = "-"
	case opcode.Plus:
		if !b.punct("+") {
			return nil
		}
		op = "+"
	default:
		b.lost()
		return nil
	}
	x := b.expr(e.V)
	if x == nil {
		return nil
	}
	return &Unary{Op: op, X: x, Sp: b.spanFrom(start)}
}

// binaryOps maps the parser's operators to assay's, with the tokens that
// may spell them.
var binaryOps = map[opcode.Op]struct {
	op     string
	tokens []string
}{
	opcode.LogicAnd: {"AND", []string{"AND"}},
	opcode.LogicOr:  {"OR", []string{"OR"}},
	opcode.EQ:       {"=", []string{"="}},
	opcode.NE:       {"<>", []string{"<>", "!="}},
	opcode.LT:       {"<", []string{"<"}},
	opcode.LE:       {"<=", []string{"<="}},
	opcode.GT:       {">", []string{">"}},
	opcode.GE:       {">=", []string{">="}},
	opcode.Plus:     {"+", []string{"+"}},
	opcode.Minus:    {"-", []string{"-"}},
	opcode.Mul:      {"*", []string{"*"}},
	opcode.Div:      {"/", []string{"/"}},
	opcode.Mod:      {"%", []string{"%"}},
}

// rejectedOps explains the parser's operators that assay does not accept.
var rejectedOps = map[opcode.Op]struct{ token, msg, hint string }{
	opcode.LogicXor: {"XOR", "XOR is not allowed", "write (a OR b) AND NOT (a AND b)"},
	opcode.IntDiv:   {"DIV", "DIV is not allowed", "write floor(a / b)"},
	opcode.NullEQ:   {"<=>", "`<=>` is not allowed", "write (a = b OR (a IS NULL AND b IS NULL))"},
	opcode.Mod:      {"MOD", "the MOD operator is not allowed", "write mod(a, b) or a % b"},
}

func (b *builder) binary(e *ast.BinaryOperationExpr, start int) Node {
	// mod(a, b) is parsed as the operator.
	if e.Op == opcode.Mod && b.peek().is("MOD") && b.peekAt(1).isOp("(") {
		b.pos += 2
		l := b.expr(e.L)
		b.punct(",")
		r := b.expr(e.R)
		b.punct(")")
		if l == nil || r == nil {
			return nil
		}
		return &Func{Name: "mod", Args: []Node{l, r}, Sp: b.spanFrom(start)}
	}
	l := b.expr(e.L)
	if b.failed {
		return nil
	}
	t := b.peek()
	if rej, ok := rejectedOps[e.Op]; ok && (t.is(rej.token) || t.isOp(rej.token)) {
		b.pos++
		b.expr(e.R)
		if !b.failed {
			b.errorf(CodeOperator, b.spanFrom(start), rej.hint, "%s", rej.msg)
		}
		return nil
	}
	spec, ok := binaryOps[e.Op]
	if !ok {
		b.lost()
		return nil
	}
	matched := false
	for _, s := range spec.tokens {
		if t.is(s) || t.isOp(s) {
			matched = true
		}
	}
	if !matched {
		b.lost()
		return nil
	}
	b.pos++
	r := b.expr(e.R)
	if l == nil || r == nil {
		return nil
	}
	return &Binary{Op: spec.op, L: l, R: r, Sp: b.spanFrom(start)}
}

// compareOp consumes a comparison operator token.
func (b *builder) compareOp() {
	if b.failed {
		return
	}
	switch b.peek().val {
	case "=", "<>", "!=", "<", "<=", ">", ">=", "<=>":
		if b.peek().kind == tkOp {
			b.pos++
			return
		}
	}
	b.lost()
}

// synthesized names the parser gives to calls it builds from other syntax,
// with the construct's message and hint.
var synthesized = map[string]struct{ code, msg, hint string }{
	ast.DateLiteral:      {CodeLiteral, "DATE '...' literals are not allowed", "write CAST('2024-01-31' AS DATE)"},
	ast.TimeLiteral:      {CodeLiteral, "TIME '...' literals are not allowed", ""},
	ast.TimestampLiteral: {CodeLiteral, "TIMESTAMP '...' literals are not allowed", "write CAST('2024-01-31 12:00:00' AS TIMESTAMP)"},
}

func (b *builder) call(e *ast.FuncCallExpr, start int) Node {
	fn := e.FnName.L
	if s, ok := synthesized[fn]; ok {
		// DATE 'x', TIME 'x', TIMESTAMP 'x'
		t := b.peek()
		if (t.is("DATE") || t.is("TIME") || t.is("TIMESTAMP")) && b.peekAt(1).kind == tkString {
			b.pos += 2
			b.errorf(s.code, b.spanFrom(start), s.hint, "%s", s.msg)
			return nil
		}
		b.lost()
		return nil
	}
	if e.Schema.O != "" {
		b.lost()
		return nil
	}
	if !b.name(e.FnName.O) {
		return nil
	}
	canon := canonicalFunc(fn)
	if canon == "" {
		if b.peek().isOp("(") {
			b.skipParens()
		}
		if !b.failed {
			b.errorf(CodeFunc, b.spanFrom(start), "allowed functions: "+strings.Join(AllowedFuncs(), ", "),
				"function `%s` is not allowed in assay expressions", fn)
		}
		return nil
	}
	open := b.pos
	if !b.punct("(") {
		return nil
	}
	// Special call syntax (trim(BOTH ...), substr(x FROM 1 FOR 2), ...) may
	// give arguments out of source order; it is recognized by the parser's
	// marker arguments or by separators other than commas.
	special := false
	for _, a := range e.Args {
		switch a.(type) {
		case *ast.TrimDirectionExpr, *ast.TimeUnitExpr, *ast.GetFormatSelectorExpr:
			special = true
		}
	}
	var args []Node
	ok := !special
	for i := 0; ok && i < len(e.Args); i++ {
		if i > 0 {
			sep := b.peek()
			switch {
			case sep.isOp(","):
			case canon == "substr" && ((i == 1 && sep.is("FROM")) || (i == 2 && sep.is("FOR"))):
			default:
				ok = false
				continue
			}
			b.pos++
		}
		before := len(b.diags)
		a := b.expr(e.Args[i])
		if b.failed && len(b.diags) == before+1 && b.diags[before].Code == CodeUnsupported {
			// Lost step inside the arguments: the parser read a special form.
			b.diags, b.failed = b.diags[:before], false
			ok = false
			continue
		}
		args = append(args, a)
	}
	if ok && !b.peek().isOp(")") {
		ok = false
	}
	if !ok {
		if b.failed {
			return nil
		}
		b.pos = open
		if b.skipParens() {
			hint := "write " + canon + "(...) with comma-separated arguments"
			switch canon {
			case "trim":
				hint = "write trim(x); other forms of TRIM are not allowed"
			case "substr":
				hint = "write substr(x, start) or substr(x, start, length)"
			}
			b.errorf(CodeFuncForm, b.spanFrom(start), hint, "unsupported form of `%s`", canon)
		}
		return nil
	}
	b.pos++ // ")"
	spec := funcs[canon]
	if len(args) < spec.min || (spec.max >= 0 && len(args) > spec.max) {
		b.errorf(CodeArity, b.spanFrom(start), "", "`%s` takes %s argument%s, got %d",
			canon, arityText(spec), plural(spec.max != 1 || spec.min != 1), len(args))
		return nil
	}
	for _, a := range args {
		if a == nil {
			return nil
		}
	}
	return &Func{Name: canon, Args: args, Sp: b.spanFrom(start)}
}

func plural(p bool) string {
	if p {
		return "s"
	}
	return ""
}

func (b *builder) cast(e *ast.FuncCastExpr, start int) Node {
	switch e.FunctionType {
	case ast.CastConvertFunction:
		if b.keyword("CONVERT") && b.skipParens() {
			b.errorf(CodeCast, b.spanFrom(start), "write CAST(x AS type)", "CONVERT is not allowed")
		}
		return nil
	case ast.CastBinaryOperator:
		if b.keyword("BINARY") {
			b.expr(e.Expr)
			if !b.failed {
				b.errorf(CodeCast, b.spanFrom(start), "", "BINARY is not allowed")
			}
		}
		return nil
	}
	if !b.keyword("CAST") || !b.punct("(") {
		return nil
	}
	x := b.expr(e.Expr)
	if b.failed {
		return nil
	}
	as := b.peek()
	if !as.is("AS") || as.castN == 0 {
		b.lost()
		return nil
	}
	b.pos += 1 + as.castN
	if !b.punct(")") || x == nil {
		return nil
	}
	return &Cast{X: x, To: as.castTo, Sp: b.spanFrom(start)}
}

func (b *builder) caseExpr(e *ast.CaseExpr, start int) Node {
	if !b.keyword("CASE") {
		return nil
	}
	c := &Case{}
	bad := false
	if e.Value != nil {
		if c.Operand = b.expr(e.Value); c.Operand == nil {
			bad = true
		}
	}
	for _, w := range e.WhenClauses {
		b.keyword("WHEN")
		cond := b.expr(w.Expr)
		b.keyword("THEN")
		res := b.expr(w.Result)
		if cond == nil || res == nil {
			bad = true
		}
		c.Whens = append(c.Whens, When{Cond: cond, Result: res})
	}
	if e.ElseClause != nil {
		b.keyword("ELSE")
		if c.Else = b.expr(e.ElseClause); c.Else == nil {
			bad = true
		}
	}
	b.keyword("END")
	if bad || b.failed {
		return nil
	}
	c.Sp = b.spanFrom(start)
	return c
}

func (b *builder) in(e *ast.PatternInExpr, start int) Node {
	x := b.expr(e.Expr)
	not := b.optKeyword("NOT")
	b.keyword("IN")
	if b.failed || not != e.Not {
		b.checkStep(not == e.Not)
		return nil
	}
	if e.Sel != nil {
		if b.skipParens() {
			b.errorf(CodeSubquery, b.spanFrom(start), "list the values, e.g. x IN ('a', 'b')", "IN (subquery) is not allowed")
		}
		return nil
	}
	b.punct("(")
	list := make([]Node, 0, len(e.List))
	bad := x == nil
	for i, item := range e.List {
		if i > 0 {
			b.punct(",")
		}
		n := b.expr(item)
		bad = bad || n == nil
		list = append(list, n)
	}
	b.punct(")")
	if bad || b.failed {
		return nil
	}
	return &In{X: x, List: list, Not: not, Sp: b.spanFrom(start)}
}

func (b *builder) like(e *ast.PatternLikeOrIlikeExpr, start int) Node {
	x := b.expr(e.Expr)
	not := b.optKeyword("NOT")
	ilike := false
	if !b.optKeyword("LIKE") {
		if b.keyword("ILIKE") {
			ilike = true
		}
	}
	if b.failed || not != e.Not || ilike == e.IsLike {
		b.checkStep(not == e.Not && ilike != e.IsLike)
		return nil
	}
	pat := b.expr(e.Pattern)
	if b.failed {
		return nil
	}
	if e.EscapeExplicit {
		b.keyword("ESCAPE")
		if b.peek().kind != tkString {
			b.lost()
			return nil
		}
		b.pos++
		b.errorf(CodeLike, b.spanFrom(start), "LIKE patterns cannot escape % or _; compare with = or use substr and length",
			"LIKE ... ESCAPE is not allowed")
		return nil
	}
	if ilike {
		b.errorf(CodeLike, b.spanFrom(start), "write lower(x) LIKE 'pattern' with a lower-case pattern",
			"ILIKE is not allowed (not every engine has it)")
		return nil
	}
	if l, ok := pat.(*Literal); ok && l.Kind == LitString && strings.ContainsRune(l.Text, '\\') {
		b.errorf(CodeLike, pat.Span(), "engines disagree on whether backslash escapes % and _ in LIKE; avoid backslashes in patterns",
			"backslash in a LIKE pattern is not allowed")
		return nil
	}
	if x == nil || pat == nil {
		return nil
	}
	return &Like{X: x, Pattern: pat, Not: not, Sp: b.spanFrom(start)}
}

// quoteIdent quotes name as a standard SQL identifier.
func quoteIdent(name string) string {
	return `"` + strings.ReplaceAll(name, `"`, `""`) + `"`
}
