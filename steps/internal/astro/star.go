package astro

import "math"

// Valid absolute-K ranges of the M-dwarf relations (from memory; Mann et al. 2015, ApJ 804,
// 64, and Mann et al. 2019, ApJ 871, 63).
const (
	// mann15MinMK, mann15MaxMK bound the Mann et al. (2015) radius relation: 4.6 ≤ M_Ks ≤ 9.8.
	mann15MinMK, mann15MaxMK = 4.6, 9.8
	// mann19MinMK, mann19MaxMK bound the Mann et al. (2019) mass relation: 4.0 ≤ M_Ks ≤ 11.0
	// (0.075–0.70 M☉, confirmed in the abstract).
	mann19MinMK, mann19MaxMK = 4.0, 11.0
)

// mann15 are the Mann et al. (2015, ApJ 804, 64, Table 1) polynomial coefficients of R/R☉
// in M_Ks, without and with the [Fe/H] term (from memory; scatter 2.89 % and 2.70 %).
var (
	mann15    = [3]float64{1.9515, -0.3520, 0.01680}
	mann15FeH = [3]float64{1.9305, -0.3466, 0.01647}
)

// mann15FeHSlope multiplies [Fe/H] in the metallicity form: R × (1 + 0.04458 [Fe/H])
// (Mann et al. 2015, Table 1; from memory).
const mann15FeHSlope = 0.04458

// mann19 are the Mann et al. (2019, ApJ 871, 63, Table 6, n = 5, no [Fe/H] term)
// coefficients of log10(M/M☉) in powers of (M_Ks − 7.5) (from memory; scatter ≈ 2 %).
var mann19 = [6]float64{-0.642, -0.208, -8.43e-4, 7.87e-3, 1.42e-4, -2.13e-4}

// poly evaluates Σ c_i x^i by Horner's rule.
func poly(c []float64, x float64) float64 {
	s := 0.0
	for i := len(c) - 1; i >= 0; i-- {
		s = s*x + c[i]
	}
	return s
}

func checkMK(mK, lo, hi float64, rel string) error {
	if !finite(mK) || mK < lo || mK > hi {
		return domainf("absolute K magnitude %g is outside the %g–%g range of %s", mK, lo, hi, rel)
	}
	return nil
}

// MannRadius returns an M dwarf's radius in solar radii from its absolute Ks magnitude:
// R = 1.9515 − 0.3520 M_K + 0.01680 M_K², scatter 2.89 % (Mann et al. 2015, ApJ 804, 64;
// coefficients from memory). Outside 4.6 ≤ M_K ≤ 9.8 it returns an error.
func MannRadius(mK float64) (float64, error) {
	if err := checkMK(mK, mann15MinMK, mann15MaxMK, "Mann et al. (2015)"); err != nil {
		return 0, err
	}
	return poly(mann15[:], mK), nil
}

// MannRadiusFeH is MannRadius with the metallicity term:
// R = (1.9305 − 0.3466 M_K + 0.01647 M_K²)(1 + 0.04458 [Fe/H]), scatter 2.70 % (Mann et al.
// 2015; coefficients from memory). Only M_K is range-checked; [Fe/H] must be finite and is
// the caller's to keep within the calibration sample (roughly −0.6 to +0.5 dex, from memory).
func MannRadiusFeH(mK, feh float64) (float64, error) {
	if err := checkMK(mK, mann15MinMK, mann15MaxMK, "Mann et al. (2015)"); err != nil {
		return 0, err
	}
	if !finite(feh) {
		return 0, domainf("[Fe/H] %g must be finite", feh)
	}
	return poly(mann15FeH[:], mK) * (1 + mann15FeHSlope*feh), nil
}

// MannMass returns an M dwarf's mass in solar masses from its absolute Ks magnitude:
// log10 M = Σ_{i=0..5} a_i (M_K − 7.5)^i (Mann et al. 2019, ApJ 871, 63, n = 5 without
// [Fe/H]; coefficients from memory). Outside 4.0 ≤ M_K ≤ 11.0 it returns an error.
func MannMass(mK float64) (float64, error) {
	if err := checkMK(mK, mann19MinMK, mann19MaxMK, "Mann et al. (2019)"); err != nil {
		return 0, err
	}
	return math.Pow(10, poly(mann19[:], mK-7.5)), nil
}

// AbsoluteMagnitude returns M = m + 5 log10(ϖ/1 arcsec) + 5 for apparent magnitude m and
// parallax in milliarcseconds (distance modulus, common practice). Extinction is ignored.
func AbsoluteMagnitude(m, parallaxMas float64) (float64, error) {
	if !finite(m, parallaxMas) || parallaxMas <= 0 {
		return 0, domainf("parallax %g mas must be positive (and magnitude %g finite)", parallaxMas, m)
	}
	return m + 5*math.Log10(parallaxMas/1000) + 5, nil
}

