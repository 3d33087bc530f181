package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestFiellerMatchesR(t *testing.T) {
	// Source: R 4.2, mtcars mpg by am (am = 0 baseline, am = 1 treatment):
	//   x0 <- mtcars$mpg[mtcars$am==0]; x1 <- mtcars$mpg[mtcars$am==1]
	//   df <- t.test(x1, x0)$parameter            # 18.33225164
	//   q <- qt(0.975, df); a <- mean(x1); b <- mean(x0)
	//   va <- var(x1)/13; vb <- var(x0)/19
	//   A <- b^2 - q^2*vb; B <- a*b; C <- a^2 - q^2*va; D <- B^2 - A*C
	//   (B - sqrt(D))/A; (B + sqrt(D))/A          # 1.17783597667 1.70052609938
	// with means 17.1473684211 and 24.3923076923, variances 14.6992982456
	// and 38.0257692308 and t.test p-value 0.001373638333.
	base := Moments{N: 19, Mean: 17.1473684211, Var: 14.6992982456}
	treat := Moments{N: 13, Mean: 24.3923076923, Var: 38.0257692308}
	c := Welch(base, treat, 0.95)
	checkNear(t, "DF", c.DF, 18.33225164, 1e-8)
	checkNear(t, "PValue", c.PValue, 0.001373638333, 1e-7)
	checkNear(t, "RelCILow", c.RelCILow, 0.177835976673, 1e-8)
	checkNear(t, "RelCIHigh", c.RelCIHigh, 0.70052609938, 1e-8)
	if c.RelShape != ShapeBounded || c.RelReason != "" {
		t.Errorf("got RelShape %q RelReason %q, want bounded and no reason", c.RelShape, c.RelReason)
	}
	f := Fieller(24.3923076923, 17.1473684211, math.Sqrt(38.0257692308/13), math.Sqrt(14.6992982456/19), 0, TQuantile(0.975, 18.33225164))
	checkNear(t, "Fieller low", f.Low, 1.17783597667, 1e-8)
	checkNear(t, "Fieller high", f.High, 1.70052609938, 1e-8)
}

func TestFiellerShapes(t *testing.T) {
	// Source: hand algebra of Fieller's quadratic with q = 2, cov = 0:
	//   a = 1, b = 10, seA = seB = 1: A = 96, B = 10, C = −3, D = 388,
	//     roots (10 ∓ √388)/96 → bounded.
	//   a = 10, b = 1, seA = seB = 1: A = −3, B = 10, C = 96, D = 388,
	//     roots (10 ± √388)/(−3) → complement.
	//   a = 1, b = 1, seA = seB = 1: A = −3, C = −3, D = 1 − 9 < 0 → whole line.
	//   a = 1, b = 2, seA = 1, seB = 1: A = 0, B = 2, C = −3 → θ ≥ −3/4.
	inf := math.Inf(1)
	tests := []struct {
		name        string
		a, b        float64
		shape       string
		low, high   float64
		contains, x float64
	}{
		{"bounded", 1, 10, ShapeBounded, (10 - math.Sqrt(388)) / 96, (10 + math.Sqrt(388)) / 96, 1, 0.1},
		{"complement", 10, 1, ShapeComplement, (10 + math.Sqrt(388)) / -3, (10 - math.Sqrt(388)) / -3, 1, 10},
		{"whole line", 1, 1, ShapeUnbounded, -inf, inf, 1, 1e9},
		{"half line", 1, 2, ShapeUnbounded, -0.75, inf, 1, 0.5},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			f := Fieller(tt.a, tt.b, 1, 1, 0, 2)
			if f.Shape != tt.shape {
				t.Fatalf("got shape %q, want %q", f.Shape, tt.shape)
			}
			if f.Low != tt.low && !near(f.Low, tt.low, 1e-12) {
				t.Errorf("Low: got %v, want %v", f.Low, tt.low)
			}
			if f.High != tt.high && !near(f.High, tt.high, 1e-12) {
				t.Errorf("High: got %v, want %v", f.High, tt.high)
			}
			if !f.Contains(tt.x) {
				t.Errorf("got Contains(%v) false, want true (the estimate a/b)", tt.x)
			}
			if (tt.shape == ShapeBounded) != (f.Reason == "") {
				t.Errorf("got Reason %q for shape %q", f.Reason, f.Shape)
			}
		})
	}
}

