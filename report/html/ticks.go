package html

import (
	"math"
	"strconv"
)

// Ticks is a set of evenly spaced axis labels: Min, Min+Step, …, Max, each
// printed with Frac digits after the decimal point.
type Ticks struct {
	Min, Max, Step float64
	Frac           int
}

// Values returns the tick positions. Each is computed as Min + k·Step from
// the integer k and rounded to Frac decimals, so accumulated floating-point
// error never shows (0.1+0.2 is printed as 0.3).
func (t Ticks) Values() []float64 {
	if !(t.Step > 0) || math.IsInf(t.Min, 0) || math.IsInf(t.Max, 0) {
		return nil
	}
	n := int(math.Round((t.Max-t.Min)/t.Step)) + 1
	if n < 1 || n > 1000 {
		return nil
	}
	out := make([]float64, n)
	scale := math.Pow(10, float64(t.Frac))
	for k := range n {
		v := t.Min + float64(k)*t.Step
		out[k] = math.Round(v*scale) / scale
	}
	return out
}

// Label prints a tick value v with the ticks' fixed number of decimals.
func (t Ticks) Label(v float64) string {
	s := strconv.FormatFloat(v, 'f', t.Frac, 64)
	if isNegZero(s) {
		s = s[1:]
	}
	return s
}

// isNegZero reports whether s is a formatted zero with a minus sign ("-0.00").
func isNegZero(s string) bool {
	if len(s) < 2 || s[0] != '-' {
		return false
	}
	for _, c := range s[1:] {
		if c != '0' && c != '.' {
			return false
		}
	}
	return true
}

// NiceNum returns a "nice" number close to x: 1, 2 or 5 times a power of ten
// (or 10 times one). With round, x is rounded to the nearest nice number;
// without, the smallest nice number not below x is taken.
//
//	f = x / 10^floor(log10 x)
//	round:  f < 1.5 → 1, f < 3 → 2, f < 7 → 5, else 10
//	ceil:   f ≤ 1 → 1, f ≤ 2 → 2, f ≤ 5 → 5, else 10
//
// Source: P. S. Heckbert, "Nice Numbers for Graph Labels", in A. S. Glassner
// (ed.), Graphics Gems, Academic Press, 1990, pp. 61–63, 657–659.
// Precondition: x > 0 and finite; otherwise NiceNum returns 0.
func NiceNum(x float64, round bool) float64 {
	if !(x > 0) || math.IsInf(x, 0) {
		return 0
	}
	exp := math.Floor(math.Log10(x))
	f := x / math.Pow(10, exp)
	var nf float64
	if round {
		switch {
		case f < 1.5:
			nf = 1
		case f < 3:
			nf = 2
		case f < 7:
			nf = 5
		default:
			nf = 10
		}
	} else {
		switch {
		case f <= 1:
			nf = 1
		case f <= 2:
			nf = 2
		case f <= 5:
			nf = 5
		default:
			nf = 10
		}
	}
	return nf * math.Pow(10, exp)
}

// NiceTicks returns Heckbert's "loose" labelling of the interval [lo, hi]
// with about n ticks: the first tick is at or below lo, the last at or above
// hi, and the step is a nice number.
//
//	range = NiceNum(hi − lo, false)
//	step  = NiceNum(range / (n − 1), true)
//	min   = floor(lo / step)·step,  max = ceil(hi / step)·step
//	frac  = max(−floor(log10 step), 0)
//
// Source: P. S. Heckbert, "Nice Numbers for Graph Labels", Graphics Gems,
// 1990 (loose_label). When lo == hi the interval is widened by one unit of
// the value's own magnitude (or to [−1, 1] for zero) so an axis can still be
// drawn; non-finite bounds give the same fallback.
func NiceTicks(lo, hi float64, n int) Ticks {
	if n < 2 {
		n = 2
	}
	if math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		lo, hi = -1, 1
	}
	if lo > hi {
		lo, hi = hi, lo
	}
	if lo == hi {
		d := math.Abs(lo)
		if d == 0 {
			d = 1
		} else {
			d = math.Pow(10, math.Floor(math.Log10(d)))
		}
		lo, hi = lo-d, hi+d
	}
	rng := NiceNum(hi-lo, false)
	step := NiceNum(rng/float64(n-1), true)
	frac := int(math.Max(-math.Floor(math.Log10(step)), 0))
	scale := math.Pow(10, float64(frac))
	min := math.Floor(lo/step) * step
	max := math.Ceil(hi/step) * step
	return Ticks{
		Min:  math.Round(min*scale) / scale,
		Max:  math.Round(max*scale) / scale,
		Step: step,
		Frac: frac,
	}
}
