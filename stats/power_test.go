package stats

import (
	"math"
	"testing"
)

// powerRScript is the R 4.2.2 script whose output fills the power.t.test
// and power.prop.test tables below (tol = 1e-12 makes R's uniroot solve to
// full precision; its default tolerance is about 1e-4):
//
//	f <- function(x) sprintf("%.12g", x)
//	side <- function(s) if (s == 2) "two.sided" else "one.sided"
//	# TTestPower rows: power.t.test(n=, delta=, sd=, sig.level=, alternative=)$power
//	# TTestN rows:     power.t.test(delta=, sd=, sig.level=, power=, tol=1e-12, alternative=)$n
//	# TTestMDE rows:   power.t.test(n=, sd=, sig.level=, power=, tol=1e-12, alternative=)$delta
//	# PropPower rows:  power.prop.test(n=, p1=, p2=, sig.level=, alternative=)$power
//	# PropN rows:      power.prop.test(p1=, p2=, sig.level=, power=, tol=1e-12, alternative=)$n
//	# PropMDE rows:    power.prop.test(n=, p1=, sig.level=, power=, tol=1e-12, alternative=)$p2 - p1
//
// each printed with f() for the argument rows of the tables.

func TestPowerTTest(t *testing.T) {
	// Source: R 4.2.2 power.t.test(type = "two.sample"), see powerRScript.
	t.Run("power", func(t *testing.T) {
		for _, tc := range []struct {
			n, delta, sd, alpha float64
			two                 bool
			want                float64
		}{
			{20, 1, 1, 0.05, true, 0.868952801692},
			{20, 1, 1, 0.05, false, 0.927902473395},
			{100, 0.3, 1.2, 0.01, true, 0.205298626412},
			{3.5, 2, 1, 0.1, false, 0.870605827955},
			{50, -0.4, 1, 0.05, true, 0.508145097122},
			{1000, 0.05, 0.8, 0.05, true, 0.286685706093},
		} {
			checkNear(t, "TTestPower", TTestPower(tc.n, tc.delta, tc.sd, tc.alpha, tc.two), tc.want, 1e-9)
		}
	})
	t.Run("n", func(t *testing.T) {
		for _, tc := range []struct {
			delta, sd, alpha, power float64
			two                     bool
			want                    float64
		}{
			{1, 1, 0.05, 0.9, true, 22.0210955701},
			{1, 1, 0.05, 0.8, false, 13.0977616198},
			{0.1, 1, 0.05, 0.8, true, 1570.73688801},
			{0.5, 2, 0.01, 0.95, true, 571.714670504},
			{0.02, 1, 0.05, 0.8, false, 30913.4625693},
		} {
			checkNear(t, "TTestN", TTestN(tc.delta, tc.sd, tc.alpha, tc.power, tc.two), tc.want, 1e-8)
		}
	})
	t.Run("mde", func(t *testing.T) {
		for _, tc := range []struct {
			n, sd, alpha, power float64
			two                 bool
			want                float64
		}{
			{20, 1, 0.05, 0.8, true, 0.909130127627},
			{20, 1, 0.05, 0.8, false, 0.800680336254},
			{500, 3, 0.01, 0.9, true, 0.733105655998},
			{5, 1, 0.05, 0.5, true, 1.40974483671},
		} {
			checkNear(t, "TTestMDE", TTestMDE(tc.n, tc.sd, tc.alpha, tc.power, tc.two), tc.want, 1e-8)
		}
	})
}

