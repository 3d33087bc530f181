package stats

import "math"

// SequentialRho returns the mixing parameter ρ that makes the normal-mixture
// confidence sequence tightest when n units have been seen (Howard,
// Ramdas, McAuliffe & Sekhon 2021, "Time-uniform, nonparametric,
// nonasymptotic confidence sequences", Annals of Statistics 49, eq. (3.11)):
//
//	ρ² = (−2 log α + log(−2 log α + 1)) / n*
//
// It returns NaN unless 0 < alpha < 1 and nStar > 0.
func SequentialRho(alpha, nStar float64) float64 {
	if !(alpha > 0 && alpha < 1) || !(nStar > 0) {
		return math.NaN()
	}
	l := -2 * math.Log(alpha)
	return math.Sqrt((l + math.Log(l+1)) / nStar)
}

// Sequential is an always-valid (peeking-safe) comparison: an interval and
// p-value that stay valid however often the data are looked at and
// whenever the experiment is stopped.
type Sequential struct {
	CILow, CIHigh float64
	PValue        float64
	Reason        string
}

// SequentialDiff returns the asymptotic confidence sequence for a
// difference d with standard error se after n units (both arms together),
// with mixing parameter rho (SequentialRho), at level 1 − alpha. It is the
// normal-mixture boundary applied to the estimator's influence function,
// whose per-unit variance is σ² = n·se² (Waudby-Smith, Arbour, Sinha,
// Kennedy & Ramdas 2024, "Time-uniform central limit theory and asymptotic
// confidence sequences", Annals of Statistics 52, Theorem 2.2; Robbins
// 1970 for the mixture):
//
//	radius = se · sqrt( 2(nρ²+1)/(nρ²) · log( sqrt(nρ²+1)/α ) )
//
// and the always-valid p-value is the smallest α whose sequence excludes 0:
//
//	p = min(1, sqrt(nρ²+1) · exp( −d²·nρ² / (2·se²·(nρ²+1)) ))
//
// The guarantee is asymptotic (large n), like the delta-method intervals.
func SequentialDiff(d, se, n, rho, alpha float64) Sequential {
	nan := math.NaN()
	out := Sequential{CILow: nan, CIHigh: nan, PValue: nan}
	switch {
	case !finite(d) || !finite(se) || se <= 0:
		out.Reason = reasonUndefinedSE
		return out
	case !(n >= 2) || !finite(rho) || rho <= 0 || !(alpha > 0 && alpha < 1):
		out.Reason = "sequential boundary is undefined (needs n ≥ 2, ρ > 0, 0 < α < 1)"
		return out
	}
	v := n * rho * rho
	radius := se * math.Sqrt(2*(v+1)/v*math.Log(math.Sqrt(v+1)/alpha))
	out.CILow, out.CIHigh = d-radius, d+radius
	out.PValue = math.Min(1, math.Sqrt(v+1)*math.Exp(-d*d*v/(2*se*se*(v+1))))
	return out
}

// SequentialTarget returns the planned number of units of one comparison
// (baseline variant base against treatment variant treat) in an experiment
// planned to reach planned units in total, split by the planned weights:
//
//	n*_pair = planned · (w_base + w_treat) / Σ w
//
// which is planned·(w_base + w_treat) when the weights sum to 1. It is the
// n* to pass to SequentialRho for that comparison: the confidence sequence
// is tightest at the comparison's own planned size (Howard, Ramdas,
// McAuliffe & Sekhon 2021, eq. (3.11)), not at the experiment's total,
// which with three or more variants overstates it. It returns NaN for a
// planned total that is not positive and finite, indices out of range or
// equal, or weights that are negative, not finite or sum to zero.
func SequentialTarget(planned float64, weights []float64, base, treat int) float64 {
	if !(planned > 0) || math.IsInf(planned, 1) || base == treat ||
		base < 0 || treat < 0 || base >= len(weights) || treat >= len(weights) {
		return math.NaN()
	}
	var sum float64
	for _, w := range weights {
		if !finite(w) || w < 0 {
			return math.NaN()
		}
		sum += w
	}
	if sum == 0 {
		return math.NaN()
	}
	return planned * (weights[base] + weights[treat]) / sum
}
