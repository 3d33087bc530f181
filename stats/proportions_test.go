package stats

import (
	"math"
	"testing"
)

// Reference values for the proportion intervals, produced by
// python3-statsmodels 0.13 (Debian 12) with
//
//	from statsmodels.stats.proportion import confint_proportions_2indep, proportion_confint
//	confint_proportions_2indep(xt, nt, xb, nb, method='newcomb', compare='diff', alpha=0.05)
//	confint_proportions_2indep(xt, nt, xb, nb, method='score', compare='ratio', correction=False, alpha=0.05)
//	proportion_confint(xt, nt, alpha=0.05, method='wilson')
var propRefs = []struct {
	name             string
	xb, nb, xt, nt   float64
	newLo, newHi     float64 // Newcombe hybrid score, treat − base
	koopLo, koopHi   float64 // score (Koopman) set for pt/pb
	wilsonLo, wilsHi float64 // Wilson for the treatment proportion
}{
	{"equal n", 120, 1000, 150, 1000, 1.3782434204051563e-05, 0.06000825857012657, 1.0003491038914267, 1.56271034724561, 0.1292100725130883, 0.17346865842680032},
	{"unequal n", 45, 300, 80, 420, -0.016194405442489075, 0.09448801765322223, 0.913058386149766, 1.7748203823120736, 0.1557927913780003, 0.23077028642135003},
	{"treat lower", 530, 5000, 470, 5100, -0.0255213276157941, -0.002189602672551031, 0.7727493614740586, 0.9781061478461652, 0.08452249635263756, 0.10040516380998443},
	{"base zero", 0, 100, 10, 100, 0.04192290401610915, 0.17436566150491348, 2.6769342208101876, math.Inf(1), 0.05522913706067509, 0.17436566150491348},
	{"treat zero", 3, 40, 0, 35, -0.1986423352431055, 0.03544683175351293, 0, 1.3949867019343105, 0, 0.09890099232440408},
}

func TestWilsonNewcombeKoopmanMatchStatsmodels(t *testing.T) {
	for _, tt := range propRefs {
		t.Run(tt.name, func(t *testing.T) {
			pb, pt := tt.xb/tt.nb, tt.xt/tt.nt
			lo, hi := WilsonInterval(pt, tt.nt, 0.95)
			checkAbs(t, "Wilson low", lo, tt.wilsonLo, 1e-12)
			checkAbs(t, "Wilson high", hi, tt.wilsHi, 1e-12)
			lo, hi = NewcombeDiff(pt, tt.nt, pb, tt.nb, 0.95)
			checkAbs(t, "Newcombe low", lo, tt.newLo, 1e-12)
			checkAbs(t, "Newcombe high", hi, tt.newHi, 1e-12)
			k := KoopmanRatio(tt.xt, tt.nt, tt.xb, tt.nb, 0.95)
			// statsmodels finds the ends as roots of a cubic; 1e-7 relative.
			checkNear(t, "Koopman low", k.Low, tt.koopLo, 1e-7)
			if math.IsInf(tt.koopHi, 1) {
				if !math.IsInf(k.High, 1) || k.Shape != ShapeUnbounded {
					t.Errorf("Koopman high: got %v %q, want +Inf unbounded", k.High, k.Shape)
				}
			} else {
				checkNear(t, "Koopman high", k.High, tt.koopHi, 1e-7)
			}
		})
	}
}

func TestTwoProportionIntervalStaysInUnitRange(t *testing.T) {
	// Source: Newcombe (1998) method 10 lies inside [−1, 1] by
	// construction; the Wald interval of these extreme tables does not
	// (0.9 ± 1.96·√(0.09/10 + 0.09/10) reaches 1.16; hand arithmetic).
	tests := []struct {
		name   string
		pb, pt float64
		n      float64
	}{
		{"near +1", 0.05, 0.95, 10},
		{"near -1", 0.95, 0.05, 10},
		{"0 vs 1", 0, 1, 5},
		{"1 vs 0", 1, 0, 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := TwoProportion(Moments{N: tt.n, Mean: tt.pb}, Moments{N: tt.n, Mean: tt.pt}, 0.95)
			if !(c.CILow >= -1 && c.CIHigh <= 1 && c.CILow <= c.Difference && c.Difference <= c.CIHigh) {
				t.Errorf("got [%v, %v] around %v, want inside [-1, 1] and around the difference", c.CILow, c.CIHigh, c.Difference)
			}
		})
	}
}

func TestTwoProportionOneUnitArm(t *testing.T) {
	// Source: the minimum-size rule of MeanEstimate (n ≥ 2 for a standard
	// error) applied to proportions; a one-unit arm has no interval or test.
	c := TwoProportion(Moments{N: 1, Mean: 1}, Moments{N: 500, Mean: 0.3}, 0.95)
	if !math.IsNaN(c.PValue) || !math.IsNaN(c.CILow) || !math.IsNaN(c.StdError) || c.Reason != "baseline: "+reasonOneUnit {
		t.Errorf("got p %v CI %v SE %v Reason %q, want NaN and %q", c.PValue, c.CILow, c.StdError, c.Reason, "baseline: "+reasonOneUnit)
	}
	checkAbs(t, "Difference", c.Difference, -0.7, 1e-15)
	e := ProportionEstimate(Moments{N: 1, Mean: 0})
	if !math.IsNaN(e.StdError) || e.Reason != reasonOneUnit || e.Value != 0 {
		t.Errorf("got %+v, want value 0, NaN standard error and %q", e, reasonOneUnit)
	}
}
