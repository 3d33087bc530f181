package compiler

import (
	"strconv"
	"strings"

	"github.com/assay-dev/assay/metrics"
)

// The result contract. Every column the main and health queries return,
// every health row kind and every exclusion reason is a typed value that
// Compile resolves into the plan. The SQL printer, the engine's readers,
// assay analyze's column matching and the report all read it from there;
// none keeps a list of its own.

// ColumnRole says what a main-query result column holds.
type ColumnRole int

// Column roles of the main query's result.
const (
	RoleSpecFingerprint ColumnRole = iota + 1 // the spec's fingerprint, the same on every row
	RoleOptions                               // the compile options, the same on every row
	RoleSplit                                 // calibration: the re-split number
	RoleVariant                               // the variant (re-assigned, in calibration)
	RoleKey                                   // a breakdown key; NULL on rows of other groupings
	RoleUnits                                 // eligible units in the group
	RoleStat                                  // a metric's statistic
)

// Fixed result column names.
const (
	ColSpecFingerprint = "spec_fingerprint"
	ColOptions         = "compile_options"
	ColSplit           = "split"
	ColVariant         = "variant"
	ColUnits           = "units"
)

// Column is one column of the main query's result.
type Column struct {
	Name   string
	Role   ColumnRole
	Key    *GroupKey   // RoleKey
	Metric *MetricPlan // RoleStat
	Stat   Stat        // RoleStat
}

// Stat is one statistic of a metric in the main query's result.
type Stat string

// Statistics. Which of them a metric returns is decided in Compile
// (MetricPlan.Stats), from its kind, its covariate and its aggregates.
const (
	StatN       Stat = "n"    // mature units
	StatMean    Stat = "mean" // mean and proportion metrics
	StatVar     Stat = "var"
	StatNumMean Stat = "num_mean" // ratio metrics
	StatDenMean Stat = "den_mean"
	StatNumVar  Stat = "num_var"
	StatDenVar  Stat = "den_var"
	StatCov     Stat = "cov"
	// StatNonFinite counts outcome rows left out of a sum because their
	// value was NaN or infinite.
	StatNonFinite Stat = "nonfinite_rows"
	// CUPED covariate statistics.
	StatXMean   Stat = "x_mean"
	StatXVar    Stat = "x_var"
	StatYXCov   Stat = "yx_cov"    // mean and proportion metrics
	StatNumXCov Stat = "num_x_cov" // ratio metrics
	StatDenXCov Stat = "den_x_cov"
	// StatTrendVar is the sample variance of the per-unit trend contrast
	// L = Σ_b w_b·y_b over a metric's time-since-trigger buckets
	// (MetricPlan.TrendWeights); its mean is Σ_b w_b·mean_b.
	StatTrendVar Stat = "trend_var"
)

// BucketMean is the statistic holding the mean of time-since-trigger
// bucket b (1-based) of a metric; BucketVar its sample variance.
func BucketMean(b int) Stat { return Stat("b" + strconv.Itoa(b) + "_mean") }

// BucketVar is the sample variance of bucket b's per-unit values.
func BucketVar(b int) Stat { return Stat("b" + strconv.Itoa(b) + "_var") }

// bucketStat returns the bucket (0-based) of a bucket statistic and
// whether it is the bucket's mean; ok is false for other statistics.
func (mp *MetricPlan) bucketStat(st Stat) (b int, mean, ok bool) {
	for i := range mp.Buckets {
		switch st {
		case BucketMean(i + 1):
			return i, true, true
		case BucketVar(i + 1):
			return i, false, true
		}
	}
	return 0, false, false
}

// StatColumn is the result column holding statistic st of the metric
// called metric.
func StatColumn(metric string, st Stat) string { return metric + "__" + string(st) }

// Column returns the result column of statistic st of mp.
func (mp *MetricPlan) Column(st Stat) string { return StatColumn(mp.M.Name, st) }

// statsFor is the per-kind descriptor: the statistics a metric's row
// carries, in result order.
func statsFor(mp *MetricPlan) []Stat {
	out := []Stat{StatN}
	if mp.M.Kind == metrics.KindRatio {
		out = append(out, StatNumMean, StatDenMean, StatNumVar, StatDenVar, StatCov)
		if mp.Cov != nil {
			out = append(out, StatXMean, StatXVar, StatNumXCov, StatDenXCov)
		}
	}
	if len(mp.NonFinite) > 0 {
		out = append(out, StatNonFinite)
	}
	if mp.M.Kind != metrics.KindRatio {
		out = append(out, StatMean, StatVar)
		if mp.Cov != nil {
			out = append(out, StatXMean, StatXVar, StatYXCov)
		}
	}
	for b := range mp.Buckets {
		out = append(out, BucketMean(b+1), BucketVar(b+1))
	}
	if len(mp.Buckets) > 0 {
		out = append(out, StatTrendVar)
	}
	return out
}

// ColumnIndex finds result columns by name, ignoring case: engines such as
// Snowflake return unquoted names in upper case, and exports may fold them.
// It is the one place where result column names are matched.
type ColumnIndex map[string]*Column

