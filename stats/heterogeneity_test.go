package stats

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

func TestCochranQClosedForm(t *testing.T) {
	// Source: hand computation with closed-form chi-square tails.
	//   effects 1, 2, 3, SE 1: pooled 2, Q = 2, df 2, p = exp(−1),
	//     I² = max(0, (2 − 2)/2) = 0.
	//   effects 0, 4, SE 1: pooled 2, Q = 8, df 1, p = 2Φ(−√8) = erfc(2),
	//     I² = 7/8.
	//   effects 1, 1, 1: Q = 0, p = 1, I² = 0.
	tests := []struct {
		name             string
		effects, se      []float64
		q, df, p, i2, th float64
	}{
		{"three", []float64{1, 2, 3}, []float64{1, 1, 1}, 2, 2, math.Exp(-1), 0, 2},
		{"two", []float64{0, 4}, []float64{1, 1}, 8, 1, math.Erfc(2), 7.0 / 8, 2},
		{"homogeneous", []float64{1, 1, 1}, []float64{0.5, 1, 2}, 0, 2, 1, 0, 1},
		{"undefined segment dropped", []float64{0, math.NaN(), 4}, []float64{1, 1, 1}, 8, 1, math.Erfc(2), 7.0 / 8, 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h := CochranQ(tt.effects, tt.se)
			checkAbs(t, "Q", h.Q, tt.q, 1e-12)
			checkNear(t, "DF", h.DF, tt.df, 0)
			checkNear(t, "PValue", h.PValue, tt.p, 1e-9)
			checkAbs(t, "I2", h.I2, tt.i2, 1e-12)
			checkNear(t, "Pooled", h.Pooled, tt.th, 1e-12)
			if h.Reason != "" {
				t.Errorf("got Reason %q, want empty", h.Reason)
			}
		})
	}
}

func TestCochranQWeightedLeastSquares(t *testing.T) {
	// Source: independent computation with gonum/mat. Q is the residual sum
	// of squares of the weighted least-squares fit of the effects on an
	// intercept (rows scaled by 1/SE); the intercept is the pooled effect;
	// the p-value is gonum's ChiSquared{K: k−1}.Survival(Q).
	effects := []float64{0.021, -0.004, 0.035, 0.012, 0.050, 0.018}
	se := []float64{0.010, 0.008, 0.015, 0.006, 0.020, 0.011}
	k := len(effects)
	A := mat.NewDense(k, 1, nil)
	b := mat.NewVecDense(k, nil)
	for i := range effects {
		A.Set(i, 0, 1/se[i])
		b.SetVec(i, effects[i]/se[i])
	}
	var beta mat.VecDense
	if err := beta.SolveVec(A, b); err != nil {
		t.Fatal(err)
	}
	var fit, res mat.VecDense
	fit.MulVec(A, &beta)
	res.SubVec(b, &fit)
	q := mat.Dot(&res, &res)
	h := CochranQ(effects, se)
	checkNear(t, "Pooled", h.Pooled, beta.AtVec(0), 1e-9)
	checkNear(t, "Q", h.Q, q, 1e-9)
	checkNear(t, "PValue", h.PValue, distuv.ChiSquared{K: float64(k - 1)}.Survival(q), 1e-9)
	checkNear(t, "I2", h.I2, math.Max(0, (q-float64(k-1))/q), 1e-9)
}
