package safety

import (
	"fmt"
	"strings"
	"unicode/utf8"
)

// Rules are the quoting rules of one SQL engine: how identifiers and string
// literals are delimited and escaped, and which character sequences start a
// comment.
type Rules struct {
	// IdentQuote delimits quoted identifiers: '"' or '`'.
	IdentQuote byte
	// IdentBackslash says a backslash escapes the next character inside a
	// quoted identifier; otherwise a doubled IdentQuote stands for one.
	IdentBackslash bool
	// StringBackslash says a backslash escapes the next character inside a
	// single-quoted string.
	StringBackslash bool
	// StringDoubling says '' inside a string stands for one quote.
	StringDoubling bool
	// DoubleQuoteString says "..." is a string literal (engines whose
	// identifiers use backticks).
	DoubleQuoteString bool
	// HashComment says # starts a comment that runs to the end of the line.
	HashComment bool
	// Doc names the documentation the rules were taken from.
	Doc string
}

// EngineRules holds the quoting rules of each engine assay prints SQL for,
// keyed by dialect name, as the engines document them.
var EngineRules = map[string]Rules{
	"duckdb": {IdentQuote: '"', StringDoubling: true,
		Doc: "https://duckdb.org/docs/stable/sql/dialect/keywords_and_identifiers, https://duckdb.org/docs/stable/sql/data_types/literal_types"},
	"postgres": {IdentQuote: '"', StringDoubling: true,
		Doc: "https://www.postgresql.org/docs/current/sql-syntax-lexical.html (standard_conforming_strings on)"},
	"trino": {IdentQuote: '"', StringDoubling: true,
		Doc: "https://trino.io/docs/current/language/reserved.html, https://trino.io/docs/current/language/types.html#string"},
	"redshift": {IdentQuote: '"', StringDoubling: true, StringBackslash: true,
		Doc: "https://docs.aws.amazon.com/redshift/latest/dg/r_names.html, https://docs.aws.amazon.com/redshift/latest/dg/r_Literals.html"},
	"snowflake": {IdentQuote: '"', StringDoubling: true, StringBackslash: true,
		Doc: "https://docs.snowflake.com/en/sql-reference/identifiers-syntax, https://docs.snowflake.com/en/sql-reference/data-types-text#escape-sequences-in-single-quoted-string-constants"},
	"mysql": {IdentQuote: '`', StringDoubling: true, StringBackslash: true, DoubleQuoteString: true, HashComment: true,
		Doc: "https://dev.mysql.com/doc/refman/8.0/en/identifiers.html, https://dev.mysql.com/doc/refman/8.0/en/string-literals.html, https://dev.mysql.com/doc/refman/8.0/en/comments.html"},
	"bigquery": {IdentQuote: '`', IdentBackslash: true, StringBackslash: true, DoubleQuoteString: true, HashComment: true,
		Doc: "https://cloud.google.com/bigquery/docs/reference/standard-sql/lexical"},
	"spark": {IdentQuote: '`', StringBackslash: true, DoubleQuoteString: true,
		Doc: "https://spark.apache.org/docs/latest/sql-ref-identifier.html, https://spark.apache.org/docs/latest/sql-ref-literals.html"},
}

// TokenKind is the kind of a lexed token.
type TokenKind int

// Token kinds.
const (
	Word   TokenKind = iota // a bare word: keyword, function or type name
	Number                  // a numeric literal
	Ident                   // a quoted identifier; Text is its decoded name
	String                  // a string literal; Text is its decoded value
	Punct                   // an operator or punctuation character
)

func (k TokenKind) String() string {
	return [...]string{"word", "number", "identifier", "string", "punctuation"}[k]
}

// Token is one token of lexed SQL text.
type Token struct {
	Kind   TokenKind
	Text   string
	Offset int // byte offset in the lexed text
}

// LexExpr splits one rendered SQL expression into tokens under r. It
// fails at a statement separator, a comment, an unterminated quoted token,
// a NUL byte or invalid UTF-8 outside quotes: none of them may appear in a
// rendered expression.
func LexExpr(sql string, r Rules) ([]Token, error) {
	return lex(sql, r, false)
}

// Statements counts the statements of a whole query under r: the number of
// non-empty pieces between top-level semicolons, skipping comments and
// quoted tokens. It also returns the tokens outside comments.
func Statements(sql string, r Rules) (int, []Token, error) {
	toks, err := lex(sql, r, true)
	if err != nil {
		return 0, nil, err
	}
	n, cur := 0, 0
	for _, t := range toks {
		if t.Kind == Punct && t.Text == ";" {
			if cur > 0 {
				n++
			}
			cur = 0
			continue
		}
		cur++
	}
	if cur > 0 {
		n++
	}
	return n, toks, nil
}

