package stats

import (
	"fmt"
	"math"
)

// StratumMoments are one stratum's (segment's) sufficient statistics in
// the baseline and the treatment arm.
type StratumMoments struct {
	Base, Treat Moments
}

// StratumRatioMoments are one stratum's ratio-metric sufficient
// statistics in the baseline and the treatment arm.
type StratumRatioMoments struct {
	Base, Treat RatioMoments
}

// StratifiedResult is a post-stratified treatment-minus-baseline
// difference. Weights, Differences and StdErrors have one entry per input
// stratum, in input order; a stratum without units has weight 0 and NaN
// difference and standard error.
type StratifiedResult struct {
	Difference float64 // Σ_k w_k·d_k
	StdError   float64
	CILow      float64
	CIHigh     float64
	Statistic  float64 // z = Difference/StdError
	PValue     float64 // two-sided, normal
	Level      float64

	Weights     []float64 // w_k = stratum units / all units
	Differences []float64 // d_k = treatment − baseline within stratum k
	StdErrors   []float64 // standard error of d_k

	Reason string // why Difference or PValue is undefined; empty when fine
}

// stratumEst is one stratum's two arm estimates and unit counts.
type stratumEst struct {
	base, treat   Estimate
	nBase, nTreat float64
}

// stratifiedFrom combines per-stratum estimates into the post-stratified
// difference.
func stratifiedFrom(ests []stratumEst, level float64) StratifiedResult {
	nan := math.NaN()
	k := len(ests)
	r := StratifiedResult{
		Difference: nan, StdError: nan, CILow: nan, CIHigh: nan, Statistic: nan, PValue: nan, Level: level,
		Weights: make([]float64, k), Differences: make([]float64, k), StdErrors: make([]float64, k),
	}
	for i := range ests {
		r.Differences[i], r.StdErrors[i] = nan, nan
	}
	if k == 0 {
		r.Reason = "no strata"
		return r
	}
	var total float64
	for i, e := range ests {
		if !finite(e.nBase) || !finite(e.nTreat) || e.nBase < 0 || e.nTreat < 0 {
			r.Reason = fmt.Sprintf("stratum %d: %s", i, reasonBadN)
			return r
		}
		total += e.nBase + e.nTreat
	}
	if total == 0 {
		r.Reason = reasonNoUnits
		return r
	}
	var diff, v float64
	for i, e := range ests {
		w := (e.nBase + e.nTreat) / total
		r.Weights[i] = w
		if w == 0 {
			continue
		}
		d := e.treat.Value - e.base.Value
		se2 := e.treat.StdError*e.treat.StdError + e.base.StdError*e.base.StdError
		if !math.IsNaN(d) {
			r.Differences[i] = d
		}
		if !math.IsNaN(se2) {
			r.StdErrors[i] = math.Sqrt(se2)
		}
		if r.Reason == "" && (math.IsNaN(d) || math.IsNaN(se2)) {
			if reason := firstReason(e.base, e.treat); reason != "" {
				r.Reason = fmt.Sprintf("stratum %d: %s", i, reason)
			} else {
				r.Reason = fmt.Sprintf("stratum %d: %s", i, reasonUndefinedSE)
			}
		}
		diff += w * d
		v += w * w * se2
	}
	if r.Reason != "" {
		return r
	}
	r.normalTest(diff, v, level)
	return r
}

// normalTest fills the difference d with variance v, its z statistic,
// two-sided normal p-value and interval at level.
func (r *StratifiedResult) normalTest(d, v, level float64) {
	r.Difference, r.StdError = d, math.Sqrt(v)
	if r.StdError == 0 {
		r.Reason = reasonZeroSE
		return
	}
	r.Statistic = d / r.StdError
	r.PValue = TwoSidedNormalP(r.Statistic)
	if !validLevel(level) {
		r.Reason = reasonBadLevel
		return
	}
	q := NormalQuantile((1 + level) / 2)
	r.CILow, r.CIHigh = d-q*r.StdError, d+q*r.StdError
}

