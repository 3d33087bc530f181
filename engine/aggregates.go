package engine

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
)

// A result set exported by a warehouse client, for assay analyze. Both
// queries' results are read from CSV (a header row, then one record per
// row; an empty field, NULL or \N is NULL) or JSON: an array of objects,
// newline-delimited objects (BigQuery and Trino exports), or an object
// with "columns" and "data" (or "rows") holding arrays of values, the
// shape of several SQL HTTP APIs. Numbers may be JSON numbers or strings
// (BigQuery exports INT64 as strings). Column names match
// case-insensitively, since engines such as Snowflake return unquoted
// names in upper case.

// Table is a result set read from a file: column names and rows of
// values (string, json.Number or nil).
type Table struct {
	Columns []string
	Rows    [][]any
}

// ReadTable reads a CSV or JSON result set. The format is taken from the
// file name (.csv, .tsv, .json, .jsonl, .ndjson) or else from the content.
func ReadTable(path string) (*Table, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	t, err := parseTable(b, strings.ToLower(filepath.Ext(path)))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return t, nil
}

func parseTable(b []byte, ext string) (*Table, error) {
	b = bytes.TrimPrefix(b, []byte("\xef\xbb\xbf")) // a UTF-8 byte order mark
	trimmed := bytes.TrimSpace(b)
	switch {
	case ext == ".csv":
		return parseCSV(b, ',')
	case ext == ".tsv":
		return parseCSV(b, '\t')
	case ext == ".json" || ext == ".jsonl" || ext == ".ndjson":
		return parseJSON(trimmed)
	case len(trimmed) > 0 && (trimmed[0] == '[' || trimmed[0] == '{'):
		return parseJSON(trimmed)
	}
	return parseCSV(b, ',')
}

func parseCSV(b []byte, sep rune) (*Table, error) {
	r := csv.NewReader(bytes.NewReader(b))
	r.Comma = sep
	recs, err := r.ReadAll()
	if err != nil {
		return nil, fmt.Errorf("cannot read CSV: %w", err)
	}
	if len(recs) == 0 {
		return nil, errors.New("the file is empty: expected a header row")
	}
	t := &Table{Columns: recs[0]}
	for _, rec := range recs[1:] {
		row := make([]any, len(rec))
		for i, v := range rec {
			if v == "" || v == `\N` || strings.EqualFold(v, "null") {
				row[i] = nil
			} else {
				row[i] = v
			}
		}
		t.Rows = append(t.Rows, row)
	}
	return t, nil
}

func parseJSON(b []byte) (*Table, error) {
	if len(b) == 0 {
		return nil, errors.New("the file is empty")
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	var objs []map[string]any
	if b[0] == '[' {
		if err := dec.Decode(&objs); err != nil {
			return nil, fmt.Errorf("cannot read JSON: expected an array of objects, one per row: %w", err)
		}
		return fromObjects(objs), nil
	}
	first := true
	for {
		var o map[string]any
		err := dec.Decode(&o)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("cannot read JSON: expected one object per row: %w", err)
		}
		if first {
			if t, ok := columnsAndData(o); ok {
				return t, nil
			}
		}
		first = false
		objs = append(objs, o)
	}
	return fromObjects(objs), nil
}

// columnsAndData reads {"columns": [...], "data": [[...], ...]}; a column
// may be a name or an object with a "name".
func columnsAndData(o map[string]any) (*Table, bool) {
	cols, ok := o["columns"].([]any)
	if !ok {
		return nil, false
	}
	data, ok := o["data"].([]any)
	if !ok {
		if data, ok = o["rows"].([]any); !ok {
			return nil, false
		}
	}
	t := &Table{}
	for _, c := range cols {
		switch c := c.(type) {
		case string:
			t.Columns = append(t.Columns, c)
		case map[string]any:
			n, _ := c["name"].(string)
			t.Columns = append(t.Columns, n)
		default:
			return nil, false
		}
	}
	for _, r := range data {
		vals, ok := r.([]any)
		if !ok {
			return nil, false
		}
		t.Rows = append(t.Rows, vals)
	}
	return t, true
}

