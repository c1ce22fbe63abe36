package bls

import (
	"testing"

	"dipline/steps/internal/astro"
)

// TestTheCoveredStarsFollowTheDurationFactors holds CoveredLessDense and CoveredDenser to
// the reasons given for durLong and durShort (Winn 2010's total duration, circular orbit;
// a/R* from the density, Seager & Mallén-Ornelas 2003): on a star a third as dense as
// stated, a central transit of k = 0.2 still fits the longest box; on one twice as dense, a
// point-like planet's transit at b = 0.9 is still no shorter than the shortest box. Both
// hold from periods of about 1.3 d round a Sun-like star (checked independently with
// python3: at 1 d the long end needs 1.77, at 3 d 1.74; the short end 0.343 and 0.345);
// closer in, the arcsine's curvature lengthens the less dense star's transit more.
func TestTheCoveredStarsFollowTheDurationFactors(t *testing.T) {
	rhoSun := densityOf(1, 1)
	duration := func(p, rho, k, b float64) float64 {
		d, err := astro.TotalDuration(p, ScaledAxis(p, rho), k, b, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		return d
	}
	for _, p := range []float64{2, 5, 30, 365.25} {
		lo, hi := DurationRange(p, rhoSun, 0)
		if long := duration(p, CoveredLessDense*rhoSun, 0.2, 0); long > hi {
			t.Errorf("P = %g d: a central k = 0.2 transit of a star %.3g× as dense lasts %.4g d, beyond the longest box %.4g d", p, CoveredLessDense, long, hi)
		}
		if short := duration(p, CoveredDenser*rhoSun, 0, 0.9); short < lo {
			t.Errorf("P = %g d: a b = 0.9 transit of a star %g× as dense lasts %.4g d, below the shortest box %.4g d", p, CoveredDenser, short, lo)
		}
	}
}