// Stratified returns the post-stratified difference in means across
// strata (segments defined before treatment, such as country or platform):
// the within-stratum differences weighted by each stratum's share of all
// units (Cochran 1977, "Sampling Techniques", 3rd ed., §5.3 for the stratified estimator and
// §5A.9 for post-stratification; Miratrix, Sekhon & Yu 2013, "Adjusting
// treatment effect estimates by post-stratification in randomized
// experiments", JRSS B 75(2)):
//
//	N_k = n_{b,k} + n_{t,k},  w_k = N_k / Σ_j N_j
//	d_k = ȳ_{t,k} − ȳ_{b,k},  D = Σ_k w_k·d_k
//	SE(D) = √( Σ_k w_k²·(s²_{t,k}/n_{t,k} + s²_{b,k}/n_{b,k}) )
//	z = D/SE,  p = 2Φ(−|z|),  CI = D ± z_{(1+level)/2}·SE
//
// D estimates the average effect over the units in the experiment with
// each stratum weighted by its size, whatever share of each stratum
// landed in each arm; a pooled difference instead mixes the strata with
// the arms' own (possibly unequal) shares (see ReversalTest). The
// variance is conditional on the stratum sizes, which Miratrix et al.
// show loses little against blocking when every stratum is large. Unlike
// the Cochran–Mantel–Haenszel weights n_b·n_t/N, which pick the most
// precise combination under a common effect, the size weights keep the
// estimand the population average when the effect differs by stratum.
//
// A stratum with no units in either arm is ignored (weight 0). Every
// other stratum needs at least 2 units in each arm; otherwise Difference
// is NaN and Reason names the stratum (0-based index).
func Stratified(strata []StratumMoments, level float64) StratifiedResult {
	ests := make([]stratumEst, len(strata))
	for i, s := range strata {
		ests[i] = stratumEst{MeanEstimate(s.Base), MeanEstimate(s.Treat), s.Base.N, s.Treat.N}
	}
	return stratifiedFrom(ests, level)
}

// StratifiedProportion is Stratified for a 0/1 metric: Mean is the share
// of units with outcome 1, Var is ignored, and each arm's standard error
// is the binomial √(p(1 − p)/n) of ProportionEstimate, as in the
// unpooled interval of TwoProportion.
func StratifiedProportion(strata []StratumMoments, level float64) StratifiedResult {
	ests := make([]stratumEst, len(strata))
	for i, s := range strata {
		ests[i] = stratumEst{ProportionEstimate(s.Base), ProportionEstimate(s.Treat), s.Base.N, s.Treat.N}
	}
	return stratifiedFrom(ests, level)
}

// StratifiedRatio is Stratified for a ratio metric sum(num)/sum(den)
// analysed at the unit level: each stratum's arm ratio and its
// delta-method standard error come from RatioEstimate (Deng, Knoblich &
// Lu 2018), and the weights are the strata's shares of units.
func StratifiedRatio(strata []StratumRatioMoments, level float64) StratifiedResult {
	ests := make([]stratumEst, len(strata))
	for i, s := range strata {
		ests[i] = stratumEst{RatioEstimate(s.Base), RatioEstimate(s.Treat), s.Base.N, s.Treat.N}
	}
	return stratifiedFrom(ests, level)
}

// ReversalResult compares the pooled difference with the stratified one.
type ReversalResult struct {
	Pooled     float64 // ȳ_t − ȳ_b over all units, ignoring strata
	Stratified float64 // Σ_k w_k·(ȳ_{t,k} − ȳ_{b,k}) (Stratified)
	D          float64 // Pooled − Stratified
	StdError   float64 // standard error of D under randomised assignment
	Statistic  float64 // D/StdError
	PValue     float64 // two-sided, normal
	// Reversal reports whether D is significant at alpha and the pooled
	// and stratified differences have strictly opposite signs.
	Reversal bool
	Reason   string
}

