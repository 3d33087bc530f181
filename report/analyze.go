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
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/engine"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/stats"
)

// SchemaVersion is the version of the JSON report contract. It changes
// only when a field is removed or changes meaning.
const SchemaVersion = 1

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
	return []byte(strconv.FormatFloat(f, 'g', 12, 64)), nil
}

// OK reports whether n is a finite number.
func (n Num) OK() bool { return !math.IsNaN(float64(n)) && !math.IsInf(float64(n), 0) }

// Report is the whole analysis of one experiment. Its JSON form is the
// versioned contract documented in README.md.
type Report struct {
	SchemaVersion int          `json:"schema_version"`
	ToolVersion   string       `json:"tool_version"`
	Experiment    Experiment   `json:"experiment"`
	Alarms        []string     `json:"alarms"`
	Health        Health       `json:"health"`
	Metrics       []MetricInfo `json:"metrics"`
	Cautions      []string     `json:"cautions"`
}

// Experiment describes what was analysed.
type Experiment struct {
	ID              string    `json:"id"`
	Hypothesis      string    `json:"hypothesis"`
	Unit            string    `json:"unit"`
	Start           string    `json:"start"`
	End             string    `json:"end"`
	AsOf            string    `json:"as_of"`
	TimeZone        string    `json:"time_zone"`
	Confidence      float64   `json:"confidence"`
	SpecFingerprint string    `json:"spec_fingerprint"`
	Variants        []Variant `json:"variants"`
}

// Variant is one arm with its planned weight and counts.
type Variant struct {
	Name           string  `json:"name"`
	Baseline       bool    `json:"baseline"`
	PlannedWeight  float64 `json:"planned_weight"`
	TriggeredUnits int64   `json:"triggered_units"`
	EligibleUnits  int64   `json:"eligible_units"`
}

// Health holds the checks a reader needs before trusting any effect.
type Health struct {
	ExposedUnits   int64              `json:"exposed_units"`
	NeverTriggered int64              `json:"never_triggered_units"`
	Triggered      int64              `json:"triggered_units"`
	Eligible       int64              `json:"eligible_units"`
	Exclusions     []Exclusion        `json:"exclusions"`
	IgnoredRows    map[string]int64   `json:"ignored_exposure_rows"`
	SampleRatio    SampleRatio        `json:"sample_ratio"`
	Daily          []Daily            `json:"daily"`
	Extra          map[string]float64 `json:"-"`
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
}

// MetricInfo is one metric's per-variant values and comparisons.
type MetricInfo struct {
	Name        string       `json:"name"`
	Label       string       `json:"label,omitempty"`
	Role        string       `json:"role"`
	Kind        string       `json:"kind"`
	Window      [2]string    `json:"window"`
	Rule        string       `json:"rule"`
	Harmful     string       `json:"harmful,omitempty"`
	Margin      *float64     `json:"margin,omitempty"`
	Variants    []VariantVal `json:"variants"`
	Comparisons []Compare    `json:"comparisons"`
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
	Statistic      Num    `json:"statistic"`
	DF             Num    `json:"df"`
	PValue         Num    `json:"p_value"`
	Reason         string `json:"reason,omitempty"`
	RelReason      string `json:"relative_reason,omitempty"`
	Guard          *Guard `json:"guard,omitempty"`
}

// Guard is a guard metric's verdict for one comparison.
type Guard struct {
	Verdict string `json:"verdict"`
	PValue  Num    `json:"p_value"` // one-sided non-inferiority p-value
	Bound   Num    `json:"bound"`   // one-sided bound on the harmful side
	Reason  string `json:"reason,omitempty"`
}

