package e2e

// Helpers for the tests of the trustworthy-analysis features (CUPED,
// health checks, guards, multiple testing, segments, calibration):
// bulk fixture writing through CSV, a spec skeleton with free columns,
// the JSON fields those features add, seeded samplers, and reference
// computations written out independently of package stats (OLS by
// gonum/mat QR, Holm and Benjamini–Hochberg step by step, exact binomial
// ranges).

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/assay-dev/assay/internal/testkit"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// ---- bulk fixtures ----

// col3 is a typed fixture column.
type col3 struct{ Name, Type string }

// writeBulk writes rows (already formatted as text, "" for NULL) to
// dir/file as Parquet: through a CSV file read by a scratch DuckDB with
// the declared column types. It is much faster than VALUES literals for
// tens of thousands of rows.
func writeBulk(t testing.TB, dir, file string, cols []col3, rows [][]string) {
	t.Helper()
	if len(rows) == 0 {
		t.Fatalf("writeBulk %s: no rows", file)
	}
	csvPath := filepath.Join(dir, file+".csv")
	fh, err := os.Create(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(fh)
	head := make([]string, len(cols))
	types := make([]string, len(cols))
	for i, c := range cols {
		head[i] = c.Name
		types[i] = fmt.Sprintf("'%s': '%s'", c.Name, c.Type)
	}
	if err := w.Write(head); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteAll(rows); err != nil {
		t.Fatal(err)
	}
	if err := fh.Close(); err != nil {
		t.Fatal(err)
	}
	q := fmt.Sprintf("SELECT * FROM read_csv('%s', header = true, nullstr = '', columns = {%s})",
		strings.ReplaceAll(csvPath, "'", "''"), strings.Join(types, ", "))
	copyParquet(t, dir, file, q)
	os.Remove(csvPath)
}

// writeBulkSplit is writeBulk for rows that carry a partition number in
// their first column: rows with partition k go to dir/fmt.Sprintf(pattern,
// k) without that column, all through one scratch DuckDB.
func writeBulkSplit(t testing.TB, dir, pattern string, cols []col3, rows [][]string) {
	t.Helper()
	csvPath := filepath.Join(dir, "split.csv")
	fh, err := os.Create(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	w := csv.NewWriter(fh)
	head := []string{"part__"}
	types := []string{"'part__': 'INTEGER'"}
	names := []string{}
	for _, c := range cols {
		head = append(head, c.Name)
		types = append(types, fmt.Sprintf("'%s': '%s'", c.Name, c.Type))
		names = append(names, c.Name)
	}
	if err := w.Write(head); err != nil {
		t.Fatal(err)
	}
	if err := w.WriteAll(rows); err != nil {
		t.Fatal(err)
	}
	if err := fh.Close(); err != nil {
		t.Fatal(err)
	}
	db := scratchDB(t)
	if _, err := db.Exec(fmt.Sprintf("CREATE TABLE bulk AS SELECT * FROM read_csv('%s', header = true, nullstr = '', columns = {%s})",
		strings.ReplaceAll(csvPath, "'", "''"), strings.Join(types, ", "))); err != nil {
		t.Fatalf("load %s: %v", csvPath, err)
	}
	os.Remove(csvPath)
	parts := queryMaps(t, db, "SELECT DISTINCT part__ FROM bulk ORDER BY 1")
	for _, p := range parts {
		k := int(toFloat(t, p["part__"]))
		path := filepath.Join(dir, fmt.Sprintf(pattern, k))
		q := fmt.Sprintf("COPY (SELECT %s FROM bulk WHERE part__ = %d) TO '%s' (FORMAT parquet)", strings.Join(names, ", "), k, strings.ReplaceAll(path, "'", "''"))
		if _, err := db.Exec(q); err != nil {
			t.Fatalf("write %s: %v", path, err)
		}
	}
}

// tsText formats an instant as a naive UTC timestamp with microseconds.
func tsText(x time.Time) string { return x.UTC().Format("2006-01-02 15:04:05.000000") }

// ---- specs ----

// spec3 is a spec with free exposure and event columns. Exposures are
// read from exposures.parquet (unit_id, variant, exposed_at, ExpoCols...)
// and events from events.parquet (unit_id, happened_at, EventCols...).
type spec3 struct {
	Variants       string // [variants] body; default control/treatment 50/50
	ExpoCols       []string
	EventCols      []string
	ExposureFilter string
	Extra          string // more sources, eligibility rules, segments
	Metrics        string
	EventsFile     string // default events.parquet
}

const (
	start3 = "2026-03-02T00:00:00Z"
	end3   = "2026-04-13T00:00:00Z"
)

var (
	start3T = ts("2026-03-02 00:00:00")
	end3T   = ts("2026-04-13 00:00:00")
)

func (s spec3) toml() string {
	return testkit.Spec{ID: "e2e-analysis-fixture", Start: start3, End: end3, Variants: s.Variants,
		ExposureCols: s.ExpoCols, EventsFile: s.EventsFile, EventCols: s.EventCols,
		ExposureFilter: s.ExposureFilter, Extra: s.Extra, Metrics: s.Metrics}.TOML()
}

// ---- running ----

// run3 runs `assay <args> SPEC` in-process and decodes the JSON report
// whatever the exit code; it fails the test only when stdout is not a
// report.
func run3(t testing.TB, spec string, args ...string) (int, *report3) {
	t.Helper()
	full := append([]string{"run", "--format", "json"}, args...)
	full = append(full, spec)
	code, out, errs := runCLI(full...)
	var r report3
	if err := json.NewDecoder(bytes.NewReader([]byte(out))).Decode(&r); err != nil {
		t.Fatalf("assay %s: exit %d, stdout is not a JSON report: %v\nstderr:\n%s\nstdout:\n%s", strings.Join(full, " "), code, err, errs, out)
	}
	return code, &r
}

// mustRun3 is run3 that requires exit code 0.
func mustRun3(t testing.TB, spec string, args ...string) *report3 {
	t.Helper()
	code, r := run3(t, spec, args...)
	if code != 0 {
		t.Fatalf("assay run %v %s: exit code %d, want 0; alarms %q", args, spec, code, r.Alarms)
	}
	return r
}

// ---- the JSON fields of the analysis features ----

type srm3 struct {
	Statistic num    `json:"statistic"`
	DF        num    `json:"df"`
	PValue    num    `json:"p_value"`
	Alpha     num    `json:"alpha"`
	Alarm     bool   `json:"alarm"`
	Reason    string `json:"reason"`
}

type variant3 struct {
	Variant  string `json:"variant"`
	N        int64  `json:"n"`
	Immature int64  `json:"immature"`
	Value    num    `json:"value"`
	StdError num    `json:"std_error"`
}

type guard3 struct {
	Verdict    string `json:"verdict"`
	Alarming   bool   `json:"alarming"`
	Lower      num    `json:"relative_lower"`
	Upper      num    `json:"relative_upper"`
	PValue     num    `json:"p_value"`
	HarmPValue num    `json:"harm_p_value"`
	Bound      num    `json:"bound"`
	Reason     string `json:"reason"`
}

type cuped3 struct {
	Theta             num    `json:"theta"`
	CovariateMean     num    `json:"covariate_mean"`
	VarianceReduction num    `json:"variance_reduction"`
	BaselineValue     num    `json:"baseline_value"`
	BaselineStdError  num    `json:"baseline_std_error"`
	VariantValue      num    `json:"variant_value"`
	VariantStdError   num    `json:"variant_std_error"`
	Unadjusted        cmp3   `json:"unadjusted"`
	NotApplied        string `json:"not_applied"`
}

type cmp3 struct {
	Variant        string  `json:"variant"`
	Baseline       string  `json:"baseline"`
	Method         string  `json:"method"`
	Difference     num     `json:"difference"`
	StdError       num     `json:"std_error"`
	CILow          num     `json:"ci_low"`
	CIHigh         num     `json:"ci_high"`
	Relative       num     `json:"relative"`
	RelativeCILow  num     `json:"relative_ci_low"`
	RelativeCIHigh num     `json:"relative_ci_high"`
	Statistic      num     `json:"statistic"`
	DF             num     `json:"df"`
	PValue         num     `json:"p_value"`
	PValueAdjusted num     `json:"p_value_adjusted"`
	Family         string  `json:"family"`
	Reason         string  `json:"reason"`
	Guard          *guard3 `json:"guard"`
	CUPED          *cuped3 `json:"cuped"`
}

type metric3 struct {
	Name      string `json:"name"`
	Role      string `json:"role"`
	Kind      string `json:"kind"`
	Covariate *struct {
		Metric string    `json:"metric"`
		Window [2]string `json:"window"`
	} `json:"covariate"`
	Variants    []variant3 `json:"variants"`
	Comparisons []cmp3     `json:"comparisons"`
}

type segValue3 struct {
	Value     string           `json:"value"`
	Units     int64            `json:"units"`
	ByVariant map[string]int64 `json:"by_variant"`
}

type segCheck3 struct {
	Variant       string  `json:"variant"`
	Reversal      bool    `json:"reversal"`
	Pooled        num     `json:"pooled_difference"`
	Stratified    num     `json:"stratified_difference"`
	MixGapPValue  num     `json:"mix_gap_p_value"`
	FlagAlpha     float64 `json:"flag_alpha"`
	OppositeShare num     `json:"opposite_share"`
	Q             num     `json:"cochran_q"`
	DF            num     `json:"df"`
	PValue        num     `json:"p_value"`
	I2            num     `json:"i2"`
	Reason        string  `json:"reason"`
}

type segRow3 struct {
	Value       string     `json:"value"`
	Variants    []variant3 `json:"variants"`
	Comparisons []cmp3     `json:"comparisons"`
}

type segMetric3 struct {
	Metric string      `json:"metric"`
	Rows   []segRow3   `json:"rows"`
	Checks []segCheck3 `json:"checks"`
	Flags  []string    `json:"flags"`
}

type segment3 struct {
	Name       string       `json:"name"`
	Values     []segValue3  `json:"values"`
	VariantMix srm3         `json:"variant_mix"`
	Metrics    []segMetric3 `json:"metrics"`
}

type report3 struct {
	SchemaVersion int      `json:"schema_version"`
	Alarms        []string `json:"alarms"`
	Adjustment    string   `json:"adjustment"`
	Experiment    struct {
		Variants []struct {
			Name           string `json:"name"`
			TriggeredUnits int64  `json:"triggered_units"`
			EligibleUnits  int64  `json:"eligible_units"`
		} `json:"variants"`
	} `json:"experiment"`
	Health struct {
		Eligible             int64 `json:"eligible_units"`
		Triggered            int64 `json:"triggered_units"`
		SampleRatio          srm3  `json:"sample_ratio"`
		SampleRatioTriggered srm3  `json:"sample_ratio_triggered"`
		SampleRatioDaily     struct {
			Days []struct {
				Day       string `json:"day"`
				Units     int64  `json:"units"`
				Statistic num    `json:"statistic"`
				PValue    num    `json:"p_value"`
				Alarm     bool   `json:"alarm"`
			} `json:"days"`
			AlarmDays []string `json:"alarm_days"`
		} `json:"sample_ratio_daily"`
		CrossoverRate num `json:"crossover_rate_of_exposed"`
	} `json:"health"`
	Metrics  []metric3  `json:"metrics"`
	Segments []segment3 `json:"segments"`
}

func (r *report3) metric(t testing.TB, name string) *metric3 {
	t.Helper()
	for i := range r.Metrics {
		if r.Metrics[i].Name == name {
			return &r.Metrics[i]
		}
	}
	t.Fatalf("metric %q not in report", name)
	return nil
}

func (r *report3) segment(t testing.TB, name string) *segment3 {
	t.Helper()
	for i := range r.Segments {
		if r.Segments[i].Name == name {
			return &r.Segments[i]
		}
	}
	t.Fatalf("segment %q not in report", name)
	return nil
}

func (m *metric3) cmp(t testing.TB, variant string) *cmp3 {
	t.Helper()
	for i := range m.Comparisons {
		if m.Comparisons[i].Variant == variant {
			return &m.Comparisons[i]
		}
	}
	t.Fatalf("metric %s: no comparison for %q", m.Name, variant)
	return nil
}

func variantOf(t testing.TB, vs []variant3, name string) *variant3 {
	t.Helper()
	for i := range vs {
		if vs[i].Variant == name {
			return &vs[i]
		}
	}
	t.Fatalf("variant %q not found", name)
	return nil
}

func (s *segment3) metric(t testing.TB, name string) *segMetric3 {
	t.Helper()
	for i := range s.Metrics {
		if s.Metrics[i].Metric == name {
			return &s.Metrics[i]
		}
	}
	t.Fatalf("segment %s: metric %q not found", s.Name, name)
	return nil
}

func (s *segment3) value(name string) *segValue3 {
	for i := range s.Values {
		if s.Values[i].Value == name {
			return &s.Values[i]
		}
	}
	return nil
}

// ---- calibration JSON ----

type calibration3 struct {
	SchemaVersion int     `json:"schema_version"`
	Splits        int     `json:"splits"`
	Salt          int64   `json:"salt"`
	Alpha         float64 `json:"alpha"`
	Metrics       []struct {
		Name           string `json:"name"`
		Kind           string `json:"kind"`
		Tests          int    `json:"tests"`
		FalsePositives int    `json:"false_positives"`
		Rate           num    `json:"rate"`
		Lo             int    `json:"expected_low"`
		Hi             int    `json:"expected_high"`
		Verdict        string `json:"verdict"`
	} `json:"metrics"`
}

// ---- numeric checks ----

// near reports whether got is within tol of want, absolutely or
// relatively (whichever is looser); NaN never matches.
func near(got, want, tol float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return false
	}
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

// check3 is one named numeric expectation with its source.
type check3 struct {
	name      string
	got, want float64
	tol       float64
	source    string
}

func runChecks(t *testing.T, cs []check3) {
	t.Helper()
	for _, c := range cs {
		t.Run(c.name, func(t *testing.T) {
			if !near(c.got, c.want, c.tol) {
				t.Errorf("got %v, want %v (tolerance %v; Source: %s)", c.got, c.want, c.tol, c.source)
			}
		})
	}
}

// ---- seeded sampling (math/rand/v2 PCG) ----

func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15)) }

