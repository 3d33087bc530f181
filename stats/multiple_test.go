package stats

import (
	"math"
	"testing"
)

// bh1995 are the 15 p-values of the worked example in Benjamini & Hochberg
// (1995), "Controlling the false discovery rate" (the same example appears in SciPy's
// false_discovery_control documentation).
var bh1995 = []float64{0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344,
	0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000}

func countAtMost(p []float64, alpha float64) int {
	n := 0
	for _, v := range p {
		if v <= alpha {
			n++
		}
	}
	return n
}

func TestMultipleTestingBH1995(t *testing.T) {
	// Source: Benjamini & Hochberg (1995) worked example: at q = 0.05 BH
	// rejects 4 hypotheses and Bonferroni rejects 3; Holm also rejects 3
	// (hand computation below).
	// Adjusted BH p-values 0.0015, 0.003, 0.0095, 0.035625 (as in SciPy's
	// documentation); the remaining entries are hand-computed from
	// min_{j≥i} 15·p_(j)/j.
	wantBH := []float64{0.0015, 0.003, 0.0095, 0.035625, 0.0603, 15 * 0.0298 / 7, 15 * 0.0298 / 7,
		15 * 0.0344 / 8, 15 * 0.0459 / 9, 0.486, 15 * 0.4262 / 11, 15 * 0.5719 / 12,
		15 * 0.6528 / 13, 15 * 0.7590 / 14, 1}
	// Hand-computed Holm: (15 − i + 1)·p_(i), running maximum.
	wantHolm := []float64{0.0015, 0.0056, 0.0247, 0.114}
	// Hand-computed Bonferroni: 15·p_i capped at 1.
	wantBonf := []float64{0.0015, 0.006, 0.0285, 0.1425}

	bh := BenjaminiHochberg(bh1995)
	holm := Holm(bh1995)
	bonf := Bonferroni(bh1995)
	for i, w := range wantBH {
		checkNear(t, "BH", bh[i], w, 1e-12)
	}
	for i, w := range wantHolm {
		checkNear(t, "Holm", holm[i], w, 1e-12)
	}
	for i, w := range wantBonf {
		checkNear(t, "Bonferroni", bonf[i], w, 1e-12)
	}
	tests := []struct {
		name string
		adj  []float64
		want int
	}{
		{"BH", bh, 4},
		{"Holm", holm, 3},
		{"Bonferroni", bonf, 3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := countAtMost(tt.adj, 0.05); got != tt.want {
				t.Errorf("rejections at 0.05: got %v, want %v", got, tt.want)
			}
			for i := 1; i < len(tt.adj); i++ {
				if tt.adj[i] < tt.adj[i-1] || tt.adj[i] > 1 {
					t.Errorf("adjusted p not monotone and capped at %d: %v", i, tt.adj)
				}
			}
		})
	}
}

func TestMultipleTestingOrder(t *testing.T) {
	// Source: hand computation on a shuffled input of 4 p-values, sorted
	// 0.01, 0.02, 0.03, 0.5 and with one NaN that must be kept in place and
	// not counted (m = 4).
	p := []float64{0.03, math.NaN(), 0.5, 0.01, 0.02}
	tests := []struct {
		name string
		f    func([]float64) []float64
		want []float64
	}{
		// BH: 4·0.01/1 = 0.04, 4·0.02/2 = 0.04, 4·0.03/3 = 0.04, 4·0.5/4 = 0.5.
		{"BH", BenjaminiHochberg, []float64{0.04, math.NaN(), 0.5, 0.04, 0.04}},
		// Holm: 4·0.01, max(3·0.02, .04) = 0.06, max(2·0.03, 0.06) = 0.06, 0.5.
		{"Holm", Holm, []float64{0.06, math.NaN(), 0.5, 0.04, 0.06}},
		// Bonferroni: 4·p capped at 1.
		{"Bonferroni", Bonferroni, []float64{0.12, math.NaN(), 1, 0.04, 0.08}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := tt.f(p)
			for i := range tt.want {
				if math.IsNaN(tt.want[i]) {
					if !math.IsNaN(got[i]) {
						t.Errorf("index %d: got %v, want NaN", i, got[i])
					}
					continue
				}
				checkNear(t, tt.name, got[i], tt.want[i], 1e-12)
			}
		})
	}
}
