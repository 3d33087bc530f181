package crossengine

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/assay-dev/assay/cli"
)

// TestOneSpecTwoPlaces runs one spec that uses the shared library
// (testdata/demo/checkout.toml) twice: on the demo's Parquet files (no
// target) and, with --place warehouse, on the same rows loaded as tables
// into each engine (DuckDB always; PostgreSQL and MariaDB when their test
// servers are configured). The metrics must agree: the independent
// reference is DuckDB reading the original files.
func TestOneSpecTwoPlaces(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: loads the demo data into every engine")
	}
	schema := newSchemaName()
	root := t.TempDir()
	data, _ := filepath.Abs(filepath.Join("..", "testdata", "demo", "data"))
	copyText := func(from, to string, edit func(string) string) string {
		b, err := os.ReadFile(from)
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(root, to)
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte(edit(string(b))), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	copyText(filepath.Join("..", "testdata", "library", "grocery.toml"), "library/grocery.toml", func(s string) string {
		s = strings.ReplaceAll(s, `table = "grocery.`, `table = "`+schema+`.`)
		return strings.ReplaceAll(s, `file = "data/`, `file = "`+filepath.ToSlash(data)+`/`)
	})
	copyText(filepath.Join("..", "testdata", "library", "grocery-calendar.toml"), "library/grocery-calendar.toml", func(s string) string { return s })
	spec := copyText(filepath.Join("..", "testdata", "demo", "checkout.toml"), "demo/checkout.toml", func(s string) string { return s })

	var sqlText, errText bytes.Buffer
	if c := cli.Run([]string{"compile", "--place", "warehouse", spec}, nil, &sqlText, &errText); c != cli.ExitOK {
		t.Fatalf("compile --place warehouse: exit %d\n%s", c, errText.String())
	}
	if strings.Contains(sqlText.String(), "read_parquet") || !strings.Contains(sqlText.String(), `"`+schema+`"."orders"`) {
		t.Fatalf("compile --place warehouse does not read the warehouse tables:\n%.2000s", sqlText.String())
	}
	flags := []string{"--segments=false", "--threads", "1"}
	files := &engineRun{name: "files"}
	code, want, stderr := runCLI(t, files, spec, flags...)
	if want == nil {
		t.Fatalf("run on files: exit %d\n%s", code, stderr)
	}
	for _, e := range engines(t, schema, demoTables(t)) {
		t.Run(e.name, func(t *testing.T) {
			extra := append([]string{"--place", "warehouse"}, flags...)
			if e.name != "duckdb" {
				extra = extra[:3] // --threads is DuckDB's
			}
			c, got, serr := runCLI(t, e, spec, extra...)
			if got == nil || c != code {
				t.Fatalf("run --place warehouse: exit %d, want %d\n%s", c, code, serr)
			}
			compareTrees(t, e.name+" metrics", want["metrics"], got["metrics"], sameRel)
			compareTrees(t, e.name+" health", want["health"], got["health"], sameRel)
		})
	}
}
