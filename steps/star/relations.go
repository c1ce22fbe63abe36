package star

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// Relation names, as stored in stellar.Star.Relation and in the artifact's basis.
const (
	// RelationMann2015 is the M_Ks–radius relation of Mann et al. (2015, ApJ 804, 64); the
	// dilution step estimates a companion's radius from its M_Ks with the same relation.
	RelationMann2015 = "Mann et al. 2015"
)

// Fractional scatter of the relations about their fits, drawn per sample when the
// relation_scatter attribute is true.
const (
	// scatterMann15 is the Mann et al. (2015, ApJ 804, 64) radius relation's scatter without
	// [Fe/H] (2.89 %), scatterMann15FeH with it (2.70 %) (Table 1; from memory).
	scatterMann15    = 0.0289
	scatterMann15FeH = 0.0270
	// scatterMann19 is the Mann et al. (2019, ApJ 871, 63) mass relation's scatter, about
	// 2 % (from memory; the abstract quotes 2–3 % precision).
	scatterMann19 = 0.020
	// scatterTorresLogM is the scatter of the Torres, Andersen & Giménez (2010, A&ARv 18, 67)
	// mass calibration in log10 M, 0.027 dex (from memory).
	scatterTorresLogM = 0.027
	// scatterColourTeff is the scatter of the Mann et al. (2015) V−J temperature relation,
	// 55 K (from memory).
	scatterColourTeff = 55.0
)

// Valid ranges of the relations in absolute Ks magnitude (from memory; the same values
// astro enforces).
const (
	mann15Lo, mann15Hi = 4.6, 9.8
	mann19Lo, mann19Hi = 4.0, 11.0
)

// mkRelation is one of the Mann relations in M_Ks: valid on [lo, hi], where astro
// evaluates it; past the range it is continued by its own polynomial (see continued).
type mkRelation struct {
	name   string
	lo, hi float64
}

var (
	mann15Radius = mkRelation{"Mann et al. (2015) M_Ks–radius relation", mann15Lo, mann15Hi}
	mann19Mass   = mkRelation{"Mann et al. (2019) M_Ks–mass relation", mann19Lo, mann19Hi}
)

func (r mkRelation) inside(mk float64) bool { return mk >= r.lo && mk <= r.hi }

// rangeError is the message for an absolute magnitude outside a relation's range.
func (r mkRelation) rangeError(mk float64) string {
	return fmt.Sprintf("absolute Ks magnitude %.3f is outside the %.1f–%.1f range of the %s", mk, r.lo, r.hi, r.name)
}

// continued evaluates f, known to be a polynomial of the given degree in x and defined by
// astro only on [lo, hi], at any x: inside the range by f itself, outside by the Lagrange
// polynomial through degree+1 Chebyshev–Lobatto nodes of the range. That polynomial is f's
// own (exactly, up to rounding), so the relation is continued, not replaced, and its
// coefficients stay in astro alone.
func continued(f func(float64) (float64, error), degree int, lo, hi, x float64) (float64, error) {
	if x >= lo && x <= hi {
		return f(x)
	}
	var nodes, vals [8]float64
	mid, half := (lo+hi)/2, (hi-lo)/2
	for k := 0; k <= degree; k++ {
		nodes[k] = mid - half*math.Cos(math.Pi*float64(k)/float64(degree))
		v, err := f(nodes[k])
		if err != nil {
			return 0, err
		}
		vals[k] = v
	}
	sum := 0.0
	for k := 0; k <= degree; k++ {
		w := vals[k]
		for j := 0; j <= degree; j++ {
			if j != k {
				w *= (x - nodes[j]) / (nodes[k] - nodes[j])
			}
		}
		sum += w
	}
	return sum, nil
}

// mannRadius returns the Mann et al. (2015) radius in R☉ at mk, with the [Fe/H] form when
// useFeH, continued past 4.6–9.8 by the relation's quadratic.
func mannRadius(mk, feh float64, useFeH bool) (float64, error) {
	f := astro.MannRadius
	if useFeH {
		f = func(m float64) (float64, error) { return astro.MannRadiusFeH(m, feh) }
	}
	return continued(f, 2, mann15Lo, mann15Hi, mk)
}

// mannMass returns the Mann et al. (2019) mass in M☉ at mk, continued past 4.0–11.0 by the
// relation's quintic in log10 M.
func mannMass(mk float64) (float64, error) {
	logM := func(m float64) (float64, error) {
		v, err := astro.MannMass(m)
		return math.Log10(v), err
	}
	l, err := continued(logM, 5, mann19Lo, mann19Hi, mk)
	return math.Pow(10, l), err
}

// slopeStep is the half-step in magnitudes of the central differences below: small enough
// that the truncation error (∝ h²) is below 1e-7 of the slope, large enough that rounding
// (∝ 1e-16/h) is negligible.
const slopeStep = 1e-3

// lnSlope returns d ln f/d M_K at mk by a central difference of f.
func lnSlope(f func(float64) (float64, error), mk float64) (float64, error) {
	hi, err := f(mk + slopeStep)
	if err != nil {
		return 0, err
	}
	lo, err := f(mk - slopeStep)
	if err != nil {
		return 0, err
	}
	if !(hi > 0 && lo > 0) {
		return 0, fmt.Errorf("the relation is not positive near M_Ks = %.3f", mk)
	}
	return (math.Log(hi) - math.Log(lo)) / (2 * slopeStep), nil
}

// RadiusSlope returns d ln R/d M_Ks of the Mann et al. (2015) relation (without [Fe/H]) at
// mk; MassSlope the same for the Mann et al. (2019) mass relation.
func RadiusSlope(mk float64) (float64, error) {
	return lnSlope(func(m float64) (float64, error) { return mannRadius(m, 0, false) }, mk)
}

// MassSlope returns d ln M/d M_Ks of the Mann et al. (2019) relation at mk.
func MassSlope(mk float64) (float64, error) { return lnSlope(mannMass, mk) }

// colourTeff are the coefficients of the Mann et al. (2015, ApJ 804, 64, Table 2) relation
// Teff/3500 K = Σ c_i (V−J)^i (from memory: verify against the paper before relying on it).
var colourTeff = [5]float64{2.840, -1.3453, 0.3906, -0.0546, 0.002913}

// colourLo, colourHi bound the V−J colours over which the relation is used without a
// warning (roughly the calibration sample's K7–M7 range; from memory).
const colourLo, colourHi = 2.0, 6.5

// ColourTeff returns Teff in K from V−J by the Mann et al. (2015) relation (coefficients from
// memory).
func ColourTeff(vj float64) float64 {
	s := 0.0
	for i := len(colourTeff) - 1; i >= 0; i-- {
		s = s*vj + colourTeff[i]
	}
	return 3500 * s
}
