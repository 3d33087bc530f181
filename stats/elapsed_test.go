package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// elapsedArm simulates n units of one arm: each unit has a gamma
// distributed daily rate (shape 2, so a unit's buckets are correlated),
// and its count in bucket b is Poisson(rate·days·base[b]·mult[b] + add[b]).
// It returns the arm's bucket moments, computed with gonum from the
// per-unit values, and the per-unit contrasts.
func elapsedArm(rng *rand.Rand, n int, days float64, base, mult, add []float64) (BucketArm, []float64) {
	B := len(base)
	w := TrendWeights(B)
	ys := make([][]float64, B)
	ls := make([]float64, n)
	g := distuv.Gamma{Alpha: 2, Beta: 2 / 0.1, Src: rng}
	for i := 0; i < n; i++ {
		rate := g.Rand()
		for b := range B {
			y := distuv.Poisson{Lambda: rate*days*base[b]*mult[b] + add[b], Src: rng}.Rand()
			ys[b] = append(ys[b], y)
			ls[i] += float64(w[b]) * y
		}
	}
	a := BucketArm{}
	for b := range B {
		m, v := stat.MeanVariance(ys[b], nil)
		a.Buckets = append(a.Buckets, Moments{N: float64(n), Mean: m, Var: v})
	}
	_, a.TrendVar = stat.MeanVariance(ls, nil)
	return a, ls
}

func ones(n int, v float64) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = v
	}
	return out
}

// TestElapsedTrendAgreesWithRawData checks the algebra against the
// per-unit data: the contrast's mean difference is the difference of the
// per-unit contrasts' means, its test is Welch's on those contrasts, and
// the slope is the ordinary least-squares slope of the bucket differences
// on the bucket index.
// Source: gonum stat.MeanVariance, stat.LinearRegression and
// distuv.StudentsT on the raw simulated values (Welch's t written out).
func TestElapsedTrendAgreesWithRawData(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 43))
	for _, B := range []int{2, 3, 7} {
		base, bl := elapsedArm(rng, 800, 2, ones(B, 1), ones(B, 1), ones(B, 0))
		mult := make([]float64, B)
		for b := range mult {
			mult[b] = 1.4 - 0.4*float64(b)/float64(B-1)
		}
		treat, tl := elapsedArm(rng, 900, 2, ones(B, 1), mult, ones(B, 0))
		got := ElapsedTrend(TrendWeights(B), base, treat, 0.95)
		// Welch's t on the raw per-unit contrasts, written out with gonum.
		tm, tv := stat.MeanVariance(tl, nil)
		bm, bv := stat.MeanVariance(bl, nil)
		a, b := bv/800, tv/900
		df := (a + b) * (a + b) / (a*a/799 + b*b/899)
		wantD := tm - bm
		wantP := 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(wantD/math.Sqrt(a+b)))
		if math.Abs(got.Contrast.Difference-wantD) > 1e-9 || math.Abs(got.PValue-wantP) > 1e-9 {
			t.Errorf("B=%d: contrast %v p %v, want %v p %v", B, got.Contrast.Difference, got.PValue, wantD, wantP)
		}
		xs, ds := make([]float64, B), make([]float64, B)
		for b := range B {
			xs[b], ds[b] = float64(b), treat.Buckets[b].Mean-base.Buckets[b].Mean
		}
		_, slope := stat.LinearRegression(xs, ds, nil, false)
		if math.Abs(got.Slope-slope) > 1e-9 {
			t.Errorf("B=%d: slope %v, least squares %v", B, got.Slope, slope)
		}
	}
}

