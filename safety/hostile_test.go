package safety_test

import (
	"bytes"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"

	"github.com/assay-dev/assay/cli"
	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/safety"
)

// Hostile names. Each tries to end a quoted token and start a statement or
// a comment; none may have any effect but naming its object.
const (
	expTable   = `exp"; DROP TABLE canary; --`
	ordSchema  = `sch"ema`
	ordTable   = `it's orders`
	tapsFile   = `it's "taps".parquet`
	unitCol    = `user"id`
	variantCol = `arm'); DROP TABLE canary; --`
	timeCol    = `ts; --`
	pageCol    = `naïve col`
	orderTime  = `at */ now`
	amountCol  = `amount\`
	statusCol  = `/*status`
	tapTime    = `tapped at`
	control    = `con'trol`
	treatment  = `treat"; DROP TABLE canary; --`
	primary    = `orders"; DROP TABLE canary; --`
	revenue    = `日本 -- revenue`
	taps       = `it's */ taps`
	ruleName   = `r'; DROP TABLE canary; --`
	segName    = `s"; --`
	pageValue  = `it's -- home`
	statusText = `x'); DROP TABLE canary; --`
	specDir    = `it's "spec" dir`
)

// qi and qs quote an identifier and a string for DuckDB, written here from
// DuckDB's documentation (double the quote character), to build fixtures.
func qi(s string) string { return `"` + strings.ReplaceAll(s, `"`, `""`) + `"` }
func qs(s string) string { return `'` + strings.ReplaceAll(s, `'`, `''`) + `'` }

// tomlStr writes s as a TOML basic string.
func tomlStr(s string) string {
	b, _ := json.Marshal(s) // JSON string escapes are valid TOML basic-string escapes
	return strings.ReplaceAll(string(b), `\u0026`, "&")
}

// hostileSpec is the spec text: every name and literal above, quoted for
// TOML.
func hostileSpec() string { return hostileSpecWith(true) }

// hostileSpecWith writes the spec, with or without the file source (which
// engines other than DuckDB cannot read).
func hostileSpecWith(file bool) string {
	return hostileSpecFor(expTable, ordSchema+"."+ordTable, file)
}

// hostileSpecFor writes the spec with the given table names for the
// exposures and the orders.
func hostileSpecFor(expRef, ordRef string, file bool) string {
	var b strings.Builder
	w := func(format string, args ...any) { fmt.Fprintf(&b, format+"\n", args...) }
	w("[experiment]")
	w("id = %s", tomlStr(`x */ ; DROP TABLE canary; --`))
	w("hypothesis = %s", tomlStr("A hostile spec whose every name tries to break out of its quotes, and must not."))
	w("unit = %s", tomlStr(`us'er`))
	w("start = 2026-05-01T00:00:00Z")
	w("end = 2026-05-31T00:00:00Z")
	w("")
	w("[variants]")
	w("%s = 0.5", tomlStr(control))
	w("%s = 0.5", tomlStr(treatment))
	w("")
	w("[sources.%s]", tomlStr("exp'src"))
	w("table = %s", tomlStr(expRef))
	w("unit = %s", tomlStr(unitCol))
	w("time = %s", tomlStr(timeCol))
	w("columns = [%s, %s, %s, %s]", tomlStr(unitCol), tomlStr(variantCol), tomlStr(timeCol), tomlStr(pageCol))
	w("")
	w("[sources.orders]")
	w("table = %s", tomlStr(ordRef))
	w("unit = %s", tomlStr(unitCol))
	w("time = %s", tomlStr(orderTime))
	w("columns = [%s, %s, %s, %s]", tomlStr(unitCol), tomlStr(orderTime), tomlStr(amountCol), tomlStr(statusCol))
	w("")
	if file {
		w("[sources.taps]")
		w("file = %s", tomlStr(tapsFile))
		w("unit = %s", tomlStr(unitCol))
		w("time = %s", tomlStr(tapTime))
		w("columns = [%s, %s]", tomlStr(unitCol), tomlStr(tapTime))
		w("")
	}
	w("[exposure]")
	w("source = %s", tomlStr("exp'src"))
	w("variant = %s", tomlStr(variantCol))
	w("filter = %s", tomlStr(qi(pageCol)+" = "+qs(pageValue)))
	w("")
	w("[eligibility.%s]", tomlStr(ruleName))
	w(`kind = "history"`)
	w(`source = "orders"`)
	w(`window = ["-30d", "0d"]`)
	w(`require = "absent"`)
	w("")
	w("[metrics.%s]", tomlStr(primary))
	w(`role = "primary"`)
	w(`kind = "count"`)
	w(`source = "orders"`)
	w("filter = %s", tomlStr(qi(statusCol)+" <> "+qs(statusText)))
	w(`window = ["0d", "7d"]`)
	w("")
	w("[metrics.%s]", tomlStr(revenue))
	w(`role = "secondary"`)
	w(`kind = "sum"`)
	w(`source = "orders"`)
	w("value = %s", tomlStr(qi(amountCol)))
	w(`window = ["0d", "7d"]`)
	w("")
	if file {
		w("[metrics.%s]", tomlStr(taps))
		w(`role = "mechanism"`)
		w(`kind = "count"`)
		w(`source = "taps"`)
		w(`window = ["0d", "7d"]`)
		w("")
	}
	w("[segments.%s]", tomlStr(segName))
	w("source = %s", tomlStr("exp'src"))
	w("column = %s", tomlStr(pageCol))
	return b.String()
}

