package expr

import (
	"fmt"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// The lexer is assay's own, independent of the SQL parser. It runs first and
// has three jobs:
//
//  1. reject text the parser would silently accept or reinterpret: comments
//     (including MySQL's executable /*! ... */ comments), statement separators,
//     NUL bytes, invalid UTF-8, backtick identifiers, MySQL-only operators and
//     literal forms;
//  2. produce the token stream that the tree conversion in parse.go checks the
//     parser's tree against, token by token, which is how every node gets an
//     exact span and how any disagreement between the two is caught;
//  3. read CAST target types, which the parser only knows in MySQL spelling.

// maxLen bounds the expression text, in bytes.
const maxLen = 16 << 10

// maxParens bounds parenthesis nesting.
const maxParens = 128

// maxDepth bounds the depth of the tree (a + b + c + ... nests to the left).
const maxDepth = 512

type tokKind uint8

const (
	tkEOF    tokKind = iota
	tkIdent          // bare word; val is the text as written
	tkQuoted         // "quoted identifier"; val is unescaped
	tkString         // 'string literal'; val is unescaped
	tkNumber         // numeric literal; val is the canonical text
	tkOp             // punctuation; val is the operator text
)

type token struct {
	kind       tokKind
	start, end int
	val        string
	num        LitKind // tkNumber only
	// For the AS token inside CAST( ... AS type ): the target type and the
	// number of tokens spelling it.
	castTo Type
	castN  int
}

// is reports whether t is the bare keyword kw (upper case), ignoring case.
func (t token) is(kw string) bool {
	return t.kind == tkIdent && strings.EqualFold(t.val, kw)
}

// isOp reports whether t is the operator op.
func (t token) isOp(op string) bool { return t.kind == tkOp && t.val == op }

type lexer struct {
	src   string
	toks  []token
	diags Diagnostics
}

func (lx *lexer) report(code string, start, end int, hint, msg string) {
	lx.diags = append(lx.diags, Diagnostic{Code: code, Msg: msg, Hint: hint, Span: Span{start, end}})
}

// lex tokenizes src. It returns the tokens, the text to hand to the SQL
// parser (src with CAST target types respelled, same length) and the lexical
// problems found.
func lex(src string) ([]token, string, Diagnostics) {
	lx := &lexer{src: src}
	lx.checkEncoding()
	lx.scan()
	if len(lx.diags) > 0 {
		return nil, "", lx.diags
	}
	if !lx.checkDepth() {
		return nil, "", lx.diags
	}
	psrc := lx.casts()
	return lx.toks, psrc, lx.diags
}

// checkEncoding reports invalid UTF-8 (one diagnostic per run of bad bytes)
// and NUL bytes anywhere, including inside literals.
func (lx *lexer) checkEncoding() {
	s := lx.src
	for i := 0; i < len(s); {
		r, size := utf8.DecodeRuneInString(s[i:])
		switch {
		case r == utf8.RuneError && size <= 1:
			j := i + 1
			for j < len(s) {
				r2, size2 := utf8.DecodeRuneInString(s[j:])
				if r2 != utf8.RuneError || size2 > 1 {
					break
				}
				j++
			}
			lx.report(CodeUTF8, i, j, "", "text is not valid UTF-8")
			i = j
			continue
		case r == 0:
			lx.report(CodeNUL, i, i+1, "", "NUL byte in expression")
		}
		i += size
	}
}

func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\n' || c == '\r' }

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

// identStart reports whether r can start a bare identifier.
func identStart(r rune) bool {
	return r == '_' || (r < utf8.RuneSelf && (r|0x20 >= 'a' && r|0x20 <= 'z')) ||
		(r >= utf8.RuneSelf && unicode.IsLetter(r))
}

// identPart reports whether r can continue a bare identifier.
func identPart(r rune) bool {
	return identStart(r) || (r >= '0' && r <= '9') ||
		(r >= utf8.RuneSelf && (unicode.IsDigit(r) || unicode.Is(unicode.M, r)))
}

// runeAt decodes the rune at i; invalid bytes and NUL (already reported by
// checkEncoding) come back as utf8.RuneError.
func (lx *lexer) runeAt(i int) (rune, int) {
	r, size := utf8.DecodeRuneInString(lx.src[i:])
	if r == 0 {
		return utf8.RuneError, 1
	}
	return r, size
}

func (lx *lexer) emit(kind tokKind, start, end int, val string) {
	lx.toks = append(lx.toks, token{kind: kind, start: start, end: end, val: val})
}

// scan tokenizes the whole text, reporting every lexical problem.
func (lx *lexer) scan() {
	s := lx.src
	i := 0
	for i < len(s) {
		c := s[i]
		switch {
		case isSpace(c):
			i++
		case c == '\'':
			i = lx.scanString(i)
		case c == '"':
			i = lx.scanQuoted(i)
		case c == '`':
			i = lx.scanBacktick(i)
		case isDigit(c) || (c == '.' && i+1 < len(s) && isDigit(s[i+1])):
			i = lx.scanNumber(i)
		default:
			r, size := lx.runeAt(i)
			if r == utf8.RuneError {
				i += size // reported by checkEncoding
				continue
			}
			if identStart(r) {
				i = lx.scanIdent(i)
				continue
			}
			i = lx.scanPunct(i, r, size)
		}
	}
}

func (lx *lexer) scanString(start int) int {
	s := lx.src
	var b strings.Builder
	for i := start + 1; i < len(s); i++ {
		if s[i] != '\'' {
			b.WriteByte(s[i])
			continue
		}
		if i+1 < len(s) && s[i+1] == '\'' {
			b.WriteByte('\'')
			i++
			continue
		}
		lx.emit(tkString, start, i+1, b.String())
		return i + 1
	}
	lx.report(CodeUnterminated, start, len(s), "close the string with a single quote; write '' for a quote inside it",
		"unterminated string literal")
	return len(s)
}

func (lx *lexer) scanQuoted(start int) int {
	s := lx.src
	var b strings.Builder
	for i := start + 1; i < len(s); i++ {
		if s[i] != '"' {
			b.WriteByte(s[i])
			continue
		}
		if i+1 < len(s) && s[i+1] == '"' {
			b.WriteByte('"')
			i++
			continue
		}
		name := b.String()
		switch {
		case name == "":
			lx.report(CodeIdent, start, i+1, "", "empty quoted identifier")
		case strings.IndexFunc(name, unicode.IsControl) >= 0:
			lx.report(CodeIdent, start, i+1, "", "quoted identifier contains a control character")
		default:
			lx.emit(tkQuoted, start, i+1, name)
		}
		return i + 1
	}
	lx.report(CodeUnterminated, start, len(s), `close the identifier with a double quote; write "" for a quote inside it`,
		"unterminated quoted identifier")
	return len(s)
}

func (lx *lexer) scanBacktick(start int) int {
	s := lx.src
	for i := start + 1; i < len(s); i++ {
		if s[i] != '`' {
			continue
		}
		if i+1 < len(s) && s[i+1] == '`' {
			i++
			continue
		}
		lx.report(CodeBacktick, start, i+1, `quote identifiers with double quotes, e.g. "order id"`,
			"backtick-quoted identifiers are not allowed")
		return i + 1
	}
	lx.report(CodeBacktick, start, len(s), `quote identifiers with double quotes, e.g. "order id"`,
		"backtick-quoted identifiers are not allowed")
	return len(s)
}

// scanIdent scans a bare word. A word glued to a quote (x'1F', N'abc',
// _utf8'x') is a prefixed literal, which is rejected.
func (lx *lexer) scanIdent(start int) int {
	i := start
	for i < len(lx.src) {
		r, size := lx.runeAt(i)
		if r == utf8.RuneError || !identPart(r) {
			break
		}
		i += size
	}
	word := lx.src[start:i]
	if i < len(lx.src) && lx.src[i] == '\'' {
		end := lx.scanString(i)
		n := len(lx.toks)
		if n == 0 || lx.toks[n-1].start != i {
			return end // unterminated, already reported
		}
		lx.toks = lx.toks[:n-1]
		lx.report(CodeLiteral, start, end, "write a plain 'string'",
			"prefixed string literals such as x'..', b'..', N'..' or _charset'..' are not allowed")
		return end
	}
	if strings.EqualFold(word, "INTERVAL") {
		lx.report(CodeInterval, start, i, "compare against a precomputed column, or cast to DATE/TIMESTAMP and compare",
			"INTERVAL arithmetic is not portable and is not allowed")
		return i
	}
	lx.emit(tkIdent, start, i, word)
	return i
}

// scanNumber scans digits[.digits][e[+-]digits] (or .digits...). A number
// glued to letters (1a, 0x1F, 1e) is malformed.
func (lx *lexer) scanNumber(start int) int {
	s := lx.src
	i := start
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	intPart := s[start:i]
	frac, hasDot := "", false
	if i < len(s) && s[i] == '.' {
		hasDot = true
		i++
		j := i
		for i < len(s) && isDigit(s[i]) {
			i++
		}
		frac = s[j:i]
	}
	exp, hasExp := "", false
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && isDigit(s[k]) {
			k++
		}
		if k > j {
			hasExp = true
			exp = s[i+1 : k]
			i = k
		}
	}
	// Glued letters, digits or dots make the whole run malformed.
	bad := false
	for i < len(s) {
		r, size := lx.runeAt(i)
		if r == utf8.RuneError || !(identPart(r) || r == '.') {
			break
		}
		bad = true
		i += size
	}
	if bad {
		lx.report(CodeNumber, start, i, "hexadecimal and bit literals are not supported; separate a number from a following word with a space",
			"malformed number `"+s[start:i]+"`")
		return i
	}
	text, kind, msg, hint := canonicalNumber(intPart, frac, hasDot, exp, hasExp)
	if msg != "" {
		lx.report(CodeNumber, start, i, hint, msg+": `"+s[start:i]+"`")
		return i
	}
	lx.toks = append(lx.toks, token{kind: tkNumber, start: start, end: i, val: text, num: kind})
	return i
}

