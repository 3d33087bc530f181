package stats

import "math"

// Shapes of a confidence set for a ratio (RatioInterval.Shape).
const (
	// ShapeBounded is the closed interval [Low, High].
	ShapeBounded = "bounded"
	// ShapeComplement is everything outside the open gap (Low, High):
	// (−∞, Low] ∪ [High, +∞).
	ShapeComplement = "complement"
	// ShapeUnbounded is [Low, High] with at least one end infinite: the
	// whole line (Low = −Inf, High = +Inf) or a half-line.
	ShapeUnbounded = "unbounded"
)

const reasonDenNotSignificant = "the baseline is not significantly different from zero at this level, so the confidence set for the ratio is not a bounded interval"

// RatioInterval is a confidence set for a ratio θ = a/b (or, in Comparison,
// for the relative change a/b − 1). Shape says how to read Low and High.
// When the set is undefined Shape is empty, Low and High are NaN and Reason
// says why; Reason also explains an unbounded or complement shape.
type RatioInterval struct {
	Low, High float64
	Shape     string // ShapeBounded, ShapeComplement or ShapeUnbounded
	Reason    string
}

// Contains reports whether x lies in the confidence set.
func (r RatioInterval) Contains(x float64) bool {
	switch r.Shape {
	case ShapeBounded, ShapeUnbounded:
		return r.Low <= x && x <= r.High
	case ShapeComplement:
		return x <= r.Low || x >= r.High
	}
	return false
}

// shift returns the set moved by d (used to go from a ratio to a relative
// change, d = −1).
func (r RatioInterval) shift(d float64) RatioInterval {
	r.Low += d
	r.High += d
	return r
}

func nanRatioInterval(reason string) RatioInterval {
	return RatioInterval{Low: math.NaN(), High: math.NaN(), Reason: reason}
}

// Fieller returns Fieller's confidence set for the ratio θ = a/b of two
// estimates a (numerator) and b (denominator) with standard errors seA,
// seB and covariance cov of the two estimates (0 for independent groups),
// using the critical value q (e.g. t_{(1+level)/2, ν} or z_{(1+level)/2}).
// Fieller (1954), "Some problems in interval estimation", Journal of the
// Royal Statistical Society B 16, 175–185: the set is every θ for which
// the hypothesis a − θ·b = 0 is not rejected,
//
//	(a − θb)² ≤ q²·(seA² − 2θ·cov + θ²·seB²)
//	⇔ A·θ² − 2B·θ + C ≤ 0,
//	A = b² − q²·seB², B = a·b − q²·cov, C = a² − q²·seA²,
//	D = B² − A·C
//
// When A > 0 (b is significantly different from 0) the set is the bounded
// interval (B ∓ √D)/A. When A < 0 it is the complement of the gap between
// the roots when D > 0, and the whole line otherwise; A = 0 gives a
// half-line. At θ = 1 the inequality is exactly the two-sided test of
// a − b = 0 with standard error √(seA² + seB² − 2cov), so the set excludes
// 1 exactly when that test rejects with the same critical value.
func Fieller(a, b, seA, seB, cov, q float64) RatioInterval {
	switch {
	case !finite(a) || !finite(b):
		return nanRatioInterval(reasonBadMean)
	case !finite(seA) || !finite(seB) || seA < 0 || seB < 0 || !finite(cov):
		return nanRatioInterval(reasonUndefinedSE)
	case !finite(q) || q <= 0:
		return nanRatioInterval(reasonBadLevel)
	}
	q2 := q * q
	A := b*b - q2*seB*seB
	B := a*b - q2*cov
	C := a*a - q2*seA*seA
	D := B*B - A*C
	inf := math.Inf(1)
	switch {
	case A > 0:
		// The estimate a/b satisfies the inequality, so D ≥ 0 up to
		// rounding.
		s := math.Sqrt(math.Max(D, 0))
		lo, hi := quadRoots(A, B, C, s)
		return RatioInterval{Low: lo, High: hi, Shape: ShapeBounded}
	case A < 0 && D > 0:
		lo, hi := quadRoots(A, B, C, math.Sqrt(D))
		return RatioInterval{Low: lo, High: hi, Shape: ShapeComplement, Reason: reasonDenNotSignificant}
	case A < 0:
		return RatioInterval{Low: -inf, High: inf, Shape: ShapeUnbounded, Reason: reasonDenNotSignificant}
	}
	// A == 0: −2Bθ + C ≤ 0.
	switch {
	case B > 0:
		return RatioInterval{Low: C / (2 * B), High: inf, Shape: ShapeUnbounded, Reason: reasonDenNotSignificant}
	case B < 0:
		return RatioInterval{Low: -inf, High: C / (2 * B), Shape: ShapeUnbounded, Reason: reasonDenNotSignificant}
	}
	return RatioInterval{Low: -inf, High: inf, Shape: ShapeUnbounded, Reason: reasonDenNotSignificant}
}

