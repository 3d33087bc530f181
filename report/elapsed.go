package report

import (
	"fmt"
	"math"
	"strings"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// Effect by time since the trigger. For every metric whose spec sets
// buckets, the outcome window is split into consecutive buckets (from the
// same outcome pass as the metric) and the report shows each bucket's
// difference and a trend test (stats.ElapsedTrend) that flags an effect
// that fades (novelty) or grows (learning) with time since the trigger.

// ElapsedEffect is one metric's effect of one arm by time since the
// trigger.
type ElapsedEffect struct {
	Metric   string `json:"metric"`
	Variant  string `json:"variant"`
	Baseline string `json:"baseline"`
	// BucketLength is the length of each bucket, as the spec writes it.
	BucketLength string          `json:"bucket_length"`
	Buckets      []ElapsedBucket `json:"buckets"`
	// Slope is the change of the difference per bucket (least-squares
	// slope of the bucket differences on the bucket number), from the
	// per-unit linear trend contrast; PValue tests it against zero.
	Slope         Num `json:"slope"`
	SlopeStdError Num `json:"slope_std_error"`
	SlopeCILow    Num `json:"slope_ci_low"`
	SlopeCIHigh   Num `json:"slope_ci_high"`
	PValue        Num `json:"p_value"`
	// Alpha is the level below which the trend is flagged: 1 − confidence
	// divided by the number of trend tests in the report (Bonferroni).
	Alpha float64 `json:"alpha"`
	// SlopeLevel is the confidence level of the slope's interval, 1 − Alpha,
	// so the interval excludes zero exactly when the trend is flagged.
	SlopeLevel float64 `json:"slope_level"`
	// Trend is "fading", "growing" or "changing" when flagged, else "".
	Trend  string `json:"trend"`
	Method string `json:"method"`
	Reason string `json:"reason,omitempty"`
}

// ElapsedBucket is one bucket's comparison.
type ElapsedBucket struct {
	From       string `json:"from"` // offset from the trigger, e.g. "7d"
	To         string `json:"to"`
	N          int64  `json:"n"` // baseline units
	NVariant   int64  `json:"n_variant"`
	Baseline   Num    `json:"baseline_value"`
	Value      Num    `json:"value"`
	Difference Num    `json:"difference"`
	CILow      Num    `json:"ci_low"`
	CIHigh     Num    `json:"ci_high"`
	Relative   Num    `json:"relative"`
}

// bucketArm reads one arm's bucket moments of mp from row.
func bucketArm(mp *compiler.MetricPlan, row *results.Row) stats.BucketArm {
	a := stats.BucketArm{TrendVar: math.NaN()}
	if row == nil {
		for range mp.Buckets {
			a.Buckets = append(a.Buckets, stats.Moments{Mean: math.NaN(), Var: math.NaN()})
		}
		return a
	}
	n := row.Stat(mp, compiler.StatN)
	if math.IsNaN(n) {
		n = 0
	}
	for b := range mp.Buckets {
		a.Buckets = append(a.Buckets, stats.Moments{N: n, Mean: row.Stat(mp, compiler.BucketMean(b+1)), Var: row.Stat(mp, compiler.BucketVar(b+1))})
	}
	a.TrendVar = row.Stat(mp, compiler.StatTrendVar)
	return a
}

// elapsedEffects builds the section's entries. With a rollout schedule the
// trend follows the primary comparison's choice: stratified by step, or
// the last step's units only.
func elapsedEffects(p *compiler.Plan, set *results.Set) []ElapsedEffect {
	out := []ElapsedEffect{}
	if len(p.Variants) < 2 || p.Splits > 0 {
		return out
	}
	tests := 0
	for _, mp := range p.Metrics {
		if len(mp.Buckets) > 0 {
			tests += len(p.Variants) - 1
		}
	}
	if tests == 0 {
		return out
	}
	level := p.Spec.Confidence
	alpha := (1 - level) / float64(tests)
	overall := rowsByVariant(set.Overall())
	steps := stepRows(p, set)
	ro := p.Spec.Rollout
	for _, mp := range p.Metrics {
		if len(mp.Buckets) == 0 {
			continue
		}
		w := mp.TrendWeights
		for _, v := range p.Variants[1:] {
			e := ElapsedEffect{Metric: mp.M.Name, Variant: v, Baseline: p.Variants[0], BucketLength: mp.M.Bucket.Text, Alpha: alpha, SlopeLevel: 1 - alpha, Buckets: []ElapsedBucket{}}
			// The strata read: the overall rows, the last step's, or every
			// step's (weighted by its units, as the primary comparison).
			var strata []stats.StratumBuckets
			switch {
			case ro != nil && len(ro.Steps) > 0 && ro.Estimate == metrics.EstimateLastStep:
				last := ro.Steps[len(ro.Steps)-1].Name
				strata = []stats.StratumBuckets{{Base: bucketArm(mp, steps[last][p.Variants[0]]), Treat: bucketArm(mp, steps[last][v])}}
				e.Method = fmt.Sprintf("units triggered in the last rollout step (%s) only; Welch's t on the per-unit linear trend contrast", last)
			case ro != nil && len(ro.Steps) > 0:
				for _, st := range ro.Steps {
					strata = append(strata, stats.StratumBuckets{Base: bucketArm(mp, steps[st.Name][p.Variants[0]]), Treat: bucketArm(mp, steps[st.Name][v])})
				}
				e.Method = "stratified by rollout step, each step weighted by its share of units (normal approximation); the trend from the per-unit linear trend contrast"
			default:
				strata = []stats.StratumBuckets{{Base: bucketArm(mp, overall[p.Variants[0]]), Treat: bucketArm(mp, overall[v])}}
				e.Method = "Welch's t on the per-unit linear trend contrast"
			}
			// The slope's interval is at the flag's level, so it excludes
			// zero exactly when the trend is flagged.
			var tr stats.TrendResult
			if len(strata) == 1 {
				tr = stats.ElapsedTrend(w, strata[0].Base, strata[0].Treat, 1-alpha)
			} else {
				tr = stats.ElapsedTrendStratified(w, strata, 1-alpha)
			}
			e.Slope, e.SlopeStdError, e.SlopeCILow, e.SlopeCIHigh, e.PValue, e.Reason = Num(tr.Slope), Num(tr.StdError), Num(tr.CILow), Num(tr.CIHigh), Num(tr.PValue), tr.Reason
			total := 0.0
			for b, a := range mp.Buckets {
				bk := bucketCompare(mp, strata, b, level)
				bk.From, bk.To = a.From.Text, a.To.Text
				total += float64(bk.Difference)
				e.Buckets = append(e.Buckets, bk)
			}
			e.Trend = stats.TrendDirection(tr, total, alpha)
			out = append(out, e)
		}
	}
	return out
}

// bucketCompare compares bucket b between the arms: Welch's t (two
// proportions for a proportion metric) from one stratum, or the
// post-stratified difference (stats.Stratified) from several, with the
// arms' values then the stratified means Σ_k w_k·ȳ_k.
func bucketCompare(mp *compiler.MetricPlan, strata []stats.StratumBuckets, b int, level float64) ElapsedBucket {
	prop := mp.M.Kind == metrics.KindProportion
	var bk ElapsedBucket
	if len(strata) == 1 {
		base, treat := strata[0].Base.Buckets[b], strata[0].Treat.Buckets[b]
		c := stats.Welch(base, treat, level)
		if prop {
			c = stats.TwoProportion(base, treat, level)
		}
		return ElapsedBucket{N: int64(base.N), NVariant: int64(treat.N), Baseline: Num(base.Mean), Value: Num(treat.Mean),
			Difference: Num(c.Difference), CILow: Num(c.CILow), CIHigh: Num(c.CIHigh), Relative: Num(c.Relative)}
	}
	ms := make([]stats.StratumMoments, len(strata))
	for k, s := range strata {
		ms[k] = stats.StratumMoments{Base: s.Base.Buckets[b], Treat: s.Treat.Buckets[b]}
		bk.N += int64(s.Base.Buckets[b].N)
		bk.NVariant += int64(s.Treat.Buckets[b].N)
	}
	sr := stats.Stratified(ms, level)
	if prop {
		sr = stats.StratifiedProportion(ms, level)
	}
	var mb, mt float64
	for k, m := range ms {
		if sr.Weights[k] > 0 {
			mb += sr.Weights[k] * m.Base.Mean
			mt += sr.Weights[k] * m.Treat.Mean
		}
	}
	bk.Baseline, bk.Value = Num(mb), Num(mt)
	bk.Difference, bk.CILow, bk.CIHigh, bk.Relative = Num(sr.Difference), Num(sr.CILow), Num(sr.CIHigh), Num(math.NaN())
	if mb != 0 && sr.Reason == "" {
		bk.Relative = Num(sr.Difference / mb)
	}
	return bk
}

// elapsedCaveat is what every rendering of the section says beside it.
const elapsedCaveat = "Bucket values are not capped; for a proportion, each bucket's value is whether the bucket alone passes the metric's threshold. The test reads the additive difference: a constant relative effect on a baseline that itself rises or falls with time since the trigger shows as a trend (compare the baseline column)."

// elapsedCautions are the cautions of flagged trends.
func elapsedCautions(es []ElapsedEffect) []string {
	var c []string
	for _, e := range es {
		if e.Trend == "" {
			continue
		}
		what := map[string]string{
			stats.TrendFading:   "fades with time since the trigger (a novelty effect wearing off?): the effect over the window may overstate what lasts beyond it",
			stats.TrendGrowing:  "grows with time since the trigger (people learning the change?): the effect over the window may understate what follows it",
			stats.TrendChanging: "changes with time since the trigger",
		}[e.Trend]
		c = append(c, fmt.Sprintf("The effect of %s on %s %s (%s per %s bucket, %s; flagged below %s).", e.Variant, e.Metric, what, signed(e.Slope), e.BucketLength, pEquals(float64(e.PValue)), trimP(e.Alpha)))
	}
	return c
}

func trimP(a float64) string {
	return strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.4f", a), "0"), ".")
}

// elapsedDoc adds the effect by time since the trigger to the document.
func (r *Report) elapsedDoc(d *document) {
	if r.Timing == nil {
		return
	}
	for _, e := range r.Timing.Elapsed {
		d.para("%s, %s vs %s, by time since the trigger (%s buckets; %s):", e.Metric, e.Variant, e.Baseline, e.BucketLength, e.Method)
		tb := &table{head: []string{"since trigger", "n (baseline)", "n (variant)", "baseline", "variant", "difference", "interval", "relative"}, left: 1}
		for _, b := range e.Buckets {
			tb.rows = append(tb.rows, []string{b.From + " to " + b.To, fmt.Sprint(b.N), fmt.Sprint(b.NVariant), fmtNum(b.Baseline), fmtNum(b.Value), signed(b.Difference), ci(b.CILow, b.CIHigh), pct(float64(b.Relative))})
		}
		d.tab(tb)
		switch {
		case e.Reason != "":
			d.para("Trend: not tested (%s).", e.Reason)
		default:
			verdict := "not flagged"
			if e.Trend != "" {
				verdict = "flagged: " + e.Trend
			}
			d.para("Trend of the difference: %s per bucket [%s, %s] (%s%% interval, the flag's level; SE %s, %s); %s at %s (1 − confidence over %s).", signed(e.Slope), signed(e.SlopeCILow), signed(e.SlopeCIHigh), trimP(100*e.SlopeLevel), fmtNum(e.SlopeStdError), pEquals(float64(e.PValue)), verdict, trimP(e.Alpha), plural(r.trendTests(), "trend test"))
		}
	}
	if len(r.Timing.Elapsed) > 0 {
		d.para("%s", elapsedCaveat)
	}
}

func (r *Report) trendTests() int {
	if r.Timing == nil {
		return 0
	}
	return len(r.Timing.Elapsed)
}

func ci(lo, hi Num) string { return "[" + signed(lo) + ", " + signed(hi) + "]" }

func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return fmt.Sprintf("%d %ss", n, what)
}
