package stats_test

import (
	"fmt"

	"github.com/assay-dev/assay/stats"
)

// Student's sleep data (R datasets::sleep): group 1 as baseline, group 2 as
// treatment. R 4.x t.test(extra ~ group, data = sleep) reports t = -1.860813,
// df = 17.77647, p = 0.07939414 with the groups in the other order.
func ExampleWelch() {
	base := stats.Moments{N: 10, Mean: 0.75, Var: 3.200556}
	treat := stats.Moments{N: 10, Mean: 2.33, Var: 4.009000}
	c := stats.Welch(base, treat, 0.95)
	fmt.Printf("%s: diff %.2f, t %.4f, df %.3f, p %.4f, CI [%.4f, %.4f]\n",
		c.Method, c.Difference, c.Statistic, c.DF, c.PValue, c.CILow, c.CIHigh)
	// Output:
	// welch-t: diff 1.58, t 1.8608, df 17.776, p 0.0794, CI [-0.2055, 3.3655]
}

// A 50/50 experiment that received 5100 and 4900 units.
func ExampleSampleRatio() {
	r := stats.SampleRatio([]float64{5100, 4900}, []float64{0.5, 0.5})
	fmt.Printf("X² %.1f, df %.0f, p %.4f\n", r.Statistic, r.DF, r.PValue)
	// Output:
	// X² 4.0, df 1, p 0.0455
}

// The worked example of Benjamini & Hochberg (1995).
func ExampleBenjaminiHochberg() {
	p := []float64{0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344,
		0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000}
	adj := stats.BenjaminiHochberg(p)
	fmt.Printf("%.6f %.6f %.6f %.6f %.6f\n", adj[0], adj[1], adj[2], adj[3], adj[4])
	// Output:
	// 0.001500 0.003000 0.009500 0.035625 0.060300
}

// A baseline with a zero mean has no relative lift; the reason says why.
func ExampleTwoProportion() {
	c := stats.TwoProportion(stats.Moments{N: 100, Mean: 0}, stats.Moments{N: 100, Mean: 0.1}, 0.95)
	fmt.Printf("diff %.2f, z %.3f, p %.4f, relative %v (%s)\n", c.Difference, c.Statistic, c.PValue, c.Relative, c.RelReason)
	// Output:
	// diff 0.10, z 3.244, p 0.0012, relative NaN (baseline mean is zero)
}

// Fieller's set for the relative change of mtcars mpg, automatic (am = 0)
// against manual (am = 1); R 4.2 t.test gives p = 0.00137 and the same
// ends from Fieller's quadratic with qt(0.975, 18.33225).
func ExampleFieller() {
	base := stats.Moments{N: 19, Mean: 17.1473684211, Var: 14.6992982456}
	treat := stats.Moments{N: 13, Mean: 24.3923076923, Var: 38.0257692308}
	c := stats.Welch(base, treat, 0.95)
	fmt.Printf("relative %.4f, %s set [%.4f, %.4f], p %.5f\n", c.Relative, c.RelShape, c.RelCILow, c.RelCIHigh, c.PValue)
	// Output:
	// relative 0.4225, bounded set [0.1778, 0.7005], p 0.00137
}

// A latency guard metric that must not rise by more than 1%, judged at one
// one-sided level of 95% in both directions.
func ExampleGuard() {
	base := stats.Moments{N: 10000, Mean: 100, Var: 100}
	treat := stats.Moments{N: 10000, Mean: 100.5, Var: 100}
	g := stats.Guard(stats.Welch(base, treat, 0.95), stats.HarmIncrease, 0.01, 0.95)
	fmt.Printf("%s (alarming %v), bounds [%.4f, %.4f]\n", g.Verdict, g.Verdict.Alarming(), g.Lower, g.Upper)
	// Output:
	// harm shown, within margin (alarming false), bounds [0.0027, 0.0073]
}