// quadRoots returns the two roots of A·θ² − 2B·θ + C = 0, smaller first,
// given s = √(B² − AC), in the cancellation-free form
// θ₁ = (B + sign(B)·s)/A, θ₂ = C/(B + sign(B)·s) (Press et al. 2007,
// "Numerical Recipes", 3rd ed., §5.6).
func quadRoots(A, B, C, s float64) (lo, hi float64) {
	t := B + math.Copysign(s, B)
	if t == 0 {
		return 0, 0
	}
	r1, r2 := t/A, C/t
	if r1 > r2 {
		r1, r2 = r2, r1
	}
	return r1, r2
}

// relInputs keeps what a Comparison needs to recompute its relative
// confidence set at another level (Comparison.RelativeSetAt).
type relInputs struct {
	ok          bool
	a, b        float64 // treatment and baseline values
	seA, seB    float64
	cov         float64 // covariance of the two estimates
	df          float64 // +Inf for the normal
	score       bool    // proportions: Koopman score set from counts
	xt, nt      float64
	xb, nb      float64
	zeroBaseMsg string
}

// critical returns the two-sided critical value at level for df degrees of
// freedom (+Inf: normal).
func critical(level, df float64) float64 {
	if math.IsInf(df, 1) {
		return NormalQuantile((1 + level) / 2)
	}
	return TQuantile((1+level)/2, df)
}

// RelativeSetAt returns the confidence set for the relative change
// treatment/baseline − 1 at the two-sided level, built as the comparison's
// own relative set (Fieller, or the Koopman score set for two proportions)
// with the critical value of the comparison's test. It is undefined (empty
// Shape, NaN ends) when the comparison has no relative change.
func (c Comparison) RelativeSetAt(level float64) RatioInterval {
	in := c.rel
	switch {
	case !in.ok:
		r := c.RelReason
		if r == "" {
			r = "relative change is undefined"
		}
		return nanRatioInterval(r)
	case !validLevel(level):
		return nanRatioInterval(reasonBadLevel)
	}
	if in.score {
		return KoopmanRatio(in.xt, in.nt, in.xb, in.nb, level).shift(-1)
	}
	if math.IsNaN(in.df) {
		return nanRatioInterval("degrees of freedom are undefined")
	}
	return Fieller(in.a, in.b, in.seA, in.seB, in.cov, critical(level, in.df)).shift(-1)
}

// withRelSet fills Relative, RelStdError (delta method), RelSet, RelShape,
// RelCILow and RelCIHigh from the comparison's relative inputs.
func withRelSet(c Comparison, base, treat Estimate, cov float64, in relInputs) Comparison {
	c.Relative, c.RelStdError, c.RelCILow, c.RelCIHigh, c.RelReason = RelativeLift(base, treat, c.Level)
	c.RelCILow, c.RelCIHigh = math.NaN(), math.NaN()
	if math.IsNaN(c.Relative) {
		c.RelSet = nanRatioInterval(c.RelReason)
		return c
	}
	in.ok = true
	in.a, in.b, in.seA, in.seB, in.cov = treat.Value, base.Value, treat.StdError, base.StdError, cov
	if base.Reason != "" || treat.Reason != "" || (c.RelReason != "" && !in.score) {
		// Standard errors undefined or zero: no set.
		c.RelSet = nanRatioInterval(c.RelReason)
		return c
	}
	c.rel = in
	c.RelSet = c.RelativeSetAt(c.Level)
	c.RelShape = c.RelSet.Shape
	switch c.RelShape {
	case ShapeBounded, ShapeUnbounded:
		c.RelCILow, c.RelCIHigh = c.RelSet.Low, c.RelSet.High
	}
	if c.RelReason == "" || in.score {
		c.RelReason = c.RelSet.Reason
	}
	return c
}

// relPivot returns the signed test statistic of the hypothesis that the
// ratio treatment/baseline equals theta0, positive when the estimate lies
// above theta0, and its degrees of freedom (+Inf: normal). For Fieller's
// set it is sign(b)·(a − θ₀b)/√(seA² − 2θ₀·cov + θ₀²·seB²); for two
// proportions the signed root of the Koopman score statistic. The
// comparison's relative set at a two-sided level is exactly the θ₀ whose
// |statistic| does not exceed the critical value.
func (c Comparison) relPivot(theta0 float64) (stat, df float64) {
	in := c.rel
	if !in.ok || !finite(theta0) {
		return math.NaN(), math.NaN()
	}
	if in.score {
		if theta0 <= 0 {
			return math.NaN(), math.NaN()
		}
		z2 := koopmanZ2(theta0, in.xt, in.nt, in.xb, in.nb)
		d := in.xt/in.nt - theta0*in.xb/in.nb
		return math.Copysign(math.Sqrt(z2), d), math.Inf(1)
	}
	v := in.seA*in.seA - 2*theta0*in.cov + theta0*theta0*in.seB*in.seB
	if !(v > 0) || in.b == 0 {
		return math.NaN(), math.NaN()
	}
	return math.Copysign(1, in.b) * (in.a - theta0*in.b) / math.Sqrt(v), in.df
}

// lowerTail returns P(T_df ≤ t), with df = +Inf for the normal.
func lowerTail(t, df float64) float64 {
	if math.IsNaN(t) || math.IsNaN(df) {
		return math.NaN()
	}
	half := TwoSidedTP(t, df) / 2
	if t < 0 {
		return half
	}
	return 1 - half
}
