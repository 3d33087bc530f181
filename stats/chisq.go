package stats

import "math"

// ChiSquareResult is the outcome of a Pearson chi-square test.
type ChiSquareResult struct {
	Statistic float64 // Pearson X²
	DF        float64 // degrees of freedom
	PValue    float64 // upper-tail probability P(χ²_DF ≥ Statistic)
	// Expected holds the expected counts under the null: one per category
	// for SampleRatio, one row per table row for ChiSquareIndependence.
	// Categories or rows and columns that were dropped (see the functions)
	// have expected count 0.
	Expected [][]float64
	Reason   string // why Statistic/PValue are undefined; empty when fine
}

func nanChiSquare(reason string) ChiSquareResult {
	return ChiSquareResult{Statistic: math.NaN(), DF: math.NaN(), PValue: math.NaN(), Reason: reason}
}

// SampleRatio tests for a sample-ratio mismatch: whether the observed unit
// counts per variant are consistent with the planned allocation weights.
// It is Pearson's chi-square goodness-of-fit test (Pearson 1900, "On the
// criterion that a given system of deviations from the probable in the
// case of a correlated system of variables is such that it can be
// reasonably supposed to have arisen from random sampling", Philosophical
// Magazine 50):
//
//	E_i = n·w_i/Σw,  X² = Σ_i (O_i − E_i)²/E_i,  df = k − 1
//	p = P(χ²_df ≥ X²)
//
// over the k variants with positive planned weight. Weights need not sum
// to one. A variant with weight 0 and count 0 is ignored; a variant with
// weight 0 but units assigned is a mismatch by construction and gives
// X² = +Inf, p = 0 with a Reason. Expected has a single row.
//
// Preconditions: len(observed) == len(weights), counts and weights finite
// and ≥ 0, at least two positive weights and at least one unit.
func SampleRatio(observed, weights []float64) ChiSquareResult {
	if len(observed) != len(weights) {
		return nanChiSquare("observed counts and weights differ in length")
	}
	var n, wsum float64
	k := 0
	for i := range observed {
		o, w := observed[i], weights[i]
		if !finite(o) || o < 0 {
			return nanChiSquare("observed count is negative or not a finite number")
		}
		if !finite(w) || w < 0 {
			return nanChiSquare("weight is negative or not a finite number")
		}
		n += o
		wsum += w
		if w > 0 {
			k++
		}
	}
	if k < 2 {
		return nanChiSquare("fewer than 2 variants with positive weight")
	}
	if n == 0 {
		return nanChiSquare(reasonNoUnits)
	}
	exp := make([]float64, len(observed))
	var x2 float64
	for i, o := range observed {
		if weights[i] == 0 {
			if o > 0 {
				r := ChiSquareResult{Statistic: math.Inf(1), DF: float64(k - 1), PValue: 0,
					Expected: [][]float64{exp}, Reason: "units observed in a variant with planned weight zero"}
				fillExpected(exp, observed, weights, n, wsum)
				return r
			}
			continue
		}
		e := n * weights[i] / wsum
		exp[i] = e
		x2 += (o - e) * (o - e) / e
	}
	df := float64(k - 1)
	return ChiSquareResult{Statistic: x2, DF: df, PValue: chiSquareSurvival(x2, df), Expected: [][]float64{exp}}
}

func fillExpected(exp, observed, weights []float64, n, wsum float64) {
	for i := range observed {
		exp[i] = n * weights[i] / wsum
	}
}

// ChiSquareIndependence is Pearson's chi-square test of independence for
// an r×c contingency table of counts, for example segments (rows) by
// variants (columns) (Pearson 1900; degrees of freedom as corrected by
// Fisher 1922, "On the interpretation of χ² from contingency tables, and
// the calculation of P", Journal of the Royal Statistical Society 85):
//
//	E_ij = R_i·C_j/n,  X² = Σ_ij (O_ij − E_ij)²/E_ij,  df = (r − 1)(c − 1)
//	p = P(χ²_df ≥ X²)
//
// with R_i, C_j the row and column totals. No continuity correction is
// applied, so for a 2×2 table X² equals the square of the pooled
// two-proportion z (TwoProportion). Rows and columns whose total is zero
// carry no information and are dropped before r, c and df are counted.
//
// Preconditions: a rectangular table of finite counts ≥ 0 with at least
// two non-empty rows and two non-empty columns.
func ChiSquareIndependence(table [][]float64) ChiSquareResult {
	if len(table) == 0 {
		return nanChiSquare("empty table")
	}
	cols := len(table[0])
	rowSum := make([]float64, len(table))
	colSum := make([]float64, cols)
	var n float64
	for i, row := range table {
		if len(row) != cols {
			return nanChiSquare("table rows differ in length")
		}
		for j, o := range row {
			if !finite(o) || o < 0 {
				return nanChiSquare("count is negative or not a finite number")
			}
			rowSum[i] += o
			colSum[j] += o
			n += o
		}
	}
	r, c := 0, 0
	for _, s := range rowSum {
		if s > 0 {
			r++
		}
	}
	for _, s := range colSum {
		if s > 0 {
			c++
		}
	}
	if r < 2 || c < 2 {
		return nanChiSquare("fewer than 2 non-empty rows or columns")
	}
	exp := make([][]float64, len(table))
	var x2 float64
	for i, row := range table {
		exp[i] = make([]float64, cols)
		for j, o := range row {
			if rowSum[i] == 0 || colSum[j] == 0 {
				continue
			}
			e := rowSum[i] * colSum[j] / n
			exp[i][j] = e
			x2 += (o - e) * (o - e) / e
		}
	}
	df := float64((r - 1) * (c - 1))
	return ChiSquareResult{Statistic: x2, DF: df, PValue: chiSquareSurvival(x2, df), Expected: exp}
}
