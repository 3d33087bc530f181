package metrics

import (
	"time"

	"github.com/assay-dev/assay/metrics/expr"
	"github.com/assay-dev/assay/metrics/timefmt"
)

// Spec is a checked experiment definition. Every user-written part keeps
// the Range it came from so later stages can point back at it.
type Spec struct {
	File        string
	Fingerprint string // sha256 of the spec text, first 16 hex digits

	ID         string
	Hypothesis string
	Unit       string // name of the randomisation unit, for reports
	Start, End time.Time
	Confidence float64
	// Monitoring says how the results may be read: once at the planned end,
	// or at any time with always-valid intervals.
	Monitoring   Monitoring
	PlannedUnits float64 // sequential: units the boundary is tuned for; 0 means the units analysed
	TimeZone     *time.Location
	TZName       string

	Variants []Variant // the first is the baseline

	Sources  []*Source // in file order
	Exposure Exposure
	Rules    []*Rule   // eligibility rules, in file order
	Metrics  []*Metric // in file order
	Segments []*Segment
	// Rollout is the allocation schedule when the experiment was launched
	// in steps (see rollout.go); nil when the spec declares none.
	Rollout *Rollout
	// PriorRuns are earlier exposures whose units are left out (rollout.go).
	PriorRuns []*PriorRun
	// Events are the declared calendar events, from the spec and from
	// shared calendar files (rollout.go).
	Events []*Event
	// Planning is the [planning] table, nil when the spec has none.
	Planning *Planning

	Ranges map[string]Range // key path ("metrics.orders.window") -> value range

	// Libraries are the shared definition files the spec uses, as resolved
	// paths, in the order written (see library.go).
	Libraries []string
	// Target is the place chosen for sources that say where they live per
	// target ("" when none was chosen).
	Target string
}

// Variant is one arm with its planned allocation weight.
type Variant struct {
	Name string
	// Weight is the planned share of traffic: the written weights divided
	// by their sum, so the weights of all variants add up to 1.
	Weight float64
	// Written is the weight as written in the spec (0.3333, 50, 2), for
	// display.
	Written     float64
	WrittenText string
	At          Range
}

// Source is a table, view or file the SQL reads from.
type Source struct {
	Name       string
	Table      string   // the qualified name as written, or ""
	TableParts []string // its parts, split at dots outside double quotes and unquoted
	File       string   // file path (DuckDB reads it directly), or ""
	Unit       string   // unit id column
	Time       string   // event time column, "" for a static attribute source
	// TimeFormat is how the time column stores times; the zero value is a
	// native timestamp.
	TimeFormat timefmt.Format
	Static     bool // attribute values do not change over time
	Columns    []string
	At         Range
}

// IsEvent reports whether rows of the source carry their own timestamps.
func (s *Source) IsEvent() bool { return s.Time != "" }

// Expr is a parsed and checked user expression.
type Expr struct {
	Text string
	Node expr.Node
	At   Range
}

// Exposure says which rows are exposures and which of them qualify.
type Exposure struct {
	Source  *Source
	Variant string // variant column
	Filter  *Expr  // nil: every exposure row qualifies
	At      Range
}

// RuleKind is the kind of an eligibility rule.
type RuleKind string

// Rule kinds.
const (
	RuleAttribute RuleKind = "attribute"
	RuleHistory   RuleKind = "history"
)

// Rule is an eligibility rule, evaluated at each unit's trigger.
type Rule struct {
	Name   string
	Kind   RuleKind
	Source *Source
	Filter *Expr
	// History rules: the unit must (Absent=false) or must not (Absent=true)
	// have a row satisfying Filter in [trigger+From, trigger+To).
	From, To Duration
	Absent   bool
	At       Range
}

// Role is what a metric is for in the decision.
// Monitoring is how an experiment's results may be read.
type Monitoring string

// Monitoring modes.
const (
	MonitoringFixed      Monitoring = "fixed"      // read once, at the planned end
	MonitoringSequential Monitoring = "sequential" // always-valid intervals, read at any time
)

// Direction is the direction of a change.
type Direction string

// Directions of harm for guard metrics.
const (
	Increase Direction = "increase"
	Decrease Direction = "decrease"
)

type Role string

// Roles.
const (
	Primary   Role = "primary"
	Secondary Role = "secondary"
	Guard     Role = "guard"
	Mechanism Role = "mechanism"
)

// Kind is the statistical shape of a metric.
type Kind string