func fromObjects(objs []map[string]any) *Table {
	t := &Table{}
	idx := map[string]int{}
	for _, o := range objs {
		for k := range o {
			if _, ok := idx[k]; !ok {
				idx[k] = len(t.Columns)
				t.Columns = append(t.Columns, k)
			}
		}
	}
	for _, o := range objs {
		row := make([]any, len(t.Columns))
		for k, v := range o {
			row[idx[k]] = v
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// value returns row[i], or nil past the row's end.
func value(row []any, i int) any {
	if i < len(row) {
		return row[i]
	}
	return nil
}

// MainRows converts the main query's exported result to rows, as Query
// reads them from a database. Columns other than spec_fingerprint,
// variant, units and keys are statistics; a NULL statistic is NaN.
func (t *Table) MainRows(keys []string) ([]Row, error) {
	role := make([]string, len(t.Columns))
	isKey := map[string]bool{}
	for _, k := range keys {
		isKey[strings.ToLower(k)] = true
	}
	seen := map[string]bool{}
	for i, c := range t.Columns {
		l := strings.ToLower(c)
		switch {
		case l == "spec_fingerprint" || l == "variant" || l == "units":
			role[i] = l
		case isKey[l]:
			role[i] = "key"
		default:
			role[i] = "stat"
		}
		seen[role[i]] = true
	}
	for _, need := range []string{"variant", "units"} {
		if !seen[need] {
			return nil, fmt.Errorf("the result has no %s column (columns: %s): is it the main query's result?", need, strings.Join(t.Columns, ", "))
		}
	}
	var out []Row
	for _, vals := range t.Rows {
		r := Row{Keys: map[string]string{}, Stats: map[string]float64{}}
		for i, c := range t.Columns {
			v := value(vals, i)
			switch role[i] {
			case "spec_fingerprint":
				r.Fingerprint = text(v)
			case "variant":
				r.Variant = text(v)
			case "units":
				if n := number(v); !math.IsNaN(n) {
					r.Units = int64(n)
				}
			case "key":
				r.Keys[c] = text(v)
			default:
				r.Stats[c] = number(v)
			}
		}
		out = append(out, r)
	}
	return out, nil
}

var dayPrefix = regexp.MustCompile(`^\d{4}-\d{2}-\d{2}([T ]|$)`)

// HealthRows converts the health query's exported result to rows, as
// Query reads them. A day exported as a timestamp keeps its date.
func (t *Table) HealthRows() ([]HealthRow, error) {
	col := map[string]int{}
	for i, c := range t.Columns {
		col[strings.ToLower(c)] = i
	}
	for _, need := range []string{"kind", "reason", "variant", "day", "row_count", "unit_count"} {
		if _, ok := col[need]; !ok {
			return nil, fmt.Errorf("the result has no %s column (columns: %s): is it the health query's result?", need, strings.Join(t.Columns, ", "))
		}
	}
	var out []HealthRow
	for _, vals := range t.Rows {
		get := func(name string) any { return value(vals, col[name]) }
		r := HealthRow{Kind: text(get("kind")), Reason: text(get("reason")), Variant: text(get("variant")), Day: text(get("day"))}
		if dayPrefix.MatchString(r.Day) {
			r.Day = r.Day[:10]
		}
		if v := number(get("row_count")); !math.IsNaN(v) {
			r.Rows = int64(v)
		}
		if v := number(get("unit_count")); !math.IsNaN(v) {
			r.Units = int64(v)
		}
		out = append(out, r)
	}
	sortHealth(out)
	return out, nil
}

// MatchStatColumns renames statistics whose names differ from a wanted
// column name only in case (engines that fold unquoted or even quoted
// names), so that they are found under the wanted name.
func MatchStatColumns(rows []Row, want []string) {
	lower := map[string]string{}
	for _, w := range want {
		lower[strings.ToLower(w)] = w
	}
	for _, r := range rows {
		for k, v := range r.Stats {
			if w, ok := lower[strings.ToLower(k)]; ok && w != k {
				if _, exact := r.Stats[w]; !exact {
					r.Stats[w] = v
					delete(r.Stats, k)
				}
			}
		}
	}
}