// poisson draws a Poisson(lambda) count (Knuth's multiplication method,
// splitting large lambdas so exp(−lambda) never underflows).
func poisson(r *rand.Rand, lambda float64) int {
	n := 0
	for lambda > 20 {
		n += poisson(r, 20)
		lambda -= 20
	}
	l := math.Exp(-lambda)
	p := 1.0
	for {
		p *= r.Float64()
		if p <= l {
			return n
		}
		n++
	}
}

// gamma draws a Gamma(shape, scale) variate (Marsaglia & Tsang 2000, "A
// simple method for generating gamma variables", ACM TOMS 26).
func gamma(r *rand.Rand, shape, scale float64) float64 {
	if shape < 1 {
		return gamma(r, shape+1, scale) * math.Pow(r.Float64(), 1/shape)
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		x := r.NormFloat64()
		v := 1 + c*x
		if v <= 0 {
			continue
		}
		v = v * v * v
		u := r.Float64()
		if math.Log(u) < 0.5*x*x+d-d*v+d*math.Log(v) {
			return d * v * scale
		}
	}
}

// within returns an instant uniformly inside [from, from+span), on a
// whole second strictly after from and strictly before the end, so that
// no fixture row sits on a window boundary.
func within(r *rand.Rand, from time.Time, span time.Duration) time.Time {
	secs := int64(span / time.Second)
	return from.Add(time.Duration(1+r.Int64N(secs-2)) * time.Second)
}

