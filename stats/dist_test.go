package stats

import (
	"math"
	"testing"
)

func TestNormalQuantile(t *testing.T) {
	// Source: standard normal table (NIST/SEMATECH e-Handbook of
	// Statistical Methods, 1.3.6.7.1): 1.959964 and 0.8416212 as given in
	// the brief; 1.644854 and 2.575829 (from memory).
	tests := []struct {
		p, want, tol float64
	}{
		{0.975, 1.959964, 1e-6},
		{0.8, 0.8416212, 1e-6},
		{0.95, 1.644854, 1e-6},
		{0.995, 2.575829, 1e-6},
		{0.025, -1.959964, 1e-6},
		{0.5, 0, 1e-15},
	}
	for _, tt := range tests {
		t.Run("", func(t *testing.T) {
			checkNear(t, "NormalQuantile", NormalQuantile(tt.p), tt.want, tt.tol)
		})
	}
}

func TestTQuantile(t *testing.T) {
	// Source: standard t table, NIST/SEMATECH e-Handbook of Statistical
	// Methods, 1.3.6.7.2: 2.228139 (df 10) and 12.7062 (df 1) as given in
	// the brief; the 3-decimal entries for df 30, 5, 20, 100 (from memory).
	tests := []struct {
		name        string
		p, df, want float64
		tol         float64 // absolute
	}{
		{"0.975,10", 0.975, 10, 2.228139, 5e-7},
		{"0.975,1", 0.975, 1, 12.7062, 5e-5},
		{"0.95,30", 0.95, 30, 1.697, 5e-4},
		{"0.995,5", 0.995, 5, 4.032, 5e-4},
		{"0.99,20", 0.99, 20, 2.528, 5e-4},
		{"0.90,100", 0.90, 100, 1.290, 5e-4},
		{"0.025,10", 0.025, 10, -2.228139, 5e-7},
		// Source: the normal limit (same table, df = ∞ row).
		{"0.975,Inf", 0.975, math.Inf(1), 1.959964, 5e-7},
		{"0.975,1e12", 0.975, 1e12, 1.959964, 5e-7},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkAbs(t, "TQuantile", TQuantile(tt.p, tt.df), tt.want, tt.tol)
		})
	}
}

func TestTwoSidedPValues(t *testing.T) {
	// Closed forms of Student's t for df = 1 (Cauchy) and df = 2 (standard
	// results, e.g. Johnson, Kotz & Balakrishnan 1995, Continuous
	// Univariate Distributions vol. 2, chapter 28):
	//   df = 1: p = (2/π)·atan(1/|t|)
	//   df = 2: p = 1 − |t|/√(t²+2) = 2/(√(t²+2)·(√(t²+2)+|t|))
	cauchy := func(x float64) float64 { return 2 / math.Pi * math.Atan(1/math.Abs(x)) }
	t2 := func(x float64) float64 {
		s := math.Sqrt(x*x + 2)
		return 2 / (s * (s + math.Abs(x)))
	}
	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// Source: Φ(−10) = 7.619853e−24 (standard value, from memory), so
		// 2Φ(−10) = 1.523971e−23.
		{"normal z=10", TwoSidedNormalP(10), 1.523971e-23, 1e-6},
		{"normal z=-10", TwoSidedNormalP(-10), 1.523971e-23, 1e-6},
		// Source: standard normal table, 2Φ(−1.959964) = 0.05.
		{"normal z=1.96", TwoSidedNormalP(1.959964), 0.05, 1e-6},
		{"normal z=0", TwoSidedNormalP(0), 1, 1e-15},
		// Source: R 4.x t.test(extra ~ group, data = sleep): p = 0.07939414
		// at t = −1.860813, df = 17.77647.
		{"t sleep", TwoSidedTP(-1.860813, 17.77647), 0.07939414, 1e-6},
		{"t df=1 t=1", TwoSidedTP(1, 1), cauchy(1), 1e-12},
		{"t df=1 t=1e6", TwoSidedTP(1e6, 1), cauchy(1e6), 1e-9},
		{"t df=2 t=3", TwoSidedTP(3, 2), t2(3), 1e-12},
		{"t df=2 t=1e4", TwoSidedTP(-1e4, 2), t2(1e4), 1e-9},
		// Normal limit for huge or infinite df (same source as z = 10).
		{"t df=Inf", TwoSidedTP(10, math.Inf(1)), 1.523971e-23, 1e-6},
		{"t df=1e9", TwoSidedTP(10, 1e9), 1.523971e-23, 1e-6},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkNear(t, tt.name, tt.got, tt.want, tt.tol)
		})
	}
}

func TestDistributionsNoPanic(t *testing.T) {
	// Inputs outside the domain give NaN rather than a gonum panic.
	tests := []struct {
		name string
		got  float64
	}{
		{"NormalQuantile(2)", NormalQuantile(2)},
		{"NormalQuantile(-0.1)", NormalQuantile(-0.1)},
		{"TQuantile(1.5, 3)", TQuantile(1.5, 3)},
		{"TQuantile(0.5, 0)", TQuantile(0.5, 0)},
		{"TwoSidedTP(1, -1)", TwoSidedTP(1, -1)},
		{"TwoSidedTP(NaN, 3)", TwoSidedTP(math.NaN(), 3)},
		{"TwoSidedNormalP(NaN)", TwoSidedNormalP(math.NaN())},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if !math.IsNaN(tt.got) {
				t.Errorf("got %v, want NaN", tt.got)
			}
		})
	}
}
