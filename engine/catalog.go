package engine

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
	"sort"
	"strings"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

// CheckCatalog checks the database behind db against the sources of spec
// before any query runs. For each source it reads the table, view or file
// with a query that returns no rows, and reports, all at once:
//
//   - a table or view that does not exist, with the tables that do;
//   - a file that cannot be read, with the engine's reason;
//   - declared columns that the source does not have, with the columns
//     (and types) it does have;
//   - a time column whose type is not a date or timestamp;
//   - a unit id column whose type is of another kind (number, text, ...)
//     than the exposure source's unit id column, naming both sources and
//     both types;
//   - as warnings, columns that match only without regard to letter case,
//     and sources without a single row (naming the declared file of a
//     source that StandInEmpty replaced by an empty view).
//
// Each diagnostic points at the spec's declaration of the source (its
// `table`, `file`, `columns` or `time` key). The queries are portable SQL
// (SELECT * ... WHERE 1 = 0, information_schema.tables, LIMIT 1), so the
// check works on every engine assay connects to.
//
// empty names the sources already found to have no rows (EmptySources),
// so that they are not queried again; with nil, CheckCatalog finds out
// itself.
func CheckCatalog(ctx context.Context, db *sql.DB, spec *metrics.Spec, d dialects.Dialect, empty []string) metrics.Diagnostics {
	var ds metrics.Diagnostics
	isKnownEmpty := func(src *metrics.Source, rel string) bool {
		if empty != nil {
			return slices.Contains(empty, src.Name)
		}
		e, err := isEmpty(ctx, db, rel)
		return err == nil && e
	}
	var tables []catalogTable
	tablesRead := false
	var units []unitColumn
	for _, src := range spec.Sources {
		if err := ctx.Err(); err != nil {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource, Subject: src.At,
				Summary: fmt.Sprintf("catalogue check of source `%s` interrupted: %v", src.Name, err)})
			break
		}
		rel, what, at := sourceRelation(spec, src, d)
		if rel == "" {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource, Subject: at,
				Summary: fmt.Sprintf("source `%s`: %s cannot be read by the %s engine", src.Name, what, d.Name())})
			continue
		}
		cols, err := describe(ctx, db, rel)
		if err != nil {
			if ctx.Err() != nil {
				ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource, Subject: at,
					Summary: fmt.Sprintf("catalogue check of source `%s` interrupted: %v", src.Name, ctx.Err())})
				break
			}
			if src.File != "" {
				ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource, Subject: at,
					Summary: fmt.Sprintf("source `%s`: cannot read %s: %s", src.Name, what, firstLine(CleanError(err))),
					Hint:    "file paths are relative to the spec's directory"})
				continue
			}
			if !tablesRead {
				tables, tablesRead = listTables(ctx, db), true
			}
			ds = append(ds, missingTable(src, what, at, tables, err))
			continue
		}
		ds = append(ds, checkColumns(spec, src, what, cols)...)
		if c, ok := findColumn(cols, src.Unit); ok && c.Type != "" {
			units = append(units, unitColumn{src: src, what: what, typ: c.Type})
		}
		if _, stoodIn := StoodIn(src); stoodIn {
			ds = append(ds, metrics.Diagnostic{Severity: metrics.Warning, Code: metrics.CodeSource, Subject: at,
				Summary: fmt.Sprintf("source `%s`: %s has no rows; it is read as an empty table of the declared columns", src.Name, what),
				Hint:    "every metric that reads it will be zero for every unit"})
		} else if isKnownEmpty(src, rel) {
			ds = append(ds, metrics.Diagnostic{Severity: metrics.Warning, Code: metrics.CodeSource, Subject: at,
				Summary: fmt.Sprintf("source `%s`: %s has no rows", src.Name, what),
				Hint:    "every metric that reads it will be zero for every unit"})
		}
	}
	ds = append(ds, checkUnitTypes(spec, units)...)
	ds.Sort()
	return ds
}

// unitColumn is the unit id column of a source as the engine reports it.
type unitColumn struct {
	src  *metrics.Source
	what string
	typ  string
}

