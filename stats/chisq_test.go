package stats

import (
	"math"
	"testing"
)

func TestChiSquareTableValues(t *testing.T) {
	// Source: standard chi-square table, NIST/SEMATECH e-Handbook of
	// Statistical Methods, 1.3.6.7.4: upper 0.001 point of χ²(1) is 10.828,
	// upper 0.05 point of χ²(2) is 5.991. The table is rounded to 3
	// decimals, so the tolerance on p is the change in p over ±0.0005.
	tests := []struct {
		name         string
		x, df, wantP float64
		tol          float64 // relative
	}{
		{"chi2(1) 10.828", 10.828, 1, 0.001, 5e-4},
		{"chi2(2) 5.991", 5.991, 2, 0.05, 5e-4},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkNear(t, "upper tail", chiSquareSurvival(tt.x, tt.df), tt.wantP, tt.tol)
		})
	}
}

func TestSampleRatio(t *testing.T) {
	// Source: hand computation.
	//   [5100, 4900] at 1:1: E = 5000, X² = 2·100²/5000 = 4, df 1,
	//     p = 2Φ(−2) = 0.04550026 (χ²(1) = Z²; standard normal table).
	//   [1000, 1000, 1100] at 1:1:1: E = 3100/3, X² = 200/31, df 2,
	//     p = exp(−X²/2) (closed form of the χ²(2) upper tail).
	//   [5050, 2400, 2550] at 50:25:25: E = 5000, 2500, 2500,
	//     X² = 2500/5000 + 10000/2500 + 2500/2500 = 5.5, df 2, p = exp(−2.75).
	tests := []struct {
		name             string
		observed, weight []float64
		wantX2, wantDF   float64
		wantP            float64
	}{
		{"two variants", []float64{5100, 4900}, []float64{1, 1}, 4, 1, 0.04550026},
		{"three variants", []float64{1000, 1000, 1100}, []float64{1, 1, 1}, 200.0 / 31, 2, math.Exp(-100.0 / 31)},
		{"unequal weights", []float64{5050, 2400, 2550}, []float64{0.5, 0.25, 0.25}, 5.5, 2, math.Exp(-2.75)},
		{"zero weight, zero count", []float64{5100, 0, 4900}, []float64{1, 0, 1}, 4, 1, 0.04550026},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := SampleRatio(tt.observed, tt.weight)
			checkNear(t, "Statistic", r.Statistic, tt.wantX2, 1e-12)
			checkNear(t, "DF", r.DF, tt.wantDF, 0)
			checkNear(t, "PValue", r.PValue, tt.wantP, 1e-6)
			if r.Reason != "" {
				t.Errorf("got Reason %q, want empty", r.Reason)
			}
		})
	}
}

func TestChiSquareIndependence(t *testing.T) {
	tests := []struct {
		name   string
		table  [][]float64
		wantX2 float64
		wantDF float64
		wantP  float64
		tolX2  float64
		tolP   float64
	}{
		// Source: R 4.x example(prop.test), smokers <- c(83, 90, 129, 70),
		// patients <- c(86, 93, 136, 82): "X-squared = 12.6, df = 3,
		// p-value = 0.005585" (from memory). R prints 3 and 4 significant
		// digits.
		{"R prop.test smokers", [][]float64{{83, 3}, {90, 3}, {129, 7}, {70, 12}}, 12.6, 3, 0.005585, 5e-3, 1e-4},
		// Source: hand computation. [[10, 20], [20, 10]]: every expected
		// count is 15, X² = 4·25/15 = 20/3, df 1, p = P(χ²(1) ≥ 20/3).
		// 2Φ(−√(20/3)) = 2Φ(−2.581989) = 0.009823 (standard normal table,
		// from memory).
		{"2x2 hand", [][]float64{{10, 20}, {20, 10}}, 20.0 / 3, 1, 0.009823, 1e-12, 1e-4},
		// Source: hand computation; the empty row is dropped, leaving the
		// 2x2 table above.
		{"empty row dropped", [][]float64{{10, 20}, {0, 0}, {20, 10}}, 20.0 / 3, 1, 0.009823, 1e-12, 1e-4},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r := ChiSquareIndependence(tt.table)
			checkNear(t, "Statistic", r.Statistic, tt.wantX2, tt.tolX2)
			checkNear(t, "DF", r.DF, tt.wantDF, 0)
			checkNear(t, "PValue", r.PValue, tt.wantP, tt.tolP)
			if r.Reason != "" {
				t.Errorf("got Reason %q, want empty", r.Reason)
			}
		})
	}
}
