package bls

import (
	"math"
	"slices"
	"sort"
)

// trendBlocks is the number of consecutive stretches of the frequency grid whose median
// power traces the slow trend of a spectrum. A box search's power rises toward low
// frequencies (fewer transits put fewer points in the box, and red noise left by
// detrending adds most there), so a peak at a short period stands against a background
// lower than the spectrum's mean: measured against the whole spectrum its SDE is too low,
// and a long-period bump's too high. Subtracting the running level first measures each
// peak against its own neighbourhood (common practice). Sixty-four stretches follow the
// rise while a peak, a few grid points wide, cannot move a stretch's median.
const trendBlocks = 64

// detrendedSDE returns the SDE of the highest peak of power after removing its slow
// trend, and the index of that peak. The trend runs straight between the medians of
// trendBlocks equal stretches of the grid (flat beyond the first and last centres), so it
// costs O(N log N) whatever the grid size.
//
// The SDE here is measured against the detrended spectrum's median and its spread taken
// robustly, 1.4826 times the median absolute deviation (the standard deviation for
// Gaussian values): (r_peak − median)/σ_MAD. The classic SDE divides by the standard
// deviation (Alonso et al. 2004), but a strong signal raises power at its harmonics and
// aliases over much of a short light curve's grid, and that standard deviation grows with
// the signal: a box of SNR 70 in 20 days reached only 7.2, below the threshold, where its
// robust SDE is 21. On white noise the two differ by about 8 % (BENCHMARKS.md).
func detrendedSDE(power []float64) (float64, int) {
	r := detrendedPower(power)
	peak := argmax(r)
	centre, sigma := spread(r)
	if sigma == 0 || peak < 0 {
		return 0, max(peak, 0)
	}
	return (r[peak] - centre) / sigma, peak
}

// argmax returns the index of the largest value, the lowest on a tie; −1 when there is
// none.
func argmax(x []float64) int {
	best := -1
	for j, v := range x {
		if best < 0 || v > x[best] {
			best = j
		}
	}
	return best
}

// madToSigma turns a median absolute deviation into the standard deviation of Gaussian
// values: 1/Φ⁻¹(3/4) (common practice).
const madToSigma = 1.482602218505602

// spread returns the median of x and its spread σ = 1.4826·MAD; 0, 0 when x is empty.
func spread(x []float64) (centre, sigma float64) {
	v := slices.Clone(x)
	if len(v) == 0 {
		return 0, 0
	}
	centre = median(v)
	for i, xv := range v {
		v[i] = math.Abs(xv - centre)
	}
	return centre, madToSigma * median(v)
}

// median returns the median of v, reordering it.
func median(v []float64) float64 {
	slices.Sort(v)
	m := len(v)
	return (v[(m-1)/2] + v[m/2]) / 2
}

// SDESpectrum returns, per frequency, the SDE that frequency would have as the peak:
// (r_j − median)/σ_MAD, r the power less its slow trend as detrendedSDE removes it. Its
// largest value is the pass's SDE. It is for showing a periodogram on the scale of the
// detection threshold; all zeros when the spectrum is flat.
func SDESpectrum(power []float64) []float64 {
	r := detrendedPower(power)
	centre, sigma := spread(r)
	out := make([]float64, len(r))
	if sigma == 0 {
		return out
	}
	for j, v := range r {
		out[j] = (v - centre) / sigma
	}
	return out
}

// detrendedPower returns power less its slow trend (see detrendedSDE), NaN residuals set to
// 0; a spectrum shorter than 4·trendBlocks is returned as it is.
func detrendedPower(power []float64) []float64 {
	if len(power) < 4*trendBlocks {
		return power
	}
	tr := trendOf(power)
	resid := make([]float64, len(power))
	for j := range power {
		resid[j] = power[j] - tr.at(float64(j))
		if math.IsNaN(resid[j]) {
			resid[j] = 0
		}
	}
	return resid
}

// trend is a spectrum's slow trend: the medians of trendBlocks equal stretches of the
// grid at their centres (fractional grid indices), straight between them and flat beyond
// the first and last; none (zero everywhere) for a spectrum too short to have one.
type trend struct{ centres, levels []float64 }

// trendOf measures the trend of power.
func trendOf(power []float64) trend {
	n := len(power)
	if n < 4*trendBlocks {
		return trend{}
	}
	tr := trend{centres: make([]float64, trendBlocks), levels: make([]float64, trendBlocks)}
	scratch := make([]float64, 0, n/trendBlocks+1)
	for b := 0; b < trendBlocks; b++ {
		lo, hi := b*n/trendBlocks, (b+1)*n/trendBlocks
		scratch = append(scratch[:0], power[lo:hi]...)
		tr.levels[b] = median(scratch)
		tr.centres[b] = float64(lo+hi-1) / 2
	}
	return tr
}

// at is the trend at fractional grid index x.
func (tr trend) at(x float64) float64 {
	c, l := tr.centres, tr.levels
	switch {
	case len(c) == 0:
		return 0
	case x <= c[0]:
		return l[0]
	case x >= c[len(c)-1]:
		return l[len(l)-1]
	}
	b := sort.SearchFloat64s(c, x) - 1 // c[b] < x ≤ c[b+1]
	w := (x - c[b]) / (c[b+1] - c[b])
	return l[b] + w*(l[b+1]-l[b])
}

// Noise is a periodogram's background as the SDE measures it: its slow trend, and the
// median and the robust spread of what is left. A peak elsewhere — in a narrow window
// searched for one injected planet, say — is scored against it by SDE.
type Noise struct {
	grid          Grid
	trend         trend
	centre, sigma float64
}

// NoiseOf measures the background of a pass's power over grid g, as detrendedSDE does.
func NoiseOf(g Grid, power []float64) Noise {
	r := detrendedPower(power)
	centre, sigma := spread(r)
	return Noise{grid: g, trend: trendOf(power), centre: centre, sigma: sigma}
}

// Grid is the grid the background was measured over.
func (n Noise) Grid() Grid { return n.grid }

// SDE is the SDE a peak of power p at frequency f (1/d) has against the background; 0 when
// the background is flat. At a grid frequency it is SDESpectrum's value for that power.
func (n Noise) SDE(f, p float64) float64 {
	if !(n.sigma > 0) {
		return 0
	}
	x := (math.Cbrt(f) - math.Cbrt(n.grid.FMin)) / n.grid.Step
	return (p - n.trend.at(x) - n.centre) / n.sigma
}
