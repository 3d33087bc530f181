package expr

// Diagnostic codes. Each is stable: the spec loader, tests and documentation
// may match on them. The table gives a one-line bad example for each.
//
//	Code                 Bad example                      Problem
//	E-EXPR-EMPTY         ``  or  `   `                     no expression
//	E-EXPR-LIMIT         a 20 KiB expression               too long, too deeply nested, or too many problems
//	E-EXPR-UTF8          "a\xff"                           text is not valid UTF-8
//	E-EXPR-NUL           "a\x00b"                          NUL byte
//	E-EXPR-CHAR          a $ b   or   {x a}                character that has no meaning here
//	E-EXPR-COMMENT       x -- c   x /* c */ + 1   x # c    comments are not allowed
//	E-EXPR-SEMICOLON     1; DROP TABLE t                   statement separator
//	E-EXPR-UNTERMINATED  'abc   or   "abc                  unterminated string or quoted identifier
//	E-EXPR-BACKTICK      `amount`                          backtick identifier (use double quotes)
//	E-EXPR-IDENT         ""                                empty identifier, or control character in one
//	E-EXPR-NUMBER        1e999   9223372036854775808   1a  number that is malformed or out of range
//	E-EXPR-LITERAL       x'1F'   DATE '2024-01-01'   'a' 'b'  unsupported literal form
//	E-EXPR-OPERATOR      a || b   a && b   !a   a <=> b   a DIV b   x::int   operator outside the portable set
//	E-EXPR-VARIABLE      @x   @@sql_mode   ?               variables and parameter markers
//	E-EXPR-SYNTAX        a +   x AS y   x, y   DISTINCT x  not a single well-formed expression
//	E-EXPR-QUALIFIED     o.amount                          qualified column name
//	E-EXPR-FUNC          foo(x)                            function not on the allow-list
//	E-EXPR-ARITY         abs(x, y)                         wrong number of arguments
//	E-EXPR-FUNC-FORM     trim(BOTH 'x' FROM y)             special call syntax of an allowed function
//	E-EXPR-AGGREGATE     sum(x)                            aggregate function
//	E-EXPR-WINDOW        row_number() OVER ()              window function
//	E-EXPR-SUBQUERY      (SELECT 1)   EXISTS (SELECT 1)   x IN (SELECT 1)   subquery
//	E-EXPR-CAST          CAST(x AS INT)   CONVERT(x, SIGNED)   unsupported cast form or target type
//	E-EXPR-INTERVAL      d + INTERVAL 1 DAY                interval arithmetic
//	E-EXPR-ISTRUTH       x IS TRUE                         IS [NOT] TRUE/FALSE
//	E-EXPR-LIKE          x ILIKE 'a'   x LIKE 'a\_' ESCAPE '\'   unsupported LIKE form
//	E-EXPR-REGEXP        x REGEXP 'a+'                     regular expression match
//	E-EXPR-UNSUPPORTED   ROW(1, 2)   x COLLATE utf8mb4_bin  any other construct
//	E-EXPR-INTERNAL      (none expected)                   the SQL parser failed unexpectedly
//	E-EXPR-COLUMN        amout > 0                         unknown column (from Check)
//	E-EXPR-TYPE          amount + 'x'                      operand of the wrong kind (from Check)
//	E-EXPR-KIND          amount + 1  used as a filter      expression of the wrong kind (from ExpectKind)
//	E-EXPR-TIME-CAST     CAST(created_at AS DATE)          time cast that depends on the session time zone (from Check)
//	E-EXPR-LOCAL-ARG     local_date(a + 1)                 local-time function on something other than a column (from Check)
const (
	CodeEmpty        = "E-EXPR-EMPTY"
	CodeLimit        = "E-EXPR-LIMIT"
	CodeUTF8         = "E-EXPR-UTF8"
	CodeNUL          = "E-EXPR-NUL"
	CodeChar         = "E-EXPR-CHAR"
	CodeComment      = "E-EXPR-COMMENT"
	CodeSemicolon    = "E-EXPR-SEMICOLON"
	CodeUnterminated = "E-EXPR-UNTERMINATED"
	CodeBacktick     = "E-EXPR-BACKTICK"
	CodeIdent        = "E-EXPR-IDENT"
	CodeNumber       = "E-EXPR-NUMBER"
	CodeLiteral      = "E-EXPR-LITERAL"
	CodeOperator     = "E-EXPR-OPERATOR"
	CodeVariable     = "E-EXPR-VARIABLE"
	CodeSyntax       = "E-EXPR-SYNTAX"
	CodeQualified    = "E-EXPR-QUALIFIED"
	CodeFunc         = "E-EXPR-FUNC"
	CodeArity        = "E-EXPR-ARITY"
	CodeFuncForm     = "E-EXPR-FUNC-FORM"
	CodeAggregate    = "E-EXPR-AGGREGATE"
	CodeWindow       = "E-EXPR-WINDOW"
	CodeSubquery     = "E-EXPR-SUBQUERY"
	CodeCast         = "E-EXPR-CAST"
	CodeInterval     = "E-EXPR-INTERVAL"
	CodeIsTruth      = "E-EXPR-ISTRUTH"
	CodeLike         = "E-EXPR-LIKE"
	CodeRegexp       = "E-EXPR-REGEXP"
	CodeUnsupported  = "E-EXPR-UNSUPPORTED"
	CodeInternal     = "E-EXPR-INTERNAL"
	CodeColumn       = "E-EXPR-COLUMN"
	CodeType         = "E-EXPR-TYPE"
	CodeKind         = "E-EXPR-KIND"
	CodeTimeCast     = "E-EXPR-TIME-CAST"
	CodeLocalArg     = "E-EXPR-LOCAL-ARG"
)