// findColumn returns the column called name, matched exactly or else
// without regard to letter case.
func findColumn(cols []catalogColumn, name string) (catalogColumn, bool) {
	for _, c := range cols {
		if c.Name == name {
			return c, true
		}
	}
	for _, c := range cols {
		if strings.EqualFold(c.Name, name) {
			return c, true
		}
	}
	return catalogColumn{}, false
}

// checkUnitTypes refuses sources whose unit id column is of a different
// kind of type than the exposure source's: every source is joined to the
// exposures on unit id, and an engine joins a number to a text by
// converting one to the other, so that '007' meets 7, or never meets it,
// depending on the engine. Integers of different widths are compatible,
// and so are integers and decimals; texts of any length are compatible.
// When the exposure source's type is unknown, the first source with a
// known type is the reference.
func checkUnitTypes(spec *metrics.Spec, units []unitColumn) metrics.Diagnostics {
	if len(units) < 2 {
		return nil
	}
	ref := units[0]
	for _, u := range units {
		if u.src == spec.Exposure.Source {
			ref = u
			break
		}
	}
	refKind := typeKind(ref.typ)
	if refKind == "" {
		return nil
	}
	var ds metrics.Diagnostics
	for _, u := range units {
		k := typeKind(u.typ)
		if u.src == ref.src || k == "" || k == refKind {
			continue
		}
		role := "the exposure source"
		if ref.src != spec.Exposure.Source {
			role = "source"
		}
		ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource,
			Subject: rangeOr(spec, u.src.At, "sources", u.src.Name, "unit"),
			Summary: fmt.Sprintf("source `%s`: unit column `%s` is %s, but %s `%s` has unit column `%s` of type %s",
				u.src.Name, u.src.Unit, u.typ, role, ref.src.Name, ref.src.Unit, ref.typ),
			Hint: fmt.Sprintf("unit ids are joined across sources; a %s and a %s are compared only after converting one of them, so ids such as '007' and 7 would match or not depending on the engine. Give both columns the same type (cast one in a view)", kindNoun[k], kindNoun[refKind])})
	}
	return ds
}

// kindNoun names a type kind in messages.
var kindNoun = map[string]string{
	"number": "number", "float": "floating-point number", "text": "text",
	"uuid": "UUID", "time": "date or time", "bool": "boolean", "binary": "binary value",
}

// typeKind returns the kind of a column type as the drivers of DuckDB,
// PostgreSQL and MySQL name it: "number" (integers of any width, signed or
// not, and decimals), "float", "text", "uuid", "time", "bool", "binary", or
// "" for a type this check does not know, which it leaves alone.
func typeKind(t string) string {
	t = strings.ToUpper(strings.TrimSpace(t))
	if i := strings.IndexByte(t, '('); i >= 0 {
		t = strings.TrimSpace(t[:i])
	}
	t = strings.TrimPrefix(t, "UNSIGNED ")
	switch t {
	case "TINYINT", "SMALLINT", "MEDIUMINT", "INTEGER", "INT", "BIGINT", "HUGEINT", "UHUGEINT",
		"UTINYINT", "USMALLINT", "UINTEGER", "UBIGINT", "INT1", "INT2", "INT4", "INT8", "INT16", "INT32", "INT64",
		"SERIAL", "BIGSERIAL", "SMALLSERIAL", "DECIMAL", "NUMERIC", "NUMBER", "YEAR":
		return "number"
	case "FLOAT", "DOUBLE", "REAL", "FLOAT4", "FLOAT8", "DOUBLE PRECISION":
		return "float"
	case "VARCHAR", "CHAR", "BPCHAR", "TEXT", "STRING", "NVARCHAR", "NCHAR", "CHARACTER", "CHARACTER VARYING",
		"TINYTEXT", "MEDIUMTEXT", "LONGTEXT", "NAME", "CITEXT", "ENUM":
		return "text"
	case "UUID":
		return "uuid"
	case "BOOLEAN", "BOOL":
		return "bool"
	case "BLOB", "BYTEA", "BINARY", "VARBINARY", "TINYBLOB", "MEDIUMBLOB", "LONGBLOB":
		return "binary"
	}
	if isTimeType(t) || t == "TIME" || t == "TIMETZ" {
		return "time"
	}
	return ""
}

// catalogColumn is a column as the engine reports it.
type catalogColumn struct {
	Name, Type string
}

