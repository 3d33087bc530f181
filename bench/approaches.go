package bench

import (
	"context"
	"database/sql"
	_ "embed"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
	"github.com/assay-dev/assay/results"
	"gonum.org/v1/gonum/stat"
)

// Spec10 is the ten-metric benchmark spec (two outcome sources).
//
//go:embed testdata/spec10.toml
var Spec10 []byte

//go:embed reference.sql
var referenceSQL string

//go:embed bound.sql
var boundSQL string

// ReferenceSQL is the hand-written query (c) for Spec10.
func ReferenceSQL() string { return referenceSQL }

// BoundSQL is the physical-bound query (b).
func BoundSQL() string { return boundSQL }

// notebookCut marks where reference.sql's per-unit CTEs end.
const notebookCut = "--NOTEBOOK-CUT"

// NotebookSQL is the per-unit query of the notebook approach (d): the
// reference query's CTEs, ending in one row per eligible unit.
func NotebookSQL() string {
	i := strings.Index(referenceSQL, notebookCut)
	return referenceSQL[:i] + "SELECT unit_id, variant, mature_14d, mature_7d, delivered, revenue, cancelled_7d, sessions, duration, pages, delivered_pre\nFROM unit_values\n"
}

// covariateLine is Spec10's CUPED covariate (on orders_14d).
const covariateLine = "covariate = { window = [\"-28d\", \"0d\"] }\n"

// subSpec is Spec10 with only the named metrics, each with its whole
// table, and without orders_14d's covariate unless withCov.
func subSpec(withCov bool, names ...string) []byte {
	s := string(Spec10)
	if !withCov {
		s = strings.Replace(s, covariateLine, "", 1)
	}
	out := s[:strings.Index(s, "[metrics.")]
	for _, n := range names {
		i := strings.Index(s, "[metrics."+n+"]")
		j := i + 1 + strings.Index(s[i+1:], "\n[") + 1
		out += s[i:j]
	}
	return []byte(out)
}

// Spec1 is Spec10 with only its primary metric, without its covariate (one
// metric, one source).
func Spec1() []byte { return subSpec(false, "orders_14d") }

// Spec2 is Spec10 with one metric per source (orders_14d without its
// covariate, and sessions_14d): the same two scans as Spec10, with the
// fewest metrics.
func Spec2() []byte { return subSpec(false, "orders_14d", "sessions_14d") }

// Spec2Cov is Spec2 with orders_14d's CUPED covariate kept: the same two
// scans over the same time windows as Spec10, with the fewest metrics.
func Spec2Cov() []byte { return subSpec(true, "orders_14d", "sessions_14d") }

// Spec50 is a 50-metric spec: Spec10's metrics five times over, renamed and
// with different windows.
func Spec50() []byte {
	s := string(Spec10)
	i, j := strings.Index(s, "[metrics."), strings.Index(s, "[segments.")
	head, block, tail := s[:i], s[i:j], s[j:]
	var b strings.Builder
	b.WriteString(head)
	for k, days := range []int{14, 21, 7, 28, 10} {
		blk := block
		if k > 0 {
			blk = strings.ReplaceAll(blk, `role = "primary"`, `role = "secondary"`)
			blk = strings.ReplaceAll(blk, `"14d"]`, fmt.Sprintf(`"%dd"]`, days))
		}
		blk = strings.ReplaceAll(blk, "]\nrole", fmt.Sprintf("_%d]\nrole", k+1))
		b.WriteString(blk)
	}
	b.WriteString(tail)
	return []byte(b.String())
}

// Compile loads a spec's text and compiles it for DuckDB, the way assay run
// does: metrics.Load, compiler.Compile, compiler.Print.
func Compile(name string, src []byte) (*compiler.Plan, compiler.Queries, error) {
	spec, ds := metrics.Load(name, src)
	if ds.HasErrors() {
		return nil, compiler.Queries{}, ds.Err()
	}
	plan, ds := compiler.Compile(spec, compiler.Options{})
	if ds.HasErrors() {
		return nil, compiler.Queries{}, ds.Err()
	}
	d, err := dialects.Lookup("duckdb")
	if err != nil {
		return nil, compiler.Queries{}, err
	}
	q, err := compiler.Print(plan, d)
	return plan, q, err
}

// Aggregates are per-variant result columns: variant, then column name
// (such as "orders_14d__mean" or "units"), then value. NULL is NaN.
type Aggregates map[string]map[string]float64