// Analyze builds the report from the plan and the engine's rows. The rows
// must be ungrouped (one per variant).
func Analyze(p *compiler.Plan, res *engine.Result) (*Report, error) {
	s := p.Spec
	r := &Report{SchemaVersion: SchemaVersion, ToolVersion: compiler.Version, Alarms: []string{}}
	r.Experiment = Experiment{
		ID: s.ID, Hypothesis: s.Hypothesis, Unit: s.Unit,
		Start: stamp(p.StartUS), End: stamp(p.EndUS), AsOf: stamp(p.AsOfUS),
		TimeZone: p.TZ, Confidence: s.Confidence, SpecFingerprint: s.Fingerprint,
	}
	byVariant := map[string]*engine.Row{}
	for i := range res.Rows {
		row := &res.Rows[i]
		if row.Fingerprint != "" && row.Fingerprint != s.Fingerprint {
			return nil, fmt.Errorf("result rows carry spec fingerprint %s, but the spec's is %s: the query was compiled from another version of the spec", row.Fingerprint, s.Fingerprint)
		}
		if len(row.Keys) > 0 {
			return nil, fmt.Errorf("Analyze needs ungrouped rows")
		}
		byVariant[row.Variant] = row
	}
	r.Health = health(p, res.Health, byVariant)
	for i, v := range s.Variants {
		vv := Variant{Name: v.Name, Baseline: i == 0, PlannedWeight: v.Weight}
		if row := byVariant[v.Name]; row != nil {
			vv.EligibleUnits = row.Units
		}
		for _, h := range res.Health {
			if h.Kind == "triggers" && h.Variant == v.Name {
				vv.TriggeredUnits += h.Units
			}
		}
		r.Experiment.Variants = append(r.Experiment.Variants, vv)
	}
	if r.Health.SampleRatio.Alarm {
		r.Alarms = append(r.Alarms, fmt.Sprintf("SAMPLE RATIO MISMATCH: eligible units per variant do not match the planned weights (chi-square p = %s < %g). Assignment or logging is likely broken; effects below are not trustworthy until the cause is found.", fmtP(float64(r.Health.SampleRatio.PValue)), SRMAlpha))
	}
	level := s.Confidence
	for _, mp := range p.Metrics {
		r.Metrics = append(r.Metrics, metricInfo(p, mp, byVariant, level))
	}
	for _, m := range r.Metrics {
		for _, c := range m.Comparisons {
			if c.Guard != nil && c.Guard.Verdict == stats.HarmShown {
				r.Alarms = append(r.Alarms, fmt.Sprintf("GUARD HARM: %s in %s %s beyond the tolerated %s (relative %s, interval %s to %s).",
					m.Name, c.Variant, pastTense(m.Harmful), pct(*m.Margin), pct(float64(c.Relative)), pct(float64(c.RelativeCILow)), pct(float64(c.RelativeCIHigh))))
			}
		}
	}
	r.Cautions = cautions(p, r)
	return r, nil
}

func pastTense(harm string) string {
	if harm == "decrease" {
		return "decreased"
	}
	return "increased"
}

func stamp(us int64) string { return time.UnixMicro(us).UTC().Format(time.RFC3339) }

