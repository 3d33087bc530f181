package stats

import (
	"math"
	"strings"
)

const reasonNoTheta = "adjustment coefficient is undefined"

// CovariateMoments are the sufficient statistics of a per-unit metric Y and
// a pre-experiment covariate X (typically the same metric measured before
// exposure) in one variant.
type CovariateMoments struct {
	N            float64 // number of units
	MeanY, MeanX float64
	VarY, VarX   float64 // sample variances (n-1)
	CovYX        float64 // sample covariance of Y and X (n-1)
}

// RatioCovariateMoments are the sufficient statistics needed for CUPED on a
// ratio metric sum(num)/sum(den) with a per-unit covariate x, in one
// variant: the means, sample variances and sample covariances (all with
// denominator n-1) of num, den and x. The covariate is a plain per-unit
// value, for example the unit's pre-experiment numerator.
type RatioCovariateMoments struct {
	N                       float64
	MeanNum, MeanDen, MeanX float64
	VarNum, VarDen, VarX    float64 // sample variances (n-1)
	CovNumDen               float64 // sample covariance of num and den (n-1)
	CovNumX, CovDenX        float64 // sample covariances with x (n-1)
}

// CUPEDEstimate is one variant's covariate-adjusted mean.
type CUPEDEstimate struct {
	Estimate                   // adjusted mean and its standard error
	Unadjusted        Estimate // plain mean of Y and its standard error
	AdjustedVar       float64  // per-unit sample variance of Y − θX
	VarianceReduction float64  // 1 − AdjustedVar/VarY
}

// CUPEDComparison is a covariate-adjusted treatment-versus-baseline
// comparison.
type CUPEDComparison struct {
	Comparison                      // comparison of the adjusted means (the unadjusted one when Adjusted is false)
	Theta             float64       // pooled adjustment coefficient
	MeanX             float64       // covariate centre used by the adjustment
	Base, Treat       CUPEDEstimate // per-variant adjusted means
	Unadjusted        Comparison    // the same comparison without adjustment
	VarianceReduction float64       // 1 − StdError²/Unadjusted.StdError²
	// Adjusted reports whether the covariate adjustment was applied. When
	// θ is undefined (e.g. the covariate is constant or zero for every
	// unit) the comparison falls back to the unadjusted one and
	// AdjustReason says why.
	Adjusted     bool
	AdjustReason string
}

// CUPEDTheta returns the adjustment coefficient pooled across variants,
//
//	θ = Σ_g (n_g − 1)·Cov_g(Y, X) / Σ_g (n_g − 1)·Var_g(X)
//
// the pooled within-variant covariance over the pooled within-variant
// variance of the covariate. Deng, Xu, Kohavi & Walker (2013), "Improving
// the Sensitivity of Online Controlled Experiments by Utilizing
// Pre-Experiment Data", WSDM, define θ = Cov(Y, X)/Var(X); pooling within
// variants (rather than over all units ignoring the variant) removes the
// treatment effect from the covariance and makes θ the ordinary
// least-squares coefficient of X in the analysis-of-covariance regression
// Y ~ 1 + variant indicators + X (Snedecor & Cochran 1989, "Statistical
// Methods", 8th ed., chapter on analysis of covariance). The adjusted
// difference of means then equals the ANCOVA treatment coefficient
// exactly. Because X is measured before exposure, θ is the same for every
// variant, as the method requires.
//
// Variants with fewer than 2 units carry no weight. The string is a
// reason, empty when θ is defined; θ is NaN when the covariate does not
// vary within any variant.
func CUPEDTheta(groups ...CovariateMoments) (float64, string) {
	var num, den float64
	for _, g := range groups {
		if !finite(g.N) || g.N < 0 {
			return math.NaN(), reasonBadN
		}
		w := g.N - 1
		if w <= 0 {
			continue
		}
		if !finite(g.VarX) || g.VarX < 0 {
			return math.NaN(), "covariate " + reasonBadVar
		}
		if !finite(g.CovYX) {
			return math.NaN(), reasonBadCov
		}
		num += w * g.CovYX
		den += w * g.VarX
	}
	if den == 0 {
		return math.NaN(), "covariate does not vary within any variant"
	}
	return num / den, ""
}

