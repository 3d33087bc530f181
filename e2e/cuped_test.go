package e2e

// CUPED (regression adjustment on a pre-trigger covariate) through the
// whole path. The fixture has per-unit rate heterogeneity, so each unit's
// pre-trigger and post-trigger counts correlate, and a planted effect.
// Per-unit rows (Y, X, treatment) are pulled with hand-written SQL over
// the Parquet files the test wrote, and every reference value is computed
// from them outside assay: DuckDB regr_slope, gonum/mat QR least squares
// (the ANCOVA regression Y ~ 1 + treatment + X), gonum/stat moments and
// distuv quantiles.

import (
	"database/sql"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// cupedFixture writes the CUPED fixture into dir: n units, half control
// and half treatment, triggers spread over the first 35 days of the
// analysis window (so units triggered in the last week are immature for a
// 14-day window), 10% with a later second exposure. Unit i has a rate
// λ_i ~ Gamma(2, 1.5) events per 14 days and a mean amount m_i ~ Gamma(4,
// 5). Events: Poisson(0.5λ) in [−40d, −28d), Poisson(2λ) in [−28d, 0),
// Poisson(λ(1+0.15·T)) in [0, 14d) and Poisson(λ) in [14d, 20d) around the
// first exposure; each event's amount is m_i(1+0.1·T)·Gamma(2, 1/2).
func cupedFixture(t testing.TB, dir string, n int, seed uint64) {
	t.Helper()
	r := newRand(seed)
	var expo, ev [][]string
	for i := range n {
		id := fmt.Sprintf("u%05d", i)
		variant, treat := "control", 0.0
		if i%2 == 1 {
			variant, treat = "treatment", 1.0
		}
		trig := within(r, start3T, 35*day)
		expo = append(expo, []string{id, variant, tsText(trig)})
		if r.Float64() < 0.1 {
			expo = append(expo, []string{id, variant, tsText(within(r, trig, 5*day))})
		}
		lam := gamma(r, 2, 1.5)
		m := gamma(r, 4, 5)
		spans := []struct {
			from, to time.Duration
			rate     float64
		}{
			{-40 * day, -28 * day, 0.5 * lam},
			{-28 * day, 0, 2 * lam},
			{0, 14 * day, lam * (1 + 0.15*treat)},
			{14 * day, 20 * day, lam},
		}
		for _, s := range spans {
			for range poisson(r, s.rate) {
				at := within(r, trig.Add(s.from), s.to-s.from)
				amt := m * (1 + 0.1*treat) * gamma(r, 2, 0.5)
				ev = append(ev, []string{id, tsText(at), fmt.Sprintf("%.6f", amt)})
			}
		}
	}
	writeBulk(t, dir, "exposures.parquet", []col3{{"unit_id", "VARCHAR"}, {"variant", "VARCHAR"}, {"exposed_at", "TIMESTAMP"}}, expo)
	writeBulk(t, dir, "events.parquet", []col3{{"unit_id", "VARCHAR"}, {"happened_at", "TIMESTAMP"}, {"w", "DOUBLE"}}, ev)
}

const cupedMetrics = `
[metrics.orders]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "14d"]
covariate = { window = ["-28d", "0d"] }

[metrics.spend]
role = "secondary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "14d"]
covariate = { metric = "orders", window = ["-28d", "0d"] }

[metrics.buyer]
role = "secondary"
kind = "proportion"
source = "events"
window = ["0d", "14d"]
covariate = { window = ["-28d", "0d"] }

[metrics.aov]
role = "secondary"
kind = "ratio"
window = ["0d", "14d"]
numerator = { source = "events", kind = "sum", value = "w" }
denominator = { source = "events", kind = "count" }
covariate = { window = ["-28d", "0d"] }
`

// cupedUnitsSQL pulls one row per unit with hand-written SQL: the trigger
// is the first exposure, Y-values are counted in [trigger, trigger + 14d),
// X-values in [trigger − 28d, trigger), and a unit is mature when its
// 14-day window has elapsed by the analysis end.
const cupedUnitsSQL = `
CREATE TABLE units AS
WITH trig AS (
  SELECT unit_id, min(variant) AS variant, min(exposed_at) AS t
  FROM read_parquet('exposures.parquet') GROUP BY unit_id
)
SELECT tr.unit_id, tr.variant,
  CASE WHEN tr.variant = 'treatment' THEN 1.0::DOUBLE ELSE 0.0::DOUBLE END AS treat,
  count(e.happened_at) FILTER (WHERE e.happened_at >= tr.t AND e.happened_at < tr.t + INTERVAL 14 DAY)::DOUBLE AS y_cnt,
  coalesce(sum(e.w) FILTER (WHERE e.happened_at >= tr.t AND e.happened_at < tr.t + INTERVAL 14 DAY), 0) AS y_sum,
  count(e.happened_at) FILTER (WHERE e.happened_at >= tr.t - INTERVAL 28 DAY AND e.happened_at < tr.t)::DOUBLE AS x_cnt,
  coalesce(sum(e.w) FILTER (WHERE e.happened_at >= tr.t - INTERVAL 28 DAY AND e.happened_at < tr.t), 0) AS x_sum
FROM trig AS tr LEFT JOIN read_parquet('events.parquet') AS e ON e.unit_id = tr.unit_id
WHERE tr.t + INTERVAL 14 DAY <= TIMESTAMP '2026-04-13 00:00:00'
GROUP BY tr.unit_id, tr.variant, tr.t
ORDER BY tr.unit_id`

// cupedUnit is one mature unit's values.
type cupedUnit struct {
	treat                  float64
	yCnt, ySum, xCnt, xSum float64
	yBuy, xBuy             float64 // indicators count > 0
	variant                string
}

// cupedCase is one metric's per-unit outcome y and covariate x.
type cupedCase struct {
	metric string
	y, x   func(u cupedUnit) float64
	source string // where the covariate comes from, for messages
}

func TestCUPED(t *testing.T) {
	dir := t.TempDir()
	cupedFixture(t, dir, 3000, 20260302)
	spec := writeText(t, dir, "spec.toml", spec3{EventCols: []string{"w"}, Metrics: cupedMetrics}.toml())
	rep := mustRun3(t, spec)

	db := dirDB(t, dir)
	if _, err := db.Exec(cupedUnitsSQL); err != nil {
		t.Fatalf("hand-written per-unit SQL: %v", err)
	}
	var units []cupedUnit
	for _, m := range queryMaps(t, db, "SELECT * FROM units ORDER BY unit_id") {
		u := cupedUnit{treat: toFloat(t, m["treat"]), yCnt: toFloat(t, m["y_cnt"]), ySum: toFloat(t, m["y_sum"]),
			xCnt: toFloat(t, m["x_cnt"]), xSum: toFloat(t, m["x_sum"]), variant: m["variant"].(string)}
		if u.yCnt > 0 {
			u.yBuy = 1
		}
		if u.xCnt > 0 {
			u.xBuy = 1
		}
		units = append(units, u)
	}
	if len(units) < 2000 {
		t.Fatalf("fixture: %d mature units, want about 2400", len(units))
	}

	cases := []cupedCase{
		{"orders", func(u cupedUnit) float64 { return u.yCnt }, func(u cupedUnit) float64 { return u.xCnt }, "own count before the trigger"},
		{"spend", func(u cupedUnit) float64 { return u.ySum }, func(u cupedUnit) float64 { return u.xCnt }, "metric orders before the trigger"},
		{"buyer", func(u cupedUnit) float64 { return u.yBuy }, func(u cupedUnit) float64 { return u.xBuy }, "own indicator before the trigger"},
	}
	for _, tc := range cases {
		t.Run(tc.metric, func(t *testing.T) {
			m := rep.metric(t, tc.metric)
			c := m.cmp(t, "treatment")
			if c.CUPED == nil || m.Covariate == nil {
				t.Fatalf("metric %s: no cuped block or covariate in the report", tc.metric)
			}
			checkMeanCUPED(t, db, m, c, units, tc)
		})
	}
	t.Run("aov ratio", func(t *testing.T) {
		m := rep.metric(t, "aov")
		c := m.cmp(t, "treatment")
		if c.CUPED == nil {
			t.Fatal("metric aov: no cuped block")
		}
		checkRatioCUPED(t, m, c, units)
	})
	t.Run("covariate metadata", func(t *testing.T) {
		for _, w := range []struct{ metric, of string }{{"orders", "orders"}, {"spend", "orders"}, {"buyer", "buyer"}, {"aov", "aov"}} {
			m := rep.metric(t, w.metric)
			if m.Covariate == nil || m.Covariate.Metric != w.of || m.Covariate.Window != [2]string{"-28d", "0d"} {
				t.Errorf("%s covariate: got %+v, want metric %s window [-28d 0d] (Source: the spec)", w.metric, m.Covariate, w.of)
			}
		}
	})
}

// checkMeanCUPED compares a mean or proportion metric's CUPED output with
// the ANCOVA regression over the per-unit rows.
func checkMeanCUPED(t *testing.T, db *sql.DB, m *metric3, c *cmp3, units []cupedUnit, tc cupedCase) {
	n := len(units)
	X := make([][]float64, n)
	y := make([]float64, n)
	var yb, xb, yt, xt, xAll []float64
	for i, u := range units {
		yy, xx := tc.y(u), tc.x(u)
		X[i] = []float64{1, u.treat, xx}
		y[i] = yy
		xAll = append(xAll, xx)
		if u.treat == 1 {
			yt, xt = append(yt, yy), append(xt, xx)
		} else {
			yb, xb = append(yb, yy), append(xb, xx)
		}
	}
	beta := olsQR(t, X, y) // Source: gonum/mat QR least squares of Y on (1, treatment, X)

	// Source: DuckDB regr_slope of within-variant-centred Y on
	// within-variant-centred X, over the hand-written per-unit table.
	yExpr := map[string]string{"orders": "y_cnt", "spend": "y_sum", "buyer": "(y_cnt > 0)::DOUBLE"}[tc.metric]
	xExpr := map[string]string{"orders": "x_cnt", "spend": "x_cnt", "buyer": "(x_cnt > 0)::DOUBLE"}[tc.metric]
	q := fmt.Sprintf(`SELECT regr_slope(yc, xc) AS slope FROM (
		SELECT %[1]s - avg(%[1]s) OVER (PARTITION BY variant) AS yc,
		       %[2]s - avg(%[2]s) OVER (PARTITION BY variant) AS xc FROM units)`, yExpr, xExpr)
	slope := toFloat(t, queryMaps(t, db, q)[0]["slope"])

	theta := f(c.CUPED.Theta)
	// Adjusted per-unit values Y − θX, with θ from the regression.
	th := beta[2]
	var rb, rt []float64
	for i := range yb {
		rb = append(rb, yb[i]-th*xb[i])
	}
	for i := range yt {
		rt = append(rt, yt[i]-th*xt[i])
	}
	nb, nt := float64(len(yb)), float64(len(yt))
	sb2, st2 := stat.Variance(rb, nil), stat.Variance(rt, nil)
	seKnown, df := welchRef(sb2, nb, st2, nt)
	// θ is estimated: the pooled within-variant slope has the sandwich
	// variance Var(θ̂) = (s²_b·Sxx_b + s²_t·Sxx_t)/(Sxx_b + Sxx_t)², with
	// Sxx the within-variant sums of squares of X and s² the variances of
	// Y − θX (White 1980, heteroskedasticity-consistent form), and the
	// adjusted difference moves by θ̂·(X̄_t − X̄_b), adding
	// (X̄_t − X̄_b)²·Var(θ̂) (delta method).
	sxb, sxt := (nb-1)*stat.Variance(xb, nil), (nt-1)*stat.Variance(xt, nil)
	vTheta := (sb2*sxb + st2*sxt) / ((sxb + sxt) * (sxb + sxt))
	dx := stat.Mean(xt, nil) - stat.Mean(xb, nil)
	se := math.Sqrt(seKnown*seKnown + dx*dx*vTheta)
	seU, _ := welchRef(stat.Variance(yb, nil), nb, stat.Variance(yt, nil), nt)
	seUSource := "gonum/stat variances of Y per variant, Welch SE"
	if tc.metric == "buyer" {
		// A proportion's plain comparison is the unpooled Wald interval
		// (README, Statistics): SE² = p_b(1−p_b)/n_b + p_t(1−p_t)/n_t.
		pb, pt := stat.Mean(yb, nil), stat.Mean(yt, nil)
		seU = math.Sqrt(pb*(1-pb)/nb + pt*(1-pt)/nt)
		seUSource = "unpooled Wald SE of two proportions from gonum/stat means"
	}
	diff := beta[1]
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(0.975)
	muX := stat.Mean(xAll, nil)
	seAdj := f(c.StdError)
	seUnadj := f(c.CUPED.Unadjusted.StdError)
	base, treat := variantOf(t, m.Variants, "control"), variantOf(t, m.Variants, "treatment")

	runChecks(t, []check3{
		{"theta = regr_slope", theta, slope, 1e-9, "DuckDB regr_slope, within-variant centred"},
		{"theta = OLS coefficient of X", theta, beta[2], 1e-9, "gonum/mat QR, Y ~ 1 + treatment + X"},
		{"adjusted difference = ANCOVA treatment coefficient", f(c.Difference), diff, 1e-9, "gonum/mat QR, Y ~ 1 + treatment + X"},
		{"variance_reduction = 1 − SE²adj/SE²unadj", f(c.CUPED.VarianceReduction), 1 - seAdj*seAdj/(seUnadj*seUnadj), 1e-9, "formula over the report's own standard errors"},
		{"adjusted std_error", seAdj, se, 1e-9, "gonum/stat variances of Y − θX per variant, Welch SE, plus (X̄_t − X̄_b)²·Var(θ̂) (sandwich)"},
		{"unadjusted std_error", seUnadj, seU, 1e-9, seUSource},
		{"unadjusted difference", f(c.CUPED.Unadjusted.Difference), stat.Mean(yt, nil) - stat.Mean(yb, nil), 1e-9, "gonum/stat means of Y"},
		{"df", f(c.DF), df, 1e-9, "Welch–Satterthwaite over the adjusted variances"},
		{"p_value", f(c.PValue), tTwoSided(diff/se, df), 1e-9, "distuv.StudentsT survival, two-sided"},
		{"ci_low", f(c.CILow), diff - tq*se, 1e-9, "distuv.StudentsT quantile 0.975"},
		{"ci_high", f(c.CIHigh), diff + tq*se, 1e-9, "distuv.StudentsT quantile 0.975"},
		{"covariate_mean", f(c.CUPED.CovariateMean), muX, 1e-9, "gonum/stat mean of X over all mature units"},
		{"cuped baseline_value", f(c.CUPED.BaselineValue), stat.Mean(yb, nil) - th*(stat.Mean(xb, nil)-muX), 1e-9, "Ȳ − θ(X̄ − μX), gonum/stat"},
		{"cuped variant_value", f(c.CUPED.VariantValue), stat.Mean(yt, nil) - th*(stat.Mean(xt, nil)-muX), 1e-9, "Ȳ − θ(X̄ − μX), gonum/stat"},
		// Per arm, θ̂ and μ̂X are estimated too: Var = s²/n + e²·Var(θ̂) +
		// θ²·Var(μ̂X) + 2θ·Cov(Y − θX, X)/N, e = X̄ − μ̂X, Var(μ̂X) =
		// (n_b·s²x_b + n_t·s²x_t)/N² (delta method over the three
		// estimates).
		{"cuped variant_std_error", f(c.CUPED.VariantStdError), math.Sqrt(st2/nt + math.Pow(stat.Mean(xt, nil)-muX, 2)*vTheta +
			th*th*(nb*stat.Variance(xb, nil)+nt*stat.Variance(xt, nil))/((nb+nt)*(nb+nt)) +
			2*th*(stat.Covariance(yt, xt, nil)-th*stat.Variance(xt, nil))/(nb+nt)), 1e-9, "delta method over θ̂, μ̂X and the arm mean, gonum/stat"},
	})
	if c.Method != "cuped-welch-t" {
		t.Errorf("method: got %q, want %q", c.Method, "cuped-welch-t")
	}
	if !(f(c.CUPED.VarianceReduction) > 0.05) {
		t.Errorf("variance_reduction: got %v, want > 0.05 (the fixture's pre and post counts share each unit's rate)", f(c.CUPED.VarianceReduction))
	}
	if base.N+treat.N != int64(len(units)) {
		t.Errorf("n control + treatment: got %v, want %v (Source: hand-written SQL, mature units)", base.N+treat.N, len(units))
	}
}

// checkRatioCUPED compares the ratio metric's CUPED output with the
// regression of the linearised ratio l_i = (num_i − R_g·den_i)/D̄_g on the
// covariate x_i (the unit's pre-trigger numerator) within variants.
func checkRatioCUPED(t *testing.T, m *metric3, c *cmp3, units []cupedUnit) {
	type grp struct{ num, den, x []float64 }
	g := map[float64]*grp{0: {}, 1: {}}
	var xAll []float64
	for _, u := range units {
		gg := g[u.treat]
		gg.num, gg.den, gg.x = append(gg.num, u.ySum), append(gg.den, u.yCnt), append(gg.x, u.xSum)
		xAll = append(xAll, u.xSum)
	}
	var X [][]float64
	var l []float64
	lin := map[float64][]float64{}
	R := map[float64]float64{}
	for _, tr := range []float64{0, 1} {
		gg := g[tr]
		mn, md := stat.Mean(gg.num, nil), stat.Mean(gg.den, nil)
		R[tr] = mn / md
		for i := range gg.num {
			li := (gg.num[i] - R[tr]*gg.den[i]) / md
			lin[tr] = append(lin[tr], li)
			l = append(l, li)
			X = append(X, []float64{1, tr, gg.x[i]})
		}
	}
	beta := olsQR(t, X, l) // Source: gonum/mat QR, l ~ 1 + treatment + x
	th := beta[2]
	var vr [2]float64
	var ns [2]float64
	for _, tr := range []float64{0, 1} {
		var res []float64
		for i, li := range lin[tr] {
			res = append(res, li-th*g[tr].x[i])
		}
		vr[int(tr)] = stat.Variance(res, nil)
		ns[int(tr)] = float64(len(res))
	}
	// θ is estimated: sandwich variance of the pooled slope and the delta
	// method for its effect on the difference, as in checkMeanCUPED.
	sx0, sx1 := (ns[0]-1)*stat.Variance(g[0].x, nil), (ns[1]-1)*stat.Variance(g[1].x, nil)
	vTheta := (vr[0]*sx0 + vr[1]*sx1) / ((sx0 + sx1) * (sx0 + sx1))
	dx := stat.Mean(g[1].x, nil) - stat.Mean(g[0].x, nil)
	se := math.Sqrt(vr[0]/ns[0] + vr[1]/ns[1] + dx*dx*vTheta)
	diff := (R[1] - R[0]) - th*dx
	z := distuv.UnitNormal.Quantile(0.975)
	seUnadj := f(c.CUPED.Unadjusted.StdError)
	runChecks(t, []check3{
		{"theta = within-variant OLS slope of l on x", f(c.CUPED.Theta), th, 1e-9, "gonum/mat QR of the linearised ratio on (1, treatment, x)"},
		{"adjusted difference", f(c.Difference), diff, 1e-9, "(R_t − R_b) − θ(x̄_t − x̄_b), gonum/stat"},
		{"adjusted std_error", f(c.StdError), se, 1e-9, "gonum/stat variances of l − θx per variant, plus (x̄_t − x̄_b)²·Var(θ̂) (sandwich)"},
		{"p_value", f(c.PValue), normTwoSided(diff / se), 1e-9, "distuv.UnitNormal, two-sided"},
		{"ci_low", f(c.CILow), diff - z*se, 1e-9, "distuv.UnitNormal quantile 0.975"},
		{"unadjusted difference", f(c.CUPED.Unadjusted.Difference), R[1] - R[0], 1e-9, "ratio of gonum/stat means"},
		{"variance_reduction = 1 − SE²adj/SE²unadj", f(c.CUPED.VarianceReduction), 1 - f(c.StdError)*f(c.StdError)/(seUnadj*seUnadj), 1e-9, "formula over the report's own standard errors"},
		{"covariate_mean", f(c.CUPED.CovariateMean), stat.Mean(xAll, nil), 1e-9, "gonum/stat mean of x over mature units"},
	})
	if c.Method != "cuped-delta-method-z" {
		t.Errorf("method: got %q, want %q", c.Method, "cuped-delta-method-z")
	}
}

// TestCUPEDCovariateAfterTrigger: a covariate window that ends after the
// trigger reads post-exposure data and must be rejected by `assay check`.
func TestCUPEDCovariateAfterTrigger(t *testing.T) {
	cases := []struct {
		name, covariate string
		code            int
		wantCode        string // diagnostic code expected on stderr, "" for none
	}{
		{"own window ends at 1d", `{ window = ["-28d", "1d"] }`, 1, "after-trigger"},
		{"other metric, window ends at 2h", `{ metric = "spend", window = ["-7d", "2h"] }`, 1, "after-trigger"},
		{"window ends at 0d is fine", `{ window = ["-28d", "0d"] }`, 0, ""},
		{"window ends before the trigger is fine", `{ window = ["-28d", "-1d"] }`, 0, ""},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			metricsText := fmt.Sprintf(`
[metrics.orders]
role = "primary"
kind = "count"
source = "events"
window = ["0d", "14d"]
covariate = %s

[metrics.spend]
role = "secondary"
kind = "sum"
source = "events"
value = "w"
window = ["0d", "14d"]
`, tc.covariate)
			text := spec3{EventCols: []string{"w"}, Metrics: metricsText}.toml()
			spec := writeText(t, dir, "spec.toml", text)
			code, _, errs := runCLI("check", spec)
			if code != tc.code {
				t.Errorf("exit code: got %v, want %v\n%s", code, tc.code, errs)
			}
			if tc.wantCode == "" {
				return
			}
			if !strings.Contains(errs, "["+tc.wantCode+"]") {
				t.Errorf("diagnostic code: got stderr %q, want it to contain [%s]", errs, tc.wantCode)
			}
			// The diagnostic points at the covariate line (Source: the spec text written above).
			line := 0
			for i, l := range strings.Split(text, "\n") {
				if strings.HasPrefix(l, "covariate = ") {
					line = i + 1
				}
			}
			if want := fmt.Sprintf("spec.toml:%d:", line); !strings.Contains(errs, want) {
				t.Errorf("diagnostic position: got stderr %q, want it to contain %q", errs, want)
			}
		})
	}
}
