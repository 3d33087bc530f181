package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// covMomentsOf computes CovariateMoments from raw data with gonum/stat.
func covMomentsOf(y, x []float64) CovariateMoments {
	return CovariateMoments{
		N:     float64(len(y)),
		MeanY: stat.Mean(y, nil), MeanX: stat.Mean(x, nil),
		VarY: stat.Variance(y, nil), VarX: stat.Variance(x, nil),
		CovYX: stat.Covariance(y, x, nil),
	}
}

// ancova fits y ~ 1 + treat + x by least squares (QR) with gonum/mat and
// returns the treatment and covariate coefficients.
func ancova(t *testing.T, yb, xb, yt, xt []float64) (effect, slope float64) {
	t.Helper()
	n := len(yb) + len(yt)
	X := mat.NewDense(n, 3, nil)
	y := mat.NewVecDense(n, nil)
	row := 0
	for g, ys := range [][]float64{yb, yt} {
		xs := [][]float64{xb, xt}[g]
		for i := range ys {
			X.Set(row, 0, 1)
			X.Set(row, 1, float64(g))
			X.Set(row, 2, xs[i])
			y.SetVec(row, ys[i])
			row++
		}
	}
	var beta mat.VecDense
	if err := beta.SolveVec(X, y); err != nil {
		t.Fatalf("least squares: %v", err)
	}
	return beta.AtVec(1), beta.AtVec(2)
}

// cupedRows simulates a pre-period covariate x and outcome
// y = 3 + 0.7x + effect + noise.
func cupedRows(rng *rand.Rand, n int, effect float64) (y, x []float64) {
	y, x = make([]float64, n), make([]float64, n)
	for i := range n {
		x[i] = 10 + 2*rng.NormFloat64()
		y[i] = 3 + 0.7*x[i] + effect + rng.NormFloat64()
	}
	return y, x
}

func TestCUPEDMatchesANCOVA(t *testing.T) {
	// Source: independent OLS with gonum/mat. With θ pooled within
	// variants, θ equals the covariate coefficient and the adjusted
	// difference equals the treatment coefficient of y ~ 1 + treat + x.
	rng := rand.New(rand.NewPCG(11, 12))
	tests := []struct {
		name   string
		nb, nt int
		effect float64
	}{
		{"balanced", 400, 400, 0.3},
		{"unbalanced", 300, 520, 0.0},
		{"small", 12, 9, 1.0},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			yb, xb := cupedRows(rng, tt.nb, 0)
			yt, xt := cupedRows(rng, tt.nt, tt.effect)
			effect, slope := ancova(t, yb, xb, yt, xt)
			c := CUPEDWelch(covMomentsOf(yb, xb), covMomentsOf(yt, xt), 0.95)
			checkNear(t, "Theta", c.Theta, slope, 1e-9)
			checkAbs(t, "Difference", c.Difference, effect, 1e-9)
			if c.Reason != "" {
				t.Errorf("got Reason %q, want empty", c.Reason)
			}
		})
	}
}

func TestCUPEDVariance(t *testing.T) {
	// Source: independent computation on seeded raw data with gonum/stat.
	rng := rand.New(rand.NewPCG(21, 22))
	yb, xb := cupedRows(rng, 500, 0)
	yt, xt := cupedRows(rng, 450, 0.2)
	c := CUPEDWelch(covMomentsOf(yb, xb), covMomentsOf(yt, xt), 0.95)
	adjVar := func(y, x []float64) float64 {
		r := make([]float64, len(y))
		for i := range y {
			r[i] = y[i] - c.Theta*x[i]
		}
		return stat.Variance(r, nil)
	}
	vb, vt := adjVar(yb, xb), adjVar(yt, xt)
	checkNear(t, "base AdjustedVar", c.Base.AdjustedVar, vb, 1e-9)
	checkNear(t, "treat AdjustedVar", c.Treat.AdjustedVar, vt, 1e-9)
	// The standard error adds the slope's estimation error
	// (x̄_t − x̄_b)²·Var(θ̂), of relative order 1/N (checked against
	// statsmodels in TestCUPEDStdErrorMatchesStatsmodelsOLS); 1e-3 here.
	checkNear(t, "StdError", c.StdError, math.Sqrt(vb/500+vt/450), 1e-3)
	// Welch–Satterthwaite on the adjusted variances (Welch 1947).
	a, b := vb/500, vt/450
	checkNear(t, "DF", c.DF, (a+b)*(a+b)/(a*a/499+b*b/449), 1e-9)
	// Source: unadjusted Welch on the same raw data.
	u := Welch(momentsOf(yb), momentsOf(yt), 0.95)
	checkNear(t, "Unadjusted SE", c.Unadjusted.StdError, u.StdError, 1e-12)
	checkNear(t, "VarianceReduction", c.VarianceReduction, 1-c.StdError*c.StdError/(u.StdError*u.StdError), 1e-12)
	// Population: Var(y) = 0.49·4 + 1 = 2.96, Var(y − 0.7x) = 1, so the
	// reduction is about 1 − 1/2.96 ≈ 0.662 (hand calculation).
	checkAbs(t, "VarianceReduction vs population", c.VarianceReduction, 1-1/2.96, 0.05)
}