// CovariateMean returns the unit-weighted mean of the covariate over all
// groups, Σ n_g·X̄_g / Σ n_g, the centre used by CUPEDWelch. It is
// accumulated as a running mean (μ ← μ + n_g/N_g·(X̄_g − μ)), so groups
// with equal means give exactly that mean. It returns NaN when there are
// no units.
func CovariateMean(groups ...CovariateMoments) float64 {
	var mu, n float64
	for _, g := range groups {
		if g.N > 0 {
			n += g.N
			mu += g.N / n * (g.MeanX - mu)
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return mu
}

// CUPEDAdjust returns a variant's covariate-adjusted mean (Deng, Xu,
// Kohavi & Walker 2013, "Improving the Sensitivity of Online Controlled
// Experiments by Utilizing Pre-Experiment Data", WSDM):
//
//	Ȳ_cv = Ȳ − θ·(X̄ − μ_X)
//	Var(Y − θX) = Var(Y) − 2θ·Cov(Y, X) + θ²·Var(X)
//	SE(Ȳ_cv) = √( Var(Y − θX)/n )
//
// where μ_X is the covariate centre shared by all variants (CovariateMean)
// and θ and μ_X are treated as known, as in the paper. CUPEDWelch and
// CUPEDRatio replace this standard error by one that accounts for
// estimating both (cupedPair); AdjustedVar keeps Var(Y − θX). VarianceReduction is 1 − Var(Y − θX)/Var(Y); with the
// variant's own θ = Cov/Var(X) it equals ρ², the squared correlation of Y
// and X.
//
// Preconditions: m.N ≥ 2, variances ≥ 0, θ and μ_X finite.
func CUPEDAdjust(m CovariateMoments, theta, meanX float64) CUPEDEstimate {
	nan := math.NaN()
	out := CUPEDEstimate{
		Estimate:    Estimate{Value: nan, StdError: nan},
		Unadjusted:  MeanEstimate(Moments{N: m.N, Mean: m.MeanY, Var: m.VarY}),
		AdjustedVar: nan, VarianceReduction: nan,
	}
	meanOK, reason := checkN(m.N)
	switch {
	case !meanOK:
		out.Reason = reason
		return out
	case !finite(m.MeanY) || !finite(m.MeanX):
		out.Reason = reasonBadMean
		return out
	case !finite(theta):
		out.Reason = reasonNoTheta
		return out
	case !finite(meanX):
		out.Reason = "covariate centre is undefined"
		return out
	}
	out.Value = m.MeanY - theta*(m.MeanX-meanX)
	if reason != "" {
		out.Reason = reason
		return out
	}
	if !finite(m.VarY) || !finite(m.VarX) || m.VarY < 0 || m.VarX < 0 {
		out.Reason = reasonBadVar
		return out
	}
	if !finite(m.CovYX) {
		out.Reason = reasonBadCov
		return out
	}
	v := math.Max(0, m.VarY-2*theta*m.CovYX+theta*theta*m.VarX)
	out.AdjustedVar = v
	out.StdError = math.Sqrt(v / m.N)
	if m.VarY > 0 {
		out.VarianceReduction = 1 - v/m.VarY
	}
	return out
}

// CUPEDWelch compares covariate-adjusted means of two variants, with θ
// pooled over the compared pair only (CUPEDTheta) and the covariate
// centred at the pair's unit-weighted mean (CovariateMean), so a
// treatment-versus-baseline result does not depend on any other variant.
// The adjusted means are Ȳ − θ(X̄ − μ_X) (CUPEDAdjust; Deng, Xu, Kohavi &
// Walker 2013) and their difference is compared with Welch's test; the
// standard errors account for the estimation of θ and of the covariate
// centre (cupedPair). With three or more variants call it once per pair.
// When θ is undefined (the covariate does not vary) the result is the
// unadjusted Welch comparison with Adjusted false and AdjustReason set.
func CUPEDWelch(base, treat CovariateMoments, level float64) CUPEDComparison {
	return cupedPair(MethodCUPED, base, treat, level, false)
}

// cupedCompare is the shared body of the mean and ratio CUPED comparisons.
func cupedCompare(method string, base, treat CovariateMoments, theta, meanX, level float64, normal bool) CUPEDComparison {
	out := CUPEDComparison{Theta: theta, MeanX: meanX, VarianceReduction: math.NaN(), Adjusted: true}
	if !finite(theta) {
		return cupedFallback(method, base, treat, theta, meanX, level, normal, reasonNoTheta)
	}
	out.Base = CUPEDAdjust(base, theta, meanX)
	out.Treat = CUPEDAdjust(treat, theta, meanX)
	be, te := out.Base.Estimate, out.Treat.Estimate
	ub, ut := out.Base.Unadjusted, out.Treat.Unadjusted
	c, u := nanComparison(method, level), nanComparison(method, level)
	if normal {
		u.Method = MethodDelta
		c = compareEstimates(c, be, te, math.Inf(1))
		u = compareEstimates(u, ub, ut, math.Inf(1))
	} else {
		u.Method = MethodWelch
		c = compareEstimates(c, be, te, welchDF(be.StdError*be.StdError, te.StdError*te.StdError, base.N, treat.N))
		u = compareEstimates(u, ub, ut, welchDF(ub.StdError*ub.StdError, ut.StdError*ut.StdError, base.N, treat.N))
		if math.IsNaN(c.StdError) || c.StdError == 0 {
			c.DF = math.NaN()
		}
		if math.IsNaN(u.StdError) || u.StdError == 0 {
			u.DF = math.NaN()
		}
	}
	out.Comparison = withRelative(c, be, te)
	out.Unadjusted = withRelative(u, ub, ut)
	if u.StdError > 0 && finite(c.StdError) {
		out.VarianceReduction = 1 - (c.StdError*c.StdError)/(u.StdError*u.StdError)
	}
	return out
}

// LinearizeCovariate turns the moments of a ratio metric and a covariate
// into CovariateMoments of the linearised ratio
//
//	l_i = (num_i − R·den_i)/μ_D,  R = μ_N/μ_D
//
// (Deng, Knoblich & Lu 2018, "Applying the Delta Method in Metric
// Analytics: A Practical Guide with Novel Ideas", KDD), so that, to first
// order, R̂ = R + l̄ and the CUPED adjustment of Deng, Xu, Kohavi & Walker
// (2013) can be applied to l as to any per-unit metric:
//
//	MeanY = R
//	VarY  = (VarNum − 2R·CovNumDen + R²·VarDen)/μ_D²
//	CovYX = (CovNumX − R·CovDenX)/μ_D
//
// MeanX and VarX are passed through. The string is a reason, empty when
// the moments are defined.
func LinearizeCovariate(r RatioCovariateMoments) (CovariateMoments, string) {
	lin, reason := Linearize(RatioMoments{
		N: r.N, MeanNum: r.MeanNum, MeanDen: r.MeanDen,
		VarNum: r.VarNum, VarDen: r.VarDen, Cov: r.CovNumDen,
	})
	out := CovariateMoments{N: r.N, MeanY: lin.Mean, MeanX: r.MeanX, VarY: lin.Var, VarX: r.VarX, CovYX: math.NaN()}
	if reason != "" {
		return out, reason
	}
	if !finite(r.CovNumX) || !finite(r.CovDenX) {
		out.VarY = math.NaN()
		return out, reasonBadCov
	}
	R := lin.Mean
	out.CovYX = (r.CovNumX - R*r.CovDenX) / r.MeanDen
	return out, ""
}

// CUPEDRatio compares covariate-adjusted ratio metrics: each variant's
// moments are linearised (LinearizeCovariate), θ is pooled over the two
// variants from the linearised moments (CUPEDTheta), and the adjusted
// ratios R̂ − θ·(X̄ − μ_X) are compared with a normal test as in RatioDiff:
//
//	SE(R̂_cv)² = ( Var(l) − 2θ·Cov(l, x) + θ²·Var(x) )/n
//
// (Deng, Knoblich & Lu 2018 for the linearisation; Deng, Xu, Kohavi &
// Walker 2013 for the adjustment). θ and the covariate centre are pooled
// over the compared pair only, and the standard errors account for their
// estimation as in CUPEDWelch (cupedPair). With three or more variants
// call it once per pair. When θ is undefined the result is the unadjusted
// RatioDiff comparison with Adjusted false and AdjustReason set.
func CUPEDRatio(base, treat RatioCovariateMoments, level float64) CUPEDComparison {
	lb, rb := LinearizeCovariate(base)
	lt, rt := LinearizeCovariate(treat)
	c := cupedPair(MethodCUPEDRatio, lb, lt, level, true)
	return ratioReasons(c, rb, rt, "")
}

// ratioReasons makes linearisation failures visible in the result.
func ratioReasons(c CUPEDComparison, rb, rt, theta string) CUPEDComparison {
	switch {
	case rb != "":
		c.Reason = "baseline: " + rb
	case rt != "":
		c.Reason = "treatment: " + rt
	case theta != "" && (c.Reason == "" || strings.HasSuffix(c.Reason, reasonNoTheta)):
		c.Reason = theta
	}
	if c.RelReason == reasonZeroBase {
		c.RelReason = "baseline ratio is zero"
	}
	return c
}

// cupedFallback returns the unadjusted comparison dressed as a
// CUPEDComparison with Adjusted false.
func cupedFallback(method string, base, treat CovariateMoments, theta, meanX, level float64, normal bool, why string) CUPEDComparison {
	ub := MeanEstimate(Moments{N: base.N, Mean: base.MeanY, Var: base.VarY})
	ut := MeanEstimate(Moments{N: treat.N, Mean: treat.MeanY, Var: treat.VarY})
	u := nanComparison(MethodWelch, level)
	if normal {
		u.Method = MethodDelta
		u = compareEstimates(u, ub, ut, math.Inf(1))
	} else {
		u = compareEstimates(u, ub, ut, welchDF(ub.StdError*ub.StdError, ut.StdError*ut.StdError, base.N, treat.N))
		if math.IsNaN(u.StdError) || u.StdError == 0 {
			u.DF = math.NaN()
		}
	}
	u = withRelative(u, ub, ut)
	est := func(e Estimate, m CovariateMoments) CUPEDEstimate {
		return CUPEDEstimate{Estimate: e, Unadjusted: e, AdjustedVar: m.VarY, VarianceReduction: 0}
	}
	return CUPEDComparison{
		Comparison: u, Theta: theta, MeanX: meanX,
		Base: est(ub, base), Treat: est(ut, treat),
		Unadjusted: u, VarianceReduction: 0,
		Adjusted: false, AdjustReason: "covariate adjustment not applied: " + why,
	}
}

// cupedPair compares two variants' covariate-adjusted means with θ and the
// covariate centre μ̂ = (n_b·X̄_b + n_t·X̄_t)/N pooled over the pair, and
// standard errors that account for estimating both. With s_g² the
// per-variant sample variance of Y − θX (CUPEDAdjust), S_g = (n_g − 1)·
// Var_g(X) and S = S_b + S_t:
//
//	d = (Ȳ_t − Ȳ_b) − θ̂·(X̄_t − X̄_b)
//	Var(θ̂)  = (s_b²·S_b + s_t²·S_t) / S²
//	Var(d)  = s_b²/n_b + s_t²/n_t + (X̄_t − X̄_b)²·Var(θ̂)
//	Var(μ̂)  = (n_b·Var_b(X) + n_t·Var_t(X)) / N²
//	Var(Ȳ_cv,g) = s_g²/n_g + (X̄_g − μ̂)²·Var(θ̂) + θ̂²·Var(μ̂)
//	              + 2θ̂·(Cov_g(Y, X) − θ̂·Var_g(X))/N
//
// Var(d) is the regression-adjustment variance of the treatment effect in
// Y ~ 1 + treatment + X (Snedecor & Cochran 1989, "Statistical Methods",
// 8th ed., analysis of covariance: the (X̄_t − X̄_b)²/S term is the
// slope's estimation error), with a residual variance per variant as in
// Welch's test; with one residual variance s² = SSR/(N − 3) it is the
// classical least-squares standard error of the treatment coefficient.
// The per-variant terms add the sampling variance of the covariate centre
// by the delta method (Deng, Xu, Kohavi & Walker 2013, "Improving the
// Sensitivity of Online Controlled Experiments by Utilizing Pre-Experiment
// Data", WSDM, adjust with the centre and θ treated as known). The two
// adjusted means are correlated; their covariance
// (Var_b + Var_t − Var(d))/2 enters the Fieller relative set, which
// therefore agrees with the test of d. Degrees of freedom are
// Welch–Satterthwaite on s_b²/n_b and s_t²/n_t (normal = false), or +Inf.
func cupedPair(method string, base, treat CovariateMoments, level float64, normal bool) CUPEDComparison {
	theta, reason := CUPEDTheta(base, treat)
	meanX := CovariateMean(base, treat)
	if reason != "" {
		return cupedFallback(method, base, treat, theta, meanX, level, normal, reason)
	}
	out := cupedCompare(method, base, treat, theta, meanX, level, normal)
	c := out.Comparison
	if c.Reason != "" || !finite(c.StdError) || out.Base.Reason != "" || out.Treat.Reason != "" {
		return out
	}
	nb, nt := base.N, treat.N
	N := nb + nt
	sb2, st2 := out.Base.AdjustedVar, out.Treat.AdjustedVar
	Sb, St := (nb-1)*base.VarX, (nt-1)*treat.VarX
	S := Sb + St
	vTheta := (sb2*Sb + st2*St) / (S * S)
	vMu := (nb*base.VarX + nt*treat.VarX) / (N * N)
	dx := treat.MeanX - base.MeanX
	vd := sb2/nb + st2/nt + dx*dx*vTheta
	arm := func(m CovariateMoments, s2 float64) float64 {
		e := m.MeanX - meanX
		v := s2/m.N + e*e*vTheta + theta*theta*vMu + 2*theta*(m.CovYX-theta*m.VarX)/N
		return math.Max(0, v)
	}
	vb, vt := arm(base, sb2), arm(treat, st2)
	out.Base.StdError, out.Treat.StdError = math.Sqrt(vb), math.Sqrt(vt)
	c = nanComparison(method, level)
	c.Difference = out.Treat.Value - out.Base.Value
	c.StdError = math.Sqrt(vd)
	c.TestStdError = c.StdError
	if normal {
		c.DF = math.Inf(1)
	} else {
		c.DF = welchDF(sb2/nb, st2/nt, nb, nt)
		if c.StdError == 0 {
			c.DF = math.NaN()
		}
	}
	c = finishDiff(c)
	out.Comparison = withRelSet(c, out.Base.Estimate, out.Treat.Estimate, (vb+vt-vd)/2, relInputs{df: c.DF})
	if u := out.Unadjusted.StdError; u > 0 && finite(vd) {
		out.VarianceReduction = 1 - vd/(u*u)
	}
	return out
}

// CUPEDWelchEach compares every variant after the first (the baseline)
// with the baseline by CUPEDWelch, so each pair pools θ and the covariate
// centre over its own two variants only; element i−1 is variant i against
// variant 0. It returns nil for fewer than two variants.
func CUPEDWelchEach(variants []CovariateMoments, level float64) []CUPEDComparison {
	if len(variants) < 2 {
		return nil
	}
	out := make([]CUPEDComparison, 0, len(variants)-1)
	for _, v := range variants[1:] {
		out = append(out, CUPEDWelch(variants[0], v, level))
	}
	return out
}

// CUPEDRatioEach is CUPEDWelchEach for ratio metrics (CUPEDRatio).
func CUPEDRatioEach(variants []RatioCovariateMoments, level float64) []CUPEDComparison {
	if len(variants) < 2 {
		return nil
	}
	out := make([]CUPEDComparison, 0, len(variants)-1)
	for _, v := range variants[1:] {
		out = append(out, CUPEDRatio(variants[0], v, level))
	}
	return out
}
