package stats

import (
	"math"
	"strings"
)

// This file holds pre-launch planning: power, sample size and minimum
// detectable effect (MDE) for the two-arm comparisons of compare.go.
//
// Conventions shared by every function:
//   - alpha is the significance level of the test; twoSided selects a
//     two-sided test at alpha (alpha/2 in each tail) rather than a
//     one-sided test at alpha in the direction of the effect.
//   - Two-sided power ignores the rejection tail on the wrong side of the
//     null, as R's power.t.test and power.prop.test do by default
//     (strict = FALSE). That tail adds at most alpha/2 and is negligible
//     at any power worth planning for; leaving it out makes power and MDE
//     exact inverses.
//   - Invalid input gives NaN, never a panic.

// powerSideAlpha returns the tail probability of one rejection region:
// alpha/2 for a two-sided test, alpha for a one-sided one, and NaN unless
// 0 < alpha < 1.
func powerSideAlpha(alpha float64, twoSided bool) float64 {
	if !(alpha > 0 && alpha < 1) {
		return math.NaN()
	}
	if twoSided {
		return alpha / 2
	}
	return alpha
}

// powerValid reports whether 0 < p < 1.
func powerValid(p float64) bool { return p > 0 && p < 1 }

// powerBisect returns x in [lo, hi] with f(x) = target for an increasing f,
// or NaN when f(lo) > target or f(hi) < target. It bisects in log x when
// both ends are positive and far apart, so n and effects spanning many
// orders of magnitude converge in a fixed number of steps.
func powerBisect(f func(float64) float64, lo, hi, target float64) float64 {
	flo, fhi := f(lo), f(hi)
	if math.IsNaN(flo) || math.IsNaN(fhi) || flo > target || fhi < target {
		return math.NaN()
	}
	geometric := lo > 0 && hi/lo > 4
	for range 300 {
		var mid float64
		if geometric {
			mid = math.Sqrt(lo * hi)
		} else {
			mid = lo + (hi-lo)/2
		}
		if mid <= lo || mid >= hi {
			break
		}
		if f(mid) < target {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo <= 1e-14*math.Abs(hi) {
			break
		}
	}
	return lo + (hi-lo)/2
}

// TTestPower returns the power of the two-sample Student t test with n
// units in each arm, true difference delta and common standard deviation
// sd, as R's power.t.test(type = "two.sample") computes it (Cohen 1988,
// "Statistical Power Analysis for the Behavioral Sciences", 2nd ed.,
// chapter 2, for the noncentral-t power of the t test):
//
//	ν = 2(n − 1),  c = t_{1−α/s, ν},  λ = √(n/2)·δ/σ
//	power = P(T_{ν,λ} > c)
//
// with s = 2 for a two-sided test (δ replaced by |δ|) and s = 1 for a
// one-sided test in the direction δ > 0, and T_{ν,λ} noncentral t
// (NoncentralTCDF). n may be fractional.
//
// Preconditions: n > 1, sd > 0, 0 < alpha < 1.
func TTestPower(n, delta, sd, alpha float64, twoSided bool) float64 {
	a := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(a) || !(n > 1) || math.IsInf(n, 1) || !(sd > 0) || !finite(sd) || !finite(delta) {
		return math.NaN()
	}
	if twoSided {
		delta = math.Abs(delta)
	}
	nu := 2 * (n - 1)
	c := TQuantile(1-a, nu)
	return 1 - NoncentralTCDF(c, nu, math.Sqrt(n/2)*delta/sd)
}

// TTestN returns the number of units per arm (fractional; round up) at
// which TTestPower reaches power, found by bisection to full float64
// precision on n ∈ (1, 10⁹], the inversion R's power.t.test(n = NULL)
// performs with uniroot. It returns NaN when delta is 0 (or, one-sided,
// negative) or the power is not reached in that range.
//
// Preconditions: delta ≠ 0, sd > 0, 0 < alpha < 1, 0 < power < 1.
func TTestN(delta, sd, alpha, power float64, twoSided bool) float64 {
	if !powerValid(power) || !finite(delta) || delta == 0 {
		return math.NaN()
	}
	f := func(n float64) float64 { return TTestPower(n, delta, sd, alpha, twoSided) }
	return powerBisect(f, 1+1e-7, 1e9, power)
}

// TTestMDE returns the smallest difference δ > 0 that the two-sample t
// test with n units per arm detects with the given power, the inversion
// R's power.t.test(delta = NULL) performs, searched on sd·[10⁻⁷, 10⁷].
//
// Preconditions: n > 1, sd > 0, 0 < alpha < 1, 0 < power < 1.
func TTestMDE(n, sd, alpha, power float64, twoSided bool) float64 {
	if !powerValid(power) || !(sd > 0) || !finite(sd) {
		return math.NaN()
	}
	f := func(d float64) float64 { return TTestPower(n, d, sd, alpha, twoSided) }
	return powerBisect(f, sd*1e-7, sd*1e7, power)
}

// Arms describes a two-arm design for normal-approximation planning:
// the allocation shares of the baseline and the treatment (any positive
// numbers; they are normalised by their sum, so 1 and 1, 0.5 and 0.5, or
// 50 and 50 all mean an even split) and the per-unit variances of the
// metric in each arm. Unequal shares and unequal variances are allowed.
// For a ratio metric use the linearised variance (LinearizedVariance); for
// a proportion p use p(1 − p); with CUPED use CUPEDVariance.
type Arms struct {
	WBase, WTreat     float64 // allocation shares
	VarBase, VarTreat float64 // per-unit variances
}

// sigma2 returns n·SE² = VarBase/wB + VarTreat/wT with normalised shares,
// or NaN when the design is invalid.
func (a Arms) sigma2() float64 {
	if !(a.WBase > 0) || !(a.WTreat > 0) || !finite(a.WBase) || !finite(a.WTreat) ||
		!(a.VarBase >= 0) || !(a.VarTreat >= 0) || !finite(a.VarBase) || !finite(a.VarTreat) {
		return math.NaN()
	}
	s := a.WBase + a.WTreat
	return a.VarBase/(a.WBase/s) + a.VarTreat/(a.WTreat/s)
}

// SE returns the standard error of the difference in means when nTotal
// units are split between the arms by the shares (Welch 1947; e.g. Chow,
// Shao & Wang 2008, "Sample Size Calculations in Clinical Research", 2nd
// ed., §3.2.1 with allocation ratio κ):
//
//	SE = √( σ_b²/(n·w_b) + σ_t²/(n·w_t) ),  w_b + w_t = 1
//
// It returns NaN unless nTotal > 0, both shares are positive and both
// variances are ≥ 0.
func (a Arms) SE(nTotal float64) float64 {
	if !(nTotal > 0) || math.IsInf(nTotal, 1) {
		return math.NaN()
	}
	return math.Sqrt(a.sigma2() / nTotal)
}

// MDE returns NormalMDE(a.SE(nTotal), alpha, power, twoSided).
func (a Arms) MDE(nTotal, alpha, power float64, twoSided bool) float64 {
	return NormalMDE(a.SE(nTotal), alpha, power, twoSided)
}

// TotalN returns the total number of units (both arms; fractional, round
// up) at which the normal test of the difference detects effect with the
// given power, the inverse of MDE (Chow, Shao & Wang 2008, §3.2.1):
//
//	n = (z_{1−α/s} + z_{power})² · (σ_b²/w_b + σ_t²/w_t) / effect²
//
// with s = 2 for a two-sided test and 1 for a one-sided test (which needs
// effect > 0). It returns NaN for a zero effect or invalid input.
func (a Arms) TotalN(effect, alpha, power float64, twoSided bool) float64 {
	sa := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(sa) || !powerValid(power) || !finite(effect) || effect == 0 || (!twoSided && effect < 0) {
		return math.NaN()
	}
	z := NormalQuantile(1-sa) + NormalQuantile(power)
	if !(z > 0) {
		return math.NaN()
	}
	return z * z * a.sigma2() / (effect * effect)
}

// NormalPower returns the power of a z test of a difference whose
// estimate has standard error se, when the true difference is effect
// (e.g. Chow, Shao & Wang 2008, §3.2.1):
//
//	two-sided: power = Φ(|effect|/se − z_{1−α/2})
//	one-sided: power = Φ(effect/se − z_{1−α})   (effect > 0 is the tested direction)
//
// The two-sided form ignores the far rejection tail (see the file
// conventions). Preconditions: se > 0, 0 < alpha < 1.
func NormalPower(effect, se, alpha float64, twoSided bool) float64 {
	sa := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(sa) || !(se > 0) || !finite(se) || !finite(effect) {
		return math.NaN()
	}
	if twoSided {
		effect = math.Abs(effect)
	}
	return 1 - upperNormal(effect/se-NormalQuantile(1-sa))
}

// NormalMDE returns the minimum detectable effect of a z test whose
// estimate has standard error se, the inverse of NormalPower (Bloom 1995,
// "Minimum detectable effects: a simple way to report the statistical
// power of experimental designs", Evaluation Review 19(5)):
//
//	MDE = (z_{1−α/s} + z_{power}) · se
//
// with s = 2 for a two-sided test and 1 for a one-sided test. It returns
// NaN unless se > 0, 0 < alpha < 1 and 0 < power < 1.
func NormalMDE(se, alpha, power float64, twoSided bool) float64 {
	sa := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(sa) || !powerValid(power) || !(se > 0) || !finite(se) {
		return math.NaN()
	}
	return (NormalQuantile(1-sa) + NormalQuantile(power)) * se
}

// propCheck reports whether p is a usable proportion.
func propCheck(p float64) bool { return p >= 0 && p <= 1 }

// PropPower returns the power of the two-sample test of proportions p1
// against p2 with n units per arm, the normal approximation of R's
// power.prop.test (Fleiss, Levin & Paik 2003, "Statistical Methods for
// Rates and Proportions", 3rd ed., §4.2, without continuity correction):
//
//	p̄ = (p1 + p2)/2
//	power = Φ( (√n·|p1 − p2| − z_{1−α/s}·√(2p̄(1 − p̄))) / √(p1(1 − p1) + p2(1 − p2)) )
//
// with s = 2 for a two-sided test and 1 for a one-sided test. The null
// standard error is pooled, the alternative one is not, matching the test
// of TwoProportion.
//
// Preconditions: n > 0, p1 and p2 in [0, 1] and not both 0 or both 1,
// 0 < alpha < 1.
func PropPower(n, p1, p2, alpha float64, twoSided bool) float64 {
	sa := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(sa) || !(n > 0) || math.IsInf(n, 1) || !propCheck(p1) || !propCheck(p2) {
		return math.NaN()
	}
	v := p1*(1-p1) + p2*(1-p2)
	if v == 0 {
		return math.NaN()
	}
	pbar := (p1 + p2) / 2
	num := math.Sqrt(n)*math.Abs(p1-p2) - NormalQuantile(1-sa)*math.Sqrt(2*pbar*(1-pbar))
	return 1 - upperNormal(num/math.Sqrt(v))
}

// PropN returns the number of units per arm (fractional; round up) at
// which PropPower reaches power, in closed form (Fleiss, Levin & Paik
// 2003, §4.2, the formula without continuity correction):
//
//	n = ( z_{1−α/s}·√(2p̄(1 − p̄)) + z_{power}·√(p1(1 − p1) + p2(1 − p2)) )² / (p1 − p2)²
//
// It returns NaN when p1 = p2 or an input is invalid.
func PropN(p1, p2, alpha, power float64, twoSided bool) float64 {
	sa := powerSideAlpha(alpha, twoSided)
	if math.IsNaN(sa) || !powerValid(power) || !propCheck(p1) || !propCheck(p2) || p1 == p2 {
		return math.NaN()
	}
	pbar := (p1 + p2) / 2
	num := NormalQuantile(1-sa)*math.Sqrt(2*pbar*(1-pbar)) + NormalQuantile(power)*math.Sqrt(p1*(1-p1)+p2*(1-p2))
	if !(num > 0) {
		return math.NaN()
	}
	d := p1 - p2
	return num * num / (d * d)
}

// PropMDE returns the smallest increase p2 − p1 > 0 over the baseline
// proportion p1 that the test of PropPower detects with the given power
// with n units per arm, the inversion R's power.prop.test(p2 = NULL)
// performs with uniroot on p2 ∈ (p1, 1]. For a decrease, call it with
// 1 − p1 (the test is symmetric under p ↦ 1 − p) and negate the result.
// It returns NaN when no p2 ≤ 1 reaches the power.
//
// Preconditions: n > 0, 0 ≤ p1 < 1, 0 < alpha < 1, 0 < power < 1.
func PropMDE(n, p1, alpha, power float64, twoSided bool) float64 {
	if !powerValid(power) || !(p1 >= 0 && p1 < 1) {
		return math.NaN()
	}
	f := func(d float64) float64 { return PropPower(n, p1, p1+d, alpha, twoSided) }
	return powerBisect(f, 1e-12*(1-p1), 1-p1, power)
}

// NonInferiorityPower returns the power of the one-sided non-inferiority
// z test with margin > 0 when the true difference (treatment − baseline,
// higher is better) is effect and its estimate has standard error se. The
// hypotheses are
//
//	H0: Δ ≤ −margin   against   H1: Δ > −margin
//
// rejected when (Δ̂ + margin)/se > z_{1−α}, so (Chow, Shao & Wang 2008,
// "Sample Size Calculations in Clinical Research", 2nd ed., §3.2.2, with
// their δ = −margin and ε = effect)
//
//	power = Φ( (effect + margin)/se − z_{1−α} )
//
// For a metric where lower is better, negate the effect. A superiority
// test is the case margin = 0. Preconditions: margin ≥ 0, se > 0,
// 0 < alpha < 1.
func NonInferiorityPower(effect, margin, se, alpha float64) float64 {
	if !(margin >= 0) || !finite(margin) {
		return math.NaN()
	}
	return NormalPower(effect+margin, se, alpha, false)
}

// NonInferiorityMDE returns the smallest true difference at which the
// non-inferiority test of NonInferiorityPower succeeds with the given
// power (Chow, Shao & Wang 2008, §3.2.2, solved for ε):
//
//	effect = (z_{1−α} + z_{power})·se − margin
//
// A negative result means that even a true loss of that size would, with
// the given power, still be declared non-inferior; a positive result
// means the margin is too small for the sample. Preconditions: margin ≥ 0,
// se > 0, 0 < alpha < 1, 0 < power < 1.
func NonInferiorityMDE(se, margin, alpha, power float64) float64 {
	if !(margin >= 0) || !finite(margin) {
		return math.NaN()
	}
	return NormalMDE(se, alpha, power, false) - margin
}

// NonInferiorityN returns the total number of units (both arms;
// fractional, round up) at which the non-inferiority test succeeds with
// the given power when the true difference is effect (Chow, Shao & Wang
// 2008, §3.2.2):
//
//	n = (z_{1−α} + z_{power})² · (σ_b²/w_b + σ_t²/w_t) / (effect + margin)²
//
// It returns NaN unless effect + margin > 0.
func (a Arms) NonInferiorityN(effect, margin, alpha, power float64) float64 {
	if !(margin >= 0) || !finite(margin) {
		return math.NaN()
	}
	return a.TotalN(effect+margin, alpha, power, false)
}

// Multiple-comparison methods accepted by PerComparisonAlpha.
const (
	AlphaNone       = "none"
	AlphaBonferroni = "bonferroni"
	AlphaHolm       = "holm"
	AlphaSidak      = "sidak"
	AlphaBH         = "bh"
)

// PerComparisonAlpha returns the significance level to plan each of
// treatmentArms comparisons against the baseline with, so that the
// family of comparisons keeps the overall level alpha:
//
//	"none":       α
//	"bonferroni": α/m   (Dunn 1961, "Multiple comparisons among means", JASA 56)
//	"holm":       α/m   (Holm 1979, Scand. J. Statist. 6)
//	"bh":         α/m   (Benjamini & Hochberg 1995, JRSS B 57)
//	"sidak":      1 − (1 − α)^{1/m}   (Šidák 1967, JASA 62)
//
// Holm and Benjamini–Hochberg reject at α/m at their first step, and an
// arm whose p-value is the only small one must clear exactly that
// threshold; their later, looser thresholds depend on the other arms'
// results, which a plan cannot count on. Planning with the worst case,
// which equals Bonferroni, keeps the planned power for every arm whatever
// the others do. Method names are case-insensitive. It returns NaN for an
// unknown method, treatmentArms < 1 or alpha outside (0, 1).
func PerComparisonAlpha(alpha float64, treatmentArms int, method string) float64 {
	if !(alpha > 0 && alpha < 1) || treatmentArms < 1 {
		return math.NaN()
	}
	m := float64(treatmentArms)
	switch strings.ToLower(method) {
	case AlphaNone:
		return alpha
	case AlphaBonferroni, AlphaHolm, AlphaBH:
		return alpha / m
	case AlphaSidak:
		return -math.Expm1(math.Log1p(-alpha) / m)
	}
	return math.NaN()
}

// CUPEDVariance returns the per-unit variance of a metric after CUPED
// adjustment with a pre-experiment covariate whose correlation with the
// metric is rho (Deng, Xu, Kohavi & Walker 2013, "Improving the
// sensitivity of online controlled experiments by utilizing
// pre-experiment data", WSDM, §3.2):
//
//	Var(Y − θX) = Var(Y)·(1 − ρ²)   at the optimal θ = Cov(Y, X)/Var(X)
//
// Use it in Arms to plan an adjusted analysis. It returns NaN unless
// variance ≥ 0 and −1 ≤ rho ≤ 1.
func CUPEDVariance(variance, rho float64) float64 {
	if !(variance >= 0) || math.IsInf(variance, 1) || !(rho >= -1 && rho <= 1) {
		return math.NaN()
	}
	return variance * (1 - rho*rho)
}

// RelativeMDE returns an absolute minimum detectable effect as a fraction
// of the baseline mean, the scale of a relative lift (RelativeLift):
//
//	relative MDE = |absMDE / baseMean|
//
// It returns NaN when baseMean is zero or either input is not finite.
func RelativeMDE(absMDE, baseMean float64) float64 {
	if !finite(absMDE) || !finite(baseMean) || baseMean == 0 {
		return math.NaN()
	}
	return math.Abs(absMDE / baseMean)
}
