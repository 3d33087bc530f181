package stats

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat"
	"testing"
)

// stratifiedMomentsOf returns the sufficient statistics of x.
func stratifiedMomentsOf(x []float64) Moments {
	n := float64(len(x))
	var s float64
	for _, v := range x {
		s += v
	}
	m := s / n
	var q float64
	for _, v := range x {
		q += (v - m) * (v - m)
	}
	return Moments{N: n, Mean: m, Var: q / (n - 1)}
}

// stratifiedRData is the invented data set of TestStratifiedMatchesRegression,
// generated in R 4.2.2 by
//
//	set.seed(11); nb <- c(6, 10, 5); nt <- c(8, 7, 9); mu <- c(3, 7, 12); eff <- c(0.5, 1.5, -1)
//	d <- do.call(rbind, lapply(1:3, function(k) rbind(
//	  data.frame(s=k, z=0, y=round(rnorm(nb[k], mu[k], 2), 1)),
//	  data.frame(s=k, z=1, y=round(rnorm(nt[k], mu[k]+eff[k], 2), 1)))))
var stratifiedRData = [3][2][]float64{
	{{1.8, 3.1, 0, 0.3, 5.4, 1.1}, {6.1, 4.7, 3.4, 1.5, 1.8, 2.8, 0.4, 3}},
	{{4.7, 7, 6.6, 8.8, 5.8, 5.7, 5.6, 7, 6.1, 7.7}, {8.6, 8.5, 8.1, 7, 8.1, 6.5, 6.3}},
	{{10.1, 13.4, 8.8, 10.3, 13}, {10.6, 14.1, 9.8, 10.3, 7.7, 11, 12.8, 9.3, 12.8}},
}

func stratifiedRStrata() []StratumMoments {
	var out []StratumMoments
	for _, s := range stratifiedRData {
		out = append(out, StratumMoments{Base: stratifiedMomentsOf(s[0]), Treat: stratifiedMomentsOf(s[1])})
	}
	return out
}

// TestStratifiedMatchesRegression checks the post-stratified estimate and
// its standard error against the regression form of post-stratification:
// the treatment coefficient of y ~ z * (centred stratum dummies) (Lin
// 2013, "Agnostic notes on regression adjustments to experimental data",
// Annals of Applied Statistics 7) with the HC2 sandwich variance, which
// for this saturated model equals the stratified variance; for a 0/1
// outcome the binomial p(1−p)/n per cell equals HC0. Source: R 4.2.2,
//
//	hc <- function(d, type) {
//	  d$s2 <- (d$s==2) - mean(d$s==2); d$s3 <- (d$s==3) - mean(d$s==3)
//	  fit <- lm(y ~ z * (s2 + s3), data=d)
//	  X <- model.matrix(fit); e <- resid(fit); h <- hatvalues(fit)
//	  om <- if (type == "HC2") e^2/(1-h) else e^2
//	  B <- solve(crossprod(X)); V <- B %*% crossprod(X, om * X) %*% B
//	  c(coef(fit)["z"], sqrt(V["z","z"])) }
//	hc(d, "HC2")   # 0.667084656084656 0.51429293550464
//	mean(d$y[d$z==1]) - mean(d$y[d$z==0])   # 1
//	set.seed(5); nb2 <- c(40, 120, 60); nt2 <- c(55, 100, 30); p <- c(0.1, 0.3, 0.6); e2 <- c(0.05, 0.02, -0.1)
//	b <- ... rbinom(...) as d above   # counts below
//	hc(b, "HC0")   # -0.00595585484474374 0.0445545363036301
func TestStratifiedMatchesRegression(t *testing.T) {
	r := Stratified(stratifiedRStrata(), 0.95)
	if r.Reason != "" {
		t.Fatalf("unexpected reason %q", r.Reason)
	}
	checkNear(t, "Difference", r.Difference, 0.667084656084656, 1e-12)
	checkNear(t, "StdError", r.StdError, 0.51429293550464, 1e-12)
	checkNear(t, "Statistic", r.Statistic, 0.667084656084656/0.51429293550464, 1e-12)
	checkNear(t, "CILow", r.CILow, 0.667084656084656-1.959963984540054*0.51429293550464, 1e-12)
	checkNear(t, "weights sum", r.Weights[0]+r.Weights[1]+r.Weights[2], 1, 1e-15)
	checkNear(t, "weight 2", r.Weights[1], 17.0/45, 1e-15)

	rv := ReversalTest(stratifiedRStrata(), 0.05)
	checkNear(t, "pooled", rv.Pooled, 1, 1e-12)
	checkNear(t, "stratified", rv.Stratified, 0.667084656084656, 1e-12)
	checkNear(t, "D", rv.D, 1-0.667084656084656, 1e-10)

	// Binary outcome: (n, ones) per stratum and arm from the R script.
	counts := [3][2][2]float64{{{40, 4}, {55, 13}}, {{120, 35}, {100, 29}}, {{60, 44}, {30, 17}}}
	var strata []StratumMoments
	for _, c := range counts {
		strata = append(strata, StratumMoments{
			Base:  Moments{N: c[0][0], Mean: c[0][1] / c[0][0]},
			Treat: Moments{N: c[1][0], Mean: c[1][1] / c[1][0]},
		})
	}
	p := StratifiedProportion(strata, 0.95)
	checkNear(t, "proportion Difference", p.Difference, -0.00595585484474374, 1e-10)
	checkNear(t, "proportion StdError", p.StdError, 0.0445545363036301, 1e-12)
}

