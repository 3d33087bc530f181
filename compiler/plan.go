// Package compiler turns a checked spec into a plan and prints the plan as
// SQL through a dialect. The plan is built once (Compile) and printed by
// any dialect (Print), the way go/printer prints a go/ast tree: nothing
// downstream re-reads the TOML or re-parses SQL text.
package compiler

import (
	"fmt"
	"sort"
	"time"

	"github.com/assay-dev/assay/metrics"
)

// Version is the tool version printed into compiled SQL.
const Version = "0.1.0"

// Options change what a compiled query computes.
type Options struct {
	// AsOf is when the data were read: units whose outcome window has not
	// fully elapsed by then are left out of that metric. Zero means the
	// analysis end. Exposures at or after AsOf are ignored.
	AsOf time.Time
	// GroupBy adds grouping keys next to the variant: segment names from
	// the spec, or KeyTriggerDay.
	GroupBy []string
	// Splits > 0 compiles a calibration query: every eligible unit is
	// re-assigned at random to the declared variants (by a hash of its id,
	// the split number and Salt, with the planned weights) Splits times, and
	// the result is grouped by split and re-assigned variant.
	Splits int
	Salt   int64
}

// KeyTriggerDay groups results by the calendar day of each unit's trigger
// in the experiment's time zone.
const KeyTriggerDay = "trigger_day"

// Plan is a compiled experiment: every choice the SQL makes, resolved.
type Plan struct {
	Spec        *metrics.Spec
	StartUS     int64 // analysis start, microseconds since the epoch
	EndUS       int64 // exposures are read in [StartUS, EndUS)
	AsOfUS      int64 // outcome windows must end at or before AsOfUS
	TZ          string
	Variants    []string
	Segments    []*metrics.Segment // segments the query groups by, carried from the trigger
	GroupBy     []GroupKey
	Rules       []*metrics.Rule
	Attrs       []*metrics.Source // attribute sources of grouped segments, joined at the trigger
	Sources     []*SourcePass     // one pass per outcome source
	Metrics     []*MetricPlan
	MatureEnds  []int64 // distinct window ends, for maturity flags
	HasCapQuant bool
	Splits      int
	Salt        int64
	Weights     []float64
}

// GroupKey is an extra grouping column of the result.
type GroupKey struct {
	Name    string // result column name
	Segment *metrics.Segment
	Day     bool
}

// SourcePass is one scan of an outcome source computing every per-unit
// aggregate that reads it.
type SourcePass struct {
	Source   *metrics.Source
	Aggs     []*AggPlan
	From, To int64 // union of the aggregates' windows
}

// AggPlan is one per-unit aggregate column.
type AggPlan struct {
	Col      string // unit-level column name
	Agg      *metrics.Agg
	From, To metrics.Duration
	Metric   *metrics.Metric
	Part     string // "", "num", "den" or "x" (covariate)
}

// MetricPlan is one metric's statistics columns.
type MetricPlan struct {
	M        *metrics.Metric
	Value    *AggPlan // mean and proportion
	Num, Den *AggPlan // ratio
	Cov      *AggPlan // CUPED covariate, nil when not adjusted
	Mature   string   // maturity flag column
}

