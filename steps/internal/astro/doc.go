// Package astro is dipline's plain-Go numerical core for the host star and the planet's
// derived parameters: nominal astronomical constants (IAU 2015 Resolution B3, IAU 2012
// Resolution B2, CODATA 2018), transit geometry (Seager & Mallén-Ornelas 2003; Winn 2010),
// empirical M-dwarf relations (Mann et al. 2015, 2019) and the FGK relations of Torres,
// Andersen & Giménez (2010), equilibrium temperature, insolation, radial-velocity
// semi-amplitude, the deterministic mean mass–radius relation of Chen & Kipping (2017), the
// atmospheric-characterisation metrics of Kempton et al. (2018), and the dilution of a
// transit by light from companion stars (Ciardi et al. 2015). Every function takes and
// returns plain float64 in SI units unless its name or doc comment says otherwise; inputs
// outside a relation's domain give an error, never a panic. It knows nothing of workflow
// files, the cache or the terminal, and it neither fits nor samples: uncertainties and
// scatter are the caller's business. Each constant and formula is written here once: the
// step kinds, which work in days and g/cm³, call these functions rather than repeat them
// (ScaledAxisFromGRho takes G·ρ and P in whichever time unit the caller keeps, so each
// caller's arithmetic, and its results, stay as they were). Typical entry points are
// SemiMajorAxis, ScaledAxisFromGRho, TotalDuration, MannRadius, EquilibriumTemperature and
// TargetRadiusCorrection.
package astro