func TestCUPEDSingleGroup(t *testing.T) {
	// Source: gonum stat.LinearRegression slope and stat.Correlation. For
	// one group θ is the OLS slope of y on x, and the variance reduction is
	// ρ² (Deng, Xu, Kohavi & Walker 2013).
	rng := rand.New(rand.NewPCG(31, 32))
	y, x := cupedRows(rng, 250, 0)
	m := covMomentsOf(y, x)
	theta, reason := CUPEDTheta(m)
	_, beta := stat.LinearRegression(x, y, nil, false)
	checkNear(t, "Theta", theta, beta, 1e-9)
	adj := CUPEDAdjust(m, theta, m.MeanX)
	rho := stat.Correlation(x, y, nil)
	checkNear(t, "VarianceReduction", adj.VarianceReduction, rho*rho, 1e-9)
	checkNear(t, "Value at own mean", adj.Value, m.MeanY, 1e-12)
	if reason != "" || adj.Reason != "" {
		t.Errorf("got reasons %q %q, want empty", reason, adj.Reason)
	}
}

// ratioCovRows simulates per-unit (num, den, x) where x is a pre-period
// count correlated with num.
func ratioCovRows(rng *rand.Rand, n int, lo float64) (num, den, x []float64) {
	num, den, x = make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range n {
		d := 1 + rng.IntN(5)
		p := lo + 0.4*rng.Float64()
		k, kpre := 0, 0
		for range d {
			if rng.Float64() < p {
				k++
			}
			if rng.Float64() < p {
				kpre++
			}
		}
		num[i], den[i], x[i] = float64(k), float64(d), float64(kpre)
	}
	return num, den, x
}

func ratioCovMomentsOf(num, den, x []float64) RatioCovariateMoments {
	return RatioCovariateMoments{
		N:       float64(len(num)),
		MeanNum: stat.Mean(num, nil), MeanDen: stat.Mean(den, nil), MeanX: stat.Mean(x, nil),
		VarNum: stat.Variance(num, nil), VarDen: stat.Variance(den, nil), VarX: stat.Variance(x, nil),
		CovNumDen: stat.Covariance(num, den, nil),
		CovNumX:   stat.Covariance(num, x, nil), CovDenX: stat.Covariance(den, x, nil),
	}
}

