package stats

// WeekdayMix tests whether the variants received the same mix of
// weekdays: counts[i][d] is the number of units of variant i first exposed
// on weekday d (any fixed order of the seven days). A variant that
// started later, paused, or was ramped up on particular days has a
// different weekday mix, which confounds its comparison with the others
// when the metric varies by weekday.
//
// It is Pearson's chi-square test of independence of the variants × days
// table (ChiSquareIndependence; Pearson 1900, with the degrees of freedom
// of Fisher 1922):
//
//	X² = Σ_{i,d} (O_id − E_id)²/E_id,  E_id = R_i·C_d/n,  df = (r − 1)(c − 1)
//
// Days with no units in any variant are dropped (for an experiment
// shorter than a week), as are variants without units. Expected has one
// row per variant and seven columns.
//
// Preconditions: at least two variants and two days with units; counts
// finite and ≥ 0.
func WeekdayMix(counts [][7]float64) ChiSquareResult {
	table := make([][]float64, len(counts))
	for i := range counts {
		table[i] = counts[i][:]
	}
	return ChiSquareIndependence(table)
}
