package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Student's sleep data, R datasets::sleep, column extra by group.
var (
	sleep1 = []float64{0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0}
	sleep2 = []float64{1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4}
)

// momentsOf computes Moments from raw data with gonum/stat (n-1 variance).
func momentsOf(x []float64) Moments {
	m, v := stat.MeanVariance(x, nil)
	return Moments{N: float64(len(x)), Mean: m, Var: v}
}

func TestWelchSleep(t *testing.T) {
	// Source: R 4.x t.test(extra ~ group, data = sleep):
	//   t = -1.860813, df = 17.77647, p-value = 0.07939414
	//   95 percent CI -3.3654832 0.2054832; means 0.75 and 2.33.
	// With base = group 1 and treat = group 2 the signs flip.
	c := Welch(momentsOf(sleep1), momentsOf(sleep2), 0.95)
	tests := []struct {
		name      string
		got, want float64
	}{
		{"Difference", c.Difference, 2.33 - 0.75},
		{"Statistic", c.Statistic, 1.860813},
		{"DF", c.DF, 17.77647},
		{"PValue", c.PValue, 0.07939414},
		{"CILow", c.CILow, -0.2054832},
		{"CIHigh", c.CIHigh, 3.3654832},
		// Source: hand arithmetic on R's printed group means.
		{"Relative", c.Relative, 2.33/0.75 - 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			checkNear(t, tt.name, tt.got, tt.want, 1e-6)
		})
	}
	if c.Reason != "" || c.Method != MethodWelch {
		t.Errorf("got Method %q Reason %q, want %q and empty reason", c.Method, c.Reason, MethodWelch)
	}
	// The baseline mean 0.75 is not significantly different from 0
	// (t = 0.75/√(3.200556/10) = 1.33 < t_{0.975, 17.78}), so Fieller's set
	// for the relative change is the complement of a gap.
	// Source: R 4.2, Fieller's quadratic written out (/tmp script):
	//   A <- b^2 - q^2*vb; B <- a*b - q^2*cov; C <- a^2 - q^2*va; D <- B^2 - A*C
	//   with a, b the group means, va, vb = var/10, cov = 0,
	//   q = qt(0.975, t.test(s2, s1)$parameter):
	//   A = -0.852734570259, D = 6.171510915224, roots 0.863988177021 and
	//   -4.962567174396, so relative gap (-5.9625671744, -0.136011822979).
	if c.RelShape != ShapeComplement || c.RelSet.Shape != ShapeComplement || !math.IsNaN(c.RelCILow) {
		t.Errorf("got RelShape %q RelCILow %v, want %q and NaN", c.RelShape, c.RelCILow, ShapeComplement)
	}
	checkNear(t, "RelSet.Low", c.RelSet.Low, -5.9625671744, 1e-6)
	checkNear(t, "RelSet.High", c.RelSet.High, -0.136011822979, 1e-6)
	if c.RelReason == "" || !c.RelSet.Contains(0) {
		t.Errorf("got RelReason %q, contains 0 %v; want a reason and 0 inside (p = 0.079)", c.RelReason, c.RelSet.Contains(0))
	}
}

func TestRelativeLiftMonteCarlo(t *testing.T) {
	// Source: independent seeded simulation. The standard deviation of
	// x̄_t/x̄_b − 1 over many replicates should match the delta-method
	// standard error to within Monte-Carlo error (about 1.6% for 2000
	// replicates; 5% allowed, common practice ≈ 3 sd).
	const (
		reps        = 2000
		n           = 400
		mb, mt, sd  = 10.0, 11.0, 3.0
		trueRel     = mt/mb - 1
		level       = 0.95
		expectCover = level * reps
	)
	rng := rand.New(rand.NewPCG(20240501, 7))
	rels := make([]float64, reps)
	covered := 0
	for r := range reps {
		xb, xt := make([]float64, n), make([]float64, n)
		for i := range n {
			xb[i] = mb + sd*rng.NormFloat64()
			xt[i] = mt + sd*rng.NormFloat64()
		}
		c := Welch(momentsOf(xb), momentsOf(xt), level)
		rels[r] = c.Relative
		if c.RelCILow <= trueRel && trueRel <= c.RelCIHigh {
			covered++
		}
	}
	se := sd / math.Sqrt(n)
	_, wantSE, _, _, reason := RelativeLift(Estimate{Value: mb, StdError: se}, Estimate{Value: mt, StdError: se}, level)
	if reason != "" {
		t.Fatalf("RelativeLift reason %q", reason)
	}
	checkNear(t, "empirical sd of relative lift", stat.StdDev(rels, nil), wantSE, 0.05)
	// Binomial bounds: mean ± 3.29·sd (99.9%, common practice).
	half := 3.29 * math.Sqrt(reps*level*(1-level))
	if math.Abs(float64(covered)-expectCover) > half {
		t.Errorf("relative CI coverage: got %d of %d, want %v ± %.0f", covered, reps, expectCover, half)
	}
}

