// Package e2e holds end-to-end tests of assay: each test writes its own
// fixture (Parquet files built through a scratch DuckDB, plus a spec TOML)
// into a temporary directory, drives the real command line (cli.Run, or
// the built cmd/assay binary as a subprocess) through spec loading, SQL
// compilation, DuckDB execution and analysis, and checks the output
// against a value from outside the project: a published reference (R,
// NIST StRD), a hand-written SQL query or gonum/stat over the raw rows the
// test wrote, a hand-worked example, or the demo generator's own tally.
// Each check names its source beside it.
//
// Layout:
//
//	helpers_test.go      fixture writers, spec skeleton, CLI runners, the
//	                     JSON report types, the one-time binary build
//	e2e_test.go          reference statistics through the whole path:
//	                     Welch (R sleep), NIST StRD variances, delta method
//	trigger_test.go      trigger, window, eligibility, exclusion and
//	                     maturity semantics on hand-checkable fixtures
//	tz_test.go           independence from the process time zone, spec
//	                     time zones and the DST change
//	determinism_test.go  byte-identical SQL, one statement per query
//	demo_test.go         the bundled demo against its generator's TRUTH.md
//
// The package has test files only.
package e2e

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
)

// TestWelchSleep runs Student's sleep data as a 20-unit experiment: one
// exposure and one outcome row per unit whose value is `extra`.
func TestWelchSleep(t *testing.T) {
	// Source: R datasets::sleep, column extra, group 1 and group 2.
	group1 := []float64{0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0}
	group2 := []float64{1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4}

	dir := t.TempDir()
	start := ts("2026-03-02 00:00:00")
	var expo, ev []row
	add := func(id, variant string, i int, extra float64) {
		trig := start.Add(time.Duration(i+1) * time.Hour)
		expo = append(expo, row{id, variant, trig, "home"})
		ev = append(ev, row{id, trig.Add(time.Hour), extra})
	}
	for i, x := range group1 {
		add(fmt.Sprintf("g1-%02d", i), "control", i, x)
	}
	for i, x := range group2 {
		add(fmt.Sprintf("g2-%02d", i), "treatment", i, x)
	}
	writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
	writeParquet(t, dir, "events.parquet", eventCols, ev)
	spec := writeText(t, dir, "spec.toml", specParts{Metrics: metricSumW}.toml())

	rep := runReport(t, spec)
	m := rep.metric(t, "w14")
	c := m.comparison(t, "treatment")
	if c.Method != "welch-t" {
		t.Errorf("method: got %q, want %q", c.Method, "welch-t")
	}
	// Source: R 4.x, t.test(extra ~ group, data = sleep) (Welch two-sample
	// t-test): t = -1.860813, df = 17.77647, p-value = 0.07939414, 95% CI
	// -3.3654832 0.2054832, means 0.75 and 2.33. That is group 1 − group 2;
	// assay reports treatment (group 2) − baseline (group 1), so signs flip.
	// R prints df to 7 significant digits, so its tolerance is relative.
	const tol = 1e-6
	checks := []struct {
		name      string
		got, want float64
		rel       bool
	}{
		{"control mean", m.variant(t, "control").Value, 0.75, false},
		{"treatment mean", m.variant(t, "treatment").Value, 2.33, false},
		{"difference", f(c.Difference), 2.33 - 0.75, false},
		{"statistic", f(c.Statistic), 1.860813, false},
		{"df", f(c.DF), 17.77647, true},
		{"p_value", f(c.PValue), 0.07939414, false},
		{"ci_low", f(c.CILow), -0.2054832, false},
		{"ci_high", f(c.CIHigh), 3.3654832, false},
	}
	for _, ck := range checks {
		t.Run(ck.name, func(t *testing.T) {
			ok := closeAbs(ck.got, ck.want, tol)
			if ck.rel {
				ok = closeRel(ck.got, ck.want, tol)
			}
			if !ok {
				t.Errorf("got %v, want %v (tolerance %v)", ck.got, ck.want, tol)
			}
		})
	}
	for _, v := range []string{"control", "treatment"} {
		if got := m.variant(t, v).N; got != 10 {
			t.Errorf("%s n: got %v, want %v (Source: R sleep, 10 per group)", v, got, 10)
		}
	}
}