// TestStratifiedOneStratum checks that one stratum reduces to the
// unstratified normal comparison of RatioDiff/Welch (same difference and
// standard error), and that a ratio with unit denominators equals the
// mean of the numerator.
// Source: the definition (w = 1 for a single stratum).
func TestStratifiedOneStratum(t *testing.T) {
	s := stratifiedRStrata()[1]
	r := Stratified([]StratumMoments{s}, 0.9)
	w := Welch(s.Base, s.Treat, 0.9)
	checkNear(t, "Difference", r.Difference, w.Difference, 1e-14)
	checkNear(t, "StdError", r.StdError, w.StdError, 1e-14)
	var rs []StratumRatioMoments
	for _, m := range stratifiedRStrata() {
		rs = append(rs, StratumRatioMoments{
			Base:  RatioMoments{N: m.Base.N, MeanNum: m.Base.Mean, VarNum: m.Base.Var, MeanDen: 1},
			Treat: RatioMoments{N: m.Treat.N, MeanNum: m.Treat.Mean, VarNum: m.Treat.Var, MeanDen: 1},
		})
	}
	rr, rm := StratifiedRatio(rs, 0.95), Stratified(stratifiedRStrata(), 0.95)
	checkNear(t, "ratio Difference", rr.Difference, rm.Difference, 1e-14)
	checkNear(t, "ratio StdError", rr.StdError, rm.StdError, 1e-14)
}

// TestStratifiedCoverage checks by simulation that the stratified
// interval covers the size-weighted average of the stratum effects in
// about 95% of experiments when the allocation differs by stratum (30%,
// 50%, 70% treated) and the effects differ too, for a mean and for a
// ratio metric. Source: seeded Monte Carlo, exact binomial range at level
// 0.999 (BinomialRange).
func TestStratifiedCoverage(t *testing.T) {
	const sims = 1000
	sizes := []int{300, 500, 200}
	alloc := []float64{0.3, 0.5, 0.7}
	base := []float64{2, 5, 9}
	effect := []float64{0.4, 0, -0.6}
	var target float64
	for k, n := range sizes {
		target += float64(n) / 1000 * effect[k]
	}
	rng := rand.New(rand.NewPCG(3, 5))
	covered, coveredRatio := 0, 0
	for s := 0; s < sims; s++ {
		strata := make([]StratumMoments, len(sizes))
		rstrata := make([]StratumRatioMoments, len(sizes))
		for k, n := range sizes {
			var arms [2][]float64
			var num, den [2][]float64
			for i := 0; i < n; i++ {
				z := 0
				if rng.Float64() < alloc[k] {
					z = 1
				}
				mu := base[k] + float64(z)*effect[k]
				arms[z] = append(arms[z], mu+2*rng.NormFloat64())
				// Ratio: den uniform on 1..3, num = den·(mu + noise).
				d := float64(1 + rng.IntN(3))
				den[z] = append(den[z], d)
				num[z] = append(num[z], d*(mu+rng.NormFloat64()))
			}
			strata[k] = StratumMoments{Base: stratifiedMomentsOf(arms[0]), Treat: stratifiedMomentsOf(arms[1])}
			rstrata[k] = StratumRatioMoments{Base: stratifiedRatioOf(num[0], den[0]), Treat: stratifiedRatioOf(num[1], den[1])}
		}
		if r := Stratified(strata, 0.95); r.CILow <= target && target <= r.CIHigh {
			covered++
		}
		if r := StratifiedRatio(rstrata, 0.95); r.CILow <= target && target <= r.CIHigh {
			coveredRatio++
		}
	}
	lo, hi := BinomialRange(sims, 0.95, 0.999)
	t.Logf("coverage: means %d/%d, ratio %d/%d, range [%d, %d]", covered, sims, coveredRatio, sims, lo, hi)
	if covered < lo || covered > hi {
		t.Errorf("mean coverage %d outside [%d, %d]", covered, lo, hi)
	}
	if coveredRatio < lo || coveredRatio > hi {
		t.Errorf("ratio coverage %d outside [%d, %d]", coveredRatio, lo, hi)
	}
}