// TestElapsedTrendCalibration simulates experiments with a constant effect
// (the test must flag in at most alpha of them) and with a planted decay
// (it must flag about as often as its power says).
// Source: the flag counts are checked against exact binomial ranges
// (BinomialRange, checked against R's qbinom); the power of the decay
// scenario is the normal approximation Φ(|Δ|/SE − z_{1−α/2}) with Δ and SE
// derived from the simulation model (Poisson–gamma: Var y_b = μ_b + μ_b²/2,
// Cov(y_b, y_c) = μ_b·μ_c/2), not from the code under test.
func TestElapsedTrendCalibration(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation")
	}
	const (
		sims  = 600
		n     = 1500
		alpha = 0.05
		days  = 7.0
	)
	type scenario struct {
		name            string
		base, mult, add []float64 // treatment: base·mult + add; baseline: base
		null            bool
	}
	cases := []scenario{
		// Constant additive effect on a flat baseline.
		{name: "constant, 2 weekly buckets", base: []float64{1, 1}, mult: []float64{1, 1}, add: []float64{0.08, 0.08}, null: true},
		// Constant additive effect on a baseline that falls with time
		// since the trigger (units are most active right after it).
		{name: "constant, falling baseline, 7 buckets", base: []float64{1.6, 1.3, 1.1, 1, 0.9, 0.8, 0.7}, mult: ones(7, 1), add: ones(7, 0.05), null: true},
		// A constant relative effect on a flat baseline is also constant
		// on the additive scale.
		{name: "constant x1.08, 2 buckets", base: []float64{1, 1}, mult: []float64{1.08, 1.08}, add: []float64{0, 0}, null: true},
		// Planted novelty: +25% in the first week, none in the second.
		{name: "decay +25% to 0, 2 buckets", base: []float64{1, 1}, mult: []float64{1.25, 1}, add: []float64{0, 0}},
	}
	rng := rand.New(rand.NewPCG(2026, 12))
	for _, c := range cases {
		flags, fading := 0, 0
		for range sims {
			base, _ := elapsedArm(rng, n, days, c.base, ones(len(c.base), 1), ones(len(c.base), 0))
			treat, _ := elapsedArm(rng, n, days, c.base, c.mult, c.add)
			r := ElapsedTrend(TrendWeights(len(c.base)), base, treat, 1-alpha)
			overall := 0.0
			for b := range c.base {
				overall += treat.Buckets[b].Mean - base.Buckets[b].Mean
			}
			switch TrendDirection(r, overall, alpha) {
			case TrendFading:
				flags++
				fading++
			case TrendGrowing, TrendChanging:
				flags++
			}
		}
		if c.null {
			lo, hi := BinomialRange(sims, alpha, 0.999)
			t.Logf("%s: %d of %d flagged (alpha %.2f: 99.9%% range %d–%d)", c.name, flags, sims, alpha, lo, hi)
			if flags > hi || flags < lo {
				t.Errorf("%s: flagged %d of %d; a calibrated test flags %d–%d", c.name, flags, sims, lo, hi)
			}
			continue
		}
		// Power from the model: μ_b = 0.1·days·base_b·mult_b (+ add_b).
		w := TrendWeights(len(c.base))
		varL := func(mult []float64) float64 {
			v := 0.0
			for b := range w {
				mb := 0.1 * days * c.base[b] * mult[b]
				for k := range w {
					mk := 0.1 * days * c.base[k] * mult[k]
					cov := mb * mk / 2
					if b == k {
						cov += mb
					}
					v += float64(w[b]*w[k]) * cov
				}
			}
			return v
		}
		delta := 0.0
		for b := range w {
			delta += float64(w[b]) * 0.1 * days * c.base[b] * (c.mult[b] - 1)
		}
		se := math.Sqrt((varL(ones(len(w), 1)) + varL(c.mult)) / n)
		power := distuv.UnitNormal.CDF(math.Abs(delta)/se - NormalQuantile(1-alpha/2))
		lo, hi := BinomialRange(sims, power, 0.999)
		t.Logf("%s: %d of %d flagged, %d as fading (power %.3f: 99.9%% range %d–%d)", c.name, flags, sims, fading, power, lo, hi)
		if flags < lo || flags > hi || fading != flags {
			t.Errorf("%s: flagged %d (fading %d) of %d; power %.3f gives %d–%d, all fading", c.name, flags, fading, sims, power, lo, hi)
		}
	}
}

