package bls

import (
	"math"
	"slices"
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
func detrendedSDE(power []float64) (float64, int) {
	return sde(detrendedPower(power))
}

// SDESpectrum returns, per frequency, the SDE that frequency would have as the peak:
// (r_j − ⟨r⟩)/σ_r, r the power less its slow trend as detrendedSDE removes it, the mean and
// population standard deviation over the whole grid. Its largest value is the pass's SDE.
// It is for showing a periodogram on the scale of the detection threshold; all zeros when
// the spectrum is flat.
func SDESpectrum(power []float64) []float64 {
	r := detrendedPower(power)
	mean, sd := meanSD(r)
	out := make([]float64, len(r))
	if sd == 0 {
		return out
	}
	for j, v := range r {
		out[j] = (v - mean) / sd
	}
	return out
}

// detrendedPower returns power less its slow trend (see detrendedSDE), NaN residuals set to
// 0; a spectrum shorter than 4·trendBlocks is returned as it is.
func detrendedPower(power []float64) []float64 {
	n := len(power)
	if n < 4*trendBlocks {
		return power
	}
	centres := make([]float64, trendBlocks)
	levels := make([]float64, trendBlocks)
	scratch := make([]float64, 0, n/trendBlocks+1)
	for b := 0; b < trendBlocks; b++ {
		lo, hi := b*n/trendBlocks, (b+1)*n/trendBlocks
		scratch = append(scratch[:0], power[lo:hi]...)
		slices.Sort(scratch)
		m := len(scratch)
		levels[b] = (scratch[(m-1)/2] + scratch[m/2]) / 2
		centres[b] = float64(lo+hi-1) / 2
	}
	resid := make([]float64, n)
	b := 0
	for j := range power {
		x := float64(j)
		for b+1 < trendBlocks-1 && x > centres[b+1] {
			b++
		}
		var level float64
		switch {
		case x <= centres[0]:
			level = levels[0]
		case x >= centres[trendBlocks-1]:
			level = levels[trendBlocks-1]
		default:
			w := (x - centres[b]) / (centres[b+1] - centres[b])
			level = levels[b] + w*(levels[b+1]-levels[b])
		}
		resid[j] = power[j] - level
		if math.IsNaN(resid[j]) {
			resid[j] = 0
		}
	}
	return resid
}
