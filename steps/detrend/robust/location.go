// Package robust holds the numerical core of the detrend step: robust estimates of a light
// curve's slow trend in plain Go over plain slices. It offers three estimators — a sliding
// Tukey biweight location in a time window, a sliding median in a time window, and a cubic
// B-spline least-squares fit with iterative clipping — and a driver, Detrend, that splits
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
func BiweightLocation(x []float64, c float64) float64 {
	m := medianSorted(x)
	s := c * madSorted(x, m)
	if !(s > 0) || math.IsInf(s, 0) {
		return m
	}
	for it := 0; it < biweightMaxIter; it++ {
		// Only values within (m−s, m+s) carry weight; x is sorted, so find them by bisection.
		lo := sort.SearchFloat64s(x, m-s)
		var sw, swd float64
		for _, v := range x[lo:] {
			d := v - m
			if d >= s {
				break
			}
			u := d / s
			if u <= -1 {
				continue
			}
			w := 1 - u*u
			w *= w
			sw += w
			swd += w * d
		}
		if sw == 0 {
			break
		}
		step := swd / sw
		m += step
		if math.Abs(step) <= biweightTol*s {
			break
		}
	}
	return m
}

// Median returns the median of ascending x (the mean of the middle two for an even count).
func Median(x []float64) float64 { return medianSorted(x) }

// RobustSigma returns 1.4826 times the median absolute deviation of x about its median, the
// normal-equivalent scatter that flares and transits barely move. It sorts x in place.
func RobustSigma(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	sort.Float64s(x)
	return madScale * madSorted(x, medianSorted(x))
}