// Index returns the main query's columns by lower-cased name.
func (p *Plan) Index() ColumnIndex {
	ix := ColumnIndex{}
	for i := range p.Columns {
		ix[strings.ToLower(p.Columns[i].Name)] = &p.Columns[i]
	}
	return ix
}

// Lookup returns the column called name in any case, or nil.
func (ix ColumnIndex) Lookup(name string) *Column { return ix[strings.ToLower(name)] }

// HealthKind is the kind of a health-query row.
type HealthKind string

// Health row kinds.
const (
	HealthExposures      HealthKind = "exposures"            // exposure rows and units per variant and day
	HealthTriggers       HealthKind = "triggers"             // triggered units per variant and trigger day; row_count: those not exposed in a prior run
	HealthNeverTriggered HealthKind = "never_triggered"      // exposed units without a qualifying exposure
	HealthExcluded       HealthKind = "excluded"             // triggered units excluded, per reason and variant
	HealthIgnoredRows    HealthKind = "ignored_rows"         // exposure rows outside the window or incomplete
	HealthOutcomeRows    HealthKind = "ignored_outcome_rows" // outcome rows no metric can use, per source
	HealthUnknownVariant HealthKind = "unknown_variant"      // triggered units per undeclared variant value
	// HealthNoOutcomes counts, per variant, the eligible units (the cohort
	// the main query analyses, after every exclusion) that have no row at
	// all in any outcome source (Plan.OutcomeSources) from their trigger up
	// to the as-of time. Its row_count is the variant's eligible units and
	// its unit_count those without a row; the row with no source covers all
	// outcome sources together, and with two or more sources one row per
	// source counts the units without a row in that source.
	//
	// The span ends at the as-of time rather than at the end of the longest
	// metric window: the check asks whether anything at all is logged for
	// a unit after it entered, and a row that falls after every window
	// still shows that the unit's logging works. Every trigger is before
	// the as-of time (Compile caps the analysis end at it), so no span is
	// empty; units triggered late have a shorter span in every arm alike.
	HealthNoOutcomes HealthKind = "no_outcome_rows"
)

// OutcomeSources lists the outcome sources of the no-outcome check
// (HealthNoOutcomes): every event source a metric reads other than the
// exposure source, in plan order. It is empty for a planning query, whose
// health result only sizes the cohort.
func (p *Plan) OutcomeSources() []*metrics.Source {
	if p.Pooled {
		return nil
	}
	// A source that only mechanism metrics read (the change's own
	// surface, such as taps on a new shelf) has rows in the treatment
	// alone by design, so it does not say whether logging reaches every
	// arm; it is left out.
	var out []*metrics.Source
	for _, sp := range p.Sources {
		s := sp.Source
		if s == p.Spec.Exposure.Source || !s.IsEvent() {
			continue
		}
		for _, a := range sp.Aggs {
			if a.Metric.M.Role != metrics.Mechanism {
				out = append(out, s)
				break
			}
		}
	}
	return out
}

// Health query result columns, in order.
const (
	HColKind    = "kind"
	HColReason  = "reason"
	HColSource  = "source"
	HColVariant = "variant"
	HColDay     = "day"
	HColRows    = "row_count"
	HColUnits   = "unit_count"
)

// HealthColumns lists the health query's result columns in order.
var HealthColumns = []string{HColKind, HColReason, HColSource, HColVariant, HColDay, HColRows, HColUnits}

// Reasons of ignored exposure and outcome rows.
const (
	IgnoredNullUnit    = "null_unit"
	IgnoredNullTime    = "null_time"
	IgnoredBeforeStart = "before_start"
	IgnoredAfterEnd    = "after_end"
	// IgnoredNullVariant counts exposure rows without a variant. They still
	// count for the trigger time; they never decide a unit's variant.
	IgnoredNullVariant = "null_variant"
)

// IgnoredExposureReasons lists the reasons of HealthIgnoredRows in order.
var IgnoredExposureReasons = []string{IgnoredNullUnit, IgnoredNullTime, IgnoredNullVariant, IgnoredBeforeStart, IgnoredAfterEnd}

// IgnoredOutcomeReasons lists the reasons of HealthOutcomeRows in order.
var IgnoredOutcomeReasons = []string{IgnoredNullUnit, IgnoredNullTime}

// UnknownVariantValues is how many undeclared variant values, the most
// frequent first, the health query reports.
const UnknownVariantValues = 10

// Exclusion is one reason a triggered unit is left out of the analysis.
type Exclusion struct {
	// Reason is its name in the health result and the report: "crossover",
	// "unknown_variant" or "rule:<name>".
	Reason string
	// Flag is the cohort's boolean column that marks excluded units.
	Flag string
	Rule *metrics.Rule // eligibility rules only
}

// Exclusion reasons other than eligibility rules.
const (
	ExcludedAny       = "any"
	ExcludedCrossover = "crossover"
	ExcludedUnknown   = "unknown_variant"
)

// RuleReason is the exclusion reason of the eligibility rule called name.
func RuleReason(name string) string { return "rule:" + name }
