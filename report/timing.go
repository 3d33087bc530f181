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

// Seasonality and novelty. Behaviour varies by weekday and around
// holidays, sales and other events, and a new feature's effect may fade
// (novelty) or grow (learning). The report says when the period or a
// metric window is not a whole number of weeks (common practice: partial
// weeks over-weight some weekdays), tests whether the arms got the same
// weekday mix of triggers, names declared calendar events that overlap
// the periods read, and, when the result is broken down by trigger day,
// reads the primary effect by trigger week.

const microsPerWeek = int64(7 * 24 * time.Hour / time.Microsecond)

// Timing is the report's section on seasonality and novelty.
type Timing struct {
	// PartialWeeks names the period or metric windows that are not a whole
	// number of weeks.
	PartialWeeks []string   `json:"partial_weeks"`
	WeekdayMix   WeekdayMix `json:"weekday_mix"`
	// Events are the declared calendar events that overlap the analysis
	// period (exposures and outcome windows) or the pre-period (covariate
	// and eligibility history windows before the start).
	Events []EventOverlap `json:"events"`
	// TriggerWeeks is the primary effect by trigger week, when the result
	// is broken down by trigger day.
	TriggerWeeks *WeekEffects `json:"trigger_weeks,omitempty"`
	// Cumulative is the primary difference over the units triggered up to
	// each trigger day (outcomes as read at the as-of time), for plots;
	// present when the result is broken down by trigger day.
	Cumulative []DayEffect `json:"cumulative_by_trigger_day,omitempty"`
	// Elapsed is the effect by time since the trigger of every metric
	// whose window is split into buckets (elapsed.go).
	Elapsed []ElapsedEffect `json:"by_time_since_trigger"`
}

// DayEffect is the primary comparison over the units triggered on or
// before Day.
type DayEffect struct {
	Day        string `json:"day"`
	Units      int64  `json:"units"`
	Difference Num    `json:"difference"`
	CILow      Num    `json:"ci_low"`
	CIHigh     Num    `json:"ci_high"`
}

// WeekdayMix is the chi-square test of independence of variants and the
// weekday of each unit's trigger (stats.WeekdayMix), in the spec's time
// zone.
type WeekdayMix struct {
	Days      []string            `json:"days"` // Monday … Sunday
	Counts    map[string][7]int64 `json:"counts"`
	Statistic Num                 `json:"statistic"`
	DF        Num                 `json:"df"`
	PValue    Num                 `json:"p_value"`
	Reason    string              `json:"reason,omitempty"`
}

// EventOverlap is a declared event and the periods it overlaps.
type EventOverlap struct {
	Name     string   `json:"name"`
	Kind     string   `json:"kind,omitempty"`
	From     string   `json:"from"`
	Until    string   `json:"until"`
	File     string   `json:"file,omitempty"`
	Overlaps []string `json:"overlaps"`
}

// WeekEffects is the primary metric's difference by trigger week, with
// Cochran's Q across weeks and an inverse-variance weighted trend.
type WeekEffects struct {
	Metric  string       `json:"metric"`
	Variant string       `json:"variant"`
	Weeks   []WeekEffect `json:"weeks"`
	Q       Num          `json:"q"`
	QPValue Num          `json:"q_p_value"`
	// Slope is the change of the difference per week, from a weighted
	// least-squares line through the weekly differences (weights 1/SE²);
	// SlopePValue its two-sided normal p-value.
	Slope         Num    `json:"slope"`
	SlopeStdError Num    `json:"slope_std_error"`
	SlopePValue   Num    `json:"slope_p_value"`
	Method        string `json:"method"`
	Reason        string `json:"reason,omitempty"`
}

// WeekEffect is one trigger week's difference.
type WeekEffect struct {
	Week       int    `json:"week"` // 1 for the first seven days from the start
	From       string `json:"from"` // first trigger day of the week
	Units      int64  `json:"units"`
	Difference Num    `json:"difference"`
	StdError   Num    `json:"std_error"`
}

var weekdayNames = []string{"Monday", "Tuesday", "Wednesday", "Thursday", "Friday", "Saturday", "Sunday"}

