package crossengine

import (
	"database/sql"
	"fmt"
	"math"
	"math/big"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

// sameRel is the largest relative difference allowed between two
// engines' aggregates and statistics.
const sameRel = 1e-9

// checkSame runs spec on every engine and compares each with DuckDB: the
// per-variant aggregates and health rows from the engine package, the
// report built from them, and the whole `assay run --format json` output
// with its exit code. flags, when not nil, gives extra assay run flags per
// engine (DuckDB's run for the comparison uses the same ones).
func checkSame(t *testing.T, runs []*engineRun, spec string, flags func(engine string) []string) {
	t.Helper()
	if flags == nil {
		flags = func(string) []string { return nil }
	}
	base := runs[0]
	bp, bres := result(t, base, spec)
	brep := reportJSON(t, bp, bres)
	for _, e := range runs[1:] {
		t.Run(e.name, func(t *testing.T) {
			p, res := result(t, e, spec)
			// Independent computation: DuckDB over the same fixture rows.
			compareResults(t, e.name, bres, res, sameRel)
			compareTrees(t, e.name+" report", brep, reportJSON(t, p, res), sameRel)
			bcode, bcli, berr := runCLI(t, base, spec, flags(e.name)...)
			if bcli == nil {
				t.Fatalf("duckdb: assay run exited %d:\n%s", bcode, berr)
			}
			code, rep, stderr := runCLI(t, e, spec, flags(e.name)...)
			if code != bcode {
				t.Fatalf("assay run --dsn exited %d, on DuckDB %d:\n%s", code, bcode, stderr)
			}
			compareTrees(t, e.name+" assay run", bcli, rep, sameRel)
			if strings.Contains(stderr, "secret") {
				t.Errorf("stderr shows a password:\n%s", stderr)
			}
		})
	}
}

// ---- the demo ----

// demoTables reads the demo's Parquet files through a scratch DuckDB.
func demoTables(t *testing.T) []table {
	t.Helper()
	db, err := sql.Open("duckdb", "")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var out []table
	for _, name := range []string{"exposures", "orders", "taps", "support", "customers", "visits"} {
		path, _ := filepath.Abs(filepath.Join("..", "testdata", "demo", "data", name+".parquet"))
		rs, err := db.Query("SELECT * FROM read_parquet(?)", path)
		if err != nil {
			t.Fatal(err)
		}
		types, _ := rs.ColumnTypes()
		tb := table{name: name}
		for _, ct := range types {
			k := kText
			switch ct.DatabaseTypeName() {
			case "DOUBLE", "FLOAT":
				k = kDouble
			case "BIGINT", "INTEGER":
				k = kBigint
			case "TIMESTAMP":
				k = kTime
			}
			tb.cols = append(tb.cols, column{ct.Name(), k})
		}
		for rs.Next() {
			vals := make([]any, len(types))
			ptrs := make([]any, len(types))
			for i := range vals {
				ptrs[i] = &vals[i]
			}
			if err := rs.Scan(ptrs...); err != nil {
				t.Fatal(err)
			}
			for i, v := range vals {
				if x, ok := v.(int32); ok {
					vals[i] = int64(x)
				}
			}
			tb.rows = append(tb.rows, vals)
		}
		if err := rs.Err(); err != nil {
			t.Fatal(err)
		}
		rs.Close()
		out = append(out, tb)
	}
	return out
}

var fileSource = regexp.MustCompile(`(?m)^file = "data/(\w+)\.parquet"$`)

// TestDemo runs the demo spec, its sources as tables, on every engine.
func TestDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("skipped in -short mode: loads the demo data into every engine")
	}
	src, err := os.ReadFile(filepath.Join("..", "testdata", "demo", "reorder.toml"))
	if err != nil {
		t.Fatal(err)
	}
	schema := newSchemaName()
	text := fileSource.ReplaceAllString(string(src), `table = "`+schema+`.$1"`)
	// The copy uses the demo's shared library, by absolute path.
	lib, _ := filepath.Abs(filepath.Join("..", "testdata", "library", "grocery.toml"))
	text = strings.Replace(text, `library = "../library/grocery.toml"`, `library = "`+filepath.ToSlash(lib)+`"`, 1)
	cal, _ := filepath.Abs(filepath.Join("..", "testdata", "library", "grocery-calendar.toml"))
	text = strings.Replace(text, `"../library/grocery-calendar.toml"`, `"`+filepath.ToSlash(cal)+`"`, 1)
	if strings.Contains(text, "file =") || !strings.Contains(text, "table =") {
		t.Fatal("the demo spec's file sources were not all rewritten to tables")
	}
	runs := engines(t, schema, demoTables(t))
	// MariaDB evaluates a CTE anew at every reference (MySQL 8 and the
	// other engines do not), so the demo's queries take it tens of
	// seconds each: its segment breakdowns are left out.
	checkSame(t, runs, writeSpec(t, text), func(name string) []string {
		if name == "mysql" {
			return []string{"--segments=false"}
		}
		return nil
	})
}