// ReversalTest checks for a Simpson's-paradox reversal: a pooled
// difference whose sign is opposite to that of the stratified difference
// because the strata are mixed in different proportions in the two arms.
//
// With a_k = n_{t,k}/n_t and b_k = n_{b,k}/n_b the arms' stratum shares and
// w_k the pooled shares of Stratified,
//
//	D = Pooled − Stratified = Σ_k (a_k − w_k)·ȳ_{t,k} − Σ_k (b_k − w_k)·ȳ_{b,k}
//
// which is zero when both arms have the same mix. Under randomised
// assignment each unit lands in the treatment with the same probability
// π (estimated by π̂ = n_t/N), so the stratum shares p̂_k = n_{t,k}/N_k
// vary binomially, Var(p̂_k) = π(1 − π)/N_k. A first-order (delta-method)
// expansion of a_k and b_k in the p̂_k gives a_k − w_k ≈ w_k(e_k − ē)/π and
// b_k − w_k ≈ −w_k(e_k − ē)/(1 − π), with e_k = p̂_k − π, ē = Σ w_k e_k, so
//
//	D ≈ Σ_k w_k (e_k − ē)(g_k − ḡ),  g_k = ȳ_{t,k}/π + ȳ_{b,k}/(1 − π),  ḡ = Σ_k w_k g_k
//	Var(D) = π(1 − π)/N · Σ_k w_k (g_k − ḡ)²
//
// the variance from assignment imbalance, given the observed stratum
// means (which carry the outcome noise into the g_k). The test statistic
// is z = D/SE(D) with a two-sided normal p-value (the delta method for
// ratios of binomial counts, e.g. Agresti 2013, "Categorical Data
// Analysis", 3rd ed., §16.1; the decomposition of a pooled difference
// into stratum effects and mix is Simpson 1951, "The interpretation of
// interaction in contingency tables", JRSS B 13).
//
// Reversal is true exactly when p ≤ alpha and Pooled·Stratified < 0: the
// difference in mix is larger than randomisation explains and it flips
// the sign. A significant D without a sign change is a mix imbalance
// worth a look (Reversal stays false); a zero difference on either side
// is never a reversal. Means are used as given, so the test applies to
// means and proportions; for a ratio metric pass the per-stratum ratio as
// the mean only if the denominators are one per unit.
//
// Preconditions: at least one unit in each arm of every stratum that has
// units, 0 < alpha < 1. When every g_k is equal (a single stratum, or the
// same means in every stratum) the mix cannot move the difference to
// first order, Var(D) is 0, Statistic and PValue are NaN and Reason says
// why.
func ReversalTest(strata []StratumMoments, alpha float64) ReversalResult {
	nan := math.NaN()
	r := ReversalResult{Pooled: nan, Stratified: nan, D: nan, StdError: nan, Statistic: nan, PValue: nan}
	if !(alpha > 0 && alpha < 1) {
		r.Reason = "alpha must be in (0, 1)"
		return r
	}
	if len(strata) == 0 {
		r.Reason = "no strata"
		return r
	}
	var nb, nt float64
	for i, s := range strata {
		for _, n := range []float64{s.Base.N, s.Treat.N} {
			if !finite(n) || n < 0 {
				r.Reason = fmt.Sprintf("stratum %d: %s", i, reasonBadN)
				return r
			}
		}
		if s.Base.N+s.Treat.N == 0 {
			continue
		}
		if s.Base.N == 0 || s.Treat.N == 0 {
			r.Reason = fmt.Sprintf("stratum %d: an arm has no units", i)
			return r
		}
		if !finite(s.Base.Mean) || !finite(s.Treat.Mean) {
			r.Reason = fmt.Sprintf("stratum %d: %s", i, reasonBadMean)
			return r
		}
		nb += s.Base.N
		nt += s.Treat.N
	}
	if nb == 0 || nt == 0 {
		r.Reason = reasonNoUnits
		return r
	}
	total := nb + nt
	pi := nt / total
	var sumT, sumB, strat float64
	w := make([]float64, len(strata))
	g := make([]float64, len(strata))
	var gbar float64
	for i, s := range strata {
		w[i] = (s.Base.N + s.Treat.N) / total
		if w[i] == 0 {
			continue
		}
		sumT += s.Treat.N * s.Treat.Mean
		sumB += s.Base.N * s.Base.Mean
		strat += w[i] * (s.Treat.Mean - s.Base.Mean)
		g[i] = s.Treat.Mean/pi + s.Base.Mean/(1-pi)
		gbar += w[i] * g[i]
	}
	r.Pooled = sumT/nt - sumB/nb
	r.Stratified = strat
	r.D = r.Pooled - r.Stratified
	var ss float64
	for i := range strata {
		if w[i] > 0 {
			ss += w[i] * (g[i] - gbar) * (g[i] - gbar)
		}
	}
	r.StdError = math.Sqrt(pi * (1 - pi) / total * ss)
	if !(r.StdError > 0) {
		r.Reason = "strata have identical means, so the mix cannot change the difference"
		return r
	}
	r.Statistic = r.D / r.StdError
	r.PValue = TwoSidedNormalP(r.Statistic)
	r.Reversal = r.PValue <= alpha && r.Pooled*r.Stratified < 0
	return r
}

