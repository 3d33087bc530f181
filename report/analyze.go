// Package report turns the engine's per-variant aggregates into the
// analysis a reviewer reads: estimates, comparisons against the baseline,
// health checks and cautions, rendered as text, Markdown or JSON. It calls
// package stats for every number and never sees per-unit rows.
package report

import (
	"encoding/json"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"
	"unicode"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// SchemaVersion is the version of the JSON report contract. It changes
// only when a field is removed or changes meaning. Version 2: CUPED-adjusted
// values moved from each variant to each comparison (cuped.baseline_value,
// cuped.variant_value and their standard errors, pooled within the compared
// pair); experiment gains compile_options, fingerprint and breakdowns;
// health gains available, unknown_variants and ignored_outcome_rows keyed
// by source; segments come from the run's own grouped rows.
const SchemaVersion = 2

// SRMAlpha is the default alarm threshold of the sample-ratio check (common practice).
const SRMAlpha = 0.001

// Num is a float that marshals to JSON null when it is NaN or infinite.
type Num float64

// MarshalJSON implements json.Marshaler.
func (n Num) MarshalJSON() ([]byte, error) {
	f := float64(n)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	// Twelve significant digits. With several threads DuckDB merges
	// partial aggregates in a varying order, which can move the last bits
	// of a variance between runs; --threads 1 gives bit-identical output.
	return []byte(strconv.FormatFloat(f, 'g', 12, 64)), nil
}

// OK reports whether n is a finite number.
func (n Num) OK() bool { return !math.IsNaN(float64(n)) && !math.IsInf(float64(n), 0) }

// Report is the whole analysis of one experiment. Its JSON form is the
// versioned contract documented in README.md.
type Report struct {
	SchemaVersion int    `json:"schema_version"`
	ToolVersion   string `json:"tool_version"`
	// Summary is the one-screen reading of everything below (Summarize).
	Summary    Summary      `json:"summary"`
	Experiment Experiment   `json:"experiment"`
	Alarms     []string     `json:"alarms"`
	Health     Health       `json:"health"`
	Metrics    []MetricInfo `json:"metrics"`
	Segments   []Segment    `json:"segments"`
	// Adjustment is the multiple-testing method applied to p_value_adjusted.
	Adjustment string   `json:"adjustment"`
	Cautions   []string `json:"cautions"`
	// Rollout is the reading of the spec's rollout schedule (rollout.go);
	// absent when the spec declares none.
	Rollout *RolloutInfo `json:"rollout,omitempty"`
	// Timing is the section on weekdays, declared calendar events and the
	// effect by trigger week (timing.go).
	Timing *Timing `json:"timing,omitempty"`
	// PriorApart is the separate analysis of units exposed in a prior run,
	// when the spec's prior runs say analysis = "apart" (prior.go).
	PriorApart *PriorApart `json:"prior_apart,omitempty"`
	// Plan compares the run with the spec's [planning] (planning.go).
	Plan *PlanCheck `json:"plan"`
}

// Experiment describes what was analysed.
type Experiment struct {
	ID              string  `json:"id"`
	Hypothesis      string  `json:"hypothesis"`
	Unit            string  `json:"unit"`
	Start           string  `json:"start"`
	End             string  `json:"end"`
	AsOf            string  `json:"as_of"`
	TimeZone        string  `json:"time_zone"`
	Confidence      float64 `json:"confidence"`
	SpecFingerprint string  `json:"spec_fingerprint"`
	// CompileOptions are the options the numbers were computed with
	// (compiler.Options.Text), and Fingerprint covers the spec and them.
	CompileOptions string    `json:"compile_options"`
	Fingerprint    string    `json:"fingerprint"`
	Breakdowns     []string  `json:"breakdowns"`
	Variants       []Variant `json:"variants"`
}

// Variant is one arm with its planned weight and counts.
type Variant struct {
	Name           string  `json:"name"`
	Baseline       bool    `json:"baseline"`
	PlannedWeight  float64 `json:"planned_weight"`
	TriggeredUnits int64   `json:"triggered_units"`
	EligibleUnits  int64   `json:"eligible_units"`
	// EligibleShare is the variant's share of all eligible units.
	EligibleShare Num `json:"eligible_share"`
}

// Health holds the checks a reader needs before trusting any effect.
type Health struct {
	// Available is false when the health result was not given (assay
	// analyze without --health): the counts below are then unknown, not zero.
	Available      bool             `json:"available"`
	ExposedUnits   int64            `json:"exposed_units"`
	NeverTriggered int64            `json:"never_triggered_units"`
	Triggered      int64            `json:"triggered_units"`
	Eligible       int64            `json:"eligible_units"`
	Exclusions     []Exclusion      `json:"exclusions"`
	IgnoredRows    map[string]int64 `json:"ignored_exposure_rows"`
	// IgnoredOutcomeRows counts, per outcome source, rows without a unit
	// or a time, which no metric can use.
	IgnoredOutcomeRows map[string]map[string]int64 `json:"ignored_outcome_rows"`
	SampleRatio        SampleRatio                 `json:"sample_ratio"`
	// SampleRatioTriggered tests triggered units (before exclusions), less
	// those a prior run exposed (they were assigned then).
	SampleRatioTriggered SampleRatio `json:"sample_ratio_triggered"`
	// SampleRatioDaily tests each day's newly triggered units.
	SampleRatioDaily DailySRM `json:"sample_ratio_daily"`
	// CrossoverRateExposed is crossovers over all exposed units.
	CrossoverRateExposed Num     `json:"crossover_rate_of_exposed"`
	Daily                []Daily `json:"daily"`
	// UnknownVariants are the undeclared variant values seen on triggered
	// units, the most frequent first (at most compiler.UnknownVariantValues).
	UnknownVariants []UnknownVariant `json:"unknown_variants"`
	// NoOutcomes counts eligible units without any outcome row
	// (nooutcome.go); absent when the health result has no such rows.
	NoOutcomes *NoOutcomes `json:"no_outcome_units,omitempty"`
}

// UnknownVariant is an undeclared variant value with its triggered units
// and, when it differs from a declared name only in case, spaces or
// punctuation, that name.
type UnknownVariant struct {
	Value    string `json:"value"`
	Units    int64  `json:"units"`
	Suggests string `json:"suggests,omitempty"`
}

// DailySRM is the per-day sample-ratio check on triggered units.
type DailySRM struct {
	Days      []DaySRM `json:"days"`
	AlarmDays []string `json:"alarm_days"`
}

// DaySRM is one day's chi-square goodness of fit.
type DaySRM struct {
	Day       string `json:"day"`
	Units     int64  `json:"units"`
	Statistic Num    `json:"statistic"`
	PValue    Num    `json:"p_value"`
	Alarm     bool   `json:"alarm"`
	Reason    string `json:"reason,omitempty"`
}

// Exclusion counts triggered units excluded for one reason. A unit can be
// excluded for several reasons; "any" counts each unit once.
type Exclusion struct {
	Reason    string           `json:"reason"`
	Units     int64            `json:"units"`
	ByVariant map[string]int64 `json:"by_variant"`
	Rate      Num              `json:"rate"` // of triggered units
}

// SampleRatio is the chi-square goodness-of-fit test of eligible units
// against the planned weights.
type SampleRatio struct {
	Statistic Num     `json:"statistic"`
	DF        Num     `json:"df"`
	PValue    Num     `json:"p_value"`
	Alpha     float64 `json:"alpha"`
	Alarm     bool    `json:"alarm"`
	Reason    string  `json:"reason,omitempty"`
}

// Daily counts exposures and triggers of one variant on one day.
type Daily struct {
	Day           string `json:"day"`
	Variant       string `json:"variant"`
	ExposureRows  int64  `json:"exposure_rows"`
	ExposedUnits  int64  `json:"exposed_units"`
	TriggeredUnit int64  `json:"triggered_units"`
	// NewUnits are the triggered units not exposed in a prior run (all of
	// them when the spec declares none); the daily sample ratio reads them.
	NewUnits int64 `json:"new_triggered_units"`
}

// MetricInfo is one metric's per-variant values and comparisons.
type MetricInfo struct {
	Name      string    `json:"name"`
	Label     string    `json:"label,omitempty"`
	Role      string    `json:"role"`
	Kind      string    `json:"kind"`
	Window    [2]string `json:"window"`
	Rule      string    `json:"rule"`
	Harmful   string    `json:"harmful,omitempty"`
	Margin    *float64  `json:"margin,omitempty"`
	Covariate *CovInfo  `json:"covariate,omitempty"`
	// Shared names the library definition the metric uses, and Overrides
	// what this experiment set differently (see shared.go).
	Shared    string   `json:"shared,omitempty"`
	Overrides []string `json:"overrides,omitempty"`
	// NonFiniteRows counts outcome rows whose value was NaN or infinite;
	// they are left out of the sums.
	NonFiniteRows int64 `json:"nonfinite_rows"`
	// ImmatureUnits counts eligible units left out of the metric in every
	// variant because its window had not elapsed by the as-of time.
	ImmatureUnits int64        `json:"immature_units"`
	Variants      []VariantVal `json:"variants"`
	Comparisons   []Compare    `json:"comparisons"`
}

// CovInfo describes a metric's CUPED covariate.
type CovInfo struct {
	Metric string    `json:"metric"`
	Window [2]string `json:"window"`
	Rule   string    `json:"rule"`
}

// CUPEDInfo is the regression adjustment behind an adjusted comparison:
// the CUPED-adjusted mean of each arm of the pair and the comparison
// without adjustment. (Named "cuped" throughout so that it cannot be taken
// for a p-value adjusted for multiple testing.)
type CUPEDInfo struct {
	Theta             Num     `json:"theta"`
	CovariateMean     Num     `json:"covariate_mean"`
	VarianceReduction Num     `json:"variance_reduction"`
	BaselineValue     Num     `json:"baseline_value"`
	BaselineStdError  Num     `json:"baseline_std_error"`
	VariantValue      Num     `json:"variant_value"`
	VariantStdError   Num     `json:"variant_std_error"`
	Unadjusted        Compare `json:"unadjusted"`
	// StepThetas are the θ of each rollout step when the comparison is
	// CUPED within steps (Theta is then NaN: there is no single θ).
	StepThetas []Num `json:"step_thetas,omitempty"`
	// NotApplied says why no adjustment was made (the comparison shown is
	// then the unadjusted one).
	NotApplied string `json:"not_applied,omitempty"`
}

// VariantVal is a metric's value in one variant.
type VariantVal struct {
	Variant  string `json:"variant"`
	N        int64  `json:"n"`
	Immature int64  `json:"immature"` // eligible units left out: window not elapsed
	Value    Num    `json:"value"`
	StdError Num    `json:"std_error"`
	Reason   string `json:"reason,omitempty"`
}

// Compare is a treatment variant against the baseline.
type Compare struct {
	Variant        string `json:"variant"`
	Baseline       string `json:"baseline"`
	Method         string `json:"method"`
	Difference     Num    `json:"difference"`
	StdError       Num    `json:"std_error"`
	CILow          Num    `json:"ci_low"`
	CIHigh         Num    `json:"ci_high"`
	Relative       Num    `json:"relative"`
	RelativeCILow  Num    `json:"relative_ci_low"`
	RelativeCIHigh Num    `json:"relative_ci_high"`
	// RelativeShape is the shape of the Fieller relative set: "bounded",
	// "unbounded" (a half-line or the whole line) or "complement" (the line
	// minus an interval, whose ends are then null here).
	RelativeShape string `json:"relative_shape,omitempty"`
	Statistic     Num    `json:"statistic"`
	DF            Num    `json:"df"`
	PValue        Num    `json:"p_value"`
	// PValueAdjusted is PValue adjusted for multiple testing within Family.
	PValueAdjusted Num        `json:"p_value_adjusted"`
	Family         string     `json:"family"`
	Reason         string     `json:"reason,omitempty"`
	RelReason      string     `json:"relative_reason,omitempty"`
	Guard          *Guard     `json:"guard,omitempty"`
	CUPED          *CUPEDInfo `json:"cuped,omitempty"`
	// Sequential is the always-valid interval and p-value (monitoring =
	// "sequential"), valid whenever the data are looked at.
	Sequential *SeqInfo `json:"sequential,omitempty"`
}

// SeqInfo is a peeking-safe comparison.
type SeqInfo struct {
	CILow  Num    `json:"ci_low"`
	CIHigh Num    `json:"ci_high"`
	PValue Num    `json:"p_value"`
	Reason string `json:"reason,omitempty"`
}

// Guard is a guard metric's verdict for one comparison, decided at one
// one-sided level (the spec's confidence) in both directions: whether harm
// is shown (against no change) and whether harm beyond the margin is ruled
// out (non-inferiority), from the same Fieller relative bounds.
type Guard struct {
	Verdict string `json:"verdict"`
	// Alarming is set for harm beyond the margin, or harm shown with the
	// margin not ruled out.
	Alarming bool `json:"alarming"`
	// Level is the one-sided confidence level of Lower and Upper.
	Level float64 `json:"level"`
	Lower Num     `json:"relative_lower"` // one-sided lower bound of the relative change
	Upper Num     `json:"relative_upper"` // one-sided upper bound
	// PValue is the one-sided non-inferiority p-value (harm beyond the
	// margin ruled out when below 1 − level); HarmPValue the one-sided
	// p-value of "no change" in the harmful direction.
	PValue     Num    `json:"p_value"`
	HarmPValue Num    `json:"harm_p_value"`
	Bound      Num    `json:"bound"` // the bound on the harmful side
	Reason     string `json:"reason,omitempty"`
}

// Options change how the report is computed.
type Options struct {
	// SRMAlpha is the sample-ratio alarm threshold; 0 means SRMAlpha.
	SRMAlpha float64
	// Adjust is the multiple-testing adjustment for secondary metrics,
	// mechanism metrics, several treatment variants and segment results:
	// "holm" (default), "bh" (Benjamini–Hochberg), "bonferroni" or "none".
	Adjust string
	// EmptySources are sources that had no rows: their metrics are zero for
	// every unit, which the cautions say.
	EmptySources []string
}

func (o Options) withDefaults() Options {
	if o.SRMAlpha == 0 {
		o.SRMAlpha = SRMAlpha
	}
	if o.Adjust == "" {
		o.Adjust = "holm"
	}
	return o
}

// adjust applies the chosen multiple-testing adjustment.
func adjust(method string, p []float64) []float64 {
	switch method {
	case "bh":
		return stats.BenjaminiHochberg(p)
	case "bonferroni":
		return stats.Bonferroni(p)
	case "none":
		return append([]float64(nil), p...)
	}
	return stats.Holm(p)
}

// Analyze builds the report from the plan and the run's decoded results:
// the overall rows, each breakdown's rows and the health rows.
func Analyze(p *compiler.Plan, set *results.Set, opt Options) (*Report, error) {
	opt = opt.withDefaults()
	s := p.Spec
	if set.SpecFingerprint != s.Fingerprint {
		return nil, fmt.Errorf("the result carries spec fingerprint %s, but the spec's is %s: the query was compiled from another version of the spec", set.SpecFingerprint, s.Fingerprint)
	}
	if set.Options != p.Options.Text() {
		return nil, fmt.Errorf("the result was compiled with options %q, but this analysis uses %q: %s", set.Options, p.Options.Text(), compiler.DiffOptions(set.Options, p.Options.Text()))
	}
	r := &Report{SchemaVersion: SchemaVersion, ToolVersion: compiler.Version, Alarms: []string{}, Segments: []Segment{}}
	r.Experiment = Experiment{
		ID: s.ID, Hypothesis: s.Hypothesis, Unit: s.Unit,
		Start: stamp(p.StartUS), End: stamp(p.EndUS), AsOf: stamp(p.AsOfUS),
		TimeZone: p.TZ, Confidence: s.Confidence, SpecFingerprint: s.Fingerprint,
		CompileOptions: p.Options.Text(), Fingerprint: p.Fingerprint, Breakdowns: []string{},
	}
	for _, g := range p.GroupBy {
		r.Experiment.Breakdowns = append(r.Experiment.Breakdowns, g.Label())
	}
	byVariant := rowsByVariant(set.Overall())
	r.Health = health(p, set.Health, byVariant, opt.SRMAlpha)
	// Hook (rollout.go): sample-ratio checks against the rollout schedule.
	r.Rollout = rolloutHealth(p, set, &r.Health, opt.SRMAlpha)
	for i, v := range s.Variants {
		vv := Variant{Name: v.Name, Baseline: i == 0, PlannedWeight: v.Weight}
		if row := byVariant[v.Name]; row != nil {
			vv.EligibleUnits = row.Units
		}
		for _, h := range set.Health {
			if h.Kind == compiler.HealthTriggers && h.Variant == v.Name {
				vv.TriggeredUnits += h.Units
			}
		}
		r.Experiment.Variants = append(r.Experiment.Variants, vv)
	}
	for i := range r.Experiment.Variants {
		v := &r.Experiment.Variants[i]
		v.EligibleShare = Num(ratio(float64(v.EligibleUnits), float64(r.Health.Eligible)))
	}
	if r.Health.SampleRatio.Alarm {
		r.Alarms = append(r.Alarms, fmt.Sprintf("SAMPLE RATIO MISMATCH: eligible units per variant do not match the planned weights (chi-square %s, alarm below %g). Assignment or logging is likely broken; effects below are not trustworthy until the cause is found.", pEquals(float64(r.Health.SampleRatio.PValue)), opt.SRMAlpha))
	}
	if n := len(r.Health.SampleRatioDaily.AlarmDays); n > 0 {
		r.Alarms = append(r.Alarms, fmt.Sprintf("SAMPLE RATIO MISMATCH on %d day(s) (%s): triggered units that day do not match the planned weights (p < %g).", n, strings.Join(r.Health.SampleRatioDaily.AlarmDays, ", "), opt.SRMAlpha))
	}
	level := s.Confidence
	for _, mp := range p.Metrics {
		r.Metrics = append(r.Metrics, metricInfo(p, mp, byVariant, level))
	}
	// Hook (rollout.go): by-step estimates; the primary read by step.
	r.rolloutEffects(p, set)
	r.Adjustment = opt.Adjust
	adjustFamilies(r.Metrics, opt.Adjust)
	for _, m := range r.Metrics {
		for _, c := range m.Comparisons {
			if c.Guard != nil && c.Guard.Alarming {
				r.Alarms = append(r.Alarms, fmt.Sprintf("GUARD HARM: %s in %s %s (relative %s; one-sided %g%% bounds %s to %s; tolerated %s): %s.",
					m.Name, c.Variant, pastTense(m.Harmful), pct(float64(c.Relative)), c.Guard.Level*100, pct(float64(c.Guard.Lower)), pct(float64(c.Guard.Upper)), pctAbs(*m.Margin), c.Guard.Verdict))
			}
		}
	}
	r.Cautions = cautions(p, r)
	// Hook (rollout.go): the schedule's cautions, before the closing one.
	for _, c := range rolloutCautions(p, r) {
		r.addCaution(c)
	}
	r.timing(p, set) // Hook (timing.go): weekdays, calendar, trigger weeks.
	for _, src := range opt.EmptySources {
		r.addCaution(fmt.Sprintf("Source %s has no rows: every metric that reads it is zero for every unit. Check that the extract or table is complete before reading those metrics.", src))
	}
	AgainstPlan(p, r) // planning.go
	for g := range p.GroupBy {
		r.addBreakdown(p, g, set.Group(g), opt)
	}
	r.Summary = r.Summarize()
	return r, nil
}

// rowsByVariant indexes rows of one group by variant.
func rowsByVariant(rows []results.Row) map[string]*results.Row {
	out := map[string]*results.Row{}
	for i := range rows {
		out[rows[i].Variant] = &rows[i]
	}
	return out
}

// HarmShown reports whether any guard comparison's verdict is alarming:
// harm beyond the margin, or harm shown with the margin not ruled out.
func (r *Report) HarmShown() bool {
	for _, m := range r.Metrics {
		for _, c := range m.Comparisons {
			if c.Guard != nil && c.Guard.Alarming {
				return true
			}
		}
	}
	return false
}

func adjustName(m string) string {
	switch m {
	case "bh":
		return "Benjamini–Hochberg"
	case "bonferroni":
		return "Bonferroni"
	case "none":
		return "no adjustment requested"
	}
	return "Holm"
}

func pastTense(harm string) string {
	if harm == "decrease" {
		return "decreased"
	}
	return "increased"
}

func stamp(us int64) string { return time.UnixMicro(us).UTC().Format(time.RFC3339) }

func srm(obs, w []float64, alpha float64) SampleRatio {
	sr := stats.SampleRatio(obs, w)
	out := SampleRatio{Statistic: Num(sr.Statistic), DF: Num(sr.DF), PValue: Num(sr.PValue), Alpha: alpha, Reason: sr.Reason}
	out.Alarm = sr.Reason == "" && sr.PValue < alpha
	return out
}

func health(p *compiler.Plan, rows []results.HealthRow, byVariant map[string]*results.Row, alpha float64) Health {
	h := Health{Available: rows != nil, IgnoredRows: map[string]int64{}, IgnoredOutcomeRows: map[string]map[string]int64{}, Exclusions: []Exclusion{}, Daily: []Daily{}, UnknownVariants: []UnknownVariant{}}
	exc := map[string]*Exclusion{}
	var excOrder []string
	reasons := []string{compiler.ExcludedAny}
	for _, x := range p.Exclusions {
		reasons = append(reasons, x.Reason)
	}
	for _, r := range reasons {
		exc[r] = &Exclusion{Reason: r, ByVariant: map[string]int64{}}
		excOrder = append(excOrder, r)
	}
	daily := map[[2]string]*Daily{}
	for _, row := range rows {
		switch row.Kind {
		case compiler.HealthTriggers:
			h.Triggered += row.Units
			d := dailyRow(daily, row.Day, row.Variant)
			d.TriggeredUnit += row.Units
			d.NewUnits += row.Rows
		case compiler.HealthExposures:
			d := dailyRow(daily, row.Day, row.Variant)
			d.ExposureRows += row.Rows
			d.ExposedUnits += row.Units
		case compiler.HealthNeverTriggered:
			h.NeverTriggered += row.Units
		case compiler.HealthExcluded:
			e := exc[row.Reason]
			if e == nil {
				e = &Exclusion{Reason: row.Reason, ByVariant: map[string]int64{}}
				exc[row.Reason] = e
				excOrder = append(excOrder, row.Reason)
			}
			e.Units += row.Units
			e.ByVariant[row.Variant] += row.Units
		case compiler.HealthOutcomeRows:
			if h.IgnoredOutcomeRows[row.Source] == nil {
				h.IgnoredOutcomeRows[row.Source] = map[string]int64{}
			}
			h.IgnoredOutcomeRows[row.Source][row.Reason] += row.Rows
		case compiler.HealthIgnoredRows:
			h.IgnoredRows[row.Reason] += row.Rows
		case compiler.HealthUnknownVariant:
			h.UnknownVariants = append(h.UnknownVariants, UnknownVariant{Value: row.Variant, Units: row.Units, Suggests: suggestVariant(row.Variant, p.Variants)})
		}
	}
	h.ExposedUnits = h.Triggered + h.NeverTriggered
	h.NoOutcomes = noOutcomes(p, rows) // nooutcome.go
	sort.Strings(excOrder)
	for _, k := range excOrder {
		e := exc[k]
		e.Rate = Num(ratio(float64(e.Units), float64(h.Triggered)))
		h.Exclusions = append(h.Exclusions, *e)
	}
	keys := make([][2]string, 0, len(daily))
	for k := range daily {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i][0] != keys[j][0] {
			return keys[i][0] < keys[j][0]
		}
		return keys[i][1] < keys[j][1]
	})
	for _, k := range keys {
		h.Daily = append(h.Daily, *daily[k])
	}
	var obs, trig, w []float64
	for _, v := range p.Spec.Variants {
		n := 0.0
		if row := byVariant[v.Name]; row != nil {
			n = float64(row.Units)
			h.Eligible += row.Units
		}
		t := 0.0
		for _, d := range h.Daily {
			if d.Variant == v.Name {
				t += float64(d.NewUnits)
			}
		}
		obs = append(obs, n)
		trig = append(trig, t)
		w = append(w, v.Weight)
	}
	h.SampleRatio = srm(obs, w, alpha)
	h.SampleRatioTriggered = srm(trig, w, alpha)
	h.SampleRatioDaily = DailySRM{Days: []DaySRM{}, AlarmDays: []string{}}
	byDay := map[string]map[string]float64{}
	var days []string
	for _, d := range h.Daily {
		if d.NewUnits == 0 {
			continue
		}
		if byDay[d.Day] == nil {
			byDay[d.Day] = map[string]float64{}
			days = append(days, d.Day)
		}
		byDay[d.Day][d.Variant] += float64(d.NewUnits)
	}
	sort.Strings(days)
	for _, day := range days {
		var o []float64
		var total int64
		for _, v := range p.Spec.Variants {
			o = append(o, byDay[day][v.Name])
			total += int64(byDay[day][v.Name])
		}
		sr := srm(o, w, alpha)
		h.SampleRatioDaily.Days = append(h.SampleRatioDaily.Days, DaySRM{Day: day, Units: total, Statistic: sr.Statistic, PValue: sr.PValue, Alarm: sr.Alarm, Reason: sr.Reason})
		if sr.Alarm {
			h.SampleRatioDaily.AlarmDays = append(h.SampleRatioDaily.AlarmDays, day)
		}
	}
	sort.SliceStable(h.UnknownVariants, func(i, j int) bool {
		if h.UnknownVariants[i].Units != h.UnknownVariants[j].Units {
			return h.UnknownVariants[i].Units > h.UnknownVariants[j].Units
		}
		return h.UnknownVariants[i].Value < h.UnknownVariants[j].Value
	})
	if e := exc[compiler.ExcludedCrossover]; e != nil {
		h.CrossoverRateExposed = Num(ratio(float64(e.Units), float64(h.ExposedUnits)))
	}
	return h
}

