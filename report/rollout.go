package report

import (
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// The reading of a launch in steps (the spec's [rollout] schedule). A
// ramp changes the allocation during the experiment, so
//   - every sample-ratio check compares counts with the weights in force
//     when those units triggered: per step, per day, and overall against
//     the step weights averaged with each step's share of units;
//   - the primary comparison does not pool units of different steps,
//     whose arms were mixed in different proportions while behaviour may
//     have drifted (Simpson's paradox in time): it is either stratified by
//     the step of each unit's trigger or read from the last step only, as
//     the spec chooses, and the report says which.

// RolloutInfo is the report's section on the rollout schedule.
type RolloutInfo struct {
	// Estimate is the spec's choice: "by_step" or "last_step".
	Estimate string `json:"estimate"`
	// Method states how the primary comparison combines the steps.
	Method string        `json:"method"`
	Steps  []RolloutStep `json:"steps"`
	// ExpectedShares are the variants' expected shares of eligible units
	// under the schedule: Σ_s (n_s/N)·w_{s,v}, the overall sample-ratio
	// check's null hypothesis.
	ExpectedShares map[string]Num `json:"expected_shares"`
	// Effects are the by-step estimates of every metric and treatment
	// variant, beside the naive pooled difference.
	Effects []StepEffect `json:"effects"`
}

// RolloutStep is one step of the schedule with its eligible units and its
// own sample-ratio check against its weights.
type RolloutStep struct {
	Name          string             `json:"name"`
	Start         string             `json:"start"`
	Weights       map[string]float64 `json:"weights"`
	Units         int64              `json:"eligible_units"`
	EligibleUnits map[string]int64   `json:"eligible_by_variant"`
	SampleRatio   SampleRatio        `json:"sample_ratio"`
}

// StepEffect is one metric's treatment-minus-baseline difference combined
// across rollout steps (stats.Stratified and its proportion and ratio
// forms), with the pooled difference that ignores the steps.
type StepEffect struct {
	Metric     string `json:"metric"`
	Variant    string `json:"variant"`
	Baseline   string `json:"baseline"`
	Method     string `json:"method"`
	Difference Num    `json:"difference"`
	StdError   Num    `json:"std_error"`
	CILow      Num    `json:"ci_low"`
	CIHigh     Num    `json:"ci_high"`
	PValue     Num    `json:"p_value"`
	// Pooled is the difference of the arms' means over all units, which
	// mixes the steps in each arm's own proportions.
	Pooled Num           `json:"pooled_difference"`
	Strata []StepStratum `json:"strata"`
	Reason string        `json:"reason,omitempty"`
}

// StepStratum is one step's weight and difference in a StepEffect.
type StepStratum struct {
	Step       string `json:"step"`
	Weight     Num    `json:"weight"`
	Difference Num    `json:"difference"`
	StdError   Num    `json:"std_error"`
}

// MethodByStep and MethodLastStep prefix the Method of a primary
// comparison read through the rollout schedule.
const (
	MethodByStep   = "by-step"
	MethodLastStep = "last-step"
)

// stepRows returns the rollout-step breakdown's rows by step name and
// variant (nil maps when the plan has no such breakdown).
func stepRows(p *compiler.Plan, set *results.Set) map[string]map[string]*results.Row {
	out := map[string]map[string]*results.Row{}
	g := p.StepKey()
	if g < 0 {
		return out
	}
	rows := set.Group(g)
	for i := range rows {
		r := &rows[i]
		if out[r.Key] == nil {
			out[r.Key] = map[string]*results.Row{}
		}
		out[r.Key][r.Variant] = r
	}
	return out
}

// rolloutHealth builds the rollout section's steps and replaces the
// sample-ratio checks of h, which compare with the [variants] weights,
// by checks against the schedule. It returns nil when the spec declares
// no schedule.
func rolloutHealth(p *compiler.Plan, set *results.Set, h *Health, alpha float64) *RolloutInfo {
	ro := p.Spec.Rollout
	if ro == nil || len(ro.Steps) == 0 {
		return nil
	}
	info := &RolloutInfo{Estimate: ro.Estimate, ExpectedShares: map[string]Num{}, Effects: []StepEffect{}}
	switch ro.Estimate {
	case metrics.EstimateLastStep:
		info.Method = fmt.Sprintf("The primary comparison uses only units triggered in the last rollout step (%s), whose weights held throughout it; units of earlier steps are left out of it.", ro.Steps[len(ro.Steps)-1].Name)
	default:
		info.Method = "The primary comparison is stratified by the rollout step in force at each unit's trigger: the within-step differences weighted by each step's share of units (post-stratification, Cochran 1977 §5A.9), so steps with different allocations are not pooled. Its interval uses the normal approximation; a metric with a covariate is CUPED-adjusted within each step (θ per step) before the steps are combined."
	}
	info.Method += " Sample-ratio checks compare counts with the weights in force: each step with its own weights, each day with the weights of the step in force that day, and the overall eligible units with the step weights averaged by each step's share of eligible units."
	rows := stepRows(p, set)
	var total float64
	expected := make([]float64, len(p.Variants))
	for _, st := range ro.Steps {
		rs := RolloutStep{Name: st.Name, Start: st.Start.UTC().Format(time.RFC3339), Weights: map[string]float64{}, EligibleUnits: map[string]int64{}}
		obs := make([]float64, len(p.Variants))
		for i, v := range p.Variants {
			rs.Weights[v] = st.Weights[i]
			if row := rows[st.Name][v]; row != nil {
				rs.EligibleUnits[v] = row.Units
				rs.Units += row.Units
				obs[i] = float64(row.Units)
			}
		}
		rs.SampleRatio = srm(obs, st.Weights, alpha)
		for i := range expected {
			expected[i] += float64(rs.Units) * st.Weights[i]
		}
		total += float64(rs.Units)
		info.Steps = append(info.Steps, rs)
	}
	var obs []float64
	for i, v := range p.Variants {
		info.ExpectedShares[v] = Num(ratio(expected[i], total))
		var n float64
		for _, row := range set.Overall() {
			if row.Variant == v {
				n += float64(row.Units)
			}
		}
		obs = append(obs, n)
	}
	if total > 0 {
		h.SampleRatio = srm(obs, expected, alpha)
	}
	rolloutDaily(p, h, alpha)
	return info
}

// dayWeights returns the weights in force throughout the calendar day
// day (YYYY-MM-DD in the spec's time zone), or ok false when a step began
// during that day (not at its midnight).
func dayWeights(s *metrics.Spec, day string) (w []float64, step string, ok bool) {
	d, err := time.ParseInLocation("2006-01-02", day, s.TimeZone)
	if err != nil {
		return nil, "", false
	}
	ro := s.Rollout
	i0 := ro.StepAt(d)
	i1 := ro.StepAt(d.AddDate(0, 0, 1).Add(-time.Microsecond))
	if i0 != i1 {
		return nil, ro.Steps[i1].Name, false
	}
	return ro.Steps[i0].Weights, ro.Steps[i0].Name, true
}

// rolloutDaily redoes the daily check and the triggered-units check with
// the weights in force each day.
func rolloutDaily(p *compiler.Plan, h *Health, alpha float64) {
	s := p.Spec
	byDay := map[string][]float64{}
	var days []string
	for _, d := range h.Daily {
		if d.NewUnits == 0 {
			continue
		}
		if byDay[d.Day] == nil {
			byDay[d.Day] = make([]float64, len(p.Variants))
			days = append(days, d.Day)
		}
		for i, v := range p.Variants {
			if v == d.Variant {
				byDay[d.Day][i] += float64(d.NewUnits)
			}
		}
	}
	sort.Strings(days)
	h.SampleRatioDaily = DailySRM{Days: []DaySRM{}, AlarmDays: []string{}}
	expected := make([]float64, len(p.Variants))
	trig := make([]float64, len(p.Variants))
	var mixed []string
	for _, day := range days {
		o := byDay[day]
		var n float64
		for i, x := range o {
			n += x
			trig[i] += x
		}
		w, step, ok := dayWeights(s, day)
		if !ok {
			mixed = append(mixed, day)
			h.SampleRatioDaily.Days = append(h.SampleRatioDaily.Days, DaySRM{Day: day, Units: int64(n), Statistic: Num(math.NaN()), PValue: Num(math.NaN()),
				Reason: fmt.Sprintf("rollout step %s began during this day, so no single set of weights applies; see the per-step check", step)})
			continue
		}
		for i := range expected {
			expected[i] += n * w[i]
		}
		sr := srm(o, w, alpha)
		h.SampleRatioDaily.Days = append(h.SampleRatioDaily.Days, DaySRM{Day: day, Units: int64(n), Statistic: sr.Statistic, PValue: sr.PValue, Alarm: sr.Alarm, Reason: sr.Reason})
		if sr.Alarm {
			h.SampleRatioDaily.AlarmDays = append(h.SampleRatioDaily.AlarmDays, day)
		}
	}
	if len(mixed) > 0 {
		nan := Num(math.NaN())
		h.SampleRatioTriggered = SampleRatio{Statistic: nan, DF: nan, PValue: nan, Alpha: alpha,
			Reason: "a rollout step began during " + strings.Join(mixed, ", ") + ", so triggered units per day cannot be matched with the schedule; the eligible-unit checks use the step of each trigger"}
		return
	}
	if len(days) > 0 {
		h.SampleRatioTriggered = srm(trig, expected, alpha)
	}
}

// rowMoments are the sufficient statistics of metric mp in one row.
func rowMoments(mp *compiler.MetricPlan, row *results.Row) stats.Moments {
	if row == nil {
		return stats.Moments{Mean: math.NaN(), Var: math.NaN()}
	}
	n := row.Stat(mp, compiler.StatN)
	if math.IsNaN(n) {
		n = 0
	}
	return stats.Moments{N: n, Mean: row.Stat(mp, compiler.StatMean), Var: row.Stat(mp, compiler.StatVar)}
}

func rowRatioMoments(mp *compiler.MetricPlan, row *results.Row) stats.RatioMoments {
	if row == nil {
		nan := math.NaN()
		return stats.RatioMoments{MeanNum: nan, MeanDen: nan, VarNum: nan, VarDen: nan, Cov: nan}
	}
	n := row.Stat(mp, compiler.StatN)
	if math.IsNaN(n) {
		n = 0
	}
	return stats.RatioMoments{N: n, MeanNum: row.Stat(mp, compiler.StatNumMean), MeanDen: row.Stat(mp, compiler.StatDenMean),
		VarNum: row.Stat(mp, compiler.StatNumVar), VarDen: row.Stat(mp, compiler.StatDenVar), Cov: row.Stat(mp, compiler.StatCov)}
}

// stepEstimate is metric mp's estimate in one arm of one step.
func stepEstimate(mp *compiler.MetricPlan, row *results.Row) (est stats.Estimate, n float64) {
	switch mp.M.Kind {
	case metrics.KindRatio:
		m := rowRatioMoments(mp, row)
		return stats.RatioEstimate(m), m.N
	case metrics.KindProportion:
		m := rowMoments(mp, row)
		return stats.ProportionEstimate(m), m.N
	}
	m := rowMoments(mp, row)
	return stats.MeanEstimate(m), m.N
}

// stratifiedByStep combines metric mp's step rows for treatment variant
// v against the baseline.
func stratifiedByStep(p *compiler.Plan, mp *compiler.MetricPlan, rows map[string]map[string]*results.Row, v string, level float64) stats.StratifiedResult {
	base := p.Variants[0]
	steps := p.Spec.Rollout.Steps
	switch mp.M.Kind {
	case metrics.KindRatio:
		strata := make([]stats.StratumRatioMoments, len(steps))
		for i, st := range steps {
			strata[i] = stats.StratumRatioMoments{Base: rowRatioMoments(mp, rows[st.Name][base]), Treat: rowRatioMoments(mp, rows[st.Name][v])}
		}
		return stats.StratifiedRatio(strata, level)
	case metrics.KindProportion:
		strata := make([]stats.StratumMoments, len(steps))
		for i, st := range steps {
			strata[i] = stats.StratumMoments{Base: rowMoments(mp, rows[st.Name][base]), Treat: rowMoments(mp, rows[st.Name][v])}
		}
		return stats.StratifiedProportion(strata, level)
	}
	strata := make([]stats.StratumMoments, len(steps))
	for i, st := range steps {
		strata[i] = stats.StratumMoments{Base: rowMoments(mp, rows[st.Name][base]), Treat: rowMoments(mp, rows[st.Name][v])}
	}
	return stats.Stratified(strata, level)
}

// rolloutEffects fills the by-step estimates of every metric and reads
// the primary comparison through the schedule (by step or last step). It
// runs before the multiple-testing adjustment.
func (r *Report) rolloutEffects(p *compiler.Plan, set *results.Set) {
	if r.Rollout == nil {
		return
	}
	// The sample-ratio alarms were raised against the schedule.
	for i, a := range r.Alarms {
		if strings.HasPrefix(a, "SAMPLE RATIO MISMATCH") {
			r.Alarms[i] = strings.Replace(a, "the planned weights", "the rollout schedule's weights in force", 1)
		}
	}
	level := p.Spec.Confidence
	rows := stepRows(p, set)
	steps := p.Spec.Rollout.Steps
	for mi, mp := range p.Metrics {
		m := &r.Metrics[mi]
		for vi, v := range p.Variants[1:] {
			sr := stratifiedByStep(p, mp, rows, v, level)
			method := "stratified-" + kindMethod(mp.M.Kind)
			e := StepEffect{Metric: mp.M.Name, Variant: v, Baseline: p.Variants[0], Method: method,
				Difference: Num(sr.Difference), StdError: Num(sr.StdError), CILow: Num(sr.CILow), CIHigh: Num(sr.CIHigh), PValue: Num(sr.PValue),
				Pooled: Num(math.NaN()), Strata: []StepStratum{}, Reason: sr.Reason}
			if vi < len(m.Comparisons) {
				c := m.Comparisons[vi]
				e.Pooled = c.Difference
				if c.CUPED != nil {
					e.Pooled = c.CUPED.Unadjusted.Difference
				}
			}
			for i, st := range steps {
				e.Strata = append(e.Strata, StepStratum{Step: st.Name, Weight: Num(sr.Weights[i]), Difference: Num(sr.Differences[i]), StdError: Num(sr.StdErrors[i])})
			}
			r.Rollout.Effects = append(r.Rollout.Effects, e)
			if mp.M.Role != metrics.Primary || vi >= len(m.Comparisons) {
				continue
			}
			if p.Spec.Rollout.Estimate == metrics.EstimateLastStep {
				continue
			}
			c := byStepCompare(p, mp, m.Comparisons[vi], sr, rows, level)
			if mp.Cov != nil {
				c = byStepCUPED(p, mp, c, rows, level)
			}
			m.Comparisons[vi] = c
		}
		if mp.M.Role == metrics.Primary && p.Spec.Rollout.Estimate != metrics.EstimateLastStep {
			byStepValues(p, mp, m, rows)
		}
		if mp.M.Role == metrics.Primary && p.Spec.Rollout.Estimate == metrics.EstimateLastStep {
			last := steps[len(steps)-1].Name
			li := metricInfo(p, mp, rows[last], level)
			for i := range li.Comparisons {
				li.Comparisons[i].Method = MethodLastStep + " " + li.Comparisons[i].Method
			}
			m.Variants, m.Comparisons = li.Variants, li.Comparisons
		}
	}
}

// byStepValues replaces each arm's value of the primary metric by its
// by-step value Σ_k w_k·ȳ_{v,k}, with w_k the step's share of the mature
// units of all variants and SE = √(Σ_k w_k²·se²_{v,k}), so the arms shown
// are on the same footing as the by-step difference (for two variants
// the difference of these values is exactly that difference).
func byStepValues(p *compiler.Plan, mp *compiler.MetricPlan, m *MetricInfo, rows map[string]map[string]*results.Row) {
	steps := p.Spec.Rollout.Steps
	w := make([]float64, len(steps))
	var total float64
	for i, st := range steps {
		for _, v := range p.Variants {
			_, n := stepEstimate(mp, rows[st.Name][v])
			w[i] += n
		}
		total += w[i]
	}
	if total == 0 {
		return
	}
	for vi := range m.Variants {
		var val, v2 float64
		reason := ""
		for i, st := range steps {
			if w[i] == 0 {
				continue
			}
			est, _ := stepEstimate(mp, rows[st.Name][p.Variants[vi]])
			if est.Reason != "" && reason == "" {
				reason = "step " + st.Name + ": " + est.Reason
			}
			val += w[i] / total * est.Value
			v2 += (w[i] / total) * (w[i] / total) * est.StdError * est.StdError
		}
		m.Variants[vi].Value, m.Variants[vi].StdError, m.Variants[vi].Reason = Num(val), Num(math.Sqrt(v2)), reason
	}
}

func kindMethod(k metrics.Kind) string {
	switch k {
	case metrics.KindRatio:
		return "delta-method-z"
	case metrics.KindProportion:
		return "proportion-z"
	}
	return "z"
}

// byStepCompare is the primary comparison read by step: the stratified
// difference, its normal interval and p-value, and the relative change
// T/B − 1 of the stratified means T = Σ_k w_k·ȳ_{t,k} and
// B = Σ_k w_k·ȳ_{b,k} (T − B is the stratified difference), with
// Fieller's set (stats.Fieller) at the same normal critical value from
// SE(T)² = Σ_k w_k²·se²_{t,k} and SE(B)² = Σ_k w_k²·se²_{b,k} (the arms
// are independent, so the covariance is 0): it excludes 0 exactly when
// the stratified test rejects.
func byStepCompare(p *compiler.Plan, mp *compiler.MetricPlan, pooled Compare, sr stats.StratifiedResult, rows map[string]map[string]*results.Row, level float64) Compare {
	nan := Num(math.NaN())
	c := Compare{Variant: pooled.Variant, Baseline: pooled.Baseline, Method: MethodByStep + " " + "stratified-" + kindMethod(mp.M.Kind),
		Difference: Num(sr.Difference), StdError: Num(sr.StdError), CILow: Num(sr.CILow), CIHigh: Num(sr.CIHigh),
		Relative: nan, RelativeCILow: nan, RelativeCIHigh: nan,
		Statistic: Num(sr.Statistic), DF: Num(math.Inf(1)), PValue: Num(sr.PValue), PValueAdjusted: Num(sr.PValue), Family: pooled.Family,
		Reason: sr.Reason}
	var b, t, vb, vt float64
	for i, st := range p.Spec.Rollout.Steps {
		w := sr.Weights[i]
		if w == 0 {
			continue
		}
		be, _ := stepEstimate(mp, rows[st.Name][p.Variants[0]])
		te, _ := stepEstimate(mp, rows[st.Name][pooled.Variant])
		b, t = b+w*be.Value, t+w*te.Value
		vb, vt = vb+w*w*be.StdError*be.StdError, vt+w*w*te.StdError*te.StdError
	}
	switch {
	case sr.Reason != "" || math.IsNaN(b):
		c.RelReason = "the by-step difference is undefined"
	default:
		setRelative(&c, t, b, math.Sqrt(vt), math.Sqrt(vb), 0, level)
	}
	if pooled.Sequential != nil && sr.Reason == "" {
		c.Sequential = byStepSequential(p, mp, pooled, sr.Difference, sr.StdError, rows, level)
	}
	return c
}

// byStepCUPED replaces the by-step comparison plain of a metric with a
// covariate by its CUPED version (stats.StratifiedCUPED: CUPED within
// each step, steps weighted by their share of units); plain becomes its
// unadjusted comparison. When no step can be adjusted, plain is kept and
// the reason given.
func byStepCUPED(p *compiler.Plan, mp *compiler.MetricPlan, plain Compare, rows map[string]map[string]*results.Row, level float64) Compare {
	steps := p.Spec.Rollout.Steps
	var sc stats.StratifiedCUPEDResult
	if mp.M.Kind == metrics.KindRatio {
		strata := make([]stats.StratumRatioCovariateMoments, len(steps))
		for i, st := range steps {
			strata[i] = stats.StratumRatioCovariateMoments{Base: rowRatioCovMoments(mp, rows[st.Name][plain.Baseline]), Treat: rowRatioCovMoments(mp, rows[st.Name][plain.Variant])}
		}
		sc = stats.StratifiedCUPEDRatio(strata, level)
	} else {
		strata := make([]stats.StratumCovariateMoments, len(steps))
		for i, st := range steps {
			strata[i] = stats.StratumCovariateMoments{Base: rowCovMoments(mp, rows[st.Name][plain.Baseline]), Treat: rowCovMoments(mp, rows[st.Name][plain.Variant])}
		}
		sc = stats.StratifiedCUPED(strata, level)
	}
	nan := Num(math.NaN())
	info := &CUPEDInfo{Theta: nan, CovariateMean: nan, VarianceReduction: nan, BaselineValue: nan, BaselineStdError: nan, VariantValue: nan, VariantStdError: nan, Unadjusted: plain}
	for _, th := range sc.Thetas {
		info.StepThetas = append(info.StepThetas, Num(th))
	}
	if sc.Reason != "" || !sc.Adjusted {
		info.NotApplied = sc.AdjustReason
		if sc.Reason != "" {
			info.NotApplied = sc.Reason
		}
		plain.CUPED = info
		return plain
	}
	c := plain
	c.Method = MethodByStep + " stratified-cuped-" + kindMethod(mp.M.Kind)
	c.Difference, c.StdError, c.CILow, c.CIHigh = Num(sc.Difference), Num(sc.StdError), Num(sc.CILow), Num(sc.CIHigh)
	c.Statistic, c.PValue, c.PValueAdjusted = Num(sc.Statistic), Num(sc.PValue), Num(sc.PValue)
	c.Relative, c.RelativeCILow, c.RelativeCIHigh, c.RelativeShape, c.RelReason = nan, nan, nan, "", ""
	setRelative(&c, sc.Treat.Value, sc.Base.Value, sc.Treat.StdError, sc.Base.StdError, sc.Cov, level)
	info.BaselineValue, info.BaselineStdError = Num(sc.Base.Value), Num(sc.Base.StdError)
	info.VariantValue, info.VariantStdError = Num(sc.Treat.Value), Num(sc.Treat.StdError)
	if u := float64(plain.StdError); u > 0 {
		info.VarianceReduction = Num(1 - sc.StdError*sc.StdError/(u*u))
	}
	if sc.AdjustReason != "" {
		info.NotApplied = "partly: " + sc.AdjustReason
	}
	c.CUPED = info
	if plain.Sequential != nil {
		// The always-valid interval follows the adjusted estimate.
		c.Sequential = byStepSequential(p, mp, plain, sc.Difference, sc.StdError, rows, level)
	}
	return c
}

// setRelative fills c's relative change t/b − 1 of the stratified means
// t and b (standard errors seT, seB, covariance cov) with Fieller's set at
// the normal critical value of level (stats.Fieller), which excludes 0
// exactly when the stratified normal test rejects.
func setRelative(c *Compare, t, b, seT, seB, cov, level float64) {
	if b == 0 {
		c.RelReason = "baseline mean is zero"
		return
	}
	c.Relative = Num((t - b) / b)
	set := stats.Fieller(t, b, seT, seB, cov, stats.NormalQuantile((1+level)/2))
	c.RelativeShape, c.RelReason = set.Shape, set.Reason
	switch set.Shape {
	case stats.ShapeBounded, stats.ShapeUnbounded:
		c.RelativeCILow, c.RelativeCIHigh = Num(set.Low-1), Num(set.High-1)
	case stats.ShapeComplement:
		c.RelReason = "the relative confidence set is not an interval (the baseline is not clearly away from zero)"
	}
}

// byStepSequential is the always-valid interval of a by-step difference d
// with standard error se (stats.SequentialDiff), tuned to the planned
// units or, without a plan, to the units seen.
func byStepSequential(p *compiler.Plan, mp *compiler.MetricPlan, pooled Compare, d, se float64, rows map[string]map[string]*results.Row, level float64) *SeqInfo {
	var n float64
	for _, st := range p.Spec.Rollout.Steps {
		for _, v := range []string{pooled.Baseline, pooled.Variant} {
			_, k := stepEstimate(mp, rows[st.Name][v])
			n += k
		}
	}
	target := n
	vi := indexOf(p.Variants, pooled.Variant)
	if t := stats.SequentialTarget(p.Spec.PlannedUnits, p.Weights, 0, vi); p.Spec.PlannedUnits > 0 && !math.IsNaN(t) {
		target = t
	}
	sq := stats.SequentialDiff(d, se, n, stats.SequentialRho(1-level, target), 1-level)
	return &SeqInfo{CILow: Num(sq.CILow), CIHigh: Num(sq.CIHigh), PValue: Num(sq.PValue), Reason: sq.Reason}
}

func indexOf(list []string, s string) int {
	for i, x := range list {
		if x == s {
			return i
		}
	}
	return -1
}

// rolloutMix clears the variant-mix alarm of breakdown g when its mix
// differs across values by design: the rollout step, or the trigger day
// when the schedule changes the weights during the experiment. The
// schedule-aware sample-ratio checks stand in for it, and the reason says
// so.
func rolloutMix(p *compiler.Plan, g int, mix *SampleRatio) {
	if p.Spec.Rollout == nil || len(p.Spec.Rollout.Steps) < 2 {
		return
	}
	if k := p.GroupBy[g]; k.Step || k.Day {
		mix.Alarm = false
		mix.Reason = "the rollout schedule changes the variant mix by design; see the per-step and per-day sample-ratio checks"
	}
}

// rolloutCautions are the cautions the schedule adds.
func rolloutCautions(p *compiler.Plan, r *Report) []string {
	c := priorCautions(p, r)
	if r.Rollout == nil {
		return c
	}
	if r.Rollout.Estimate == metrics.EstimateLastStep {
		c = append(c, "The primary comparison reads the last rollout step only; its values and comparisons differ from a reading of all units, and other metrics still pool every step (see the by-step estimates in the rollout section).")
	} else {
		c = append(c, "The primary comparison is stratified by rollout step; other metrics pool every step, which can mislead when behaviour changed while the allocation did (see the by-step estimates in the rollout section).")
	}
	for _, e := range r.Rollout.Effects {
		if e.Reason != "" || !e.Pooled.OK() || !e.StdError.OK() {
			continue
		}
		if gap := math.Abs(float64(e.Pooled - e.Difference)); gap > 2*float64(e.StdError) {
			c = append(c, fmt.Sprintf("Metric %s, %s: the pooled difference (%s) and the by-step difference (%s) differ by more than two standard errors; the steps mixed the arms in different proportions while the metric changed over time.", e.Metric, e.Variant, signed(e.Pooled), signed(e.Difference)))
		}
	}
	return c
}

// priorCautions are the cautions on earlier exposures: units of declared
// prior runs left out, and exposure rows before the start whether or not
// any prior run is declared (a rerun's units have seen the change).
func priorCautions(p *compiler.Plan, r *Report) []string {
	var c []string
	h := r.Health
	if !h.Available {
		return nil
	}
	for _, e := range h.Exclusions {
		if e.Reason != compiler.ExcludedPrior || e.Units == 0 {
			continue
		}
		var parts []string
		for _, v := range p.Variants {
			parts = append(parts, fmt.Sprintf("%s %d", v, e.ByVariant[v]))
		}
		apart := ""
		if p.Spec.PriorApart() {
			apart = " (the section on previously exposed units compares them on their own)"
		}
		c = append(c, fmt.Sprintf("%d triggered units (%s of triggered; %s) were exposed in a prior run before the start and are left out%s: they have seen the change before and may react differently the second time.",
			e.Units, pctAbs(float64(e.Rate)), strings.Join(parts, ", "), apart))
	}
	if n := h.IgnoredRows[compiler.IgnoredBeforeStart]; n > 0 {
		what := "Declare the earlier run under [prior_runs] to leave its units out."
		if len(p.Spec.PriorRuns) > 0 {
			what = "Check that [prior_runs] covers them."
		}
		c = append(c, fmt.Sprintf("%d rows of the exposure source %s come before the analysis start: if the change was shown before (an earlier or broken run), units exposed then have seen it already. %s",
			n, p.Spec.Exposure.Source.Name, what))
	}
	return c
}

// rolloutDoc adds the rollout section to the document.
func (r *Report) rolloutDoc(d *document) {
	ro := r.Rollout
	if ro == nil {
		return
	}
	d.heading(2, "Rollout steps")
	d.para("%s", ro.Method)
	t := &table{head: []string{"step", "start"}, left: 2}
	for _, v := range r.Experiment.Variants {
		t.head = append(t.head, v.Name+" weight", v.Name+" units")
	}
	t.head = append(t.head, "chi-square", "p")
	for _, st := range ro.Steps {
		row := []string{st.Name, st.Start}
		for _, v := range r.Experiment.Variants {
			row = append(row, pctAbs(st.Weights[v.Name]), fmt.Sprint(st.EligibleUnits[v.Name]))
		}
		sr := st.SampleRatio
		p := fmtP(float64(sr.PValue))
		if sr.Alarm {
			p += " ALARM"
		}
		row = append(row, fmtNum(sr.Statistic), p)
		t.rows = append(t.rows, row)
	}
	d.tab(t)
	var shares []string
	for _, v := range r.Experiment.Variants {
		shares = append(shares, v.Name+" "+pctAbs(float64(ro.ExpectedShares[v.Name])))
	}
	d.para("Expected shares of eligible units under the schedule: %s.", strings.Join(shares, ", "))
	var lines []string
	for _, e := range ro.Effects {
		if e.Reason != "" {
			lines = append(lines, fmt.Sprintf("%s, %s vs %s: by step n/a (%s); pooled %s.", e.Metric, e.Variant, e.Baseline, e.Reason, signed(e.Pooled)))
			continue
		}
		lines = append(lines, fmt.Sprintf("%s, %s vs %s: by step %s [%s, %s], p = %s; pooled (steps mixed) %s.", e.Metric, e.Variant, e.Baseline,
			signed(e.Difference), signed(e.CILow), signed(e.CIHigh), fmtP(float64(e.PValue)), signed(e.Pooled)))
	}
	d.list(lines)
}
