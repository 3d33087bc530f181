package stats

import "math"

// Moments are the sufficient statistics of a per-unit metric in one variant, as the SQL returns them.
type Moments struct {
	N    float64 // number of units
	Mean float64
	Var  float64 // sample variance, denominator n-1
}

// RatioMoments are the sufficient statistics of a ratio metric sum(num)/sum(den) analysed at the unit level.
type RatioMoments struct {
	N                float64
	MeanNum, MeanDen float64
	VarNum, VarDen   float64 // sample variances (n-1)
	Cov              float64 // sample covariance of num and den (n-1)
}

// Estimate is one variant's value of a metric and its standard error.
type Estimate struct {
	Value, StdError float64
	Reason          string // why Value or StdError is NaN; empty when both are defined
}

// Reasons shared by several functions.
const (
	reasonNoUnits     = "no units"
	reasonOneUnit     = "fewer than 2 units"
	reasonBadMean     = "mean is not a finite number"
	reasonBadVar      = "variance is negative or not a finite number"
	reasonBadCov      = "covariance is not a finite number"
	reasonBadN        = "unit count is negative or not a finite number"
	reasonBadProp     = "proportion is outside [0, 1]"
	reasonZeroDen     = "denominator mean is zero"
	reasonBadLevel    = "confidence level must be in (0, 1)"
	reasonZeroSE      = "standard error is zero (no variation in either group)"
	reasonZeroBase    = "baseline mean is zero"
	reasonUndefinedSE = "standard error is undefined"
)

// checkN classifies a unit count: "" when n ≥ 2, otherwise a reason.
// meanOK reports whether a mean computed over n units exists (n ≥ 1).
func checkN(n float64) (meanOK bool, reason string) {
	switch {
	case math.IsNaN(n) || math.IsInf(n, 0) || n < 0:
		return false, reasonBadN
	case n == 0:
		return false, reasonNoUnits
	case n < 2:
		return true, reasonOneUnit
	}
	return true, ""
}

// MeanEstimate returns the sample mean and its standard error,
//
//	SE(x̄) = √(s²/n)
//
// where s² is the sample variance with denominator n−1 (the standard error
// of the mean, e.g. Kohavi, Tang & Xu 2020, "Trustworthy Online Controlled
// Experiments", chapter "The Statistics behind Online Controlled
// Experiments").
//
// Preconditions: m.N ≥ 2 and m.Var ≥ 0 for a standard error. With one unit
// the mean is returned and StdError is NaN; with none both are NaN. Zero
// variance gives a standard error of 0, which is defined.
func MeanEstimate(m Moments) Estimate {
	meanOK, reason := checkN(m.N)
	if !meanOK {
		return Estimate{Value: math.NaN(), StdError: math.NaN(), Reason: reason}
	}
	if !finite(m.Mean) {
		return Estimate{Value: math.NaN(), StdError: math.NaN(), Reason: reasonBadMean}
	}
	if reason != "" {
		return Estimate{Value: m.Mean, StdError: math.NaN(), Reason: reason}
	}
	if !finite(m.Var) || m.Var < 0 {
		return Estimate{Value: m.Mean, StdError: math.NaN(), Reason: reasonBadVar}
	}
	return Estimate{Value: m.Mean, StdError: math.Sqrt(m.Var / m.N)}
}

// ProportionEstimate returns the proportion p = m.Mean of a 0/1 metric and
// its binomial (Wald) standard error
//
//	SE(p̂) = √(p̂(1−p̂)/n)
//
// (Agresti 2013, "Categorical Data Analysis", 3rd ed., chapter 1). m.Var is
// ignored. A proportion of exactly 0 or 1 has standard error 0, which is
// returned as defined.
//
// Preconditions: m.N ≥ 2 and 0 ≤ m.Mean ≤ 1. With one unit the
// proportion is returned and StdError is NaN with a reason, the same
// minimum-size rule as MeanEstimate; with none both are NaN.
func ProportionEstimate(m Moments) Estimate {
	meanOK, reason := checkN(m.N)
	if !meanOK {
		return Estimate{Value: math.NaN(), StdError: math.NaN(), Reason: reason}
	}
	if math.IsNaN(m.Mean) || m.Mean < 0 || m.Mean > 1 {
		return Estimate{Value: math.NaN(), StdError: math.NaN(), Reason: reasonBadProp}
	}
	if reason != "" {
		return Estimate{Value: m.Mean, StdError: math.NaN(), Reason: reason}
	}
	p := m.Mean
	return Estimate{Value: p, StdError: math.Sqrt(p * (1 - p) / m.N)}
}