// suggestVariant returns the declared variant that v equals once case,
// spaces, hyphens and underscores are ignored, or "".
func suggestVariant(v string, declared []string) string {
	norm := func(s string) string {
		return strings.Map(func(r rune) rune {
			switch r {
			case ' ', '-', '_', '.', '\t':
				return -1
			}
			return unicode.ToLower(r)
		}, s)
	}
	for _, d := range declared {
		if norm(d) == norm(v) {
			return d
		}
	}
	return ""
}

func dailyRow(m map[[2]string]*Daily, day, variant string) *Daily {
	k := [2]string{day, variant}
	if d := m[k]; d != nil {
		return d
	}
	d := &Daily{Day: day, Variant: variant}
	m[k] = d
	return d
}

func ratio(a, b float64) float64 {
	if b == 0 {
		return math.NaN()
	}
	return a / b
}

// rowCovMoments are mp's CUPED moments in row (NaN when row is nil).
func rowCovMoments(mp *compiler.MetricPlan, row *results.Row) stats.CovariateMoments {
	m := rowMoments(mp, row)
	c := stats.CovariateMoments{N: m.N, MeanY: m.Mean, VarY: m.Var, MeanX: math.NaN(), VarX: math.NaN(), CovYX: math.NaN()}
	if row != nil {
		c.MeanX, c.VarX, c.CovYX = row.Stat(mp, compiler.StatXMean), row.Stat(mp, compiler.StatXVar), row.Stat(mp, compiler.StatYXCov)
	}
	return c
}