// StratumCovariateMoments are one stratum's CUPED moments in the baseline
// and the treatment arm; StratumRatioCovariateMoments the same for a
// ratio metric.
type StratumCovariateMoments struct {
	Base, Treat CovariateMoments
}

// StratumRatioCovariateMoments are one stratum's ratio CUPED moments.
type StratumRatioCovariateMoments struct {
	Base, Treat RatioCovariateMoments
}

// StratifiedCUPEDResult is a post-stratified difference of
// covariate-adjusted means.
type StratifiedCUPEDResult struct {
	StratifiedResult
	// Base and Treat are the stratified adjusted means Σ_k w_k·ȳ*_k with
	// standard errors √(Σ_k w_k²·se_k²); Cov is the covariance of the two
	// (each stratum's θ and covariate centre are shared by its arms).
	Base, Treat Estimate
	Cov         float64
	Thetas      []float64 // θ of each stratum (NaN for an empty one)
	// Adjusted is false when no stratum could be adjusted (AdjustReason
	// says why); strata that could not be adjusted enter unadjusted.
	Adjusted     bool
	AdjustReason string
	// Unadjusted is the same post-stratified difference without CUPED.
	Unadjusted StratifiedResult
}

// StratifiedCUPED combines CUPED within strata: in each stratum the two
// arms are compared with CUPEDWelch (θ and the covariate centre pooled
// within the stratum's pair, standard errors that account for estimating
// both), and the stratum differences d*_k are weighted by the strata's
// shares of units as in Stratified (Cochran 1977, §5A.9):
//
//	D = Σ_k w_k·d*_k,  SE(D)² = Σ_k w_k²·SE(d*_k)²
//
// since strata are independent: CUPED (Deng, Xu, Kohavi & Walker 2013)
// within each stratum, combined by post-stratification. Cov is recovered per
// stratum from SE(d*_k)² = se²_{t,k} + se²_{b,k} − 2c_k, so a Fieller set
// for Treat/Base from (Base, Treat, Cov) excludes 1 exactly when the
// normal test of D rejects.
func StratifiedCUPED(strata []StratumCovariateMoments, level float64) StratifiedCUPEDResult {
	cs := make([]CUPEDComparison, len(strata))
	ns := make([][2]float64, len(strata))
	plain := make([]StratumMoments, len(strata))
	for i, s := range strata {
		ns[i] = [2]float64{s.Base.N, s.Treat.N}
		plain[i] = StratumMoments{Base: Moments{N: s.Base.N, Mean: s.Base.MeanY, Var: s.Base.VarY}, Treat: Moments{N: s.Treat.N, Mean: s.Treat.MeanY, Var: s.Treat.VarY}}
		if s.Base.N+s.Treat.N > 0 {
			cs[i] = CUPEDWelch(s.Base, s.Treat, level)
		}
	}
	return stratifiedCUPEDFrom(cs, ns, Stratified(plain, level), level)
}