// TestNISTVariance pushes the NIST StRD univariate "numerical accuracy"
// datasets through the SQL path (spec → compiled main query → DuckDB) as
// the per-unit values of a sum metric in the control variant, and compares
// sqrt(<metric>__var) with the certified standard deviation.
func TestNISTVariance(t *testing.T) {
	acc3 := func(base float64) []float64 {
		// NumAcc3 / NumAcc4: base+0.2, then 500 pairs (base+0.1, base+0.3).
		// The decimal strings are converted once, so each value is the
		// double nearest to the certified decimal.
		v := []float64{parse(fmt.Sprintf("%.0f.2", base))}
		for range 500 {
			v = append(v, parse(fmt.Sprintf("%.0f.1", base)), parse(fmt.Sprintf("%.0f.3", base)))
		}
		return v
	}
	cases := []struct {
		name     string
		values   []float64
		mean, sd float64 // Source: NIST StRD univariate summary statistics, certified values
		tol      float64 // relative, on the standard deviation
		naive    bool    // also contrast with the textbook sum-of-squares formula
	}{
		// Source: NIST StRD NumAcc1, certified mean 10000002, sd 1.
		{"NumAcc1", []float64{10000001, 10000003, 10000002}, 10000002, 1, 1e-12, false},
		// Source: NIST StRD NumAcc3, certified mean 1000000.2, sd 0.1.
		{"NumAcc3", acc3(1000000), 1000000.2, 0.1, 1e-9, false},
		// Source: NIST StRD NumAcc4, certified mean 10000000.2, sd 0.1.
		// float64 cannot store 10000000.1 exactly: about 5.6e-9 relative
		// is the best any algorithm can reach from the stored values.
		{"NumAcc4", acc3(10000000), 10000000.2, 0.1, 1e-8, true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			start := ts("2026-03-02 00:00:00")
			var expo, ev []row
			for i, x := range tc.values {
				id := fmt.Sprintf("c%05d", i)
				trig := start.Add(time.Duration(i) * time.Minute)
				expo = append(expo, row{id, "control", trig, "home"})
				ev = append(ev, row{id, trig.Add(time.Hour), x})
			}
			// Two treatment units so the query has both variants.
			for i, x := range []float64{1, 2} {
				id := fmt.Sprintf("t%05d", i)
				expo = append(expo, row{id, "treatment", start, "home"})
				ev = append(ev, row{id, start.Add(time.Hour), x})
			}
			writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
			writeParquet(t, dir, "events.parquet", eventCols, ev)
			spec := writeText(t, dir, "spec.toml", specParts{Metrics: metricSumW}.toml())

			agg := mainAggregates(t, spec)["control"]
			if agg == nil {
				t.Fatal("no control row in the main query result")
			}
			if got := toFloat(t, agg["w14__n"]); got != float64(len(tc.values)) {
				t.Errorf("w14__n: got %v, want %v (Source: NIST StRD %s, number of observations)", got, len(tc.values), tc.name)
			}
			if got := toFloat(t, agg["w14__mean"]); !closeRel(got, tc.mean, 1e-14) {
				t.Errorf("w14__mean: got %v, want %v (Source: NIST StRD %s, certified mean)", got, tc.mean, tc.name)
			}
			sd := math.Sqrt(toFloat(t, agg["w14__var"]))
			if !closeRel(sd, tc.sd, tc.tol) {
				t.Errorf("sqrt(w14__var): got %v, want %v within %v relative (Source: NIST StRD %s, certified sd)", sd, tc.sd, tc.tol, tc.name)
			}
			if !tc.naive {
				return
			}
			// Contrast: the textbook one-pass formula (Σx² − (Σx)²/n)/(n−1)
			// over the same doubles, written by hand. At 1e7 the squares are
			// ~1e14 each and their sum ~1e17, whose spacing (16) dwarfs the
			// true sum of squared deviations (about 10), so the result is
			// rounding noise: for NumAcc4 it comes out negative or wildly
			// off. assay's stable var_samp must not resemble it.
			db := dirDB(t, dir)
			r := queryMaps(t, db, `SELECT (sum(w*w) - pow(sum(w), 2)/count(*))/(count(*) - 1) AS v
				FROM read_parquet('events.parquet') WHERE unit_id LIKE 'c%'`)
			naive := toFloat(t, r[0]["v"])
			want := tc.sd * tc.sd
			t.Logf("%s: textbook sum-of-squares variance %v, certified %v, assay %v", tc.name, naive, want, sd*sd)
			if naive > 0 && closeRel(naive, want, 0.5) {
				t.Errorf("textbook formula: got %v, want it badly wrong (negative or >50%% off %v); the contrast no longer shows cancellation", naive, want)
			}
		})
	}
}

