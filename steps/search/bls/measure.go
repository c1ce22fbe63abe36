package bls

import "math"

// dipMeasure is what the data say about one box ephemeris (frequency, mid-transit, duration).
type dipMeasure struct {
	depth, depthSigma float64
	binnedNoise       float64 // σ_T, days-binned scatter of the out-of-transit flux
	snr               float64
	transits          int // transits with data
	inPoints          int
}

// minBinnedNoiseBins is the least number of duration-long bins of out-of-transit data from
// which σ_T is taken; with fewer, the SNR falls back to depth/σ_depth.
const minBinnedNoiseBins = 10

// measureDip measures the depth, its error, the transits with data and the SNR of the box
// with frequency f (1/d), mid-transit tc (time since t0) and duration dur (days).
//
// Depth is the difference of the weighted mean flux out of and in transit; its error is
// sqrt(1/Σ_in σ⁻² + 1/Σ_out σ⁻²), scaled up by sqrt(χ²/ν) of the out-of-transit points
// about their mean when that exceeds 1 (errors that understate the scatter).
//
// A transit counts as having data when it holds at least half the points its duration
// spans at the cadence (at least one).
//
// SNR = depth / σ_T × sqrt(N_tr), where N_tr is the number of transits with data and σ_T is
// the standard deviation of the out-of-transit flux averaged in consecutive bins one
// duration long (points within mask·duration/2 of a mid-transit left out; bins holding
// fewer than half the points a duration spans ignored). Binning to the duration makes
// correlated ("red") noise on the transit's time scale count in full.
func measureDip(p *prepared, f, tc, dur, mask float64) dipMeasure {
	var m dipMeasure
	per := 1 / f
	need := math.Max(1, math.Ceil(0.5*dur/p.cadence))
	e0 := math.Round((0 - tc) * f)
	e1 := math.Round((p.span() - tc) * f)
	counts := make([]int, int(e1-e0)+1)
	var wIn, fIn, wOut, fOut float64
	for i, t := range p.t {
		x := (t - tc) * f
		e := math.Round(x)
		if math.Abs(x-e)*per <= dur/2 {
			wIn += p.invVar[i]
			fIn += p.invVar[i] * p.flux[i]
			counts[int(e-e0)]++
			m.inPoints++
		} else {
			wOut += p.invVar[i]
			fOut += p.invVar[i] * p.flux[i]
		}
	}
	if wIn == 0 || wOut == 0 {
		return m
	}
	for _, c := range counts {
		if float64(c) >= need {
			m.transits++
		}
	}
	meanIn, meanOut := fIn/wIn, fOut/wOut
	var chi2 float64
	nOut := len(p.t) - m.inPoints
	for i, t := range p.t {
		x := (t - tc) * f
		if math.Abs(x-math.Round(x))*per > dur/2 {
			d := p.flux[i] - meanOut
			chi2 += d * d * p.invVar[i]
		}
	}
	scale := 1.0
	if nOut > 1 {
		scale = math.Max(1, math.Sqrt(chi2/float64(nOut-1)))
	}
	m.depth = meanOut - meanIn
	m.depthSigma = math.Sqrt(1/wIn+1/wOut) * scale

	// σ_T from duration-long bins of the out-of-transit flux.
	nbin := int(p.span()/dur) + 1
	sw := make([]float64, nbin)
	sf := make([]float64, nbin)
	sc := make([]int, nbin)
	for i, t := range p.t {
		x := (t - tc) * f
		if math.Abs(x-math.Round(x))*per <= mask*dur/2 {
			continue
		}
		k := min(int(t/dur), nbin-1)
		sw[k] += p.invVar[i]
		sf[k] += p.invVar[i] * p.flux[i]
		sc[k]++
	}
	var means []float64
	for k := range sw {
		if float64(sc[k]) >= need && sw[k] > 0 {
			means = append(means, sf[k]/sw[k])
		}
	}
	if len(means) >= minBinnedNoiseBins {
		var mu float64
		for _, v := range means {
			mu += v
		}
		mu /= float64(len(means))
		var ss float64
		for _, v := range means {
			ss += (v - mu) * (v - mu)
		}
		m.binnedNoise = math.Sqrt(ss / float64(len(means)-1))
	}
	switch {
	case m.binnedNoise > 0:
		m.snr = m.depth / m.binnedNoise * math.Sqrt(float64(m.transits))
	case m.depthSigma > 0:
		m.snr = m.depth / m.depthSigma
	}
	return m
}