// TestTrendDirection checks the naming of a trend against the overall
// effect (the rule of the section comment).
func TestTrendDirection(t *testing.T) {
	sig := TrendResult{Slope: -0.1, PValue: 0.001}
	for _, c := range []struct {
		r       TrendResult
		overall float64
		want    string
	}{
		{sig, 0.5, TrendFading},
		{sig, -0.5, TrendGrowing},
		{TrendResult{Slope: 0.1, PValue: 0.001}, 0.5, TrendGrowing},
		{sig, 0, TrendChanging},
		{sig, math.NaN(), TrendChanging},
		{TrendResult{Slope: -0.1, PValue: 0.2}, 0.5, TrendNone},
		{TrendResult{Slope: math.NaN(), PValue: math.NaN()}, 0.5, TrendNone},
	} {
		if got := TrendDirection(c.r, c.overall, 0.05); got != c.want {
			t.Errorf("slope %v p %v overall %v: %q, want %q", c.r.Slope, c.r.PValue, c.overall, got, c.want)
		}
	}
}

// TestElapsedTrendStratifiedOneStratum: with one stratum the stratified
// slope is the difference of the per-unit contrasts' means over Σ w_b·b,
// with the unpooled standard error, written out with gonum.
// Source: Cochran 1977, §5A.9 (one stratum of weight 1 is the plain
// difference); gonum stat.MeanVariance on the raw contrasts.
func TestElapsedTrendStratifiedOneStratum(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 9))
	base, bl := elapsedArm(rng, 500, 7, []float64{1, 1, 1}, ones(3, 1), ones(3, 0))
	treat, tl := elapsedArm(rng, 450, 7, []float64{1, 1, 1}, []float64{1.3, 1.1, 1}, ones(3, 0))
	w := TrendWeights(3) // −2, 0, 2: Σ w_b·b = 4
	bm, bv := stat.MeanVariance(bl, nil)
	tm, tv := stat.MeanVariance(tl, nil)
	wantSlope, wantSE := (tm-bm)/4, math.Sqrt(bv/500+tv/450)/4
	b := ElapsedTrendStratified(w, []StratumBuckets{{base, treat}}, 0.95)
	if math.Abs(b.Slope-wantSlope) > 1e-12 || math.Abs(b.StdError-wantSE) > 1e-12 {
		t.Errorf("stratified slope %v±%v, by hand %v±%v", b.Slope, b.StdError, wantSlope, wantSE)
	}
	if r := ElapsedTrend([]int{-1, 1}, base, treat, 0.95); r.Reason == "" {
		t.Errorf("3 bucket moments for 2 weights gave no reason")
	}
}

// TestElapsedTrendStratifiedCalibration: under a launch in steps whose
// allocations differ and whose baseline falls with time since the trigger
// differently in each step, a constant additive effect must be flagged in
// at most alpha of simulations by the trend stratified by step.
// Source: exact binomial range (BinomialRange, checked against R's qbinom).
func TestElapsedTrendStratifiedCalibration(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation")
	}
	const (
		sims  = 600
		alpha = 0.05
	)
	steps := []struct {
		n     int
		treat float64
		base  []float64
	}{
		{400, 0.05, []float64{2, 1.2}},
		{600, 0.25, []float64{1.4, 1.1}},
		{1500, 0.5, []float64{1, 1}},
	}
	rng := rand.New(rand.NewPCG(11, 13))
	flags := 0
	for range sims {
		var strata []StratumBuckets
		for _, st := range steps {
			nt := 0
			for range st.n {
				if rng.Float64() < st.treat {
					nt++
				}
			}
			base, _ := elapsedArm(rng, st.n-nt, 7, st.base, ones(2, 1), ones(2, 0))
			treat, _ := elapsedArm(rng, nt, 7, st.base, ones(2, 1), ones(2, 0.1))
			strata = append(strata, StratumBuckets{Base: base, Treat: treat})
		}
		r := ElapsedTrendStratified(TrendWeights(2), strata, 1-alpha)
		if r.Reason != "" {
			t.Fatalf("undefined: %s", r.Reason)
		}
		if r.PValue < alpha {
			flags++
		}
	}
	lo, hi := BinomialRange(sims, alpha, 0.999)
	t.Logf("constant effect under a ramp: %d of %d flagged (99.9%% range %d–%d)", flags, sims, lo, hi)
	if flags < lo || flags > hi {
		t.Errorf("flagged %d of %d; a calibrated test flags %d–%d", flags, sims, lo, hi)
	}
}
