package stats_test

import (
	"fmt"
	"math"

	"github.com/assay-dev/assay/stats"
)

// A planning calculation for a revenue-per-visitor metric (invented
// figures): mean 2.50, standard deviation 6 per visitor, a pre-period
// covariate with correlation 0.5 for CUPED, two treatments and a baseline
// sharing 300,000 visitors equally, each treatment compared with the
// baseline at a family-wise 5% level. The printed figures agree with R
// 4.2.2:
//
//	se <- sqrt(27/1e5*2); m <- (qnorm(1-0.0125)+qnorm(0.8))*se            # 0.0716
//	l <- -2*log(0.025); v <- l+log(l+1); cc <- sqrt(2*(v+1)/v*log(sqrt(v+1)/0.025))
//	(cc+qnorm(.8))*se                                                     # 0.0958
//	ceiling((qnorm(1-0.0125)+qnorm(0.8))^2*27*4/0.05^2)                   # 410618
func ExampleArms_MDE() {
	alpha := stats.PerComparisonAlpha(0.05, 2, stats.AlphaHolm) // worst case: 0.025
	v := stats.CUPEDVariance(36, 0.5)                           // 27
	arms := stats.Arms{WBase: 1, WTreat: 1, VarBase: v, VarTreat: v}
	pair := 300000.0 * 2 / 3 // units in one treatment-versus-baseline comparison

	mde := arms.MDE(pair, alpha, 0.8, true)
	fmt.Printf("per-comparison alpha: %.3f\n", alpha)
	fmt.Printf("fixed-horizon MDE: %.4f (%.2f%% of the mean)\n", mde, 100*stats.RelativeMDE(mde, 2.5))
	seq := stats.SequentialMDE(arms.SE(pair), pair, 0, alpha, 0.8)
	fmt.Printf("MDE when monitored continuously: %.4f (%.2f%%)\n", seq, 100*stats.RelativeMDE(seq, 2.5))
	n := arms.TotalN(0.05, alpha, 0.8, true)
	fmt.Printf("visitors per comparison to detect 0.05: %.0f\n", math.Ceil(n))
	// Output:
	// per-comparison alpha: 0.025
	// fixed-horizon MDE: 0.0716 (2.87% of the mean)
	// MDE when monitored continuously: 0.0958 (3.83%)
	// visitors per comparison to detect 0.05: 410618
}

// Sample size per arm for a conversion rate of 4% and a lift to 4.4%, as
// R 4.2.2 computes it: ceiling(power.prop.test(p1 = 0.04, p2 = 0.044,
// power = 0.8, tol = 1e-12)$n) = 39475.
func ExamplePropN() {
	n := stats.PropN(0.04, 0.044, 0.05, 0.8, true)
	fmt.Printf("%.0f units per arm\n", math.Ceil(n))
	// Output:
	// 39475 units per arm
}