// weekdayIndex is Monday 0 … Sunday 6.
func weekdayIndex(w time.Weekday) int { return (int(w) + 6) % 7 }

// timing builds the section and its cautions.
func (r *Report) timing(p *compiler.Plan, set *results.Set) {
	s := p.Spec
	t := &Timing{PartialWeeks: []string{}, Events: []EventOverlap{}}
	if span := p.EndUS - p.StartUS; span%microsPerWeek != 0 {
		t.PartialWeeks = append(t.PartialWeeks, fmt.Sprintf("the analysis period (%s days)", trimFloat(float64(span)/float64(microsPerWeek)*7)))
	}
	for _, m := range s.Metrics {
		if w := m.To.Micros - m.From.Micros; w%microsPerWeek != 0 {
			t.PartialWeeks = append(t.PartialWeeks, fmt.Sprintf("the window of metric %s (%s to %s)", m.Name, m.From.Text, m.To.Text))
		}
	}
	// Weekday mix of triggers per arm.
	t.WeekdayMix = WeekdayMix{Days: weekdayNames, Counts: map[string][7]int64{}}
	counts := make([][7]float64, len(p.Variants))
	for _, d := range r.Health.Daily {
		day, err := time.Parse("2006-01-02", d.Day)
		vi := indexOf(p.Variants, d.Variant)
		if err != nil || vi < 0 {
			continue
		}
		counts[vi][weekdayIndex(day.Weekday())] += float64(d.NewUnits) // units a prior run exposed were assigned then
	}
	for i, v := range p.Variants {
		var c [7]int64
		for j := range c {
			c[j] = int64(counts[i][j])
		}
		t.WeekdayMix.Counts[v] = c
	}
	if !r.Health.Available {
		nan := Num(math.NaN())
		t.WeekdayMix.Statistic, t.WeekdayMix.DF, t.WeekdayMix.PValue, t.WeekdayMix.Reason = nan, nan, nan, "no health result"
	} else {
		wm := stats.WeekdayMix(counts)
		t.WeekdayMix.Statistic, t.WeekdayMix.DF, t.WeekdayMix.PValue, t.WeekdayMix.Reason = Num(wm.Statistic), Num(wm.DF), Num(wm.PValue), wm.Reason
		if s.Rollout != nil && len(s.Rollout.Steps) > 1 && wm.Reason == "" {
			t.WeekdayMix.Reason = "the rollout schedule changes the arms' weekday mix unless every step spans whole weeks; the test is shown for information"
		}
	}
	// Calendar events.
	var preFrom int64
	for _, m := range s.Metrics {
		if m.Covariate != nil {
			preFrom = min(preFrom, m.Covariate.From.Micros)
		}
	}
	for _, rl := range s.Rules {
		if rl.Kind == metrics.RuleHistory {
			preFrom = min(preFrom, rl.From.Micros)
		}
	}
	var maxTo int64
	for _, m := range s.Metrics {
		maxTo = max(maxTo, m.To.Micros)
	}
	outEnd := min(p.EndUS+maxTo, p.AsOfUS)
	outEnd = max(outEnd, p.EndUS)
	for _, ev := range s.Events {
		f, u := ev.From.UnixMicro(), ev.Until.UnixMicro()
		eo := EventOverlap{Name: ev.Name, Kind: ev.Kind, From: stamp(f), Until: stamp(u), File: ev.File, Overlaps: []string{}}
		if f < outEnd && u > p.StartUS {
			eo.Overlaps = append(eo.Overlaps, "analysis period")
		}
		if preFrom < 0 && f < p.StartUS && u > p.StartUS+preFrom {
			eo.Overlaps = append(eo.Overlaps, "pre-period")
		}
		if len(eo.Overlaps) > 0 {
			t.Events = append(t.Events, eo)
		}
	}
	t.TriggerWeeks = triggerWeeks(p, set, r.Metrics)
	t.Cumulative = cumulativeByDay(p, set)
	t.Elapsed = elapsedEffects(p, set)
	r.Timing = t
	var c []string
	if len(t.PartialWeeks) > 0 {
		c = append(c, "Not a whole number of weeks: "+strings.Join(t.PartialWeeks, "; ")+". Behaviour often differs by weekday, so partial weeks over-weight some days (common practice: analyse whole weeks).")
	}
	if wm := t.WeekdayMix; wm.Reason == "" && wm.PValue.OK() && float64(wm.PValue) < SRMAlpha {
		c = append(c, fmt.Sprintf("The arms received different weekday mixes of triggers (chi-square %s): a weekday pattern in the metric would be confounded with the variant.", pEquals(float64(wm.PValue))))
	}
	for _, e := range t.Events {
		kind := ""
		if e.Kind != "" {
			kind = " (" + e.Kind + ")"
		}
		c = append(c, fmt.Sprintf("Declared event %s%s, %s to %s, overlaps the %s: behaviour then may not be typical of the rest of the year.", e.Name, kind, e.From, e.Until, strings.Join(e.Overlaps, " and the ")))
	}
	if tw := t.TriggerWeeks; tw != nil && tw.Reason == "" && tw.SlopePValue.OK() && float64(tw.SlopePValue) < 0.05 {
		dir := "grows"
		if float64(tw.Slope)*firstSign(tw.Weeks) < 0 {
			dir = "fades"
		}
		c = append(c, fmt.Sprintf("The effect of %s on %s %s across trigger weeks (%s per week, %s): a novelty or learning effect may be at work, so the average over this period may not last.", tw.Variant, tw.Metric, dir, signed(tw.Slope), pEquals(float64(tw.SlopePValue))))
	}
	c = append(c, elapsedCautions(t.Elapsed)...)
	for _, s := range c {
		r.addCaution(s)
	}
}

