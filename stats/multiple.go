package stats

import (
	"math"
	"sort"
)

// validP collects the indices of usable p-values (finite, in [0, 1]) and
// an output slice with NaN everywhere.
func validP(p []float64) (idx []int, out []float64) {
	out = make([]float64, len(p))
	for i, v := range p {
		if math.IsNaN(v) || v < 0 || v > 1 {
			out[i] = math.NaN()
			continue
		}
		idx = append(idx, i)
	}
	return idx, out
}

// Bonferroni returns Bonferroni-adjusted p-values (Dunn 1961, "Multiple
// comparisons among means", Journal of the American Statistical
// Association 56):
//
//	p̃_i = min(1, m·p_i)
//
// in the order of the input. m counts the usable p-values: NaN entries,
// and values outside [0, 1], are returned as NaN and do not count towards
// m. Rejecting every hypothesis with p̃_i ≤ α controls the family-wise
// error rate at α.
func Bonferroni(p []float64) []float64 {
	idx, out := validP(p)
	m := float64(len(idx))
	for _, i := range idx {
		out[i] = math.Min(1, m*p[i])
	}
	return out
}

// Holm returns Holm step-down adjusted p-values (Holm 1979, "A simple
// sequentially rejective multiple test procedure", Scandinavian Journal of
// Statistics 6; adjusted-p form as in Wright 1992, "Adjusted P-values for
// simultaneous inference", Biometrics 48). With p_(1) ≤ … ≤ p_(m) sorted,
//
//	p̃_(i) = min(1, max_{j ≤ i} (m − j + 1)·p_(j))
//
// returned in the order of the input; NaN entries are handled as in
// Bonferroni. Rejecting p̃_i ≤ α controls the family-wise error rate at α
// and is never less powerful than Bonferroni.
func Holm(p []float64) []float64 {
	idx, out := validP(p)
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	m := len(idx)
	running := 0.0
	for k, i := range idx {
		running = math.Max(running, float64(m-k)*p[i])
		out[i] = math.Min(1, running)
	}
	return out
}

// BenjaminiHochberg returns Benjamini–Hochberg adjusted p-values
// (Benjamini & Hochberg 1995, "Controlling the false discovery rate: a
// practical and powerful approach to multiple testing", Journal of the
// Royal Statistical Society B 57; adjusted-p form as in Wright 1992).
// With p_(1) ≤ … ≤ p_(m) sorted,
//
//	p̃_(i) = min(1, min_{j ≥ i} m·p_(j)/j)
//
// returned in the order of the input; NaN entries are handled as in
// Bonferroni. Rejecting p̃_i ≤ q controls the false discovery rate at q for
// independent (or positively dependent) tests.
func BenjaminiHochberg(p []float64) []float64 {
	idx, out := validP(p)
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	m := len(idx)
	running := 1.0
	for k := m - 1; k >= 0; k-- {
		i := idx[k]
		running = math.Min(running, float64(m)*p[i]/float64(k+1))
		out[i] = running
	}
	return out
}