// hostileDB is the fixture: units 1-6 in control and 7-11 in treatment,
// each with one qualifying exposure; unit 12 only sees another page; one
// exposure row has no unit. Orders inside the 7-day windows: unit 1 has 2
// (amounts 10 and 5.5), unit 7 has 3 (1, 2, 3); unit 1 has one more on day
// 10, outside the window. Taps: unit 2 taps twice, unit 8 once. Two bystander
// tables, canary and t, must survive.
func hostileDB(dir string) []string {
	exp := qi(expTable)
	ord := qi(ordSchema) + "." + qi(ordTable)
	q := []string{
		"CREATE TABLE canary (x INTEGER)",
		"INSERT INTO canary VALUES (1), (2), (3)",
		"CREATE TABLE t (a VARCHAR)",
		"INSERT INTO t VALUES ('keep'), ('me')",
		fmt.Sprintf("CREATE TABLE %s (%s BIGINT, %s VARCHAR, %s TIMESTAMP, %s VARCHAR)", exp, qi(unitCol), qi(variantCol), qi(timeCol), qi(pageCol)),
		fmt.Sprintf("CREATE SCHEMA %s", qi(ordSchema)),
		fmt.Sprintf("CREATE TABLE %s (%s BIGINT, %s TIMESTAMP, %s DOUBLE, %s VARCHAR)", ord, qi(unitCol), qi(orderTime), qi(amountCol), qi(statusCol)),
	}
	for u := 1; u <= 11; u++ {
		v := control
		if u >= 7 {
			v = treatment
		}
		q = append(q, fmt.Sprintf("INSERT INTO %s VALUES (%d, %s, TIMESTAMP '2026-05-0%d 10:00:00', %s)", exp, u, qs(v), 2+u%5, qs(pageValue)))
	}
	q = append(q,
		fmt.Sprintf("INSERT INTO %s VALUES (12, %s, TIMESTAMP '2026-05-03 10:00:00', 'other')", exp, qs(control)),
		fmt.Sprintf("INSERT INTO %s VALUES (NULL, %s, TIMESTAMP '2026-05-03 10:00:00', %s)", exp, qs(control), qs(pageValue)),
		// Unit 1 was exposed on 2026-05-03 10:00, unit 7 on 2026-05-04 10:00.
		fmt.Sprintf("INSERT INTO %s VALUES (1, TIMESTAMP '2026-05-04 09:00:00', 10, %s), (1, TIMESTAMP '2026-05-05 09:00:00', 5.5, 'ok'), (1, TIMESTAMP '2026-05-13 09:00:00', 100, 'ok')", ord, qs(`';DROP`)),
		fmt.Sprintf("INSERT INTO %s VALUES (7, TIMESTAMP '2026-05-05 09:00:00', 1, 'ok'), (7, TIMESTAMP '2026-05-06 09:00:00', 2, 'ok'), (7, TIMESTAMP '2026-05-07 09:00:00', 3, 'ok')", ord),
		fmt.Sprintf("COPY (SELECT * FROM (VALUES (2, TIMESTAMP '2026-05-04 11:00:00'), (2, TIMESTAMP '2026-05-05 11:00:00'), (8, TIMESTAMP '2026-05-06 11:00:00')) AS v(%s, %s)) TO %s (FORMAT parquet)",
			qi(unitCol), qi(tapTime), qs(filepath.Join(dir, tapsFile))),
	)
	return q
}