func parse(s string) float64 {
	var x float64
	if _, err := fmt.Sscan(s, &x); err != nil {
		panic(err)
	}
	return x
}

// TestDeltaMethodRatio checks the ratio metric's standard error against
// the linearised per-unit values computed here with gonum/stat from
// per-unit rows pulled with hand-written SQL.
func TestDeltaMethodRatio(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(20260302, 7))
	start := ts("2026-03-02 00:00:00")
	const units = 2000
	var expo, orders, pays []row
	for i := range units {
		id := fmt.Sprintf("u%04d", i)
		variant := "control"
		lift := 1.0
		if i%2 == 1 {
			variant, lift = "treatment", 1.04
		}
		trig := start.Add(time.Duration(rng.Int64N(int64(10 * day))))
		expo = append(expo, row{id, variant, trig, "home"})
		// 0 to 4 orders; about 30% of units have none in any window.
		k := 0
		if rng.Float64() >= 0.3 {
			k = 1 + rng.IntN(4)
		}
		for j := range k {
			at := trig.Add(time.Duration(rng.Int64N(int64(14 * day))))
			switch rng.IntN(10) {
			case 0: // before the trigger: not an outcome
				at = trig.Add(-time.Second - time.Duration(rng.Int64N(int64(5*day))))
			case 1: // after the window
				at = trig.Add(14*day + time.Duration(rng.Int64N(int64(3*day))))
			}
			oid := fmt.Sprintf("%s-%d", id, j)
			orders = append(orders, row{oid, id, at})
			// One or two payment rows per order, a few minutes later.
			for p := 0; p < 1+rng.IntN(2); p++ {
				amt := math.Round((5+rng.ExpFloat64()*30)*lift*100) / 100
				pays = append(pays, row{oid, id, at.Add(time.Duration(rng.IntN(600)) * time.Second), amt})
			}
		}
	}
	writeParquet(t, dir, "exposures.parquet", exposureCols, expo)
	writeParquet(t, dir, "orders.parquet", "order_id, unit_id, ordered_at", orders)
	writeParquet(t, dir, "payments.parquet", "order_id, unit_id, paid_at, amount", pays)
	// The skeleton's events source must exist; one row suffices.
	writeParquet(t, dir, "events.parquet", eventCols, []row{{"u0000", start, 1.0}})
	spec := writeText(t, dir, "spec.toml", specParts{
		Extra: `
[sources.orders]
file = "orders.parquet"
unit = "unit_id"
time = "ordered_at"
columns = ["order_id", "unit_id", "ordered_at"]

[sources.payments]
file = "payments.parquet"
unit = "unit_id"
time = "paid_at"
columns = ["order_id", "unit_id", "paid_at", "amount"]
`,
		Metrics: `
[metrics.revenue_per_order]
role = "primary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "payments", kind = "sum", value = "amount" }
denominator = { source = "orders", kind = "count" }
`,
	}.toml())
	rep := runReport(t, spec)
	m := rep.metric(t, "revenue_per_order")

	// Independent per-unit values: hand-written SQL over the raw files,
	// window [trigger, trigger + 14 days) on each source separately.
	db := dirDB(t, dir)
	rows := queryMaps(t, db, `
		SELECT e.unit_id, e.variant,
		  coalesce((SELECT sum(p.amount) FROM read_parquet('payments.parquet') AS p
		            WHERE p.unit_id = e.unit_id AND p.paid_at >= e.exposed_at
		              AND p.paid_at < e.exposed_at + INTERVAL 14 DAY), 0) AS num,
		  (SELECT count(*) FROM read_parquet('orders.parquet') AS o
		   WHERE o.unit_id = e.unit_id AND o.ordered_at >= e.exposed_at
		     AND o.ordered_at < e.exposed_at + INTERVAL 14 DAY) AS den
		FROM read_parquet('exposures.parquet') AS e
		ORDER BY e.unit_id`)
	if len(rows) != units {
		t.Fatalf("hand-written per-unit query: got %v rows, want %v", len(rows), units)
	}
	type perVariant struct {
		num, den []float64
		zeroDen  int
	}
	pv := map[string]*perVariant{"control": {}, "treatment": {}}
	for _, r := range rows {
		v := pv[r["variant"].(string)]
		n, d := toFloat(t, r["num"]), toFloat(t, r["den"])
		v.num, v.den = append(v.num, n), append(v.den, d)
		if d == 0 {
			v.zeroDen++
		}
	}
	ratio, seSq := map[string]float64{}, map[string]float64{}
	for _, name := range []string{"control", "treatment"} {
		t.Run(name, func(t *testing.T) {
			v := pv[name]
			if v.zeroDen == 0 {
				t.Fatal("fixture has no unit with a zero denominator; the check would be vacuous")
			}
			// Source: gonum/stat over the hand-SQL per-unit rows:
			// R = Σnum/Σden, l_i = (num_i − R·den_i)/mean(den),
			// Var(R̂) ≈ Var(l)/n, so std_error²·n must equal Var(l).
			meanNum, meanDen := stat.Mean(v.num, nil), stat.Mean(v.den, nil)
			R := meanNum / meanDen
			l := make([]float64, len(v.num))
			for i := range l {
				l[i] = (v.num[i] - R*v.den[i]) / meanDen
			}
			wantVar := stat.Variance(l, nil)
			ratio[name] = R
			seSq[name] = wantVar / float64(len(l))

			got := m.variant(t, name)
			if got.N != int64(len(v.num)) {
				t.Errorf("n: got %v, want %v (every eligible unit, including %d with zero orders)", got.N, len(v.num), v.zeroDen)
			}
			if _, elig := rep.units(t, name); elig != int64(len(v.num)) {
				t.Errorf("eligible_units: got %v, want %v", elig, len(v.num))
			}
			if !closeRel(got.Value, R, 1e-12) {
				t.Errorf("value: got %v, want %v (Σnum/Σden)", got.Value, R)
			}
			gotVar := got.StdError * got.StdError * float64(got.N)
			if !closeRel(gotVar, wantVar, 1e-9) {
				t.Errorf("std_error²·n: got %v, want %v (variance of linearised values)", gotVar, wantVar)
			}
		})
	}
	c := m.comparison(t, "treatment")
	if want := ratio["treatment"] - ratio["control"]; !closeRel(f(c.Difference), want, 1e-9) {
		t.Errorf("difference: got %v, want %v (Source: gonum/stat ratios above)", f(c.Difference), want)
	}
	if want := math.Sqrt(seSq["control"] + seSq["treatment"]); !closeRel(f(c.StdError), want, 1e-9) {
		t.Errorf("comparison std_error: got %v, want %v (Source: independent-groups SE from the linearised variances above)", f(c.StdError), want)
	}
}
