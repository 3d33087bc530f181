package e2e

import (
	"path/filepath"
	"strings"
	"testing"
)

// semicolons returns the byte offsets of ';' outside string literals
// ('...', with doubled-quote escapes), quoted identifiers ("...") and -- or /* */
// comments: the statement separators a SQL engine would see.
func semicolons(q string) []int {
	var out []int
	for i := 0; i < len(q); i++ {
		switch c := q[i]; {
		case c == '\'' || c == '"':
			for i++; i < len(q); i++ {
				if q[i] == c {
					if i+1 < len(q) && q[i+1] == c {
						i++ // doubled quote inside the literal
						continue
					}
					break
				}
			}
		case c == '-' && i+1 < len(q) && q[i+1] == '-':
			for i < len(q) && q[i] != '\n' {
				i++
			}
		case c == '/' && i+1 < len(q) && q[i+1] == '*':
			end := strings.Index(q[i+2:], "*/")
			if end < 0 {
				return append(out, -1) // unterminated comment: malformed
			}
			i += end + 3
		case c == ';':
			out = append(out, i)
		}
	}
	return out
}

func TestSemicolonScanner(t *testing.T) {
	// Source: SQL lexical rules (quotes doubled inside literals; -- and
	// /* */ comments), examples written by hand.
	cases := []struct {
		q    string
		want int
	}{
		{"SELECT 1;", 1},
		{"SELECT 'a;b';", 1},
		{"SELECT 'it''s;';", 1},
		{`SELECT 1 AS "x;y";`, 1},
		{"-- a; b\nSELECT 1;", 1},
		{"/* ; */ SELECT 1;", 1},
		{"SELECT 1; SELECT 2;", 2},
	}
	for _, tc := range cases {
		t.Run(tc.q, func(t *testing.T) {
			if got := len(semicolons(tc.q)); got != tc.want {
				t.Errorf("got %v, want %v", got, tc.want)
			}
		})
	}
}

// TestCompileDeterministicStatements compiles the same spec several times
// (map iteration order varies between runs of a loop) and checks the text
// is byte-identical, that each printed query is one statement between the
// setup and cleanup of the cohort table (so a separator inside user text
// cannot split it), and that DuckDB can plan it.
func TestCompileDeterministicStatements(t *testing.T) {
	// A fixture whose filters put ';' inside string literals.
	dir := t.TempDir()
	writeParquet(t, dir, "exposures.parquet", exposureCols, []row{
		{"a", "control", ts("2026-03-03 00:00:00"), "home;top"},
		{"b", "treatment", ts("2026-03-03 00:00:00"), "home"},
	})
	writeParquet(t, dir, "events.parquet", eventCols, []row{{"a", ts("2026-03-03 01:00:00"), 1.0}})
	fixture := writeText(t, dir, "spec.toml", specParts{
		ExposureFilter: "surface <> 'x;y' AND surface <> 'it''s;'",
		Metrics: metricSumW + `
[metrics.semi]
role = "secondary"
kind = "count"
source = "events"
filter = "w <> 2 OR unit_id = ';'"
window = ["0d", "7d"]
`,
	}.toml())
	demo, err := filepath.Abs("../testdata/demo/reorder.toml")
	if err != nil {
		t.Fatal(err)
	}
	for _, spec := range []string{fixture, demo} {
		for _, query := range []string{"main", "health"} {
			t.Run(filepath.Base(spec)+"/"+query, func(t *testing.T) {
				var first string
				for i := range 5 {
					code, out, errs := runCLI("compile", "--query", query, spec)
					if code != 0 {
						t.Fatalf("compile: exit %d\n%s", code, errs)
					}
					if i == 0 {
						first = out
						continue
					}
					if out != first {
						t.Fatalf("compile run %d differs from run 1:\n%s", i+1, firstDiff([]byte(first), []byte(out)))
					}
				}
				// DuckDB stages the cohort: a setup statement, the query and
				// a cleanup, each ended by a separator and nothing after.
				body := strings.TrimRight(first, " \n")
				semis := semicolons(body)
				if len(semis) != 3 || semis[2] != len(body)-1 {
					t.Fatalf("statement separators at %v, want three, the last at %d", semis, len(body)-1)
				}
				st := statements(body)
				if !strings.Contains(st[0], "CREATE OR REPLACE TEMPORARY TABLE") || !strings.HasPrefix(st[2], "DROP TABLE IF EXISTS temp.main.") {
					t.Fatalf("want a setup that creates the temporary cohort table and a cleanup that drops it:\n%s\n...\n%s", st[0], st[2])
				}
				db := dirDB(t, filepath.Dir(spec))
				if _, err := db.Exec(st[0]); err != nil {
					t.Fatalf("setup: %v", err)
				}
				if rows := queryMaps(t, db, "EXPLAIN "+st[1]); len(rows) == 0 {
					t.Errorf("EXPLAIN returned no plan")
				}
			})
		}
	}
}