// firstSign is the sign of the overall direction of the weekly
// differences (their unweighted mean), 1 when it is zero or undefined.
func firstSign(ws []WeekEffect) float64 {
	var sum float64
	for _, w := range ws {
		if w.Difference.OK() {
			sum += float64(w.Difference)
		}
	}
	if sum < 0 {
		return -1
	}
	return 1
}

func trimFloat(f float64) string {
	return strings.TrimSuffix(strings.TrimRight(fmt.Sprintf("%.2f", f), "0"), ".")
}

// triggerWeeks reads the primary metric (mean or proportion; ratio metrics
// are not combined here) by trigger week from the trigger-day breakdown:
// each week's per-arm moments are the days' moments pooled
//
//	n = Σ n_d,  ȳ = Σ n_d ȳ_d / n,  s² = (Σ (n_d − 1) s²_d + Σ n_d (ȳ_d − ȳ)²)/(n − 1)
//
// (the exact pooled sample variance), the week's difference is Welch's
// (TwoProportion for proportions), Cochran's Q tests whether the weeks
// differ, and the trend is the weighted least-squares slope of the
// differences on the week number with weights w = 1/SE²:
//
//	b = Σ w (x − x̄)(d − d̄) / Σ w (x − x̄)²,  SE(b) = 1/√Σ w (x − x̄)²
//
// a fixed-effect meta-regression (Borenstein, Hedges, Higgins &
// Rothstein 2009, "Introduction to Meta-Analysis", ch. 20), tested with a
// two-sided normal p-value.
func triggerWeeks(p *compiler.Plan, set *results.Set, infos []MetricInfo) *WeekEffects {
	day := -1
	for i, g := range p.GroupBy {
		if g.Day {
			day = i
		}
	}
	if day < 0 || len(p.Variants) < 2 {
		return nil
	}
	var mp *compiler.MetricPlan
	for _, m := range p.Metrics {
		if m.M.Role == metrics.Primary {
			mp = m
		}
	}
	if mp == nil {
		return nil
	}
	nan := Num(math.NaN())
	we := &WeekEffects{Metric: mp.M.Name, Variant: p.Variants[1], Weeks: []WeekEffect{}, Q: nan, QPValue: nan, Slope: nan, SlopeStdError: nan, SlopePValue: nan,
		Method: "per-week Welch difference (days pooled); Cochran's Q across weeks; weighted least-squares trend of the differences on the week number (weights 1/SE²), normal p-value"}
	if mp.M.Kind == metrics.KindRatio {
		we.Reason = "ratio metrics are not read by trigger week"
		return we
	}
	start := time.UnixMicro(p.StartUS).In(p.Spec.TimeZone)
	start = time.Date(start.Year(), start.Month(), start.Day(), 0, 0, 0, 0, p.Spec.TimeZone)
	type acc struct{ n, sum, ss, units float64 } // ss: Σ (n_d−1)s²_d + Σ n_d ȳ_d², pooled below
	// Under a rollout schedule with several steps, days are pooled within
	// each (week, step) and a week's difference is post-stratified over
	// its steps (stats.Stratified), so a week that spans a change of
	// allocation is not read naively.
	ro := p.Spec.Rollout
	byStep := ro != nil && len(ro.Steps) > 1
	stepOf := func(d time.Time) int {
		next := d.AddDate(0, 0, 1)
		k := 0
		for i, st := range ro.Steps {
			if i > 0 && st.Start.After(d) && st.Start.Before(next) {
				return len(ro.Steps) + i // a step began during the day: a stratum of its own
			}
			if i > 0 && !d.Before(st.Start) {
				k = i
			}
		}
		return k
	}
	if byStep {
		we.Method = "per-week difference post-stratified by rollout step (days pooled within each step; a day on which a step began is a stratum of its own); Cochran's Q across weeks; weighted least-squares trend of the differences on the week number (weights 1/SE²), normal p-value"
	}
	weeks := map[int]map[string]*acc{}
	cells := map[int]map[int]map[string]*acc{} // week → step → variant
	for _, row := range set.Group(day) {
		d, err := time.ParseInLocation("2006-01-02", row.Key, p.Spec.TimeZone)
		if err != nil {
			continue
		}
		w := int(d.Sub(start).Hours()/24) / 7
		if weeks[w] == nil {
			weeks[w] = map[string]*acc{}
			cells[w] = map[int]map[string]*acc{}
		}
		a := weeks[w][row.Variant]
		if a == nil {
			a = &acc{}
			weeks[w][row.Variant] = a
		}
		k := 0
		if byStep {
			k = stepOf(d)
		}
		if cells[w][k] == nil {
			cells[w][k] = map[string]*acc{}
		}
		ca := cells[w][k][row.Variant]
		if ca == nil {
			ca = &acc{}
			cells[w][k][row.Variant] = ca
		}
		m := rowMoments(mp, &row)
		a.units += float64(row.Units)
		if m.N == 0 || math.IsNaN(m.Mean) {
			continue
		}
		v := m.Var
		if math.IsNaN(v) {
			v = 0 // one unit: no spread of its own
		}
		for _, x := range []*acc{a, ca} {
			x.n += m.N
			x.sum += m.N * m.Mean
			x.ss += (m.N-1)*v + m.N*m.Mean*m.Mean
		}
	}
	moments := func(a *acc) stats.Moments {
		if a == nil || a.n == 0 {
			return stats.Moments{Mean: math.NaN(), Var: math.NaN()}
		}
		mean := a.sum / a.n
		v := math.NaN()
		if a.n > 1 {
			v = (a.ss - a.n*mean*mean) / (a.n - 1)
		}
		return stats.Moments{N: a.n, Mean: mean, Var: v}
	}
	var idx []int
	for w := range weeks {
		idx = append(idx, w)
	}
	sort.Ints(idx)
	var ds, ses, xs []float64
	for _, w := range idx {
		b, tr := moments(weeks[w][p.Variants[0]]), moments(weeks[w][p.Variants[1]])
		var c stats.Comparison
		switch {
		case byStep && len(cells[w]) > 1:
			var strata []stats.StratumMoments
			for k := range 2 * len(ro.Steps) {
				if cl := cells[w][k]; cl != nil {
					strata = append(strata, stats.StratumMoments{Base: moments(cl[p.Variants[0]]), Treat: moments(cl[p.Variants[1]])})
				}
			}
			sr := stats.Stratified(strata, p.Spec.Confidence)
			if mp.M.Kind == metrics.KindProportion {
				sr = stats.StratifiedProportion(strata, p.Spec.Confidence)
			}
			c = stats.Comparison{Difference: sr.Difference, StdError: sr.StdError}
		case mp.M.Kind == metrics.KindProportion:
			c = stats.TwoProportion(b, tr, p.Spec.Confidence)
		default:
			c = stats.Welch(b, tr, p.Spec.Confidence)
		}
		var units float64
		for _, a := range weeks[w] {
			units += a.units
		}
		we.Weeks = append(we.Weeks, WeekEffect{Week: w + 1, From: start.AddDate(0, 0, 7*w).Format("2006-01-02"), Units: int64(units), Difference: Num(c.Difference), StdError: Num(c.StdError)})
		ds = append(ds, c.Difference)
		ses = append(ses, c.StdError)
		xs = append(xs, float64(w+1))
	}
	h := stats.CochranQ(ds, ses)
	we.Q, we.QPValue = Num(h.Q), Num(h.PValue)
	b, se, reason := weightedSlope(xs, ds, ses)
	if reason != "" {
		we.Reason = reason
		return we
	}
	we.Slope, we.SlopeStdError, we.SlopePValue = Num(b), Num(se), Num(stats.TwoSidedNormalP(b/se))
	return we
}

