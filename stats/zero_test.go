package stats

import (
	"math"
	"testing"
)

// TestZeroMeansStayZero protects exact zeros: a mean that is exactly 0
// must come out as exactly 0 (not a rounding residue such as 4.4e-16), and
// a relative change from a zero baseline must be NaN with a reason (not
// −100% or ±Inf). Source: definition (0 − 0 = 0; x/0 is undefined).
func TestZeroMeansStayZero(t *testing.T) {
	zeroY := CovariateMoments{N: 100, MeanY: 0, MeanX: 3.3, VarY: 0, VarX: 2.1, CovYX: 0}
	zeroY2 := CovariateMoments{N: 70, MeanY: 0, MeanX: 2.9, VarY: 0, VarX: 1.7, CovYX: 0}
	// Equal covariate means whose weighted sum does not come back exactly
	// in float64: (101·0.1 + 33·0.1)/134 = 0.10000000000000002 (python3).
	sameX1 := CovariateMoments{N: 101, MeanY: 0, MeanX: 0.1, VarY: 1, VarX: 2, CovYX: 0.9}
	sameX2 := CovariateMoments{N: 33, MeanY: 0, MeanX: 0.1, VarY: 1, VarX: 2, CovYX: 0.9}
	ratioZero := RatioCovariateMoments{N: 50, MeanNum: 0, MeanDen: 2, MeanX: 1, VarNum: 0, VarDen: 1, VarX: 1, CovNumDen: 0, CovNumX: 0, CovDenX: 0.3}
	ratioZero2 := RatioCovariateMoments{N: 60, MeanNum: 0, MeanDen: 3, MeanX: 1.4, VarNum: 0, VarDen: 1, VarX: 1, CovNumDen: 0, CovNumX: 0, CovDenX: 0.2}
	type result struct {
		name             string
		base, treat      float64
		diff             float64
		relative         float64
		relReason        string
		relCILow, relCIH float64
	}
	var got []result
	add := func(name string, c Comparison, b, tr float64) {
		got = append(got, result{name, b, tr, c.Difference, c.Relative, c.RelReason, c.RelCILow, c.RelCIHigh})
	}
	w := Welch(Moments{N: 10, Mean: 0, Var: 1}, Moments{N: 10, Mean: 0, Var: 1}, 0.95)
	add("welch both zero", w, 0, 0)
	p := TwoProportion(Moments{N: 100, Mean: 0}, Moments{N: 100, Mean: 0}, 0.95)
	add("proportions both zero", p, 0, 0)
	r := RatioDiff(RatioMoments{N: 10, MeanNum: 0, MeanDen: 2, VarDen: 1}, RatioMoments{N: 10, MeanNum: 0, MeanDen: 3, VarDen: 1}, 0.95)
	add("ratios both zero", r, 0, 0)
	cy := CUPEDWelch(zeroY, zeroY2, 0.95)
	add("cuped y zero", cy.Comparison, cy.Base.Value, cy.Treat.Value)
	cx := CUPEDWelch(sameX1, sameX2, 0.95)
	add("cuped equal covariate means", cx.Comparison, cx.Base.Value, cx.Treat.Value)
	cr := CUPEDRatio(ratioZero, ratioZero2, 0.95)
	add("cuped ratio zero", cr.Comparison, cr.Base.Value, cr.Treat.Value)
	for _, g := range got {
		t.Run(g.name, func(t *testing.T) {
			if g.base != 0 || g.treat != 0 || g.diff != 0 || math.Signbit(g.diff) {
				t.Errorf("got base %v treat %v difference %v, want exactly 0", g.base, g.treat, g.diff)
			}
			if !math.IsNaN(g.relative) || !math.IsNaN(g.relCILow) || !math.IsNaN(g.relCIH) || g.relReason == "" {
				t.Errorf("got relative %v [%v, %v] reason %q, want NaN with a reason", g.relative, g.relCILow, g.relCIH, g.relReason)
			}
		})
	}
	checkAbs(t, "CovariateMean of equal means", CovariateMean(sameX1, sameX2), 0.1, 0)
	// A treatment mean of exactly 0 against a non-zero baseline is a
	// genuine −100% change, and stays exactly −1.
	c := Welch(Moments{N: 10, Mean: 2, Var: 1}, Moments{N: 10, Mean: 0, Var: 1}, 0.95)
	if c.Relative != -1 {
		t.Errorf("got relative %v, want exactly -1", c.Relative)
	}
	// Estimates of a zero mean are exactly zero.
	for name, e := range map[string]Estimate{
		"mean":       MeanEstimate(Moments{N: 5, Mean: 0, Var: 0}),
		"proportion": ProportionEstimate(Moments{N: 5, Mean: 0}),
		"ratio":      RatioEstimate(RatioMoments{N: 5, MeanNum: 0, MeanDen: 1, VarDen: 1}),
	} {
		if e.Value != 0 || e.StdError != 0 || e.Reason != "" {
			t.Errorf("%s: got %+v, want value 0, SE 0", name, e)
		}
	}
}