// rowRatioCovMoments are mp's ratio CUPED moments in row (NaN when row is
// nil).
func rowRatioCovMoments(mp *compiler.MetricPlan, row *results.Row) stats.RatioCovariateMoments {
	r := rowRatioMoments(mp, row)
	c := stats.RatioCovariateMoments{N: r.N, MeanNum: r.MeanNum, MeanDen: r.MeanDen, VarNum: r.VarNum, VarDen: r.VarDen, CovNumDen: r.Cov,
		MeanX: math.NaN(), VarX: math.NaN(), CovNumX: math.NaN(), CovDenX: math.NaN()}
	if row != nil {
		c.MeanX, c.VarX = row.Stat(mp, compiler.StatXMean), row.Stat(mp, compiler.StatXVar)
		c.CovNumX, c.CovDenX = row.Stat(mp, compiler.StatNumXCov), row.Stat(mp, compiler.StatDenXCov)
	}
	return c
}

func metricInfo(p *compiler.Plan, mp *compiler.MetricPlan, byVariant map[string]*results.Row, level float64) MetricInfo {
	m := mp.M
	mi := MetricInfo{Name: m.Name, Label: m.Label, Role: string(m.Role), Kind: kindName(m), Window: [2]string{m.From.Text, m.To.Text}, Rule: mp.Rule, Comparisons: []Compare{}}
	mi.Shared, mi.Overrides = sharedInfo(m) // shared.go
	if m.Role == metrics.Guard {
		mi.Harmful = string(m.Harmful)
		margin := m.Margin
		mi.Margin = &margin
	}
	stat := func(row *results.Row, st compiler.Stat) float64 {
		if row == nil {
			return math.NaN()
		}
		return row.Stat(mp, st)
	}
	nOf := func(row *results.Row) float64 {
		n := stat(row, compiler.StatN)
		if math.IsNaN(n) {
			return 0
		}
		return n
	}
	// theta and the covariate mean are pooled within each compared pair, so
	// a comparison does not change when another arm does.
	if mp.Cov != nil {
		c := m.Covariate
		mi.Covariate = &CovInfo{Metric: c.Of.Name, Window: [2]string{c.From.Text, c.To.Text}, Rule: mp.CovRule}
	}
	for _, v := range p.Variants {
		if n := stat(byVariant[v], compiler.StatNonFinite); !math.IsNaN(n) {
			mi.NonFiniteRows += int64(n)
		}
	}
	var base *results.Row
	for i, v := range p.Variants {
		row := byVariant[v]
		var est stats.Estimate
		switch m.Kind {
		case metrics.KindRatio:
			est = stats.RatioEstimate(rowRatioMoments(mp, row))
		case metrics.KindProportion:
			est = stats.ProportionEstimate(rowMoments(mp, row))
		default:
			est = stats.MeanEstimate(rowMoments(mp, row))
		}
		vv := VariantVal{Variant: v, N: int64(nOf(row)), Value: Num(est.Value), StdError: Num(est.StdError), Reason: est.Reason}
		if row != nil {
			vv.Immature = row.Units - vv.N
			mi.ImmatureUnits += vv.Immature
		}
		mi.Variants = append(mi.Variants, vv)
		if i == 0 {
			base = row
			continue
		}
		var c stats.Comparison
		switch m.Kind {
		case metrics.KindRatio:
			c = stats.RatioDiff(rowRatioMoments(mp, base), rowRatioMoments(mp, row), level)
		case metrics.KindProportion:
			c = stats.TwoProportion(rowMoments(mp, base), rowMoments(mp, row), level)
		default:
			c = stats.Welch(rowMoments(mp, base), rowMoments(mp, row), level)
		}
		cmp := compareOf(c, v, p.Variants[0])
		if mp.Cov != nil {
			var cc stats.CUPEDComparison
			if m.Kind == metrics.KindRatio {
				cc = stats.CUPEDRatio(rowRatioCovMoments(mp, base), rowRatioCovMoments(mp, row), level)
			} else {
				cc = stats.CUPEDWelch(rowCovMoments(mp, base), rowCovMoments(mp, row), level)
			}
			unadj := cmp
			if !cc.Adjusted {
				// No adjustment possible (e.g. a covariate that does not vary,
				// as for new users): the unadjusted comparison stands.
				cmp.CUPED = &CUPEDInfo{Theta: Num(math.NaN()), CovariateMean: Num(math.NaN()), VarianceReduction: Num(math.NaN()), Unadjusted: unadj,
					BaselineValue: Num(math.NaN()), BaselineStdError: Num(math.NaN()), VariantValue: Num(math.NaN()), VariantStdError: Num(math.NaN()), NotApplied: cc.AdjustReason}
			} else {
				c = cc.Comparison
				cmp = compareOf(c, v, p.Variants[0])
				// The reduction is measured against the unadjusted comparison the
				// report shows (for proportions, the p(1−p)/n standard error).
				vr := math.NaN()
				if u := float64(unadj.StdError); u > 0 && !math.IsInf(u, 0) && c.StdError >= 0 {
					vr = 1 - (c.StdError/u)*(c.StdError/u)
				}
				cmp.CUPED = &CUPEDInfo{Theta: Num(cc.Theta), CovariateMean: Num(cc.MeanX), VarianceReduction: Num(vr), Unadjusted: unadj,
					BaselineValue: Num(cc.Base.Value), BaselineStdError: Num(cc.Base.StdError), VariantValue: Num(cc.Treat.Value), VariantStdError: Num(cc.Treat.StdError)}
			}
		}
		if p.Spec.Monitoring == metrics.MonitoringSequential {
			// planned_units is the whole experiment's; each comparison is tuned
			// to its own pair's share of it.
			n := nOf(base) + nOf(row)
			target := stats.SequentialTarget(p.Spec.PlannedUnits, p.Weights, 0, i)
			if p.Spec.PlannedUnits == 0 || math.IsNaN(target) {
				target = n
			}
			sq := stats.SequentialDiff(c.Difference, c.StdError, n, stats.SequentialRho(1-level, target), 1-level)
			cmp.Sequential = &SeqInfo{CILow: Num(sq.CILow), CIHigh: Num(sq.CIHigh), PValue: Num(sq.PValue), Reason: sq.Reason}
		}
		if m.Role == metrics.Guard {
			g := stats.Guard(c, string(m.Harmful), m.Margin, level)
			bound := g.Upper
			if m.Harmful == metrics.Decrease {
				bound = g.Lower
			}
			cmp.Guard = &Guard{Verdict: string(g.Verdict), Alarming: g.Verdict.Alarming(), Level: level, Lower: Num(g.Lower), Upper: Num(g.Upper),
				PValue: Num(g.NoHarmP), HarmPValue: Num(g.HarmP), Bound: Num(bound), Reason: g.Reason}
		}
		mi.Comparisons = append(mi.Comparisons, cmp)
	}
	return mi
}

