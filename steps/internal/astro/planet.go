package astro

import "math"

// Heat-redistribution factors f for EquilibriumTemperature (from memory; convention of
// Cowan & Agol 2011, ApJ 729, 54).
const (
	// RedistributionFull spreads absorbed light over the whole sphere: f = 1/4.
	RedistributionFull = 0.25
	// RedistributionDayside spreads it over the day side only: f = 1/2.
	RedistributionDayside = 0.5
	// RedistributionNone re-radiates it instantly where it lands (dayside mean): f = 2/3.
	RedistributionNone = 2.0 / 3
)

// EquilibriumTemperature returns a planet's equilibrium temperature in K,
// Teq = Teff (R*/a)^{1/2} [f (1 − A_B)]^{1/4}, for host effective temperature teff (K),
// scaled semi-major axis aR = a/R*, eccentricity e, Bond albedo in [0, 1] and
// redistribution factor f (see RedistributionFull). An eccentric orbit uses the
// flux-averaged distance a (1 − e²)^{1/4} (common practice, from memory).
func EquilibriumTemperature(teff, aR, e, albedo, f float64) (float64, error) {
	if !finite(teff, aR, e, albedo, f) || teff <= 0 || aR <= 0 || f <= 0 {
		return 0, domainf("Teff %g, a/R* %g and f %g must be positive", teff, aR, f)
	}
	if albedo < 0 || albedo > 1 || e < 0 || e >= 1 {
		return 0, domainf("Bond albedo %g must lie in [0, 1] and eccentricity %g in [0, 1)", albedo, e)
	}
	d := aR * math.Sqrt(math.Sqrt(1-e*e))
	return teff * math.Sqrt(1/d) * math.Sqrt(math.Sqrt(f*(1-albedo))), nil
}

// Insolation returns the bolometric flux a planet receives relative to Earth's,
// S/S⊕ = (L*/L☉)(1 au/a)², for luminosity lumSun in L☉ and semi-major axis aAU in au.
func Insolation(lumSun, aAU float64) (float64, error) {
	if !finite(lumSun, aAU) || lumSun <= 0 || aAU <= 0 {
		return 0, domainf("luminosity %g L☉ and distance %g au must be positive", lumSun, aAU)
	}
	return lumSun / (aAU * aAU), nil
}

// InsolationFromTeff is Insolation with L*/L☉ = (R*/R☉)² (Teff/5772 K)⁴ (NominalLuminosity),
// for radius rStarSun in R☉, teff in K and aAU in au (IAU 2015 B3 nominal Sun).
func InsolationFromTeff(rStarSun, teff, aAU float64) (float64, error) {
	lum, err := NominalLuminosity(rStarSun, teff)
	if err != nil {
		return 0, err
	}
	return Insolation(lum, aAU)
}

// RVSemiAmplitude returns the star's radial-velocity semi-amplitude in m s⁻¹,
// K = (2π/P)^{1/3} G Mp sin i / [G (M* + Mp)]^{2/3} / √(1 − e²), for period in s, planet and
// star mass parameters gmPlanet and gmStar (G·M in m³ s⁻², so the measured G cancels),
// inclination inc (rad) and eccentricity e (common practice).
func RVSemiAmplitude(period, gmPlanet, gmStar, inc, e float64) (float64, error) {
	if !finite(period, gmPlanet, gmStar, inc, e) || period <= 0 || gmPlanet < 0 || gmStar <= 0 {
		return 0, domainf("period %g and stellar GM %g must be positive, planet GM %g non-negative", period, gmStar, gmPlanet)
	}
	if e < 0 || e >= 1 {
		return 0, domainf("eccentricity %g must lie in [0, 1)", e)
	}
	return math.Cbrt(2*math.Pi/period) * gmPlanet * math.Abs(math.Sin(inc)) /
		math.Pow(gmStar+gmPlanet, 2.0/3) / math.Sqrt(1-e*e), nil
}

// Chen & Kipping (2017, ApJ 834, 17) mean mass–radius relation, R ∝ M^S piecewise, in
// Earth units. Slopes, transitions and the Terran normalisation are from memory;
// continuity fixes the other normalisations.
var (
	ckSlope = [4]float64{0.279, 0.589, -0.044, 0.881} // Terran, Neptunian, Jovian, Stellar
	// ckBreak are the transition masses in M⊕: 2.04 M⊕, 0.414 M_J, 0.080 M☉.
	ckBreak = [3]float64{2.04, 0.414 * JupiterGM / EarthGM, 0.080 * SolarGM / EarthGM}
	// ckLogC are log10 normalisations per regime: log10 R = ckLogC[j] + S_j log10 M.
	ckLogC = func() [4]float64 {
		c := [4]float64{0.00346}
		for j := 1; j < 4; j++ {
			lb := math.Log10(ckBreak[j-1])
			c[j] = c[j-1] + (ckSlope[j-1]-ckSlope[j])*lb
		}
		return c
	}()
)