func TestCUPEDRatio(t *testing.T) {
	// Source: independent computation on seeded raw data. The linearised
	// values l_i = (num_i − R·den_i)/μ_D are built per group in the test;
	// θ must equal the x coefficient of the OLS fit l ~ 1 + treat + x
	// (gonum/mat), SE² must equal Var(l − θx)/n per group (gonum/stat), and
	// the difference must be (R_t − R_b) − θ(x̄_t − x̄_b).
	rng := rand.New(rand.NewPCG(41, 42))
	nb, db, xb := ratioCovRows(rng, 600, 0.10)
	nt, dt, xt := ratioCovRows(rng, 550, 0.12)
	lin := func(num, den []float64) ([]float64, float64) {
		mn, md := stat.Mean(num, nil), stat.Mean(den, nil)
		l := make([]float64, len(num))
		for i := range l {
			l[i] = (num[i] - mn/md*den[i]) / md
		}
		return l, mn / md
	}
	lb, rb := lin(nb, db)
	lt, rt := lin(nt, dt)
	_, slope := ancova(t, lb, xb, lt, xt)
	c := CUPEDRatio(ratioCovMomentsOf(nb, db, xb), ratioCovMomentsOf(nt, dt, xt), 0.95)
	checkNear(t, "Theta", c.Theta, slope, 1e-9)
	checkAbs(t, "Difference", c.Difference, (rt-rb)-slope*(stat.Mean(xt, nil)-stat.Mean(xb, nil)), 1e-12)
	resVar := func(l, x []float64) float64 {
		r := make([]float64, len(l))
		for i := range l {
			r[i] = l[i] - slope*x[i]
		}
		return stat.Variance(r, nil) / float64(len(r))
	}
	// Plus the slope's estimation error, of relative order 1/N (see
	// TestCUPEDVariance); 5e-3 here.
	checkNear(t, "StdError", c.StdError, math.Sqrt(resVar(lb, xb)+resVar(lt, xt)), 5e-3)
	// The unadjusted comparison is RatioDiff on the same data.
	u := RatioDiff(ratioMomentsOf(nb, db), ratioMomentsOf(nt, dt), 0.95)
	checkNear(t, "Unadjusted StdError", c.Unadjusted.StdError, u.StdError, 1e-12)
	if c.Reason != "" || c.Method != MethodCUPEDRatio || !math.IsInf(c.DF, 1) {
		t.Errorf("got Reason %q Method %q DF %v, want empty, %q, +Inf", c.Reason, c.Method, c.DF, MethodCUPEDRatio)
	}
	if !(c.VarianceReduction > 0) {
		t.Errorf("got VarianceReduction %v, want > 0 for a correlated covariate", c.VarianceReduction)
	}
}

func TestCUPEDStdErrorMatchesStatsmodelsOLS(t *testing.T) {
	// Source: python3-statsmodels 0.13 (Debian 12). Data generated with
	// numpy default_rng(20261202): x ~ N(10, 2²), y = 3 + 0.7x + effect +
	// sd·N(0, 1); sufficient statistics pasted below (ddof = 1), then
	//   X = sm.add_constant(np.c_[T, x - x.mean()])
	//   sm.OLS(y, X).fit().params[1], .bse[1]              # classical
	//   sm.OLS(y, X).fit(cov_type='HC0').bse[1]            # HC0
	// The difference equals the treatment coefficient exactly. The
	// standard error uses a residual variance per variant (denominator
	// n_g − 1) where classical OLS pools one (denominator N − 3), and
	// divides by n_g − 1 where HC0 divides by n_g: with equal n and equal
	// variances it is within 1e-3 of the classical standard error (the
	// factor √((2n−3)/(2n−2)) alone is 0.99937 at n = 400); with unequal
	// variances and unequal n it is within 2e-3 of HC0, while the classical
	// standard error (which assumes equal variances) is 10% larger.
	tests := []struct {
		name                 string
		base, treat          CovariateMoments
		coef, classical, hc0 float64
		useHC0               bool
		tol                  float64
	}{
		{"equal n and variance",
			CovariateMoments{N: 400, MeanY: 9.88003321995402, MeanX: 9.853603439742264, VarY: 3.0471651228480696, VarX: 4.085678124502838, CovYX: 2.8906571272962713},
			CovariateMoments{N: 400, MeanY: 10.113580246622515, MeanX: 9.729165511654779, VarY: 2.7548261305632136, VarX: 4.001363387700183, CovYX: 2.691998533629253},
			0.3194491581986513, 0.06986563188873013, 0.06967106210503546, false, 1e-3},
		{"unequal n and variance",
			CovariateMoments{N: 300, MeanY: 9.952237067520526, MeanX: 9.962672691760524, VarY: 3.1626443549915306, VarX: 3.8943995369102247, CovYX: 2.814502004099673},
			CovariateMoments{N: 520, MeanY: 10.043266416960584, MeanX: 9.84701281557736, VarY: 4.378599252580733, VarX: 3.6224780485583783, CovYX: 2.6710560811089854},
			0.17566374875725876, 0.10111804960549438, 0.09152943928759194, true, 2e-3},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := CUPEDWelch(tt.base, tt.treat, 0.95)
			checkNear(t, "Difference", c.Difference, tt.coef, 1e-10)
			want := tt.classical
			if tt.useHC0 {
				want = tt.hc0
			}
			checkNear(t, "StdError", c.StdError, want, tt.tol)
			if !c.Adjusted || c.Reason != "" {
				t.Errorf("got Adjusted %v Reason %q, want true and empty", c.Adjusted, c.Reason)
			}
			// The per-variant standard errors include the covariate
			// centre's sampling variance, so each is larger than the
			// known-centre √(s_g²/n_g).
			if !(c.Base.StdError > math.Sqrt(c.Base.AdjustedVar/tt.base.N)) || !(c.Treat.StdError > math.Sqrt(c.Treat.AdjustedVar/tt.treat.N)) {
				t.Errorf("per-variant SE %v %v not above the known-centre values", c.Base.StdError, c.Treat.StdError)
			}
		})
	}
}

