package robust

import (
	"math"
	"sort"
)

// window is the sorted multiset of usable fluxes whose times lie within ±half of the
// current point. Its bounds only move forward as the point advances through sorted times,
// so each flux is inserted and removed once: O(N·w) for N points and w values per window,
// the cost being a memmove of at most w values per step.
type window struct {
	t, f []float64
	use  []bool
	half float64
	lo   int // first index in the window's time range
	hi   int // one past the last index in it
	vals []float64
}

// start places the window around point i from scratch.
func (w *window) start(i int) {
	lower := w.t[i] - w.half
	w.lo = sort.SearchFloat64s(w.t, lower)
	w.hi = w.lo
	w.vals = w.vals[:0]
	w.advance(i)
}

// advance moves the window to point i ≥ the previous point.
func (w *window) advance(i int) {
	lower, upper := w.t[i]-w.half, w.t[i]+w.half
	for w.hi < len(w.t) && w.t[w.hi] <= upper {
		if w.use[w.hi] {
			w.insert(w.f[w.hi])
		}
		w.hi++
	}
	for w.lo < w.hi && w.t[w.lo] < lower {
		if w.use[w.lo] {
			w.remove(w.f[w.lo])
		}
		w.lo++
	}
}

func (w *window) insert(v float64) {
	k := sort.SearchFloat64s(w.vals, v)
	w.vals = append(w.vals, 0)
	copy(w.vals[k+1:], w.vals[k:])
	w.vals[k] = v
}

func (w *window) remove(v float64) {
	k := sort.SearchFloat64s(w.vals, v)
	copy(w.vals[k:], w.vals[k+1:])
	w.vals = w.vals[:len(w.vals)-1]
}

// slide writes est(window of i) into dst[i] for i in [from, to), or NaN where the window
// holds fewer than minPoints usable values. t must be sorted; use marks the points that
// may enter a window (finite, not masked, not clipped).
func slide(dst, t, f []float64, use []bool, half float64, minPoints, from, to int, est func([]float64) float64) {
	if from >= to {
		return
	}
	if minPoints < 1 {
		minPoints = 1
	}
	w := window{t: t, f: f, use: use, half: half, vals: make([]float64, 0, 64)}
	w.start(from)
	for i := from; i < to; i++ {
		w.advance(i)
		if len(w.vals) < minPoints {
			dst[i] = math.NaN()
			continue
		}
		dst[i] = est(w.vals)
	}
}

// BiweightFilter writes into dst[i], for i in [from, to), the Tukey biweight location (tuning
// constant c, see BiweightLocation) of the fluxes f[j] with use[j] and |t[j] − t[i]| ≤ half,
// or NaN where fewer than minPoints such fluxes exist. At the ends of the series the window
// simply shrinks to one side. t must be sorted ascending; f at usable points finite.
func BiweightFilter(dst, t, f []float64, use []bool, half, c float64, minPoints, from, to int) {
	slide(dst, t, f, use, half, minPoints, from, to, func(v []float64) float64 { return BiweightLocation(v, c) })
}

// MedianFilter is BiweightFilter with the median in place of the biweight location.
func MedianFilter(dst, t, f []float64, use []bool, half float64, minPoints, from, to int) {
	slide(dst, t, f, use, half, minPoints, from, to, medianSorted)
}
