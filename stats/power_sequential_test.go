package stats

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPowerSequentialMDE checks the boundary and the MDE against the
// formula of Howard et al. (2021), eq. (3.11) for ρ and the mixture
// half-width of SequentialDiff, evaluated independently in R 4.2.2
// (σ² = 4, i.e. unit variance in each arm with an even split):
//
//	for (a in c(0.05, 0.1)) for (n in c(1000, 40000)) {
//	  l <- -2*log(a); rho2 <- (l + log(l+1))/10000; v <- n*rho2
//	  cc <- sqrt(2*(v+1)/v*log(sqrt(v+1)/a)); se <- sqrt(4/n)
//	  cat(sprintf("{%g, %g, %.12g, %.12g},\n", a, n, cc, (cc+qnorm(0.8))*se)) }
//	l <- -2*log(0.05); v <- l + log(l+1); cc <- sqrt(2*(v+1)/v*log(sqrt(v+1)/0.05))
//	sprintf("%.12g", (cc+qnorm(0.9))^2*(1/0.5+1/0.5)/0.05^2)   # 29815.0747154
func TestPowerSequentialMDE(t *testing.T) {
	arms := Arms{WBase: 1, WTreat: 1, VarBase: 1, VarTreat: 1}
	for _, tc := range []struct{ alpha, n, c, mde float64 }{
		{0.05, 1000, 3.85505463353, 0.297043863432},
		{0.05, 40000, 3.12711414369, 0.0396873537726},
		{0.1, 1000, 3.6258465162, 0.282547469253},
		{0.1, 40000, 2.86119098297, 0.0370281221654},
	} {
		rho := SequentialRho(tc.alpha, 10000)
		checkNear(t, "boundary", powerMixtureZ(tc.n, rho, tc.alpha), tc.c, 1e-11)
		se := arms.SE(tc.n)
		mde := SequentialMDE(se, tc.n, rho, tc.alpha, 0.8)
		checkNear(t, "SequentialMDE", mde, tc.mde, 1e-11)
		// The boundary is the one SequentialDiff uses: at d = c·se its
		// interval touches 0.
		sq := SequentialDiff(tc.c*se, se, tc.n, rho, tc.alpha)
		checkAbs(t, "SequentialDiff lower end at the boundary", sq.CILow, 0, 1e-9*se)
		// Larger than the fixed-horizon MDE.
		if fixed := NormalMDE(se, tc.alpha, 0.8, true); !(mde > fixed) {
			t.Errorf("alpha=%v n=%v: sequential MDE %v not larger than fixed-horizon %v", tc.alpha, tc.n, mde, fixed)
		}
		// SequentialN inverts SequentialMDE for a fixed ρ.
		checkNear(t, "SequentialN round trip", SequentialN(arms, mde, rho, tc.alpha, 0.8), tc.n, 1e-9)
	}
	checkNear(t, "SequentialN tuned", SequentialN(arms, 0.05, 0, 0.05, 0.9), 29815.0747154, 1e-10)
	// Tuned ρ at the answer: the MDE at that n with ρ tuned to it is the effect.
	n := SequentialN(arms, 0.05, 0, 0.05, 0.9)
	checkNear(t, "tuned round trip", SequentialMDE(arms.SE(n), n, SequentialRho(0.05, n), 0.05, 0.9), 0.05, 1e-12)
	checkNear(t, "rho 0 means tuned", SequentialMDE(0.1, 5000, 0, 0.05, 0.8), SequentialMDE(0.1, 5000, SequentialRho(0.05, 5000), 0.05, 0.8), 1e-15)
}

// TestPowerSequentialLargerThanFixed checks SequentialMDE > NormalMDE over a
// grid of levels, sizes, mixing parameters and powers (the inequality
// proved in SequentialMDE's comment).
func TestPowerSequentialLargerThanFixed(t *testing.T) {
	for _, alpha := range []float64{0.001, 0.01, 0.05, 0.1, 0.2, 0.5} {
		for _, n := range []float64{10, 1e3, 1e5, 1e8} {
			for _, nStar := range []float64{0, 10, 1e4, 1e9} {
				rho := 0.0
				if nStar > 0 {
					rho = SequentialRho(alpha, nStar)
				}
				for _, pw := range []float64{0.5, 0.8, 0.95} {
					seq, fixed := SequentialMDE(1, n, rho, alpha, pw), NormalMDE(1, alpha, pw, true)
					if !(seq > fixed) {
						t.Errorf("alpha=%v n=%v nStar=%v power=%v: sequential %v, fixed %v", alpha, n, nStar, pw, seq, fixed)
					}
				}
			}
		}
	}
}

