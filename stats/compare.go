package stats

import "math"

// Method names reported in Comparison.Method.
const (
	MethodWelch         = "welch-t"
	MethodTwoProportion = "two-proportion-z"
	MethodDelta         = "delta-method-z"
	MethodCUPED         = "cuped-welch-t"
	MethodCUPEDRatio    = "cuped-delta-method-z"
)

// Comparison is a treatment variant against the baseline.
type Comparison struct {
	Method     string  // e.g. "welch-t", "two-proportion-z", "delta-method-z"
	Difference float64 // treatment - baseline
	StdError   float64 // standard error of Difference used for the interval
	// TestStdError is the standard error in the denominator of Statistic.
	// It equals StdError except for "two-proportion-z", where the test
	// uses the pooled standard error.
	TestStdError float64
	CILow        float64
	CIHigh       float64
	Statistic    float64 // t or z
	DF           float64 // degrees of freedom; +Inf for normal-based tests
	PValue       float64 // two-sided
	Level        float64 // confidence level of both intervals

	Relative    float64 // treatment/baseline - 1
	RelStdError float64 // delta-method standard error of Relative
	// RelCILow and RelCIHigh are the confidence set for Relative at Level
	// that agrees with the test: Fieller's set (Fieller), or the Koopman
	// score set for two proportions (KoopmanRatio). They hold the ends when
	// RelShape is ShapeBounded or ShapeUnbounded (an infinite end for an
	// unbounded set) and NaN otherwise; RelSet has the full description.
	// The set excludes 0 exactly when PValue < 1 − Level.
	RelCILow  float64
	RelCIHigh float64
	RelShape  string        // ShapeBounded, ShapeUnbounded, ShapeComplement; empty when undefined
	RelSet    RatioInterval // the relative confidence set, on the Relative scale

	Reason    string // why Difference/PValue are undefined, empty when fine
	RelReason string // why Relative or its set is undefined or not bounded (e.g. baseline mean is zero)

	rel relInputs // inputs of the relative set, for RelativeSetAt
}

// nanComparison returns a Comparison with every float undefined.
func nanComparison(method string, level float64) Comparison {
	nan := math.NaN()
	return Comparison{
		Method: method, Difference: nan, StdError: nan, TestStdError: nan,
		CILow: nan, CIHigh: nan, Statistic: nan, DF: nan, PValue: nan, Level: level,
		Relative: nan, RelStdError: nan, RelCILow: nan, RelCIHigh: nan,
		RelSet: nanRatioInterval(""),
	}
}

// firstReason prefixes and returns the first non-empty estimate reason.
func firstReason(base, treat Estimate) string {
	if base.Reason != "" {
		return "baseline: " + base.Reason
	}
	if treat.Reason != "" {
		return "treatment: " + treat.Reason
	}
	return ""
}

// welchDF is the Welch–Satterthwaite degrees of freedom for the difference
// of two independent means with squared standard errors a = s_b²/n_b and
// b = s_t²/n_t (Welch 1947, "The generalization of 'Student's' problem
// when several different population variances are involved", Biometrika
// 34; Satterthwaite 1946, "An approximate distribution of estimates of
// variance components", Biometrics Bulletin 2):
//
//	ν = (a + b)² / ( a²/(n_b − 1) + b²/(n_t − 1) )
//
// It returns NaN when a + b = 0 or either n is below 2.
func welchDF(a, b, nb, nt float64) float64 {
	if !(nb >= 2) || !(nt >= 2) || !(a+b > 0) {
		return math.NaN()
	}
	return (a + b) * (a + b) / (a*a/(nb-1) + b*b/(nt-1))
}

// compareEstimates fills the difference part of a Comparison from two
// independent estimates. df = +Inf selects the normal distribution.
func compareEstimates(c Comparison, base, treat Estimate, df float64) Comparison {
	c.Difference = treat.Value - base.Value
	c.StdError = math.Sqrt(base.StdError*base.StdError + treat.StdError*treat.StdError)
	c.TestStdError = c.StdError
	c.DF = df
	c.Reason = firstReason(base, treat)
	if math.IsNaN(c.Difference) || math.IsNaN(c.StdError) {
		c.StdError, c.TestStdError = math.NaN(), math.NaN()
		return c
	}
	return finishDiff(c)
}

