package stats

import "math"

// Guard verdicts.
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
