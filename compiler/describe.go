package compiler

import (
	"fmt"

	"github.com/assay-dev/assay/metrics"
)

// Plain-language descriptions of metrics, aggregates and windows, which
// Compile records in the plan (MetricPlan.Rule) for SQL comments and
// reports.

func signed(d metrics.Duration) string {
	if d.Micros < 0 {
		return "- " + durationName(-d.Micros)
	}
	return "+ " + durationName(d.Micros)
}

func aggRule(a *AggPlan) string {
	var what string
	switch a.Agg.Func {
	case metrics.AggSum:
		what = "sum of " + oneLine(a.Agg.Value.Text)
	case metrics.AggCountDistinct:
		what = "distinct values of " + oneLine(a.Agg.Value.Text)
	default:
		what = "count of rows"
	}
	if a.Agg.Filter != nil {
		what += " where " + oneLine(a.Agg.Filter.Text)
	}
	return what
}

func covRule(mp *MetricPlan) string {
	c := mp.M.Covariate
	what := aggRule(mp.Cov)
	if c.Indicator {
		what = fmt.Sprintf("whether %s is above %v", what, c.Above)
	}
	return fmt.Sprintf("%s (definition of %s) in [trigger %s, trigger %s), before the trigger", what, c.Of.Name, signed(c.From), signed(c.To))
}

func metricRule(mp *MetricPlan) string {
	m := mp.M
	win := fmt.Sprintf("window [trigger %s, trigger %s), mature units only", signed(m.From), signed(m.To))
	capNote := func(a *AggPlan) string {
		switch {
		case a.Agg.HasCap:
			return fmt.Sprintf(", capped at %v", a.Agg.Cap)
		case a.Agg.CapQuantile > 0:
			return fmt.Sprintf(", capped at the pooled %v quantile", a.Agg.CapQuantile)
		}
		return ""
	}
	switch m.Kind {
	case metrics.KindRatio:
		return fmt.Sprintf("per-unit %s%s over per-unit %s%s; %s", aggRule(mp.Num), capNote(mp.Num), aggRule(mp.Den), capNote(mp.Den), win)
	case metrics.KindProportion:
		return fmt.Sprintf("share of units whose %s is above %v; %s", aggRule(mp.Value), m.Above, win)
	}
	return fmt.Sprintf("mean per unit of %s%s; %s", aggRule(mp.Value), capNote(mp.Value), win)
}
