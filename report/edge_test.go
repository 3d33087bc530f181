package report_test

import (
	"bytes"
	"encoding/json"
	"math"
	"regexp"
	"strings"
	"testing"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/report"
	"github.com/assay-dev/assay/results"
)

// edgeSpec has one metric of each shape: a mean (count), a proportion, a
// ratio, a guard and a CUPED-adjusted mean.
const edgeSpec = `[experiment]
id = "edges"
hypothesis = "A clearer pricing page makes more visitors start a trial within a week."
start = 2026-05-01T00:00:00Z
end = 2026-06-01T00:00:00Z

[variants]
control = 0.5
treatment = 0.5

[sources.exposures]
table = "exposures"
unit = "user_id"
time = "ts"
columns = ["user_id", "arm", "ts"]

[sources.trials]
table = "trials"
unit = "user_id"
time = "started_at"
columns = ["user_id", "started_at", "amount"]

[exposure]
source = "exposures"
variant = "arm"

[metrics.trials]
role = "primary"
kind = "count"
source = "trials"
window = ["0d", "7d"]

[metrics.converted]
role = "secondary"
kind = "proportion"
source = "trials"
window = ["0d", "7d"]

[metrics.per_trial]
role = "secondary"
kind = "ratio"
window = ["0d", "7d"]
numerator = { source = "trials", kind = "sum", value = "amount" }
denominator = { source = "trials", kind = "count" }

[metrics.refunds]
role = "guard"
kind = "count"
source = "trials"
window = ["0d", "7d"]
harmful = "increase"
margin = 0.05

[metrics.trials_adj]
role = "secondary"
kind = "count"
source = "trials"
window = ["0d", "7d"]
covariate = { window = ["-28d", "0d"] }
`

func edgePlan(t *testing.T) *compiler.Plan {
	t.Helper()
	spec, ds := metrics.Load("edges.toml", []byte(edgeSpec))
	if ds.HasErrors() {
		t.Fatalf("fixture spec does not load:\n%s", ds.Error())
	}
	p, ds := compiler.Compile(spec, compiler.Options{})
	if ds.HasErrors() {
		t.Fatalf("fixture spec does not compile:\n%s", ds.Error())
	}
	return p
}

// moments are the per-variant statistics written into every metric's
// columns: n, mean and variance of the per-unit values, the same for a
// ratio's numerator and denominator, and covariate moments.
type moments struct {
	n, mean, vr float64
	den, denVar float64 // ratio denominator mean and variance; cov is 0
	x, xVar     float64 // covariate mean and variance; yx covariance is 0
}

func row(variant string, units int64, m moments) results.Row {
	st := map[string]float64{}
	for _, name := range []string{"trials", "converted", "per_trial", "refunds", "trials_adj"} {
		col := func(s compiler.Stat) string { return compiler.StatColumn(name, s) }
		st[col(compiler.StatN)] = m.n
		st[col(compiler.StatMean)] = m.mean
		st[col(compiler.StatVar)] = m.vr
		st[col(compiler.StatNumMean)] = m.mean
		st[col(compiler.StatNumVar)] = m.vr
		st[col(compiler.StatDenMean)] = m.den
		st[col(compiler.StatDenVar)] = m.denVar
		st[col(compiler.StatCov)] = 0
		st[col(compiler.StatXMean)] = m.x
		st[col(compiler.StatXVar)] = m.xVar
		st[col(compiler.StatYXCov)] = 0
		st[col(compiler.StatNumXCov)] = 0
		st[col(compiler.StatDenXCov)] = 0
	}
	return results.Row{Group: -1, Variant: variant, Units: units, Stats: st}
}

func triggers(control, treatment int64) []results.HealthRow {
	return []results.HealthRow{
		{Kind: compiler.HealthTriggers, Variant: "control", Day: "2026-05-02", Rows: control, Units: control},
		{Kind: compiler.HealthTriggers, Variant: "treatment", Day: "2026-05-02", Rows: treatment, Units: treatment},
	}
}

var nan = math.NaN()

// res is a hand-built engine result.
type res struct {
	Rows   []results.Row
	Health []results.HealthRow
}

// set is r as the engine would decode it for plan p.
func (r *res) set(p *compiler.Plan) *results.Set {
	return &results.Set{SpecFingerprint: p.Spec.Fingerprint, Options: p.Options.Text(), Rows: r.Rows, Health: r.Health}
}

