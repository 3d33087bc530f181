package stats

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// largeDF is the number of degrees of freedom above which Student's t is
// replaced by the standard normal. gonum's StudentsT loses accuracy above
// about 1e8 degrees of freedom and returns NaN at +Inf; at 1e8 the two
// distributions differ by far less than float64 resolution of any p-value
// or quantile reported here.
const largeDF = 1e8

// NormalQuantile returns the p-quantile of the standard normal distribution,
// Φ⁻¹(p), using the rational approximation of
// Wichura (1988), "Algorithm AS 241: The percentage points of the normal
// distribution", Applied Statistics 37(3), as implemented by gonum:
//
//	NormalQuantile(p) = z such that Φ(z) = p
//
// It returns -Inf at p = 0, +Inf at p = 1 and NaN when p is NaN or outside
// [0, 1].
func NormalQuantile(p float64) float64 {
	if math.IsNaN(p) || p < 0 || p > 1 {
		return math.NaN()
	}
	return distuv.UnitNormal.Quantile(p)
}

// TQuantile returns the p-quantile of Student's t distribution with df
// degrees of freedom (Student 1908, "The probable error of a mean",
// Biometrika 6), obtained by inverting
//
//	F(t) = 1 − ½·I_{df/(df+t²)}(df/2, ½)   for t > 0
//
// where I is the regularised incomplete beta function. df may be
// fractional (as with the Welch–Satterthwaite approximation). When df
// exceeds 1e8 or is +Inf the standard normal quantile is returned.
// It returns NaN when p is NaN or outside [0, 1], or df is NaN or not
// positive.
func TQuantile(p, df float64) float64 {
	if math.IsNaN(p) || p < 0 || p > 1 || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if df > largeDF {
		return NormalQuantile(p)
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(p)
}

// TwoSidedNormalP returns the two-sided p-value of a standard normal test
// statistic z,
//
//	p = 2·Φ(−|z|)
//
// computed from the lower tail through the complementary error function,
// so that it stays accurate far in the tail (2·Φ(−10) ≈ 1.5e−23 rather
// than 0). It returns NaN when z is NaN and 0 when |z| is infinite.
func TwoSidedNormalP(z float64) float64 {
	if math.IsNaN(z) {
		return math.NaN()
	}
	return math.Min(1, 2*distuv.UnitNormal.CDF(-math.Abs(z)))
}

// TwoSidedTP returns the two-sided p-value of a Student's t statistic with
// df degrees of freedom,
//
//	p = 2·P(T_df ≥ |t|) = I_{df/(df+t²)}(df/2, ½)
//
// (Abramowitz & Stegun 1964, Handbook of Mathematical Functions, §26.7
// with the incomplete beta function of §26.5), which is accurate in the
// tail. When df exceeds 1e8 or is
// +Inf the normal p-value 2·Φ(−|t|) is returned. It returns NaN when t or
// df is NaN, or df is not positive.
func TwoSidedTP(t, df float64) float64 {
	if math.IsNaN(t) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if df > largeDF {
		return TwoSidedNormalP(t)
	}
	if math.IsInf(t, 0) {
		return 0
	}
	return math.Min(1, 2*distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t)))
}

// upperNormal returns P(Z ≥ z) = Φ(−z), accurate in the upper tail.
func upperNormal(z float64) float64 {
	if math.IsNaN(z) {
		return math.NaN()
	}
	return distuv.UnitNormal.CDF(-z)
}

// chiSquareSurvival returns P(χ²_df ≥ x), NaN when df is not positive.
func chiSquareSurvival(x, df float64) float64 {
	if math.IsNaN(x) || math.IsNaN(df) || df <= 0 {
		return math.NaN()
	}
	if math.IsInf(x, 1) {
		return 0
	}
	return distuv.ChiSquared{K: df}.Survival(x)
}

// validLevel reports whether level is a usable confidence level.
func validLevel(level float64) bool {
	return level > 0 && level < 1
}

// finite reports whether x is neither NaN nor infinite.
func finite(x float64) bool {
	return !math.IsNaN(x) && !math.IsInf(x, 0)
}