func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

// ---- reference computations ----

// olsQR returns the least-squares coefficients of y on the columns of X
// (gonum/mat QR factorisation).
func olsQR(t testing.TB, X [][]float64, y []float64) []float64 {
	t.Helper()
	n, k := len(X), len(X[0])
	A := mat.NewDense(n, k, nil)
	for i, r := range X {
		A.SetRow(i, r)
	}
	var qr mat.QR
	qr.Factorize(A)
	var beta mat.Dense
	if err := qr.SolveTo(&beta, false, mat.NewDense(n, 1, append([]float64(nil), y...))); err != nil {
		t.Fatalf("QR least squares: %v", err)
	}
	out := make([]float64, k)
	for j := range out {
		out[j] = beta.At(j, 0)
	}
	return out
}

// holmByHand is Holm's (1979) step-down adjustment written out: sort the
// m p-values ascending, multiply the i-th smallest (1-based) by m − i + 1,
// enforce monotonicity with a running maximum, cap at 1, and return in
// input order.
func holmByHand(p []float64) []float64 {
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	out := make([]float64, m)
	run := 0.0
	for rank, i := range idx {
		v := float64(m-rank) * p[i]
		if v > run {
			run = v
		}
		out[i] = math.Min(1, run)
	}
	return out
}

// bhByHand is Benjamini & Hochberg's (1995) step-up adjustment written
// out: with p sorted ascending, q_(i) = min over j ≥ i of m·p_(j)/j,
// capped at 1, in input order.
func bhByHand(p []float64) []float64 {
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	out := make([]float64, m)
	run := 1.0
	for rank := m - 1; rank >= 0; rank-- {
		i := idx[rank]
		v := float64(m) * p[i] / float64(rank+1)
		if v < run {
			run = v
		}
		out[i] = run
	}
	return out
}