// tableSums returns, for every table in the database, its row count and an
// MD5 over its rows in a fixed order.
func tableSums(t *testing.T, db *sql.DB) map[string]string {
	t.Helper()
	rows, err := db.Query("SELECT schema_name, table_name FROM duckdb_tables() ORDER BY ALL")
	if err != nil {
		t.Fatal(err)
	}
	var names [][2]string
	for rows.Next() {
		var s, n string
		if err := rows.Scan(&s, &n); err != nil {
			t.Fatal(err)
		}
		names = append(names, [2]string{s, n})
	}
	rows.Close()
	out := map[string]string{}
	for _, n := range names {
		rel := qi(n[0]) + "." + qi(n[1])
		var count int64
		var sum string
		q := fmt.Sprintf("SELECT count(*), md5(coalesce(string_agg(CAST(t AS VARCHAR), '|' ORDER BY CAST(t AS VARCHAR)), '')) FROM %s AS t", rel)
		if err := db.QueryRow(q).Scan(&count, &sum); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		out[n[0]+"."+n[1]] = fmt.Sprintf("%d rows, md5 %s", count, sum)
	}
	return out
}

func fileSHA(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

func listDir(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, e := range es {
		out = append(out, e.Name())
	}
	sort.Strings(out)
	return out
}

// buildHostile writes the spec, the Parquet file and the database into a
// fresh directory whose name also needs quoting, and returns the paths.
func buildHostile(t *testing.T) (specPath, dbPath string) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), specDir)
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	specPath = filepath.Join(dir, "spec.toml")
	if err := os.WriteFile(specPath, []byte(hostileSpec()), 0o644); err != nil {
		t.Fatal(err)
	}
	dbPath = filepath.Join(dir, `da'ta "base".duckdb`)
	db, err := sql.Open("duckdb", dbPath) // read-write: the test builds the fixture
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range hostileDB(dir) {
		if _, err := db.Exec(q); err != nil {
			db.Close()
			t.Fatalf("%s: %v", q, err)
		}
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	return specPath, dbPath
}