// weightedSlope is the weighted least-squares slope of d on x with
// weights 1/se² and its standard error (see triggerWeeks). Points whose
// d or se is not finite and positive are skipped.
func weightedSlope(x, d, se []float64) (b, seB float64, reason string) {
	var sw, swx, swd float64
	var n int
	for i := range x {
		if math.IsNaN(d[i]) || math.IsInf(d[i], 0) || !(se[i] > 0) || math.IsInf(se[i], 0) {
			continue
		}
		w := 1 / (se[i] * se[i])
		sw += w
		swx += w * x[i]
		swd += w * d[i]
		n++
	}
	if n < 3 {
		return math.NaN(), math.NaN(), "fewer than 3 trigger weeks with a defined difference: no trend test"
	}
	xb, db := swx/sw, swd/sw
	var sxx, sxd float64
	for i := range x {
		if math.IsNaN(d[i]) || math.IsInf(d[i], 0) || !(se[i] > 0) || math.IsInf(se[i], 0) {
			continue
		}
		w := 1 / (se[i] * se[i])
		sxx += w * (x[i] - xb) * (x[i] - xb)
		sxd += w * (x[i] - xb) * (d[i] - db)
	}
	if sxx == 0 {
		return math.NaN(), math.NaN(), "the trigger weeks do not vary"
	}
	return sxd / sxx, 1 / math.Sqrt(sxx), ""
}

