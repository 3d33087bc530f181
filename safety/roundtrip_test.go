package safety_test

import (
	"bufio"
	"database/sql"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/BurntSushi/toml"
	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/safety"
)

// exprCorpus returns every expression text of the bad-spec catalogue, the
// golden and demo specs (each "filter" and "value" string, read with the
// TOML library rather than assay's loader), the hand-written list in
// testdata/exprs.txt and the fuzz corpora of FuzzParse and FuzzRender.
func exprCorpus(t testing.TB) []string {
	t.Helper()
	seen := map[string]bool{}
	var out []string
	add := func(s string) {
		if !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	var specs []string
	for _, pattern := range []string{"../testdata/bad/*.toml", "../testdata/golden/*/spec.toml", "../testdata/demo/*.toml"} {
		files, err := filepath.Glob(pattern)
		if err != nil {
			t.Fatal(err)
		}
		specs = append(specs, files...)
	}
	for _, f := range specs {
		var doc map[string]any
		if _, err := toml.DecodeFile(f, &doc); err != nil {
			continue // malformed TOML is part of the catalogue
		}
		walkStrings(doc, add)
	}
	for _, s := range readExprList(t, "testdata/exprs.txt") {
		add(s)
	}
	for _, dir := range []string{"../metrics/expr/testdata/fuzz/FuzzParse", "testdata/fuzz/FuzzRender"} {
		files, _ := filepath.Glob(filepath.Join(dir, "*"))
		for _, f := range files {
			if s, ok := readFuzzString(f); ok {
				add(s)
			}
		}
	}
	sort.Strings(out)
	return out
}

// walkStrings calls add for every string under a "filter" or "value" key.
func walkStrings(v any, add func(string)) {
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			if s, ok := e.(string); ok && (k == "filter" || k == "value") {
				add(s)
				continue
			}
			walkStrings(e, add)
		}
	case []map[string]any:
		for _, e := range x {
			walkStrings(e, add)
		}
	case []any:
		for _, e := range x {
			walkStrings(e, add)
		}
	}
}

// readExprList reads Go-quoted strings, one a line; # starts a comment line.
func readExprList(t testing.TB, path string) []string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var out []string
	sc := bufio.NewScanner(f)
	for ln := 1; sc.Scan(); ln++ {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		s, err := strconv.Unquote(line)
		if err != nil {
			t.Fatalf("%s:%d: %v", path, ln, err)
		}
		out = append(out, s)
	}
	return out
}

// readFuzzString reads a one-string file of the Go fuzzing corpus format.
func readFuzzString(path string) (string, bool) {
	b, err := os.ReadFile(path)
	if err != nil {
		return "", false
	}
	lines := strings.Split(strings.TrimSpace(string(b)), "\n")
	if len(lines) != 2 || !strings.HasPrefix(lines[0], "go test fuzz v1") {
		return "", false
	}
	arg := strings.TrimSpace(lines[1])
	if !strings.HasPrefix(arg, "string(") || !strings.HasSuffix(arg, ")") {
		return "", false
	}
	s, err := strconv.Unquote(arg[len("string(") : len(arg)-1])
	return s, err == nil
}

// TestExprListParses checks that every hand-written expression is valid, so
// that the round-trip tests really render it.
func TestExprListParses(t *testing.T) {
	for _, s := range readExprList(t, "testdata/exprs.txt") {
		if _, ds := expr.Parse(s); len(ds) > 0 {
			t.Errorf("Parse(%q): got %v, want a tree", s, ds)
		}
	}
}

// treeParts lists the column names and string literal values of a tree, in
// walk order.
func treeParts(n expr.Node) (cols, strs []string) {
	expr.Walk(n, func(x expr.Node) bool {
		switch x := x.(type) {
		case *expr.Column:
			cols = append(cols, x.Name)
		case *expr.Literal:
			if x.Kind == expr.LitString {
				strs = append(strs, x.Text)
			}
		}
		return true
	})
	return cols, strs
}

func sorted(xs []string) []string {
	out := append([]string(nil), xs...)
	sort.Strings(out)
	return out
}

