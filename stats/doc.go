// Package stats turns per-variant sufficient statistics into estimates and
// hypothesis tests.
//
// It sits at the end of the pipeline. Metric definitions are compiled into
// warehouse SQL; that SQL returns, for each variant (and optionally each
// segment), a handful of sufficient statistics: unit counts, means, sample
// variances and covariances. This package turns those numbers into
// per-variant estimates with standard errors, treatment-versus-baseline
// comparisons (differences, relative lifts, confidence intervals and
// p-values), variance-reduced comparisons using a pre-experiment covariate
// (CUPED), sample-ratio-mismatch checks, multiple-testing adjustments,
// heterogeneity across segments and verdicts for guardrail metrics.
//
// Every function is pure: plain values in, plain values out, no I/O, no
// global state. Variances supplied by callers are sample variances with
// denominator n-1, which is what SQL VAR_SAMP and COVAR_SAMP return.
//
// Nothing here panics on awkward data. When a quantity is undefined (fewer
// than two units, zero variance, a baseline mean of zero, an empty variant,
// a zero denominator) the float field holds NaN and a Reason string says
// why; the report layer turns NaN into null. Reason is empty when every
// field is defined.
//
// Tail probabilities are computed from the lower tail of the normal
// (2·Φ(−|z|)) and from the regularised incomplete beta and gamma functions
// for t and chi-square, so very small p-values are reported accurately
// rather than rounded to zero.
//
// Intervals are chosen to agree with the tests they sit beside:
//
//   - Relative changes (Comparison.RelCILow, RelCIHigh, RelSet) use
//     Fieller's set for a ratio (Fieller 1954) at the test's own critical
//     value, or for two proportions the Koopman (1984) score set, so the
//     relative set excludes 0 exactly when the p-value is below 1 − level.
//     When the baseline is not significantly different from 0 the set is
//     unbounded or the complement of a gap (RelShape says which).
//   - A difference of two proportions has Newcombe's (1998) hybrid score
//     interval built from Wilson intervals; it stays inside [−1, 1].
//   - Guard verdicts (Guard) read both one-sided bounds of the relative set
//     at one one-sided level against 0 and the margin.
//   - CUPED pools θ and the covariate centre within each compared pair and
//     its standard errors include the estimation of both (cupedPair); a
//     covariate that does not vary leaves the comparison unadjusted.
//   - The always-valid boundary is tuned to each comparison's planned size
//     (SequentialTarget).
package stats
