package engine

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"errors"
	"fmt"
	"net/url"
	"strings"

	"github.com/duckdb/duckdb-go/v2"
)

// DuckDBOptions open an embedded DuckDB.
type DuckDBOptions struct {
	// Path is a database file opened read-only; "" is an in-memory database.
	Path string
	// FileDir is where relative file paths in the SQL are resolved.
	FileDir string
	// Threads and MemoryLimit are passed to DuckDB when set.
	Threads     int
	MemoryLimit string
}

// OpenDuckDB opens an embedded DuckDB. A database file is opened read-only,
// so a run can never change it.
func OpenDuckDB(opt DuckDBOptions) (*sql.DB, error) {
	q := url.Values{}
	if opt.Path != "" {
		q.Set("access_mode", "read_only")
	}
	if opt.Threads > 0 {
		q.Set("threads", fmt.Sprint(opt.Threads))
	}
	if opt.MemoryLimit != "" {
		q.Set("memory_limit", opt.MemoryLimit)
	}
	dsn := opt.Path
	if enc := q.Encode(); enc != "" {
		dsn += "?" + enc
	}
	dir := opt.FileDir
	conn, err := duckdb.NewConnector(dsn, func(ex driver.ExecerContext) error {
		stmts := []string{
			"SET enable_progress_bar = false",
			"SET autoinstall_known_extensions = false",
			"SET autoload_known_extensions = true",
		}
		if dir != "" {
			stmts = append(stmts, "SET file_search_path = '"+strings.ReplaceAll(dir, "'", "''")+"'")
		}
		for _, s := range stmts {
			if _, err := ex.ExecContext(context.Background(), s, nil); err != nil {
				return fmt.Errorf("%s: %w", s, err)
			}
		}
		return nil
	})
	if err != nil {
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

// cleanDuckErr keeps DuckDB's message and drops driver noise.
func cleanDuckErr(err error) error {
	var de *duckdb.Error
	if errors.As(err, &de) {
		msg := de.Msg
		if strings.Contains(msg, "DECIMAL(38,10)") {
			msg += "\nhint: assay adds each unit's values exactly, as decimals with 10 places; a value or a unit's total of 10^28 or more does not fit. Scale the value down in the metric's `value` expression (for example amount / 1000)."
		}
		return fmt.Errorf("duckdb: %s", msg)
	}
	return err
}

// CleanError returns a short, user-facing form of an engine error, with
// the passwords of opened connection strings removed.
func CleanError(err error) error { return Redact(cleanDuckErr(err)) }
