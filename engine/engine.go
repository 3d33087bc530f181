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

// Query runs main and health on db and reads their rows. keys are the
// grouping key columns of the main query.
func Query(ctx context.Context, db *sql.DB, main, health string, keys []string) (*Result, error) {
	rows, err := readMain(ctx, db, main, keys)
	if err != nil {
		return nil, err
	}
	h, err := readHealth(ctx, db, health)
	if err != nil {
		return nil, err
	}
	return &Result{Rows: rows, Health: h}, nil
}

// QueryMain runs only a main query, e.g. one grouped by a segment, and
// reads its rows; keys are its grouping key columns.
func QueryMain(ctx context.Context, db *sql.DB, main string, keys []string) ([]Row, error) {
	return readMain(ctx, db, main, keys)
}

func readMain(ctx context.Context, db *sql.DB, q string, keys []string) ([]Row, error) {
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

func readHealth(ctx context.Context, db *sql.DB, q string) ([]HealthRow, error) {
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