func TestCUPEDPerArmSECoverage(t *testing.T) {
	// Source: seeded Monte-Carlo simulation with a known population mean of
	// y (3 + 0.7·10 = 10, from cupedRows). The per-variant adjusted mean
	// estimates the population mean; its 95% interval Ȳ_cv ± 1.96·SE must
	// cover 10 in about 95% of replicates (binomial bounds, 99.9%), which
	// fails when the covariate centre is treated as known (its variance
	// θ²·Var(X)/N is then missing: 4·0.49/400 against 1/200).
	const reps = 1000
	rng := rand.New(rand.NewPCG(77, 78))
	covered := 0
	for range reps {
		yb, xb := cupedRows(rng, 200, 0)
		yt, xt := cupedRows(rng, 200, 0)
		c := CUPEDWelch(covMomentsOf(yb, xb), covMomentsOf(yt, xt), 0.95)
		if math.Abs(c.Base.Value-10) <= 1.959964*c.Base.StdError {
			covered++
		}
	}
	lo, hi := BinomialRange(reps, 0.95, 0.999)
	if covered < lo || covered > hi {
		t.Errorf("per-variant coverage: got %d of %d, want within [%d, %d]", covered, reps, lo, hi)
	}
}

func TestCUPEDPairUnaffectedByThirdArm(t *testing.T) {
	// Source: invariance by construction (θ and the centre pooled within
	// the compared pair). The treatment-versus-baseline adjusted values must
	// not move when a third variant changes; θ pooled over all three (the
	// earlier method) does move, which is the defect being fixed.
	rng := rand.New(rand.NewPCG(91, 92))
	yb, xb := cupedRows(rng, 300, 0)
	yt, xt := cupedRows(rng, 300, 0.2)
	base, treat := covMomentsOf(yb, xb), covMomentsOf(yt, xt)
	thirdA := CovariateMoments{N: 300, MeanY: 10, MeanX: 10, VarY: 3, VarX: 4, CovYX: 2.8}
	thirdB := CovariateMoments{N: 900, MeanY: 14, MeanX: 12, VarY: 9, VarX: 4, CovYX: 0.5}
	first := CUPEDWelchEach([]CovariateMoments{base, treat, thirdA}, 0.95)[0]
	second := CUPEDWelchEach([]CovariateMoments{base, treat, thirdB}, 0.95)[0]
	if first.Base.Value != second.Base.Value || first.Treat.Value != second.Treat.Value ||
		first.Treat.StdError != second.Treat.StdError || first.StdError != second.StdError ||
		first.RelCILow != second.RelCILow || first.Theta != second.Theta {
		t.Errorf("treatment-vs-baseline result changed with the third arm: %+v vs %+v", first.Treat, second.Treat)
	}
	rb := RatioCovariateMoments{N: 300, MeanNum: 1, MeanDen: 2, MeanX: 1, VarNum: 1, VarDen: 1, VarX: 1, CovNumDen: 0.2, CovNumX: 0.5, CovDenX: 0.1}
	rt := RatioCovariateMoments{N: 320, MeanNum: 1.1, MeanDen: 2, MeanX: 1, VarNum: 1, VarDen: 1, VarX: 1, CovNumDen: 0.2, CovNumX: 0.5, CovDenX: 0.1}
	r3a := RatioCovariateMoments{N: 100, MeanNum: 3, MeanDen: 2, MeanX: 2, VarNum: 1, VarDen: 1, VarX: 3, CovNumDen: 0.2, CovNumX: 0.1, CovDenX: 0.1}
	r3b := RatioCovariateMoments{N: 900, MeanNum: 1, MeanDen: 4, MeanX: 0, VarNum: 2, VarDen: 1, VarX: 1, CovNumDen: 0.2, CovNumX: 0.9, CovDenX: 0.1}
	ra := CUPEDRatioEach([]RatioCovariateMoments{rb, rt, r3a}, 0.95)[0]
	rbb := CUPEDRatioEach([]RatioCovariateMoments{rb, rt, r3b}, 0.95)[0]
	if ra.Treat.Value != rbb.Treat.Value || ra.StdError != rbb.StdError {
		t.Errorf("ratio treatment-vs-baseline result changed with the third arm")
	}
	oldA := cupedCompare(MethodCUPED, base, treat, mustTheta(t, base, treat, thirdA), CovariateMean(base, treat, thirdA), 0.95, false)
	oldB := cupedCompare(MethodCUPED, base, treat, mustTheta(t, base, treat, thirdB), CovariateMean(base, treat, thirdB), 0.95, false)
	if oldA.Treat.Value == oldB.Treat.Value {
		t.Errorf("all-arm pooling did not depend on the third arm; the test does not bite")
	}
}

