package stardensity

import (
	"math"
	"testing"

	"dipline/steps/internal/stellar"
)

func TestMedianReadsTheStarsDensity(t *testing.T) {
	// The nominal Sun's mean density: (GM)☉/G over (4/3)π R☉³ with IAU 2015 Resolution B3
	// values and CODATA 2018 G, 1.40978 g/cm³ (python3 from GM☉ = 1.3271244e20 m³/s², G =
	// 6.67430e-11 m³ kg⁻¹ s⁻², R☉ = 6.957e8 m);
	// ρ ∝ M/R³, so half the mass in half the radius is four times as dense.
	const sun = 1.40978
	cases := []struct {
		name string
		star *stellar.Star
		want float64
	}{
		{"a star of 1 M☉ and 1 R☉ has the Sun's density", &stellar.Star{Mass: []float64{1, 1, 1}, Radius: []float64{1, 1, 1}}, sun},
		{"one of 0.5 M☉ and 0.5 R☉ four times it", &stellar.Star{Mass: []float64{0.5}, Radius: []float64{0.5}}, 4 * sun},
		// Its own density draws come first; the median of ln ρ between two middle draws is
		// their geometric mean: √(1 × 4) = 2.
		{"its own draws come before mass and radius", &stellar.Star{Density: []float64{1, 4}, Mass: []float64{1, 1}, Radius: []float64{1, 1}}, 2},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rho, n := Median(c.star)
			if n == 0 || math.Abs(rho/c.want-1) > 1e-5 {
				t.Errorf("median %v g/cm3 from %d draws, want %v", rho, n, c.want)
			}
		})
	}
	t.Run("a star without density, mass or radius gives none", func(t *testing.T) {
		if rho, n := Median(&stellar.Star{Radius: []float64{1}}); n != 0 || !math.IsNaN(rho) {
			t.Errorf("median %v from %d draws, want none", rho, n)
		}
	})
}
