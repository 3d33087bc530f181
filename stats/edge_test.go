package stats

import (
	"math"
	"strings"
	"testing"
)

// chk is one field of an edge-case result. When anyFinite is set the field
// must merely be a defined (non-NaN) number; otherwise it must equal want.
type chk struct {
	name      string
	got, want float64
	anyFinite bool
}

func val(name string, got, want float64) chk { return chk{name: name, got: got, want: want} }
func defined(name string, got float64) chk   { return chk{name: name, got: got, anyFinite: true} }

func TestEdgeCases(t *testing.T) {
	// Source: hand computation of the values that remain defined; the
	// point of the table is no panic, a Reason, and no NaN where a value is
	// defined.
	nan := math.NaN()
	tests := []struct {
		name   string
		run    func() (reason string, checks []chk)
		reason string // substring that must appear; "" means Reason must be empty
	}{
		{"mean n=0", func() (string, []chk) {
			e := MeanEstimate(Moments{N: 0, Mean: nan, Var: nan})
			return e.Reason, nil
		}, "no units"},
		{"mean n=1", func() (string, []chk) {
			e := MeanEstimate(Moments{N: 1, Mean: 3, Var: nan})
			return e.Reason, []chk{val("Value", e.Value, 3)}
		}, "fewer than 2"},
		{"mean zero variance", func() (string, []chk) {
			e := MeanEstimate(Moments{N: 5, Mean: 3, Var: 0})
			return e.Reason, []chk{val("Value", e.Value, 3), val("StdError", e.StdError, 0)}
		}, ""},
		{"welch empty baseline", func() (string, []chk) {
			c := Welch(Moments{}, Moments{N: 10, Mean: 1, Var: 1}, 0.95)
			return c.Reason, nil
		}, "baseline: no units"},
		{"welch n=1", func() (string, []chk) {
			c := Welch(Moments{N: 1, Mean: 1}, Moments{N: 1, Mean: 2}, 0.95)
			return c.Reason, []chk{val("Difference", c.Difference, 1), val("Relative", c.Relative, 1)}
		}, "fewer than 2"},
		{"welch zero variance both", func() (string, []chk) {
			c := Welch(Moments{N: 10, Mean: 2}, Moments{N: 10, Mean: 3}, 0.95)
			return c.Reason, []chk{val("Difference", c.Difference, 1), val("StdError", c.StdError, 0), val("Relative", c.Relative, 0.5)}
		}, "standard error is zero"},
		{"welch baseline mean 0", func() (string, []chk) {
			c := Welch(Moments{N: 10, Mean: 0, Var: 1}, Moments{N: 10, Mean: 1, Var: 1}, 0.95)
			if !strings.Contains(c.RelReason, "baseline mean is zero") {
				return "RelReason missing: " + c.RelReason, nil
			}
			// SE = √(1/10 + 1/10); Welch df with equal n and variances is 18.
			return c.Reason, []chk{val("Difference", c.Difference, 1), val("StdError", c.StdError, math.Sqrt(0.2)),
				val("DF", c.DF, 18), defined("PValue", c.PValue), defined("CILow", c.CILow)}
		}, ""},
		{"welch bad level", func() (string, []chk) {
			c := Welch(Moments{N: 10, Mean: 0, Var: 1}, Moments{N: 10, Mean: 1, Var: 1}, 1.5)
			return c.Reason, []chk{defined("PValue", c.PValue), val("Difference", c.Difference, 1)}
		}, "level"},
		{"proportions all 0", func() (string, []chk) {
			c := TwoProportion(Moments{N: 100, Mean: 0}, Moments{N: 100, Mean: 0}, 0.95)
			if !strings.Contains(c.RelReason, "zero") {
				return "RelReason missing: " + c.RelReason, nil
			}
			return c.Reason, []chk{val("Difference", c.Difference, 0)}
		}, "same outcome"},
		{"proportions all 1", func() (string, []chk) {
			c := TwoProportion(Moments{N: 100, Mean: 1}, Moments{N: 80, Mean: 1}, 0.95)
			return c.Reason, []chk{val("Difference", c.Difference, 0), val("Relative", c.Relative, 0)}
		}, "same outcome"},
		{"proportion baseline 0", func() (string, []chk) {
			c := TwoProportion(Moments{N: 100, Mean: 0}, Moments{N: 100, Mean: 0.1}, 0.95)
			if c.RelReason == "" {
				return "RelReason missing", nil
			}
			// Pooled p = 0.05: z = 0.1/√(0.05·0.95·0.02).
			return c.Reason, []chk{val("Statistic", c.Statistic, 0.1/math.Sqrt(0.05*0.95*0.02)),
				val("StdError", c.StdError, math.Sqrt(0.1*0.9/100)), defined("CILow", c.CILow)}
		}, ""},
		{"proportions 0 vs 1", func() (string, []chk) {
			c := TwoProportion(Moments{N: 100, Mean: 0}, Moments{N: 100, Mean: 1}, 0.95)
			// Pooled p = 0.5: z = 1/√(0.25·0.02). The Newcombe interval is
			// defined even though the unpooled standard error is 0.
			return c.Reason, []chk{val("Statistic", c.Statistic, 1/math.Sqrt(0.005)), defined("PValue", c.PValue), defined("CILow", c.CILow)}
		}, ""},
		{"proportion empty", func() (string, []chk) {
			c := TwoProportion(Moments{N: 100, Mean: 0.1}, Moments{}, 0.95)
			return c.Reason, nil
		}, "treatment: no units"},
		{"proportion out of range", func() (string, []chk) {
			e := ProportionEstimate(Moments{N: 10, Mean: 1.2})
			return e.Reason, nil
		}, "outside [0, 1]"},
		{"ratio den mean 0", func() (string, []chk) {
			e := RatioEstimate(RatioMoments{N: 10, MeanNum: 0, MeanDen: 0})
			return e.Reason, nil
		}, "denominator mean is zero"},
		{"ratio n=1", func() (string, []chk) {
			e := RatioEstimate(RatioMoments{N: 1, MeanNum: 2, MeanDen: 4, VarNum: nan, VarDen: nan, Cov: nan})
			return e.Reason, []chk{val("Value", e.Value, 0.5)}
		}, "fewer than 2"},
		{"ratio diff baseline den 0", func() (string, []chk) {
			c := RatioDiff(RatioMoments{N: 10}, RatioMoments{N: 10, MeanNum: 1, MeanDen: 2, VarNum: 1, VarDen: 1}, 0.95)
			if c.RelReason == "" {
				return "RelReason missing", nil
			}
			return c.Reason, nil
		}, "baseline: denominator mean is zero"},
		{"ratio diff baseline ratio 0", func() (string, []chk) {
			c := RatioDiff(RatioMoments{N: 10, MeanNum: 0, MeanDen: 2, VarDen: 1},
				RatioMoments{N: 10, MeanNum: 1, MeanDen: 2, VarNum: 1, VarDen: 1}, 0.95)
			if c.RelReason != "baseline ratio is zero" {
				return "RelReason: " + c.RelReason, nil
			}
			return c.Reason, []chk{val("Difference", c.Difference, 0.5), defined("PValue", c.PValue)}
		}, ""},
		{"cuped empty treatment", func() (string, []chk) {
			c := CUPEDWelch(CovariateMoments{N: 10, MeanY: 1, MeanX: 1, VarY: 1, VarX: 1, CovYX: 0.5}, CovariateMoments{}, 0.95)
			return c.Reason, []chk{val("Theta", c.Theta, 0.5)}
		}, "treatment: no units"},
		{"cuped constant covariate", func() (string, []chk) {
			c := CUPEDWelch(CovariateMoments{N: 10, MeanY: 1, MeanX: 1, VarY: 1},
				CovariateMoments{N: 10, MeanY: 2, MeanX: 1, VarY: 1}, 0.95)
			if c.Adjusted || !strings.Contains(c.AdjustReason, "covariate does not vary") || c.Reason != "" {
				return "want the unadjusted fallback, got AdjustReason " + c.AdjustReason, nil
			}
			return c.AdjustReason, []chk{val("Unadjusted.Difference", c.Unadjusted.Difference, 1), defined("Unadjusted.PValue", c.Unadjusted.PValue),
				val("Difference", c.Difference, 1), defined("PValue", c.PValue)}
		}, "covariate does not vary"},
		{"cuped ratio den 0", func() (string, []chk) {
			c := CUPEDRatio(RatioCovariateMoments{N: 10, MeanX: 1, VarX: 1},
				RatioCovariateMoments{N: 10, MeanNum: 1, MeanDen: 2, MeanX: 1, VarNum: 1, VarDen: 1, VarX: 1}, 0.95)
			return c.Reason, nil
		}, "baseline: denominator mean is zero"},
		{"srm length mismatch", func() (string, []chk) {
			return SampleRatio([]float64{1, 2}, []float64{1}).Reason, nil
		}, "differ in length"},
		{"srm no units", func() (string, []chk) {
			return SampleRatio([]float64{0, 0}, []float64{1, 1}).Reason, nil
		}, "no units"},
		{"srm one variant", func() (string, []chk) {
			return SampleRatio([]float64{10}, []float64{1}).Reason, nil
		}, "fewer than 2 variants"},
		{"srm units in zero-weight variant", func() (string, []chk) {
			r := SampleRatio([]float64{50, 50, 3}, []float64{1, 1, 0})
			return r.Reason, []chk{val("Statistic", r.Statistic, math.Inf(1)), val("PValue", r.PValue, 0), val("DF", r.DF, 1)}
		}, "planned weight zero"},
		{"independence one row", func() (string, []chk) {
			return ChiSquareIndependence([][]float64{{1, 2}, {0, 0}}).Reason, nil
		}, "fewer than 2 non-empty"},
		{"independence ragged", func() (string, []chk) {
			return ChiSquareIndependence([][]float64{{1, 2}, {3}}).Reason, nil
		}, "differ in length"},
		{"independence empty", func() (string, []chk) {
			return ChiSquareIndependence(nil).Reason, nil
		}, "empty table"},
		{"cochran one usable segment", func() (string, []chk) {
			h := CochranQ([]float64{1, 2, 3}, []float64{1, 0, nan})
			return h.Reason, []chk{val("Dropped", float64(h.Dropped), 2)}
		}, "fewer than 2 segments"},
		{"multiple testing empty", func() (string, []chk) {
			return "", []chk{val("len", float64(len(Holm(nil))+len(BenjaminiHochberg(nil))+len(Bonferroni(nil))), 0)}
		}, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				if r := recover(); r != nil {
					t.Fatalf("panic: %v", r)
				}
			}()
			reason, checks := tt.run()
			switch {
			case tt.reason == "" && reason != "":
				t.Errorf("got Reason %q, want empty", reason)
			case tt.reason != "" && !strings.Contains(reason, tt.reason):
				t.Errorf("got Reason %q, want it to contain %q", reason, tt.reason)
			}
			for _, c := range checks {
				switch {
				case math.IsNaN(c.got):
					t.Errorf("%s: got NaN, want a defined value", c.name)
				case c.anyFinite:
				case math.IsInf(c.want, 0) && c.got == c.want:
				case !near(c.got, c.want, 1e-12):
					t.Errorf("%s: got %v, want %v", c.name, c.got, c.want)
				}
			}
		})
	}
}