// StratifiedCUPEDRatio is StratifiedCUPED for a ratio metric, with
// CUPEDRatio within each stratum and the unadjusted StratifiedRatio.
func StratifiedCUPEDRatio(strata []StratumRatioCovariateMoments, level float64) StratifiedCUPEDResult {
	cs := make([]CUPEDComparison, len(strata))
	ns := make([][2]float64, len(strata))
	plain := make([]StratumRatioMoments, len(strata))
	for i, s := range strata {
		ns[i] = [2]float64{s.Base.N, s.Treat.N}
		plain[i] = StratumRatioMoments{
			Base:  RatioMoments{N: s.Base.N, MeanNum: s.Base.MeanNum, MeanDen: s.Base.MeanDen, VarNum: s.Base.VarNum, VarDen: s.Base.VarDen, Cov: s.Base.CovNumDen},
			Treat: RatioMoments{N: s.Treat.N, MeanNum: s.Treat.MeanNum, MeanDen: s.Treat.MeanDen, VarNum: s.Treat.VarNum, VarDen: s.Treat.VarDen, Cov: s.Treat.CovNumDen}}
		if s.Base.N+s.Treat.N > 0 {
			cs[i] = CUPEDRatio(s.Base, s.Treat, level)
		}
	}
	return stratifiedCUPEDFrom(cs, ns, StratifiedRatio(plain, level), level)
}

func stratifiedCUPEDFrom(cs []CUPEDComparison, ns [][2]float64, plain StratifiedResult, level float64) StratifiedCUPEDResult {
	nan := math.NaN()
	k := len(cs)
	r := StratifiedCUPEDResult{Unadjusted: plain, Cov: nan, Thetas: make([]float64, k),
		Base: Estimate{Value: nan, StdError: nan}, Treat: Estimate{Value: nan, StdError: nan}}
	r.StratifiedResult = StratifiedResult{Difference: nan, StdError: nan, CILow: nan, CIHigh: nan, Statistic: nan, PValue: nan, Level: level,
		Weights: make([]float64, k), Differences: make([]float64, k), StdErrors: make([]float64, k)}
	var total float64
	for i := range cs {
		r.Thetas[i], r.Differences[i], r.StdErrors[i] = nan, nan, nan
		total += ns[i][0] + ns[i][1]
	}
	if k == 0 || !(total > 0) {
		r.Reason = reasonNoUnits
		return r
	}
	var d, v, tb, bb, vt, vb, cov float64
	adjusted := 0
	for i, c := range cs {
		w := (ns[i][0] + ns[i][1]) / total
		r.Weights[i] = w
		if w == 0 {
			continue
		}
		r.Thetas[i], r.Differences[i], r.StdErrors[i] = c.Theta, c.Difference, c.StdError
		if c.Reason != "" || math.IsNaN(c.StdError) {
			reason := c.Reason
			if reason == "" {
				reason = reasonUndefinedSE
			}
			r.Reason = fmt.Sprintf("stratum %d: %s", i, reason)
			return r
		}
		if c.Adjusted {
			adjusted++
		} else if r.AdjustReason == "" {
			r.AdjustReason = fmt.Sprintf("stratum %d: %s", i, c.AdjustReason)
		}
		st, sb := c.Treat.StdError, c.Base.StdError
		d += w * c.Difference
		v += w * w * c.StdError * c.StdError
		tb += w * c.Treat.Value
		bb += w * c.Base.Value
		vt += w * w * st * st
		vb += w * w * sb * sb
		cov += w * w * (st*st + sb*sb - c.StdError*c.StdError) / 2
	}
	r.Adjusted = adjusted > 0
	if !r.Adjusted && r.AdjustReason == "" {
		r.AdjustReason = "no stratum could be adjusted"
	}
	r.Base, r.Treat, r.Cov = Estimate{Value: bb, StdError: math.Sqrt(vb)}, Estimate{Value: tb, StdError: math.Sqrt(vt)}, cov
	r.StratifiedResult.normalTest(d, v, level)
	return r
}