// timingDoc adds the seasonality section to the document.
func (r *Report) timingDoc(d *document) {
	t := r.Timing
	if t == nil {
		return
	}
	d.heading(2, "Weekdays, calendar and time")
	wm := t.WeekdayMix
	tb := &table{head: append([]string{"variant"}, shortDays()...), left: 1}
	for _, v := range r.Experiment.Variants {
		row := []string{v.Name}
		for _, c := range wm.Counts[v.Name] {
			row = append(row, fmt.Sprint(c))
		}
		tb.rows = append(tb.rows, row)
	}
	d.para("Triggered units by weekday of the trigger (%s), not counting units a prior run exposed:", r.Experiment.TimeZone)
	d.tab(tb)
	if !wm.Statistic.OK() {
		d.para("Weekday mix across variants: not tested (%s).", wm.Reason)
	} else if wm.Reason != "" {
		d.para("Weekday mix across variants: chi-square %s, df %g, %s (%s).", fmtNum(wm.Statistic), float64(wm.DF), pEquals(float64(wm.PValue)), wm.Reason)
	} else {
		d.para("Weekday mix across variants: chi-square %s, df %g, %s.", fmtNum(wm.Statistic), float64(wm.DF), pEquals(float64(wm.PValue)))
	}
	if len(t.PartialWeeks) > 0 {
		d.para("Not a whole number of weeks: %s.", strings.Join(t.PartialWeeks, "; "))
	}
	var evs []string
	for _, e := range t.Events {
		evs = append(evs, fmt.Sprintf("%s: %s to %s, overlaps the %s", e.Name, e.From, e.Until, strings.Join(e.Overlaps, " and the ")))
	}
	if len(evs) > 0 {
		d.para("Declared events overlapping the periods read:")
		d.list(evs)
	}
	if tw := t.TriggerWeeks; tw != nil {
		d.para("%s, %s vs baseline, by trigger week (%s):", tw.Metric, tw.Variant, tw.Method)
		wt := &table{head: []string{"week", "from", "units", "difference", "std.err"}, left: 2}
		for _, w := range tw.Weeks {
			wt.rows = append(wt.rows, []string{fmt.Sprint(w.Week), w.From, fmt.Sprint(w.Units), signed(w.Difference), fmtNum(w.StdError)})
		}
		d.tab(wt)
		if tw.Reason != "" {
			d.para("Trend: not tested (%s).", tw.Reason)
		} else {
			d.para("Across weeks: Cochran's Q %s (%s); trend %s per week (SE %s, %s).", fmtNum(tw.Q), pEquals(float64(tw.QPValue)), signed(tw.Slope), fmtNum(tw.SlopeStdError), pEquals(float64(tw.SlopePValue)))
		}
	}
	r.elapsedDoc(d) // elapsed.go
}

