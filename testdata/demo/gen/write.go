package main

import (
	"bufio"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	_ "github.com/duckdb/duckdb-go/v2" // registers the "duckdb" driver
)

// table describes one output file: its columns with DuckDB types, the sort
// order of its rows, and a function producing its CSV records.
type table struct {
	name    string
	columns [][2]string
	orderBy string
	rows    func(emit func(fields ...string))
}

// ts formats a Unix time as a naive UTC timestamp.
func ts(sec int64) string {
	return time.Unix(sec, 0).UTC().Format(time.DateTime)
}

// itoa formats an integer.
func itoa(v int64) string { return strconv.FormatInt(v, 10) }

// tables lists the files written for ds.
func tables(ds *dataset) []table {
	return []table{
		{
			name:    "customers",
			columns: [][2]string{{"customer_id", "BIGINT"}, {"region", "VARCHAR"}, {"signup_at", "TIMESTAMP"}, {"tenure_band", "VARCHAR"}},
			orderBy: "customer_id",
			rows: func(emit func(...string)) {
				for _, c := range ds.customers {
					emit(itoa(c.id), c.region, ts(c.signup), c.tenure)
				}
			},
		},
		{
			name:    "exposures",
			columns: [][2]string{{"customer_id", "BIGINT"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}, {"surface", "VARCHAR"}, {"platform", "VARCHAR"}},
			orderBy: "exposed_at, customer_id, surface, variant, platform",
			rows: func(emit func(...string)) {
				for _, e := range ds.exposures {
					emit(itoa(e.customerID), e.variant, ts(e.at), e.surface, e.platform)
				}
			},
		},
		{
			name:    "orders",
			columns: [][2]string{{"order_id", "BIGINT"}, {"customer_id", "BIGINT"}, {"ordered_at", "TIMESTAMP"}, {"amount", "DOUBLE"}, {"status", "VARCHAR"}},
			orderBy: "order_id",
			rows: func(emit func(...string)) {
				for _, o := range ds.orders {
					status := "delivered"
					if o.cancelled {
						status = "cancelled"
					}
					emit(itoa(o.id), itoa(o.customerID), ts(o.at), strconv.FormatFloat(o.amount, 'f', 2, 64), status)
				}
			},
		},
		{
			name:    "taps",
			columns: [][2]string{{"customer_id", "BIGINT"}, {"tapped_at", "TIMESTAMP"}, {"item_id", "BIGINT"}},
			orderBy: "tapped_at, customer_id, item_id",
			rows: func(emit func(...string)) {
				for _, t := range ds.taps {
					emit(itoa(t.customerID), ts(t.at), itoa(t.itemID))
				}
			},
		},
		{
			name:    "visits",
			columns: [][2]string{{"customer_id", "BIGINT"}, {"visited_at", "TIMESTAMP"}, {"screen", "VARCHAR"}},
			orderBy: "visited_at, customer_id, screen",
			rows: func(emit func(...string)) {
				for _, v := range ds.visits {
					emit(itoa(v.customerID), ts(v.at), v.screen)
				}
			},
		},
		{
			name:    "support",
			columns: [][2]string{{"customer_id", "BIGINT"}, {"contacted_at", "TIMESTAMP"}, {"channel", "VARCHAR"}},
			orderBy: "contacted_at, customer_id, channel",
			rows: func(emit func(...string)) {
				for _, s := range ds.contacts {
					emit(itoa(s.customerID), ts(s.at), s.channel)
				}
			},
		},
	}
}

// sqlString quotes s as a SQL string literal.
func sqlString(s string) string {
	return "'" + strings.ReplaceAll(s, "'", "''") + "'"
}

// writeParquet writes every table of ds as a zstd-compressed Parquet file in
// dir, going through a temporary CSV file read back by DuckDB.
func writeParquet(ds *dataset, dir string) error {
	tmp, err := os.MkdirTemp("", "assay-demo-gen-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)

	db, err := sql.Open("duckdb", "?threads=1")
	if err != nil {
		return err
	}
	defer db.Close()

	for _, t := range tables(ds) {
		csvPath := filepath.Join(tmp, t.name+".csv")
		if err := writeCSV(csvPath, t); err != nil {
			return err
		}
		var cols, names []string
		for _, c := range t.columns {
			cols = append(cols, fmt.Sprintf("%s: %s", sqlString(c[0]), sqlString(c[1])))
			names = append(names, c[0])
		}
		q := fmt.Sprintf(
			"COPY (SELECT %s FROM read_csv(%s, header = true, delim = ',', quote = '', escape = '', "+
				"timestampformat = '%%Y-%%m-%%d %%H:%%M:%%S', columns = {%s}) ORDER BY %s) "+
				"TO %s (FORMAT parquet, COMPRESSION zstd)",
			strings.Join(names, ", "), sqlString(csvPath), strings.Join(cols, ", "), t.orderBy,
			sqlString(filepath.Join(dir, t.name+".parquet")))
		if _, err := db.Exec(q); err != nil {
			return fmt.Errorf("writing %s: %w", t.name, err)
		}
	}
	return nil
}

// writeCSV writes the header and records of t to path.
func writeCSV(path string, t table) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(f)
	var names []string
	for _, c := range t.columns {
		names = append(names, c[0])
	}
	w.WriteString(strings.Join(names, ",") + "\n")
	t.rows(func(fields ...string) {
		w.WriteString(strings.Join(fields, ",") + "\n")
	})
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
