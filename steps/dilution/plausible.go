package dilution

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// maxPlanetRadiusJupiter is the largest radius, in Jupiter radii, that Implausible still
// takes for a planet. The most inflated transiting giants known are about 2 R_J (from
// memory); 2.5 R_J leaves room for the uncertainty of a single derived radius while
// anything above is the size of a low-mass star (common practice: radius cuts of 2–3 R_J
// are used to reject stellar eclipses).
const maxPlanetRadiusJupiter = 2.5

// MaxPlanetRadiusEarth is maxPlanetRadiusJupiter in Earth radii (IAU 2015 B3 nominal
// equatorial radii), about 28.0 R⊕.
var MaxPlanetRadiusEarth = maxPlanetRadiusJupiter * astro.JupiterRadius / astro.EarthRadius

// Implausible reports whether a planet radius in Earth radii (equatorial, IAU 2015 nominal)
// is not planetary, with the reason. The dilution step cannot apply it itself, for it does
// not know the transit's radius ratio; the derive step calls it with a hypothesis's radius
// (R_p = k · R_target · X_R, in R⊕) and flags the hypothesis. A radius that is not a
// positive finite number is implausible too.
func Implausible(radiusEarth float64) (bool, string) {
	switch {
	case math.IsNaN(radiusEarth) || math.IsInf(radiusEarth, 0) || radiusEarth <= 0:
		return true, fmt.Sprintf("%v is not a radius", radiusEarth)
	case radiusEarth > MaxPlanetRadiusEarth:
		return true, fmt.Sprintf("%.3g R_earth (%.3g R_J) is larger than %g R_J: the size of a star, not a planet",
			radiusEarth, radiusEarth*astro.EarthRadius/astro.JupiterRadius, maxPlanetRadiusJupiter)
	}
	return false, ""
}
