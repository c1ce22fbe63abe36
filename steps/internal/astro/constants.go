package astro

import "math"

// Nominal solar and planetary conversion constants of IAU 2015 Resolution B3 (Prša et al.
// 2016, AJ 152, 41). They are exact by definition: conversion factors, not best estimates.
const (
	// SolarRadius is the nominal solar radius R☉ in m (IAU 2015 B3).
	SolarRadius = 6.957e8
	// SolarIrradiance is the nominal total solar irradiance S☉ at 1 au in W m⁻² (IAU 2015 B3).
	SolarIrradiance = 1361.0
	// SolarLuminosity is the nominal solar luminosity L☉ in W (IAU 2015 B3).
	SolarLuminosity = 3.828e26
	// SolarTeff is the nominal solar effective temperature in K (IAU 2015 B3).
	SolarTeff = 5772.0
	// SolarGM is the nominal solar mass parameter (GM)☉ in m³ s⁻² (IAU 2015 B3).
	SolarGM = 1.3271244e20
	// EarthRadius is the nominal equatorial Earth radius in m (IAU 2015 B3).
	EarthRadius = 6.3781e6
	// EarthRadiusPolar is the nominal polar Earth radius in m (IAU 2015 B3).
	EarthRadiusPolar = 6.3568e6
	// JupiterRadius is the nominal equatorial Jupiter radius in m (IAU 2015 B3).
	JupiterRadius = 7.1492e7
	// JupiterRadiusPolar is the nominal polar Jupiter radius in m (IAU 2015 B3).
	JupiterRadiusPolar = 6.6854e7
	// EarthGM is the nominal terrestrial mass parameter (GM)⊕ in m³ s⁻² (IAU 2015 B3).
	EarthGM = 3.986004e14
	// JupiterGM is the nominal Jovian mass parameter (GM)_J in m³ s⁻² (IAU 2015 B3).
	JupiterGM = 1.2668653e17
)

// Other defined and measured constants.
const (
	// AU is the astronomical unit in m, exact (IAU 2012 Resolution B2).
	AU = 149597870700.0
	// G is the Newtonian constant of gravitation in m³ kg⁻¹ s⁻² (CODATA 2018,
	// 6.674 30(15)e-11). It is measured; prefer the GM constants where G cancels.
	G = 6.67430e-11
	// StefanBoltzmann is σ in W m⁻² K⁻⁴ (CODATA 2018; exact since the 2019 SI
	// redefinition, value from memory).
	StefanBoltzmann = 5.670374419e-8
	// SpeedOfLight is c in m s⁻¹, exact (SI).
	SpeedOfLight = 299792458.0
	// Planck is h in J s, exact since the 2019 SI redefinition (CODATA 2018; from memory).
	Planck = 6.62607015e-34
	// Boltzmann is k_B in J K⁻¹, exact since the 2019 SI redefinition (CODATA 2018; from
	// memory).
	Boltzmann = 1.380649e-23
	// Day is the Julian day in s (IAU standard; from memory).
	Day = 86400.0
	// JulianYear is 365.25 days in s (IAU standard; from memory).
	JulianYear = 365.25 * Day
	// Parsec is 648000/π au in m (IAU 2015 Resolution B2; from memory).
	Parsec = 648000 / math.Pi * AU
	// GramPerCm3 is one g cm⁻³ in kg m⁻³ (exact, SI): the step kinds give densities in
	// g/cm³, the functions here take kg m⁻³.
	GramPerCm3 = 1000.0
)

// Masses as GM/G, as IAU 2015 B3 recommends: GM is exact, G carries the uncertainty.
const (
	// SolarMass is (GM)☉/G in kg (≈ 1.98841e30).
	SolarMass = SolarGM / G
	// EarthMass is (GM)⊕/G in kg (≈ 5.97217e24).
	EarthMass = EarthGM / G
	// JupiterMass is (GM)_J/G in kg (≈ 1.89812e27).
	JupiterMass = JupiterGM / G
)