// stratifiedRatioOf returns the ratio-metric sufficient statistics of
// paired num, den.
func stratifiedRatioOf(num, den []float64) RatioMoments {
	mn, md := stratifiedMomentsOf(num), stratifiedMomentsOf(den)
	var c float64
	for i := range num {
		c += (num[i] - mn.Mean) * (den[i] - md.Mean)
	}
	return RatioMoments{N: mn.N, MeanNum: mn.Mean, MeanDen: md.Mean, VarNum: mn.Var, VarDen: md.Var, Cov: c / (mn.N - 1)}
}

// stratifiedSimBinary simulates one experiment with 0/1 outcomes: strata of
// the given sizes, treatment probability alloc[k] in stratum k, baseline
// rates p[k] and treatment rates p[k]+eff[k].
func stratifiedSimBinary(rng *rand.Rand, sizes []int, alloc, p, eff []float64) []StratumMoments {
	out := make([]StratumMoments, len(sizes))
	for k, n := range sizes {
		var cnt, ones [2]float64
		for i := 0; i < n; i++ {
			z := 0
			if rng.Float64() < alloc[k] {
				z = 1
			}
			cnt[z]++
			if rng.Float64() < p[k]+float64(z)*eff[k] {
				ones[z]++
			}
		}
		out[k] = StratumMoments{
			Base:  Moments{N: cnt[0], Mean: ones[0] / cnt[0]},
			Treat: Moments{N: cnt[1], Mean: ones[1] / cnt[1]},
		}
	}
	return out
}

// TestStratifiedReversalNull checks the reversal test under randomised
// assignment (50/50 in every stratum) and no effect, with strata whose
// rates differ widely (5%, 20%, 50%) so that chance imbalance in the mix
// moves the pooled difference: |D|/SE exceeds z_{0.975} in about 5% of
// experiments (calibration of the standard error from assignment
// imbalance), and a reversal is flagged in at most 5%.
// Source: seeded Monte Carlo, exact binomial range at level 0.999.
func TestStratifiedReversalNull(t *testing.T) {
	const (
		sims  = 2000
		alpha = 0.05
	)
	rng := rand.New(rand.NewPCG(17, 23))
	sizes := []int{400, 1000, 600}
	alloc := []float64{0.5, 0.5, 0.5}
	p := []float64{0.05, 0.2, 0.5}
	eff := []float64{0, 0, 0}
	significant, flagged := 0, 0
	for s := 0; s < sims; s++ {
		r := ReversalTest(stratifiedSimBinary(rng, sizes, alloc, p, eff), alpha)
		if r.Reason != "" {
			t.Fatalf("unexpected reason %q", r.Reason)
		}
		if r.PValue <= alpha {
			significant++
		}
		if r.Reversal {
			flagged++
		}
	}
	lo, hi := BinomialRange(sims, alpha, 0.999)
	t.Logf("null: D significant %d/%d, reversal flagged %d/%d, range [%d, %d]", significant, sims, flagged, sims, lo, hi)
	if significant < lo || significant > hi {
		t.Errorf("D significant in %d of %d, want within [%d, %d]", significant, sims, lo, hi)
	}
	if flagged > hi {
		t.Errorf("reversal flagged in %d of %d, want at most %d", flagged, sims, hi)
	}
}