// Metric kinds.
const (
	KindMean       Kind = "mean"       // per-unit aggregate, averaged over units
	KindProportion Kind = "proportion" // per-unit indicator, averaged over units
	KindRatio      Kind = "ratio"      // mean of numerator over mean of denominator
)

// AggFunc is a per-unit aggregate over a source's rows in a window.
type AggFunc string

// Per-unit aggregates.
const (
	AggSum           AggFunc = "sum"
	AggCount         AggFunc = "count"
	AggCountDistinct AggFunc = "count_distinct"
)

// Agg is one per-unit aggregate: Func over Value for rows of Source that
// satisfy Filter, with an optional winsorising cap.
type Agg struct {
	Source      *Source
	Func        AggFunc
	Value       *Expr // nil for count
	Filter      *Expr // nil: every row
	Cap         float64
	HasCap      bool
	CapQuantile float64 // 0 < q < 1 when set
	At          Range
}

// Metric is one analysed metric.
type Metric struct {
	Name string
	Role Role
	Kind Kind
	// Mean and proportion metrics use Value; ratio metrics use Num and Den.
	Value    *Agg
	Num, Den *Agg
	// Proportion: the unit counts as 1 when Value's aggregate > Above.
	Above float64
	// Outcome window relative to the trigger: [From, To).
	From, To Duration
	// Covariate for CUPED, nil when the metric is not adjusted.
	Covariate *Covariate
	// Guard metrics.
	Harmful Direction // which direction of change is harm
	Margin  float64   // tolerated relative change, e.g. 0.02
	Label   string
	At      Range
	// Shared is set when the metric's definition comes from a library.
	Shared *SharedDef
	// Bucket, when set, splits the outcome window into consecutive
	// buckets of this length by time since the trigger, so the report can
	// show the effect in each and test whether it fades or grows. The
	// window's length is a whole number (2 to MaxBuckets) of buckets.
	Bucket   Duration
	BucketAt Range
}

// MaxBuckets is the most buckets a metric's window may be split into.
const MaxBuckets = 28

// Buckets returns the number of time-since-trigger buckets of m, 0 when it
// is not split.
func (m *Metric) Buckets() int {
	if m.Bucket.Micros <= 0 {
		return 0
	}
	return int((m.To.Micros - m.From.Micros) / m.Bucket.Micros)
}

// Aggs returns the metric's per-unit aggregates.
func (m *Metric) Aggs() []*Agg {
	if m.Kind == KindRatio {
		return []*Agg{m.Num, m.Den}
	}
	return []*Agg{m.Value}
}

// Covariate is a pre-trigger covariate for regression adjustment (CUPED):
// the per-unit aggregate Agg measured in [trigger+From, trigger+To), with
// To <= 0 so it never reads data after the trigger.
type Covariate struct {
	From, To Duration
	// Of is the metric whose definition is measured before the trigger: the
	// metric itself unless the spec names another.
	Of *Metric
	// Agg is the per-unit aggregate measured; for a ratio metric measured on
	// itself, its numerator.
	Agg *Agg
	// Indicator says the covariate is Of's 0/1 indicator (Of is a proportion).
	Indicator bool
	Above     float64
	At        Range
}

// Segment is a dimension results can be broken down by, read from the
// qualifying exposure row or a unit attribute as of the trigger.
type Segment struct {
	Name   string
	Source *Source
	Column string
	TopK   int
	At     Range
}

// Duration is a signed offset with microsecond resolution, kept with the
// text it was written as.
type Duration struct {
	Micros int64
	Text   string
}

// Planning is the spec's pre-launch plan (the [planning] table): the inputs
// of `assay size` and the plan it produced, pasted back, which every run
// then reports against. Zero values mean "not given".
type Planning struct {
	// StandIn marks when a unit would have been exposed before the
	// experiment existed; nil when not given.
	StandIn *StandIn
	// PreStart and PreEnd are the pre-period the plan is computed over.
	PreStart, PreEnd time.Time
	// Target is the smallest effect on the primary metric worth detecting,
	// relative to the baseline mean when TargetRelative (0.03 is +3%),
	// else in the metric's own units. Zero when not given.
	Target         float64
	TargetRelative bool
	Power          float64 // default 0.8
	MaxWeeks       int     // default 8
	// PlannedEnd and PlannedUnits are the plan's outputs: when the
	// experiment is to be read, and how many eligible units (all arms) it
	// should have by then.
	PlannedEnd   time.Time
	PlannedUnits float64
	At           Range
}

// StandIn is the source and filter whose first matching row stands in for
// the trigger before launch.
type StandIn struct {
	Source *Source
	Filter *Expr
	At     Range
}