type catalogTable struct {
	Schema, Name string
}

// sourceRelation renders the relation a source reads, a description of it
// for messages, and the spec range to blame.
func sourceRelation(spec *metrics.Spec, src *metrics.Source, d dialects.Dialect) (rel, what string, at metrics.Range) {
	at = rangeOr(spec, src.At, "sources", src.Name, "table")
	if file, ok := StoodIn(src); ok {
		return d.Table(src.TableParts), fmt.Sprintf("file %q", file), rangeOr(spec, src.At, "sources", src.Name, "file")
	}
	if src.File != "" {
		at = rangeOr(spec, src.At, "sources", src.Name, "file")
		f, err := d.File(src.File)
		if err != nil {
			return "", fmt.Sprintf("file %q", src.File), at
		}
		return f, fmt.Sprintf("file %q", src.File), at
	}
	return d.Table(src.TableParts), fmt.Sprintf("table `%s`", src.Table), at
}

// rangeOr returns the spec range of the key path, or def.
func rangeOr(spec *metrics.Spec, def metrics.Range, path ...string) metrics.Range {
	if r, ok := spec.Ranges[strings.Join(path, ".")]; ok {
		return r
	}
	return def
}

// describe returns the columns of rel, read from an empty result.
func describe(ctx context.Context, db *sql.DB, rel string) ([]catalogColumn, error) {
	rows, err := db.QueryContext(ctx, "SELECT * FROM "+rel+" AS s WHERE 1 = 0")
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	types, err := rows.ColumnTypes()
	if err != nil {
		return nil, err
	}
	cols := make([]catalogColumn, len(types))
	for i, t := range types {
		cols[i] = catalogColumn{Name: t.Name(), Type: strings.ToUpper(t.DatabaseTypeName())}
	}
	for rows.Next() {
	}
	return cols, rows.Err()
}

// isEmpty reports whether rel has no rows.
func isEmpty(ctx context.Context, db *sql.DB, rel string) (bool, error) {
	rows, err := db.QueryContext(ctx, "SELECT 1 FROM "+rel+" AS s LIMIT 1")
	if err != nil {
		return false, err
	}
	defer rows.Close()
	has := rows.Next()
	return !has, rows.Err()
}

// listTables returns the tables and views the session can see, or nil when
// information_schema cannot be read.
func listTables(ctx context.Context, db *sql.DB) []catalogTable {
	rows, err := db.QueryContext(ctx, "SELECT table_schema, table_name FROM information_schema.tables")
	if err != nil {
		return nil
	}
	defer rows.Close()
	var out []catalogTable
	for rows.Next() {
		var s, n sql.NullString
		if rows.Scan(&s, &n) == nil && n.Valid {
			out = append(out, catalogTable{Schema: s.String, Name: n.String})
		}
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].Name != out[j].Name {
			return out[i].Name < out[j].Name
		}
		return out[i].Schema < out[j].Schema
	})
	return out
}

// systemSchemas are left out of the table list in hints.
var systemSchemas = map[string]bool{"information_schema": true, "pg_catalog": true, "mysql": true, "performance_schema": true, "sys": true}

func missingTable(src *metrics.Source, what string, at metrics.Range, tables []catalogTable, err error) metrics.Diagnostic {
	parts := src.TableParts
	last := parts[len(parts)-1]
	var names []string
	exists := false
	for _, t := range tables {
		if systemSchemas[strings.ToLower(t.Schema)] {
			continue
		}
		names = append(names, t.Name)
		if strings.EqualFold(t.Name, last) {
			exists = true
		}
	}
	if exists || tables == nil {
		// The table is there (or the catalogue cannot be listed): the
		// engine's own reason says more.
		return metrics.Diagnostic{Code: metrics.CodeSource, Subject: at,
			Summary: fmt.Sprintf("source `%s`: cannot read %s: %s", src.Name, what, firstLine(CleanError(err)))}
	}
	names = dedupe(names)
	d := metrics.Diagnostic{Code: metrics.CodeSource, Subject: at,
		Summary: fmt.Sprintf("source `%s`: %s does not exist in the database", src.Name, what)}
	if s := metrics.Suggest(last, names); s != "" {
		d.Summary += fmt.Sprintf("; did you mean `%s`?", s)
	}
	switch {
	case len(names) == 0:
		d.Hint = "the database has no tables or views"
	case len(names) <= 30:
		d.Hint = "tables and views in the database: " + strings.Join(names, ", ")
	default:
		d.Hint = fmt.Sprintf("tables and views in the database: %s, and %d more", strings.Join(names[:30], ", "), len(names)-30)
	}
	return d
}