// ratioRows simulates per-unit (num, den): den uniform on 1..5, num
// binomial(den, p) with p uniform on [lo, lo+0.4]; E[num]/E[den] = lo+0.2.
func ratioRows(rng *rand.Rand, n int, lo float64) (num, den []float64) {
	num, den = make([]float64, n), make([]float64, n)
	for i := range n {
		d := 1 + rng.IntN(5)
		p := lo + 0.4*rng.Float64()
		k := 0
		for range d {
			if rng.Float64() < p {
				k++
			}
		}
		num[i], den[i] = float64(k), float64(d)
	}
	return num, den
}

// ratioMomentsOf computes RatioMoments from raw rows with gonum/stat.
func ratioMomentsOf(num, den []float64) RatioMoments {
	return RatioMoments{
		N:       float64(len(num)),
		MeanNum: stat.Mean(num, nil), MeanDen: stat.Mean(den, nil),
		VarNum: stat.Variance(num, nil), VarDen: stat.Variance(den, nil),
		Cov: stat.Covariance(num, den, nil),
	}
}

func TestRatioEstimateLinearized(t *testing.T) {
	// Source: independent computation on seeded raw data. The per-unit
	// linearised values l_i = (num_i − R·den_i)/μ_D are built in the test
	// and their variance taken with gonum/stat; Var(l)/n must equal
	// RatioEstimate's SE² (Deng, Knoblich & Lu 2018).
	rng := rand.New(rand.NewPCG(1, 2))
	for _, n := range []int{50, 5000} {
		t.Run("", func(t *testing.T) {
			num, den := ratioRows(rng, n, 0.1)
			var sn, sd float64
			for i := range num {
				sn += num[i]
				sd += den[i]
			}
			R := sn / sd
			muD := sd / float64(n)
			l := make([]float64, n)
			for i := range l {
				l[i] = (num[i] - R*den[i]) / muD
			}
			want := stat.Variance(l, nil) / float64(n)
			e := RatioEstimate(ratioMomentsOf(num, den))
			checkNear(t, "ratio", e.Value, R, 1e-12)
			checkNear(t, "SE²", e.StdError*e.StdError, want, 1e-9)
			lin, reason := Linearize(ratioMomentsOf(num, den))
			checkNear(t, "Linearize Var", lin.Var, stat.Variance(l, nil), 1e-9)
			if reason != "" || e.Reason != "" {
				t.Errorf("got reasons %q %q, want empty", reason, e.Reason)
			}
		})
	}
}

func TestRatioDiffCoverage(t *testing.T) {
	// Source: seeded Monte-Carlo simulation with known true ratios 0.3 and
	// 0.33 (difference 0.03, relative 0.1). The 95% intervals should cover
	// the truth in about 95% of replicates; bounds are binomial mean ±
	// 3.29·sd (99.9%, common practice).
	const (
		reps  = 1000
		n     = 200
		level = 0.95
	)
	rng := rand.New(rand.NewPCG(99, 100))
	coverDiff, coverRel := 0, 0
	for range reps {
		nb, db := ratioRows(rng, n, 0.10)
		nt, dt := ratioRows(rng, n, 0.13)
		c := RatioDiff(ratioMomentsOf(nb, db), ratioMomentsOf(nt, dt), level)
		if c.CILow <= 0.03 && 0.03 <= c.CIHigh {
			coverDiff++
		}
		if c.RelCILow <= 0.1 && 0.1 <= c.RelCIHigh {
			coverRel++
		}
	}
	half := 3.29 * math.Sqrt(reps*level*(1-level))
	for name, got := range map[string]int{"difference": coverDiff, "relative": coverRel} {
		if math.Abs(float64(got)-level*reps) > half {
			t.Errorf("%s coverage: got %d of %d, want %v ± %.0f", name, got, reps, level*reps, half)
		}
	}
}

