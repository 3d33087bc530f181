package report

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// Sizing is a pre-launch plan computed from the team's own data: the
// stand-in cohort of a pre-period (compiler.Options.StandIn), read through
// the same compiled SQL as a run. It holds each metric's baseline, the
// traffic as it really accumulated, the minimum detectable effect of every
// whole-week duration and, given a target effect, the shortest duration
// that reaches it. Its JSON form is part of the documented contract
// (schema_version as Report's).
type Sizing struct {
	SchemaVersion int    `json:"schema_version"`
	ToolVersion   string `json:"tool_version"`
	Experiment    string `json:"experiment"`
	// PreStart and PreEnd are the pre-period the numbers come from.
	PreStart   string  `json:"pre_start"`
	PreEnd     string  `json:"pre_end"`
	TimeZone   string  `json:"time_zone"`
	StandIn    string  `json:"stand_in"`
	Confidence float64 `json:"confidence"`
	Power      float64 `json:"power"`
	Monitoring string  `json:"monitoring"`
	// Adjustment is the multiple-testing method the run will use, which
	// sets the per-comparison level of several arms and secondary metrics.
	Adjustment     string    `json:"adjustment"`
	Arms           []SizeArm `json:"arms"`
	TriggeredUnits int64     `json:"triggered_units"`
	EligibleUnits  int64     `json:"eligible_units"`
	// ExcludedShare is the share of triggered units the eligibility rules
	// left out.
	ExcludedShare Num           `json:"excluded_share"`
	Exclusions    []Exclusion   `json:"exclusions"`
	Traffic       []WeekTraffic `json:"traffic"`
	Baselines     []Baseline    `json:"baselines"`
	Weeks         []SizeWeek    `json:"weeks"`
	Target        *SizeTarget   `json:"target,omitempty"`
	// TOML is the [planning] table to paste into the spec.
	TOML     string   `json:"toml"`
	Cautions []string `json:"cautions"`
}

// SizeArm is a planned arm with its weight.
type SizeArm struct {
	Name     string  `json:"name"`
	Baseline bool    `json:"baseline"`
	Weight   float64 `json:"weight"`
}

// WeekTraffic is the number of distinct eligible units whose stand-in
// trigger fell in the first Week whole weeks of the pre-period (observed),
// or an extrapolation beyond the pre-period's last whole week.
type WeekTraffic struct {
	Week         int   `json:"week"`
	Units        int64 `json:"units"`
	Extrapolated bool  `json:"extrapolated"`
}

// Baseline is one metric's pooled per-unit moments in the pre-period.
type Baseline struct {
	Metric string `json:"metric"`
	Role   string `json:"role"`
	Kind   string `json:"kind"`
	N      int64  `json:"n"`
	Mean   Num    `json:"mean"`
	// Variance is the per-unit variance the test uses: the sample
	// variance, p(1 − p) for a proportion, the linearised (delta-method)
	// variance for a ratio.
	Variance Num `json:"variance"`
	// CUPEDRho2 is the squared correlation of the metric with its
	// covariate, the share of variance CUPED removes; CUPEDVariance is
	// what remains. Both null without a covariate.
	CUPEDRho2     Num `json:"cuped_rho2"`
	CUPEDVariance Num `json:"cuped_variance"`
	// Test says how the metric is judged: "two-sided" (primary,
	// secondary, mechanism), "non-inferiority" (guards, one-sided against
	// the margin) or "sequential" (always-valid, two-sided).
	Test string `json:"test"`
	// Alpha is the per-comparison significance level planned with.
	Alpha  float64  `json:"alpha"`
	Margin *float64 `json:"margin,omitempty"`
	Reason string   `json:"reason,omitempty"`
}

// SizeWeek is one whole-week duration: expected eligible units and each
// metric's minimum detectable effect.
type SizeWeek struct {
	Week        int       `json:"week"`
	End         string    `json:"end"` // experiment start + Week weeks
	Units       int64     `json:"units"`
	UnitsPerArm []float64 `json:"units_per_arm"` // in Arms order
	MDE         []SizeMDE `json:"mde"`           // in Baselines order
}

// SizeMDE is a metric's minimum detectable effect at one duration, for the
// smallest treatment arm against the baseline. For guards it is the
// largest true harm (relative, in the harmful direction) that still clears
// the margin with the planned power; negative when even no change would
// not clear it.
type SizeMDE struct {
	Metric   string `json:"metric"`
	Absolute Num    `json:"absolute"`
	Relative Num    `json:"relative"`
	// CUPED values use the adjusted variance; null without a covariate.
	CUPEDAbsolute Num `json:"cuped_absolute"`
	CUPEDRelative Num `json:"cuped_relative"`
}

// SizeTarget is the answer for a target effect on the primary metric.
type SizeTarget struct {
	Metric   string `json:"metric"`
	Absolute Num    `json:"absolute"`
	Relative Num    `json:"relative"`
	// UnitsPerArm are the eligible units each arm needs (Arms order), and
	// Units all arms together.
	UnitsPerArm []float64 `json:"units_per_arm"`
	Units       Num       `json:"units"`
	// Weeks is the shortest whole-week duration reaching Units, 0 when no
	// duration up to the maximum does.
	Weeks int `json:"weeks"`
	// PlannedEnd is the experiment's start plus Weeks; ReadFrom is when
	// every outcome window of the last unit has elapsed.
	PlannedEnd string `json:"planned_end,omitempty"`
	ReadFrom   string `json:"read_from,omitempty"`
	// AtMax is the effect (absolute and relative) the longest duration
	// could detect.
	AtMaxAbsolute Num    `json:"at_max_absolute"`
	AtMaxRelative Num    `json:"at_max_relative"`
	UsesCUPED     bool   `json:"uses_cuped"`
	Statement     string `json:"statement"`
}