// TestStratifiedReversalPlanted plants a Simpson's reversal: the
// treatment lowers the rate by 4 points in both strata (50% → 46% and
// 10% → 6%), but the high-rate stratum is 65% treated and the low-rate
// one 35%, so the pooled difference is about +8 points. The test must fire in at least 90% of
// experiments (common practice for a detection requirement), and the
// stratified interval must cover the true −0.04 in about 95%.
// Source: seeded Monte Carlo, exact binomial range at level 0.999.
func TestStratifiedReversalPlanted(t *testing.T) {
	const sims = 1000
	rng := rand.New(rand.NewPCG(29, 31))
	sizes := []int{2000, 2000}
	alloc := []float64{0.65, 0.35}
	p := []float64{0.5, 0.1}
	eff := []float64{-0.04, -0.04}
	fired, covered := 0, 0
	for s := 0; s < sims; s++ {
		strata := stratifiedSimBinary(rng, sizes, alloc, p, eff)
		if ReversalTest(strata, 0.05).Reversal {
			fired++
		}
		if r := StratifiedProportion(strata, 0.95); r.CILow <= -0.04 && -0.04 <= r.CIHigh {
			covered++
		}
	}
	lo, hi := BinomialRange(sims, 0.95, 0.999)
	t.Logf("planted: fired %d/%d, stratified coverage %d/%d", fired, sims, covered, sims)
	if fired < 9*sims/10 {
		t.Errorf("reversal fired in %d of %d, want at least 90%%", fired, sims)
	}
	if covered < lo || covered > hi {
		t.Errorf("stratified coverage %d outside [%d, %d]", covered, lo, hi)
	}
}

// TestStratifiedReasons checks that awkward input gives reasons, not
// panics.
func TestStratifiedReasons(t *testing.T) {
	good := stratifiedRStrata()
	empty := StratumMoments{}
	oneArm := StratumMoments{Base: Moments{N: 5, Mean: 1, Var: 1}}
	cases := []struct {
		name       string
		strata     []StratumMoments
		level      float64
		wantReason bool
		wantDiff   bool
	}{
		{"no strata", nil, 0.95, true, false},
		{"empty stratum ignored", append([]StratumMoments{empty}, good...), 0.95, false, true},
		{"one arm missing", append([]StratumMoments{oneArm}, good...), 0.95, true, false},
		{"bad level", good, 1.5, true, true},
		{"all empty", []StratumMoments{empty, empty}, 0.95, true, false},
		{"negative n", []StratumMoments{{Base: Moments{N: -1}}}, 0.95, true, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			r := Stratified(tc.strata, tc.level)
			if (r.Reason != "") != tc.wantReason {
				t.Errorf("Reason %q, want reason: %v", r.Reason, tc.wantReason)
			}
			if math.IsNaN(r.Difference) == tc.wantDiff {
				t.Errorf("Difference %v, want defined: %v", r.Difference, tc.wantDiff)
			}
			if len(r.Weights) != len(tc.strata) || len(r.Differences) != len(tc.strata) || len(r.StdErrors) != len(tc.strata) {
				t.Errorf("per-stratum slices have the wrong length")
			}
			rv := ReversalTest(tc.strata, 0.05)
			if tc.wantReason && !tc.wantDiff && rv.Reason == "" {
				t.Errorf("ReversalTest: want a reason")
			}
		})
	}
	r := Stratified(append([]StratumMoments{empty}, good...), 0.95)
	if r.Weights[0] != 0 || !math.IsNaN(r.Differences[0]) {
		t.Errorf("empty stratum: weight %v difference %v, want 0 and NaN", r.Weights[0], r.Differences[0])
	}
	if rv := ReversalTest(good[:1], 0.05); rv.Reason == "" || rv.Reversal || rv.D != 0 {
		t.Errorf("single stratum: got %+v, want D = 0 and a reason", rv)
	}
	if rv := ReversalTest(good, 0); rv.Reason == "" {
		t.Errorf("alpha 0: want a reason")
	}
}