// ---- NIST StRD and Student's sleep data ----

const skeleton = `[experiment]
id = "crossengine"
hypothesis = "A cross-engine fixture: every engine must give the same aggregates and statistics."
unit = "user"
start = 2026-03-02T00:00:00Z
end = 2026-04-13T00:00:00Z
confidence = 0.95

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "%[1]s.exposures"
unit = "unit_id"
time = "exposed_at"
columns = ["unit_id", "variant", "exposed_at", "surface"]

[sources.events]
table = "%[1]s.events"
unit = "unit_id"
time = "happened_at"
columns = ["unit_id", "happened_at", "w", "w2"]

[exposure]
source = "exposures"
variant = "variant"
filter = "surface = 'home'"

[metrics.w14]
role = "primary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "14d"]

[metrics.w_per_w2]
role = "secondary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "sum", value = "w2" }
%[2]s`

var (
	expoCols  = []column{{"unit_id", kText}, {"variant", kText}, {"exposed_at", kTime}, {"surface", kText}}
	eventCols = []column{{"unit_id", kText}, {"happened_at", kTime}, {"w", kDouble}, {"w2", kDouble}}
	start     = time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
)

// unitTables makes one exposure and one event per unit: control units get
// values ctl (and w2 = the next control unit's value), treatment units trt.
func unitTables(ctl, trt []float64) []table {
	ex := table{name: "exposures", cols: expoCols}
	ev := table{name: "events", cols: eventCols}
	add := func(id, variant string, i int, w, w2 float64) {
		at := start.Add(time.Duration(i+1) * time.Minute)
		ex.rows = append(ex.rows, []any{id, variant, at, "home"})
		ev.rows = append(ev.rows, []any{id, at.Add(time.Hour), w, w2})
	}
	for i, x := range ctl {
		add(fmt.Sprintf("c%05d", i), "control", i, x, ctl[(i+1)%len(ctl)])
	}
	for i, x := range trt {
		add(fmt.Sprintf("t%05d", i), "treatment", i, x, trt[(i+1)%len(trt)])
	}
	// Strings compare exactly on every engine (MariaDB's default
	// collation would not): this unit's variant is not a declared one,
	// and an exposure on "Home" does not qualify.
	ex.rows = append(ex.rows, []any{"x00001", "CONTROL", start.Add(time.Minute), "home"})
	ex.rows = append(ex.rows, []any{"x00002", "control", start.Add(time.Minute), "Home"})
	ev.rows = append(ev.rows, []any{"x00001", start.Add(time.Hour), 5.0, 5.0})
	return []table{ex, ev}
}

func parseF(s string) float64 {
	f, err := strconv.ParseFloat(s, 64)
	if err != nil {
		panic(err)
	}
	return f
}

