package stats

import "math"

// Guard verdicts of the deprecated GuardCheck and GuardComparison; Guard
// returns a Verdict instead.
const (
	HarmShown    = "harm shown"
	NoHarmShown  = "no harm shown"
	Inconclusive = "inconclusive"
)

// Harmful directions of a guard metric.
const (
	HarmIncrease = "increase" // larger values are worse (e.g. latency, errors)
	HarmDecrease = "decrease" // smaller values are worse (e.g. retention)
)

// GuardResult is the verdict on a guard metric's relative change.
type GuardResult struct {
	Verdict string // HarmShown, NoHarmShown or Inconclusive
	// PValue is the one-sided non-inferiority p-value: the probability,
	// under a true change exactly at the margin on the harmful side, of a
	// change at least as favourable as the one observed. Small values
	// support "no harm beyond the margin".
	PValue float64
	// Bound is the one-sided confidence bound at the level on the harmful
	// side (upper bound for "increase", lower bound for "decrease").
	Bound float64
	// CILow and CIHigh are the two-sided interval at the level.
	CILow, CIHigh float64
	Reason        string // why the verdict could not be reached; empty when fine
}

// GuardCheck decides whether a guard metric's relative change rel (with
// standard error se, e.g. Comparison.Relative and RelStdError) shows harm
// beyond a tolerated relative margin (margin ≥ 0, e.g. 0.01 for 1%) in the
// harmful direction ("increase" or "decrease"). With z_a the standard
// normal quantile and, for direction "increase" (mirror for "decrease"):
//
//	one-sided non-inferiority test of H0: rel ≥ margin against H1: rel < margin
//	  p = Φ((rel − margin)/se)
//	  Bound = rel + z_level·se
//	two-sided interval rel ± z_{(1+level)/2}·se
//
//	"no harm shown"  when Bound < margin (equivalently p < 1 − level)
//	"harm shown"     when the two-sided interval lies entirely beyond the
//	                 margin on the harmful side (CILow > margin)
//	"inconclusive"   otherwise
//
// The one-sided test at the margin is the construction of Schuirmann
// (1987), "A comparison of the two one-sided tests procedure and the power
// approach for assessing the equivalence of average bioavailability",
// Journal of Pharmacokinetics and Biopharmaceutics 15, and reading the
// interval against the margin follows Piaggio et al. (2012), "Reporting of
// noninferiority and equivalence randomized trials: extension of the
// CONSORT 2010 statement", JAMA 308. The two outcomes exclude each other,
// since Bound lies beyond the two-sided interval's near end.
//
// Preconditions: finite rel, finite se > 0, margin ≥ 0, 0 < level < 1 and a
// known direction; otherwise the verdict is "inconclusive" with a Reason.
//
// Deprecated: "harm shown" is decided by a two-sided interval at level and
// "no harm shown" by a one-sided bound at level, so the two directions use
// different error rates, and the symmetric interval rel ± z·se can
// disagree with the test of the difference. Use Guard.
func GuardCheck(rel, se float64, harm string, margin, level float64) GuardResult {
	nan := math.NaN()
	g := GuardResult{Verdict: Inconclusive, PValue: nan, Bound: nan, CILow: nan, CIHigh: nan}
	switch {
	case harm != HarmIncrease && harm != HarmDecrease:
		g.Reason = `harmful direction must be "increase" or "decrease"`
	case !finite(margin) || margin < 0:
		g.Reason = "margin must be a finite number ≥ 0"
	case !validLevel(level):
		g.Reason = reasonBadLevel
	case !finite(rel):
		g.Reason = "relative change is undefined"
	case !finite(se) || se < 0:
		g.Reason = reasonUndefinedSE
	case se == 0:
		g.Reason = "standard error is zero"
	}
	if g.Reason != "" {
		return g
	}
	z1 := NormalQuantile(level)
	z2 := NormalQuantile((1 + level) / 2)
	g.CILow, g.CIHigh = rel-z2*se, rel+z2*se
	if harm == HarmIncrease {
		g.PValue = upperNormal((margin - rel) / se) // Φ((rel − margin)/se)
		g.Bound = rel + z1*se
		switch {
		case g.CILow > margin:
			g.Verdict = HarmShown
		case g.Bound < margin:
			g.Verdict = NoHarmShown
		}
		return g
	}
	g.PValue = upperNormal((rel + margin) / se) // Φ((−margin − rel)/se)
	g.Bound = rel - z1*se
	switch {
	case g.CIHigh < -margin:
		g.Verdict = HarmShown
	case g.Bound > -margin:
		g.Verdict = NoHarmShown
	}
	return g
}

// GuardComparison applies GuardCheck to a comparison's relative lift and
// its delta-method standard error. When the relative lift is undefined the
// verdict is "inconclusive" and Reason carries c.RelReason.
//
// Deprecated: use Guard, which decides both directions at one one-sided
// level from the comparison's Fieller (or score) relative set.
func GuardComparison(c Comparison, harm string, margin, level float64) GuardResult {
	g := GuardCheck(c.Relative, c.RelStdError, harm, margin, level)
	if c.RelReason != "" && g.Verdict == Inconclusive && g.Reason != "" {
		g.Reason = c.RelReason
	}
	return g
}

// SEFromCI recovers the standard error behind a symmetric normal interval
// (low, high) at the given two-sided level,
//
//	SE = (high − low) / (2·z_{(1+level)/2})
//
// (Altman & Bland 2011, "How to obtain the P value from a confidence
// interval", BMJ 343) for use with GuardCheck when only an interval is reported. It returns
// NaN when the interval or level is unusable.
func SEFromCI(low, high, level float64) float64 {
	if !finite(low) || !finite(high) || high < low || !validLevel(level) {
		return math.NaN()
	}
	return (high - low) / (2 * NormalQuantile((1+level)/2))
}

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