// QueryAggregates runs q and reads one row per variant; the column named
// "variant" is the key and every other column a number.
func QueryAggregates(ctx context.Context, db interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}, q string) (Aggregates, error) {
	rs, err := db.QueryContext(ctx, q)
	if err != nil {
		return nil, engine.CleanError(err)
	}
	defer rs.Close()
	cols, err := rs.Columns()
	if err != nil {
		return nil, err
	}
	out := Aggregates{}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	for rs.Next() {
		if err := rs.Scan(ptrs...); err != nil {
			return nil, err
		}
		row := map[string]float64{}
		variant := ""
		for i, c := range cols {
			switch c {
			case compiler.ColVariant:
				variant = fmt.Sprint(vals[i])
			case compiler.ColSpecFingerprint, compiler.ColOptions:
			default:
				row[c] = results.Number(vals[i])
			}
		}
		out[variant] = row
	}
	return out, rs.Err()
}

// RunAssay is approach (a): assay's compiled main query, read back as
// aggregates. As in assay run, the setup statement (the cohort table)
// runs first and the cleanup last, on one connection; the time includes
// them.
func RunAssay(ctx context.Context, db *sql.DB, q compiler.Queries) (Aggregates, error) {
	var agg Aggregates
	err := engine.Staged(ctx, db, q, func(c *sql.Conn) (err error) {
		agg, err = QueryAggregates(ctx, c, q.Main)
		return err
	})
	return agg, engine.CleanError(err)
}

// RunAssayReport is the whole of assay run after compilation: both queries
// through engine.Query, then report.Analyze. It returns the report, so the
// caller can measure the heap the analysis keeps, and the aggregates.
func RunAssayReport(ctx context.Context, db *sql.DB, plan *compiler.Plan, q compiler.Queries) (*report.Report, Aggregates, error) {
	res, err := engine.Query(ctx, db, plan, q, true)
	if err != nil {
		return nil, nil, engine.CleanError(err)
	}
	agg := Aggregates{}
	for _, r := range res.Overall() {
		row := map[string]float64{compiler.ColUnits: float64(r.Units)}
		for k, v := range r.Stats {
			row[k] = v
		}
		agg[r.Variant] = row
	}
	rep, err := report.Analyze(plan, res, report.Options{})
	return rep, agg, err
}

// RunBound is approach (b): it returns the row and unit counts of the two
// outcome tables under the "bound" key.
func RunBound(ctx context.Context, db *sql.DB) (Aggregates, error) {
	var or, ou, sr, su float64
	var a, b, c, d any
	if err := db.QueryRowContext(ctx, boundSQL).Scan(&a, &b, &c, &d); err != nil {
		return nil, engine.CleanError(err)
	}
	or, ou, sr, su = results.Number(a), results.Number(b), results.Number(c), results.Number(d)
	return Aggregates{"bound": {"order_rows": or, "order_units": ou, "session_rows": sr, "session_units": su}}, nil
}

// RunReference is approach (c): the hand-written query.
func RunReference(ctx context.Context, db *sql.DB) (Aggregates, error) {
	return QueryAggregates(ctx, db, referenceSQL)
}

// UnitRows are the per-unit rows of one variant as a notebook would hold
// them: one slice per column.
type UnitRows struct {
	UnitID                                                    []int64
	Mature14, Mature7                                         []bool
	Delivered, Revenue, Cancelled7, Sessions, Duration, Pages []float64
	DeliveredPre                                              []float64 // orders_14d's covariate
}

// PullUnits runs the notebook's per-unit query and holds every row in Go,
// by variant.
func PullUnits(ctx context.Context, db *sql.DB) (map[string]*UnitRows, error) {
	rs, err := db.QueryContext(ctx, NotebookSQL())
	if err != nil {
		return nil, engine.CleanError(err)
	}
	defer rs.Close()
	out := map[string]*UnitRows{}
	var (
		id      int64
		variant string
		m14, m7 bool
		v       [7]float64
	)
	for rs.Next() {
		if err := rs.Scan(&id, &variant, &m14, &m7, &v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &v[6]); err != nil {
			return nil, err
		}
		u := out[variant]
		if u == nil {
			u = &UnitRows{}
			out[variant] = u
		}
		u.UnitID = append(u.UnitID, id)
		u.Mature14 = append(u.Mature14, m14)
		u.Mature7 = append(u.Mature7, m7)
		u.Delivered = append(u.Delivered, v[0])
		u.Revenue = append(u.Revenue, v[1])
		u.Cancelled7 = append(u.Cancelled7, v[2])
		u.Sessions = append(u.Sessions, v[3])
		u.Duration = append(u.Duration, v[4])
		u.Pages = append(u.Pages, v[5])
		u.DeliveredPre = append(u.DeliveredPre, v[6])
	}
	return out, rs.Err()
}

