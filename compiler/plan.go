// Package compiler turns a checked spec into a plan and prints the plan as
// SQL through a dialect. The plan is built once (Compile) and printed by
// any dialect (Print), the way go/printer prints a go/ast tree: nothing
// downstream re-reads the TOML or re-parses SQL text. Every choice the SQL
// makes (which aggregates are shared, how values are centred, which
// statistics a metric returns, the result columns and health rows) is made
// in Compile and recorded in the plan; the printer only spells it.
package compiler

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/stats"
)

// Version is the tool version printed into compiled SQL.
const Version = "0.1.0"

// Options change what a compiled query computes. They are part of the
// result's fingerprint: a result is only read back with the options it was
// compiled with.
type Options struct {
	// AsOf is when the data were read: units whose outcome window has not
	// fully elapsed by then are left out of that metric. Zero means the
	// analysis end. Exposures at or after AsOf are ignored.
	AsOf time.Time
	// Start and End replace the spec's analysis period when set (calibration
	// over an earlier period, planning over a pre-period). The spec itself is
	// never edited.
	Start, End time.Time
	// Breakdowns are the groupings computed beside the overall result, each
	// on its own (not crossed): segment names from the spec, or
	// KeyTriggerDay. They come from the same cohort in the same statement.
	Breakdowns []string
	// Splits > 0 compiles a calibration query: every eligible unit is
	// re-assigned at random to the declared variants (by a hash of its id,
	// the split number and Salt, with the planned weights) Splits times, and
	// the result is grouped by split and re-assigned variant.
	Splits int
	Salt   int64
	// StandIn compiles a planning query (planning.go): the trigger is the
	// spec's stand-in trigger and every unit is in one pooled arm.
	StandIn bool
	// PriorOnly compiles the analysis of the units a prior run exposed
	// (the spec's [prior_runs] with analysis = "apart"): they are the
	// eligible units instead of an exclusion; every other rule applies.
	PriorOnly bool
}

// KeyTriggerDay groups results by the calendar day of each unit's trigger
// in the experiment's time zone.
const KeyTriggerDay = "trigger_day"

// DefaultBreakdowns is every segment the spec declares, in spec order: the
// breakdowns run and compile use unless told otherwise.
func DefaultBreakdowns(s *metrics.Spec) []string {
	var out []string
	for _, seg := range s.Segments {
		out = append(out, seg.Name)
	}
	return out
}

// Text spells the options canonically, as the compile_options result
// column carries them: as_of, start, end (RFC 3339, UTC), by, splits,
// salt and stand_in, separated by semicolons. Unset values are left out.
func (o Options) Text() string {
	var parts []string
	t := func(name string, v time.Time) {
		if !v.IsZero() {
			parts = append(parts, name+"="+v.UTC().Format(time.RFC3339Nano))
		}
	}
	t("as_of", o.AsOf)
	t("start", o.Start)
	t("end", o.End)
	if len(o.Breakdowns) > 0 {
		parts = append(parts, "by="+strings.Join(o.Breakdowns, ","))
	}
	if o.Splits > 0 {
		parts = append(parts, fmt.Sprintf("splits=%d", o.Splits), fmt.Sprintf("salt=%d", o.Salt))
	}
	if o.StandIn {
		parts = append(parts, "stand_in=true")
	}
	if o.PriorOnly {
		parts = append(parts, "prior_only=true")
	}
	return strings.Join(parts, ";")
}

// ParseOptions reads the text of Options.Text back.
func ParseOptions(s string) (Options, error) {
	var o Options
	if strings.TrimSpace(s) == "" {
		return o, nil
	}
	for _, part := range strings.Split(s, ";") {
		k, v, ok := strings.Cut(part, "=")
		if !ok {
			return o, fmt.Errorf("compile options %q: %q is not name=value", s, part)
		}
		var err error
		switch k {
		case "as_of":
			o.AsOf, err = time.Parse(time.RFC3339Nano, v)
		case "start":
			o.Start, err = time.Parse(time.RFC3339Nano, v)
		case "end":
			o.End, err = time.Parse(time.RFC3339Nano, v)
		case "by":
			o.Breakdowns = strings.Split(v, ",")
		case "splits":
			_, err = fmt.Sscan(v, &o.Splits)
		case "salt":
			_, err = fmt.Sscan(v, &o.Salt)
		case "stand_in":
			o.StandIn, err = strconv.ParseBool(v)
		case "prior_only":
			o.PriorOnly, err = strconv.ParseBool(v)
		default:
			err = fmt.Errorf("unknown option %q", k)
		}
		if err != nil {
			return o, fmt.Errorf("compile options %q: %w", s, err)
		}
	}
	return o, nil
}