func health(p *compiler.Plan, rows []engine.HealthRow, byVariant map[string]*engine.Row) Health {
	h := Health{IgnoredRows: map[string]int64{}, Exclusions: []Exclusion{}, Daily: []Daily{}}
	exc := map[string]*Exclusion{}
	var excOrder []string
	reasons := []string{"any", "crossover", "unknown_variant"}
	for _, r := range p.Rules {
		reasons = append(reasons, "rule:"+r.Name)
	}
	for _, r := range reasons {
		exc[r] = &Exclusion{Reason: r, ByVariant: map[string]int64{}}
		excOrder = append(excOrder, r)
	}
	daily := map[[2]string]*Daily{}
	for _, row := range rows {
		switch row.Kind {
		case "triggers":
			h.Triggered += row.Units
			d := dailyRow(daily, row.Day, row.Variant)
			d.TriggeredUnit += row.Units
		case "exposures":
			d := dailyRow(daily, row.Day, row.Variant)
			d.ExposureRows += row.Rows
			d.ExposedUnits += row.Units
		case "never_triggered":
			h.NeverTriggered += row.Units
		case "excluded":
			e := exc[row.Reason]
			if e == nil {
				e = &Exclusion{Reason: row.Reason, ByVariant: map[string]int64{}}
				exc[row.Reason] = e
				excOrder = append(excOrder, row.Reason)
			}
			e.Units += row.Units
			e.ByVariant[row.Variant] += row.Units
		case "ignored_rows":
			h.IgnoredRows[row.Reason] += row.Rows
		}
	}
	h.ExposedUnits = h.Triggered + h.NeverTriggered
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
	var obs, w []float64
	for _, v := range p.Spec.Variants {
		n := 0.0
		if row := byVariant[v.Name]; row != nil {
			n = float64(row.Units)
			h.Eligible += row.Units
		}
		obs = append(obs, n)
		w = append(w, v.Weight)
	}
	sr := stats.SampleRatio(obs, w)
	h.SampleRatio = SampleRatio{Statistic: Num(sr.Statistic), DF: Num(sr.DF), PValue: Num(sr.PValue), Alpha: SRMAlpha, Reason: sr.Reason}
	h.SampleRatio.Alarm = sr.Reason == "" && sr.PValue < SRMAlpha
	return h
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

func metricInfo(p *compiler.Plan, mp *compiler.MetricPlan, byVariant map[string]*engine.Row, level float64) MetricInfo {
	m := mp.M
	mi := MetricInfo{Name: m.Name, Label: m.Label, Role: string(m.Role), Kind: kindName(m), Window: [2]string{m.From.Text, m.To.Text}, Comparisons: []Compare{}}
	if m.Role == metrics.Guard {
		mi.Harmful = m.Harmful
		margin := m.Margin
		mi.Margin = &margin
	}
	stat := func(row *engine.Row, st string) float64 {
		if row == nil {
			return math.NaN()
		}
		v, ok := row.Stats[compiler.StatColumn(m.Name, st)]
		if !ok {
			return math.NaN()
		}
		return v
	}
	nOf := func(row *engine.Row) float64 {
		n := stat(row, compiler.StatN)
		if math.IsNaN(n) {
			return 0
		}
		return n
	}
	moments := func(row *engine.Row) stats.Moments {
		return stats.Moments{N: nOf(row), Mean: stat(row, compiler.StatMean), Var: stat(row, compiler.StatVar)}
	}
	rmoments := func(row *engine.Row) stats.RatioMoments {
		return stats.RatioMoments{N: nOf(row), MeanNum: stat(row, compiler.StatNumMean), MeanDen: stat(row, compiler.StatDenMean),
			VarNum: stat(row, compiler.StatNumVar), VarDen: stat(row, compiler.StatDenVar), Cov: stat(row, compiler.StatCov)}
	}
	var base *engine.Row
	for i, v := range p.Variants {
		row := byVariant[v]
		var est stats.Estimate
		switch m.Kind {
		case metrics.KindRatio:
			est = stats.RatioEstimate(rmoments(row))
		case metrics.KindProportion:
			est = stats.ProportionEstimate(moments(row))
		default:
			est = stats.MeanEstimate(moments(row))
		}
		vv := VariantVal{Variant: v, N: int64(nOf(row)), Value: Num(est.Value), StdError: Num(est.StdError), Reason: est.Reason}
		if row != nil {
			vv.Immature = row.Units - vv.N
		}
		mi.Variants = append(mi.Variants, vv)
		if i == 0 {
			base = row
			continue
		}
		var c stats.Comparison
		switch m.Kind {
		case metrics.KindRatio:
			c = stats.RatioDiff(rmoments(base), rmoments(row), level)
		case metrics.KindProportion:
			c = stats.TwoProportion(moments(base), moments(row), level)
		default:
			c = stats.Welch(moments(base), moments(row), level)
		}
		cmp := Compare{Variant: v, Baseline: p.Variants[0], Method: c.Method,
			Difference: Num(c.Difference), StdError: Num(c.StdError), CILow: Num(c.CILow), CIHigh: Num(c.CIHigh),
			Relative: Num(c.Relative), RelativeCILow: Num(c.RelCILow), RelativeCIHigh: Num(c.RelCIHigh),
			Statistic: Num(c.Statistic), DF: Num(c.DF), PValue: Num(c.PValue), Reason: c.Reason, RelReason: c.RelReason}
		if m.Role == metrics.Guard {
			g := stats.GuardComparison(c, m.Harmful, m.Margin, level)
			cmp.Guard = &Guard{Verdict: g.Verdict, PValue: Num(g.PValue), Bound: Num(g.Bound), Reason: g.Reason}
		}
		mi.Comparisons = append(mi.Comparisons, cmp)
	}
	return mi
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
		"Only the primary metric is tested at the stated level; secondary, mechanism and guard metrics and several treatment variants are separate comparisons, and some will look significant by chance.",
		"Ratio, proportion and relative-lift intervals use large-sample normal approximations (delta method); they can be poor for small or very skewed samples.",
	)
	var immature int64
	for _, m := range r.Metrics {
		for _, v := range m.Variants {
			immature = max(immature, v.Immature)
		}
	}
	if immature > 0 {
		c = append(c, "Units whose outcome window had not fully elapsed by the as-of time are left out of that metric (see `immature`); late exposers may differ from early ones.")
	}
	for _, e := range r.Health.Exclusions {
		if e.Reason == "crossover" && e.Rate.OK() && float64(e.Rate) > 0.01 {
			c = append(c, fmt.Sprintf("%s of triggered units were seen in more than one variant and were excluded; check the assignment code.", pct(float64(e.Rate))))
		}
	}
	c = append(c, "This report states evidence under these assumptions; whether to ship is a decision for the people who own the product.")
	return c
}

// JSON renders the report as indented JSON.
func (r *Report) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}