// SizeOptions are the planning inputs not in the plan.
type SizeOptions struct {
	Power    float64 // 0 means the spec's, else metrics.DefaultPower
	MaxWeeks int     // 0 means the spec's, else metrics.DefaultMaxWeeks
	// Target is the target effect on the primary metric (relative when
	// TargetRelative); 0 means the spec's, if any.
	Target         float64
	TargetRelative bool
	// Adjust is the run's multiple-testing method ("holm" by default).
	Adjust string
}

// Size computes the plan from the decoded result of a planning query
// compiled with compiler.Options{StandIn: true, Breakdowns: [trigger_day]}
// and run with the health query.
func Size(p *compiler.Plan, set *results.Set, opt SizeOptions) (*Sizing, error) {
	s := p.Spec
	if !p.Pooled || p.Splits > 0 {
		return nil, fmt.Errorf("a plan is computed from a planning query (compiled with the stand-in trigger, no splits)")
	}
	day := -1
	for i, g := range p.GroupBy {
		if g.Day {
			day = i
		}
	}
	if day < 0 {
		return nil, fmt.Errorf("a plan needs the planning query broken down by %s", compiler.KeyTriggerDay)
	}
	if len(set.Rows) > 0 && (set.SpecFingerprint != s.Fingerprint || set.Options != p.Options.Text()) {
		return nil, fmt.Errorf("the result does not belong to this plan (fingerprint %s, options %q)", set.SpecFingerprint, set.Options)
	}
	pl := s.Planning
	if opt.Power == 0 {
		opt.Power = metrics.DefaultPower
		if pl != nil {
			opt.Power = pl.Power
		}
	}
	if opt.MaxWeeks == 0 {
		opt.MaxWeeks = metrics.DefaultMaxWeeks
		if pl != nil {
			opt.MaxWeeks = pl.MaxWeeks
		}
	}
	if opt.Target == 0 && pl != nil && pl.Target > 0 {
		opt.Target, opt.TargetRelative = pl.Target, pl.TargetRelative
	}
	if opt.Adjust == "" {
		opt.Adjust = "holm"
	}
	if !(opt.Power > 0 && opt.Power < 1) || opt.MaxWeeks < 1 || opt.MaxWeeks > metrics.MaxPlanWeeks || opt.Target < 0 || math.IsNaN(opt.Target) {
		return nil, fmt.Errorf("power must be in (0, 1), max weeks in 1..%d and the target effect positive", metrics.MaxPlanWeeks)
	}
	z := &Sizing{SchemaVersion: SchemaVersion, ToolVersion: compiler.Version, Experiment: s.ID,
		PreStart: stamp(p.StartUS), PreEnd: stamp(p.EndUS), TimeZone: p.TZ,
		StandIn: s.Exposure.Source.Name + filterText(s.Exposure.Filter), Confidence: s.Confidence,
		Power: opt.Power, Monitoring: string(s.Monitoring), Adjustment: opt.Adjust,
		Exclusions: []Exclusion{}, Cautions: []string{}}
	for i, v := range s.Variants {
		z.Arms = append(z.Arms, SizeArm{Name: v.Name, Baseline: i == 0, Weight: v.Weight})
	}
	overall := set.Overall()
	var row *results.Row
	for i := range overall {
		if overall[i].Variant == compiler.PooledArm {
			row = &overall[i]
		}
	}
	if row == nil || row.Units == 0 {
		return nil, fmt.Errorf("the pre-period [%s, %s) has no eligible units with the stand-in trigger %s: check the stand-in source and filter, the eligibility rules and the period", z.PreStart, z.PreEnd, z.StandIn)
	}
	z.EligibleUnits = row.Units
	sizeHealth(p, set.Health, z)

	// Traffic: distinct eligible units by whole week of the pre-period.
	days := map[int]int64{}
	loc := s.TimeZone
	if loc == nil {
		loc = time.UTC
	}
	t0 := time.UnixMicro(p.StartUS).In(loc)
	d0 := time.Date(t0.Year(), t0.Month(), t0.Day(), 0, 0, 0, 0, time.UTC)
	for _, r := range set.Group(day) {
		if len(r.Key) < 10 {
			continue
		}
		d, err := time.Parse("2006-01-02", r.Key[:10])
		if err != nil {
			continue
		}
		days[int(math.Round(d.Sub(d0).Hours()/24))] += r.Units
	}
	observed := int((p.EndUS - p.StartUS) / (7 * 86400e6))
	var cum []int64 // cum[k] = units in the first k weeks, k ≤ observed
	cum = append(cum, 0)
	for k := 1; k <= observed; k++ {
		n := cum[k-1]
		for d := 7 * (k - 1); d < 7*k; d++ {
			n += days[d]
		}
		cum = append(cum, n)
	}
	if observed == 0 {
		z.Cautions = append(z.Cautions, "The pre-period is shorter than one week: every weekly count is extrapolated from it at its average daily rate; use a pre-period of several whole weeks.")
	}
	for k := 1; k <= opt.MaxWeeks; k++ {
		var n int64
		ext := k > observed
		switch {
		case !ext:
			n = cum[k]
		case observed > 0:
			// New units in the last observed week keep arriving at that
			// rate: returning units make later weeks add fewer new units
			// than earlier ones, and the latest week is the best guess.
			last := cum[observed] - cum[observed-1]
			n = cum[observed] + int64(k-observed)*last
		default:
			span := float64(p.EndUS-p.StartUS) / (7 * 86400e6)
			n = int64(math.Floor(float64(z.EligibleUnits) * float64(k) / span))
		}
		z.Traffic = append(z.Traffic, WeekTraffic{Week: k, Units: n, Extrapolated: ext})
	}
	if opt.MaxWeeks > observed && observed > 0 {
		z.Cautions = append(z.Cautions, fmt.Sprintf("The pre-period holds %d whole week(s); traffic beyond it is extrapolated at the rate of new units in its last week (marked *). Returning units make new units arrive more slowly over time, so longer pre-periods give better estimates.", observed))
	}

	// Baselines and the level of each test.
	alpha := 1 - s.Confidence
	treatments := len(s.Variants) - 1
	secondaries := 0
	for _, mp := range p.Metrics {
		if mp.M.Role == metrics.Secondary || mp.M.Role == metrics.Mechanism {
			secondaries++
		}
	}
	for _, mp := range p.Metrics {
		z.Baselines = append(z.Baselines, baseline(mp, row, alpha, treatments, secondaries, opt.Adjust, string(s.Monitoring)))
	}

	// The smallest treatment arm against the baseline is the hardest
	// comparison; its MDE holds for every arm.
	wBase, wTreat := s.Variants[0].Weight, math.Inf(1)
	for _, v := range s.Variants[1:] {
		wTreat = math.Min(wTreat, v.Weight)
	}
	for _, tr := range z.Traffic {
		w := SizeWeek{Week: tr.Week, End: s.Start.Add(time.Duration(tr.Week) * 7 * 24 * time.Hour).In(loc).Format(time.RFC3339), Units: tr.Units}
		for _, a := range z.Arms {
			w.UnitsPerArm = append(w.UnitsPerArm, float64(tr.Units)*a.Weight)
		}
		for i := range z.Baselines {
			w.MDE = append(w.MDE, mdeAt(&z.Baselines[i], float64(tr.Units), wBase, wTreat, opt.Power))
		}
		z.Weeks = append(z.Weeks, w)
	}
	for _, b := range z.Baselines {
		if b.Reason != "" {
			z.Cautions = append(z.Cautions, fmt.Sprintf("Metric %s cannot be sized: %s.", b.Metric, b.Reason))
		}
	}
	if opt.Target > 0 {
		z.Target = sizeTarget(p, z, opt, wBase, wTreat)
	}
	z.TOML = sizeTOML(s, z, opt)
	z.Cautions = append(z.Cautions,
		"Baselines come from the stand-in cohort of the pre-period: if the stand-in trigger or the season differs from the experiment's, so will the variances and the traffic.",
		"Minimum detectable effects are for the smallest treatment arm against the baseline, at the level each metric will be tested at in the run (the per-comparison level of the run's multiple-testing adjustment for several arms and secondary metrics), with normal approximations.",
		fmt.Sprintf("A duration of k weeks means exposures from the start for k whole weeks; read the result once, after every outcome window has elapsed (%s after the end), and not before: stopping at an interim look because a p-value crossed the threshold inflates false positives.", durationText(maxWindow(p))),
		"This plan sizes the experiment; it does not predict its outcome.")
	return z, nil
}

