package report

import (
	"fmt"
	"math"
	"sort"

	"github.com/assay-dev/assay/compiler"
	"github.com/assay-dev/assay/metrics"
	"github.com/assay-dev/assay/results"
	"github.com/assay-dev/assay/stats"
)

// Segment is the breakdown of every metric by one dimension.
type Segment struct {
	Name string `json:"name"`
	// Values are the segment values (top K by eligible units, then
	// "(other)" and "(null)"), ordered by units, largest first.
	Values []SegmentValue `json:"values"`
	// VariantMix tests independence of segment and variant among eligible
	// units; a small p-value means the variants hold different mixes of
	// the segment, which can make pooled and per-segment effects disagree.
	VariantMix SampleRatio      `json:"variant_mix"`
	Metrics    []SegmentMetrics `json:"metrics"`
}

// SegmentValue is one value of a segment with its eligible units per variant.
type SegmentValue struct {
	Value     string           `json:"value"`
	Units     int64            `json:"units"`
	ByVariant map[string]int64 `json:"by_variant"`
}

// SegmentMetrics is one metric broken down by a segment.
type SegmentMetrics struct {
	Metric string            `json:"metric"`
	Rows   []SegmentRow      `json:"rows"`
	Checks []SegmentCheck    `json:"checks"` // one per treatment variant
	Flags  []string          `json:"flags"`  // plain sentences
	byVal  map[string]string `json:"-"`
}

// SegmentRow is a metric's values and comparisons within one segment value.
type SegmentRow struct {
	Value       string       `json:"value"`
	Variants    []VariantVal `json:"variants"`
	Comparisons []Compare    `json:"comparisons"`
}

// SegmentCheck holds the heterogeneity and reversal checks of one
// treatment variant's effect across a segment's values.
type SegmentCheck struct {
	Variant string `json:"variant"`
	// Reversal is set when the pooled difference and the mix-adjusted
	// (stratified, segments weighted by size) difference have opposite
	// signs and their gap D = pooled − stratified is larger than random
	// assignment explains, at FlagAlpha (stats.ReversalTest).
	Reversal       bool   `json:"reversal"`
	Pooled         Num    `json:"pooled_difference"`
	Stratified     Num    `json:"stratified_difference"`
	MixGap         Num    `json:"mix_gap"` // D
	MixGapPValue   Num    `json:"mix_gap_p_value"`
	ReversalReason string `json:"reversal_reason,omitempty"`
	// FlagAlpha is the level of the reversal and heterogeneity flags:
	// 1 − confidence divided by the number of such checks in the report
	// (metrics × breakdowns × treatment arms; Bonferroni), so that a report
	// without any real reversal or heterogeneity raises a flag in at most
	// that share of experiments.
	FlagAlpha     float64 `json:"flag_alpha"`
	OppositeShare Num     `json:"opposite_share"` // share of units in segments whose effect has the other sign
	Q             Num     `json:"cochran_q"`
	DF            Num     `json:"df"`
	PValue        Num     `json:"p_value"`
	I2            Num     `json:"i2"`
	Reason        string  `json:"reason,omitempty"`
}

