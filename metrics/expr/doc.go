// Package expr parses, checks and prints the small SQL expressions that
// users write in assay metric specs: filters such as
// status = 'delivered' AND amount > 0, and values such as amount - discount.
//
// # Where it sits
//
// The spec loader calls Parse on each expression's text and then Check with
// the source's column names (and ExpectKind to require, say, a boolean
// filter), and reports the Diagnostics with the spec's file and key. Dialect
// printers call Render with their Style to turn the tree into SQL for their
// engine. The tree (Node and its types) is assay's own and does not depend
// on the SQL parser, so printers need not import the parser.
//
// User text is never spliced into generated SQL: it is parsed into a tree
// whose identifiers and strings are re-quoted by the Style, and whose
// operators, functions and literals come from closed sets.
//
// # The language
//
// An expression is one standard SQL value expression over unqualified
// column names: literals (NULL, TRUE, FALSE, integers that fit in 64 bits,
// decimals of up to 38 digits, finite doubles in exponent form, '...'
// strings), "quoted identifiers", NOT/AND/OR, comparisons (= <> != < <= >
// >=), + - * / %, IS [NOT] NULL, [NOT] IN (list), [NOT] BETWEEN, [NOT] LIKE,
// CASE, CAST(x AS DOUBLE PRECISION | BIGINT | VARCHAR | DATE | TIMESTAMP |
// BOOLEAN), and the allow-listed functions (see AllowedFuncs), among them
// the local-time functions local_date, local_week, local_hour and
// local_weekday (see LocalFuncs), which read a time column in the
// experiment's time zone. A CAST to DATE or TIMESTAMP of anything but a
// literal is refused (E-EXPR-TIME-CAST): its result would depend on the
// engine's session time zone. Everything
// else is rejected with a diagnostic that says why and what to write
// instead; codes.go lists every code.
//
// Decisions that differ from one engine or another:
//
//   - "x" is always an identifier and 'x' always a string.
//   - Backslash is an ordinary character in strings, as in standard SQL:
//     'a\b' is three characters. A printer for an engine that treats
//     backslash as an escape must escape it in Style.String.
//   - || and && are rejected, since || is OR in MySQL but concatenation in
//     standard SQL: write OR, AND or concat(a, b). ! is rejected too.
//   - ILIKE is rejected (not every engine has it): write lower(x) LIKE '...'.
//     LIKE ... ESCAPE and backslashes in literal LIKE patterns are rejected,
//     since engines disagree on the default escape character.
//   - Numbers keep their text: 0.1 stays 0.1, 1E+03 becomes 1e3, .5 becomes
//     0.5, 1. becomes 1.0. An integer that does not fit in 64 bits (such as
//     123456789012345678901234567890) is rejected with a hint to write it as
//     a decimal (append .0) or in exponent form; 1e999 and 1e-999 are
//     rejected as outside the range of a double.
//   - Column names are case-sensitive and matched exactly; Render always
//     quotes them.
//   - Comments, ;, NUL bytes and invalid UTF-8 are rejected wherever they
//     appear outside literals (NUL and invalid UTF-8 also inside).
//
// # How parsing works
//
// Parse runs three stages and stops after the first that finds problems,
// reporting all problems of that stage: assay's own lexer (lex.go), then
// the TiDB SQL parser on "SELECT " + the text (parse.go), then the
// conversion of the parser's tree into assay's, which consumes the lexer's
// tokens in step with the tree and so gives each node an exact Span and
// rejects anything the parser read differently from the lexer.
package expr