func filterText(f *metrics.Expr) string {
	if f == nil {
		return ""
	}
	return " where " + f.Text
}

// sizeHealth fills the triggered units and exclusions of the pre-period.
func sizeHealth(p *compiler.Plan, hs []results.HealthRow, z *Sizing) {
	excluded := map[string]int64{}
	for _, h := range hs {
		switch h.Kind {
		case compiler.HealthTriggers:
			z.TriggeredUnits += h.Units
		case compiler.HealthExcluded:
			excluded[h.Reason] += h.Units
		}
	}
	z.ExcludedShare = Num(ratio(float64(excluded[compiler.ExcludedAny]), float64(z.TriggeredUnits)))
	for _, x := range p.Exclusions {
		if x.Rule == nil {
			continue // no variants before launch: no crossovers, no unknown variants
		}
		z.Exclusions = append(z.Exclusions, Exclusion{Reason: x.Reason, Units: excluded[x.Reason], ByVariant: map[string]int64{},
			Rate: Num(ratio(float64(excluded[x.Reason]), float64(z.TriggeredUnits)))})
	}
}

// baseline reads a metric's pooled moments from the planning query's row.
func baseline(mp *compiler.MetricPlan, row *results.Row, alpha float64, treatments, secondaries int, adjust, monitoring string) Baseline {
	m := mp.M
	b := Baseline{Metric: m.Name, Role: string(m.Role), Kind: kindName(m), Test: "two-sided",
		CUPEDRho2: Num(math.NaN()), CUPEDVariance: Num(math.NaN())}
	n := row.Stat(mp, compiler.StatN)
	b.N = int64(n)
	// Per-comparison levels as the run applies them (report.adjustFamilies):
	// the primary is adjusted across treatment arms only; secondary and
	// mechanism metrics form one family of every metric and arm; guards
	// are not adjusted.
	switch m.Role {
	case metrics.Primary:
		b.Alpha = stats.PerComparisonAlpha(alpha, treatments, adjust)
	case metrics.Guard:
		b.Alpha, b.Test = alpha, "non-inferiority"
		mg := m.Margin
		b.Margin = &mg
	default:
		b.Alpha = stats.PerComparisonAlpha(alpha, max(1, treatments*secondaries), adjust)
	}
	if monitoring == "sequential" && m.Role != metrics.Guard {
		b.Test = "sequential"
	}
	var mean, variance, rho float64 = math.NaN(), math.NaN(), math.NaN()
	switch m.Kind {
	case metrics.KindRatio:
		rm := stats.RatioMoments{N: n, MeanNum: row.Stat(mp, compiler.StatNumMean), MeanDen: row.Stat(mp, compiler.StatDenMean),
			VarNum: row.Stat(mp, compiler.StatNumVar), VarDen: row.Stat(mp, compiler.StatDenVar), Cov: row.Stat(mp, compiler.StatCov)}
		lin, reason := stats.Linearize(rm)
		mean, variance, b.Reason = lin.Mean, lin.Var, reason
		if mp.Cov != nil && reason == "" {
			cm, r2 := stats.LinearizeCovariate(stats.RatioCovariateMoments{N: n, MeanNum: rm.MeanNum, MeanDen: rm.MeanDen,
				VarNum: rm.VarNum, VarDen: rm.VarDen, CovNumDen: rm.Cov, MeanX: row.Stat(mp, compiler.StatXMean),
				VarX: row.Stat(mp, compiler.StatXVar), CovNumX: row.Stat(mp, compiler.StatNumXCov), CovDenX: row.Stat(mp, compiler.StatDenXCov)})
			if r2 == "" {
				rho = cm.CovYX / math.Sqrt(cm.VarY*cm.VarX)
			}
		}
	case metrics.KindProportion:
		mean = row.Stat(mp, compiler.StatMean)
		variance = mean * (1 - mean)
	default:
		mean, variance = row.Stat(mp, compiler.StatMean), row.Stat(mp, compiler.StatVar)
	}
	if m.Kind != metrics.KindRatio && mp.Cov != nil {
		rho = row.Stat(mp, compiler.StatYXCov) / math.Sqrt(row.Stat(mp, compiler.StatVar)*row.Stat(mp, compiler.StatXVar))
	}
	b.Mean, b.Variance = Num(mean), Num(variance)
	switch {
	case b.Reason != "":
	case n < 2:
		b.Reason = "fewer than two units in the pre-period have a complete outcome window"
	case !(variance > 0):
		b.Reason = "its per-unit values do not vary in the pre-period (zero variance), so no sample size follows from them; check the metric's definition and the stand-in cohort"
	}
	if mp.Cov != nil && !math.IsNaN(rho) && !math.IsInf(rho, 0) {
		rho = math.Max(-1, math.Min(1, rho))
		b.CUPEDRho2 = Num(rho * rho)
		b.CUPEDVariance = Num(stats.CUPEDVariance(variance, rho))
	}
	return b
}