// numAcc3 is NIST StRD NumAcc3 (base 1000000) or NumAcc4 (base 10000000):
// base+0.2, then 500 pairs base+0.1, base+0.3; each value is the double
// nearest to the certified decimal.
func numAcc3(base int) []float64 {
	v := []float64{parseF(fmt.Sprintf("%d.2", base))}
	for range 500 {
		v = append(v, parseF(fmt.Sprintf("%d.1", base)), parseF(fmt.Sprintf("%d.3", base)))
	}
	return v
}

// exactCov is the sample covariance of the stored doubles in exact
// rational arithmetic (an independent computation).
func exactCov(x, y []float64) float64 {
	n := big.NewRat(int64(len(x)), 1)
	sx, sy := new(big.Rat), new(big.Rat)
	for i := range x {
		sx.Add(sx, new(big.Rat).SetFloat64(x[i]))
		sy.Add(sy, new(big.Rat).SetFloat64(y[i]))
	}
	mx, my := new(big.Rat).Quo(sx, n), new(big.Rat).Quo(sy, n)
	s := new(big.Rat)
	for i := range x {
		dx := new(big.Rat).Sub(new(big.Rat).SetFloat64(x[i]), mx)
		dy := new(big.Rat).Sub(new(big.Rat).SetFloat64(y[i]), my)
		s.Add(s, dx.Mul(dx, dy))
	}
	s.Quo(s, new(big.Rat).SetInt64(int64(len(x)-1)))
	f, _ := s.Float64()
	return f
}

// TestNISTVariance: the NIST StRD univariate numerical-accuracy data sets
// as per-unit values on every engine. The variance of NumAcc4 must come out
// at the certified standard deviation 0.1 within 1e-8 relative; the
// covariance (polarization over VAR_SAMP on MySQL) must match exact
// arithmetic.
func TestNISTVariance(t *testing.T) {
	cases := []struct {
		name     string
		values   []float64
		mean, sd float64 // Source: NIST StRD univariate summary statistics, certified values
		tol      float64 // relative, on the standard deviation and the covariance
	}{
		// Source: NIST StRD NumAcc1, certified mean 10000002, sd 1.
		{"NumAcc1", []float64{10000001, 10000003, 10000002}, 10000002, 1, 1e-12},
		// Source: NIST StRD NumAcc3, certified mean 1000000.2, sd 0.1.
		{"NumAcc3", numAcc3(1000000), 1000000.2, 0.1, 1e-9},
		// Source: NIST StRD NumAcc4, certified mean 10000000.2, sd 0.1.
		// float64 cannot store 10000000.1 exactly: about 5.6e-9 relative
		// is the best any algorithm can reach from the stored values.
		{"NumAcc4", numAcc3(10000000), 10000000.2, 0.1, 1e-8},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			schema := newSchemaName()
			runs := engines(t, schema, unitTables(tc.values, []float64{1, 2, 4}))
			spec := writeSpec(t, fmt.Sprintf(skeleton, schema, ""))
			w2 := make([]float64, len(tc.values))
			for i := range w2 {
				w2[i] = tc.values[(i+1)%len(tc.values)]
			}
			// Source: exact rational arithmetic over the stored doubles.
			cov := exactCov(tc.values, w2)
			results := map[string]map[string]float64{}
			for _, e := range runs {
				t.Run(e.name, func(t *testing.T) {
					_, res := result(t, e, spec)
					var ctl map[string]float64
					for _, r := range res.Rows {
						if r.Variant == "control" {
							ctl = r.Stats
						}
					}
					if ctl == nil {
						t.Fatal("no control row")
					}
					results[e.name] = ctl
					if got := ctl["w14__n"]; got != float64(len(tc.values)) {
						t.Errorf("w14__n: got %v, want %v (Source: NIST StRD %s, number of observations)", got, len(tc.values), tc.name)
					}
					if got := ctl["w14__mean"]; !relClose(got, tc.mean, 1e-14) {
						t.Errorf("w14__mean: got %v, want %v (Source: NIST StRD %s, certified mean)", got, tc.mean, tc.name)
					}
					if sd := math.Sqrt(ctl["w14__var"]); !relClose(sd, tc.sd, tc.tol) {
						t.Errorf("sqrt(w14__var): got %.17g, want %v within %v relative (Source: NIST StRD %s, certified sd)", sd, tc.sd, tc.tol, tc.name)
					}
					if got := ctl["w_per_w2__cov"]; !relClose(got, cov, tc.tol) {
						t.Errorf("w_per_w2__cov: got %.17g, want %.17g within %v relative (Source: exact rational arithmetic over the stored doubles)", got, cov, tc.tol)
					}
					t.Logf("%s: sd %.17g (certified %v), cov %.17g (exact %.17g)", e.name, math.Sqrt(ctl["w14__var"]), tc.sd, ctl["w_per_w2__cov"], cov)
				})
			}
			// Cross-engine: variances and covariances of these
			// ill-conditioned values agree only to the accuracy that the
			// stored doubles allow: each engine's sd is within tol of the
			// certified value, so its variance within about 2·tol, and two
			// engines within 4·tol. Everything else agrees to sameRel.
			base := results["duckdb"]
			for name, st := range results {
				for k, v := range st {
					lim := sameRel
					if strings.HasSuffix(k, "var") || strings.HasSuffix(k, "cov") {
						lim = 4 * tc.tol
					}
					if !relClose(v, base[k], lim) {
						t.Errorf("%s %s: got %.17g, DuckDB %.17g (limit %g)", name, k, v, base[k], lim)
					}
				}
			}
		})
	}
}