// maxDecimalDigits is the largest decimal precision that the mainstream
// warehouses all support (their NUMERIC/DECIMAL maximum precision is 38 or
// more).
const maxDecimalDigits = 38

// canonicalNumber validates a numeric literal and returns its canonical text
// and kind, or a problem description.
func canonicalNumber(intPart, frac string, hasDot bool, exp string, hasExp bool) (text string, kind LitKind, msg, hint string) {
	ip := strings.TrimLeft(intPart, "0")
	if ip == "" {
		ip = "0"
	}
	switch {
	case hasExp:
		m := ip
		if frac != "" {
			m += "." + frac
		}
		sign := ""
		if exp[0] == '+' || exp[0] == '-' {
			if exp[0] == '-' {
				sign = "-"
			}
			exp = exp[1:]
		}
		exp = strings.TrimLeft(exp, "0")
		if exp == "" {
			exp, sign = "0", ""
		}
		text = m + "e" + sign + exp
		// Overflow (ParseFloat reports it) and underflow to zero (it does
		// not) are both rejected: the text would not mean what it says.
		f, err := strconv.ParseFloat(text, 64)
		if err != nil || (f == 0 && strings.Trim(ip+frac, "0") != "") {
			return "", 0, "number is outside the range of a double",
				"use a magnitude between about 1e-307 and 1e308, or 0"
		}
		return text, LitFloat, "", ""
	case hasDot:
		if frac == "" {
			frac = "0"
		}
		digits := len(strings.TrimLeft(ip, "0")) + len(frac)
		if digits > maxDecimalDigits {
			return "", 0, "decimal literal has more than 38 digits",
				"round it, or write it in exponent form (a double), e.g. 1.5e40"
		}
		return ip + "." + frac, LitDecimal, "", ""
	}
	if _, err := strconv.ParseInt(ip, 10, 64); err != nil {
		return "", 0, "integer literal does not fit in 64 bits",
			"append .0 to make it an exact decimal (up to 38 digits), or write it in exponent form"
	}
	return ip, LitInt, "", ""
}