// TestAnalyzeEdgeCases builds engine results by hand for numerical edge
// cases and checks that the report never holds NaN or an infinity in its
// JSON, that every value that cannot be computed comes with a reason, and
// that what can be computed is in range.
func TestAnalyzeEdgeCases(t *testing.T) {
	p := edgePlan(t)
	tests := []struct {
		name string
		res  *res
	}{
		{"one unit per variant", &res{Rows: []results.Row{
			row("control", 1, moments{n: 1, mean: 3, vr: nan, den: 1, denVar: nan, x: 1, xVar: nan}),
			row("treatment", 1, moments{n: 1, mean: 4, vr: nan, den: 1, denVar: nan, x: 1, xVar: nan}),
		}, Health: triggers(1, 1)}},
		{"zero variance", &res{Rows: []results.Row{
			row("control", 100, moments{n: 100, mean: 2, vr: 0, den: 1, denVar: 0, x: 1, xVar: 0}),
			row("treatment", 100, moments{n: 100, mean: 3, vr: 0, den: 1, denVar: 0, x: 1, xVar: 0}),
		}, Health: triggers(100, 100)}},
		{"all zero", &res{Rows: []results.Row{
			row("control", 500, moments{n: 500, mean: 0, vr: 0, den: 0, denVar: 0, x: 0, xVar: 0}),
			row("treatment", 500, moments{n: 500, mean: 0, vr: 0, den: 0, denVar: 0, x: 0, xVar: 0}),
		}, Health: triggers(500, 500)}},
		{"all one", &res{Rows: []results.Row{
			row("control", 500, moments{n: 500, mean: 1, vr: 0, den: 1, denVar: 0, x: 1, xVar: 0}),
			row("treatment", 500, moments{n: 500, mean: 1, vr: 0, den: 1, denVar: 0, x: 1, xVar: 0}),
		}, Health: triggers(500, 500)}},
		{"zero baseline mean", &res{Rows: []results.Row{
			row("control", 400, moments{n: 400, mean: 0, vr: 0, den: 0, denVar: 0, x: 0.5, xVar: 0.25}),
			row("treatment", 400, moments{n: 400, mean: 0.5, vr: 0.25, den: 1, denVar: 0.1, x: 0.5, xVar: 0.25}),
		}, Health: triggers(400, 400)}},
		{"zero denominators", &res{Rows: []results.Row{
			row("control", 300, moments{n: 300, mean: 0, vr: 0, den: 0, denVar: 0, x: 1, xVar: 1}),
			row("treatment", 300, moments{n: 300, mean: 0, vr: 0, den: 0, denVar: 0, x: 1, xVar: 1}),
		}, Health: triggers(300, 300)}},
		{"a billion units", &res{Rows: []results.Row{
			row("control", 1e9, moments{n: 1e9, mean: 1, vr: 2, den: 2, denVar: 1, x: 1, xVar: 2}),
			row("treatment", 1e9, moments{n: 1e9, mean: 1.0001, vr: 2, den: 2, denVar: 1, x: 1, xVar: 2}),
		}, Health: triggers(1e9, 1e9)}},
		{"NULL statistics", &res{Rows: []results.Row{
			row("control", 50, moments{n: 50, mean: nan, vr: nan, den: nan, denVar: nan, x: nan, xVar: nan}),
			row("treatment", 50, moments{n: 50, mean: nan, vr: nan, den: nan, denVar: nan, x: nan, xVar: nan}),
		}, Health: triggers(50, 50)}},
		{"infinite values", &res{Rows: []results.Row{
			row("control", 50, moments{n: 50, mean: math.Inf(1), vr: math.Inf(1), den: 1, denVar: math.Inf(1), x: 1, xVar: 1}),
			row("treatment", 50, moments{n: 50, mean: 1, vr: math.Inf(1), den: math.Inf(-1), denVar: 1, x: 1, xVar: math.Inf(1)}),
		}, Health: triggers(50, 50)}},
		{"negative variance from rounding", &res{Rows: []results.Row{
			row("control", 80, moments{n: 80, mean: 2, vr: -1e-18, den: 1, denVar: -1e-18, x: 1, xVar: -1e-18}),
			row("treatment", 80, moments{n: 80, mean: 2, vr: -1e-18, den: 1, denVar: -1e-18, x: 1, xVar: -1e-18}),
		}, Health: triggers(80, 80)}},
		{"no units at all", &res{Rows: []results.Row{
			row("control", 0, moments{n: 0, mean: nan, vr: nan, den: nan, denVar: nan, x: nan, xVar: nan}),
			row("treatment", 0, moments{n: 0, mean: nan, vr: nan, den: nan, denVar: nan, x: nan, xVar: nan}),
		}}},
		{"treatment missing from the data", &res{Rows: []results.Row{
			row("control", 40, moments{n: 40, mean: 1, vr: 1, den: 1, denVar: 1, x: 1, xVar: 1}),
		}, Health: triggers(40, 0)}},
		{"undeclared variant in the data", &res{Rows: []results.Row{
			row("control", 40, moments{n: 40, mean: 1, vr: 1, den: 1, denVar: 1, x: 1, xVar: 1}),
			row("treatment", 40, moments{n: 40, mean: 1.2, vr: 1, den: 1, denVar: 1, x: 1, xVar: 1}),
			row("ghost", 7, moments{n: 7, mean: 9, vr: 1, den: 1, denVar: 1, x: 1, xVar: 1}),
		}, Health: append(triggers(40, 40), results.HealthRow{Kind: compiler.HealthExcluded, Reason: "unknown_variant", Variant: "ghost", Rows: 7, Units: 7})}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rep, err := report.Analyze(p, tc.res.set(p), report.Options{})
			if err != nil {
				t.Fatalf("Analyze: %v", err)
			}
			b, err := rep.JSON()
			if err != nil {
				t.Fatalf("JSON: %v", err)
			}
			if !json.Valid(b) {
				t.Fatalf("got invalid JSON")
			}
			if bad := regexp.MustCompile(`(?i)\bnan\b|[+-]?\binf(inity)?\b`).Find(b); bad != nil {
				t.Errorf("got %q in JSON, want null for values that cannot be computed", bad)
			}
			for _, out := range []string{rep.Text(), rep.Markdown()} {
				if strings.Contains(out, "NaN") || strings.Contains(out, "+Inf") || strings.Contains(out, "-Inf") {
					t.Errorf("got NaN or Inf in rendered text:\n%s", out)
				}
			}
			checkReasons(t, rep)
		})
	}
}

