package vet

import (
	"math"
	"sort"
)

// Fixed choices of the noise estimate, each with its reason.
const (
	// madToSigma turns a median absolute deviation into a normal σ: 1/Φ⁻¹(3/4) (common
	// practice).
	madToSigma = 1.482602218505602
	// minNoiseBins is the fewest duration-long bins whose scatter is trusted to measure
	// correlated noise: with fewer the robust σ of the bins is itself uncertain by more
	// than about 25 % (1/√(2(n−1)) for a normal σ; common practice).
	minNoiseBins = 10
	// minBinPoints is the fewest points a bin needs to enter the binned scatter.
	minBinPoints = 3
)

// noiseScale measures how much the stated errors must be stretched for the flux outside
// every transit: s, the robust σ (scaled median absolute deviation) of the normalised
// residuals (f − median)/σ_i, for white noise; and β, the robust σ of the means of
// contiguous bins one duration long divided by the σ each bin's mean should have from
// s·σ_i, for noise correlated on the transit's time scale (the time-averaging idea of
// Pont, Zucker & Queloz 2006). It returns max(1, s)·max(1, β), with β left out when
// there are fewer than minNoiseBins bins, and 1 when there is too little to measure.
// keep(i) says whether point i is outside every transit.
//
// The scale never shrinks the stated errors: a scatter below them is what a detrend with a
// short window leaves when it follows part of the noise (the demo's masked detrend, with
// errors equal to its injected noise, shows s ≈ 0.82), and taking that as licence to
// shrink the errors would make the tests declare differences that are not there.
func noiseScale(t, f, e []float64, keep func(i int) bool, duration float64) float64 {
	var idx []int
	for i := range t {
		if keep(i) && e[i] > 0 && !math.IsNaN(f[i]) && !math.IsInf(f[i], 0) {
			idx = append(idx, i)
		}
	}
	if len(idx) < 2*minNoiseBins {
		return 1
	}
	vals := make([]float64, len(idx))
	for j, i := range idx {
		vals[j] = f[i]
	}
	med := median(vals)
	for j, i := range idx {
		vals[j] = (f[i] - med) / e[i]
	}
	s := madToSigma * median(absDev(vals))
	if !(s > 0) {
		return 1
	}
	point := math.Max(1, s)
	// Contiguous bins: a new bin starts when a point lies a duration or more after the
	// bin's first point.
	var z []float64
	start, w, wf, n := 0, 0.0, 0.0, 0
	flush := func() {
		if n >= minBinPoints {
			mean := wf / w
			z = append(z, (mean-med)*math.Sqrt(w)/s)
		}
		w, wf, n = 0, 0, 0
	}
	for j, i := range idx {
		if n > 0 && t[i]-t[idx[start]] >= duration {
			flush()
		}
		if n == 0 {
			start = j
		}
		wi := 1 / (e[i] * e[i])
		w += wi
		wf += wi * f[i]
		n++
	}
	flush()
	if len(z) < minNoiseBins {
		return point
	}
	beta := madToSigma * median(absDev(z))
	return point * math.Max(1, beta)
}

// median returns the median of v (which it sorts in place), NaN when empty.
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	sort.Float64s(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}

// absDev returns |v − median(v)| in a new slice.
func absDev(v []float64) []float64 {
	c := append([]float64(nil), v...)
	m := median(c)
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = math.Abs(x - m)
	}
	return out
}