// scanPunct scans operators and reports characters and operators that are
// not part of assay's expression language.
func (lx *lexer) scanPunct(i int, r rune, size int) int {
	s := lx.src
	next := byte(0)
	if i+1 < len(s) {
		next = s[i+1]
	}
	op := func(n int) int {
		lx.emit(tkOp, i, i+n, s[i:i+n])
		return i + n
	}
	bad := func(code string, n int, hint, msg string) int {
		lx.report(code, i, i+n, hint, msg)
		return i + n
	}
	switch r {
	case '(', ')', ',', '.', '+', '*', '%', '=':
		return op(1)
	case '-':
		switch next {
		case '-':
			end := strings.IndexByte(s[i:], '\n')
			if end < 0 {
				end = len(s) - i
			}
			return bad(CodeComment, end, "remove the comment; to subtract a negative number write `a - -1`",
				"comments are not allowed in expressions")
		case '>':
			n := 2
			if i+2 < len(s) && s[i+2] == '>' {
				n = 3
			}
			return bad(CodeOperator, n, "", "JSON operators are not supported")
		}
		return op(1)
	case '/':
		if next == '*' {
			end := strings.Index(s[i+2:], "*/")
			n := len(s) - i
			if end >= 0 {
				n = end + 4
			}
			return bad(CodeComment, n, "remove the comment", "comments are not allowed in expressions")
		}
		return op(1)
	case '#':
		end := strings.IndexByte(s[i:], '\n')
		if end < 0 {
			end = len(s) - i
		}
		return bad(CodeComment, end, "remove the comment", "comments are not allowed in expressions")
	case ';':
		return bad(CodeSemicolon, 1, "an expression is a single SQL expression, not a statement",
			"`;` is not allowed in expressions")
	case '<':
		switch {
		case strings.HasPrefix(s[i:], "<=>"):
			lx.emit(tkOp, i, i+3, "<=>")
			return i + 3
		case next == '=' || next == '>':
			return op(2)
		case next == '<':
			return bad(CodeOperator, 2, "", "bit shift operators are not allowed")
		}
		return op(1)
	case '>':
		switch next {
		case '=':
			return op(2)
		case '>':
			return bad(CodeOperator, 2, "", "bit shift operators are not allowed")
		}
		return op(1)
	case '!':
		if next == '=' {
			return op(2)
		}
		return bad(CodeOperator, 1, "write NOT", "`!` is not allowed")
	case '|':
		if next == '|' {
			return bad(CodeOperator, 2, "write OR for logical or, or concat(a, b) for string concatenation",
				"`||` is ambiguous (logical OR in MySQL, concatenation in standard SQL)")
		}
		return bad(CodeOperator, 1, "", "bitwise operators are not allowed")
	case '&':
		if next == '&' {
			return bad(CodeOperator, 2, "write AND", "`&&` is not allowed")
		}
		return bad(CodeOperator, 1, "", "bitwise operators are not allowed")
	case '~', '^':
		return bad(CodeOperator, 1, "", "bitwise operators are not allowed")
	case ':':
		if next == ':' {
			return bad(CodeOperator, 2, "write CAST(x AS type)", "`::` casts are not allowed")
		}
		if next == '=' {
			return bad(CodeOperator, 2, "", "assignment is not allowed")
		}
	case '@':
		j := i + 1
		for j < len(s) && s[j] == '@' {
			j++
		}
		for j < len(s) {
			r2, size2 := lx.runeAt(j)
			if r2 == utf8.RuneError || !(identPart(r2) || r2 == '.') {
				break
			}
			j += size2
		}
		return bad(CodeVariable, j-i, "refer to columns of the source by name", "variables are not allowed")
	case '?':
		return bad(CodeVariable, 1, "write the value literally", "parameter markers are not allowed")
	case '$':
		return bad(CodeChar, 1, `quote identifiers that contain $ with double quotes, e.g. "a$b"`,
			"unexpected character `$`")
	}
	msg := "unexpected character `" + string(r) + "`"
	if unicode.IsSpace(r) || unicode.IsControl(r) {
		msg = "unexpected character " + strconv.QuoteRune(r)
	}
	return bad(CodeChar, size, "", msg)
}