// mdeAt is a metric's minimum detectable effect with units eligible units
// in all, split by the weights, for the pair (baseline, smallest arm).
func mdeAt(b *Baseline, units, wBase, wTreat, power float64) SizeMDE {
	out := SizeMDE{Metric: b.Metric}
	abs := func(variance float64, cuped bool) float64 {
		if b.Reason != "" || !(variance > 0) || !(units > 0) {
			return math.NaN()
		}
		nPair := units * (wBase + wTreat)
		arms := stats.Arms{WBase: wBase, WTreat: wTreat, VarBase: variance, VarTreat: variance}
		se := arms.SE(nPair)
		switch {
		case b.Test == "non-inferiority":
			// On the relative scale, as the guard judges it: the largest
			// true relative harm that still clears the margin.
			return math.NaN()
		case b.Test == "sequential":
			return stats.SequentialMDE(se, nPair, 0, b.Alpha, power)
		case b.Kind == "proportion" && !cuped:
			// Fleiss' test of two proportions, per arm; unequal arms by
			// their harmonic mean (exact for equal arms).
			nb, nt := units*wBase, units*wTreat
			return stats.PropMDE(2*nb*nt/(nb+nt), float64(b.Mean), b.Alpha, power, true)
		}
		return stats.NormalMDE(se, b.Alpha, power, true)
	}
	mean := float64(b.Mean)
	out.Absolute = Num(abs(float64(b.Variance), false))
	out.Relative = Num(stats.RelativeMDE(float64(out.Absolute), mean))
	out.CUPEDAbsolute, out.CUPEDRelative = Num(math.NaN()), Num(math.NaN())
	if b.CUPEDVariance.OK() {
		out.CUPEDAbsolute = Num(abs(float64(b.CUPEDVariance), true))
		out.CUPEDRelative = Num(stats.RelativeMDE(float64(out.CUPEDAbsolute), mean))
	}
	if b.Test == "non-inferiority" && b.Reason != "" {
		return out
	}
	if b.Test == "non-inferiority" {
		tolerable := func(variance float64) (float64, float64) {
			if !(variance > 0) || !(units > 0) || mean == 0 {
				return math.NaN(), math.NaN()
			}
			arms := stats.Arms{WBase: wBase, WTreat: wTreat, VarBase: variance, VarTreat: variance}
			seRel := arms.SE(units*(wBase+wTreat)) / math.Abs(mean)
			rel := -stats.NonInferiorityMDE(seRel, *b.Margin, b.Alpha, power)
			return rel * math.Abs(mean), rel
		}
		a, r := tolerable(float64(b.Variance))
		out.Absolute, out.Relative = Num(a), Num(r)
		if b.CUPEDVariance.OK() {
			a, r = tolerable(float64(b.CUPEDVariance))
			out.CUPEDAbsolute, out.CUPEDRelative = Num(a), Num(r)
		}
	}
	return out
}