// LinearizedVariance returns the per-unit variance of the linearised ratio
// l_i = (num_i − R·den_i)/μ_D with R = μ_N/μ_D, the first-order Taylor
// (delta-method) expansion of R̂ = N̄/D̄ of Deng, Knoblich & Lu (2018),
// "Applying the Delta Method in Metric Analytics: A Practical Guide with
// Novel Ideas", KDD:
//
//	Var(l) = VarNum/μ_D² − 2·μ_N·Cov/μ_D³ + μ_N²·VarDen/μ_D⁴
//
// so that Var(R̂) ≈ Var(l)/n. The result can be slightly negative through
// rounding only when num and den are almost exactly proportional; it is
// clamped at 0. It returns NaN when MeanDen is zero or an input is not
// finite.
func LinearizedVariance(r RatioMoments) float64 {
	if r.MeanDen == 0 || !finite(r.MeanDen) || !finite(r.MeanNum) ||
		!finite(r.VarNum) || !finite(r.VarDen) || !finite(r.Cov) {
		return math.NaN()
	}
	R := r.MeanNum / r.MeanDen
	v := (r.VarNum - 2*R*r.Cov + R*R*r.VarDen) / (r.MeanDen * r.MeanDen)
	return math.Max(0, v)
}

// Linearize returns the moments of the linearised ratio metric: N, the
// ratio R = MeanNum/MeanDen as Mean, and LinearizedVariance(r) as Var
// (Deng, Knoblich & Lu 2018, see LinearizedVariance). MeanEstimate of the
// result equals RatioEstimate(r), and the result can be fed to any
// function that takes Moments. The string is a reason, empty when the
// moments are defined.
func Linearize(r RatioMoments) (Moments, string) {
	meanOK, reason := checkN(r.N)
	if !meanOK {
		return Moments{N: r.N, Mean: math.NaN(), Var: math.NaN()}, reason
	}
	if !finite(r.MeanNum) || !finite(r.MeanDen) {
		return Moments{N: r.N, Mean: math.NaN(), Var: math.NaN()}, reasonBadMean
	}
	if r.MeanDen == 0 {
		return Moments{N: r.N, Mean: math.NaN(), Var: math.NaN()}, reasonZeroDen
	}
	m := Moments{N: r.N, Mean: r.MeanNum / r.MeanDen, Var: math.NaN()}
	if reason != "" {
		return m, reason
	}
	if !finite(r.VarNum) || !finite(r.VarDen) || r.VarNum < 0 || r.VarDen < 0 {
		return m, reasonBadVar
	}
	if !finite(r.Cov) {
		return m, reasonBadCov
	}
	m.Var = LinearizedVariance(r)
	return m, ""
}

// RatioEstimate returns the ratio R̂ = MeanNum/MeanDen (equal to
// sum(num)/sum(den)) and its delta-method standard error
//
//	SE(R̂) = √( (1/n)·(VarNum/μ_D² − 2·μ_N·Cov/μ_D³ + μ_N²·VarDen/μ_D⁴) )
//
// (Deng, Knoblich & Lu 2018, "Applying the Delta Method in Metric
// Analytics: A Practical Guide with Novel Ideas", KDD), which accounts for
// the correlation between numerator and denominator within a unit.
//
// Preconditions: r.N ≥ 2 and r.MeanDen ≠ 0. A zero denominator mean gives
// NaN for both fields.
func RatioEstimate(r RatioMoments) Estimate {
	m, reason := Linearize(r)
	if reason != "" {
		return Estimate{Value: m.Mean, StdError: math.NaN(), Reason: reason}
	}
	return MeanEstimate(m)
}
