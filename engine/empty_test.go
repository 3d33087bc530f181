package engine_test

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"sort"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
)

// emptyDemo writes the demo spec into a temporary directory with its file
// sources pointed at the demo data, except those named in empty, which get
// the given file content (and name) instead. It returns the spec's path.
func emptyDemo(t *testing.T, empty map[string][2]string) string {
	t.Helper()
	data, err := filepath.Abs("../testdata/demo/data")
	if err != nil {
		t.Fatal(err)
	}
	src, err := os.ReadFile("../testdata/demo/reorder.toml")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	text := string(src)
	// The copy's shared library is the demo's, by absolute path.
	lib, _ := filepath.Abs("../testdata/library/grocery.toml")
	text = strings.Replace(text, `library = "../library/grocery.toml"`, `library = "`+filepath.ToSlash(lib)+`"`, 1)
	cal, _ := filepath.Abs("../testdata/library/grocery-calendar.toml")
	text = strings.Replace(text, `"../library/grocery-calendar.toml"`, `"`+filepath.ToSlash(cal)+`"`, 1)
	for _, name := range []string{"exposures", "orders", "taps", "support", "customers", "visits"} {
		old := `file = "data/` + name + `.parquet"`
		path := filepath.Join(data, name+".parquet")
		if e, ok := empty[name]; ok {
			path = filepath.Join(dir, e[0])
			if err := os.WriteFile(path, []byte(e[1]), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		if !strings.Contains(text, old) {
			t.Fatalf("the demo spec has no %s", old)
		}
		text = strings.Replace(text, old, `file = "`+filepath.ToSlash(path)+`"`, 1)
	}
	specPath := filepath.Join(dir, "reorder.toml")
	if err := os.WriteFile(specPath, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return specPath
}

// TestEmptyOutcomeSourcesReadAsZeros checks that outcome sources without
// rows — a CSV file with only its header (DuckDB reads every column as
// text) and a Parquet file of zero bytes (DuckDB cannot read it at all) —
// are refused by the catalogue check as they stand, are found by
// EmptySources, and after StandInEmpty pass the check with a warning that
// names the declared file, and run: every metric that reads them is zero
// for every variant, while units and the other sources are as in the
// demo run with the full data.
func TestEmptyOutcomeSourcesReadAsZeros(t *testing.T) {
	ctx := context.Background()
	d, _ := dialects.Lookup("duckdb")
	specPath := emptyDemo(t, map[string][2]string{
		"taps":    {"taps.csv", "customer_id,tapped_at,item_id\n"},
		"support": {"support.parquet", ""},
	})
	spec, _, ds := metrics.LoadFile(specPath)
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: filepath.Dir(specPath), Threads: 1})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()

	if got := engine.CheckCatalog(ctx, db, spec, d, nil); !got.HasErrors() {
		t.Errorf("before the stand-in: the check passed; want it to refuse the empty files:\n%s", got.Error())
	}
	empty, err := engine.EmptySources(ctx, db, spec, d)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"taps", "support"}; !reflect.DeepEqual(empty, want) {
		t.Fatalf("EmptySources = %v, want %v", empty, want)
	}
	sds, err := engine.StandInEmpty(ctx, db, spec, d, empty)
	if err != nil || len(sds) != 0 {
		t.Fatalf("StandInEmpty: %v, %v", sds.Error(), err)
	}
	cds := engine.CheckCatalog(ctx, db, spec, d, nil)
	if cds.HasErrors() {
		t.Fatalf("after the stand-in: the check refused:\n%s", cds.Error())
	}
	for _, name := range []string{"taps", "support"} {
		re := regexp.MustCompile("^source `" + name + "`: file \".*" + name + `\.(csv|parquet)" has no rows; it is read as an empty table`)
		found := false
		for _, c := range cds {
			found = found || (c.Severity == metrics.Warning && re.MatchString(c.Summary))
		}
		if !found {
			t.Errorf("no warning naming the file of %s; got:\n%s", name, cds.Error())
		}
	}

	plan, pds := compiler.Compile(spec, compiler.Options{})
	if pds.HasErrors() {
		t.Fatal(pds.Error())
	}
	q, err := compiler.Print(plan, d)
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Query(ctx, db, plan, q, true)
	if err != nil {
		t.Fatalf("query: %v", engine.CleanError(err))
	}

	// The reference: the demo spec on its full data.
	full, _, _ := metrics.LoadFile(emptyDemo(t, nil))
	fplan, _ := compiler.Compile(full, compiler.Options{})
	fq, err := compiler.Print(fplan, d)
	if err != nil {
		t.Fatal(err)
	}
	ref, err := engine.Query(ctx, db, fplan, fq, true)
	if err != nil {
		t.Fatalf("reference query: %v", engine.CleanError(err))
	}
	if len(res.Rows) != len(ref.Rows) || len(res.Rows) == 0 {
		t.Fatalf("got %d rows, want %d (and more than none)", len(res.Rows), len(ref.Rows))
	}
	sort.Slice(res.Rows, func(i, j int) bool { return res.Rows[i].Variant < res.Rows[j].Variant })
	sort.Slice(ref.Rows, func(i, j int) bool { return ref.Rows[i].Variant < ref.Rows[j].Variant })
	zeroed := 0
	for i, r := range res.Rows {
		f := ref.Rows[i]
		if r.Variant != f.Variant || r.Units != f.Units {
			t.Errorf("row %d: got %s with %d units, want %s with %d", i, r.Variant, r.Units, f.Variant, f.Units)
		}
		for k, v := range r.Stats {
			// __n counts the units a metric is computed over: the same
			// with an empty source.
			emptySource := (strings.HasPrefix(k, "shelf_taps") || strings.HasPrefix(k, "support_contacts")) && !strings.HasSuffix(k, "__n")
			switch {
			case emptySource && v != 0:
				t.Errorf("%s/%s = %v, want 0 (its source is empty)", r.Variant, k, v)
			case emptySource:
				zeroed++
			case !near(v, f.Stats[k]):
				t.Errorf("%s/%s = %v, want %v as on the full data", r.Variant, k, v, f.Stats[k])
			}
		}
	}
	if zeroed == 0 {
		t.Errorf("no statistic of shelf_taps or support_contacts in the result; columns: %v", keys(res.Rows[0].Stats))
	}
}