// TestPowerSequentialMonteCarlo checks the planned power by simulation:
// streams of normal data (unit variance, even split) monitored after
// every batch with SequentialDiff. At the effect SequentialMDE returns for
// 80% power, the share of streams whose interval excludes 0 at the final
// look matches 80% (exact binomial range at level 0.999), and the share
// that excludes 0 at some look is at least that range's lower end; at the
// smaller fixed-horizon MDE the sequential power falls below it.
// Source: seeded Monte Carlo with BinomialRange.
func TestPowerSequentialMonteCarlo(t *testing.T) {
	const (
		streams = 1000
		looks   = 20
		batch   = 100 // units per arm per look
		alpha   = 0.05
		power   = 0.8
	)
	nFinal := float64(2 * batch * looks)
	rho := SequentialRho(alpha, nFinal/2) // tuned to mid-run, not to the end
	arms := Arms{WBase: 1, WTreat: 1, VarBase: 1, VarTreat: 1}
	seqMDE := SequentialMDE(arms.SE(nFinal), nFinal, rho, alpha, power)
	fixedMDE := arms.MDE(nFinal, alpha, power, true)
	run := func(seed uint64, effect float64) (final, anyLook int) {
		rng := rand.New(rand.NewPCG(seed, 99))
		for s := 0; s < streams; s++ {
			var sa, sb, qa, qb, n float64
			hit := false
			for l := 0; l < looks; l++ {
				for i := 0; i < batch; i++ {
					a, b := rng.NormFloat64(), effect+rng.NormFloat64()
					sa += a
					sb += b
					qa += a * a
					qb += b * b
				}
				n += batch
				ma, mb := sa/n, sb/n
				se := math.Sqrt((qa-n*ma*ma)/(n-1)/n + (qb-n*mb*mb)/(n-1)/n)
				sq := SequentialDiff(mb-ma, se, 2*n, rho, alpha)
				if sq.CILow > 0 || sq.CIHigh < 0 {
					hit = true
					if l == looks-1 {
						final++
					}
				}
			}
			if hit {
				anyLook++
			}
		}
		return final, anyLook
	}
	lo, hi := BinomialRange(streams, power, 0.999)
	final, anyLook := run(1, seqMDE)
	t.Logf("at sequential MDE %.4f: final look %d/%d, any look %d/%d (80%% range [%d, %d])", seqMDE, final, streams, anyLook, streams, lo, hi)
	if final < lo || final > hi {
		t.Errorf("final-look detections %d outside [%d, %d]", final, lo, hi)
	}
	if anyLook < lo {
		t.Errorf("any-look detections %d below %d", anyLook, lo)
	}
	_, anyFixed := run(2, fixedMDE)
	t.Logf("at fixed-horizon MDE %.4f: any look %d/%d", fixedMDE, anyFixed, streams)
	if anyFixed >= lo {
		t.Errorf("at the fixed-horizon MDE, sequential monitoring detected %d of %d, want below %d", anyFixed, streams, lo)
	}
}

func TestPowerSequentialInvalid(t *testing.T) {
	arms := Arms{WBase: 1, WTreat: 1, VarBase: 1, VarTreat: 1}
	for name, got := range map[string]float64{
		"MDE se 0":        SequentialMDE(0, 100, 0, 0.05, 0.8),
		"MDE n 0":         SequentialMDE(1, 0, 0, 0.05, 0.8),
		"MDE rho < 0":     SequentialMDE(1, 100, -1, 0.05, 0.8),
		"MDE alpha 1":     SequentialMDE(1, 100, 0, 1, 0.8),
		"N effect 0":      SequentialN(arms, 0, 0, 0.05, 0.8),
		"N power 1":       SequentialN(arms, 0.1, 0, 0.05, 1),
		"N bad arms":      SequentialN(Arms{}, 0.1, 0, 0.05, 0.8),
		"N rho NaN":       SequentialN(arms, 0.1, math.NaN(), 0.05, 0.8),
		"N effect NaN":    SequentialN(arms, math.NaN(), 0.01, 0.05, 0.8),
		"N alpha invalid": SequentialN(arms, 0.1, 0.01, 0, 0.8),
	} {
		if !math.IsNaN(got) {
			t.Errorf("%s: got %v, want NaN", name, got)
		}
	}
}
