package stats

import (
	"math"
	"testing"
)

func TestGuardCheck(t *testing.T) {
	// Source: standard normal table (NIST/SEMATECH e-Handbook 1.3.6.7.1):
	// Φ(−1) = 0.1586553, Φ(−2) = 0.02275013, Φ(−3) = 0.001349898 (from
	// memory to 7 digits), z_0.95 = 1.644854, z_0.975 = 1.959964.
	// Margin 0.02, level 0.95, se 0.01 throughout; verdicts by hand:
	//   rel 0.01 (increase): p = Φ(−1); bound 0.0264 > 0.02 → inconclusive
	//   rel 0.00 (increase): p = Φ(−2); bound 0.0164 < 0.02 → no harm shown
	//   rel 0.05 (increase): p = Φ(3) ; CI low 0.0304 > 0.02 → harm shown
	//   rel −0.01 (increase): p = Φ(−3); bound 0.0064 → no harm shown
	//   rel −0.05 (decrease): CI high −0.0304 < −0.02 → harm shown
	//   rel 0.00 (decrease): p = Φ(−2); bound −0.0164 > −0.02 → no harm shown
	//   rel −0.01 (decrease): p = Φ(−1) → inconclusive
	tests := []struct {
		name    string
		rel     float64
		harm    string
		verdict string
		p       float64
		bound   float64
	}{
		{"inc inconclusive", 0.01, HarmIncrease, Inconclusive, 0.1586553, 0.01 + 1.644854*0.01},
		{"inc no harm", 0.00, HarmIncrease, NoHarmShown, 0.02275013, 0 + 1.644854*0.01},
		{"inc harm", 0.05, HarmIncrease, HarmShown, 1 - 0.001349898, 0.05 + 1.644854*0.01},
		{"inc improvement", -0.01, HarmIncrease, NoHarmShown, 0.001349898, -0.01 + 1.644854*0.01},
		{"dec harm", -0.05, HarmDecrease, HarmShown, 1 - 0.001349898, -0.05 - 1.644854*0.01},
		{"dec no harm", 0.00, HarmDecrease, NoHarmShown, 0.02275013, 0 - 1.644854*0.01},
		{"dec inconclusive", -0.01, HarmDecrease, Inconclusive, 0.1586553, -0.01 - 1.644854*0.01},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := GuardCheck(tt.rel, 0.01, tt.harm, 0.02, 0.95)
			if g.Verdict != tt.verdict || g.Reason != "" {
				t.Errorf("got verdict %q (reason %q), want %q", g.Verdict, g.Reason, tt.verdict)
			}
			checkNear(t, "PValue", g.PValue, tt.p, 1e-6)
			checkAbs(t, "Bound", g.Bound, tt.bound, 1e-8)
			checkAbs(t, "CI half-width", (g.CIHigh-g.CILow)/2, 1.959964*0.01, 1e-8)
		})
	}
}

func TestGuardComparisonAndSEFromCI(t *testing.T) {
	// Source: hand computation. An interval 0.01 ± 1.959964·0.004 at 95%
	// gives back SE 0.004 (standard normal table quantile).
	checkNear(t, "SEFromCI", SEFromCI(0.01-1.959964*0.004, 0.01+1.959964*0.004, 0.95), 0.004, 1e-6)
	// A comparison whose baseline mean is zero has no relative lift: the
	// verdict is inconclusive and carries the comparison's reason.
	c := Welch(Moments{N: 100, Mean: 0, Var: 1}, Moments{N: 100, Mean: 0.1, Var: 1}, 0.95)
	g := GuardComparison(c, HarmIncrease, 0.01, 0.95)
	if g.Verdict != Inconclusive || g.Reason != reasonZeroBase || !math.IsNaN(g.PValue) {
		t.Errorf("got %q %q %v, want %q %q NaN", g.Verdict, g.Reason, g.PValue, Inconclusive, reasonZeroBase)
	}
}