// NotebookStats computes Spec10's per-variant statistics from per-unit rows
// with gonum (stat.MeanVariance, stat.Covariance), independently of both
// assay's SQL and the reference query's final aggregate.
func NotebookStats(units map[string]*UnitRows) Aggregates {
	out := Aggregates{}
	for variant, u := range units {
		row := map[string]float64{compiler.ColUnits: float64(len(u.UnitID))}
		pick := func(mature []bool, col []float64, f func(float64) float64) []float64 {
			var xs []float64
			for i, ok := range mature {
				if ok {
					xs = append(xs, f(col[i]))
				}
			}
			return xs
		}
		id := func(x float64) float64 { return x }
		capAt := func(c float64) func(float64) float64 { return func(x float64) float64 { return math.Min(x, c) } }
		above := func(c float64) func(float64) float64 {
			return func(x float64) float64 {
				if x > c {
					return 1
				}
				return 0
			}
		}
		mean := func(name string, mature []bool, col []float64, f func(float64) float64) {
			xs := pick(mature, col, f)
			m, v := meanVar(xs)
			row[name+"__n"] = float64(len(xs))
			row[name+"__mean"] = m
			row[name+"__var"] = v
		}
		mean("orders_14d", u.Mature14, u.Delivered, id)
		y, x := pick(u.Mature14, u.Delivered, id), pick(u.Mature14, u.DeliveredPre, id)
		row["orders_14d__x_mean"], row["orders_14d__x_var"] = meanVar(x)
		row["orders_14d__yx_cov"] = math.NaN()
		if len(x) >= 2 {
			row["orders_14d__yx_cov"] = stat.Covariance(y, x, nil)
		}
		mean("revenue_14d", u.Mature14, u.Revenue, id)
		mean("revenue_capped", u.Mature14, u.Revenue, capAt(400))
		mean("converted", u.Mature14, u.Delivered, above(0))
		mean("cancelled_7d", u.Mature7, u.Cancelled7, id)
		mean("sessions_14d", u.Mature14, u.Sessions, id)
		mean("time_spent", u.Mature14, u.Duration, capAt(3600))
		mean("pages_seen", u.Mature14, u.Pages, id)
		mean("engaged", u.Mature14, u.Duration, above(600))
		num, den := pick(u.Mature14, u.Revenue, id), pick(u.Mature14, u.Delivered, id)
		row["basket_value__n"] = float64(len(num))
		row["basket_value__num_mean"], row["basket_value__num_var"] = meanVar(num)
		row["basket_value__den_mean"], row["basket_value__den_var"] = meanVar(den)
		row["basket_value__cov"] = math.NaN()
		if len(num) >= 2 {
			row["basket_value__cov"] = stat.Covariance(num, den, nil)
		}
		out[variant] = row
	}
	return out
}

// meanVar is gonum's mean and n-1 variance, with NaN for the cases where
// SQL's avg and var_samp return NULL (no rows; fewer than two rows).
func meanVar(xs []float64) (mean, variance float64) {
	switch len(xs) {
	case 0:
		return math.NaN(), math.NaN()
	case 1:
		return xs[0], math.NaN()
	}
	return stat.MeanVariance(xs, nil)
}

// RunNotebook is approach (d): pull per-unit rows and compute the
// statistics in Go. It returns the rows too, as a notebook keeps its frame.
func RunNotebook(ctx context.Context, db *sql.DB) (Aggregates, map[string]*UnitRows, error) {
	units, err := PullUnits(ctx, db)
	if err != nil {
		return nil, nil, err
	}
	return NotebookStats(units), units, nil
}

// Mismatch is one statistic on which two approaches disagree.
type Mismatch struct {
	Variant, Column string
	Got, Want       float64
}

func (m Mismatch) String() string {
	return fmt.Sprintf("%s %s: got %.17g, want %.17g", m.Variant, m.Column, m.Got, m.Want)
}

// Compare lists the statistics of got and want that differ by more than tol
// relative to the larger magnitude, including columns or variants that only
// one side has. Two NaNs agree.
func Compare(got, want Aggregates, tol float64) []Mismatch {
	var out []Mismatch
	variants := map[string]bool{}
	for v := range got {
		variants[v] = true
	}
	for v := range want {
		variants[v] = true
	}
	for v := range variants {
		cols := map[string]bool{}
		for c := range got[v] {
			cols[c] = true
		}
		for c := range want[v] {
			cols[c] = true
		}
		for c := range cols {
			g, gok := got[v][c]
			w, wok := want[v][c]
			if !gok {
				g = math.Inf(-1)
			}
			if !wok {
				w = math.Inf(-1)
			}
			if !close(g, w, tol) {
				out = append(out, Mismatch{Variant: v, Column: c, Got: g, Want: w})
			}
		}
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].Variant != out[j].Variant {
			return out[i].Variant < out[j].Variant
		}
		return out[i].Column < out[j].Column
	})
	return out
}

func close(a, b, tol float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	if a == b {
		return true
	}
	return math.Abs(a-b) <= tol*math.Max(math.Abs(a), math.Abs(b))
}
