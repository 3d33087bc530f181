package engine

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
)

// EmptySources returns the names of the sources of spec that have no rows,
// in spec order: a file of zero bytes, found from its size without a query
// (DuckDB cannot even read its columns), and any file, table or view for
// which SELECT 1 ... LIMIT 1 returns nothing (a CSV file with only a
// header, an empty Parquet file or table). Relative file paths are read
// from the spec's directory. A source that cannot be read is left out:
// CheckCatalog reports it. The error is non-nil only when ctx ends.
func EmptySources(ctx context.Context, db *sql.DB, spec *metrics.Spec, d dialects.Dialect) ([]string, error) {
	var out []string
	for _, src := range spec.Sources {
		if err := ctx.Err(); err != nil {
			return out, err
		}
		if src.File != "" {
			if fi, err := os.Stat(specPath(spec, src.File)); err == nil && fi.Mode().IsRegular() && fi.Size() == 0 {
				out = append(out, src.Name)
				continue
			}
		}
		rel, _, _ := sourceRelation(spec, src, d)
		if rel == "" {
			continue
		}
		if empty, err := isEmpty(ctx, db, rel); err == nil && empty {
			out = append(out, src.Name)
		} else if err != nil && ctx.Err() != nil {
			return out, ctx.Err()
		}
	}
	return out, nil
}

// specPath resolves a file path of spec against the spec's directory.
func specPath(spec *metrics.Spec, path string) string {
	if filepath.IsAbs(path) || spec.File == "" {
		return path
	}
	return filepath.Join(filepath.Dir(spec.File), path)
}

// standIns maps a source that StandInEmpty redirected to the file it
// declared, so that CheckCatalog names the file in its messages.
var standIns sync.Map // *metrics.Source → string

// standInPrefix starts the name of each stand-in view.
const standInPrefix = "assay_empty_"

// StandInEmpty lets the named empty file sources of spec be analysed as
// sources without rows rather than refused: DuckDB reads a CSV file with
// only a header as all-text columns and a file of zero bytes not at all,
// so the time column is not a timestamp and value columns cannot be
// summed. For each such source it creates a view with no rows in DuckDB's
// in-memory database (the unit id column of the exposure source's type,
// the time column a TIMESTAMP, every other declared column an untyped
// NULL that DuckDB converts to whatever an expression needs) and points
// the source at it (File cleared, Table and TableParts set). CheckCatalog
// then names the declared file and warns that it has no rows; every metric
// that reads the source is zero for every unit.
//
// The spec is changed in place, so the caller must compile it again
// afterwards. Only DuckDB reads files: with another dialect StandInEmpty
// does nothing. Left alone, for CheckCatalog to report: sources that are
// tables (their columns have types), files that are not empty, and files
// whose header lacks a declared column. The exposure source is never stood
// in; when it is empty, the returned diagnostics hold an error, as there
// are no units to analyse. The error is for a failure of the database.
func StandInEmpty(ctx context.Context, db *sql.DB, spec *metrics.Spec, d dialects.Dialect, names []string) (metrics.Diagnostics, error) {
	if d.Name() != "duckdb" || len(names) == 0 {
		return nil, nil
	}
	want := map[string]bool{}
	for _, n := range names {
		want[n] = true
	}
	var ds metrics.Diagnostics
	unitType := ""
	for _, src := range spec.Sources {
		if !want[src.Name] || src.File == "" {
			continue
		}
		if src == spec.Exposure.Source {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource,
				Subject: rangeOr(spec, src.At, "sources", src.Name, "file"),
				Summary: fmt.Sprintf("source `%s`: the exposure file %q has no rows, so there are no units to analyse", src.Name, src.File),
				Hint:    "check that the file was written completely, or point the exposure source at the right file"})
			continue
		}
		path := specPath(spec, src.File)
		if fi, err := os.Stat(path); err != nil || fi.Size() > 0 {
			// A file with a header: stand in only when it declares every
			// column, so that a misspelt column is still reported.
			rel, _, _ := sourceRelation(spec, src, d)
			cols, err := describe(ctx, db, rel)
			if err != nil {
				continue
			}
			if !hasColumns(cols, src) {
				continue
			}
		}
		if unitType == "" {
			t, err := exposureUnitType(ctx, db, spec, d)
			if err != nil {
				return ds, err
			}
			unitType = t
		}
		view := standInPrefix + src.Name
		q := "CREATE OR REPLACE VIEW " + sqlIdent(memoryCatalog) + ".main." + sqlIdent(view) + " AS SELECT " +
			strings.Join(standInColumns(src, unitType), ", ") + " WHERE false"
		if _, err := db.ExecContext(ctx, q); err != nil {
			return ds, fmt.Errorf("source %s: cannot create an empty stand-in for %q: %w", src.Name, src.File, CleanError(err))
		}
		standIns.Store(src, src.File)
		src.File = ""
		src.TableParts = []string{memoryCatalog, "main", view}
		src.Table = strings.Join(src.TableParts, ".")
	}
	return ds, nil
}

// StoodIn returns the file a source declared when StandInEmpty pointed it
// at an empty view, and whether it did.
func StoodIn(src *metrics.Source) (file string, ok bool) {
	v, ok := standIns.Load(src)
	if !ok {
		return "", false
	}
	return v.(string), true
}

// hasColumns reports whether cols hold every column src declares.
func hasColumns(cols []catalogColumn, src *metrics.Source) bool {
	need := append([]string{src.Unit}, src.Columns...)
	if src.Time != "" {
		need = append(need, src.Time)
	}
	for _, n := range need {
		if _, ok := findColumn(cols, n); !ok {
			return false
		}
	}
	return true
}

// standInColumns renders the select list of a stand-in view: each
// declared column once, in declaration order after the unit and time.
func standInColumns(src *metrics.Source, unitType string) []string {
	seen := map[string]bool{}
	var out []string
	add := func(name, expr string) {
		if seen[name] {
			return
		}
		seen[name] = true
		out = append(out, expr+" AS "+sqlIdent(name))
	}
	add(src.Unit, "CAST(NULL AS "+unitType+")")
	if src.Time != "" {
		add(src.Time, "CAST(NULL AS TIMESTAMP)")
	}
	for _, c := range src.Columns {
		add(c, "NULL")
	}
	return out
}

// exposureUnitType returns the DuckDB type of the exposure source's unit
// id column, or VARCHAR when it cannot be read (CheckCatalog reports why).
func exposureUnitType(ctx context.Context, db *sql.DB, spec *metrics.Spec, d dialects.Dialect) (string, error) {
	src := spec.Exposure.Source
	if src == nil {
		return "VARCHAR", nil
	}
	rel, _, _ := sourceRelation(spec, src, d)
	if rel == "" {
		return "VARCHAR", nil
	}
	rows, err := db.QueryContext(ctx, "DESCRIBE SELECT s."+sqlIdent(src.Unit)+" FROM "+rel+" AS s")
	if err != nil {
		if ctx.Err() != nil {
			return "", ctx.Err()
		}
		return "VARCHAR", nil
	}
	defer rows.Close()
	cols, err := rows.Columns()
	if err != nil || !rows.Next() {
		return "VARCHAR", rows.Err()
	}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	if err := rows.Scan(ptrs...); err != nil {
		return "VARCHAR", nil
	}
	for i, c := range cols {
		if c == "column_type" {
			if t := results.Text(vals[i]); t != "" {
				return t, nil
			}
		}
	}
	return "VARCHAR", nil
}
