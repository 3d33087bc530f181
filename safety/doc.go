// Package safety holds assay's injection, read-only and interruption tests,
// and the small helpers they share.
//
// The tests check the promises of DEVELOPERS.md from the outside: user text
// never reaches SQL as text (every rendered expression parses back to the
// same tree, and lexes under each engine's documented quoting rules into
// quoted tokens only); hostile table, column, variant and metric names and
// string literals run on DuckDB without touching any table; a run leaves
// the database file byte-identical; and an interrupted run stops promptly
// without leaving a partial output file.
//
// The lexer in lex.go is written from the engines' documentation, not from
// assay's dialect printers, so that it can catch a printer that quotes
// wrongly.
package safety