// Compile builds the plan for a checked spec. It returns diagnostics for
// problems that need the whole spec or the options.
func Compile(s *metrics.Spec, opt Options) (*Plan, metrics.Diagnostics) {
	var ds metrics.Diagnostics
	p := &Plan{Spec: s, TZ: s.TZName}
	p.StartUS = s.Start.UnixMicro()
	p.EndUS = s.End.UnixMicro()
	p.AsOfUS = p.EndUS
	if !opt.AsOf.IsZero() {
		p.AsOfUS = opt.AsOf.UnixMicro()
		if p.AsOfUS < p.EndUS {
			p.EndUS = p.AsOfUS
		}
		if p.AsOfUS <= p.StartUS {
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeTime, Summary: fmt.Sprintf("--as-of %s is not after the analysis start", opt.AsOf.UTC().Format(time.RFC3339)), Subject: metrics.Range{File: s.File}})
		}
	}
	for _, v := range s.Variants {
		p.Variants = append(p.Variants, v.Name)
		p.Weights = append(p.Weights, v.Weight)
	}
	p.Splits, p.Salt = opt.Splits, opt.Salt
	if opt.Splits < 0 || opt.Splits > 10000 {
		ds = append(ds, metrics.Diagnostic{Code: metrics.CodeValue, Summary: fmt.Sprintf("number of splits must be between 1 and 10000, got %d", opt.Splits), Subject: metrics.Range{File: s.File}})
	}
	p.Rules = s.Rules
	seen := map[*metrics.Source]bool{}
	addAttr := func(src *metrics.Source) {
		if src != nil && src != s.Exposure.Source && !src.IsEvent() && !seen[src] {
			seen[src] = true
			p.Attrs = append(p.Attrs, src)
		}
	}
	for _, g := range opt.GroupBy {
		if g == KeyTriggerDay {
			p.GroupBy = append(p.GroupBy, GroupKey{Name: g, Day: true})
			continue
		}
		var found *metrics.Segment
		for _, seg := range s.Segments {
			if seg.Name == g {
				found = seg
			}
		}
		if found == nil {
			names := []string{KeyTriggerDay}
			for _, seg := range s.Segments {
				names = append(names, seg.Name)
			}
			ds = append(ds, metrics.Diagnostic{Code: metrics.CodeValue, Summary: fmt.Sprintf("cannot group by %q: not a segment of this spec", g), Hint: fmt.Sprintf("known keys: %v", names), Subject: metrics.Range{File: s.File}})
			continue
		}
		// Only segments the query groups by are carried through it, so an
		// ungrouped query does no segment work.
		p.GroupBy = append(p.GroupBy, GroupKey{Name: "seg_" + found.Name, Segment: found})
		p.Segments = append(p.Segments, found)
		addAttr(found.Source)
	}

	passes := map[*metrics.Source]*SourcePass{}
	ends := map[int64]bool{}
	for _, m := range s.Metrics {
		mp := &MetricPlan{M: m}
		add := func(a *metrics.Agg, part string, from, to metrics.Duration) *AggPlan {
			if a == nil || a.Source == nil {
				return nil
			}
			col := "m_" + m.Name
			if part != "" {
				col += "__" + part
			}
			ap := &AggPlan{Col: col, Agg: a, From: from, To: to, Metric: m, Part: part}
			sp := passes[a.Source]
			if sp == nil {
				sp = &SourcePass{Source: a.Source, From: from.Micros, To: to.Micros}
				passes[a.Source] = sp
				p.Sources = append(p.Sources, sp)
			}
			sp.From = min(sp.From, from.Micros)
			sp.To = max(sp.To, to.Micros)
			sp.Aggs = append(sp.Aggs, ap)
			if a.CapQuantile > 0 {
				p.HasCapQuant = true
			}
			return ap
		}
		if m.Kind == metrics.KindRatio {
			mp.Num, mp.Den = add(m.Num, "num", m.From, m.To), add(m.Den, "den", m.From, m.To)
		} else {
			mp.Value = add(m.Value, "", m.From, m.To)
		}
		if c := m.Covariate; c != nil {
			mp.Cov = add(c.Agg, "x", c.From, c.To)
		}
		mp.Mature = matureCol(m.To.Micros)
		ends[m.To.Micros] = true
		p.Metrics = append(p.Metrics, mp)
	}
	for e := range ends {
		p.MatureEnds = append(p.MatureEnds, e)
	}
	sort.Slice(p.MatureEnds, func(i, j int) bool { return p.MatureEnds[i] < p.MatureEnds[j] })
	return p, ds
}

func matureCol(endUS int64) string {
	return "mature_" + durationName(endUS)
}

// durationName spells an offset compactly for column names: 14d, 36h, 90m, 45s.
func durationName(us int64) string {
	neg := ""
	if us < 0 {
		neg, us = "neg", -us
	}
	switch {
	case us%86400e6 == 0:
		return fmt.Sprintf("%s%dd", neg, us/86400e6)
	case us%3600e6 == 0:
		return fmt.Sprintf("%s%dh", neg, us/3600e6)
	case us%60e6 == 0:
		return fmt.Sprintf("%s%dm", neg, us/60e6)
	}
	return fmt.Sprintf("%s%ds", neg, us/1e6)
}