// TestSleep runs Student's sleep data (R datasets::sleep, column extra,
// group 1 control and group 2 treatment) with a quantile-capped metric and
// a proportion: every engine gives the same aggregates, statistics and
// report, and the Welch statistic that R publishes.
func TestSleep(t *testing.T) {
	// Source: R datasets::sleep, column extra, group 1 and group 2.
	g1 := []float64{0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0}
	g2 := []float64{1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4}
	schema := newSchemaName()
	runs := engines(t, schema, unitTables(g1, g2))
	spec := writeSpec(t, fmt.Sprintf(skeleton, schema, `
[metrics.w_capped]
role = "secondary"
kind = "sum"
source = "events"
value = "w"
cap_quantile = 0.75
window = ["0d", "14d"]

[metrics.w_above_1]
role = "secondary"
kind = "proportion"
source = "events"
value = "w"
above = 1
window = ["0d", "14d"]

[metrics.w_safe_ratio]
role = "mechanism"
kind = "sum"
source = "events"
value = "coalesce(w / nullif(w2, 0), 0) + 7 / 2"
window = ["0d", "14d"]
`))
	checkSame(t, runs, spec, nil)
	for _, e := range runs {
		t.Run("welch/"+e.name, func(t *testing.T) {
			p, res := result(t, e, spec)
			rep := reportJSON(t, p, res)
			c := metricOf(t, rep, "w14")["comparisons"].([]any)[0].(map[string]any)
			// Source: R 4.x, t.test(extra ~ group, data = sleep): t =
			// -1.860813, df = 17.77647 (group 1 − group 2; assay reports
			// treatment − control, so the sign flips).
			if got := c["statistic"].(float64); math.Abs(got-1.860813) > 1e-6 {
				t.Errorf("Welch t: got %v, want 1.860813 (Source: R t.test on sleep)", got)
			}
			if got := c["df"].(float64); !relClose(got, 17.77647, 1e-6) {
				t.Errorf("Welch df: got %v, want 17.77647 (Source: R t.test on sleep)", got)
			}
		})
	}
}

func metricOf(t *testing.T, rep map[string]any, name string) map[string]any {
	t.Helper()
	for _, m := range rep["metrics"].([]any) {
		if mm := m.(map[string]any); mm["name"] == name {
			return mm
		}
	}
	t.Fatalf("no metric %s in the report", name)
	return nil
}
