package rotation

import (
	"errors"
	"math"

	"dipline/steps/detrend/robust"
	"dipline/steps/internal/periodogram"
)

// FindPeriod returns the rotation period the light curve itself shows, and the periods it
// was chosen from: the strongest periods of the series' relative flux (each series divided
// by the median of its usable points) by periodogram.Strongest, at its defaults (0.1 d up
// to half the longest series; a false-alarm probability under 0.001). The rotation is the
// strongest period, or twice it when twice it is among the others within a peak's half
// width (1/longest series in frequency): a star with spots on opposite sides shows its
// first harmonic more strongly than its rotation, and a harmonic series at the rotation
// holds both, not the reverse. ok is false when no period stands out.
func FindPeriod(series []Series) (rot float64, found []periodogram.Period, ok bool, err error) {
	pieces := make([]periodogram.Piece, 0, len(series))
	longest := 0.0
	for _, s := range series {
		v := make([]float64, len(s.Time))
		var use []float64
		for j := range s.Time {
			if usable(s, j) {
				use = append(use, s.Flux[j])
			}
		}
		if len(use) == 0 {
			continue
		}
		med := robust.MedianOf(use)
		if !(med != 0) {
			return 0, nil, false, errors.New("rotation: a stretch of the light curve has a median flux of zero")
		}
		for j := range s.Time {
			v[j] = math.NaN()
			if usable(s, j) {
				v[j] = s.Flux[j]/med - 1
			}
		}
		pieces = append(pieces, periodogram.Piece{Time: s.Time, Value: v})
		if n := len(s.Time); n > 1 {
			longest = max(longest, s.Time[n-1]-s.Time[0])
		}
	}
	found, err = periodogram.Strongest(pieces, periodogram.Options{})
	if err != nil || len(found) == 0 {
		return 0, found, false, err
	}
	rot = found[0].Period
	for _, p := range found[1:] {
		if longest > 0 && math.Abs(1/p.Period-1/(2*rot)) < 1/longest {
			return p.Period, found, true, nil
		}
	}
	return rot, found, true, nil
}

// WhiteNoise returns the white noise of one point relative to the flux, from the second
// differences of consecutive, evenly spaced usable points of each series (each divided by
// its median): for white noise of σ, f₋ − 2f₀ + f₊ has σ√6, while a smooth variation adds
// only f″·Δt², so 1.4826 × MAD/√6 measures the noise without the star (common practice for
// point-to-point scatter). ok is false with fewer than 10 such triples.
func WhiteNoise(series []Series) (float64, bool) {
	var d []float64
	for _, s := range series {
		var use []float64
		var at []int
		for j := range s.Time {
			if usable(s, j) {
				use = append(use, s.Flux[j])
				at = append(at, j)
			}
		}
		if len(use) < 3 {
			continue
		}
		med := robust.MedianOf(append([]float64(nil), use...))
		if !(med != 0) {
			continue
		}
		for i := 1; i+1 < len(at); i++ {
			a, b := s.Time[at[i]]-s.Time[at[i-1]], s.Time[at[i+1]]-s.Time[at[i]]
			if !(a > 0) || math.Abs(a-b) > 0.01*a {
				continue
			}
			d = append(d, (use[i-1]-2*use[i]+use[i+1])/med)
		}
	}
	if len(d) < 10 {
		return 0, false
	}
	return robust.RobustSigma(d) / math.Sqrt(6), true
}

// usable says whether point j of s may enter a fit.
func usable(s Series, j int) bool {
	if s.Use != nil && !s.Use[j] || !finite(s.Flux[j]) {
		return false
	}
	if s.Err != nil && (!(s.Err[j] > 0) || math.IsInf(s.Err[j], 0)) {
		return false
	}
	return true
}