// sizeTarget finds the shortest whole-week duration at which the primary
// metric's target effect is detected with the planned power.
func sizeTarget(p *compiler.Plan, z *Sizing, opt SizeOptions, wBase, wTreat float64) *SizeTarget {
	var b *Baseline
	for i := range z.Baselines {
		if z.Baselines[i].Role == string(metrics.Primary) {
			b = &z.Baselines[i]
		}
	}
	if b == nil {
		return nil
	}
	t := &SizeTarget{Metric: b.Metric, Units: Num(math.NaN()), AtMaxAbsolute: Num(math.NaN()), AtMaxRelative: Num(math.NaN())}
	mean := float64(b.Mean)
	effect := opt.Target
	if opt.TargetRelative {
		effect = opt.Target * math.Abs(mean)
	}
	t.Absolute, t.Relative = Num(effect), Num(stats.RelativeMDE(effect, mean))
	variance := float64(b.Variance)
	if b.CUPEDVariance.OK() {
		variance, t.UsesCUPED = float64(b.CUPEDVariance), true
	}
	last := z.Weeks[len(z.Weeks)-1]
	atMax := last.MDE[0]
	for _, m := range last.MDE {
		if m.Metric == b.Metric {
			atMax = m
		}
	}
	t.AtMaxAbsolute, t.AtMaxRelative = atMax.Absolute, atMax.Relative
	if t.UsesCUPED {
		t.AtMaxAbsolute, t.AtMaxRelative = atMax.CUPEDAbsolute, atMax.CUPEDRelative
	}
	if b.Reason != "" || !(effect > 0) {
		t.Statement = fmt.Sprintf("The target cannot be sized: %s.", orText(b.Reason, "the baseline mean is zero, so a relative target has no size"))
		return t
	}
	arms := stats.Arms{WBase: wBase, WTreat: wTreat, VarBase: variance, VarTreat: variance}
	var nPair float64
	switch {
	case b.Test == "sequential":
		nPair = stats.SequentialN(arms, effect, 0, b.Alpha, opt.Power)
	case b.Kind == "proportion" && !t.UsesCUPED:
		// Fleiss: per-arm n for equal arms; unequal arms need the harmonic
		// mean of the two arms' sizes to equal it.
		nh := stats.PropN(mean, mean+effect, b.Alpha, opt.Power, true)
		if mean+effect > 1 {
			nh = stats.PropN(mean, mean-effect, b.Alpha, opt.Power, true)
		}
		// 2·nb·nt/(nb+nt) = nh with nb = U·wB, nt = U·wT.
		u := nh * (wBase + wTreat) / (2 * wBase * wTreat)
		nPair = u * (wBase + wTreat)
	default:
		nPair = arms.TotalN(effect, b.Alpha, opt.Power, true)
	}
	if math.IsNaN(nPair) {
		t.Statement = "No sample size reaches the target at this power (the effect is too large for a proportion, or the inputs are invalid)."
		return t
	}
	units := math.Ceil(nPair / (wBase + wTreat))
	t.Units = Num(units)
	for _, a := range z.Arms {
		t.UnitsPerArm = append(t.UnitsPerArm, math.Ceil(units*a.Weight))
	}
	for _, w := range z.Weeks {
		if float64(w.Units) >= units {
			t.Weeks = w.Week
			t.PlannedEnd = w.End
			end, _ := time.Parse(time.RFC3339, w.End)
			t.ReadFrom = end.Add(time.Duration(maxWindow(p)) * time.Microsecond).Format(time.RFC3339)
			break
		}
	}
	scale := pct(t.Relative.f())
	if t.Weeks > 0 {
		t.Statement = fmt.Sprintf("To detect %s (%s) on %s with %g%% power, each arm needs about %s eligible units (%s in all): %d whole week(s), ending %s; read the result from %s.",
			fmtNum(t.Absolute), scale, b.Metric, opt.Power*100, armList(z.Arms, t.UnitsPerArm), fmtCount(units), t.Weeks, t.PlannedEnd, t.ReadFrom)
	} else {
		t.Statement = fmt.Sprintf("No duration up to %d weeks reaches %s (%s) on %s with %g%% power: it needs about %s eligible units in all, and %d weeks are expected to bring %s. The most that %d weeks can detect is %s (%s).",
			opt.MaxWeeks, fmtNum(t.Absolute), scale, b.Metric, opt.Power*100, fmtCount(units), opt.MaxWeeks, fmtCount(float64(last.Units)), opt.MaxWeeks, fmtNum(t.AtMaxAbsolute), pct(t.AtMaxRelative.f()))
	}
	return t
}

