package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestGuardVerdictsOneSidedLevel(t *testing.T) {
	// Planted cases: baseline mean 100, both arms with variance 100, one-
	// sided level 0.95, margin 1%, harm "increase" unless stated.
	// Source for the bounds: R 4.2, Fieller's quadratic with
	// q = qt(0.95, df), df the Welch df (19998 for n = 10000, 38 for n = 20):
	//   A <- b^2 - q^2*vb; B <- a*b; C <- a^2 - q^2*va; D <- B^2 - A*C
	//   c((B - sqrt(D))/A - 1, (B + sqrt(D))/A - 1)
	// Verdicts by reading the bounds against 0 and ±0.01 by hand.
	tests := []struct {
		name         string
		n, treat     float64
		harm         string
		verdict      Verdict
		lower, upper float64
		alarming     bool
	}{
		{"harm beyond margin", 10000, 102, HarmIncrease, VerdictHarmBeyondMargin, 0.0176530950674, 0.0223524247675, true},
		{"harm may exceed margin", 10000, 100.9, HarmIncrease, VerdictHarmMayExceedMargin, 0.00666595161019, 0.0113395086972, true},
		{"harm inside margin", 10000, 100.5, HarmIncrease, VerdictHarmWithinMargin, 0.00267060956334, 0.00733482909759, false},
		{"clear safety", 10000, 99.8, HarmIncrease, VerdictNoHarmBeyondMargin, -0.00432126127531, 0.000326662055016, false},
		{"too little data", 20, 100.5, HarmIncrease, VerdictInconclusive, -0.0470747973402, 0.0599355177107, false},
		{"decrease beyond margin", 10000, 98, HarmDecrease, VerdictHarmBeyondMargin, -0.0223004896922, -0.0176942069369, true},
		{"decrease is safe when harm is increase", 10000, 98, HarmIncrease, VerdictNoHarmBeyondMargin, -0.0223004896922, -0.0176942069369, false},
		{"increase is safe when harm is decrease", 10000, 102, HarmDecrease, VerdictNoHarmBeyondMargin, 0.0176530950674, 0.0223524247675, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := Welch(Moments{N: tt.n, Mean: 100, Var: 100}, Moments{N: tt.n, Mean: tt.treat, Var: 100}, 0.95)
			g := Guard(c, tt.harm, 0.01, 0.95)
			if g.Verdict != tt.verdict || g.Verdict.Alarming() != tt.alarming {
				t.Errorf("got %q (alarming %v, reason %q), want %q (alarming %v)", g.Verdict, g.Verdict.Alarming(), g.Reason, tt.verdict, tt.alarming)
			}
			checkNear(t, "Lower", g.Lower, tt.lower, 1e-8)
			checkNear(t, "Upper", g.Upper, tt.upper, 1e-8)
			// Harm shown at the one-sided level iff the one-sided p is below 0.05.
			if g.Verdict.HarmShown() != (g.HarmP < 0.05) {
				t.Errorf("got HarmShown %v with HarmP %v", g.Verdict.HarmShown(), g.HarmP)
			}
		})
	}
}

func TestGuardUndefined(t *testing.T) {
	// Source: the minimum-size rule (n ≥ 2) and the zero-baseline rule.
	tests := []struct {
		name   string
		c      Comparison
		harm   string
		margin float64
		want   Verdict
	}{
		{"one unit", Welch(Moments{N: 1, Mean: 100}, Moments{N: 50, Mean: 101, Var: 4}, 0.95), HarmIncrease, 0.01, VerdictUndefined},
		{"zero baseline", Welch(Moments{N: 50, Mean: 0, Var: 1}, Moments{N: 50, Mean: 1, Var: 1}, 0.95), HarmIncrease, 0.01, VerdictUndefined},
		{"baseline not different from zero", Welch(Moments{N: 50, Mean: 0.1, Var: 1}, Moments{N: 50, Mean: 1, Var: 1}, 0.95), HarmIncrease, 0.01, VerdictInconclusive},
		{"bad direction", Welch(Moments{N: 50, Mean: 10, Var: 1}, Moments{N: 50, Mean: 11, Var: 1}, 0.95), "up", 0.01, VerdictUndefined},
		{"negative margin", Welch(Moments{N: 50, Mean: 10, Var: 1}, Moments{N: 50, Mean: 11, Var: 1}, 0.95), HarmIncrease, -0.01, VerdictUndefined},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			g := Guard(tt.c, tt.harm, tt.margin, 0.95)
			if g.Verdict != tt.want || g.Reason == "" || g.Verdict.Alarming() {
				t.Errorf("got %q reason %q, want %q with a reason", g.Verdict, g.Reason, tt.want)
			}
		})
	}
}