func TestPowerProportions(t *testing.T) {
	// Source: R 4.2.2 power.prop.test, see powerRScript.
	t.Run("power", func(t *testing.T) {
		for _, tc := range []struct {
			n, p1, p2, alpha float64
			two              bool
			want             float64
		}{
			{50, 0.5, 0.75, 0.05, true, 0.740165901331},
			{50, 0.5, 0.75, 0.05, false, 0.833983523355},
			{10000, 0.1, 0.11, 0.05, true, 0.635597997703},
			{2000, 0.3, 0.27, 0.01, true, 0.317567443065},
			{400, 0.02, 0.04, 0.1, false, 0.646969066578},
		} {
			checkNear(t, "PropPower", PropPower(tc.n, tc.p1, tc.p2, tc.alpha, tc.two), tc.want, 1e-9)
		}
	})
	t.Run("n", func(t *testing.T) {
		for _, tc := range []struct {
			p1, p2, alpha, power float64
			two                  bool
			want                 float64
		}{
			{0.5, 0.75, 0.05, 0.9, true, 76.7069284518},
			{0.1, 0.11, 0.05, 0.8, true, 14750.790469},
			{0.3, 0.27, 0.01, 0.9, false, 5892.19132384},
			{0.02, 0.025, 0.05, 0.8, true, 13808.9248972},
		} {
			checkNear(t, "PropN", PropN(tc.p1, tc.p2, tc.alpha, tc.power, tc.two), tc.want, 1e-8)
		}
	})
	t.Run("mde", func(t *testing.T) {
		for _, tc := range []struct {
			n, p1, alpha, power float64
			two                 bool
			want                float64
		}{
			{50, 0.5, 0.05, 0.8, true, 0.266830178952},
			{10000, 0.1, 0.05, 0.8, true, 0.0122010250744},
			{2000, 0.3, 0.01, 0.9, false, 0.0534805775567},
			{100000, 0.02, 0.05, 0.8, true, 0.00179210225908},
		} {
			checkNear(t, "PropMDE", PropMDE(tc.n, tc.p1, tc.alpha, tc.power, tc.two), tc.want, 1e-8)
		}
	})
	if got := PropMDE(10, 0.5, 0.05, 0.99, true); !math.IsNaN(got) {
		t.Errorf("PropMDE with no reachable p2: got %v, want NaN", got)
	}
}

// TestPowerNormalUnequalAllocation checks the normal approximation with a
// 1:3 split (equal variances) against statsmodels 0.13.5 NormalIndPower
// (nobs1 is the baseline arm, ratio = n_treat/n_base) and scipy 1.10.
// statsmodels' two-sided power adds the far rejection tail, which is
// subtracted here; its solve_power is only accurate to about 1e-5, so
// MDE and N are the closed forms evaluated with scipy, and statsmodels'
// power at those values is the target power (0.8, 0.9 to 1e-15).
// Produced by (/usr/bin/python3):
//
//	from math import sqrt; from scipy.stats import norm
//	from statsmodels.stats.power import NormalIndPower; p = NormalIndPower()
//	se = sqrt(4/500 + 4/1500)
//	p.power(effect_size=0.3/2, nobs1=500, alpha=0.05, ratio=3, alternative='larger')     # one-sided
//	p.power(effect_size=eff/2, nobs1=500, alpha=0.05, ratio=3, alternative='two-sided') - norm.cdf(-eff/se - norm.ppf(0.975))
//	(norm.ppf(0.95) + norm.ppf(0.8)) * se; (norm.ppf(0.975) + norm.ppf(0.9)) * se
//	(norm.ppf(0.975) + norm.ppf(0.9))**2 * (4/0.25 + 4/0.75) / 0.3**2
//	4*p.solve_power(effect_size=0.3/2, nobs1=None, alpha=0.05, power=0.8, ratio=3, alternative='larger')
func TestPowerNormalUnequalAllocation(t *testing.T) {
	a := Arms{WBase: 1, WTreat: 3, VarBase: 4, VarTreat: 4}
	se := a.SE(2000)
	for _, tc := range []struct {
		eff  float64
		two  bool
		want float64
	}{
		{0.3, false, 0.8961443731347871},
		{0.3, true, 0.8276127445724061},
		{0.45, false, 0.9966586180884953},
		{0.45, true, 0.9917382468983454},
	} {
		checkNear(t, "NormalPower", NormalPower(tc.eff, se, 0.05, tc.two), tc.want, 1e-12)
	}
	checkNear(t, "MDE one-sided 80%", a.MDE(2000, 0.05, 0.8, false), 0.25680201934864955, 1e-12)
	checkNear(t, "MDE two-sided 90%", a.MDE(2000, 0.05, 0.9, true), 0.3347822864520064, 1e-12)
	checkNear(t, "TotalN one-sided 80%", a.TotalN(0.3, 0.05, 0.8, false), 1465.4950476007828, 1e-7)
	checkNear(t, "TotalN two-sided 90%", a.TotalN(0.3, 0.05, 0.9, true), 2490.648429378517, 1e-12)
}