func (n Num) f() float64 { return float64(n) }

func orText(s, def string) string {
	if s == "" {
		return def
	}
	return s
}

func fmtCount(f float64) string {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return "n/a"
	}
	return strconv.FormatFloat(math.Ceil(f), 'f', 0, 64)
}

func armList(arms []SizeArm, units []float64) string {
	parts := make([]string, len(arms))
	for i, a := range arms {
		u := math.NaN()
		if i < len(units) {
			u = units[i]
		}
		parts[i] = a.Name + " " + fmtCount(u)
	}
	return strings.Join(parts, ", ")
}

// maxWindow is the longest outcome window end of the plan's metrics, in
// microseconds.
func maxWindow(p *compiler.Plan) int64 {
	var w int64
	for _, mp := range p.Metrics {
		w = max(w, mp.M.To.Micros)
	}
	return w
}

func durationText(us int64) string {
	d := us / 86400e6
	if us%86400e6 == 0 {
		return fmt.Sprintf("%d days", d)
	}
	return (time.Duration(us) * time.Microsecond).String()
}

// sizeTOML renders the [planning] table to paste into the spec.
func sizeTOML(s *metrics.Spec, z *Sizing, opt SizeOptions) string {
	var b strings.Builder
	loc := s.TimeZone
	if loc == nil {
		loc = time.UTC
	}
	ts := func(stampUTC string) string {
		t, err := time.Parse(time.RFC3339, stampUTC)
		if err != nil {
			return tomlString(stampUTC)
		}
		return t.In(loc).Format(time.RFC3339)
	}
	b.WriteString("[planning]\n")
	si := s.Exposure
	fmt.Fprintf(&b, "stand_in = { source = %s", tomlString(si.Source.Name))
	if si.Filter != nil {
		fmt.Fprintf(&b, ", filter = %s", tomlString(si.Filter.Text))
	}
	b.WriteString(" }\n")
	fmt.Fprintf(&b, "pre_start = %s\npre_end = %s\n", ts(z.PreStart), ts(z.PreEnd))
	if opt.Target > 0 {
		scale := "absolute"
		if opt.TargetRelative {
			scale = "relative"
		}
		fmt.Fprintf(&b, "target_effect = %s\ntarget_scale = %q\n", strconv.FormatFloat(opt.Target, 'g', -1, 64), scale)
	}
	fmt.Fprintf(&b, "power = %s\nmax_weeks = %d\n", strconv.FormatFloat(opt.Power, 'g', -1, 64), opt.MaxWeeks)
	if t := z.Target; t != nil && t.Weeks > 0 {
		fmt.Fprintf(&b, "planned_end = %s\nplanned_units = %s\n", t.PlannedEnd, fmtCount(float64(t.Units)))
	} else if opt.Target > 0 {
		b.WriteString("# no duration up to max_weeks reaches the target: no planned_end or planned_units\n")
	}
	return b.String()
}

