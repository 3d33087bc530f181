// Package engine runs compiled queries and reads back the small result sets:
// per-variant sufficient statistics and health counts. It is the only
// package that talks to a database; the DuckDB driver (cgo) lives here so
// the rest of assay builds without cgo.
package engine

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"math/big"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
)

// Row is one row of the main query: a variant (and grouping keys) with the
// named statistics. A NULL statistic is NaN.
type Row struct {
	Fingerprint string
	Variant     string
	Keys        map[string]string
	Units       int64
	Stats       map[string]float64
}

// HealthRow is one row of the health query.
type HealthRow struct {
	Kind, Reason, Variant, Day string
	Rows, Units                int64
}

// Result is what a run brings back from the engine.
type Result struct {
	Rows   []Row
	Health []HealthRow
}

// Query runs q on one connection of db (q.Setup, q.Main, q.Health, then
// q.Cleanup, whatever happens) and reads the rows of main and health.
// keys are the grouping key columns of the main query.
func Query(ctx context.Context, db *sql.DB, q compiler.Queries, keys []string) (*Result, error) {
	var res *Result
	err := Staged(ctx, db, q, func(c *sql.Conn) error {
		rows, err := readMain(ctx, c, q.Main, keys)
		if err != nil {
			return err
		}
		h, err := readHealth(ctx, c, q.Health)
		if err != nil {
			return err
		}
		res = &Result{Rows: rows, Health: h}
		return nil
	})
	return res, err
}

// QueryMain runs only q's main query (with q.Setup and q.Cleanup), e.g.
// one grouped by a segment, and reads its rows; keys are its grouping key
// columns.
func QueryMain(ctx context.Context, db *sql.DB, q compiler.Queries, keys []string) ([]Row, error) {
	var rows []Row
	err := Staged(ctx, db, q, func(c *sql.Conn) (err error) {
		rows, err = readMain(ctx, c, q.Main, keys)
		return err
	})
	return rows, err
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

func readMain(ctx context.Context, db querier, q string, keys []string) ([]Row, error) {
	rs, err := db.QueryContext(ctx, q)
	if err != nil {
		return nil, err
	}
	defer rs.Close()
	cols, err := rs.Columns()
	if err != nil {
		return nil, err
	}
	isKey := map[string]bool{}
	for _, k := range keys {
		isKey[k] = true
	}
	var out []Row
	for rs.Next() {
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rs.Scan(ptrs...); err != nil {
			return nil, err
		}
		r := Row{Keys: map[string]string{}, Stats: map[string]float64{}}
		for i, c := range cols {
			switch {
			case c == "spec_fingerprint":
				r.Fingerprint = text(vals[i])
			case c == "variant":
				r.Variant = text(vals[i])
			case c == "units":
				r.Units = int64(number(vals[i]))
			case isKey[c]:
				r.Keys[c] = text(vals[i])
			default:
				r.Stats[c] = number(vals[i])
			}
		}
		out = append(out, r)
	}
	return out, rs.Err()
}

func readHealth(ctx context.Context, db querier, q string) ([]HealthRow, error) {
	rs, err := db.QueryContext(ctx, q)
	if err != nil {
		return nil, err
	}
	defer rs.Close()
	var out []HealthRow
	for rs.Next() {
		var kind, reason, variant, day, rows, units any
		if err := rs.Scan(&kind, &reason, &variant, &day, &rows, &units); err != nil {
			return nil, err
		}
		r := HealthRow{Kind: text(kind), Reason: text(reason), Variant: text(variant), Day: text(day)}
		if v := number(rows); !math.IsNaN(v) {
			r.Rows = int64(v)
		}
		if v := number(units); !math.IsNaN(v) {
			r.Units = int64(v)
		}
		out = append(out, r)
	}
	sortHealth(out)
	return out, rs.Err()
}

// sortHealth puts health rows in a fixed order: the engines disagree on
// where NULLs sort.
func sortHealth(out []HealthRow) {
	sort.SliceStable(out, func(i, j int) bool {
		a, b := out[i], out[j]
		if a.Kind != b.Kind {
			return a.Kind < b.Kind
		}
		if a.Reason != b.Reason {
			return a.Reason < b.Reason
		}
		if a.Variant != b.Variant {
			return a.Variant < b.Variant
		}
		return a.Day < b.Day
	})
}

func text(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return x
	case []byte:
		return string(x)
	case time.Time:
		return x.UTC().Format("2006-01-02")
	case fmt.Stringer:
		return x.String()
	}
	return fmt.Sprint(v)
}

// number converts a scanned value to float64; NULL is NaN.
func number(v any) float64 {
	switch x := v.(type) {
	case nil:
		return math.NaN()
	case float64:
		return x
	case float32:
		return float64(x)
	case int64:
		return float64(x)
	case int32:
		return float64(x)
	case int:
		return float64(x)
	case uint64:
		return float64(x)
	case *big.Int:
		f, _ := new(big.Float).SetInt(x).Float64()
		return f
	case []byte:
		f, err := strconv.ParseFloat(strings.TrimSpace(string(x)), 64)
		if err != nil {
			return math.NaN()
		}
		return f
	case string:
		f, err := strconv.ParseFloat(strings.TrimSpace(x), 64)
		if err != nil {
			return math.NaN()
		}
		return f
	case fmt.Stringer:
		f, err := strconv.ParseFloat(x.String(), 64)
		if err != nil {
			return math.NaN()
		}
		return f
	}
	return math.NaN()
}