// timeTypes are the column types a source's time column may have, as the
// drivers of DuckDB, PostgreSQL and MySQL name them.
var timeTypes = []string{"TIMESTAMP", "TIMESTAMPTZ", "TIMESTAMP WITH TIME ZONE", "TIMESTAMP WITHOUT TIME ZONE",
	"TIMESTAMP_S", "TIMESTAMP_MS", "TIMESTAMP_NS", "DATE", "DATETIME"}

func checkColumns(spec *metrics.Spec, src *metrics.Source, what string, cols []catalogColumn) metrics.Diagnostics {
	var ds metrics.Diagnostics
	exact := map[string]catalogColumn{}
	folded := map[string]catalogColumn{}
	var have []string
	for _, c := range cols {
		exact[c.Name] = c
		if _, dup := folded[strings.ToLower(c.Name)]; !dup {
			folded[strings.ToLower(c.Name)] = c
		}
		if c.Type != "" {
			have = append(have, c.Name+" "+c.Type)
		} else {
			have = append(have, c.Name)
		}
	}
	colsAt := rangeOr(spec, src.At, "sources", src.Name, "columns")
	var missing []string
	for _, name := range src.Columns {
		if _, ok := exact[name]; ok {
			continue
		}
		if c, ok := folded[strings.ToLower(name)]; ok {
			ds = append(ds, metrics.Diagnostic{Severity: metrics.Warning, Code: metrics.CodeColumn, Subject: colsAt,
				Summary: fmt.Sprintf("source `%s`: column `%s` matches `%s` of %s only without regard to letter case", src.Name, name, c.Name, what),
				Hint:    fmt.Sprintf("write it as %q: engines that compare quoted names exactly will not find it", c.Name)})
			continue
		}
		missing = append(missing, name)
	}
	if len(missing) > 0 {
		noun := "column"
		if len(missing) > 1 {
			noun = "columns"
		}
		var names []string
		for _, c := range cols {
			names = append(names, c.Name)
		}
		listed := make([]string, len(missing))
		for i, m := range missing {
			listed[i] = "`" + m + "`"
			if s := metrics.Suggest(m, names); s != "" {
				listed[i] += fmt.Sprintf(" (did you mean `%s`?)", s)
			}
		}
		summary := fmt.Sprintf("source `%s`: %s has no %s %s", src.Name, what, noun, strings.Join(listed, ", "))
		ds = append(ds, metrics.Diagnostic{Code: metrics.CodeColumn, Subject: colsAt, Summary: summary,
			Hint: "it has: " + strings.Join(have, ", ")})
	}
	if src.Time != "" {
		c, ok := exact[src.Time]
		if !ok {
			c, ok = folded[strings.ToLower(src.Time)]
		}
		if ok && c.Type != "" && !isTimeType(c.Type) && src.TimeFormat.Text == "" {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeSource, Subject: rangeOr(spec, src.At, "sources", src.Name, "time"),
				Summary: fmt.Sprintf("source `%s`: time column `%s` is %s, not a date or timestamp", src.Name, src.Time, c.Type),
				Hint:    "point `time` at a TIMESTAMP column, or declare how it stores times with time_format"})
		}
	}
	return ds
}

func isTimeType(t string) bool {
	for _, x := range timeTypes {
		if t == x {
			return true
		}
	}
	return false
}

func dedupe(names []string) []string {
	sort.Strings(names)
	out := names[:0]
	for i, n := range names {
		if i == 0 || n != names[i-1] {
			out = append(out, n)
		}
	}
	return out
}

// firstLine returns the first line of err's text: DuckDB appends the query
// with a caret, which means nothing to a spec author.
func firstLine(err error) string {
	s := err.Error()
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	return strings.TrimSpace(s)
}
