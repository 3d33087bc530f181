package stats

import "gonum.org/v1/gonum/stat/distuv"

// BinomialRange returns the central acceptance range [lo, hi] of a
// Binomial(n, p) count at the given level: lo is the largest k with
// P(X < k) ≤ (1−level)/2 and hi the smallest k with P(X > k) ≤ (1−level)/2,
// so a count outside [lo, hi] has probability at most 1−level under the
// binomial (an exact, equal-tailed test; see Clopper & Pearson 1934, "The
// use of confidence or fiducial limits illustrated in the case of the
// binomial", Biometrika 26, for the same tail construction):
//
//	P(X < lo) ≤ α/2,  P(X > hi) ≤ α/2,  α = 1 − level
//
// It is used to judge an observed false-positive count of n independent
// A/A tests at significance p. It returns (0, n) for invalid input.
func BinomialRange(n int, p, level float64) (lo, hi int) {
	if n <= 0 || !(p > 0 && p < 1) || !(level > 0 && level < 1) {
		return 0, max(n, 0)
	}
	b := distuv.Binomial{N: float64(n), P: p}
	tail := (1 - level) / 2
	// Lower tail: P(X < k) accumulated upwards.
	below := 0.0
	for k := 0; k <= n; k++ {
		if below > tail {
			break
		}
		lo = k
		below += b.Prob(float64(k))
	}
	// Upper tail: P(X > k) accumulated downwards, summing the small terms
	// directly rather than taking 1 − CDF.
	above := 0.0
	for k := n; k >= 0; k-- {
		if above > tail {
			break
		}
		hi = k
		above += b.Prob(float64(k))
	}
	return lo, hi
}
