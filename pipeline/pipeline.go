// Package pipeline runs the stages every command shares, in one order:
// open the engine (a DuckDB file, in-memory DuckDB or a server) → check the
// catalogue → compile with the command's options → stage the cohort once →
// the main query with every breakdown → the health query → decode by the
// plan's contract. assay run and assay calibrate use it; analysis and
// rendering come after it and never talk to the engine.
package pipeline

import (
	"context"
	"database/sql"
	"errors"
	"fmt"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
)

// Target says which engine to run on.
type Target struct {
	// DSN names a PostgreSQL or MySQL/MariaDB server; empty means the
	// embedded DuckDB.
	DSN string
	// DB is a DuckDB database file opened read-only ("" is in-memory).
	DB string
	// FileDir is where DuckDB resolves relative file paths.
	FileDir     string
	Threads     int
	MemoryLimit string
	// Dialect is the dialect asked for on the command line; a server's own
	// dialect replaces it.
	Dialect string
}

// Engine is an open connection with the dialect its SQL is printed in.
type Engine struct {
	DB      *sql.DB
	Dialect dialects.Dialect
}

// Close closes the connection.
func (e *Engine) Close() error { return e.DB.Close() }

// ErrInput marks errors in what the user asked for (as opposed to engine
// failures), for the exit code.
var ErrInput = errors.New("input")

type inputError struct{ msg string }

func (e inputError) Error() string   { return e.msg }
func (e inputError) Is(t error) bool { return t == ErrInput }

func inputf(format string, args ...any) error { return inputError{fmt.Sprintf(format, args...)} }

// Open opens the target's engine.
func Open(ctx context.Context, t Target) (*Engine, error) {
	if t.DSN == "" && t.DB == "" {
		t.DSN = engine.DSNFromEnv()
	}
	if t.Dialect == "" {
		t.Dialect = "duckdb"
	}
	if t.DSN == "" {
		if t.Dialect != "duckdb" {
			return nil, inputf("--dialect %s needs a server: give --dsn (the embedded engine is DuckDB); use assay compile to print the SQL", t.Dialect)
		}
		db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: t.DB, FileDir: t.FileDir, Threads: t.Threads, MemoryLimit: t.MemoryLimit})
		if err != nil {
			return nil, fmt.Errorf("cannot open DuckDB: %w", err)
		}
		d, _ := dialects.Lookup("duckdb")
		return &Engine{DB: db, Dialect: d}, nil
	}
	if t.DB != "" || t.Threads != 0 || t.MemoryLimit != "" {
		return nil, inputf("--db, --threads and --memory-limit are for the embedded DuckDB; they cannot be combined with --dsn or ASSAY_DSN")
	}
	name, err := engine.DialectOf(t.DSN)
	if err != nil {
		return nil, inputError{err.Error()}
	}
	d, err := dialects.Lookup(name)
	if err != nil {
		return nil, inputError{err.Error()}
	}
	db, _, err := engine.Open(ctx, t.DSN)
	if err != nil {
		return nil, err
	}
	return &Engine{DB: db, Dialect: d}, nil
}

// Check checks the spec's sources against the engine's catalogue, before
// any query runs. Sources without rows (a header-only CSV, a 0-byte file,
// an empty table) are found first; on DuckDB an empty file is read as an
// empty relation of its declared columns (the spec's source is pointed at
// it), so that its metrics are zero rather than refused. Empty lists
// them, for the report's cautions.
func (e *Engine) Check(ctx context.Context, spec *metrics.Spec) (ds metrics.Diagnostics, empty []string, err error) {
	empty, err = engine.EmptySources(ctx, e.DB, spec, e.Dialect)
	if err != nil {
		return nil, nil, err
	}
	if len(empty) > 0 {
		sds, err := engine.StandInEmpty(ctx, e.DB, spec, e.Dialect, empty)
		if err != nil {
			return nil, nil, err
		}
		ds = append(ds, sds...)
		if ds.HasErrors() {
			return ds, empty, nil
		}
	}
	if empty == nil {
		empty = []string{} // every source was looked at: none is empty
	}
	return append(ds, engine.CheckCatalog(ctx, e.DB, spec, e.Dialect, empty)...), empty, nil
}

// Compile compiles spec with opt for the engine's dialect, checking what
// the engine needs of the plan (MySQL's session time zone).
func (e *Engine) Compile(ctx context.Context, spec *metrics.Spec, opt compiler.Options) (*compiler.Plan, compiler.Queries, metrics.Diagnostics, error) {
	plan, ds := compiler.Compile(spec, opt)
	if ds.HasErrors() {
		return nil, compiler.Queries{}, ds, nil
	}
	q, err := compiler.Print(plan, e.Dialect)
	if err != nil {
		return nil, compiler.Queries{}, ds, inputError{err.Error()}
	}
	if e.Dialect.Name() == "mysql" {
		if err := engine.CheckMySQLTimeZone(ctx, e.DB, plan.TZ); err != nil {
			return nil, compiler.Queries{}, ds, err
		}
	}
	return plan, q, ds, nil
}

// Run runs the plan's queries (the health query too when health is set)
// and decodes the rows by the plan's contract.
func (e *Engine) Run(ctx context.Context, plan *compiler.Plan, q compiler.Queries, health bool) (*results.Set, error) {
	return engine.Query(ctx, e.DB, plan, q, health)
}