// binomRange returns the equal-tailed central range [lo, hi] of a
// Binomial(n, p) count at the given level, from exact sums of the
// probability mass function (gonum distuv.Binomial.Prob): lo is the
// largest k with P(X < k) ≤ (1−level)/2 and hi the smallest k with
// P(X > k) ≤ (1−level)/2, so a count outside [lo, hi] has probability at
// most 1 − level.
func binomRange(n int, p, level float64) (lo, hi int) {
	b := distuv.Binomial{N: float64(n), P: p}
	tail := (1 - level) / 2
	cdfBelow := func(k int) float64 { // P(X < k)
		s := 0.0
		for j := 0; j < k; j++ {
			s += b.Prob(float64(j))
		}
		return s
	}
	cdfAbove := func(k int) float64 { // P(X > k)
		s := 0.0
		for j := n; j > k; j-- {
			s += b.Prob(float64(j))
		}
		return s
	}
	for lo = 0; lo < n && cdfBelow(lo+1) <= tail; lo++ {
	}
	for hi = n; hi > 0 && cdfAbove(hi-1) <= tail; hi-- {
	}
	return lo, hi
}

// welchRef is Welch's two-sample t test written out from per-unit values
// (gonum/stat moments, distuv.StudentsT): difference b − a, its SE, the
// Welch–Satterthwaite df and the two-sided p-value.
func welchRef(va, na, vb, nb float64) (se, df float64) {
	sa, sb := va/na, vb/nb
	se = math.Sqrt(sa + sb)
	df = (sa + sb) * (sa + sb) / (sa*sa/(na-1) + sb*sb/(nb-1))
	return se, df
}

func tTwoSided(t, df float64) float64 {
	return 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t))
}

func normTwoSided(z float64) float64 {
	return 2 * distuv.UnitNormal.Survival(math.Abs(z))
}

func jsonUnmarshal(s string, v any) error { return json.Unmarshal([]byte(s), v) }
