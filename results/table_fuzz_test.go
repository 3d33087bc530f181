package results

import (
	"os"
	"path/filepath"
	"testing"
)

// readExts are the file name endings ReadTable distinguishes.
var readExts = []string{".csv", ".tsv", ".json", ".jsonl", ".ndjson", ".txt"}

// FuzzReadTable feeds arbitrary bytes to the aggregates reader of assay
// analyze, under every file name ending it distinguishes. It must never
// panic; a table it accepts converts to health rows, or says why not,
// with one row per record.
//
//	go test ./results/ -run '^$' -fuzz FuzzReadTable -fuzztime 10s
func FuzzReadTable(f *testing.F) {
	seeds := []string{
		"variant,units,orders__n,orders__mean,orders__var\ncontrol,10,10,1.5,0.25\nshelf,9,9,1.7,\\N\n",
		"\xef\xbb\xbfvariant,units\n\"con\"\"trol\",NULL\n",
		"variant\tunits\ncontrol\t1e400\n",
		"kind,reason,variant,day,row_count,unit_count\ntriggers,,control,2026-05-02T00:00:00Z,3,3\n",
		`[{"variant": "control", "units": "12", "m__n": 12.5}, {"variant": null}]`,
		`{"variant": "a", "units": 1}` + "\n" + `{"variant": "b", "units": -1}`,
		`{"columns": ["variant", "units"], "data": [["a", 1], ["b"]]}`,
		`{"columns": [{"name": "variant"}], "rows": [[1, 2, 3]]}`,
		"", "\n", "[", "{", `"x"`, "a,b\n1", "a,\"b\n", `[1, 2]`, `[[]]`, `{"columns": 5}`,
	}
	for _, s := range seeds {
		for i := range readExts {
			f.Add([]byte(s), uint8(i))
		}
	}
	f.Fuzz(func(t *testing.T, data []byte, ext uint8) {
		path := filepath.Join(t.TempDir(), "result"+readExts[int(ext)%len(readExts)])
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		tab, err := ReadTable(path)
		if err != nil {
			if err.Error() == "" {
				t.Errorf("got an error without a message")
			}
			return
		}
		if tab == nil {
			t.Fatalf("got neither a table nor an error")
		}
		if rows, err := Health(tab.Columns, tab.Rows); err == nil && len(rows) != len(tab.Rows) {
			t.Errorf("HealthRows: got %d rows, want %d (one per record)", len(rows), len(tab.Rows))
		}
	})
}