// statementWords are SQL keywords that start or join statements; none may
// appear as a bare word in a rendered expression.
var statementWords = map[string]bool{"DROP": true, "DELETE": true, "INSERT": true, "UPDATE": true, "ATTACH": true,
	"DETACH": true, "COPY": true, "PRAGMA": true, "CREATE": true, "ALTER": true, "SELECT": true, "UNION": true,
	"INTO": true, "FROM": true, "CALL": true, "GRANT": true, "EXPORT": true, "INSTALL": true, "LOAD": true}

var (
	duckOnce sync.Once
	duckDB   *sql.DB
	duckErr  error
)

// parserDB is an in-memory DuckDB used only for its parser.
func parserDB(t testing.TB) *sql.DB {
	t.Helper()
	duckOnce.Do(func() {
		duckDB, duckErr = sql.Open("duckdb", "")
		if duckErr == nil {
			duckDB.SetMaxOpenConns(1)
		}
	})
	if duckErr != nil {
		t.Fatal(duckErr)
	}
	return duckDB
}

// duckParse parses q with DuckDB's own parser (json_serialize_sql, which
// parses without binding or running) and returns the number of statements
// and the column names and VARCHAR constants found in its tree.
func duckParse(t testing.TB, db *sql.DB, q string) (stmts, items int, cols, strs []string, errMsg string) {
	t.Helper()
	var js string
	if err := db.QueryRow("SELECT CAST(json_serialize_sql(CAST(? AS VARCHAR)) AS VARCHAR)", q).Scan(&js); err != nil {
		t.Fatalf("json_serialize_sql: %v", err)
	}
	var doc struct {
		Error      bool   `json:"error"`
		Message    string `json:"error_message"`
		Statements []struct {
			Node struct {
				SelectList []any `json:"select_list"`
			} `json:"node"`
		} `json:"statements"`
	}
	if err := json.Unmarshal([]byte(js), &doc); err != nil {
		t.Fatalf("json_serialize_sql output: %v", err)
	}
	if doc.Error {
		return 0, 0, nil, nil, doc.Message
	}
	var tree any
	_ = json.Unmarshal([]byte(js), &tree)
	var walk func(any)
	walk = func(v any) {
		switch x := v.(type) {
		case map[string]any:
			switch x["class"] {
			case "COLUMN_REF":
				if names, ok := x["column_names"].([]any); ok && len(names) > 0 {
					s, _ := names[len(names)-1].(string)
					cols = append(cols, s)
				}
			case "CONSTANT":
				if val, ok := x["value"].(map[string]any); ok {
					typ, _ := val["type"].(map[string]any)
					if typ["id"] == "VARCHAR" && val["is_null"] == false {
						s, _ := val["value"].(string)
						strs = append(strs, s)
					}
				}
			}
			keys := make([]string, 0, len(x))
			for k := range x {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			for _, k := range keys {
				walk(x[k])
			}
		case []any:
			for _, e := range x {
				walk(e)
			}
		}
	}
	walk(tree)
	items = 0
	if len(doc.Statements) > 0 {
		items = len(doc.Statements[0].Node.SelectList)
	}
	return len(doc.Statements), items, cols, strs, ""
}

// checkRendering is the round-trip property for one expression text that
// Parse accepts. It returns false when src does not parse.
func checkRendering(t *testing.T, src string, db *sql.DB) bool {
	t.Helper()
	n, ds := expr.Parse(src)
	if len(ds) > 0 || n == nil {
		return false
	}
	cols, strs := treeParts(n)

	// ANSI: the reference rendering parses back to the same tree.
	ansi := expr.Render(n, expr.ANSI)
	if n2, ds := expr.Parse(ansi); len(ds) > 0 || !expr.Equal(n, n2) {
		t.Errorf("ANSI %q → %q: got %v (equal %v), want the same tree", src, ansi, ds, n2 != nil && expr.Equal(n, n2))
	}

	for _, name := range dialects.Names() {
		d, err := dialects.Lookup(name)
		if err != nil {
			t.Fatal(err)
		}
		out := d.Expr(n, d.Ident)
		rules, ok := safety.EngineRules[name]
		if !ok {
			t.Errorf("dialect %s: no quoting rules in safety.EngineRules; add them from the engine's documentation", name)
			continue
		}
		toks, err := safety.LexExpr(out, rules)
		if err != nil {
			t.Errorf("%s: %q renders as %q: %v", name, src, out, err)
			continue
		}
		var gotCols, gotStrs []string
		for _, tk := range toks {
			switch tk.Kind {
			case safety.Ident:
				gotCols = append(gotCols, tk.Text)
			case safety.String:
				gotStrs = append(gotStrs, tk.Text)
			case safety.Word:
				if statementWords[strings.ToUpper(tk.Text)] {
					t.Errorf("%s: %q renders as %q with the bare word %s, want none", name, src, out, tk.Text)
				}
			}
		}
		if !reflect.DeepEqual(sorted(gotCols), sorted(cols)) {
			t.Errorf("%s: %q renders as %q: got identifiers %q, want %q (per %s)", name, src, out, gotCols, cols, rules.Doc)
		}
		if !reflect.DeepEqual(sorted(gotStrs), sorted(strs)) {
			t.Errorf("%s: %q renders as %q: got strings %q, want %q (per %s)", name, src, out, gotStrs, strs, rules.Doc)
		}
		if name != "duckdb" {
			continue
		}
		// DuckDB's rendering parses back to the same tree with assay's parser
		// (except concat, which DuckDB spells with ||, an operator assay's
		// own expressions reject as ambiguous, and which with one argument
		// renders as that argument alone; DuckDB's parser below still
		// checks it)...
		if n2, ds := expr.Parse(out); !hasConcat(n) && (len(ds) > 0 || !expr.Equal(n, n2)) {
			t.Errorf("duckdb %q → %q: got %v, want the same tree", src, out, ds)
		}
		// ...and DuckDB's own parser reads one SELECT with one item, the same
		// columns and the same string constants.
		stmts, items, dcols, dstrs, msg := duckParse(t, db, "SELECT "+out)
		if msg != "" || stmts != 1 || items != 1 {
			t.Errorf("duckdb parser on SELECT %s: got %d statements, %d items, error %q; want 1, 1, none", out, stmts, items, msg)
			continue
		}
		if !reflect.DeepEqual(sorted(dcols), sorted(cols)) {
			t.Errorf("duckdb parser on SELECT %s: got columns %q, want %q", out, dcols, cols)
		}
		// DuckDB's parser reads TRUE and FALSE as the strings 't' and 'f'
		// cast to BOOLEAN, as PostgreSQL's grammar does.
		dstrs = dropBooleans(n, dstrs)
		if !reflect.DeepEqual(sorted(dstrs), sorted(strs)) {
			t.Errorf("duckdb parser on SELECT %s: got strings %q, want %q", out, dstrs, strs)
		}
	}
	return true
}

// hasConcat reports whether n calls concat anywhere.
func hasConcat(n expr.Node) bool {
	found := false
	expr.Walk(n, func(x expr.Node) bool {
		if f, ok := x.(*expr.Func); ok && strings.EqualFold(f.Name, "concat") {
			found = true
		}
		return !found
	})
	return found
}

// dropBooleans removes one 't' or 'f' from strs for each TRUE or FALSE
// literal of n.
func dropBooleans(n expr.Node, strs []string) []string {
	out := append([]string(nil), strs...)
	expr.Walk(n, func(x expr.Node) bool {
		if l, ok := x.(*expr.Literal); ok && l.Kind == expr.LitBool {
			want := "f"
			if l.Bool {
				want = "t"
			}
			for i, s := range out {
				if s == want {
					out = append(out[:i], out[i+1:]...)
					break
				}
			}
		}
		return true
	})
	return out
}

// TestRenderRoundTrip renders every accepted expression of the catalogue and
// the corpora through every registered dialect and checks the round trip.
func TestRenderRoundTrip(t *testing.T) {
	db := parserDB(t)
	checked := 0
	for _, src := range exprCorpus(t) {
		if checkRendering(t, src, db) {
			checked++
		}
	}
	// The hand-written list alone has more than 70 valid expressions.
	if checked < 70 {
		t.Errorf("got %d accepted expressions in the corpus, want at least 70", checked)
	}
}

// FuzzRender checks the round-trip property on arbitrary expression text.
//
//	go test ./safety/ -run '^$' -fuzz FuzzRender -fuzztime 10s
func FuzzRender(f *testing.F) {
	for _, s := range exprCorpus(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, src string) {
		checkRendering(t, src, parserDB(t))
	})
}