func TestGuardSameLevelBothDirections(t *testing.T) {
	// Source: the duality of a confidence set and its tests (Fieller 1954;
	// Koopman 1984): at one one-sided level L, harm is shown exactly when
	// the one-sided p-value against "no change" is below 1 − L, and harm
	// beyond the margin is ruled out exactly when the non-inferiority
	// p-value is below 1 − L. Checked on 2000 seeded random comparisons of
	// each kind (Welch, two proportions, CUPED), both harm directions.
	rng := rand.New(rand.NewPCG(4242, 7))
	used, harmShown, noHarm := 0, 0, 0
	for range 2000 {
		level := []float64{0.9, 0.95, 0.975}[rng.IntN(3)]
		margin := []float64{0, 0.01, 0.05}[rng.IntN(3)]
		n := float64(20 + rng.IntN(2000))
		mb := 50 + 10*rng.NormFloat64()
		mt := mb * (1 + 0.03*rng.NormFloat64())
		v := math.Exp(2 + 2*rng.NormFloat64())
		n1, n2 := float64(50+rng.IntN(3000)), float64(50+rng.IntN(3000))
		p := 0.02 + 0.5*rng.Float64()
		x1, x2 := math.Round(n1*p), math.Round(n2*p*(1+0.1*rng.NormFloat64()))
		cs := []Comparison{
			Welch(Moments{N: n, Mean: mb, Var: v}, Moments{N: n, Mean: mt, Var: v * 1.3}, level),
			TwoProportion(Moments{N: n1, Mean: x1 / n1}, Moments{N: n2, Mean: math.Min(1, x2/n2)}, level),
			CUPEDWelch(CovariateMoments{N: n, MeanY: mb, MeanX: 10, VarY: v, VarX: 4, CovYX: 0.5 * math.Sqrt(4*v)},
				CovariateMoments{N: n, MeanY: mt, MeanX: 10.1, VarY: v, VarX: 4, CovYX: 0.5 * math.Sqrt(4*v)}, level).Comparison,
		}
		for _, c := range cs {
			for _, harm := range []string{HarmIncrease, HarmDecrease} {
				g := Guard(c, harm, margin, level)
				if g.Verdict == VerdictUndefined || math.IsNaN(g.Lower) {
					continue
				}
				alpha := 1 - level
				if math.Abs(g.HarmP-alpha) < 1e-9 || math.Abs(g.NoHarmP-alpha) < 1e-9 {
					continue
				}
				used++
				lo, hi := g.Lower, g.Upper
				if harm == HarmDecrease {
					lo, hi = -g.Upper, -g.Lower
				}
				if lo > 0 {
					harmShown++
				}
				if hi < margin {
					noHarm++
				}
				if (lo > 0) != (g.HarmP < alpha) {
					t.Errorf("%s %s: lower %v but HarmP %v at alpha %v", c.Method, harm, lo, g.HarmP, alpha)
				}
				if (hi < margin) != (g.NoHarmP < alpha) {
					t.Errorf("%s %s: upper %v margin %v but NoHarmP %v at alpha %v", c.Method, harm, hi, margin, g.NoHarmP, alpha)
				}
			}
		}
	}
	if used < 6000 {
		t.Errorf("only %d usable cases, want at least 6000", used)
	}
	// Both outcomes of both claims must be well represented.
	t.Logf("used %d, harm shown %d, no harm beyond margin %d", used, harmShown, noHarm)
	for name, k := range map[string]int{"harm shown": harmShown, "no harm beyond margin": noHarm} {
		if k < 500 || used-k < 500 {
			t.Errorf("%s in %d of %d cases, want at least 500 of each outcome", name, k, used)
		}
	}
}