// checkDepth bounds parenthesis nesting; it reports false if the bound is
// exceeded.
func (lx *lexer) checkDepth() bool {
	depth := 0
	for _, t := range lx.toks {
		switch {
		case t.isOp("("):
			depth++
			if depth > maxParens {
				lx.report(CodeLimit, t.start, t.end, "", fmt.Sprintf("parentheses are nested more than %d deep", maxParens))
				return false
			}
		case t.isOp(")"):
			depth--
		}
	}
	return true
}

// castTypes maps the accepted spellings of CAST targets (upper case, single
// spaces) to types.
var castTypes = map[string]Type{
	"DOUBLE PRECISION": TypeDouble,
	"DOUBLE":           TypeDouble,
	"BIGINT":           TypeBigInt,
	"VARCHAR":          TypeVarchar,
	"DATE":             TypeDate,
	"TIMESTAMP":        TypeTimestamp,
	"BOOLEAN":          TypeBoolean,
}

const castHint = "cast to one of DOUBLE PRECISION, BIGINT, VARCHAR, DATE, TIMESTAMP, BOOLEAN"

// casts finds every CAST( ... AS type ) and records the target type on its AS
// token. The SQL parser only accepts MySQL type names in CAST, so the type's
// text is respelled as DATE (padded with spaces, keeping every offset) in the
// text returned for the parser; the tree conversion takes the type from the
// token, never from the parser.
func (lx *lexer) casts() string {
	var out []byte
	for i := 0; i+1 < len(lx.toks); i++ {
		if !lx.toks[i].is("CAST") || !lx.toks[i+1].isOp("(") {
			continue
		}
		as, closing, depth := -1, -1, 0
		for k := i + 1; k < len(lx.toks) && closing < 0; k++ {
			t := lx.toks[k]
			switch {
			case t.isOp("("):
				depth++
			case t.isOp(")"):
				depth--
				if depth == 0 {
					closing = k
				}
			case depth == 1 && as < 0 && t.is("AS"):
				as = k
			}
		}
		if as < 0 || closing < 0 || closing == as+1 {
			continue // malformed; the parser reports it
		}
		words := make([]string, 0, 2)
		simple := true
		for _, t := range lx.toks[as+1 : closing] {
			if t.kind != tkIdent {
				simple = false
				break
			}
			words = append(words, strings.ToUpper(t.val))
		}
		first, last := lx.toks[as+1], lx.toks[closing-1]
		to, ok := castTypes[strings.Join(words, " ")]
		if !simple || !ok {
			lx.report(CodeCast, first.start, last.end, castHint,
				"unsupported cast target `"+lx.src[first.start:last.end]+"`")
			continue
		}
		lx.toks[as].castTo, lx.toks[as].castN = to, closing-as-1
		if out == nil {
			out = []byte(lx.src)
		}
		n := copy(out[first.start:last.end], "DATE")
		for j := first.start + n; j < last.end; j++ {
			out[j] = ' '
		}
	}
	if out == nil {
		return lx.src
	}
	return string(out)
}
