package astro

import (
	"math"
	"testing"
)

// relErr is |got−want|/|want|.
func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestNominalConstantsAreConsistent(t *testing.T) {
	cases := []struct {
		name      string
		got, want float64
		tol       float64 // relative
	}{
		// 4π (1 au)² S☉ = 3.8275e26 W, computed independently at high precision. Constants:
		// IAU 2015 Resolution B3 (S), IAU 2012 Resolution B2 (au).
		{"the solar constant at one au gives 3.8275e26 W", 4 * math.Pi * AU * AU * SolarIrradiance, 3.8275e26, 2e-5},
		// Computed independently, that is ≈ L☉ to 0.01 %; the difference is 0.0122 %, inside
		// B3's rounding of S☉ to 1361 W m⁻² (half a unit in the last digit: 0.5/1361 = 0.037 %).
		{"the solar constant at one au carries the nominal luminosity within the rounding of S", 4 * math.Pi * AU * AU * SolarIrradiance, SolarLuminosity, 0.5 / 1361},
		// (L☉/(4πσR☉²))^¼ = 5772.00 K, computed independently. IAU 2015 B3; CODATA 2018 σ,
		// from memory.
		{"the nominal luminosity and radius give the nominal temperature", math.Pow(SolarLuminosity/(4*math.Pi*StefanBoltzmann*SolarRadius*SolarRadius), 0.25), 5772.00, 0.005 / 5772},
		// M☉ = (GM)☉/G = 1.98841e30 kg with CODATA 2018 G, computed independently.
		{"the solar mass is GM over G", SolarMass, 1.98841e30, 0.5e-5},
		// M⊕ = 5.97217e24 kg, M_J = 1.89812e27 kg, computed independently the same way.
		{"the Earth mass is GM over G", EarthMass, 5.97217e24, 0.5e-5},
		{"the Jupiter mass is GM over G", JupiterMass, 1.89812e27, 0.5e-5},
		// Light time for 1 au = 499.004784 s (au/c, computed independently).
		{"light crosses one au in 499.004784 s", AU / SpeedOfLight, 499.004784, 1e-9},
		// Julian year = 31 557 600 s (IAU convention, common practice; from memory).
		{"a Julian year is 31 557 600 s", JulianYear, 31557600, 0},
		// Parsec = 648000/π au (IAU 2015 B2, from memory) = 3.0856775814913673e16 m
		// (IAU 2015 B2 quotes 3.085 677 581 491 367 3e16 m exactly; from memory).
		{"a parsec is 648000/π au", Parsec, 3.0856775814913673e16, 1e-15},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if e := relErr(c.got, c.want); e > c.tol {
				t.Errorf("got %.10g, want %.10g (rel err %.3g > %.3g)", c.got, c.want, e, c.tol)
			}
		})
	}
}
