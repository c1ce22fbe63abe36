// Package robust holds the numerical core of the detrend step: robust estimates of a light
// curve's slow trend in plain Go over plain slices. It offers four estimators — a robust
// locally weighted polynomial in a time window (Cleveland 1979; LocalFilter, with
// ChooseSpan to pick its window from the data), a sliding Tukey biweight location in a time
// window, a sliding median in a time window, and a cubic B-spline least-squares fit with
// iterative clipping — and a driver, Detrend, that splits
// each series at long gaps, excludes masked (in-transit) points from the estimate, removes
// flares upward only, and reports a mark for every point. It knows nothing of workflow
// files, caches or terminals; the step kind in the parent folder adapts it.
//
// Main entry point: Detrend. The window filters BiweightFilter and MedianFilter and the
// location estimator BiweightLocation are exported for tests and library use.
package robust

import (
	"math"
	"sort"
)

// madScale turns a median absolute deviation into the standard deviation of a normal
// distribution: 1/Φ⁻¹(3/4) = 1.4826 (common practice).
const madScale = 1.4826

// biweightTol stops the biweight iteration when the location moves by less than this
// fraction of the scale c·MAD; 1e-10 of a scale of a few hundred ppm is far below any
// photometric precision.
const biweightTol = 1e-10

// biweightMaxIter bounds the iteration; it converges linearly in a handful of steps on
// any data we have seen, so the bound only guards against rounding cycles.
const biweightMaxIter = 100

// medianSorted returns the median of ascending x: the middle value, or the mean of the two
// middle values for an even count. x must not be empty.
func medianSorted(x []float64) float64 {
	n := len(x)
	if n%2 == 1 {
		return x[n/2]
	}
	return 0.5 * (x[n/2-1] + x[n/2])
}

// madSorted returns the median of |x_i − m| for ascending x in O(n): the deviations are
// ascending on either side of m, so merging outward from m's position lists them in order.
func madSorted(x []float64, m float64) float64 {
	n := len(x)
	r := sort.SearchFloat64s(x, m)
	l := r - 1
	var prev, cur float64
	for i := 0; i <= n/2; i++ {
		prev = cur
		switch {
		case l < 0:
			cur = x[r] - m
			r++
		case r >= n:
			cur = m - x[l]
			l--
		case m-x[l] <= x[r]-m:
			cur = m - x[l]
			l--
		default:
			cur = x[r] - m
			r++
		}
	}
	if n%2 == 1 {
		return cur
	}
	return 0.5 * (prev + cur)
}

// BiweightLocation returns Tukey's biweight location of ascending x with tuning constant c
// (in units of the median absolute deviation, unscaled). Mosteller & Tukey (1977): start at
// the median M; weights w_i = (1 − u_i²)² for |u_i| < 1, else 0, with u_i = (x_i − M)/(c·MAD);
// M ← Σ w_i x_i / Σ w_i; repeat until M settles. The MAD is taken once, about the median,
// and held fixed while M iterates. When the MAD is zero (half the values or more are
// equal) the median is returned. x must be sorted and non-empty.
//
// The reweighting step is a damped Newton step on Σψ(u_i) = 0 with ψ(u) = u(1 − u²)²;
// where the Newton step proper is safe (Σψ′ at least a third of Σw) we take it instead,
// which reaches the same root in about half the passes.
func BiweightLocation(x []float64, c float64) float64 {
	m := medianSorted(x)
	s := c * madSorted(x, m)
	if !(s > 0) || math.IsInf(s, 0) {
		return m
	}
	inv := 1 / s
	for it := 0; it < biweightMaxIter; it++ {
		var sw, swd, sdp float64
		for _, v := range x {
			d := v - m
			u := d * inv
			u2 := u * u
			if u2 >= 1 {
				continue
			}
			a := 1 - u2
			w := a * a
			sw += w
			swd += w * d
			sdp += a * (1 - 5*u2) // ψ′(u)
		}
		if sw == 0 {
			break
		}
		step := swd / sw
		if 3*sdp >= sw {
			step = swd / sdp
		}
		m += step
		if math.Abs(step) <= biweightTol*s {
			break
		}
	}
	return m
}

// Median returns the median of ascending x (the mean of the middle two for an even count).
func Median(x []float64) float64 { return medianSorted(x) }

// MedianOf returns the median of x in any order (the mean of the middle two for an even
// count), reordering it, in linear expected time; NaN for none.
func MedianOf(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	return selectMedian(x)
}

// RobustSigma returns 1.4826 times the median absolute deviation of x about its median, the
// normal-equivalent scatter that flares and transits barely move. It reorders x and
// overwrites it with the deviations; it runs in linear expected time (no full sort).
func RobustSigma(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	m := selectMedian(x)
	for i, v := range x {
		x[i] = math.Abs(v - m)
	}
	return madScale * selectMedian(x)
}

// selectMedian returns the median of x (the mean of the middle two for an even count),
// reordering x.
func selectMedian(x []float64) float64 {
	n := len(x)
	k := n / 2
	selectNth(x, k)
	if n%2 == 1 {
		return x[k]
	}
	lower := x[0]
	for _, v := range x[1:k] {
		lower = max(lower, v)
	}
	return 0.5 * (lower + x[k])
}

// selectNth reorders x so that x[k] is its k-th smallest value (from 0), with no larger
// value before it and no smaller one after: Hoare's FIND with a median-of-three pivot.
// It is deterministic (no random pivots).
func selectNth(x []float64, k int) {
	lo, hi := 0, len(x)-1
	for hi > lo {
		mid := lo + (hi-lo)/2
		if x[mid] < x[lo] {
			x[mid], x[lo] = x[lo], x[mid]
		}
		if x[hi] < x[lo] {
			x[hi], x[lo] = x[lo], x[hi]
		}
		if x[hi] < x[mid] {
			x[hi], x[mid] = x[mid], x[hi]
		}
		p := x[mid]
		i, j := lo, hi
		for i <= j {
			for x[i] < p {
				i++
			}
			for x[j] > p {
				j--
			}
			if i <= j {
				x[i], x[j] = x[j], x[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return
		}
	}
}