// TestHostileNamesCompile compiles the hostile spec for every dialect and
// checks each query is one statement under that engine's quoting rules,
// with no word of the payloads outside quotes and comments; DuckDB's own
// parser must also read exactly one statement.
func TestHostileNamesCompile(t *testing.T) {
	db := parserDB(t)
	checked := 0
	for _, name := range dialects.Names() {
		d, _ := dialects.Lookup(name)
		// Engines that cannot read local files get the spec without one.
		_, fileErr := d.File("x.parquet")
		spec, ds := metrics.Load("hostile.toml", []byte(hostileSpecWith(fileErr == nil)))
		if ds.HasErrors() {
			t.Fatalf("hostile spec does not load:\n%s", ds.Error())
		}
		for _, by := range [][]string{nil, {segName}} {
			p, ds := compiler.Compile(spec, compiler.Options{Breakdowns: by})
			if ds.HasErrors() {
				t.Fatalf("compile: %s", ds.Error())
			}
			q, err := compiler.Print(p, d)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			checked++
			texts := []string{q.Main, q.Health}
			if st, ok := d.(dialects.Stager); ok {
				// The cleanup is the dialect's constant DROP of assay's own
				// temporary table, with no user text in it; the setup is
				// the dialect's constant CREATE prefix and then one query,
				// which is checked like the others.
				if want := st.DropTemp(compiler.StagedTable) + "\n"; q.Cleanup != want {
					t.Errorf("%s: cleanup %q, want %q", name, q.Cleanup, want)
				}
				prefix := st.CreateTemp(compiler.StagedTable) + "\n"
				i := strings.Index(q.Setup, prefix)
				if i < 0 {
					t.Fatalf("%s: setup without the prefix %q:\n%s", name, prefix, q.Setup)
				}
				texts = append(texts, q.Setup[i+len(prefix):])
			}
			for _, text := range texts {
				n, toks, err := safety.Statements(text, safety.EngineRules[name])
				if err != nil {
					t.Errorf("%s: %v", name, err)
					continue
				}
				if n != 1 {
					t.Errorf("%s: got %d statements, want 1", name, n)
				}
				for _, tk := range toks {
					if tk.Kind == safety.Word && (strings.EqualFold(tk.Text, "DROP") || strings.EqualFold(tk.Text, "canary")) {
						t.Errorf("%s: got the bare word %q at offset %d, want it only inside quotes", name, tk.Text, tk.Offset)
					}
				}
				if name == "duckdb" {
					if stmts, _, _, _, msg := duckParse(t, db, text); stmts != 1 || msg != "" {
						t.Errorf("duckdb parser: got %d statements, error %q; want 1", stmts, msg)
					}
				}
			}
		}
	}
	if want := 2 * len(dialects.Names()); checked != want {
		t.Errorf("got %d compiled queries, want %d (every dialect, with and without a segment)", checked, want)
	}
}

