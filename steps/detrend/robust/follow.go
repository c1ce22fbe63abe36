package robust

import "math"

// What a sliding window can and cannot do on a star that turns fast: the share of a
// sinusoid the plain local polynomial leaves behind, and the narrowest window that keeps a
// given share of a transit. The detrend kind weighs the two to decide whether the star's
// rotation must be modelled before the window is applied.

// Unfollowed is the share of a sinusoid of the given period (days) that the plain local
// polynomial of the given degree and full width span (days) leaves in the detrended light
// curve, on evenly sampled data: |1 − H|, H the equivalent kernel's response at the
// sinusoid's frequency, Σ ℓ(τ) cos(2πτ/period) (the kernel is even at the centre, so the
// response is real). About 0.002 at span = period/2.6 for a quadratic, 1 once the window
// spans two periods (it then follows only their mean).
func Unfollowed(span, period float64, degree int) float64 {
	if !(span > 0) || !(period > 0) {
		return 0
	}
	k := kernel(span/2, min(span/400, period/64), degree)
	h := 0.0
	for j, off := range k.off {
		h += k.ell[j] * math.Cos(2*math.Pi*off/period)
	}
	return math.Abs(1 - h)
}

// KeepingSpan is the narrowest full width (days) of the plain local polynomial of the given
// degree that keeps the given share (0 < share < 1) of an unmasked box dip of duration d
// (days), found by bisection on the equivalent kernel's kept share (robust/span.go) to a
// thousandth of d. About 6·d for half of the dip with a quadratic, 3·d with a location.
func KeepingSpan(d, share float64, degree int) float64 {
	if !(d > 0) || !(share > 0 && share < 1) {
		return 0
	}
	kept := func(w float64) float64 { return kernel(w/2, d/30, degree).kept(d) }
	lo, hi := d, 2*d
	for kept(hi) < share && hi < 1e3*d {
		lo, hi = hi, 2*hi
	}
	for hi-lo > d/1000 {
		mid := (lo + hi) / 2
		if kept(mid) < share {
			lo = mid
		} else {
			hi = mid
		}
	}
	return hi
}

// KeptShare is the share of an unmasked box dip of duration d (days) that the plain local
// polynomial of the given degree and full width span (days) keeps in the detrended light
// curve, on evenly sampled data (the equivalent kernel's kept share, as KeepingSpan).
func KeptShare(span, d float64, degree int) float64 {
	if !(span > 0) || !(d > 0) {
		return 1
	}
	return kernel(span/2, d/30, degree).kept(d)
}

// LongestKept is the longest duration (days) of a box dip of which the plain local
// polynomial of the given degree and full width span keeps at least the given share (0 <
// share < 1): the inverse of KeepingSpan in the dip's duration, found by bisection to a
// thousandth of the span. Longer dips keep less. About span/6 for half with a quadratic.
func LongestKept(span, share float64, degree int) float64 {
	if !(span > 0) || !(share > 0 && share < 1) {
		return 0
	}
	lo, hi := span/1e3, span
	if KeptShare(span, lo, degree) < share {
		return lo
	}
	for hi-lo > span/1000 {
		mid := (lo + hi) / 2
		if KeptShare(span, mid, degree) >= share {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}