// TestPowerNormalUnequalVariance checks unequal variances with a 2:1
// split (statsmodels has no unequal-variance power) against the textbook
// normal formulas evaluated in R 4.2.2:
//
//	se <- sqrt(1/2000 + 9/1000)
//	pnorm(0.25/se - qnorm(0.975)); pnorm(0.1/se - qnorm(0.95))
//	(qnorm(.975)+qnorm(.8))*se; (qnorm(.95)+qnorm(.9))*se
//	(qnorm(.975)+qnorm(.8))^2*(1/(2/3)+9/(1/3))/0.25^2
func TestPowerNormalUnequalVariance(t *testing.T) {
	a := Arms{WBase: 2, WTreat: 1, VarBase: 1, VarTreat: 9}
	checkNear(t, "SE", a.SE(3000), math.Sqrt(1.0/2000+9.0/1000), 1e-14)
	checkNear(t, "power two-sided", NormalPower(0.25, a.SE(3000), 0.05, true), 0.727404486957, 1e-10)
	checkNear(t, "power one-sided", NormalPower(0.1, a.SE(3000), 0.05, false), 0.267999263985, 1e-10)
	checkNear(t, "MDE two-sided", a.MDE(3000, 0.05, 0.8, true), 0.273064749604, 1e-10)
	checkNear(t, "MDE one-sided", a.MDE(3000, 0.05, 0.9, false), 0.285230695808, 1e-10)
	checkNear(t, "TotalN", a.TotalN(0.25, 0.05, 0.8, true), 3579.08915886, 1e-10)
	// The normal approximation approaches the t test (checked against R
	// above) at large n.
	checkNear(t, "normal vs t at large n", NormalPower(0.03, Arms{1, 1, 1, 1}.SE(40000), 0.05, true),
		TTestPower(20000, 0.03, 1, 0.05, true), 1e-4)
}

// TestPowerNonInferiority checks the non-inferiority formulas (Chow, Shao &
// Wang 2008, §3.2.2) as a one-sided z test of the shifted difference
// effect + margin, against statsmodels 0.13.5 NormalIndPower with
// alternative='larger' (margin 0.05, sd 1, 1000 units per arm, α = 0.025):
//
//	p.power(effect_size=(-0.01+0.05)/1, nobs1=1000, alpha=0.025, ratio=1, alternative='larger')
//	p.power(effect_size=(0.02+0.05)/1, nobs1=1000, alpha=0.025, ratio=1, alternative='larger')
//	(norm.ppf(0.975) + norm.ppf(0.8)) * sqrt(2/1000) - 0.05   # scipy; statsmodels' power there is 0.8
//	2*p.solve_power(effect_size=0.05, nobs1=None, alpha=0.025, power=0.9, ratio=1, alternative='larger')
func TestPowerNonInferiority(t *testing.T) {
	a := Arms{WBase: 1, WTreat: 1, VarBase: 1, VarTreat: 1}
	se := a.SE(2000)
	checkNear(t, "power, small true loss", NonInferiorityPower(-0.01, 0.05, se, 0.025), 0.14331654232305524, 1e-7)
	checkNear(t, "power, small true gain", NonInferiorityPower(0.02, 0.05, se, 0.025), 0.34652609893502917, 1e-7)
	checkNear(t, "MDE", NonInferiorityMDE(se, 0.05, 0.025, 0.8), 0.07529069984918345, 1e-12)
	checkNear(t, "N", a.NonInferiorityN(0, 0.05, 0.025, 0.9), 16811.876898305232, 1e-7)
	// A zero margin is the one-sided superiority test.
	checkNear(t, "margin 0", NonInferiorityPower(0.1, 0, se, 0.05), NormalPower(0.1, se, 0.05, false), 1e-15)
	if got := NonInferiorityPower(0.1, -0.05, se, 0.05); !math.IsNaN(got) {
		t.Errorf("negative margin: got %v, want NaN", got)
	}
}

func TestPowerPerComparisonAlpha(t *testing.T) {
	// Source: R 4.2.2. Šidák: sprintf("%.12g", c(1-(1-0.05)^(1/3), 1-(1-0.1)^(1/7)))
	// = 0.0169524275084, 0.0149387945589. Holm and BH worst case: a p-value
	// of 0.05/3 alongside two large ones is adjusted to exactly 0.05:
	// p.adjust(c(0.05/3, 0.5, 0.9), "holm")[1] = 0.05 and
	// p.adjust(c(0.05/3, 0.5, 0.9), "BH")[1] = 0.05.
	for _, tc := range []struct {
		alpha  float64
		m      int
		method string
		want   float64
	}{
		{0.05, 3, "none", 0.05},
		{0.05, 3, "bonferroni", 0.05 / 3},
		{0.05, 3, "Holm", 0.05 / 3},
		{0.05, 3, "bh", 0.05 / 3},
		{0.05, 3, "sidak", 0.0169524275084},
		{0.1, 7, "sidak", 0.0149387945589},
		{0.05, 1, "sidak", 0.05},
	} {
		checkNear(t, tc.method, PerComparisonAlpha(tc.alpha, tc.m, tc.method), tc.want, 1e-10)
	}
	for _, bad := range []struct {
		alpha  float64
		m      int
		method string
	}{{0.05, 0, "holm"}, {0, 2, "holm"}, {0.05, 2, "tukey"}} {
		if got := PerComparisonAlpha(bad.alpha, bad.m, bad.method); !math.IsNaN(got) {
			t.Errorf("PerComparisonAlpha(%v, %d, %q): got %v, want NaN", bad.alpha, bad.m, bad.method, got)
		}
	}
}

