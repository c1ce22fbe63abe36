package completeness

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/proportion"
	"dipline/steps/search/bls"
)

// CellSummary is one cell of the completeness map.
type CellSummary struct {
	Cell Cell
	// Injected, Recovered and Harmonic count the cell's injections, those recovered and
	// those found only at half or twice their period (not counted as recovered).
	Injected, Recovered, Harmonic int
	// Fraction is Recovered/Injected; Interval its Jeffreys interval at the one-sigma
	// level (proportion.OneSigma, 68.27 %). Both are NaN when nothing was injected.
	Fraction float64
	Interval proportion.Interval
	// MeanPeriod is the mean period of the cell's injections (days).
	MeanPeriod float64
	// TransitProbability is the geometric probability that a circular orbit of the mean
	// period shows a full transit (b < 1 − k, the range Plan draws from):
	// p = (1 − k)·R*/a with a/R* from the density by Kepler's law (Winn 2010,
	// arXiv:1001.2010, eq. 9 with e = 0 and the minus sign; astro.TransitProbability),
	// k the mean radius ratio of the cell's injections. NaN when nothing was injected.
	TransitProbability float64
}

// Summarise counts the outcomes cell by cell. drawn and out run in parallel (out[i] is
// the fate of drawn[i]); density is the star's mean density in g/cm³.
func Summarise(drawn []Drawn, out []Outcome, cells []Cell, density float64) ([]CellSummary, error) {
	if len(drawn) != len(out) {
		return nil, fmt.Errorf("completeness: %d injections but %d outcomes", len(drawn), len(out))
	}
	if !(density > 0) || math.IsInf(density, 0) {
		return nil, fmt.Errorf("completeness: star density %v g/cm3; it must be positive and finite", density)
	}
	sum := make([]CellSummary, len(cells))
	kSum := make([]float64, len(cells))
	for i := range cells {
		sum[i].Cell = cells[i]
	}
	for i, d := range drawn {
		if d.Cell < 0 || d.Cell >= len(cells) {
			return nil, fmt.Errorf("completeness: injection %d names cell %d of %d", i+1, d.Cell+1, len(cells))
		}
		s := &sum[d.Cell]
		s.Injected++
		s.MeanPeriod += d.Injection.Period
		kSum[d.Cell] += d.Injection.RadiusRatio
		if out[i].Recovered {
			s.Recovered++
		} else if out[i].Harmonic {
			s.Harmonic++
		}
	}
	for i := range sum {
		if err := finish(&sum[i], kSum[i], density); err != nil {
			return nil, fmt.Errorf("completeness: cell %d: %w", i+1, err)
		}
	}
	return sum, nil
}

// finish turns a cell's sums into its fraction, interval and transit probability.
func finish(s *CellSummary, kSum, density float64) error {
	if s.Injected == 0 {
		s.Fraction, s.MeanPeriod, s.TransitProbability = math.NaN(), math.NaN(), math.NaN()
		s.Interval = proportion.Interval{Lower: math.NaN(), Upper: math.NaN()}
		return nil
	}
	n := float64(s.Injected)
	s.MeanPeriod /= n
	s.Fraction = float64(s.Recovered) / n
	iv, err := proportion.Jeffreys(s.Recovered, s.Injected, proportion.OneSigma)
	if err != nil {
		return err
	}
	s.Interval = iv
	aR := bls.ScaledAxis(s.MeanPeriod, density)
	p, err := astro.TransitProbability(aR, kSum/n, 0, 0, false)
	if err != nil {
		return err
	}
	s.TransitProbability = p
	return nil
}