// near reports whether a and b agree to 1e-12 relative (double sums in
// another row order differ in the last bits; common practice), or are both
// NaN.
func near(a, b float64) bool {
	if a != a || b != b {
		return a != a && b != b
	}
	return math.Abs(a-b) <= 1e-12*math.Max(math.Abs(a), math.Abs(b))
}

func keys(m map[string]float64) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// TestStandInEmptyLeavesErrorsAlone checks that StandInEmpty does not hide
// a real problem: a header that lacks a declared column is still reported
// by the catalogue check, and an empty exposure file is an error (there
// are no units to analyse), not a stand-in.
func TestStandInEmptyLeavesErrorsAlone(t *testing.T) {
	ctx := context.Background()
	d, _ := dialects.Lookup("duckdb")
	for _, tc := range []struct {
		name    string
		empty   map[string][2]string
		source  string
		summary string
	}{
		{"header lacks a column", map[string][2]string{"taps": {"taps.csv", "customer_id,tapped_at,itm\n"}},
			"taps", "^source `taps`: file \".*taps.csv\" has no column `item_id`"},
		{"exposures empty", map[string][2]string{"exposures": {"exposures.csv", ""}},
			"exposures", "^source `exposures`: the exposure file \".*exposures.csv\" has no rows"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			specPath := emptyDemo(t, tc.empty)
			spec, _, ds := metrics.LoadFile(specPath)
			if ds.HasErrors() {
				t.Fatal(ds.Error())
			}
			db, err := engine.OpenDuckDB(engine.DuckDBOptions{FileDir: filepath.Dir(specPath)})
			if err != nil {
				t.Fatal(err)
			}
			defer db.Close()
			empty, err := engine.EmptySources(ctx, db, spec, d)
			if err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(empty, []string{tc.source}) {
				t.Fatalf("EmptySources = %v, want [%s]", empty, tc.source)
			}
			sds, err := engine.StandInEmpty(ctx, db, spec, d, empty)
			if err != nil {
				t.Fatal(err)
			}
			all := append(sds, engine.CheckCatalog(ctx, db, spec, d, nil)...)
			if !all.HasErrors() {
				t.Errorf("no error; got:\n%s", all.Error())
			}
			re := regexp.MustCompile(tc.summary)
			found := false
			for _, c := range all {
				found = found || (c.Severity == metrics.Error && re.MatchString(c.Summary))
			}
			if !found {
				t.Errorf("no error matching %q; got:\n%s", tc.summary, all.Error())
			}
			if _, ok := engine.StoodIn(spec.Sources[0]); ok {
				t.Errorf("the exposure source was stood in")
			}
		})
	}
}

// TestStandInEmptyWithDatabaseFile checks the stand-in when a database
// file is attached read-only as the default catalog (--db): the view goes
// to the in-memory database, which stays writable, and the check passes.
func TestStandInEmptyWithDatabaseFile(t *testing.T) {
	ctx := context.Background()
	d, _ := dialects.Lookup("duckdb")
	specPath := emptyDemo(t, map[string][2]string{"taps": {"taps.csv", "customer_id,tapped_at,item_id\n"}})
	spec, _, ds := metrics.LoadFile(specPath)
	if ds.HasErrors() {
		t.Fatal(ds.Error())
	}
	dbPath := makeDuckDB(t, t.TempDir(), "shop.duckdb")
	db, err := engine.OpenDuckDB(engine.DuckDBOptions{Path: dbPath, FileDir: filepath.Dir(specPath)})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	empty, err := engine.EmptySources(ctx, db, spec, d)
	if err != nil || !reflect.DeepEqual(empty, []string{"taps"}) {
		t.Fatalf("EmptySources = %v, %v; want [taps]", empty, err)
	}
	if sds, err := engine.StandInEmpty(ctx, db, spec, d, empty); err != nil || len(sds) != 0 {
		t.Fatalf("StandInEmpty: %v, %v", sds.Error(), err)
	}
	if cds := engine.CheckCatalog(ctx, db, spec, d, nil); cds.HasErrors() {
		t.Errorf("the check refused:\n%s", cds.Error())
	}
	if n := countOrders(t, db, "orders"); n != 2 {
		t.Errorf("got %d orders in the attached file, want 2", n)
	}
}
