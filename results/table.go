package results

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
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