// ChenKippingRadius returns the mean radius in R⊕ of the Chen & Kipping (2017, ApJ 834,
// 17) relation for a mass in M⊕. It is the deterministic centre of a probabilistic
// relation (intrinsic scatter 4–15 % in radius, from memory), not a measurement.
func ChenKippingRadius(massEarth float64) (float64, error) {
	if !finite(massEarth) || massEarth <= 0 {
		return 0, domainf("mass %g M⊕ must be positive", massEarth)
	}
	j := 0
	for j < 3 && massEarth >= ckBreak[j] {
		j++
	}
	return math.Pow(10, ckLogC[j]+ckSlope[j]*math.Log10(massEarth)), nil
}

// ChenKippingMass inverts ChenKippingRadius for a radius in R⊕, returning M⊕. Only the
// Terran and Neptunian regimes are invertible: above the Neptunian–Jovian transition
// radius (≈ 14.3 R⊕) radius hardly depends on mass and an error is returned. The result is
// a statistical guess with a wide spread, never a measured mass.
func ChenKippingMass(radiusEarth float64) (float64, error) {
	if !finite(radiusEarth) || radiusEarth <= 0 {
		return 0, domainf("radius %g R⊕ must be positive", radiusEarth)
	}
	lr := math.Log10(radiusEarth)
	j := 0
	if lr >= ckLogC[0]+ckSlope[0]*math.Log10(ckBreak[0]) {
		j = 1
	}
	if lr >= ckLogC[1]+ckSlope[1]*math.Log10(ckBreak[1]) {
		return 0, domainf("radius %g R⊕ is in the Jovian regime of Chen & Kipping (2017), where radius does not determine mass", radiusEarth)
	}
	return math.Pow(10, (lr-ckLogC[j])/ckSlope[j]), nil
}

// tsmScale returns the Kempton et al. (2018) TSM scale factor for a radius in R⊕ (from
// memory): 0.190 below 1.5, 1.26 to 2.75, 1.28 to 4.0, 1.15 to 10.
func tsmScale(rp float64) float64 {
	switch {
	case rp < 1.5:
		return 0.190
	case rp < 2.75:
		return 1.26
	case rp < 4.0:
		return 1.28
	default:
		return 1.15
	}
}

// TransmissionMetric returns the transmission spectroscopy metric of Kempton et al. (2018,
// PASP 130, 114401), TSM = SF · Rp³ Teq / (Mp R*²) · 10^{−mJ/5}, for planet radius rpEarth
// (R⊕, at most 10), mass mpEarth (M⊕), stellar radius rStarSun (R☉), equilibrium
// temperature teq (K; the paper's zero-albedo, full-redistribution value) and apparent J
// magnitude magJ. The scale factors SF are from memory.
func TransmissionMetric(rpEarth, mpEarth, rStarSun, teq, magJ float64) (float64, error) {
	if !finite(rpEarth, mpEarth, rStarSun, teq, magJ) || rpEarth <= 0 || mpEarth <= 0 || rStarSun <= 0 || teq <= 0 {
		return 0, domainf("radius %g, mass %g, stellar radius %g and Teq %g must be positive", rpEarth, mpEarth, rStarSun, teq)
	}
	if rpEarth > 10 {
		return 0, domainf("radius %g R⊕ exceeds 10 R⊕, beyond the metric's scale factors", rpEarth)
	}
	return tsmScale(rpEarth) * rpEarth * rpEarth * rpEarth * teq / (mpEarth * rStarSun * rStarSun) *
		math.Pow(10, -magJ/5), nil
}

// esmWavelength is the 7.5 µm reference wavelength of the emission metric (Kempton et al.
// 2018, from memory).
const esmWavelength = 7.5e-6

// EmissionMetric returns the emission spectroscopy metric of Kempton et al. (2018, PASP
// 130, 114401), ESM = 4.29e6 · B(7.5 µm, 1.10 Teq)/B(7.5 µm, Teff) · k² · 10^{−mK/5}, for
// radius ratio k = Rp/R*, equilibrium temperature teq (K), stellar effective temperature
// teff (K) and apparent K magnitude magK. Constants 4.29e6 and 1.10 are from memory.
func EmissionMetric(k, teq, teff, magK float64) (float64, error) {
	if !finite(k, teq, teff, magK) || k <= 0 || teq <= 0 || teff <= 0 {
		return 0, domainf("radius ratio %g, Teq %g and Teff %g must be positive", k, teq, teff)
	}
	ratio := PlanckRadiance(esmWavelength, 1.10*teq) / PlanckRadiance(esmWavelength, teff)
	return 4.29e6 * ratio * k * k * math.Pow(10, -magK/5), nil
}

// PlanckRadiance returns the black-body spectral radiance B_λ(T) in W m⁻³ sr⁻¹ at
// wavelength lambda (m) and temperature temp (K): 2hc²/λ⁵ / (exp(hc/λkT) − 1). It returns 0
// for non-positive temperature or wavelength.
func PlanckRadiance(lambda, temp float64) float64 {
	if !(lambda > 0) || !(temp > 0) {
		return 0
	}
	x := Planck * SpeedOfLight / (lambda * Boltzmann * temp)
	l5 := lambda * lambda * lambda * lambda * lambda
	return 2 * Planck * SpeedOfLight * SpeedOfLight / l5 / math.Expm1(x)
}
