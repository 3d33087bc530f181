package safety_test

import (
	"strings"
	"testing"

	"github.com/assay-dev/assay/safety"
)

// TestLexExpr checks the lexer on examples that follow the engines'
// documented quoting rules (the pages named in safety.EngineRules).
func TestLexExpr(t *testing.T) {
	tests := []struct {
		name, engine, in string
		want             []string // kind:text per token, or nil with wantErr
		wantErr          string
	}{
		{"doubled quote", "duckdb", `'it''s'`, []string{"string:it's"}, ""},
		{"backslash is ordinary", "postgres", `'a\'`, []string{`string:a\`}, ""},
		{"doubled identifier quote", "trino", `"a""b"`, []string{`identifier:a"b`}, ""},
		{"backslash escape", "mysql", `'a\'b'`, []string{"string:a'b"}, ""},
		{"backtick doubled", "mysql", "`a``b`", []string{"identifier:a`b"}, ""},
		{"double quotes are strings", "mysql", `"x"`, []string{"string:x"}, ""},
		{"backslash in identifier", "bigquery", "`a\\`b`", []string{"identifier:a`b"}, ""},
		{"newline escape", "snowflake", `'a\nb'`, []string{"string:a\nb"}, ""},
		{"operators and numbers", "duckdb", `"x" - -1.5e-3 >= 2`, []string{"identifier:x", "punctuation:-", "punctuation:-", "number:1.5e-3", "punctuation:>", "punctuation:=", "number:2"}, ""},
		{"semicolon", "duckdb", `1; DROP TABLE t`, nil, "statement separator"},
		{"line comment", "postgres", `1 -- c`, nil, "comment"},
		{"adjacent minus is a comment", "duckdb", `"a"--1`, nil, "comment"},
		{"block comment", "trino", `1 /* c */`, nil, "block comment"},
		{"hash comment", "mysql", `1 # c`, nil, "comment"},
		{"unterminated string", "duckdb", `'abc`, nil, "unterminated"},
		{"string ending in a backslash", "mysql", `'abc\'`, nil, "unterminated"},
		{"unterminated identifier", "spark", "`abc", nil, "unterminated"},
		{"comment inside a string is text", "duckdb", `'-- x; /* y */'`, []string{"string:-- x; /* y */"}, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			toks, err := safety.LexExpr(tc.in, safety.EngineRules[tc.engine])
			if tc.wantErr != "" {
				if err == nil || !strings.Contains(err.Error(), tc.wantErr) {
					t.Errorf("LexExpr(%q): got error %v, want one containing %q", tc.in, err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatalf("LexExpr(%q): got error %v, want none", tc.in, err)
			}
			var got []string
			for _, tk := range toks {
				got = append(got, tk.Kind.String()+":"+tk.Text)
			}
			if strings.Join(got, "|") != strings.Join(tc.want, "|") {
				t.Errorf("LexExpr(%q): got %q, want %q", tc.in, got, tc.want)
			}
		})
	}
}

// TestStatements checks statement counting over whole queries, where
// comments are allowed and skipped.
func TestStatements(t *testing.T) {
	tests := []struct {
		name, engine, in string
		want             int
	}{
		{"one with a header comment", "duckdb", "-- x; y\nSELECT 1", 1},
		{"trailing semicolon", "duckdb", "SELECT 1;", 1},
		{"two", "duckdb", "SELECT 1; DROP TABLE t", 2},
		{"semicolon in a string", "postgres", "SELECT ';'", 1},
		{"semicolon in an identifier", "postgres", `SELECT 1 AS ";"`, 1},
		{"comment ends at a carriage return", "duckdb", "-- c\rDROP TABLE t; SELECT 1", 2},
		{"semicolon in a block comment", "duckdb", "SELECT /* ; */ 1", 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, _, err := safety.Statements(tc.in, safety.EngineRules[tc.engine])
			if err != nil {
				t.Fatal(err)
			}
			if got != tc.want {
				t.Errorf("Statements(%q): got %d, want %d", tc.in, got, tc.want)
			}
		})
	}
}
