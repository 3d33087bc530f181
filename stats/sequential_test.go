package stats

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestSequentialPeeking checks the defining property by simulation: under
// no effect, a fixed-horizon 95% interval inspected after every batch
// excludes 0 at some look far more often than 5%, while the confidence
// sequence excludes 0 at any look in at most about 5% of streams.
// Source: the time-uniform coverage guarantee of Waudby-Smith et al. (2024),
// Theorem 2.2, checked here by seeded Monte Carlo with an exact binomial
// bound (gonum distuv.Binomial).
func TestSequentialPeeking(t *testing.T) {
	const (
		streams = 400
		looks   = 40
		batch   = 50 // units per arm per look
		alpha   = 0.05
	)
	rng := rand.New(rand.NewPCG(7, 11))
	rho := SequentialRho(alpha, 2*batch*looks)
	seqFail, fixedFail := 0, 0
	for s := 0; s < streams; s++ {
		var sa, sb, qa, qb float64
		var n float64
		seqHit, fixedHit := false, false
		for l := 0; l < looks; l++ {
			for i := 0; i < batch; i++ {
				a, b := rng.NormFloat64(), rng.NormFloat64()
				sa += a
				sb += b
				qa += a * a
				qb += b * b
			}
			n += batch
			ma, mb := sa/n, sb/n
			va := (qa - n*ma*ma) / (n - 1)
			vb := (qb - n*mb*mb) / (n - 1)
			se := math.Sqrt(va/n + vb/n)
			d := mb - ma
			sq := SequentialDiff(d, se, 2*n, rho, alpha)
			if sq.CILow > 0 || sq.CIHigh < 0 {
				seqHit = true
			}
			if math.Abs(d/se) > 1.959964 {
				fixedHit = true
			}
		}
		if seqHit {
			seqFail++
		}
		if fixedHit {
			fixedFail++
		}
	}
	t.Logf("null streams rejected at some look: sequence %d/%d, fixed-horizon %d/%d", seqFail, streams, fixedFail, streams)
	b := distuv.Binomial{N: streams, P: alpha}
	// Upper 0.999 quantile of the false-alarm count under the guarantee.
	limit := 0
	for k := 0; k <= streams; k++ {
		if b.CDF(float64(k)) >= 0.999 {
			limit = k
			break
		}
	}
	if seqFail > limit {
		t.Errorf("confidence sequence: %d of %d null streams excluded 0 at some look, want at most %d", seqFail, streams, limit)
	}
	// Peeking at a fixed-horizon test inflates its error well beyond alpha
	// (40 looks: roughly 20–30%, from memory of the peeking literature).
	if fixedFail < 2*limit {
		t.Errorf("fixed-horizon peeking: %d of %d streams, expected far more than %d", fixedFail, streams, limit)
	}
}

// TestSequentialPValue checks that the always-valid p-value is the α at
// which the sequence's boundary touches 0 (closed-form inversion).
func TestSequentialPValue(t *testing.T) {
	rho := SequentialRho(0.05, 10000)
	for _, tc := range []struct{ d, se, n float64 }{{0.5, 0.2, 5000}, {-1, 0.3, 20000}, {0.01, 0.1, 100}} {
		sq := SequentialDiff(tc.d, tc.se, tc.n, rho, 0.05)
		if sq.PValue >= 1 {
			continue
		}
		at := SequentialDiff(tc.d, tc.se, tc.n, rho, sq.PValue)
		edge := math.Min(math.Abs(at.CILow), math.Abs(at.CIHigh))
		if edge > 1e-9*math.Abs(tc.d)+1e-12 {
			t.Errorf("d=%v: boundary at alpha=p is %v from 0, want 0", tc.d, edge)
		}
		// A fixed-horizon p-value is always smaller (the price of peeking).
		if fixed := TwoSidedNormalP(tc.d / tc.se); fixed >= sq.PValue {
			t.Errorf("d=%v: fixed p %v >= sequential p %v", tc.d, fixed, sq.PValue)
		}
	}
	if sq := SequentialDiff(1, 0, 100, rho, 0.05); sq.Reason == "" {
		t.Errorf("zero standard error: want a reason")
	}
}

func TestSequentialTargetPerComparison(t *testing.T) {
	// Source: worked case by hand. An experiment planned for 30000 units
	// split 50/25/25 over baseline and two treatments: each comparison
	// involves only baseline + one treatment, 30000·(0.5 + 0.25) = 22500
	// units, not 30000. Weights given as 2:1:1 mean the same. With the
	// per-comparison target, ρ² = (−2 log α + log(−2 log α + 1))/n*
	// (Howard et al. 2021, eq. (3.11)); at α = 0.05, R 4.2:
	// sqrt((-2*log(0.05) + log(-2*log(0.05)+1))/22500) = 0.0187807875846.
	tests := []struct {
		name        string
		planned     float64
		weights     []float64
		base, treat int
		want        float64
	}{
		{"three arms, fractions", 30000, []float64{0.5, 0.25, 0.25}, 0, 1, 22500},
		{"three arms, ratios", 30000, []float64{2, 1, 1}, 0, 2, 22500},
		{"two arms", 30000, []float64{0.5, 0.5}, 0, 1, 30000},
		{"four equal arms", 40000, []float64{1, 1, 1, 1}, 0, 3, 20000},
		{"same index", 30000, []float64{1, 1}, 0, 0, math.NaN()},
		{"out of range", 30000, []float64{1, 1}, 0, 2, math.NaN()},
		{"zero weights", 30000, []float64{0, 0}, 0, 1, math.NaN()},
		{"negative weight", 30000, []float64{1, -1}, 0, 1, math.NaN()},
		{"no plan", 0, []float64{1, 1}, 0, 1, math.NaN()},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got := SequentialTarget(tt.planned, tt.weights, tt.base, tt.treat)
			if math.IsNaN(tt.want) {
				if !math.IsNaN(got) {
					t.Errorf("got %v, want NaN", got)
				}
				return
			}
			checkNear(t, "target", got, tt.want, 1e-15)
		})
	}
	checkNear(t, "rho", SequentialRho(0.05, SequentialTarget(30000, []float64{0.5, 0.25, 0.25}, 0, 1)), 0.0187807875846, 1e-10)
}
