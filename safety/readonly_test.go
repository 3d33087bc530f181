package safety_test

import (
	"bytes"
	"database/sql"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/assay-dev/assay/cli"
	"github.com/assay-dev/assay/engine"
)

// TestEngineReadOnly opens a database file the way a run does and checks
// that every kind of write fails, and that the file is byte-identical with
// no new file beside it afterwards.
func TestEngineReadOnly(t *testing.T) {
	_, dbPath := buildHostile(t)
	dir := filepath.Dir(dbPath)
	shaBefore, filesBefore := fileSHA(t, dbPath), listDir(t, dir)
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: dbPath})
	if err != nil {
		t.Fatal(err)
	}
	writes := []string{
		"CREATE TABLE x (a INTEGER)",
		"INSERT INTO canary VALUES (4)",
		"UPDATE canary SET x = 0",
		"DELETE FROM canary",
		"DROP TABLE canary",
		"ALTER TABLE canary ADD COLUMN y INTEGER",
		"CREATE VIEW v AS SELECT 1",
		"CREATE SCHEMA s",
	}
	for _, q := range writes {
		t.Run(q, func(t *testing.T) {
			if _, err := db.Exec(q); err == nil {
				t.Errorf("got no error, want the read-only database to refuse it")
			}
		})
	}
	var n int
	if err := db.QueryRow("SELECT count(*) FROM canary").Scan(&n); err != nil || n != 3 {
		t.Errorf("canary: got %d rows (%v), want 3", n, err)
	}
	// CHECKPOINT is accepted on a read-only database as a no-op; the file
	// must still be unchanged.
	if _, err := db.Exec("CHECKPOINT"); err != nil {
		t.Logf("CHECKPOINT: %v", err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if got := fileSHA(t, dbPath); got != shaBefore {
		t.Errorf("database file changed")
	}
	if got := listDir(t, dir); !reflect.DeepEqual(got, filesBefore) {
		t.Errorf("directory: got %v, want %v", got, filesBefore)
	}
}

// TestFailedRunReadOnly checks that a run stopped by a declared column the
// table lacks (found by the catalogue check before any query runs, exit 1)
// also leaves the file untouched and prints no results.
func TestFailedRunReadOnly(t *testing.T) {
	specPath, dbPath := buildHostile(t)
	dir := filepath.Dir(specPath)
	src, err := os.ReadFile(specPath)
	if err != nil {
		t.Fatal(err)
	}
	// Rename the amount column in the spec only (its declaration and the
	// value that reads it): the spec loads, and the query fails to bind.
	bad := strings.Replace(string(src), tomlStr(amountCol), tomlStr("no such column"), 1)
	bad = strings.Replace(bad, tomlStr(qi(amountCol)), tomlStr(qi("no such column")), 1)
	badPath := filepath.Join(dir, "bad.toml")
	if err := os.WriteFile(badPath, []byte(bad), 0o644); err != nil {
		t.Fatal(err)
	}
	shaBefore, filesBefore := fileSHA(t, dbPath), listDir(t, dir)
	var stdout, stderr bytes.Buffer
	code := cli.Run([]string{"run", "--db", dbPath, "--format", "json", badPath}, nil, &stdout, &stderr)
	if code != cli.ExitInput || !strings.Contains(stderr.String(), "no such column") {
		t.Errorf("got exit %d, want %d with the missing column named; stderr:\n%s", code, cli.ExitInput, stderr.String())
	}
	if stdout.Len() > 0 {
		t.Errorf("got results on stdout from a failed run:\n%s", stdout.String())
	}
	if got := fileSHA(t, dbPath); got != shaBefore {
		t.Errorf("database file changed by a failed run")
	}
	if got := listDir(t, dir); !reflect.DeepEqual(got, filesBefore) {
		t.Errorf("directory: got %v, want %v", got, filesBefore)
	}
	rw, err := sql.Open("duckdb", dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer rw.Close()
	var n int
	if err := rw.QueryRow("SELECT count(*) FROM canary").Scan(&n); err != nil || n != 3 {
		t.Errorf("canary: got %d rows (%v), want 3", n, err)
	}
}
