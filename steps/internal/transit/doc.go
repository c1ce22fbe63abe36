// Package transit is the numerical core of dipline's physical transit model: complete
// elliptic integrals (Bulirsch's cel), the relative flux of a quadratically limb-darkened
// star occulted by an opaque disk (Mandel & Agol 2002, ApJ 580, L171), Kipping's (2013)
// q1,q2 limb-darkening parametrisation, and orbit helpers (projected separation for
// circular and eccentric orbits, Kepler's equation, supersampled exposures after Kipping
// 2010). It works on plain float64 slices and knows nothing of workflow files, the cache
// or the terminal; it does not fit, sample or read data. The main entry point is Flux.
package transit