func compareOf(c stats.Comparison, variant, baseline string) Compare {
	return Compare{Variant: variant, Baseline: baseline, Method: c.Method,
		Difference: Num(c.Difference), StdError: Num(c.StdError), CILow: Num(c.CILow), CIHigh: Num(c.CIHigh),
		Relative: Num(c.Relative), RelativeCILow: Num(c.RelCILow), RelativeCIHigh: Num(c.RelCIHigh), RelativeShape: c.RelShape,
		Statistic: Num(c.Statistic), DF: Num(c.DF), PValue: Num(c.PValue), PValueAdjusted: Num(c.PValue),
		Reason: c.Reason, RelReason: c.RelReason}
}

// Families of comparisons for multiple testing.
const (
	FamilyPrimary   = "primary"   // the primary metric: adjusted only across treatment variants
	FamilySecondary = "secondary" // secondary and mechanism metrics, all variants together
	FamilyGuard     = "guard"     // guard metrics: not adjusted, judged by their verdicts
)

// adjustFamilies fills PValueAdjusted. The primary metric is tested at the
// stated level (adjusted only when there are several treatment variants);
// secondary and mechanism metrics form one family; guards are not adjusted,
// since adjusting would make harm harder to see.
func adjustFamilies(ms []MetricInfo, method string) {
	fam := map[string][]*Compare{}
	for i := range ms {
		f := FamilySecondary
		switch ms[i].Role {
		case string(metrics.Primary):
			f = FamilyPrimary
		case string(metrics.Guard):
			f = FamilyGuard
		}
		for j := range ms[i].Comparisons {
			c := &ms[i].Comparisons[j]
			c.Family = f
			fam[f] = append(fam[f], c)
		}
	}
	for f, cs := range fam {
		if f == FamilyGuard {
			continue
		}
		ps := make([]float64, len(cs))
		for i, c := range cs {
			ps[i] = float64(c.PValue)
		}
		for i, q := range adjust(method, ps) {
			cs[i].PValueAdjusted = Num(q)
		}
	}
}