func TestRatioDiffMatchesRaw(t *testing.T) {
	// Source: independent computation on seeded raw data with gonum/stat:
	// SE of the difference is √(Var(l_b)/n_b + Var(l_t)/n_t).
	rng := rand.New(rand.NewPCG(5, 6))
	nb, db := ratioRows(rng, 300, 0.1)
	nt, dt := ratioRows(rng, 350, 0.2)
	linVar := func(num, den []float64) (float64, float64) {
		mn, md := stat.Mean(num, nil), stat.Mean(den, nil)
		l := make([]float64, len(num))
		for i := range l {
			l[i] = (num[i] - mn/md*den[i]) / md
		}
		return mn / md, stat.Variance(l, nil) / float64(len(l))
	}
	rb, vb := linVar(nb, db)
	rt, vt := linVar(nt, dt)
	c := RatioDiff(ratioMomentsOf(nb, db), ratioMomentsOf(nt, dt), 0.95)
	checkNear(t, "Difference", c.Difference, rt-rb, 1e-12)
	checkNear(t, "StdError", c.StdError, math.Sqrt(vb+vt), 1e-9)
	// Source: standard normal table, z_0.975 = 1.959964.
	checkNear(t, "CI half-width", (c.CIHigh-c.CILow)/2, 1.959964*math.Sqrt(vb+vt), 1e-6)
	checkNear(t, "PValue", c.PValue, 2*distuv.UnitNormal.CDF(-math.Abs(rt-rb)/math.Sqrt(vb+vt)), 1e-9)
	if !math.IsInf(c.DF, 1) || c.Method != MethodDelta {
		t.Errorf("got DF %v Method %q, want +Inf and %q", c.DF, c.Method, MethodDelta)
	}
}

func TestTwoProportionEqualsChiSquare(t *testing.T) {
	// Source: independent computation. The pooled z² equals the Pearson
	// chi-square of the 2×2 table, computed here by the direct formula
	// X² = n(ad − bc)²/(r1·r2·c1·c2) (Agresti 2013, Categorical Data
	// Analysis) and by ChiSquareIndependence; the p-value equals gonum's
	// ChiSquared{K: 1}.Survival(X²). The unpooled Wald interval is
	// recomputed directly with z_0.975 = 1.959964 (standard normal table).
	tests := []struct {
		name           string
		xb, nb, xt, nt float64
	}{
		{"equal n", 120, 1000, 150, 1000},
		{"unequal n", 45, 300, 80, 420},
		{"treat lower", 530, 5000, 470, 5100},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			pb, pt := tt.xb/tt.nb, tt.xt/tt.nt
			c := TwoProportion(Moments{N: tt.nb, Mean: pb}, Moments{N: tt.nt, Mean: pt}, 0.95)
			a, b := tt.xb, tt.nb-tt.xb
			cc, d := tt.xt, tt.nt-tt.xt
			n := a + b + cc + d
			x2 := n * (a*d - b*cc) * (a*d - b*cc) / ((a + b) * (cc + d) * (a + cc) * (b + d))
			checkNear(t, "z² vs direct X²", c.Statistic*c.Statistic, x2, 1e-9)
			ind := ChiSquareIndependence([][]float64{{a, b}, {cc, d}})
			checkNear(t, "z² vs ChiSquareIndependence", c.Statistic*c.Statistic, ind.Statistic, 1e-9)
			checkNear(t, "PValue", c.PValue, distuv.ChiSquared{K: 1}.Survival(x2), 1e-9)
			checkNear(t, "independence PValue", ind.PValue, distuv.ChiSquared{K: 1}.Survival(x2), 1e-9)
			se := math.Sqrt(pb*(1-pb)/tt.nb + pt*(1-pt)/tt.nt)
			checkAbs(t, "StdError", c.StdError, se, 1e-15)
			// Source: statsmodels Newcombe interval (propRefs, same tables).
			for _, r := range propRefs {
				if r.xb == tt.xb && r.nb == tt.nb && r.xt == tt.xt && r.nt == tt.nt {
					checkAbs(t, "CILow", c.CILow, r.newLo, 1e-12)
					checkAbs(t, "CIHigh", c.CIHigh, r.newHi, 1e-12)
					checkNear(t, "RelCILow", c.RelCILow, r.koopLo-1, 1e-6)
					checkNear(t, "RelCIHigh", c.RelCIHigh, r.koopHi-1, 1e-6)
				}
			}
			if c.Reason != "" {
				t.Errorf("got Reason %q, want empty", c.Reason)
			}
		})
	}
}
