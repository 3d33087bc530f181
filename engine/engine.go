// Package engine runs compiled queries and reads back the small result sets:
// per-variant sufficient statistics and health counts. It is the only
// package that talks to a database; the DuckDB driver (cgo) lives here so
// the rest of assay builds without cgo.
package engine

import (
	"context"
	"database/sql"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/results"
)

// Query runs q on one connection of db (q.Setup, q.Main, then q.Health
// when health is set, then q.Cleanup, whatever happens) and decodes the
// rows by p's result contract.
func Query(ctx context.Context, db *sql.DB, p *compiler.Plan, q compiler.Queries, health bool) (*results.Set, error) {
	var set *results.Set
	err := Staged(ctx, db, q, func(c *sql.Conn) error {
		cols, rows, err := readAll(ctx, c, q.Main)
		if err != nil {
			return err
		}
		// Engines without GROUPING SETS return each breakdown from a query
		// of its own, with the same columns.
		for _, b := range q.Breakdowns {
			_, more, err := readAll(ctx, c, b)
			if err != nil {
				return err
			}
			rows = append(rows, more...)
		}
		if set, err = results.Main(p, cols, rows); err != nil {
			return err
		}
		if !health {
			return nil
		}
		if cols, rows, err = readAll(ctx, c, q.Health); err != nil {
			return err
		}
		set.Health, err = results.Health(cols, rows)
		return err
	})
	return set, err
}

// Staged runs f on one connection of db between q.Setup and q.Cleanup: a
// temporary table lives only as long as the connection that made it. The
// cleanup runs even when ctx is cancelled, under its own short deadline.
func Staged(ctx context.Context, db *sql.DB, q compiler.Queries, f func(*sql.Conn) error) error {
	c, err := db.Conn(ctx)
	if err != nil {
		return err
	}
	defer c.Close()
	if q.Setup != "" {
		_, err = c.ExecContext(ctx, q.Setup)
	}
	if err == nil {
		err = f(c)
	}
	if q.Cleanup != "" {
		cctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 30*time.Second)
		defer cancel()
		if _, cerr := c.ExecContext(cctx, q.Cleanup); cerr != nil && err == nil {
			err = cerr
		}
	}
	return err
}

// querier is what readMain and readHealth need of a connection.
type querier interface {
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
}

// readAll runs q and returns its column names and every row's values.
// Both queries return small, aggregated results.
func readAll(ctx context.Context, db querier, q string) ([]string, [][]any, error) {
	rs, err := db.QueryContext(ctx, q)
	if err != nil {
		return nil, nil, err
	}
	defer rs.Close()
	cols, err := rs.Columns()
	if err != nil {
		return nil, nil, err
	}
	var out [][]any
	for rs.Next() {
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rs.Scan(ptrs...); err != nil {
			return nil, nil, err
		}
		out = append(out, vals)
	}
	return cols, out, rs.Err()
}
