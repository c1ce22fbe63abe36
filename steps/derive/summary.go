package derive

import (
	"math"
	"sort"
	"strconv"
	"strings"

	"dipline/steps/internal/sampler"
)

// Summary rules, each with its reason.
const (
	// pileBins is the number of equal bins between a quantity's physical lower bound and the
	// 97.5th percentile of its draws in which the pile-up rule looks for the mode: coarse
	// enough that a few thousand draws give each bin a hundred or more (so noise rarely
	// moves the mode), fine enough that a posterior peaked away from the bound has its mode
	// well clear of the first bin.
	pileBins = 20
	// pileTop is the upper edge of the histogram, as a quantile: the 97.5th percentile
	// rather than the maximum, so a long upper tail does not squeeze the body into the
	// first bin.
	pileTop = 0.975
	// limitQuantile is the quantile reported as an upper limit (a 95 % one-sided limit,
	// common practice).
	limitQuantile = 0.95
	// maxUndefined is the largest fraction of draws for which a quantity may be undefined
	// (outside a relation's domain) and still be summarised over the rest; above it the
	// quantity is left out with a note, since dropping more would bias it.
	maxUndefined = 0.01
)

// Quantity is one derived quantity's posterior summary.
type Quantity struct {
	// Name is the quantity's key within its planet, e.g. "radius_earth".
	Name string
	// Unit of the numbers ("" for dimensionless).
	Unit string
	// Doc says what the number is and how it was obtained.
	Doc string
	// Median and the 16th and 84th percentiles of the combined draws.
	Median, Lo, Hi float64
	// UpperLimit is true when the draws pile against the physical lower bound (zero); the
	// number to quote is then Limit, the 95th percentile.
	UpperLimit bool
	Limit      float64
}

// quantile is the fit step's rule for summaries, sampler.Quantile.
var quantile = sampler.Quantile

// summarise sorts v in place (non-finite values first removed) and fills the summary.
// bounded says the quantity cannot be negative; then the pile-up rule decides whether an
// upper limit is reported. It returns the number of non-finite draws dropped.
func summarise(q *Quantity, v []float64, bounded bool) (dropped int) {
	s := v[:0]
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			dropped++
			continue
		}
		s = append(s, x)
	}
	sort.Float64s(s)
	q.Median, q.Lo, q.Hi = quantile(s, 0.5), quantile(s, 0.16), quantile(s, 0.84)
	if bounded && pilesAtZero(s) {
		q.UpperLimit = true
		q.Limit = quantile(s, limitQuantile)
	}
	return dropped
}

// pilesAtZero applies the upper-limit rule to sorted, non-negative draws: histogram them
// in pileBins equal bins from 0 to their 97.5th percentile; the posterior piles against
// the bound when the first bin holds at least as many draws as any other (its mode lies
// in the lowest bin of the physical range).
func pilesAtZero(s []float64) bool {
	if len(s) == 0 {
		return false
	}
	top := quantile(s, pileTop)
	if !(top > 0) {
		return true // (almost) all draws sit at the bound
	}
	var counts [pileBins]int
	for _, x := range s {
		if x > top {
			break
		}
		b := int(x / top * pileBins)
		if b >= pileBins {
			b = pileBins - 1
		}
		if b < 0 {
			b = 0
		}
		counts[b]++
	}
	for _, c := range counts[1:] {
		if c > counts[0] {
			return false
		}
	}
	return true
}

// decimals returns the number of decimal places that keep two significant figures of
// sigma (negative: round to tens, hundreds …).
func decimals(sigma float64) int {
	return 1 - int(math.Floor(math.Log10(sigma)))
}

// fixed writes x rounded to d decimal places (d < 0 rounds to 10^−d).
func fixed(x float64, d int) string {
	if d >= 0 {
		return strconv.FormatFloat(x, 'f', d, 64)
	}
	p := math.Pow(10, float64(-d))
	return strconv.FormatFloat(math.Round(x/p)*p, 'f', 0, 64)
}

// Format writes the summary rounded by its uncertainty: the smaller of the two one-sided
// errors (median − 16th, 84th − median percentile) is kept to two significant figures and
// the median and both errors are rounded to the same decimal place; "v ± s" when both
// errors print the same, "v +a −b" otherwise. An upper limit prints as "< x" with two
// significant figures. The unit follows.
func (q Quantity) Format() string {
	unit := ""
	if q.Unit != "" {
		unit = " " + q.Unit
	}
	if q.UpperLimit {
		return "< " + sigFigs(q.Limit, 2) + unit + " (95 %)"
	}
	up, down := q.Hi-q.Median, q.Median-q.Lo
	s := math.Min(up, down)
	if !(s > 0) || math.IsInf(s, 0) {
		s = math.Max(up, down)
	}
	if !(s > 0) || math.IsInf(s, 0) || math.IsNaN(q.Median) {
		return strconv.FormatFloat(q.Median, 'g', 6, 64) + unit
	}
	d := decimals(s)
	a, b := fixed(up, d), fixed(down, d)
	if a == b {
		return fixed(q.Median, d) + " ± " + a + unit
	}
	return fixed(q.Median, d) + " +" + a + " −" + b + unit
}

// sigFigs writes x with n significant figures, without an exponent for ordinary sizes.
func sigFigs(x float64, n int) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', n, 64)
	}
	d := n - 1 - int(math.Floor(math.Log10(math.Abs(x))))
	if d < -6 || d > 12 {
		return strings.Replace(strconv.FormatFloat(x, 'e', n-1, 64), "e+0", "e", 1)
	}
	return fixed(x, d)
}