// DiffOptions names the compile options that differ between two options
// texts (Options.Text), each as "name is X in the result and Y here".
func DiffOptions(got, want string) string {
	parse := func(s string) map[string]string {
		m := map[string]string{}
		for _, part := range strings.Split(s, ";") {
			if k, v, ok := strings.Cut(part, "="); ok {
				m[k] = v
			}
		}
		return m
	}
	g, w := parse(got), parse(want)
	var keys []string
	for k := range g {
		keys = append(keys, k)
	}
	for k := range w {
		if _, ok := g[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	var diffs []string
	for _, k := range keys {
		if g[k] != w[k] {
			diffs = append(diffs, fmt.Sprintf("%s is %s in the result and %s here", k, orNone(g[k]), orNone(w[k])))
		}
	}
	return strings.Join(diffs, "; ")
}

func orNone(s string) string {
	if s == "" {
		return "not set"
	}
	return s
}

// Plan is a compiled experiment: every choice the SQL makes, resolved.
type Plan struct {
	Spec *metrics.Spec
	// Options are the options the plan was compiled with, normalised: AsOf
	// is always set (the analysis end when not given), Start and End only
	// when they differ from the spec's.
	Options Options
	// Fingerprint identifies what the numbers depend on: the spec's
	// fingerprint and the options' text. The main query returns it on every
	// row.
	Fingerprint string
	StartUS     int64 // analysis start, microseconds since the epoch
	EndUS       int64 // exposures are read in [StartUS, EndUS)
	AsOfUS      int64 // outcome windows must end at or before AsOfUS
	TZ          string
	Variants    []string
	Segments    []*metrics.Segment // segments the query groups by, carried from the trigger
	// GroupBy are the breakdown keys. The main query returns the overall
	// rows (every key NULL) and, for each key, rows grouped by it (the
	// other keys NULL).
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
	// Centres are the per-unit values shifted by their mean before the
	// variance aggregates; CentrePerGroup says that mean is taken per
	// variant (false: pooled, in calibration, whose groups mix the original
	// variants).
	Centres        []*AggPlan
	CentrePerGroup bool
	// Pooled says the plan is a planning query (Options.StandIn): Spec is
	// then a copy whose exposure is the stand-in trigger (planning.go).
	Pooled bool
	// PriorOnly says the eligible units are those a prior run exposed
	// (Options.PriorOnly).
	PriorOnly bool
	// Columns are the main query's result columns, in order.
	Columns []Column
	// Exclusions are the reasons a triggered unit is left out, in the
	// order the health query reports them.
	Exclusions []Exclusion
}

// GroupKey is a breakdown key of the result.
type GroupKey struct {
	Name    string // result column name
	Segment *metrics.Segment
	Day     bool
	Step    bool // the rollout step at the trigger (KeyRolloutStep)
}

// Label is the key's name as users write it: the segment's name or
// trigger_day.
func (g GroupKey) Label() string {
	if g.Segment != nil {
		return g.Segment.Name
	}
	if g.Step {
		return KeyRolloutStep
	}
	return KeyTriggerDay
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
	Metric   *MetricPlan
	Part     string // "", "num", "den" or "x" (covariate)
	// SameAs is an earlier aggregate of the same pass that computes exactly
	// the same value (the same function, expression, filter and window,
	// compared as expression trees); the pass computes it once.
	SameAs *AggPlan
	// NonFinite says the pass also counts the rows whose value is NaN or
	// infinite, which the sum leaves out.
	NonFinite bool
	// Centre names the column of this value's centre, when it is centred.
	Centre string
}

// IsBucket reports whether a is one of its metric's time-since-trigger
// buckets.
func (a *AggPlan) IsBucket() bool { return strings.HasPrefix(a.Part, "b") }

// bucketOffset is from moved later by us microseconds, spelled like the
// spec's offsets.
func bucketOffset(from metrics.Duration, us int64) metrics.Duration {
	d := metrics.Duration{Micros: from.Micros + us}
	d.Text = durationName(d.Micros)
	if d.Micros == 0 {
		d.Text = "0d"
	}
	return d
}

// Source returns the aggregate that computes a's value: a itself or the
// one it is the same as.
func (a *AggPlan) Source() *AggPlan {
	if a.SameAs != nil {
		return a.SameAs
	}
	return a
}

// MetricPlan is one metric's statistics columns.
type MetricPlan struct {
	M        *metrics.Metric
	Value    *AggPlan // mean and proportion
	Num, Den *AggPlan // ratio
	Cov      *AggPlan // CUPED covariate, nil when not adjusted
	Mature   string   // maturity flag column
	// Stats are the statistics the main query returns for the metric, in
	// result order.
	Stats []Stat
	// NonFinite are the aggregates whose left-out rows the metric counts.
	NonFinite []*AggPlan
	// Rule describes the metric in words, as the compiled SQL's comment and
	// the report show it.
	Rule string
	// CovRule describes the covariate, when there is one.
	CovRule string
	// Buckets are the per-unit values of the metric's consecutive
	// time-since-trigger buckets (metrics.Metric.Bucket), in time order,
	// from the same pass as the metric; nil when it is not split. They are
	// not capped.
	Buckets []*AggPlan
	// TrendWeights are the integer weights w_b = 2b − (B − 1) of the
	// linear trend contrast L = Σ_b w_b·y_b, one per bucket (b = 0 … B−1;
	// stats.TrendWeights).
	// They sum to zero, so L's mean difference between two arms is zero
	// when the effect is the same in every bucket (report: ElapsedTrend).
	TrendWeights []int
}

// MetricByName returns the plan of the metric called name, or nil.
func (p *Plan) MetricByName(name string) *MetricPlan {
	for _, mp := range p.Metrics {
		if mp.M.Name == name {
			return mp
		}
	}
	return nil
}

// Compile builds the plan for a checked spec. It returns diagnostics for
// problems that need the whole spec or the options.
func Compile(s *metrics.Spec, opt Options) (*Plan, metrics.Diagnostics) {
	var ds metrics.Diagnostics
	bad := func(code string, hint, format string, args ...any) {
		ds = append(ds, metrics.Diagnostic{Code: code, Summary: fmt.Sprintf(format, args...), Hint: hint, Subject: metrics.Range{File: s.File}})
	}
	if opt.StandIn {
		si, sds := standInSpec(s, &opt) // planning.go
		if ds = append(ds, sds...); si == nil {
			return nil, ds
		}
		s = si
	}
	p := &Plan{Spec: s, TZ: s.TZName}
	start, end := s.Start, s.End
	norm := Options{Splits: opt.Splits, Salt: opt.Salt, StandIn: opt.StandIn, PriorOnly: opt.PriorOnly}
	if opt.PriorOnly && len(s.PriorRuns) == 0 {
		bad(metrics.CodePriorRun, "declare [prior_runs.<name>] with analysis = \"apart\"", "the spec declares no prior run whose units could be analysed apart")
	}
	if !opt.Start.IsZero() && !opt.Start.Equal(s.Start) {
		start, norm.Start = opt.Start, opt.Start.UTC()
	}
	if !opt.End.IsZero() && !opt.End.Equal(s.End) {
		end, norm.End = opt.End, opt.End.UTC()
	}
	if !start.Before(end) {
		bad(metrics.CodeTime, "", "the analysis period [%s, %s) is empty", start.UTC().Format(time.RFC3339), end.UTC().Format(time.RFC3339))
	}
	p.StartUS, p.EndUS = start.UnixMicro(), end.UnixMicro()
	p.AsOfUS = p.EndUS
	if !opt.AsOf.IsZero() {
		p.AsOfUS = opt.AsOf.UnixMicro()
		if p.AsOfUS < p.EndUS {
			p.EndUS = p.AsOfUS
		}
		if p.AsOfUS <= p.StartUS {
			bad(metrics.CodeTime, "", "--as-of %s is not after the analysis start", opt.AsOf.UTC().Format(time.RFC3339))
		}
	}
	norm.AsOf = time.UnixMicro(p.AsOfUS).UTC()
	for _, v := range s.Variants {
		p.Variants = append(p.Variants, v.Name)
		p.Weights = append(p.Weights, v.Weight)
	}
	if p.Pooled = opt.StandIn; p.Pooled && opt.Splits == 0 {
		p.Variants, p.Weights = []string{PooledArm}, []float64{1}
	}
	p.Splits, p.Salt = opt.Splits, opt.Salt
	if opt.Splits < 0 || opt.Splits > 10000 {
		bad(metrics.CodeValue, "", "number of splits must be between 1 and 10000, got %d", opt.Splits)
	}
	if opt.Splits > 0 && len(opt.Breakdowns) > 0 {
		bad(metrics.CodeValue, "calibrate the overall result; breakdowns are not re-split", "a calibration query cannot also be broken down by %s", strings.Join(opt.Breakdowns, ", "))
		opt.Breakdowns = nil
	}
	p.Rules = s.Rules
	seen := map[*metrics.Source]bool{}
	addAttr := func(src *metrics.Source) {
		if src != nil && src != s.Exposure.Source && !src.IsEvent() && !seen[src] {
			seen[src] = true
			p.Attrs = append(p.Attrs, src)
		}
	}
	dup := map[string]bool{}
	for _, g := range withRolloutStep(s, opt.Breakdowns, opt.Splits) {
		g = strings.TrimSpace(g)
		if dup[g] {
			bad(metrics.CodeValue, "", "breakdown %q is given twice", g)
			continue
		}
		dup[g] = true
		if g == KeyTriggerDay {
			p.GroupBy = append(p.GroupBy, GroupKey{Name: g, Day: true})
			norm.Breakdowns = append(norm.Breakdowns, g)
			continue
		}
		if g == KeyRolloutStep && s.Rollout != nil { // see rollout.go
			p.GroupBy = append(p.GroupBy, GroupKey{Name: g, Step: true})
			norm.Breakdowns = append(norm.Breakdowns, g)
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
			bad(metrics.CodeValue, fmt.Sprintf("known keys: %v", names), "cannot break down by %q: not a segment of this spec", g)
			continue
		}
		// Only segments the query groups by are carried through it, so an
		// ungrouped query does no segment work.
		p.GroupBy = append(p.GroupBy, GroupKey{Name: "seg_" + found.Name, Segment: found})
		p.Segments = append(p.Segments, found)
		norm.Breakdowns = append(norm.Breakdowns, g)
		addAttr(found.Source)
	}
	p.Options = norm
	p.PriorOnly = opt.PriorOnly && len(s.PriorRuns) > 0
	sum := sha256.Sum256([]byte(s.Fingerprint + "\n" + norm.Text()))
	p.Fingerprint = hex.EncodeToString(sum[:8])

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
			ap := &AggPlan{Col: col, Agg: a, From: from, To: to, Metric: mp, Part: part}
			ap.NonFinite = a.Func == metrics.AggSum && (part == "" || part == "num" || part == "den")
			sp := passes[a.Source]
			if sp == nil {
				sp = &SourcePass{Source: a.Source, From: from.Micros, To: to.Micros}
				passes[a.Source] = sp
				p.Sources = append(p.Sources, sp)
			}
			sp.From = min(sp.From, from.Micros)
			sp.To = max(sp.To, to.Micros)
			for _, b := range sp.Aggs {
				if b.SameAs == nil && sameAgg(ap, b) {
					ap.SameAs = b
					break
				}
			}
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
		// Time-since-trigger buckets: the same aggregate over consecutive
		// parts of the window, computed in the same pass.
		for b := range m.Buckets() {
			from := bucketOffset(m.From, int64(b)*m.Bucket.Micros)
			to := bucketOffset(m.From, int64(b+1)*m.Bucket.Micros)
			mp.Buckets = append(mp.Buckets, add(m.Value, fmt.Sprintf("b%d", b+1), from, to))
		}
		if len(mp.Buckets) > 0 {
			mp.TrendWeights = stats.TrendWeights(len(mp.Buckets))
		}
		mp.Mature = matureCol(m.To.Micros)
		ends[m.To.Micros] = true
		for _, a := range []*AggPlan{mp.Value, mp.Num, mp.Den} {
			if a != nil && a.NonFinite {
				mp.NonFinite = append(mp.NonFinite, a)
			}
		}
		// Every mean, ratio part and covariate is centred; 0/1 indicators
		// are not.
		for _, a := range append([]*AggPlan{mp.Value, mp.Num, mp.Den, mp.Cov}, mp.Buckets...) {
			if a == nil || ((a == mp.Value || a.IsBucket()) && m.Kind == metrics.KindProportion) || (a == mp.Cov && m.Covariate.Indicator) {
				continue
			}
			a.Centre = "c_" + strings.TrimPrefix(a.Col, "m_")
			p.Centres = append(p.Centres, a)
		}
		mp.Stats = statsFor(mp)
		mp.Rule = metricRule(mp) + sharedNote(m) // shared.go
		if mp.Cov != nil {
			mp.CovRule = covRule(mp)
		}
		p.Metrics = append(p.Metrics, mp)
	}
	p.CentrePerGroup = p.Splits == 0
	for e := range ends {
		p.MatureEnds = append(p.MatureEnds, e)
	}
	sort.Slice(p.MatureEnds, func(i, j int) bool { return p.MatureEnds[i] < p.MatureEnds[j] })
	p.Columns = resultColumns(p)
	p.Exclusions = exclusions(p)
	return p, ds
}

// sameAgg reports whether two aggregates of one pass compute the same
// value: the same function, window and non-finite count, and equal value
// and filter expressions (compared as trees).
func sameAgg(a, b *AggPlan) bool {
	if a.Agg.Func != b.Agg.Func || a.From.Micros != b.From.Micros || a.To.Micros != b.To.Micros || a.NonFinite != b.NonFinite {
		return false
	}
	eq := func(x, y *metrics.Expr) bool {
		if x == nil || y == nil {
			return x == nil && y == nil
		}
		return expr.Equal(x.Node, y.Node)
	}
	return eq(a.Agg.Value, b.Agg.Value) && eq(a.Agg.Filter, b.Agg.Filter)
}

// resultColumns lists the main query's result columns.
func resultColumns(p *Plan) []Column {
	cols := []Column{{Name: ColSpecFingerprint, Role: RoleSpecFingerprint}, {Name: ColOptions, Role: RoleOptions}}
	if p.Splits > 0 {
		cols = append(cols, Column{Name: ColSplit, Role: RoleSplit})
	}
	cols = append(cols, Column{Name: ColVariant, Role: RoleVariant})
	for i := range p.GroupBy {
		cols = append(cols, Column{Name: p.GroupBy[i].Name, Role: RoleKey, Key: &p.GroupBy[i]})
	}
	cols = append(cols, Column{Name: ColUnits, Role: RoleUnits})
	for _, mp := range p.Metrics {
		for _, st := range mp.Stats {
			cols = append(cols, Column{Name: mp.Column(st), Role: RoleStat, Metric: mp, Stat: st})
		}
	}
	return cols
}

// exclusions lists the exclusion reasons of p: crossovers, undeclared
// variants, then each eligibility rule.
func exclusions(p *Plan) []Exclusion {
	out := []Exclusion{{Reason: ExcludedCrossover, Flag: "is_crossover"}, {Reason: ExcludedUnknown, Flag: "is_unknown_variant"}}
	for _, r := range p.Rules {
		out = append(out, Exclusion{Reason: RuleReason(r.Name), Flag: "fails_" + r.Name, Rule: r})
	}
	return priorExclusion(p, out) // rollout.go
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
