package stats

import "math"

// powerMixtureZ returns the z-scale half-width of the normal-mixture
// confidence sequence of SequentialDiff after n units with mixing
// parameter rho (rho = 0 tunes ρ to n with SequentialRho), at level
// 1 − alpha:
//
//	c(n) = √( 2(v+1)/v · log(√(v+1)/α) ),  v = nρ²
//
// so the sequence excludes 0 exactly when |d|/se > c(n).
func powerMixtureZ(n, rho, alpha float64) float64 {
	if !(alpha > 0 && alpha < 1) || !(n > 0) || math.IsInf(n, 1) || !(rho >= 0) || math.IsInf(rho, 1) {
		return math.NaN()
	}
	if rho == 0 {
		rho = SequentialRho(alpha, n)
	}
	v := n * rho * rho
	return math.Sqrt(2 * (v + 1) / v * math.Log(math.Sqrt(v+1)/alpha))
}

// SequentialMDE returns the minimum detectable effect of an experiment
// monitored continuously with the always-valid interval of SequentialDiff
// (normal mixture; Robbins 1970, "Statistical methods related to the law
// of the iterated logarithm", Ann. Math. Statist. 41; Howard, Ramdas,
// McAuliffe & Sekhon 2021, Annals of Statistics 49), when it is run to at
// most n units (both arms) and se is the standard error of the difference
// at n. rho is the mixing parameter used for monitoring; rho = 0 means
// "tuned to n", SequentialRho(alpha, n).
//
// Method: exact boundary crossing at the final look. The sequence
// excludes 0 at n when |d̂|/se exceeds c(n) (powerMixtureZ above), and d̂/se
// is normal with mean δ/se and variance 1, so the probability of a
// detection at the final look is Φ(δ/se − c(n)) (ignoring the far tail,
// as NormalPower does). Solving for δ:
//
//	MDE_seq = (c(n) + z_{power}) · se
//
// A detection at the final look implies one by the final look, so the
// power of continuous monitoring at MDE_seq is at least the target: the
// value is conservative (slightly too large), exact for a single look at
// n. It is always larger than the fixed-horizon NormalMDE(se, alpha,
// power, true): c(n)² > −2·log α ≥ z²_{1−α/2}, the first because
// (v+1)/v > 1 and log √(v+1) > 0, the second because 2Φ(−z) ≤ e^{−z²/2}
// for z ≥ 0.
//
// Preconditions: se > 0, n > 0, rho ≥ 0, 0 < alpha < 1, 0 < power < 1.
func SequentialMDE(se, n, rho, alpha, power float64) float64 {
	c := powerMixtureZ(n, rho, alpha)
	if math.IsNaN(c) || !powerValid(power) || !(se > 0) || !finite(se) {
		return math.NaN()
	}
	return (c + NormalQuantile(power)) * se
}

// SequentialN returns the total number of units (both arms; fractional,
// round up) at which continuous monitoring with the always-valid interval
// of SequentialDiff detects effect with at least the given power, by the
// final-look method of SequentialMDE: the n with
//
//	(c(n) + z_{power}) · √(σ²/n) = |effect|,  σ² = σ_b²/w_b + σ_t²/w_t
//
// (Arms.SE(n) = √(σ²/n)). With rho = 0 the mixture is tuned to the answer
// itself, which makes c constant and n = (c + z_{power})²σ²/effect². With a
// fixed rho > 0, n is found by bisection on [1, 10¹⁵]; the detectable
// effect decreases in n whenever α ≤ e^{−1/2} and power ≥ 1/2 (c(n)²/n is
// proportional to (v+1)/v²·(½log(v+1) − log α), whose derivative in v has
// the sign of v/2 − (v+2)(½log(v+1) − log α) < 0). It returns NaN for a zero effect or when no n
// in range suffices.
//
// Preconditions: effect ≠ 0, rho ≥ 0, 0 < alpha < 1, 0 < power < 1.
func SequentialN(a Arms, effect, rho, alpha, power float64) float64 {
	s2 := a.sigma2()
	if math.IsNaN(s2) || !(s2 > 0) || !finite(effect) || effect == 0 || !powerValid(power) || !(alpha > 0 && alpha < 1) || !(rho >= 0) || math.IsInf(rho, 1) {
		return math.NaN()
	}
	zp := NormalQuantile(power)
	d := math.Abs(effect)
	if rho == 0 {
		// v = nρ² = −2 log α + log(−2 log α + 1) does not depend on n.
		c := powerMixtureZ(1, 0, alpha)
		if !(c+zp > 0) {
			return math.NaN()
		}
		return (c + zp) * (c + zp) * s2 / (d * d)
	}
	// Detectable effect at n, decreasing in n; bisect its negation.
	f := func(n float64) float64 {
		return -(powerMixtureZ(n, rho, alpha) + zp) * math.Sqrt(s2/n)
	}
	return powerBisect(f, 1, 1e15, -d)
}