func mustTheta(t *testing.T, g ...CovariateMoments) float64 {
	t.Helper()
	th, reason := CUPEDTheta(g...)
	if reason != "" {
		t.Fatalf("theta: %s", reason)
	}
	return th
}

func TestCUPEDConstantCovariateFallsBack(t *testing.T) {
	// Source: definition; with a covariate that is zero (or constant) for
	// every unit, θ = Cov/Var(X) is 0/0, and the comparison must be the
	// unadjusted Welch test (R 4.x t.test(extra ~ group, data = sleep):
	// t = -1.860813, df = 17.77647, p = 0.07939414, signs flipped).
	for _, x := range []float64{0, 5} {
		base := CovariateMoments{N: 10, MeanY: 0.75, MeanX: x, VarY: 3.200556}
		treat := CovariateMoments{N: 10, MeanY: 2.33, MeanX: x, VarY: 4.009}
		for name, c := range map[string]CUPEDComparison{
			"pair": CUPEDWelch(base, treat, 0.95),
		} {
			if c.Adjusted || c.AdjustReason == "" || c.Method != MethodWelch {
				t.Errorf("%s x=%v: got Adjusted %v AdjustReason %q Method %q, want the unadjusted fallback", name, x, c.Adjusted, c.AdjustReason, c.Method)
			}
			checkNear(t, name+" Statistic", c.Statistic, 1.860813, 1e-6)
			checkNear(t, name+" DF", c.DF, 17.77647, 1e-6)
			checkNear(t, name+" PValue", c.PValue, 0.07939414, 1e-6)
			if c.Base.Value != 0.75 || c.VarianceReduction != 0 {
				t.Errorf("%s: got base %v reduction %v, want 0.75 and 0", name, c.Base.Value, c.VarianceReduction)
			}
		}
		lb := RatioCovariateMoments{N: 50, MeanNum: 1, MeanDen: 2, MeanX: x, VarNum: 1, VarDen: 1, CovNumDen: 0.2}
		lt := RatioCovariateMoments{N: 50, MeanNum: 1.2, MeanDen: 2, MeanX: x, VarNum: 1, VarDen: 1, CovNumDen: 0.2}
		r := CUPEDRatio(lb, lt, 0.95)
		u := RatioDiff(RatioMoments{N: 50, MeanNum: 1, MeanDen: 2, VarNum: 1, VarDen: 1, Cov: 0.2},
			RatioMoments{N: 50, MeanNum: 1.2, MeanDen: 2, VarNum: 1, VarDen: 1, Cov: 0.2}, 0.95)
		if r.Adjusted || r.PValue != u.PValue || r.Method != MethodDelta {
			t.Errorf("ratio x=%v: got Adjusted %v p %v method %q, want the RatioDiff result p %v", x, r.Adjusted, r.PValue, r.Method, u.PValue)
		}
	}
}
