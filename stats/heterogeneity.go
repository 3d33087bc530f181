package stats

import "math"

// Heterogeneity summarises how much a treatment effect varies across
// segments.
type Heterogeneity struct {
	Q        float64 // Cochran's Q
	DF       float64 // number of segments used minus one
	PValue   float64 // P(χ²_DF ≥ Q)
	I2       float64 // Higgins–Thompson I², in [0, 1]
	Pooled   float64 // inverse-variance weighted mean effect
	PooledSE float64 // its standard error, 1/√Σw
	Segments int     // segments used
	Dropped  int     // segments skipped because effect or SE was undefined
	Reason   string  // why the fields are NaN; empty when fine
}

// CochranQ tests whether per-segment effects (for example the difference
// or relative lift in each segment) are homogeneous, using
// inverse-variance weights w_i = 1/SE_i² (Cochran 1954, "The combination
// of estimates from different experiments", Biometrics 10):
//
//	θ̂ = Σ w_i·θ_i / Σ w_i,  Q = Σ w_i·(θ_i − θ̂)²,  df = k − 1
//	p = P(χ²_df ≥ Q)
//
// and the share of variation due to heterogeneity rather than chance
// (Higgins & Thompson 2002, "Quantifying heterogeneity in a
// meta-analysis", Statistics in Medicine 21):
//
//	I² = max(0, (Q − df)/Q)   (0 when Q = 0)
//
// Segments whose effect is not finite or whose SE is not finite and
// positive (for example a segment with fewer than two units) are skipped
// and counted in Dropped. Preconditions: len(effects) == len(se) and at
// least two usable segments.
func CochranQ(effects, se []float64) Heterogeneity {
	nan := math.NaN()
	h := Heterogeneity{Q: nan, DF: nan, PValue: nan, I2: nan, Pooled: nan, PooledSE: nan}
	if len(effects) != len(se) {
		h.Reason = "effects and standard errors differ in length"
		return h
	}
	var sw, swe float64
	for i, e := range effects {
		if !finite(e) || !finite(se[i]) || se[i] <= 0 {
			h.Dropped++
			continue
		}
		w := 1 / (se[i] * se[i])
		sw += w
		swe += w * e
		h.Segments++
	}
	if h.Segments < 2 {
		h.Reason = "fewer than 2 segments with a defined effect and standard error"
		return h
	}
	h.Pooled = swe / sw
	h.PooledSE = 1 / math.Sqrt(sw)
	var q float64
	for i, e := range effects {
		if !finite(e) || !finite(se[i]) || se[i] <= 0 {
			continue
		}
		d := e - h.Pooled
		q += d * d / (se[i] * se[i])
	}
	h.Q = q
	h.DF = float64(h.Segments - 1)
	h.PValue = chiSquareSurvival(q, h.DF)
	h.I2 = 0
	if q > 0 {
		h.I2 = math.Max(0, (q-h.DF)/q)
	}
	return h
}