func lex(s string, r Rules, allowComments bool) ([]Token, error) {
	var toks []Token
	i := 0
	for i < len(s) {
		c := s[i]
		switch {
		case c == ' ' || c == '\t' || c == '\n' || c == '\r':
			i++
		case c == '-' && i+1 < len(s) && s[i+1] == '-', c == '#' && r.HashComment:
			if !allowComments {
				return nil, fmt.Errorf("offset %d: comment outside quotes", i)
			}
			for i < len(s) && s[i] != '\n' && s[i] != '\r' {
				i++
			}
		case c == '/' && i+1 < len(s) && s[i+1] == '*':
			if !allowComments {
				return nil, fmt.Errorf("offset %d: block comment outside quotes", i)
			}
			end := strings.Index(s[i+2:], "*/")
			if end < 0 {
				return nil, fmt.Errorf("offset %d: unterminated block comment", i)
			}
			i += 2 + end + 2
		case c == ';':
			if !allowComments {
				return nil, fmt.Errorf("offset %d: statement separator outside quotes", i)
			}
			toks = append(toks, Token{Kind: Punct, Text: ";", Offset: i})
			i++
		case c == r.IdentQuote:
			text, n, err := quoted(s[i:], r.IdentQuote, r.IdentBackslash, !r.IdentBackslash)
			if err != nil {
				return nil, fmt.Errorf("offset %d: identifier: %v", i, err)
			}
			toks = append(toks, Token{Kind: Ident, Text: text, Offset: i})
			i += n
		case c == '\'' || c == '"' && r.DoubleQuoteString:
			text, n, err := quoted(s[i:], c, r.StringBackslash, r.StringDoubling)
			if err != nil {
				return nil, fmt.Errorf("offset %d: string: %v", i, err)
			}
			toks = append(toks, Token{Kind: String, Text: text, Offset: i})
			i += n
		case c >= '0' && c <= '9' || c == '.' && i+1 < len(s) && s[i+1] >= '0' && s[i+1] <= '9':
			st := i
			for i < len(s) && (isWordByte(s[i]) || s[i] == '.' || (s[i] == '+' || s[i] == '-') && (s[i-1] == 'e' || s[i-1] == 'E')) {
				i++
			}
			toks = append(toks, Token{Kind: Number, Text: s[st:i], Offset: st})
		case isWordByte(c) || c >= utf8.RuneSelf:
			st := i
			for i < len(s) && (isWordByte(s[i]) || s[i] >= utf8.RuneSelf) {
				if s[i] >= utf8.RuneSelf {
					r, size := utf8.DecodeRuneInString(s[i:])
					if r == utf8.RuneError && size == 1 {
						return nil, fmt.Errorf("offset %d: invalid UTF-8 outside quotes", i)
					}
					i += size
					continue
				}
				i++
			}
			toks = append(toks, Token{Kind: Word, Text: s[st:i], Offset: st})
		case c == 0:
			return nil, fmt.Errorf("offset %d: NUL byte outside quotes", i)
		default:
			toks = append(toks, Token{Kind: Punct, Text: string(c), Offset: i})
			i++
		}
	}
	return toks, nil
}

func isWordByte(c byte) bool {
	return c == '_' || c == '$' || c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9'
}

// quoted decodes the quoted token at the start of s, delimited by q, and
// returns its value and length in bytes.
func quoted(s string, q byte, backslash, doubling bool) (string, int, error) {
	var b strings.Builder
	i := 1
	for i < len(s) {
		c := s[i]
		switch {
		case backslash && c == '\\':
			if i+1 >= len(s) {
				return "", 0, fmt.Errorf("unterminated")
			}
			b.WriteString(unescape(s[i+1]))
			i += 2
		case c == q && doubling && i+1 < len(s) && s[i+1] == q:
			b.WriteByte(q)
			i += 2
		case c == q:
			return b.String(), i + 1, nil
		default:
			b.WriteByte(c)
			i++
		}
	}
	return "", 0, fmt.Errorf("unterminated")
}

// unescape decodes the character after a backslash, as MySQL, BigQuery,
// Spark, Snowflake and Redshift document their common escapes; any other
// character stands for itself.
func unescape(c byte) string {
	switch c {
	case 'n':
		return "\n"
	case 't':
		return "\t"
	case 'r':
		return "\r"
	case '0':
		return "\x00"
	case 'b':
		return "\b"
	}
	return string(c)
}