func TestPowerCUPEDAndRelative(t *testing.T) {
	// Source: Deng et al. (2013), §3.2: the variance is reduced by the
	// factor 1 − ρ²; hand computation 4·(1 − 0.5²) = 3, 2·(1 − 0.9²) = 0.38.
	checkNear(t, "rho 0.5", CUPEDVariance(4, 0.5), 3, 1e-15)
	checkNear(t, "rho -0.9", CUPEDVariance(2, -0.9), 0.38, 1e-14)
	checkNear(t, "rho 0", CUPEDVariance(2, 0), 2, 0)
	// Halving the variance shrinks the MDE by √2 (MDE ∝ SE ∝ √variance).
	a := Arms{1, 1, 1, 1}
	b := Arms{1, 1, CUPEDVariance(1, math.Sqrt(0.5)), CUPEDVariance(1, math.Sqrt(0.5))}
	checkNear(t, "MDE ratio", a.MDE(1e4, 0.05, 0.8, true)/b.MDE(1e4, 0.05, 0.8, true), math.Sqrt2, 1e-12)
	// Source: hand computation, 0.002/0.04 = 0.05.
	checkNear(t, "RelativeMDE", RelativeMDE(0.002, 0.04), 0.05, 1e-14)
	checkNear(t, "RelativeMDE negative base", RelativeMDE(0.5, -10), 0.05, 1e-14)
	for _, got := range []float64{CUPEDVariance(1, 1.1), CUPEDVariance(-1, 0.2), RelativeMDE(1, 0), RelativeMDE(math.NaN(), 1)} {
		if !math.IsNaN(got) {
			t.Errorf("invalid input: got %v, want NaN", got)
		}
	}
}

// TestPowerInvalid checks that every planning function returns NaN, not a
// panic or a number, on invalid input.
func TestPowerInvalid(t *testing.T) {
	nan := math.NaN()
	for name, got := range map[string]float64{
		"TTestPower n=1":      TTestPower(1, 1, 1, 0.05, true),
		"TTestPower sd=0":     TTestPower(10, 1, 0, 0.05, true),
		"TTestPower alpha=1":  TTestPower(10, 1, 1, 1, true),
		"TTestN delta=0":      TTestN(0, 1, 0.05, 0.8, true),
		"TTestN power=1":      TTestN(1, 1, 0.05, 1, true),
		"TTestN one-sided <0": TTestN(-1, 1, 0.05, 0.8, false),
		"TTestMDE sd NaN":     TTestMDE(10, nan, 0.05, 0.8, true),
		"SE n=0":              Arms{1, 1, 1, 1}.SE(0),
		"SE share 0":          Arms{0, 1, 1, 1}.SE(100),
		"SE var<0":            Arms{1, 1, -1, 1}.SE(100),
		"TotalN effect 0":     Arms{1, 1, 1, 1}.TotalN(0, 0.05, 0.8, true),
		"NormalPower se 0":    NormalPower(1, 0, 0.05, true),
		"NormalMDE power 0":   NormalMDE(1, 0.05, 0, true),
		"PropPower p>1":       PropPower(100, 0.5, 1.2, 0.05, true),
		"PropPower 0 vs 0":    PropPower(100, 0, 0, 0.05, true),
		"PropN equal":         PropN(0.3, 0.3, 0.05, 0.8, true),
		"PropMDE p1=1":        PropMDE(100, 1, 0.05, 0.8, true),
		"NI margin NaN":       NonInferiorityMDE(1, nan, 0.05, 0.8),
	} {
		if !math.IsNaN(got) {
			t.Errorf("%s: got %v, want NaN", name, got)
		}
	}
}
