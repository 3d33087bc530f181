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
package stats
