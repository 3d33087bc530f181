package compiler

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/assay-dev/assay/dialects"
	"github.com/assay-dev/assay/metrics"
)

// The final aggregate: caps, breakdown keys, centres and the statistics
// columns of Plan.Columns, grouped by variant and each breakdown.

// value renders a unit's (possibly capped) value of aggregate a, NULL when
// the unit is not mature for the metric.
func (pr *printer) value(mp *MetricPlan, a *AggPlan) string {
	v := "u." + pr.id(a.Col)
	switch {
	case a.IsBucket(): // bucket values are not capped
	case a.Agg.HasCap:
		v = pr.d.Least(v, strconv.FormatFloat(a.Agg.Cap, 'g', -1, 64))
	case a.Agg.CapQuantile > 0:
		v = pr.d.Least(v, "k."+pr.id(pr.capCol(a)))
	}
	return "CASE WHEN u." + mp.Mature + " THEN " + pr.d.Double(v) + " END"
}

// Centring. Each value in Plan.Centres is shifted by its mean over the
// units of its group (per variant; pooled in calibration, whose groups mix
// the original variants) before the variance and covariance aggregates.
// Shifting by a constant leaves variances and covariances unchanged,
// Var(x − c) = Var(x), and keeps the engine's partial sums small, so the
// result does not depend on how the engine splits and merges the work
// (Chan, Golub & LeVeque 1983, "Algorithms for computing the sample
// variance: analysis and recommendations", The American Statistician 37,
// on shifted data). Centring within each variant keeps one arm's magnitude
// from costing another arm its precision.

// rawValue is a's per-unit value as aggregated, before centring.
func (pr *printer) rawValue(mp *MetricPlan, a *AggPlan) string {
	if a == mp.Cov {
		return pr.covValue(mp)
	}
	return pr.value(mp, a)
}

// centred renders a's value minus its pooled centre (or the 0/1
// indicator of a proportion covariate, which is not centred).
func (pr *printer) centred(a *AggPlan) string {
	mp := a.Metric
	if a.Centre == "" {
		return pr.rawValue(mp, a)
	}
	return "(" + pr.rawValue(mp, a) + " - c0." + pr.id(a.Centre) + ")"
}

// mean renders the mean of a's value as centre + mean of the centred
// value; a group whose values are all equal gets that value exactly (so an
// all-zero baseline is exactly zero).
func (pr *printer) mean(a *AggPlan) string {
	mp := a.Metric
	if a.Centre == "" {
		return "avg(" + pr.rawValue(mp, a) + ")"
	}
	raw := pr.rawValue(mp, a)
	return "CASE WHEN min(" + raw + ") = max(" + raw + ") THEN min(" + raw + ") ELSE min(c0." + pr.id(a.Centre) + ") + avg(" + pr.centred(a) + ") END"
}

// covValue renders a unit's covariate, NULL when the unit is not mature for
// the metric (so Y and X are aggregated over the same units).
func (pr *printer) covValue(mp *MetricPlan) string {
	c := mp.M.Covariate
	v := "u." + pr.id(mp.Cov.Col)
	if c.Indicator {
		return fmt.Sprintf("CASE WHEN u.%s THEN %s END", mp.Mature, pr.d.OneZero(v+" > "+strconv.FormatFloat(c.Above, 'g', -1, 64)))
	}
	return "CASE WHEN u." + mp.Mature + " THEN " + pr.d.Double(v) + " END"
}

// bucketValue renders a unit's value in bucket a: the centred value, or
// the 0/1 indicator of a proportion metric.
func (pr *printer) bucketValue(mp *MetricPlan, a *AggPlan) string {
	if mp.M.Kind == metrics.KindProportion {
		return fmt.Sprintf("CASE WHEN u.%s THEN %s END", mp.Mature, pr.d.OneZero("u."+pr.id(a.Col)+" > "+strconv.FormatFloat(mp.M.Above, 'g', -1, 64)))
	}
	return pr.centred(a)
}

// trendText spells mp's trend contrast, e.g. "-1·b1 + 1·b2".
func trendText(mp *MetricPlan) string {
	var parts []string
	for b, w := range mp.TrendWeights {
		parts = append(parts, fmt.Sprintf("%+d·b%d", w, b+1))
	}
	return strings.Join(parts, " ")
}

func (pr *printer) indicator(mp *MetricPlan) string {
	return fmt.Sprintf("CASE WHEN u.%s THEN %s END", mp.Mature, pr.d.OneZero("u."+pr.id(mp.Value.Col)+" > "+strconv.FormatFloat(mp.M.Above, 'g', -1, 64)))
}