func shortDays() []string {
	out := make([]string, len(weekdayNames))
	for i, d := range weekdayNames {
		out[i] = d[:3]
	}
	return out
}

// momentAcc pools per-day moments of one arm (see triggerWeeks).
type momentAcc struct{ n, sum, ss float64 }

func (a *momentAcc) add(m stats.Moments) {
	if m.N == 0 || math.IsNaN(m.Mean) {
		return
	}
	v := m.Var
	if math.IsNaN(v) {
		v = 0
	}
	a.n += m.N
	a.sum += m.N * m.Mean
	a.ss += (m.N-1)*v + m.N*m.Mean*m.Mean
}

func (a *momentAcc) moments() stats.Moments {
	if a.n == 0 {
		return stats.Moments{Mean: math.NaN(), Var: math.NaN()}
	}
	mean := a.sum / a.n
	v := math.NaN()
	if a.n > 1 {
		v = (a.ss - a.n*mean*mean) / (a.n - 1)
	}
	return stats.Moments{N: a.n, Mean: mean, Var: v}
}

// cumulativeByDay is the primary (mean or proportion) comparison of the
// first treatment variant over the units triggered up to each trigger
// day, from the trigger-day breakdown pooled as in triggerWeeks. Nil
// without that breakdown or for a ratio primary metric.
func cumulativeByDay(p *compiler.Plan, set *results.Set) []DayEffect {
	day := -1
	for i, g := range p.GroupBy {
		if g.Day {
			day = i
		}
	}
	var mp *compiler.MetricPlan
	for _, m := range p.Metrics {
		if m.M.Role == metrics.Primary {
			mp = m
		}
	}
	if day < 0 || mp == nil || mp.M.Kind == metrics.KindRatio || len(p.Variants) < 2 {
		return nil
	}
	byDay := map[string][]*results.Row{}
	var days []string
	rows := set.Group(day)
	for i := range rows {
		k := rows[i].Key
		if byDay[k] == nil {
			days = append(days, k)
		}
		byDay[k] = append(byDay[k], &rows[i])
	}
	sort.Strings(days)
	var base, treat momentAcc
	var units int64
	out := []DayEffect{}
	for _, d := range days {
		for _, row := range byDay[d] {
			switch row.Variant {
			case p.Variants[0]:
				base.add(rowMoments(mp, row))
				units += row.Units
			case p.Variants[1]:
				treat.add(rowMoments(mp, row))
				units += row.Units
			}
		}
		var c stats.Comparison
		if mp.M.Kind == metrics.KindProportion {
			c = stats.TwoProportion(base.moments(), treat.moments(), p.Spec.Confidence)
		} else {
			c = stats.Welch(base.moments(), treat.moments(), p.Spec.Confidence)
		}
		out = append(out, DayEffect{Day: d, Units: units, Difference: Num(c.Difference), CILow: Num(c.CILow), CIHigh: Num(c.CIHigh)})
	}
	return out
}