// finishDiff fills the statistic, p-value and interval of c from its
// Difference, StdError, DF and Level.
func finishDiff(c Comparison) Comparison {
	df := c.DF
	if c.StdError == 0 {
		c.Reason = reasonZeroSE
		return c
	}
	c.Statistic = c.Difference / c.StdError
	if math.IsInf(df, 1) {
		c.PValue = TwoSidedNormalP(c.Statistic)
	} else {
		c.PValue = TwoSidedTP(c.Statistic, df)
	}
	if !validLevel(c.Level) {
		c.Reason = reasonBadLevel
		return c
	}
	var q float64
	if math.IsInf(df, 1) {
		q = NormalQuantile((1 + c.Level) / 2)
	} else {
		q = TQuantile((1+c.Level)/2, df)
	}
	c.CILow = c.Difference - q*c.StdError
	c.CIHigh = c.Difference + q*c.StdError
	return c
}

// RelativeLift returns the relative lift of treatment over baseline,
//
//	L = x̄_t/x̄_b − 1
//
// with the delta-method variance for independent groups (Deng, Knoblich &
// Lu 2018, "Applying the Delta Method in Metric Analytics: A Practical
// Guide with Novel Ideas", KDD; Kohavi, Tang & Xu 2020, "Trustworthy
// Online Controlled Experiments", chapter "Variance Estimation and
// Improved Sensitivity"):
//
//	Var(L) ≈ Var(x̄_t)/x̄_b² + x̄_t²·Var(x̄_b)/x̄_b⁴
//
// and the normal interval L ± z_{(1+level)/2}·√Var(L). The estimates may be
// means, proportions or ratios. The string is a reason, empty when every
// value is defined; a zero baseline value leaves everything NaN.
//
// Deprecated: the interval is centred at the observed ratio and can exclude
// 0 while the test of the difference does not reject. Use Fieller (or the
// RelCILow, RelCIHigh and RelSet fields of a Comparison) for the interval;
// rel and se remain correct as a point estimate and delta-method standard
// error.
func RelativeLift(base, treat Estimate, level float64) (rel, se, lo, hi float64, reason string) {
	nan := math.NaN()
	rel, se, lo, hi = nan, nan, nan, nan
	if math.IsNaN(base.Value) || math.IsNaN(treat.Value) {
		r := firstReason(base, treat)
		if r == "" {
			r = reasonBadMean
		}
		return rel, se, lo, hi, r
	}
	if base.Value == 0 {
		return rel, se, lo, hi, reasonZeroBase
	}
	b, t := base.Value, treat.Value
	rel = t/b - 1
	v := treat.StdError*treat.StdError/(b*b) + t*t*base.StdError*base.StdError/(b*b*b*b)
	if math.IsNaN(v) {
		r := firstReason(base, treat)
		if r == "" {
			r = reasonUndefinedSE
		}
		return rel, se, lo, hi, r
	}
	se = math.Sqrt(v)
	if se == 0 {
		return rel, se, lo, hi, reasonZeroSE
	}
	if !validLevel(level) {
		return rel, se, lo, hi, reasonBadLevel
	}
	q := NormalQuantile((1 + level) / 2)
	return rel, se, rel - q*se, rel + q*se, ""
}

// withRelative fills the relative-lift fields of c for independent
// estimates, with the Fieller set at the comparison's critical value.
func withRelative(c Comparison, base, treat Estimate) Comparison {
	return withRelSet(c, base, treat, 0, relInputs{df: c.DF})
}

// Welch compares two means with Welch's unequal-variance t test
// (Welch 1947, "The generalization of 'Student's' problem when several
// different population variances are involved", Biometrika 34):
//
//	d = x̄_t − x̄_b,  SE = √(s_t²/n_t + s_b²/n_b),  t = d/SE
//	ν = (s_b²/n_b + s_t²/n_t)² / ( (s_b²/n_b)²/(n_b−1) + (s_t²/n_t)²/(n_t−1) )
//	CI = d ± t_{(1+level)/2, ν}·SE
//
// with ν the Welch–Satterthwaite degrees of freedom (Satterthwaite 1946)
// and a two-sided p-value from Student's t with ν degrees of freedom.
// The relative lift is x̄_t/x̄_b − 1 with the Fieller set (Fieller) at the
// same t critical value, so it excludes 0 exactly when p < 1 − level.
//
// Preconditions: both N ≥ 2, variances ≥ 0 and not both zero,
// 0 < level < 1. Otherwise the undefined fields are NaN and Reason says
// why; Difference stays defined whenever both means are.
func Welch(base, treat Moments, level float64) Comparison {
	c := nanComparison(MethodWelch, level)
	be, te := MeanEstimate(base), MeanEstimate(treat)
	df := welchDF(be.StdError*be.StdError, te.StdError*te.StdError, base.N, treat.N)
	c = compareEstimates(c, be, te, df)
	if math.IsNaN(c.StdError) || c.StdError == 0 {
		c.DF = math.NaN()
	}
	return withRelative(c, be, te)
}