// tomlString quotes s as a TOML basic string.
func tomlString(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '"' || r == '\\':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r < 0x20 || r == 0x7f:
			fmt.Fprintf(&b, "\\u%04X", r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// JSON renders the plan as indented JSON.
func (z *Sizing) JSON() ([]byte, error) {
	b, err := json.MarshalIndent(z, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// Text renders the plan for a terminal.
func (z *Sizing) Text() string { return z.document().text() }

// Markdown renders the plan for a review.
func (z *Sizing) Markdown() string { return z.document().markdown() }

func (z *Sizing) document() *document {
	d := &document{}
	d.heading(1, "assay %s: plan for experiment %s", z.ToolVersion, z.Experiment)
	d.para("Pre-period [%s, %s), time zone %s; stand-in trigger: the first row of %s.", z.PreStart, z.PreEnd, z.TimeZone, z.StandIn)
	d.para("Confidence %g%%, power %g%%, monitoring %s, multiple-testing adjustment %s.", z.Confidence*100, z.Power*100, z.Monitoring, adjustName(z.Adjustment))
	arms := make([]string, len(z.Arms))
	for i, a := range z.Arms {
		arms[i] = fmt.Sprintf("%s %s", a.Name, pctAbs(a.Weight))
	}
	d.para("Planned weights: %s.", strings.Join(arms, ", "))
	if z.Target != nil {
		d.para("%s", z.Target.Statement)
	}

	d.heading(2, "Traffic in the pre-period")
	d.para("%d units triggered; %d eligible; %s excluded by the eligibility rules.", z.TriggeredUnits, z.EligibleUnits, pctAbs(float64(z.ExcludedShare)))
	if len(z.Exclusions) > 0 {
		t := &table{head: []string{"rule", "excluded", "share of triggered"}, left: 1}
		for _, x := range z.Exclusions {
			t.rows = append(t.rows, []string{strings.TrimPrefix(x.Reason, "rule:"), strconv.FormatInt(x.Units, 10), pctAbs(float64(x.Rate))})
		}
		d.tab(t)
	}

	d.heading(2, "Baselines")
	t := &table{head: []string{"metric", "role", "kind", "test", "level", "n", "mean", "variance", "CUPED rho²"}, left: 4}
	for _, b := range z.Baselines {
		test := b.Test
		if b.Margin != nil {
			test += " (margin " + pctAbs(*b.Margin) + ")"
		}
		t.rows = append(t.rows, []string{b.Metric, b.Role, b.Kind, test, strconv.FormatFloat(b.Alpha, 'g', 4, 64), strconv.FormatInt(b.N, 10), fmtNum(b.Mean), fmtNum(b.Variance), fmtNum(b.CUPEDRho2)})
	}
	d.tab(t)

	d.heading(2, "Duration")
	d.para("Eligible units expected by whole week (* extrapolated beyond the pre-period) and the minimum detectable effect, relative to the baseline mean, of the smallest treatment arm against the baseline; with CUPED in brackets. Guards show the largest true relative harm that still clears the margin.")
	head := []string{"weeks", "ends", "units"}
	for _, a := range z.Arms {
		head = append(head, a.Name)
	}
	for _, b := range z.Baselines {
		head = append(head, b.Metric)
	}
	t = &table{head: head, left: 2}
	for i, w := range z.Weeks {
		units := strconv.FormatInt(w.Units, 10)
		if z.Traffic[i].Extrapolated {
			units += "*"
		}
		r := []string{strconv.Itoa(w.Week), w.End[:10], units}
		for _, u := range w.UnitsPerArm {
			r = append(r, fmtCount(u))
		}
		for _, m := range w.MDE {
			cell := strings.TrimPrefix(pct(float64(m.Relative)), "+")
			if m.CUPEDRelative.OK() {
				cell += " (" + strings.TrimPrefix(pct(float64(m.CUPEDRelative)), "+") + ")"
			}
			r = append(r, cell)
		}
		t.rows = append(t.rows, r)
	}
	d.tab(t)

	d.heading(2, "Paste into the spec")
	d.code("toml", z.TOML)
	d.heading(2, "Cautions")
	d.list(z.Cautions)
	return d
}

// ---- every run reports against the plan ----

// PlanCheck compares a run with the plan pasted into the spec ([planning]
// planned_end, planned_units, target_effect): how far the run is, the
// units reached against those planned, and the effect the sample can
// detect against the target.
type PlanCheck struct {
	// Fixed is false when the spec carries no planned end or units: no
	// duration was fixed in advance.
	Fixed bool `json:"fixed"`
	// Stage is "interim" (read before the planned end), "awaiting outcomes"
	// (after it, but before the last units' outcome windows have elapsed)
	// or "final"; empty without a plan.
	Stage        string `json:"stage,omitempty"`
	PlannedEnd   string `json:"planned_end,omitempty"`
	ReadFrom     string `json:"read_from,omitempty"`
	PlannedUnits int64  `json:"planned_units,omitempty"`
	Units        int64  `json:"units"`
	// UnitsShare is Units over PlannedUnits.
	UnitsShare Num `json:"units_share"`
	// Target is the target effect on the primary metric (absolute and
	// relative to the baseline's value in this run), Detectable the
	// smallest effect this run's sample detects with the planned power at
	// the primary metric's level (largest over the treatment arms).
	Metric             string `json:"metric,omitempty"`
	Power              Num    `json:"power"`
	TargetAbsolute     Num    `json:"target_absolute"`
	TargetRelative     Num    `json:"target_relative"`
	DetectableAbsolute Num    `json:"detectable_absolute"`
	DetectableRelative Num    `json:"detectable_relative"`
	Underpowered       bool   `json:"underpowered"`
	Statement          string `json:"statement"`
}

// AgainstPlan fills r.Plan and adds its cautions. Analyze calls it once the
// report is built.
func AgainstPlan(p *compiler.Plan, r *Report) {
	nan := Num(math.NaN())
	pc := &PlanCheck{Units: r.Health.Eligible, UnitsShare: nan, Power: nan, TargetAbsolute: nan, TargetRelative: nan, DetectableAbsolute: nan, DetectableRelative: nan}
	r.Plan = pc
	if pc.Units == 0 {
		for _, v := range r.Experiment.Variants {
			pc.Units += v.EligibleUnits
		}
	}
	s := p.Spec
	pl := s.Planning
	if pl == nil || (pl.PlannedEnd.IsZero() && pl.PlannedUnits == 0) {
		pc.Statement = "No sample size or duration was planned (the spec has no planned_end or planned_units in [planning]): the spec's end date was not derived from the traffic and the effect worth detecting, so whether this sample could detect it is unknown. Plan it with assay size before launch."
		r.addCaution(pc.Statement)
		return
	}
	pc.Fixed = true
	pc.PlannedUnits = int64(pl.PlannedUnits)
	if pl.PlannedUnits > 0 {
		pc.UnitsShare = Num(float64(pc.Units) / pl.PlannedUnits)
	}
	pc.Stage = "final"
	if !pl.PlannedEnd.IsZero() {
		end := pl.PlannedEnd.UnixMicro()
		read := end + maxWindow(p)
		pc.PlannedEnd, pc.ReadFrom = stamp(end), stamp(read)
		switch {
		case p.AsOfUS < end:
			pc.Stage = "interim"
		case p.AsOfUS < read:
			pc.Stage = "awaiting outcomes"
		}
	} else if pl.PlannedUnits > 0 && float64(pc.Units) < pl.PlannedUnits {
		pc.Stage = "interim"
	}
	var parts []string
	switch pc.Stage {
	case "interim":
		parts = append(parts, fmt.Sprintf("Interim look: the plan reads this experiment once, at its planned end%s", orEmpty(pc.PlannedEnd, " ", "")))
	case "awaiting outcomes":
		parts = append(parts, fmt.Sprintf("Exposures have reached the planned end %s, but the last units' outcome windows close only at %s", pc.PlannedEnd, pc.ReadFrom))
	default:
		parts = append(parts, "Final look at the planned end")
	}
	if pc.PlannedUnits > 0 {
		parts[0] += fmt.Sprintf("; %d of %d planned eligible units (%s)", pc.Units, pc.PlannedUnits, pctAbs(float64(pc.UnitsShare)))
	}
	pc.Statement = parts[0] + "."

	// The effect this sample can detect, against the target.
	pc.Power = Num(pl.Power)
	var primary *MetricInfo
	for i := range r.Metrics {
		if r.Metrics[i].Role == string(metrics.Primary) {
			primary = &r.Metrics[i]
		}
	}
	if primary != nil {
		pc.Metric = primary.Name
		alpha := stats.PerComparisonAlpha(1-s.Confidence, max(1, len(s.Variants)-1), r.Adjustment)
		base := math.NaN()
		for _, v := range primary.Variants {
			if len(s.Variants) > 0 && v.Variant == s.Variants[0].Name {
				base = float64(v.Value)
			}
		}
		nOf := map[string]float64{}
		for _, v := range primary.Variants {
			nOf[v.Variant] = float64(v.N)
		}
		detect := math.NaN()
		for _, c := range primary.Comparisons {
			m := stats.NormalMDE(float64(c.StdError), alpha, pl.Power, true)
			if s.Monitoring == "sequential" {
				// Always-valid intervals need more: the boundary tuned to
				// the pair's units at this look.
				m = stats.SequentialMDE(float64(c.StdError), nOf[c.Baseline]+nOf[c.Variant], 0, alpha, pl.Power)
			}
			if !math.IsNaN(m) && !(m <= detect) {
				detect = m
			}
		}
		pc.DetectableAbsolute, pc.DetectableRelative = Num(detect), Num(stats.RelativeMDE(detect, base))
		if pl.Target > 0 {
			abs := pl.Target
			if pl.TargetRelative {
				abs = pl.Target * math.Abs(base)
			}
			pc.TargetAbsolute, pc.TargetRelative = Num(abs), Num(stats.RelativeMDE(abs, base))
			pc.Underpowered = detect > abs
		}
		if pc.DetectableAbsolute.OK() {
			pc.Statement += fmt.Sprintf(" With this sample, %s can detect %s (%s) with %g%% power", pc.Metric, fmtNum(pc.DetectableAbsolute), pct(float64(pc.DetectableRelative)), pl.Power*100)
			if pc.TargetAbsolute.OK() {
				pc.Statement += fmt.Sprintf("; the planned target is %s (%s)", fmtNum(pc.TargetAbsolute), pct(float64(pc.TargetRelative)))
			}
			pc.Statement += "."
		}
	}
	r.addCaution(pc.Statement)
	if pc.Stage != "final" {
		r.addCaution(fmt.Sprintf("This is not the planned final look: stopping now because a p-value crossed the threshold inflates false positives; read the result at the planned end%s, or declare monitoring = \"sequential\" before launch.", orEmpty(pc.ReadFrom, ", from ", "")))
	}
	if pc.Underpowered {
		r.addCaution(fmt.Sprintf("Underpowered for the planned effect: this sample detects %s (%s) on %s with %g%% power, more than the target %s (%s). A result that is not significant says little about effects of the target's size.",
			fmtNum(pc.DetectableAbsolute), pct(float64(pc.DetectableRelative)), pc.Metric, pl.Power*100, fmtNum(pc.TargetAbsolute), pct(float64(pc.TargetRelative))))
	}
}

func orEmpty(s, prefix, def string) string {
	if s == "" {
		return def
	}
	return prefix + s
}

// planDoc adds the plan line to a run's document.
func (r *Report) planDoc(d *document) {
	if r.Plan != nil {
		d.para("Plan: %s", r.Plan.Statement)
	}
}

// untestedReason says why a calibration comparison has no p-value: its
// own reason, or its arms' (too few mature units, zero variance).
func untestedReason(c Compare, m MetricInfo) string {
	for _, v := range m.Variants {
		if v.N < 2 && v.Immature > 0 {
			return fmt.Sprintf("%s has %d unit(s) whose %s outcome window had elapsed by the end of the period (%d more had not)", v.Variant, v.N, m.Window[1], v.Immature)
		}
	}
	if c.Reason != "" {
		return c.Reason
	}
	for _, v := range m.Variants {
		if v.Reason != "" {
			return v.Variant + ": " + v.Reason
		}
	}
	return "the test statistic is undefined"
}