func kindName(m *metrics.Metric) string {
	switch m.Kind {
	case metrics.KindRatio:
		return "ratio"
	case metrics.KindProportion:
		return "proportion"
	}
	return string(m.Value.Func)
}

func cautions(p *compiler.Plan, r *Report) []string {
	level := p.Spec.Confidence
	var c []string
	c = append(c,
		fmt.Sprintf("Intervals are %g%% confidence intervals; an interval that includes zero (not significant) is not evidence of no effect: effects inside the interval remain plausible.", level*100),
		"Results describe eligible units only: those whose first qualifying exposure fell in the analysis window, seen in one variant, and meeting every eligibility rule at their trigger. They do not describe the whole population.",
		fmt.Sprintf("Only the primary metric is tested at the stated level; secondary and mechanism metrics, several treatment variants and segment results are many comparisons, so read their adjusted p-values (%s); guard metrics are judged by their verdicts, unadjusted.", adjustName(r.Adjustment)),
		"Ratio, proportion and relative-lift intervals use large-sample normal approximations (delta method); they can be poor for small or very skewed samples.",
	)
	if p.Spec.Monitoring == metrics.MonitoringSequential {
		c = append(c, "Monitoring is sequential: the always-valid intervals and p-values (\"sequential\") stay valid however often you look and whenever you stop; the fixed-horizon ones beside them are valid only if read once at a duration fixed in advance.")
	} else if p.AsOfUS < p.Spec.End.UnixMicro() && (p.Spec.Planning == nil || p.Spec.Planning.PlannedEnd.IsZero()) {
		// With a planned end, AgainstPlan states the stage against it.
		c = append(c, "This is an interim look (as-of before the planned end) at a fixed-horizon design: stopping early because a p-value crossed the threshold inflates false positives; wait for the planned end or declare monitoring = \"sequential\".")
	}
	var immature int64
	for _, m := range r.Metrics {
		for _, v := range m.Variants {
			immature = max(immature, v.Immature)
		}
	}
	if immature > 0 {
		c = append(c, "Units whose outcome window had not fully elapsed by the as-of time are left out of that metric (see `immature`); late exposers may differ from early ones.")
	}
	for _, m := range r.Metrics {
		if m.NonFiniteRows > 0 {
			c = append(c, fmt.Sprintf("Metric %s: %d outcome rows had a value that is not a finite number and were left out of its sums; check the data.", m.Name, m.NonFiniteRows))
		}
	}
	for _, e := range r.Health.Exclusions {
		if e.Reason == "crossover" && e.Rate.OK() && float64(e.Rate) > 0.01 {
			c = append(c, fmt.Sprintf("%s of triggered units were seen in more than one variant and were excluded; check the assignment code.", pct(float64(e.Rate))))
		}
	}
	for _, m := range r.Metrics {
		if m.Covariate != nil {
			c = append(c, "CUPED-adjusted estimates (marked *) remove variance that pre-trigger behaviour predicts; they target the same effect as the unadjusted comparison shown beside them, and rely on the covariate being unaffected by the change (it is measured before each unit's trigger).")
			break
		}
	}
	c = append(c, "This report states evidence under these assumptions; whether to ship is a decision for the people who own the product.")
	return c
}

// addCaution adds c before the last caution (which is always the note that
// the report hands down no ship verdict).
func (r *Report) addCaution(c string) {
	if n := len(r.Cautions); n > 0 {
		r.Cautions = append(r.Cautions[:n-1], c, r.Cautions[n-1])
		return
	}
	r.Cautions = append(r.Cautions, c)
}

// JSON renders the report as indented JSON.
func (r *Report) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}