// TwoProportion compares two proportions (Mean is the share of units with
// outcome 1; Var is ignored). Agresti 2013, "Categorical Data Analysis",
// 3rd ed., chapter 2, and Fleiss, Levin & Paik 2003, "Statistical Methods
// for Rates and Proportions", 3rd ed., chapter 2, give the test:
//
// The p-value uses the pooled standard error, which is the standard error
// under the null hypothesis p_t = p_b; its square is the Pearson
// chi-square of the 2×2 table (without continuity correction):
//
//	p̄ = (n_b·p_b + n_t·p_t)/(n_b + n_t)
//	z = (p_t − p_b) / √( p̄(1−p̄)(1/n_b + 1/n_t) )
//
// The confidence interval for the difference is Newcombe's hybrid score
// interval (NewcombeDiff, Newcombe 1998 method 10), which stays inside
// [−1, 1] and behaves well near 0 and 1. StdError is the unpooled
// standard error √( p_b(1−p_b)/n_b + p_t(1−p_t)/n_t ) (for uses that need
// one standard error) and TestStdError the pooled one; DF is +Inf. The
// relative change p_t/p_b − 1 has the Koopman score set (KoopmanRatio),
// which excludes 0 exactly when the pooled z test rejects.
//
// Preconditions: both N ≥ 2 (the same minimum as for means), both means
// in [0, 1], 0 < level < 1. When every unit in both groups has the same
// outcome the test is undefined.
func TwoProportion(base, treat Moments, level float64) Comparison {
	c := nanComparison(MethodTwoProportion, level)
	be, te := ProportionEstimate(base), ProportionEstimate(treat)
	c.DF = math.Inf(1)
	c.Difference = te.Value - be.Value
	c.Reason = firstReason(be, te)
	if c.Reason != "" {
		if be.Reason != reasonOneUnit && te.Reason != reasonOneUnit {
			c.Difference = math.NaN()
		}
		return withRelSet(c, be, te, 0, relInputs{df: c.DF})
	}
	nb, nt := base.N, treat.N
	c.StdError = math.Sqrt(be.StdError*be.StdError + te.StdError*te.StdError)
	pbar := (nb*base.Mean + nt*treat.Mean) / (nb + nt)
	se0 := math.Sqrt(pbar * (1 - pbar) * (1/nb + 1/nt))
	c.TestStdError = se0
	if se0 == 0 {
		c.Reason = "every unit in both groups has the same outcome"
	} else {
		c.Statistic = c.Difference / se0
		c.PValue = TwoSidedNormalP(c.Statistic)
	}
	if !validLevel(level) {
		c.Reason = reasonBadLevel
	} else {
		c.CILow, c.CIHigh = NewcombeDiff(te.Value, nt, be.Value, nb, level)
	}
	return withRelSet(c, be, te, 0, relInputs{df: c.DF, score: true,
		xt: treat.Mean * nt, nt: nt, xb: base.Mean * nb, nb: nb})
}

// RatioDiff compares two ratio metrics sum(num)/sum(den) analysed at the
// unit level. Each ratio's standard error is the delta-method standard
// error of RatioEstimate (Deng, Knoblich & Lu 2018, "Applying the Delta
// Method in Metric Analytics: A Practical Guide with Novel Ideas", KDD):
//
//	d = R̂_t − R̂_b,  SE = √(SE(R̂_t)² + SE(R̂_b)²),  z = d/SE
//	CI = d ± z_{(1+level)/2}·SE
//
// with a normal p-value (DF = +Inf), since the delta method is an
// asymptotic approximation. The relative lift R̂_t/R̂_b − 1 has Fieller's
// set (Fieller) from the ratio estimates and their standard errors with
// the normal critical value, so it excludes 0 exactly when p < 1 − level.
//
// Preconditions: both N ≥ 2, both MeanDen ≠ 0, 0 < level < 1.
func RatioDiff(base, treat RatioMoments, level float64) Comparison {
	c := nanComparison(MethodDelta, level)
	be, te := RatioEstimate(base), RatioEstimate(treat)
	c = compareEstimates(c, be, te, math.Inf(1))
	c = withRelative(c, be, te)
	if c.RelReason == reasonZeroBase {
		c.RelReason = "baseline ratio is zero"
	}
	return c
}