// TestHostileNamesRun runs the hostile spec on DuckDB through the CLI and
// checks the numbers against the fixture's hand count, that the database
// file is byte-identical afterwards with no new file beside it, and that
// every table still exists with the same rows.
func TestHostileNamesRun(t *testing.T) {
	specPath, dbPath := buildHostile(t)
	dir := filepath.Dir(specPath)
	rw, err := sql.Open("duckdb", dbPath)
	if err != nil {
		t.Fatal(err)
	}
	before := tableSums(t, rw)
	rw.Close()
	shaBefore, filesBefore := fileSHA(t, dbPath), listDir(t, dir)

	var stdout, stderr bytes.Buffer
	code := cli.Run([]string{"run", "--db", dbPath, "--format", "json", specPath}, nil, &stdout, &stderr)
	if code != cli.ExitOK {
		t.Fatalf("assay run: got exit %d, want %d; stderr:\n%s", code, cli.ExitOK, stderr.String())
	}

	if got := fileSHA(t, dbPath); got != shaBefore {
		t.Errorf("database file: got sha256 %s after the run, want %s (unchanged)", got, shaBefore)
	}
	if got := listDir(t, dir); !reflect.DeepEqual(got, filesBefore) {
		t.Errorf("directory: got %v after the run, want %v (no WAL or other new file)", got, filesBefore)
	}
	rw, err = sql.Open("duckdb", dbPath)
	if err != nil {
		t.Fatal(err)
	}
	after := tableSums(t, rw)
	rw.Close()
	if !reflect.DeepEqual(after, before) {
		t.Errorf("tables: got %v after the run, want %v", after, before)
	}
	if _, ok := after["main.canary"]; !ok {
		t.Errorf("table canary is gone")
	}

	var rep struct {
		Experiment struct {
			ID       string `json:"id"`
			Variants []struct {
				Name     string `json:"name"`
				Eligible int64  `json:"eligible_units"`
			} `json:"variants"`
		} `json:"experiment"`
		Metrics []struct {
			Name     string `json:"name"`
			Variants []struct {
				Variant string   `json:"variant"`
				N       int64    `json:"n"`
				Value   *float64 `json:"value"`
			} `json:"variants"`
		} `json:"metrics"`
	}
	if err := json.Unmarshal(stdout.Bytes(), &rep); err != nil {
		t.Fatalf("report JSON: %v\n%s", err, stdout.String())
	}
	if got, want := rep.Experiment.ID, `x */ ; DROP TABLE canary; --`; got != want {
		t.Errorf("experiment id: got %q, want %q", got, want)
	}
	// Hand count from the fixture (hostileDB's comment).
	eligible := map[string]int64{}
	for _, v := range rep.Experiment.Variants {
		eligible[v.Name] = v.Eligible
	}
	if want := map[string]int64{control: 6, treatment: 5}; !reflect.DeepEqual(eligible, want) {
		t.Errorf("eligible units: got %v, want %v (hand count)", eligible, want)
	}
	want := map[string]map[string]float64{
		primary: {control: 2.0 / 6, treatment: 3.0 / 5},
		revenue: {control: 15.5 / 6, treatment: 6.0 / 5},
		taps:    {control: 2.0 / 6, treatment: 1.0 / 5},
	}
	got := map[string]map[string]float64{}
	for _, m := range rep.Metrics {
		got[m.Name] = map[string]float64{}
		for _, v := range m.Variants {
			if v.Value != nil {
				got[m.Name][v.Variant] = *v.Value
			}
		}
	}
	for metric, byVariant := range want {
		for variant, w := range byVariant {
			t.Run(metric+"/"+variant, func(t *testing.T) {
				g, ok := got[metric][variant]
				if !ok || math.Abs(g-w) > 1e-9 {
					t.Errorf("got %v (present %v), want %v (hand count)", g, ok, w)
				}
			})
		}
	}
}

// TestNULRejected checks that a NUL byte, which no engine can hold in a
// name, is rejected with a located diagnostic wherever a spec can carry
// one, so that it never reaches SQL.
func TestNULRejected(t *testing.T) {
	base := hostileSpec()
	tests := []struct {
		name, old, new, code string
	}{
		{"table name", tomlStr(expTable), tomlStr("exp\x00osures"), metrics.CodeIdent},
		{"column name", "columns = [" + tomlStr(unitCol) + ", " + tomlStr(variantCol), "columns = [" + tomlStr(unitCol) + ", " + tomlStr("ar\x00m"), metrics.CodeIdent},
		{"variant name", tomlStr(control) + " = 0.5", tomlStr("con\x00trol") + " = 0.5", metrics.CodeIdent},
		{"metric name", "[metrics." + tomlStr(taps) + "]", "[metrics." + tomlStr("ta\x00ps") + "]", metrics.CodeIdent},
		{"string literal", tomlStr(qi(pageCol) + " = " + qs(pageValue)), tomlStr(qi(pageCol) + " = 'a\x00b'"), metrics.CodeExpr},
		{"file path", tomlStr(tapsFile), tomlStr("ta\x00ps.parquet"), metrics.CodeIdent},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if !strings.Contains(base, tc.old) {
				t.Fatalf("fixture has no %q", tc.old)
			}
			src := strings.Replace(base, tc.old, tc.new, 1)
			_, ds := metrics.Load("nul.toml", []byte(src))
			found := false
			for _, d := range ds {
				if d.Code == tc.code && d.Subject.Start.Line > 0 {
					found = true
				}
			}
			if !found {
				t.Errorf("got %v, want a located %s diagnostic", ds.Error(), tc.code)
			}
		})
	}
}
