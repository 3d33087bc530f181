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
	checkNear(t, "StdError", c.StdError, math.Sqrt(vb/500+vt/450), 1e-9)
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
	checkNear(t, "StdError", c.StdError, math.Sqrt(resVar(lb, xb)+resVar(lt, xt)), 1e-9)
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
