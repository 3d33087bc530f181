package stats

import "math"

// Harmful directions of a guard metric.
const (
	HarmIncrease = "increase" // larger values are worse (e.g. latency, errors)
	HarmDecrease = "decrease" // smaller values are worse (e.g. retention)
)

// Verdict is the verdict on a guard metric (Guard). Every verdict is
// reached at one one-sided level, the same for both directions.
type Verdict string

// Guard verdicts. L and U are the one-sided lower and upper confidence
// bounds of the relative change at the stated one-sided level, m the
// margin; shown for harm "increase" (mirrored for "decrease").
const (
	// VerdictHarmBeyondMargin: L > m, the change is shown to exceed the
	// tolerated margin in the harmful direction.
	VerdictHarmBeyondMargin Verdict = "harm beyond margin"
	// VerdictHarmMayExceedMargin: 0 < L ≤ m ≤ U, harm is shown and the data
	// do not rule out that it exceeds the margin.
	VerdictHarmMayExceedMargin Verdict = "harm shown, margin not ruled out"
	// VerdictHarmWithinMargin: 0 < L and U < m, harm is shown and is shown
	// to be within the margin.
	VerdictHarmWithinMargin Verdict = "harm shown, within margin"
	// VerdictNoHarmBeyondMargin: L ≤ 0 and U < m, no harm is shown and harm
	// beyond the margin is ruled out (non-inferiority).
	VerdictNoHarmBeyondMargin Verdict = "no harm beyond margin"
	// VerdictInconclusive: L ≤ 0 and U ≥ m, or the relative set is not a
	// bounded interval; too little data to decide either way.
	VerdictInconclusive Verdict = "inconclusive"
	// VerdictUndefined: the relative change or its set is undefined (see
	// Reason).
	VerdictUndefined Verdict = "undefined"
)

// Alarming reports whether the verdict calls for attention: harm is shown
// and the data do not show it to be within the margin
// (VerdictHarmBeyondMargin or VerdictHarmMayExceedMargin).
func (v Verdict) Alarming() bool {
	return v == VerdictHarmBeyondMargin || v == VerdictHarmMayExceedMargin
}

// HarmShown reports whether the verdict shows harm of any size at the
// one-sided level.
func (v Verdict) HarmShown() bool {
	return v == VerdictHarmBeyondMargin || v == VerdictHarmMayExceedMargin || v == VerdictHarmWithinMargin
}

// GuardVerdict is the result of Guard.
type GuardVerdict struct {
	Verdict Verdict
	Harm    string  // HarmIncrease or HarmDecrease
	Margin  float64 // tolerated relative change in the harmful direction (≥ 0)
	Level   float64 // one-sided confidence level of each bound
	// Lower and Upper are the one-sided confidence bounds of the relative
	// change at Level: the ends of the comparison's relative set at the
	// two-sided level 2·Level − 1. NaN unless the set is bounded.
	Lower, Upper float64
	// HarmP is the one-sided p-value of the comparison's test against "no
	// change" in the harmful direction; HarmP < 1 − Level exactly when the
	// bound on the favourable side excludes 0.
	HarmP float64
	// NoHarmP is the one-sided non-inferiority p-value: of the hypothesis
	// that the relative change is at or beyond the margin on the harmful
	// side (≥ m for "increase", ≤ −m for "decrease"), from the same pivot
	// as the relative set. NoHarmP < 1 − Level exactly when the bound on
	// the harmful side is inside the margin. NaN unless the set is bounded.
	NoHarmP float64
	Reason  string // why the verdict is undefined or inconclusive by shape; empty otherwise
}

// Guard decides a guard metric's verdict from a comparison's relative
// change, with harm in direction harm ("increase" or "decrease"), a
// tolerated relative margin (≥ 0, e.g. 0.01 for 1%) and a one-sided level
// (e.g. the spec's confidence 0.95, so that each claim errs with
// probability at most 0.05). Both one-sided bounds come from the
// comparison's own relative set (Fieller 1954, or Koopman 1984 for two
// proportions; see Comparison.RelativeSetAt) at the two-sided level
// 2·level − 1, whose ends are one-sided bounds at level. Reading the bounds
// against 0 and the margin is the non-inferiority logic of Schuirmann
// (1987), "A comparison of the two one-sided tests procedure and the power
// approach for assessing the equivalence of average bioavailability",
// Journal of Pharmacokinetics and Biopharmaceutics 15, and Piaggio et al.
// (2012), "Reporting of noninferiority and equivalence randomized trials",
// JAMA 308; see the Verdict constants for the rules. Because the set
// agrees with the test, L > 0 (harm shown) exactly when the one-sided test
// of the difference rejects at 1 − level.
//
// An unbounded or complement set (the baseline not significantly different
// from 0) gives VerdictInconclusive with the set's reason; an undefined
// set, bad direction, margin or level gives VerdictUndefined.
func Guard(c Comparison, harm string, margin, level float64) GuardVerdict {
	nan := math.NaN()
	g := GuardVerdict{Verdict: VerdictUndefined, Harm: harm, Margin: margin, Level: level, Lower: nan, Upper: nan, HarmP: nan, NoHarmP: nan}
	switch {
	case harm != HarmIncrease && harm != HarmDecrease:
		g.Reason = `harmful direction must be "increase" or "decrease"`
	case !finite(margin) || margin < 0:
		g.Reason = "margin must be a finite number ≥ 0"
	case !(level > 0.5 && level < 1):
		g.Reason = "one-sided level must be in (0.5, 1)"
	}
	if g.Reason != "" {
		return g
	}
	if finite(c.Statistic) && !math.IsNaN(c.DF) {
		// One-sided p in the harmful direction from the two-sided p.
		t := c.Statistic
		if harm == HarmDecrease {
			t = -t
		}
		half := TwoSidedTP(t, c.DF) / 2
		if t > 0 {
			g.HarmP = half
		} else {
			g.HarmP = 1 - half
		}
	}
	set := c.RelativeSetAt(2*level - 1)
	switch set.Shape {
	case "":
		g.Reason = set.Reason
		return g
	case ShapeBounded:
	default:
		g.Verdict = VerdictInconclusive
		g.Reason = set.Reason
		return g
	}
	g.Lower, g.Upper = set.Low, set.High
	if harm == HarmIncrease {
		z, df := c.relPivot(1 + margin)
		g.NoHarmP = lowerTail(z, df)
	} else {
		z, df := c.relPivot(1 - margin)
		g.NoHarmP = lowerTail(-z, df)
	}
	// Map "decrease" onto "increase" by flipping the sign.
	lo, hi := g.Lower, g.Upper
	if harm == HarmDecrease {
		lo, hi = -g.Upper, -g.Lower
	}
	switch {
	case lo > margin:
		g.Verdict = VerdictHarmBeyondMargin
	case lo > 0 && hi >= margin:
		g.Verdict = VerdictHarmMayExceedMargin
	case lo > 0:
		g.Verdict = VerdictHarmWithinMargin
	case hi < margin:
		g.Verdict = VerdictNoHarmBeyondMargin
	default:
		g.Verdict = VerdictInconclusive
	}
	return g
}