// Groupings a main query returns: every grouping (GROUPING SETS), the
// overall rows only, or (a GroupBy index) one breakdown only.
const (
	allGroupings = -2
	overallOnly  = -1
)

// main prints a main query returning grouping (allGroupings, overallOnly
// or the index of one breakdown).
func (pr *printer) main(grouping int) (string, error) {
	p := pr.p
	pr.b.Reset()
	switch {
	case grouping >= 0:
		pr.header("per-variant statistics by " + p.GroupBy[grouping].Label())
		pr.line(0, "-- This engine has no GROUPING SETS: each breakdown is a query of its own, with the same columns.")
	case grouping == overallOnly && len(p.GroupBy) > 0:
		pr.header("per-variant statistics (overall)")
		pr.line(0, "-- This engine has no GROUPING SETS: each breakdown is a query of its own, with the same columns.")
	default:
		pr.header("per-variant statistics")
	}
	if pr.stage != nil {
		pr.line(0, "-- Reads the cohort table of the setup statement.")
		pr.line(0, "WITH")
		pr.stagedCohort()
	} else {
		pr.cohort()
	}
	pr.eligible()
	pr.passes()
	var segKeys []GroupKey
	for i, g := range p.GroupBy {
		if g.Segment != nil && (grouping == allGroupings || grouping == i) {
			segKeys = append(segKeys, g)
		}
	}
	cents := len(p.Centres) > 0
	pr.units(p.HasCapQuant || len(segKeys) > 0 || cents)
	if p.HasCapQuant {
		pr.line(0, "-- Winsorising caps: pooled quantiles over mature units of all variants.")
		pr.line(0, "caps AS (")
		pr.line(1, "SELECT")
		var cs []string
		for _, mp := range p.Metrics {
			for _, a := range []*AggPlan{mp.Value, mp.Num, mp.Den} {
				if a != nil && a.Agg.CapQuantile > 0 {
					cs = append(cs, fmt.Sprintf("%s AS %s", pr.d.Quantile("CASE WHEN u."+mp.Mature+" THEN "+pr.d.Double("u."+pr.id(a.Col))+" END", a.Agg.CapQuantile), pr.id(pr.capCol(a))))
				}
			}
		}
		for i, c := range cs {
			pr.line(2, "%s%s", c, commaIf(i < len(cs)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		pr.line(0, ")%s", commaIf(len(segKeys) > 0 || cents))
	}
	keyExpr := map[string]string{}
	for _, g := range segKeys {
		col := "u." + pr.id(g.Name)
		txt := pr.d.Text(col)
		pr.line(0, "-- Segment %s: the %d values with the most eligible units; the rest are grouped as '(other)'.", oneLine(g.Segment.Name), g.Segment.TopK)
		pr.line(0, "%s AS (", pr.id("top_"+g.Segment.Name))
		pr.line(1, "SELECT g.value, row_number() OVER (ORDER BY g.units DESC, g.value) AS value_rank")
		pr.line(1, "FROM (")
		pr.line(2, "SELECT %s AS value, count(*) AS units", txt)
		pr.line(2, "FROM unit_values AS u")
		pr.line(2, "WHERE %s IS NOT NULL", col)
		pr.line(2, "GROUP BY %s", txt)
		pr.line(1, ") AS g")
		pr.line(0, "),")
		keyExpr[g.Name] = "u." + pr.id("key_"+g.Name)
	}
	from := "unit_values"
	if len(segKeys) > 0 {
		// The grouping keys are plain columns of their own CTE, so engines
		// that insist on grouping by selected columns accept the query.
		from = "keyed_units"
		pr.line(0, "-- Each unit's segment keys: one of the top values, '(other)' for the rest, '(null)' when missing.")
		pr.line(0, "keyed_units AS (")
		pr.line(1, "SELECT")
		pr.line(2, "u.*,")
		for i, g := range segKeys {
			col := "u." + pr.id(g.Name)
			alias := fmt.Sprintf("k%d", i+1)
			pr.line(2, "CASE WHEN %s IS NULL THEN %s WHEN %s.value_rank <= %d THEN %s.value ELSE %s END AS %s%s", col, pr.d.Literal("(null)"), alias, g.Segment.TopK, alias, pr.d.Literal("(other)"), pr.id("key_"+g.Name), commaIf(i < len(segKeys)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		for i, g := range segKeys {
			alias := fmt.Sprintf("k%d", i+1)
			pr.line(1, "LEFT JOIN %s AS %s ON %s.value = %s", pr.id("top_"+g.Segment.Name), alias, alias, pr.d.Text("u."+pr.id(g.Name)))
		}
		pr.line(0, ")%s", commaIf(cents))
	}
	if cents {
		if p.CentrePerGroup {
			pr.line(0, "-- Centres: each variant's means, subtracted before the variance and covariance aggregates so")
			pr.line(0, "-- their partial sums stay small (numerically stable whatever the engine's merge order).")
		} else {
			pr.line(0, "-- Centres: pooled means (calibration groups mix the variants), subtracted before the variance")
			pr.line(0, "-- and covariance aggregates so their partial sums stay small.")
		}
		pr.line(0, "centres AS (")
		pr.line(1, "SELECT")
		if p.CentrePerGroup {
			pr.line(2, "u.variant,")
		}
		for i, a := range p.Centres {
			pr.line(2, "avg(%s) AS %s%s", pr.rawValue(a.Metric, a), pr.id(a.Centre), commaIf(i < len(p.Centres)-1))
		}
		pr.line(1, "FROM unit_values AS u")
		if p.HasCapQuant {
			pr.line(1, "CROSS JOIN caps AS k")
		}
		if p.CentrePerGroup {
			pr.line(1, "GROUP BY u.variant")
		}
		pr.line(0, ")")
	}

	variantExpr := "u.variant"
	keys := []string{"u.variant"}
	if p.Splits > 0 {
		rs, ok := pr.d.(dialects.Resplitter)
		if !ok {
			return "", fmt.Errorf("dialect %s cannot re-split units for calibration", pr.d.Name())
		}
		h := rs.Uniform("u.unit_id", "z.split", p.Salt)
		var b strings.Builder
		b.WriteString("CASE")
		cum := 0.0
		for i, v := range p.Variants {
			cum += p.Weights[i]
			if i == len(p.Variants)-1 {
				fmt.Fprintf(&b, " ELSE %s END", pr.d.Literal(v))
				break
			}
			fmt.Fprintf(&b, " WHEN %s < %s THEN %s", h, strconv.FormatFloat(cum, 'g', -1, 64), pr.d.Literal(v))
		}
		variantExpr = b.String()
		keys = []string{"z.split", variantExpr}
	}
	groupExpr := map[string]string{}
	for _, g := range p.GroupBy {
		if g.Day {
			groupExpr[g.Name] = "u.trigger_day"
		} else if g.Step {
			groupExpr[g.Name] = pr.stepCase("u.trigger_us") // rollout.go
		} else {
			groupExpr[g.Name] = keyExpr[g.Name]
		}
	}
	// selectList prints the SELECT list and FROM clause. Key columns hold
	// their expression when only is "*" (GROUPING SETS: the engine NULLs the
	// keys outside each grouping) or the key's name, and NULL otherwise.
	selectList := func(only string) {
		for _, c := range p.Columns {
			switch c.Role {
			case RoleSpecFingerprint:
				pr.line(1, "%s AS %s,", pr.d.Literal(p.Spec.Fingerprint), pr.id(c.Name))
			case RoleOptions:
				pr.line(1, "%s AS %s,", pr.d.Literal(p.Options.Text()), pr.id(c.Name))
			case RoleSplit:
				pr.line(1, "-- Calibration: each eligible unit is re-assigned at random in each of %d splits (salt %d), with the planned weights.", p.Splits, p.Salt)
				pr.line(1, "z.split AS %s,", pr.id(c.Name))
			case RoleVariant:
				pr.line(1, "%s AS %s,", variantExpr, pr.id(c.Name))
			case RoleKey:
				e := groupExpr[c.Name]
				if only != "*" && only != c.Name {
					e = "NULL"
				}
				pr.line(1, "%s AS %s,", e, pr.id(c.Name))
			case RoleUnits:
				pr.line(1, "count(*) AS %s%s", pr.id(c.Name), commaIf(len(p.Metrics) > 0))
			}
		}
		for i, mp := range p.Metrics {
			pr.metricStats(mp, i == len(p.Metrics)-1)
		}
		pr.line(0, "FROM %s AS u", from)
		if p.HasCapQuant {
			pr.line(0, "CROSS JOIN caps AS k")
		}
		if cents {
			if p.CentrePerGroup {
				pr.line(0, "JOIN centres AS c0 ON c0.variant = u.variant")
			} else {
				pr.line(0, "CROSS JOIN centres AS c0")
			}
		}
		if p.Splits > 0 {
			pr.line(0, "CROSS JOIN %s", pr.d.(dialects.Resplitter).Splits(p.Splits))
		}
	}
	order := []string{pr.id(ColVariant)}
	if p.Splits > 0 {
		order = []string{pr.id(ColSplit), pr.id(ColVariant)}
	}
	for _, g := range p.GroupBy {
		order = append(order, pr.id(g.Name))
	}
	switch {
	case grouping == allGroupings && len(p.GroupBy) > 0:
		pr.line(0, "-- The overall rows and one set of rows per breakdown, from one pass over the units: in each")
		pr.line(0, "-- grouping the keys it does not use are NULL.")
		pr.line(0, "SELECT")
		selectList("*")
		sets := []string{"(" + strings.Join(keys, ", ") + ")"}
		for _, g := range p.GroupBy {
			sets = append(sets, "("+strings.Join(append(append([]string{}, keys...), groupExpr[g.Name]), ", ")+")")
		}
		pr.line(0, "GROUP BY GROUPING SETS (%s)", strings.Join(sets, ", "))
	case grouping >= 0:
		g := p.GroupBy[grouping]
		pr.line(0, "SELECT")
		selectList(g.Name)
		pr.line(0, "GROUP BY %s", strings.Join(append(append([]string{}, keys...), groupExpr[g.Name]), ", "))
	default:
		pr.line(0, "SELECT")
		selectList("")
		pr.line(0, "GROUP BY %s", strings.Join(keys, ", "))
	}
	pr.line(0, "ORDER BY %s", strings.Join(order, ", "))
	return pr.b.String(), pr.err
}

// metricStats prints the statistics columns of mp, in the order of
// mp.Stats.
func (pr *printer) metricStats(mp *MetricPlan, last bool) {
	m := mp.M
	pr.line(1, "-- %s (%s, %s): %s", oneLine(m.Name), m.Role, m.Kind, mp.Rule)
	var y, num, den, x string
	switch m.Kind {
	case metrics.KindRatio:
		num, den = pr.centred(mp.Num), pr.centred(mp.Den)
	case metrics.KindProportion:
		y = pr.indicator(mp)
	default:
		y = pr.centred(mp.Value)
	}
	if mp.Cov != nil {
		x = pr.centred(mp.Cov)
	}
	for j, st := range mp.Stats {
		var e string
		switch st {
		case StatN:
			e = "count(CASE WHEN u." + mp.Mature + " THEN 1 END)"
		case StatNumMean:
			e = pr.mean(mp.Num)
		case StatDenMean:
			e = pr.mean(mp.Den)
		case StatNumVar:
			e = pr.d.VarSamp(num)
		case StatDenVar:
			e = pr.d.VarSamp(den)
		case StatCov:
			e = pr.d.CovarSamp(num, den)
		case StatNonFinite:
			var bad []string
			for _, a := range mp.NonFinite {
				bad = append(bad, "u."+pr.id(a.Col+"__nonfinite"))
			}
			e = "sum(" + strings.Join(bad, " + ") + ")"
		case StatMean:
			if m.Kind == metrics.KindProportion {
				e = "avg(" + y + ")"
			} else {
				e = pr.mean(mp.Value)
			}
		case StatVar:
			e = pr.d.VarSamp(y)
		case StatXMean:
			pr.line(1, "-- %s covariate: %s", oneLine(m.Name), mp.CovRule)
			e = pr.mean(mp.Cov)
		case StatXVar:
			e = pr.d.VarSamp(x)
		case StatYXCov:
			e = pr.d.CovarSamp(y, x)
		case StatNumXCov:
			e = pr.d.CovarSamp(num, x)
		case StatDenXCov:
			e = pr.d.CovarSamp(den, x)
		case StatTrendVar:
			// L = Σ_b w_b·y_b over the centred bucket values: centring
			// shifts L by a constant, which leaves its variance unchanged.
			var terms []string
			for b, a := range mp.Buckets {
				terms = append(terms, fmt.Sprintf("%d * %s", mp.TrendWeights[b], pr.bucketValue(mp, a)))
			}
			pr.line(1, "-- %s by time since trigger: trend contrast L = %s", oneLine(m.Name), trendText(mp))
			e = pr.d.VarSamp(strings.Join(terms, " + "))
		default:
			b, isMean, ok := mp.bucketStat(st)
			if !ok {
				pr.fail(fmt.Errorf("compiler: no SQL for statistic %s", st))
				break
			}
			a := mp.Buckets[b]
			if b == 0 && isMean {
				pr.line(1, "-- %s by time since trigger: %d buckets of %s, each in [trigger %s, trigger %s) …", oneLine(m.Name), len(mp.Buckets), m.Bucket.Text, signed(a.From), signed(a.To))
			}
			switch {
			case !isMean:
				e = pr.d.VarSamp(pr.bucketValue(mp, a))
			case m.Kind == metrics.KindProportion:
				e = "avg(" + pr.bucketValue(mp, a) + ")"
			default:
				e = pr.mean(a)
			}
		}
		pr.line(1, "%s AS %s%s", e, pr.id(mp.Column(st)), commaIf(j < len(mp.Stats)-1 || !last))
	}
}
