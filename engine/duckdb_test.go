package engine_test

import (
	"bytes"
	"database/sql"
	"os"
	"path/filepath"
	"strings"
	"testing"

	_ "github.com/duckdb/duckdb-go/v2"

	"github.com/assay-dev/assay/engine"
)

// makeDuckDB writes a database file with one table of invented orders at
// dir/name. It is built read-write under a plain name and then renamed, so
// that name may hold characters a DuckDB connection string cannot.
func makeDuckDB(t *testing.T, dir, name string) string {
	t.Helper()
	build := filepath.Join(dir, "build.duckdb")
	rw, err := sql.Open("duckdb", build)
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range []string{
		`CREATE TABLE orders (user_id BIGINT, amount DOUBLE)`,
		`INSERT INTO orders VALUES (1, 12.5), (2, 3.0)`,
		`CREATE SCHEMA shop`,
		`CREATE TABLE shop.refunds (user_id BIGINT)`,
	} {
		if _, err := rw.Exec(q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	if err := rw.Close(); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, name)
	if err := os.Rename(build, path); err != nil {
		t.Fatal(err)
	}
	return path
}

func countOrders(t *testing.T, db *sql.DB, table string) int {
	t.Helper()
	var n int
	if err := db.QueryRow("SELECT count(*) FROM " + table).Scan(&n); err != nil {
		t.Fatalf("count %s: %v", table, engine.CleanError(err))
	}
	return n
}

// TestDuckDBPathIsOnlyAPath checks that --db's path never turns into
// options: a path with a query string names a file that does not exist,
// which is refused without creating anything; a file whose name really is
// that string opens read-only; names with '?', quotes and a name DuckDB
// reserves open and their tables are found by plain and catalog-qualified
// names.
func TestDuckDBPathIsOnlyAPath(t *testing.T) {
	t.Run("query string does not create a file", func(t *testing.T) {
		dir := t.TempDir()
		path := filepath.Join(dir, "new.duckdb?access_mode=read_write")
		db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path})
		if err == nil {
			db.Close()
			t.Fatal("opened a database file that does not exist")
		}
		if !strings.Contains(err.Error(), "does not exist") {
			t.Errorf("got %v, want an error saying the file does not exist", err)
		}
		if ents, _ := os.ReadDir(dir); len(ents) != 0 {
			t.Errorf("got files %v in the directory, want none", ents)
		}
	})
	t.Run("query string file is read-only", func(t *testing.T) {
		dir := t.TempDir()
		path := makeDuckDB(t, dir, "new.duckdb?access_mode=read_write")
		db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path})
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		if _, err := db.Exec("INSERT INTO orders VALUES (3, 1.0)"); err == nil {
			t.Error("INSERT succeeded; want it refused")
		}
		if n := countOrders(t, db, "orders"); n != 2 {
			t.Errorf("got %d orders, want 2", n)
		}
	})
	for _, tc := range []struct{ file, catalog string }{
		{"we?ird.duckdb", "we?ird"},
		{`it's "odd" ; DROP.duckdb`, `it's "odd" ; DROP`},
		{"memory.duckdb", "memory_file"},
		{"main.db", "main_file"},
		{"store.v2.duckdb", "store"},
	} {
		t.Run("opens "+tc.file, func(t *testing.T) {
			path := makeDuckDB(t, t.TempDir(), tc.file)
			db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path})
			if err != nil {
				t.Fatal(err)
			}
			defer db.Close()
			if n := countOrders(t, db, "orders"); n != 2 {
				t.Errorf("got %d orders, want 2", n)
			}
			countOrders(t, db, "shop.refunds")
			cat := `"` + strings.ReplaceAll(tc.catalog, `"`, `""`) + `"`
			if n := countOrders(t, db, cat+".main.orders"); n != 2 {
				t.Errorf("got %d orders through the catalog name, want 2", n)
			}
		})
	}
}

// TestDuckDBWritesRefused checks that a database file opened by OpenDuckDB
// cannot be changed by any kind of statement, that temporary tables (which
// the staged queries need) still work, and that the file is byte-identical
// afterwards.
func TestDuckDBWritesRefused(t *testing.T) {
	path := makeDuckDB(t, t.TempDir(), "w.duckdb")
	before, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: path, Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, q := range []string{
		"INSERT INTO orders VALUES (3, 1.0)",
		"UPDATE orders SET amount = 0",
		"DELETE FROM orders",
		"DROP TABLE orders",
		"CREATE TABLE extra (x INTEGER)",
		"CREATE VIEW v AS SELECT 1 AS x",
		"ALTER TABLE orders ADD COLUMN note VARCHAR",
	} {
		if _, err := db.Exec(q); err == nil {
			t.Errorf("%s: succeeded, want it refused", q)
		}
	}
	if _, err := db.Exec("CREATE TEMPORARY TABLE staged AS SELECT * FROM orders"); err != nil {
		t.Errorf("temporary table: %v", err)
	}
	if n := countOrders(t, db, "orders"); n != 2 {
		t.Errorf("got %d orders, want 2", n)
	}
	db.Close()
	after, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(before, after) {
		t.Error("the database file changed")
	}
}

// TestDuckDBRefusesBadPaths checks the messages for a directory, a file
// that is not a DuckDB database, a device, a negative thread count and a
// memory limit that is not a size (or smuggles in another option).
func TestDuckDBRefusesBadPaths(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "orders.csv")
	if err := os.WriteFile(csv, []byte("user_id,amount\n1,2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		opt  engine.DuckDBOptions
		want string
	}{
		{"directory", engine.DuckDBOptions{Path: dir}, "is a directory"},
		{"not a database", engine.DuckDBOptions{Path: csv}, "cannot open database file"},
		{"device", engine.DuckDBOptions{Path: os.DevNull}, "not a regular file"},
		{"negative threads", engine.DuckDBOptions{Threads: -1}, "threads must be 1 or more"},
		{"bad memory limit", engine.DuckDBOptions{MemoryLimit: "lots"}, `memory limit "lots" is not a size`},
		{"memory limit with an option", engine.DuckDBOptions{MemoryLimit: "8GB&access_mode=read_write"}, "is not a size"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			db, err := engine.OpenDuckDB(tc.opt)
			if err == nil {
				db.Close()
				t.Fatal("no error")
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got %v, want it to contain %q", err, tc.want)
			}
		})
	}
	if b, _ := os.ReadFile(csv); string(b) != "user_id,amount\n1,2\n" {
		t.Errorf("the CSV file changed: %q", b)
	}
}
