package engine

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"errors"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"strings"

	"github.com/duckdb/duckdb-go/v2"
)

// DuckDBOptions open an embedded DuckDB.
type DuckDBOptions struct {
	// Path is an existing database file, opened read-only; "" is an
	// in-memory database. The path is a file name and nothing else: no
	// part of it is read as an option.
	Path string
	// FileDir is where relative file paths in the SQL are resolved.
	FileDir string
	// Threads (0: all cores) and MemoryLimit ("": DuckDB's default) are
	// passed to DuckDB when set. Threads must not be negative.
	Threads     int
	MemoryLimit string
}

// memoryCatalog is the name of DuckDB's in-memory database, the one every
// connection opened by OpenDuckDB starts in.
const memoryCatalog = "memory"

// OpenDuckDB opens an embedded DuckDB. A database file is attached
// read-only to an in-memory database and made the default (ATTACH ...
// (READ_ONLY); USE), so a run can never change it; options travel apart
// from the path, so no file name can turn into an option. Tables of the
// file are found by their usual names, including catalog-qualified ones:
// the file is attached under its base name without extension, as DuckDB
// names a file it opens itself (memory, main, system and temp, which
// DuckDB reserves, get a suffix).
func OpenDuckDB(opt DuckDBOptions) (*sql.DB, error) {
	if opt.Threads < 0 {
		return nil, fmt.Errorf("the number of threads must be 1 or more (or 0 for all cores), not %d", opt.Threads)
	}
	var attach []string
	if opt.Path != "" {
		stmts, err := attachStatements(opt.Path)
		if err != nil {
			return nil, err
		}
		attach = stmts
	}
	// The main database is in memory; only settings follow the '?'.
	q := url.Values{}
	if opt.Threads > 0 {
		q.Set("threads", fmt.Sprint(opt.Threads))
	}
	if opt.MemoryLimit != "" {
		q.Set("memory_limit", opt.MemoryLimit)
	}
	dsn := ""
	if enc := q.Encode(); enc != "" {
		dsn = "?" + enc
	}
	dir := opt.FileDir
	conn, err := duckdb.NewConnector(dsn, func(ex driver.ExecerContext) error {
		stmts := []string{
			"SET enable_progress_bar = false",
			"SET autoinstall_known_extensions = false",
			"SET autoload_known_extensions = true",
		}
		if dir != "" {
			stmts = append(stmts, "SET file_search_path = "+sqlString(dir))
		}
		for _, s := range stmts {
			if _, err := ex.ExecContext(context.Background(), s, nil); err != nil {
				return fmt.Errorf("%s: %w", s, err)
			}
		}
		for _, s := range attach {
			if _, err := ex.ExecContext(context.Background(), s, nil); err != nil {
				return fmt.Errorf("cannot open database file %q read-only: %w", opt.Path, cleanDuckErr(err))
			}
		}
		return nil
	})
	if err != nil {
		if opt.MemoryLimit != "" && strings.Contains(err.Error(), "memory_limit=") {
			return nil, fmt.Errorf("memory limit %q is not a size DuckDB can read: write a number and a unit, for example 8GB or 500MB", opt.MemoryLimit)
		}
		return nil, cleanDuckErr(err)
	}
	db := sql.OpenDB(conn)
	db.SetMaxOpenConns(1)
	if err := db.Ping(); err != nil {
		db.Close()
		return nil, cleanDuckErr(err)
	}
	return db, nil
}

// attachStatements checks that path is an existing regular file and
// returns the statements that attach it read-only as the default database.
func attachStatements(path string) ([]string, error) {
	if strings.ContainsRune(path, 0) {
		return nil, fmt.Errorf("database file name %q contains a NUL byte", path)
	}
	fi, err := os.Stat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil, fmt.Errorf("database file %q does not exist: a database file is opened read-only and never created", path)
	case err != nil:
		return nil, fmt.Errorf("cannot open database file %q: %w", path, err)
	case fi.IsDir():
		return nil, fmt.Errorf("database file %q is a directory", path)
	case !fi.Mode().IsRegular():
		return nil, fmt.Errorf("database file %q is not a regular file", path)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, fmt.Errorf("cannot open database file %q: %w", path, err)
	}
	alias := attachAlias(abs)
	return []string{
		"ATTACH IF NOT EXISTS " + sqlString(abs) + " AS " + sqlIdent(alias) + " (READ_ONLY, TYPE DUCKDB)",
		"USE " + sqlIdent(alias),
	}, nil
}

// attachAlias is the catalog name a database file is attached under: its
// base name without extension, as DuckDB names a file it opens, with a
// suffix for names DuckDB reserves or already uses.
func attachAlias(path string) string {
	base := filepath.Base(path)
	if i := strings.IndexByte(base, '.'); i > 0 {
		base = base[:i]
	}
	switch strings.ToLower(base) {
	case "", ".", memoryCatalog, "main", "system", "temp":
		base += "_file"
	}
	return base
}

// sqlString renders s as a DuckDB string literal. DuckDB string literals
// have no backslash escapes: a quote is doubled and nothing else changes.
func sqlString(s string) string { return "'" + strings.ReplaceAll(s, "'", "''") + "'" }

// sqlIdent renders s as a quoted DuckDB identifier.
func sqlIdent(s string) string { return `"` + strings.ReplaceAll(s, `"`, `""`) + `"` }

// cleanDuckErr keeps DuckDB's message and drops driver noise.
func cleanDuckErr(err error) error {
	var de *duckdb.Error
	if errors.As(err, &de) {
		msg := de.Msg
		if de.Type == duckdb.ErrorTypeOutOfMemory {
			msg = outOfMemory(msg)
		}
		if strings.Contains(msg, "DECIMAL(38,10)") {
			msg += "\nhint: assay adds each unit's values exactly, as decimals with 10 places; a value or a unit's total of 10^28 or more does not fit. Scale the value down in the metric's `value` expression (for example amount / 1000)."
		}
		return fmt.Errorf("duckdb: %s", msg)
	}
	return err
}

// outOfMemoryHint says what to do when DuckDB runs out of memory, in terms
// of assay's own flags.
const outOfMemoryHint = "hint: the query needs more memory than DuckDB may use. Raise the limit with --memory-limit (for example --memory-limit 16GB; DuckDB's default is 80% of the machine's memory), or run fewer worker threads with --threads (for example --threads 2): each thread holds its own share of the data."

// outOfMemory keeps the first line of DuckDB's out-of-memory message (what
// could not be allocated, and how much was in use) and replaces its advice,
// which names SQL settings a user of assay cannot type, by outOfMemoryHint.
func outOfMemory(msg string) string {
	first, _, _ := strings.Cut(msg, "\n")
	return strings.TrimSpace(first) + "\n" + outOfMemoryHint
}

// CleanError returns a short, user-facing form of an engine error, with
// the passwords of opened connection strings removed.
func CleanError(err error) error { return Redact(cleanDuckErr(err)) }
