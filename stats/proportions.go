package stats

import "math"

// WilsonInterval returns the Wilson score interval for a binomial
// proportion p observed over n units at the two-sided level (Wilson 1927,
// "Probable inference, the law of succession, and statistical inference",
// JASA 22; method 3 of Newcombe 1998a, "Two-sided confidence intervals for
// the single proportion", Statistics in Medicine 17):
//
//	(p + z²/(2n) ± z·√( p(1−p)/n + z²/(4n²) )) / (1 + z²/n),  z = z_{(1+level)/2}
//
// It stays inside [0, 1]. It returns NaN unless n > 0, 0 ≤ p ≤ 1 and
// 0 < level < 1.
func WilsonInterval(p, n, level float64) (lo, hi float64) {
	if !(n > 0) || math.IsInf(n, 0) || math.IsNaN(p) || p < 0 || p > 1 || !validLevel(level) {
		return math.NaN(), math.NaN()
	}
	z := NormalQuantile((1 + level) / 2)
	z2 := z * z
	centre := p + z2/(2*n)
	half := z * math.Sqrt(p*(1-p)/n+z2/(4*n*n))
	den := 1 + z2/n
	lo, hi = (centre-half)/den, (centre+half)/den
	// The ends are exactly 0 and 1 at p = 0 and p = 1; clamp rounding.
	if p == 0 {
		lo = 0
	}
	if p == 1 {
		hi = 1
	}
	return math.Max(0, lo), math.Min(1, hi)
}

// NewcombeDiff returns the hybrid score interval for the difference of two
// independent proportions pt − pb (method 10 of Newcombe 1998b, "Interval
// estimation for the difference between independent proportions:
// comparison of eleven methods", Statistics in Medicine 17, 873–890),
// built from the Wilson intervals (lt, ut) and (lb, ub) of each group:
//
//	d = pt − pb
//	low  = d − √( (pt − lt)² + (ub − pb)² )
//	high = d + √( (ut − pt)² + (pb − lb)² )
//
// It always lies within [−1, 1]. It returns NaN when either Wilson
// interval is undefined.
func NewcombeDiff(pt, nt, pb, nb, level float64) (lo, hi float64) {
	lt, ut := WilsonInterval(pt, nt, level)
	lb, ub := WilsonInterval(pb, nb, level)
	if math.IsNaN(lt) || math.IsNaN(lb) {
		return math.NaN(), math.NaN()
	}
	d := pt - pb
	lo = d - math.Sqrt((pt-lt)*(pt-lt)+(ub-pb)*(ub-pb))
	hi = d + math.Sqrt((ut-pt)*(ut-pt)+(pb-lb)*(pb-lb))
	return math.Max(-1, lo), math.Min(1, hi)
}

// koopmanZ2 returns the score statistic for H0: pt/pb = θ,
//
//	z²(θ) = (p̂t − θ·p̂b)² / ( p̃t(1−p̃t)/nt + θ²·p̃b(1−p̃b)/nb )
//
// where p̃b, p̃t = θ·p̃b are the maximum-likelihood estimates under H0
// (Farrington & Manning 1990, "Test statistics and sample size formulae
// for comparative binomial trials with null hypothesis of non-zero risk
// difference or non-unity relative risk", Statistics in Medicine 9):
//
//	p̃b = (−B − √(B² − 4AC)) / (2A),
//	A = Nθ, B = −(nt·θ + xt + nb + xb·θ), C = xt + xb.
func koopmanZ2(theta, xt, nt, xb, nb float64) float64 {
	N := nt + nb
	A := N * theta
	B := -(nt*theta + xt + nb + xb*theta)
	C := xt + xb
	disc := math.Max(0, B*B-4*A*C)
	// −B > 0, so (−B − √disc)/(2A) = 2C/(−B + √disc) without cancellation.
	pb := 2 * C / (-B + math.Sqrt(disc))
	pt := theta * pb
	num := xt/nt - theta*xb/nb
	v := pt*(1-pt)/nt + theta*theta*pb*(1-pb)/nb
	if !(v > 0) {
		if num == 0 {
			return 0
		}
		return math.Inf(1)
	}
	return num * num / v
}

// KoopmanRatio returns the score confidence set for the ratio pt/pb of two
// independent proportions with xt successes of nt and xb of nb (Koopman
// 1984, "Confidence intervals for the ratio of two binomial proportions",
// Biometrics 40, 513–517; the Miettinen & Nurminen 1985 interval without
// their N/(N−1) factor): every θ ≥ 0 with koopmanZ2(θ) ≤ z²_{(1+level)/2}.
// At θ = 1 the constrained estimates are the pooled proportion, so z²(1)
// is the square of the pooled two-proportion z (TwoProportion) and the set
// excludes 1 exactly when that test rejects at 1 − level. The ends are
// found by bisection. With xt = 0 the lower end is 0; with xb = 0 the upper
// end is +Inf (Shape ShapeUnbounded).
func KoopmanRatio(xt, nt, xb, nb, level float64) RatioInterval {
	switch {
	case !(nt > 0) || !(nb > 0) || !finite(nt) || !finite(nb):
		return nanRatioInterval(reasonNoUnits)
	case !(xt >= 0 && xt <= nt) || !(xb >= 0 && xb <= nb):
		return nanRatioInterval(reasonBadProp)
	case !validLevel(level):
		return nanRatioInterval(reasonBadLevel)
	case xt+xb == 0 || xt+xb == nt+nb:
		return nanRatioInterval("every unit in both groups has the same outcome")
	}
	z := NormalQuantile((1 + level) / 2)
	q2 := z * z
	f := func(th float64) float64 { return koopmanZ2(th, xt, nt, xb, nb) - q2 }
	out := RatioInterval{Shape: ShapeBounded}
	est := math.Inf(1)
	if xb > 0 {
		est = (xt / nt) / (xb / nb)
	}
	// Lower end.
	if xt == 0 {
		out.Low = 0
	} else {
		hiB := est
		if math.IsInf(hiB, 1) {
			hiB = 1
			for f(hiB) > 0 && hiB < 1e300 {
				hiB *= 2
			}
		}
		loB := hiB / 2
		for f(loB) <= 0 && loB > 1e-300 {
			hiB = loB
			loB /= 2
		}
		if f(loB) <= 0 {
			out.Low = 0
		} else {
			out.Low = bisect(f, loB, hiB)
		}
	}
	// Upper end.
	if xb == 0 {
		out.High = math.Inf(1)
		out.Shape = ShapeUnbounded
		out.Reason = "baseline has no successes, so the ratio has no upper bound"
		return out
	}
	loB := est
	hiB := math.Max(2*est, 1e-6)
	for f(hiB) <= 0 && hiB < 1e300 {
		loB = hiB
		hiB *= 2
	}
	if f(hiB) <= 0 {
		out.High = math.Inf(1)
		out.Shape = ShapeUnbounded
		return out
	}
	out.High = bisect(f, hiB, loB)
	return out
}

// bisect returns the point where f changes sign between in (f > 0) and
// out (f ≤ 0), to float64 resolution.
func bisect(f func(float64) float64, pos, nonpos float64) float64 {
	for range 200 {
		mid := (pos + nonpos) / 2
		if mid == pos || mid == nonpos {
			break
		}
		if f(mid) > 0 {
			pos = mid
		} else {
			nonpos = mid
		}
	}
	return nonpos
}