// RadiusFromLuminosity returns the stellar radius in m from luminosity lum (W) and
// effective temperature teff (K) by the Stefan–Boltzmann law, R = √(L / 4πσT⁴).
func RadiusFromLuminosity(lum, teff float64) (float64, error) {
	if !finite(lum, teff) || lum <= 0 || teff <= 0 {
		return 0, domainf("luminosity %g and temperature %g must be positive", lum, teff)
	}
	return math.Sqrt(lum/(4*math.Pi*StefanBoltzmann)) / (teff * teff), nil
}

// Luminosity returns the luminosity in W of a star of radius (m) and effective
// temperature teff (K) by the Stefan–Boltzmann law, L = 4πR²σTeff⁴; RadiusFromLuminosity is
// its inverse.
func Luminosity(radius, teff float64) (float64, error) {
	if !finite(radius, teff) || radius <= 0 || teff <= 0 {
		return 0, domainf("radius %g and temperature %g must be positive", radius, teff)
	}
	t2 := teff * teff
	return 4 * math.Pi * StefanBoltzmann * radius * radius * t2 * t2, nil
}

// NominalLuminosity returns L*/L☉ = (R*/R☉)² (Teff/5772 K)⁴ for radius rStarSun in R☉ and
// teff in K, the Stefan–Boltzmann law scaled to the nominal Sun of IAU 2015 B3. It differs
// from Luminosity/L☉ by the B3 rounding of the nominal values (a few parts in a million,
// see TestNominalConstantsAreConsistent), not in substance.
func NominalLuminosity(rStarSun, teff float64) (float64, error) {
	if !finite(rStarSun, teff) || rStarSun <= 0 || teff <= 0 {
		return 0, domainf("radius %g R☉ and Teff %g K must be positive", rStarSun, teff)
	}
	t := teff / SolarTeff
	return rStarSun * rStarSun * t * t * t * t, nil
}

// MeanDensity returns the mean density in kg m⁻³ of a body of mass (kg) and radius (m),
// ρ = M / (4/3 π R³) (common practice).
func MeanDensity(mass, radius float64) (float64, error) {
	if !finite(mass, radius) || mass <= 0 || radius <= 0 {
		return 0, domainf("mass %g and radius %g must be positive", mass, radius)
	}
	return mass / (4.0 / 3 * math.Pi * math.Pow(radius, 3)), nil
}

// SolarDensity is the mean density of the nominal Sun in kg m⁻³, (GM)☉/G / (4/3 π R☉³)
// ≈ 1409.78 (IAU 2015 Resolution B3, CODATA 2018 G). It is computed once, by MeanDensity, so
// that the unit "rho_sun" and StellarDensityCGS carry the same bits.
var SolarDensity, _ = MeanDensity(SolarMass, SolarRadius)

// solarDensityCGS is SolarDensity in g/cm³.
var solarDensityCGS = SolarDensity / GramPerCm3

// StellarDensityCGS returns the mean density in g/cm³, the step kinds' unit, of a star of
// mass massSun (M☉) and radius radiusSun (R☉): ρ = ρ☉ M/R³ with ρ☉ = SolarDensity.
func StellarDensityCGS(massSun, radiusSun float64) (float64, error) {
	if !finite(massSun, radiusSun) || massSun <= 0 || radiusSun <= 0 {
		return 0, domainf("mass %g M☉ and radius %g R☉ must be positive", massSun, radiusSun)
	}
	return solarDensityCGS * massSun / (radiusSun * radiusSun * radiusSun), nil
}

// torresMass and torresRadius are the coefficients a1…a7 and b1…b7 of Torres, Andersen &
// Giménez (2010, A&ARv 18, 67) (from memory; σ(log M) = 0.027, σ(log R) = 0.014).
var (
	torresMass   = [7]float64{1.5689, 1.3787, 0.4243, 1.139, -0.1425, 0.01969, 0.1010}
	torresRadius = [7]float64{2.4427, 0.6679, 0.1771, 0.705, -0.21415, 0.02306, 0.04173}
)

func torres(c *[7]float64, teff, logg, feh float64) (float64, error) {
	if !finite(teff, logg, feh) || teff <= 0 {
		return 0, domainf("Teff %g must be positive, log g %g and [Fe/H] %g finite", teff, logg, feh)
	}
	x := math.Log10(teff) - 4.1
	l := c[0] + x*(c[1]+x*(c[2]+x*c[3])) + logg*logg*(c[4]+logg*c[5]) + c[6]*feh
	return math.Pow(10, l), nil
}

// TorresMass returns a star's mass in solar masses from Teff (K), log g (cgs, dex) and
// [Fe/H] by the eclipsing-binary calibration of Torres, Andersen & Giménez (2010, A&ARv 18,
// 67; coefficients from memory). It is meant for main-sequence and subgiant stars above
// about 0.6 M☉; the range is not enforced.
func TorresMass(teff, logg, feh float64) (float64, error) {
	return torres(&torresMass, teff, logg, feh)
}

// TorresRadius is TorresMass's companion for the radius in solar radii.
func TorresRadius(teff, logg, feh float64) (float64, error) {
	return torres(&torresRadius, teff, logg, feh)
}