// TestRelativeSetAgreesWithTest is the defining property of the relative
// sets: for every comparison kind, the relative set excludes 0 exactly when
// the two-sided p-value is below 1 − level. Welch uses t critical values
// with the Welch df, RatioDiff the normal (both Fieller); TwoProportion
// uses the Koopman score set, whose statistic at ratio 1 is the pooled z of
// the test; CUPEDWelch uses Fieller with the covariance of the two adjusted
// means and the Welch df. Source: the algebra in Fieller's and Koopman's doc comments,
// checked on 3000 seeded random cases per kind; cases within 1e-9 of the
// boundary (p = 1 − level exactly) are not counted.
func TestRelativeSetAgreesWithTest(t *testing.T) {
	const cases = 3000
	rng := rand.New(rand.NewPCG(2026, 12))
	level := 0.95
	checked := map[string]int{}
	check := func(kind string, c Comparison) {
		if c.Reason != "" || math.IsNaN(c.PValue) || c.RelSet.Shape == "" {
			return
		}
		if math.Abs(c.PValue-(1-level)) < 1e-9 {
			return
		}
		checked[kind]++
		excl := !c.RelSet.Contains(0)
		if excl {
			checked[kind+" excluded"]++
		}
		checked[kind+" "+c.RelSet.Shape]++
		if excl != (c.PValue < 1-level) {
			t.Errorf("%s: p = %v but relative set %+v excludes 0: %v", kind, c.PValue, c.RelSet, excl)
		}
	}
	for range cases {
		level = []float64{0.8, 0.9, 0.95, 0.99}[rng.IntN(4)]
		nb, nt := float64(2+rng.IntN(60)), float64(2+rng.IntN(60))
		mb := rng.NormFloat64() * 3
		mt := mb + rng.NormFloat64()*2
		base := Moments{N: nb, Mean: mb, Var: math.Exp(rng.NormFloat64() * 1.5)}
		treat := Moments{N: nt, Mean: mt, Var: math.Exp(rng.NormFloat64() * 1.5)}
		check("welch", Welch(base, treat, level))
		rb := RatioMoments{N: nb * 10, MeanNum: mb, MeanDen: 1 + rng.Float64(), VarNum: base.Var, VarDen: rng.Float64(), Cov: 0.1 * rng.NormFloat64()}
		rt := RatioMoments{N: nt * 10, MeanNum: mt, MeanDen: 1 + rng.Float64(), VarNum: treat.Var, VarDen: rng.Float64(), Cov: 0.1 * rng.NormFloat64()}
		check("ratio", RatioDiff(rb, rt, level))
		n1, n2 := float64(2+rng.IntN(300)), float64(2+rng.IntN(300))
		p := rng.Float64()
		x1 := math.Round(n1 * p)
		x2 := math.Round(n2 * math.Min(1, math.Max(0, p+0.15*rng.NormFloat64())))
		check("proportion", TwoProportion(Moments{N: n1, Mean: x1 / n1}, Moments{N: n2, Mean: x2 / n2}, level))
		// CUPED: correlated adjusted means (covariance from the shared θ
		// and covariate centre) with Welch df.
		cm := func(n, my float64) CovariateMoments {
			vx, vy := math.Exp(rng.NormFloat64()), math.Exp(rng.NormFloat64())
			rho := 0.95 * (2*rng.Float64() - 1)
			return CovariateMoments{N: n, MeanY: my, MeanX: 5 + rng.NormFloat64()*0.3, VarY: vy, VarX: vx, CovYX: rho * math.Sqrt(vx*vy)}
		}
		check("cuped", CUPEDWelch(cm(nb, mb), cm(nt, mt), level).Comparison)
	}
	t.Logf("cases: %v", checked)
	for _, kind := range []string{"welch", "ratio", "proportion", "cuped"} {
		if checked[kind] < 2000 {
			t.Errorf("%s: only %d usable cases, want at least 2000", kind, checked[kind])
		}
		// Both outcomes must be well represented for the check to bite.
		if ex := checked[kind+" excluded"]; ex < 300 || checked[kind]-ex < 300 {
			t.Errorf("%s: %d of %d excluded 0, want at least 300 of each outcome", kind, ex, checked[kind])
		}
	}
}
