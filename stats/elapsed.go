package stats

import (
	"fmt"
	"math"
)

// Effect by time since the trigger. A metric's outcome window is split
// into B consecutive buckets of equal length (days or weeks after each
// unit's trigger); y_ib is unit i's value in bucket b. A new feature's
// effect often fades as its novelty wears off, or grows as people learn
// it (common practice in online experiments to look for both).
//
// The trend test follows the summary-measures approach to serial
// measurements (Matthews, Altman, Campbell & Royston 1990, "Analysis of
// serial measurements in medical research", BMJ 300:230–235): reduce each
// unit's series to one number, then compare the arms with an ordinary
// two-sample test. The number is the linear trend contrast (the
// orthogonal polynomial contrast of degree 1 for equally spaced levels,
// as in the trend analysis chapters of experimental-design texts such as
// Kirk, "Experimental Design" (from memory))
//
//	L_i = Σ_b w_b·y_ib,  w_b = 2b − (B − 1),  b = 0 … B−1,
//
// whose weights sum to zero. With d_b the treatment-minus-baseline
// difference of bucket means, the difference of mean contrasts is
// Σ_b w_b·d_b: zero whenever the effect is the same in every bucket, for
// any baseline level and any correlation between a unit's buckets, because
// each unit contributes one L_i and units are independent. Its Welch test
// (Welch 1947) is therefore valid under the null of a constant additive
// effect, and the least-squares slope of d_b on b is
//
//	β = Σ_b w_b·d_b / Σ_b w_b·b,
//
// the change of the effect per bucket. A slope against the sign of the
// overall effect is a fading effect; with it, a growing one.

// BucketArm is one arm's moments of a metric split by time since the
// trigger: each bucket's N, Mean and Var, and the sample variance of the
// trend contrast L (its mean is Σ_b w_b·Mean_b).
type BucketArm struct {
	Buckets  []Moments
	TrendVar float64
}

// contrast returns the moments of L in arm a.
func (a BucketArm) contrast(w []int) Moments {
	m := Moments{N: math.NaN(), Mean: 0, Var: a.TrendVar}
	if len(a.Buckets) > 0 {
		m.N = a.Buckets[0].N
	}
	for b, bm := range a.Buckets {
		m.Mean += float64(w[b]) * bm.Mean
	}
	return m
}

// TrendWeights returns the linear contrast weights w_b = 2b − (B − 1).
func TrendWeights(buckets int) []int {
	w := make([]int, buckets)
	for b := range w {
		w[b] = 2*b - (buckets - 1)
	}
	return w
}

// TrendResult is the trend of an effect across time-since-trigger
// buckets.
type TrendResult struct {
	// Contrast is the comparison of the mean trend contrast L between the
	// arms (Welch's t, or the post-stratified normal test of Stratified).
	Contrast Comparison
	// Slope is the change of the treatment-minus-baseline difference per
	// bucket, β = Contrast.Difference / Σ_b w_b·b, with its standard error
	// and interval at the contrast's level; PValue is Contrast's.
	Slope, StdError, CILow, CIHigh, PValue float64
	Reason                                 string
}

// slopeScale is Σ_b w_b·b, the divisor that turns the contrast into the
// least-squares slope per bucket.
func slopeScale(w []int) float64 {
	s := 0.0
	for b, x := range w {
		s += float64(x * b)
	}
	return s
}

func checkTrendInputs(w []int, arms ...BucketArm) string {
	if len(w) < 2 {
		return "fewer than 2 buckets"
	}
	for _, a := range arms {
		if len(a.Buckets) != len(w) {
			return fmt.Sprintf("%d bucket moments for %d weights", len(a.Buckets), len(w))
		}
	}
	return ""
}

// ElapsedTrend tests whether the difference between treat and base
// changes linearly across the buckets (see the section comment), with
// Welch's t on the per-unit contrast L.
func ElapsedTrend(w []int, base, treat BucketArm, level float64) TrendResult {
	if r := checkTrendInputs(w, base, treat); r != "" {
		return nanTrend(level, r)
	}
	c := Welch(base.contrast(w), treat.contrast(w), level)
	return trendFrom(w, c)
}

// StratumBuckets is one stratum's bucket moments in both arms.
type StratumBuckets struct {
	Base, Treat BucketArm
}

// ElapsedTrendStratified is ElapsedTrend with the contrast difference
// post-stratified (Stratified): for a rollout whose allocation changed
// between steps, each step's contrast difference is weighted by its units.
func ElapsedTrendStratified(w []int, strata []StratumBuckets, level float64) TrendResult {
	ms := make([]StratumMoments, len(strata))
	for i, s := range strata {
		if r := checkTrendInputs(w, s.Base, s.Treat); r != "" {
			return nanTrend(level, r)
		}
		ms[i] = StratumMoments{Base: s.Base.contrast(w), Treat: s.Treat.contrast(w)}
	}
	st := Stratified(ms, level)
	c := nanComparison("stratified-normal", level)
	c.Difference, c.StdError, c.TestStdError = st.Difference, st.StdError, st.StdError
	c.CILow, c.CIHigh, c.Statistic, c.PValue, c.DF = st.CILow, st.CIHigh, st.Statistic, st.PValue, math.Inf(1)
	c.Reason = st.Reason
	return trendFrom(w, c)
}

func nanTrend(level float64, reason string) TrendResult {
	nan := math.NaN()
	return TrendResult{Contrast: nanComparison(MethodWelch, level), Slope: nan, StdError: nan, CILow: nan, CIHigh: nan, PValue: nan, Reason: reason}
}

func trendFrom(w []int, c Comparison) TrendResult {
	k := slopeScale(w)
	return TrendResult{Contrast: c, Slope: c.Difference / k, StdError: c.StdError / k, CILow: c.CILow / k, CIHigh: c.CIHigh / k, PValue: c.PValue, Reason: c.Reason}
}

// Trend directions of TrendDirection.
const (
	TrendFading   = "fading"
	TrendGrowing  = "growing"
	TrendChanging = "changing" // no overall effect to fade or grow from
	TrendNone     = ""
)

// TrendDirection names a significant trend (p < alpha) relative to the
// overall effect: against its sign fading, with it growing; "changing"
// when the overall difference is zero or undefined. "" when the trend is
// not significant or undefined.
func TrendDirection(t TrendResult, overall, alpha float64) string {
	if math.IsNaN(t.PValue) || !(t.PValue < alpha) || t.Slope == 0 {
		return TrendNone
	}
	switch {
	case math.IsNaN(overall) || overall == 0:
		return TrendChanging
	case (overall > 0) == (t.Slope > 0):
		return TrendGrowing
	}
	return TrendFading
}