// TestStratifiedCUPEDCoverage simulates a launch in steps whose outcome
// drifts between steps while the allocation changes, with a covariate
// that explains part of the outcome. The post-stratified CUPED interval
// must cover the planted effect about as often as its level says, and be
// narrower than the unadjusted stratified one.
// Source: coverage counted against the exact binomial range
// (BinomialRange, checked against R's qbinom); the per-stratum CUPED
// comparison is CUPEDWelch (checked against statsmodels OLS in
// cuped_test.go); the per-unit moments come from gonum.
func TestStratifiedCUPEDCoverage(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation")
	}
	const (
		sims   = 1000
		effect = 0.3
	)
	type step struct {
		n      int
		treat  float64 // allocation to the treatment
		intcpt float64 // baseline level (drift between steps)
	}
	steps := []step{{600, 0.05, 3}, {900, 0.25, 2}, {1500, 0.5, 1}}
	rng := rand.New(rand.NewPCG(97, 101))
	covered, narrower := 0, 0
	for range sims {
		strata := make([]StratumCovariateMoments, len(steps))
		for k, st := range steps {
			var ys, xs [2][]float64
			for range st.n {
				arm := 0
				if rng.Float64() < st.treat {
					arm = 1
				}
				x := rng.NormFloat64()*2 + 5
				y := st.intcpt + 0.8*x + rng.NormFloat64() + effect*float64(arm)
				ys[arm], xs[arm] = append(ys[arm], y), append(xs[arm], x)
			}
			mom := func(a int) CovariateMoments {
				my, vy := stat.MeanVariance(ys[a], nil)
				mx, vx := stat.MeanVariance(xs[a], nil)
				return CovariateMoments{N: float64(len(ys[a])), MeanY: my, VarY: vy, MeanX: mx, VarX: vx, CovYX: stat.Covariance(ys[a], xs[a], nil)}
			}
			strata[k] = StratumCovariateMoments{Base: mom(0), Treat: mom(1)}
		}
		r := StratifiedCUPED(strata, 0.95)
		if r.Reason != "" || !r.Adjusted {
			t.Fatalf("undefined: %s %s", r.Reason, r.AdjustReason)
		}
		if r.CILow <= effect && effect <= r.CIHigh {
			covered++
		}
		if r.StdError < r.Unadjusted.StdError {
			narrower++
		}
	}
	lo, hi := BinomialRange(sims, 0.95, 0.999)
	t.Logf("covered %d of %d (99.9%% range %d–%d); narrower than unadjusted %d", covered, sims, lo, hi, narrower)
	if covered < lo || covered > hi {
		t.Errorf("stratified CUPED interval covered the planted effect %d of %d times; a 95%% interval covers %d–%d", covered, sims, lo, hi)
	}
	if narrower != sims {
		t.Errorf("stratified CUPED was narrower than unadjusted in %d of %d runs; with ρ² ≈ 0.7 it should always be", narrower, sims)
	}
}

// TestStratifiedCUPEDMatchesANCOVA: within each stratum the CUPED
// difference (θ pooled within the stratum's pair) is the treatment
// coefficient of y ~ 1 + treat + x, so the post-stratified CUPED
// difference is Σ_k w_k·β_k; Treat − Base equals it, the covariance
// reproduces its variance, and the Fieller set from (Base, Treat, Cov)
// agrees with the test.
// Source: least squares per stratum with gonum/mat (ancova in
// cuped_test.go); Cochran 1977 §5A.9 weights; Fieller 1954 at θ = 1.
func TestStratifiedCUPEDMatchesANCOVA(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 8))
	sizes := [][2]int{{380, 20}, {300, 100}, {250, 250}}
	var strata []StratumCovariateMoments
	want, total := 0.0, 0.0
	for k, sz := range sizes {
		yb, xb := cupedRows(rng, sz[0], float64(k))
		yt, xt := cupedRows(rng, sz[1], float64(k)+0.4)
		beta, _ := ancova(t, yb, xb, yt, xt)
		want += float64(sz[0]+sz[1]) * beta
		total += float64(sz[0] + sz[1])
		strata = append(strata, StratumCovariateMoments{Base: covMomentsOf(yb, xb), Treat: covMomentsOf(yt, xt)})
	}
	want /= total
	r := StratifiedCUPED(strata, 0.95)
	if r.Reason != "" || !r.Adjusted {
		t.Fatalf("undefined: %s %s", r.Reason, r.AdjustReason)
	}
	if math.Abs(r.Difference-want) > 1e-9 {
		t.Errorf("difference %v, Σ w_k·β_k by least squares %v", r.Difference, want)
	}
	if d := r.Treat.Value - r.Base.Value; math.Abs(d-r.Difference) > 1e-12 {
		t.Errorf("Treat − Base = %v, difference %v", d, r.Difference)
	}
	if v := r.Treat.StdError*r.Treat.StdError + r.Base.StdError*r.Base.StdError - 2*r.Cov; math.Abs(v-r.StdError*r.StdError) > 1e-12 {
		t.Errorf("SE² from (Base, Treat, Cov) = %v, want %v", v, r.StdError*r.StdError)
	}
	set := Fieller(r.Treat.Value, r.Base.Value, r.Treat.StdError, r.Base.StdError, r.Cov, NormalQuantile(0.975))
	if set.Contains(1) == (r.PValue < 0.05) {
		t.Errorf("Fieller set contains 1: %v, p = %v", set.Contains(1), r.PValue)
	}
}