// addBreakdown analyses the main query's rows of breakdown g (a segment
// or the trigger day) and appends it to the report. The comparisons of
// each metric across the breakdown's values and variants form one
// multiple-testing family.
func (r *Report) addBreakdown(p *compiler.Plan, g int, rows []results.Row, opt Options) {
	name := p.GroupBy[g].Label()
	seg := Segment{Name: name}
	groups := map[string]map[string]*results.Row{}
	units := map[string]int64{}
	for i := range rows {
		row := &rows[i]
		v := row.Key
		if groups[v] == nil {
			groups[v] = map[string]*results.Row{}
		}
		groups[v][row.Variant] = row
		units[v] += row.Units
	}
	values := make([]string, 0, len(groups))
	for v := range groups {
		values = append(values, v)
	}
	byDay := p.GroupBy[g].Day
	sort.Slice(values, func(i, j int) bool {
		if !byDay && units[values[i]] != units[values[j]] {
			return units[values[i]] > units[values[j]]
		}
		return values[i] < values[j]
	})
	var table [][]float64
	for _, v := range values {
		sv := SegmentValue{Value: v, Units: units[v], ByVariant: map[string]int64{}}
		var rowCounts []float64
		for _, vn := range p.Variants {
			var n int64
			if row := groups[v][vn]; row != nil {
				n = row.Units
			}
			sv.ByVariant[vn] = n
			rowCounts = append(rowCounts, float64(n))
		}
		table = append(table, rowCounts)
		seg.Values = append(seg.Values, sv)
	}
	mix := stats.ChiSquareIndependence(table)
	seg.VariantMix = SampleRatio{Statistic: Num(mix.Statistic), DF: Num(mix.DF), PValue: Num(mix.PValue), Alpha: opt.SRMAlpha, Reason: mix.Reason}
	seg.VariantMix.Alarm = mix.Reason == "" && mix.PValue < opt.SRMAlpha
	rolloutMix(p, g, &seg.VariantMix) // rollout.go: a planned ramp changes the mix by design

	for mi, mp := range p.Metrics {
		pooled := r.Metrics[mi]
		sm := SegmentMetrics{Metric: mp.M.Name, Rows: []SegmentRow{}, Checks: []SegmentCheck{}, Flags: []string{}}
		var fam []*Compare
		for _, v := range values {
			info := metricInfo(p, mp, groups[v], p.Spec.Confidence)
			sm.Rows = append(sm.Rows, SegmentRow{Value: v, Variants: info.Variants, Comparisons: info.Comparisons})
		}
		for i := range sm.Rows {
			for j := range sm.Rows[i].Comparisons {
				c := &sm.Rows[i].Comparisons[j]
				c.Family = "segment:" + name + ":" + mp.M.Name
				fam = append(fam, c)
			}
		}
		ps := make([]float64, len(fam))
		for i, c := range fam {
			ps[i] = float64(c.PValue)
		}
		for i, q := range adjust(opt.Adjust, ps) {
			fam[i].PValueAdjusted = Num(q)
		}
		ro := p.Spec.Rollout
		byDesign := p.GroupBy[g].Step || p.GroupBy[g].Day && ro != nil && len(ro.Steps) > 1
		flagAlpha := (1 - p.Spec.Confidence) / float64(max(1, len(p.Metrics)*len(p.GroupBy)*(len(p.Variants)-1)))
		for ci, pc := range pooled.Comparisons {
			chk := segmentCheck(pc, sm.Rows, ci, units, mp.M.Kind == metrics.KindRatio, flagAlpha)
			sm.Checks = append(sm.Checks, chk)
			switch {
			case chk.Reversal && byDesign:
				// The rollout schedule gives each step (and the days of
				// each step) its own mix by design, which the reversal
				// test's single-allocation model does not allow for: the
				// rollout section compares the by-step and pooled
				// estimates instead, and no flag is raised here.
			case chk.Reversal:
				sm.Flags = append(sm.Flags, fmt.Sprintf("Simpson's reversal: the pooled difference of %s on %s (%s) and the difference with %s segments weighted by size (%s) have opposite signs, and the gap is larger than random assignment explains (%s < %g): the variants received different mixes of %s. Read the stratified difference, and check the assignment.",
					pc.Variant, mp.M.Name, signed(chk.Pooled), name, signed(chk.Stratified), pEquals(float64(chk.MixGapPValue)), flagAlpha, name))
			}
			if chk.Reason == "" && chk.PValue.OK() && float64(chk.PValue) < flagAlpha {
				sm.Flags = append(sm.Flags, fmt.Sprintf("The effect of %s on %s differs across %s segments (Cochran's Q %s < %g, I² = %s); the pooled effect averages unlike effects.",
					pc.Variant, mp.M.Name, name, pEquals(float64(chk.PValue)), flagAlpha, pctAbs(float64(chk.I2))))
			}
		}
		seg.Metrics = append(seg.Metrics, sm)
	}
	if seg.VariantMix.Alarm {
		r.Alarms = append(r.Alarms, fmt.Sprintf("VARIANT MIX differs across %s segments (chi-square p = %s): the variants received different shares of each segment, so pooled effects can mislead.", name, fmtP(float64(seg.VariantMix.PValue))))
	}
	if len(r.Segments) == 0 {
		r.addCaution("Segment breakdowns are exploratory: with many segments some differ by chance (see the adjusted p-values), and a segment effect is a lead for a new experiment, not a finding.")
	}
	r.Segments = append(r.Segments, seg)
}

// segmentCheck computes Cochran's Q over the per-segment differences of
// comparison ci, and the reversal test of the pooled against the
// stratified difference (stats.ReversalTest, at alpha).
func segmentCheck(pc Compare, rows []SegmentRow, ci int, units map[string]int64, isRatio bool, alpha float64) SegmentCheck {
	chk := SegmentCheck{Variant: pc.Variant, FlagAlpha: alpha, Pooled: Num(math.NaN()), Stratified: Num(math.NaN()), MixGap: Num(math.NaN()), MixGapPValue: Num(math.NaN())}
	if isRatio {
		chk.ReversalReason = "the reversal test covers means and proportions, not ratio metrics"
	} else {
		var strata []stats.StratumMoments
		for _, row := range rows {
			if ci >= len(row.Comparisons) || len(row.Variants) <= ci+1 {
				continue
			}
			mom := func(v VariantVal) stats.Moments {
				n := float64(v.N)
				se := float64(v.StdError)
				return stats.Moments{N: n, Mean: float64(v.Value), Var: se * se * n}
			}
			b, t := mom(row.Variants[0]), mom(row.Variants[ci+1])
			if b.N == 0 && t.N == 0 {
				continue
			}
			strata = append(strata, stats.StratumMoments{Base: b, Treat: t})
		}
		rv := stats.ReversalTest(strata, alpha)
		chk.Reversal, chk.ReversalReason = rv.Reversal, rv.Reason
		chk.Pooled, chk.Stratified, chk.MixGap, chk.MixGapPValue = Num(rv.Pooled), Num(rv.Stratified), Num(rv.D), Num(rv.PValue)
	}
	var effects, ses []float64
	var total, opposite float64
	pooled := float64(pc.Difference)
	for _, row := range rows {
		if ci >= len(row.Comparisons) {
			continue
		}
		c := row.Comparisons[ci]
		d, se := float64(c.Difference), float64(c.StdError)
		effects = append(effects, d)
		ses = append(ses, se)
		n := float64(units[row.Value])
		if math.IsNaN(d) {
			continue
		}
		total += n
		if pooled != 0 && d != 0 && math.Signbit(d) != math.Signbit(pooled) {
			opposite += n
		}
	}
	h := stats.CochranQ(effects, ses)
	chk.Q, chk.DF, chk.PValue, chk.I2, chk.Reason = Num(h.Q), Num(h.DF), Num(h.PValue), Num(h.I2), h.Reason
	chk.OppositeShare = Num(ratio(opposite, total))
	return chk
}