// checkReasons checks that every number the report could not compute has
// a reason beside it, and that p-values and intervals are in range.
func checkReasons(t *testing.T, rep *report.Report) {
	t.Helper()
	if sr := rep.Health.SampleRatio; !sr.PValue.OK() && sr.Reason == "" {
		t.Errorf("sample ratio: got p-value %v with no reason, want a reason", float64(sr.PValue))
	}
	for _, m := range rep.Metrics {
		for _, v := range m.Variants {
			if (!v.Value.OK() || !v.StdError.OK()) && v.Reason == "" {
				t.Errorf("%s/%s: got value %v ± %v with no reason, want a reason", m.Name, v.Variant, float64(v.Value), float64(v.StdError))
			}
		}
		for _, c := range m.Comparisons {
			where := m.Name + "/" + c.Variant
			for _, f := range []struct {
				name string
				v    report.Num
			}{{"difference", c.Difference}, {"std_error", c.StdError}, {"ci_low", c.CILow}, {"ci_high", c.CIHigh}, {"p_value", c.PValue}} {
				if !f.v.OK() && c.Reason == "" {
					t.Errorf("%s: got %s %v with no reason, want a reason", where, f.name, float64(f.v))
				}
			}
			for _, f := range []report.Num{c.Relative, c.RelativeCILow, c.RelativeCIHigh} {
				if !f.OK() && c.RelReason == "" && c.Reason == "" {
					t.Errorf("%s: got relative %v with no reason, want a reason", where, float64(f))
				}
			}
			if c.PValue.OK() && (c.PValue < 0 || c.PValue > 1) {
				t.Errorf("%s: got p-value %v, want it in [0, 1]", where, float64(c.PValue))
			}
			if c.CILow.OK() && c.CIHigh.OK() && c.CILow > c.CIHigh {
				t.Errorf("%s: got interval [%v, %v], want low <= high", where, float64(c.CILow), float64(c.CIHigh))
			}
			if g := c.Guard; g != nil && (!g.PValue.OK() || !g.Bound.OK()) && g.Reason == "" && c.Reason == "" {
				t.Errorf("%s: got guard p-value %v bound %v with no reason, want a reason", where, float64(g.PValue), float64(g.Bound))
			}
		}
	}
}

// TestAnalyzeBillionUnits checks the comparison at 10^9 units per variant
// against the large-sample z-test written out here (Welch's t has about
// 2·10^9 degrees of freedom, where it equals the normal):
//
//	d = 1.0001 - 1 = 1e-4
//	se = sqrt(2/1e9 + 2/1e9) = 6.32455532e-5
//	z = d/se = 1.58113883
//	p = erfc(z/√2) = 0.113846298
func TestAnalyzeBillionUnits(t *testing.T) {
	p := edgePlan(t)
	res := &res{Rows: []results.Row{
		row("control", 1e9, moments{n: 1e9, mean: 1, vr: 2, den: 2, denVar: 1, x: 1, xVar: 2}),
		row("treatment", 1e9, moments{n: 1e9, mean: 1.0001, vr: 2, den: 2, denVar: 1, x: 1, xVar: 2}),
	}, Health: triggers(1e9, 1e9)}
	rep, err := report.Analyze(p, res.set(p), report.Options{})
	if err != nil {
		t.Fatal(err)
	}
	d := 1.0001 - 1
	se := math.Sqrt(2/1e9 + 2/1e9)
	z := d / se
	pv := math.Erfc(z / math.Sqrt2)
	var c *report.Compare
	for i := range rep.Metrics {
		if rep.Metrics[i].Name == "trials" {
			c = &rep.Metrics[i].Comparisons[0]
		}
	}
	if c == nil {
		t.Fatal("no comparison for metric trials")
	}
	tests := []struct {
		name      string
		got, want float64
	}{
		{"difference", float64(c.Difference), d},
		{"std_error", float64(c.StdError), se},
		{"statistic", float64(c.Statistic), z},
		{"p_value", float64(c.PValue), pv},
		{"relative", float64(c.Relative), d / 1},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if math.Abs(tc.got-tc.want) > 1e-6*math.Abs(tc.want) {
				t.Errorf("got %.10g, want %.10g (independent z-test)", tc.got, tc.want)
			}
		})
	}
	if b, _ := rep.JSON(); !bytes.Contains(b, []byte(`"eligible_units": 1000000000`)) {
		t.Errorf("got JSON without eligible_units 1000000000, want the count written as an exact integer")
	}
}
