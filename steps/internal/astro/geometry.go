package astro

import (
	"errors"
	"fmt"
	"math"
)

// ErrDomain is wrapped by every error this package returns for an argument outside a
// function's or a relation's domain.
var ErrDomain = errors.New("argument outside the domain")

func domainf(format string, a ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrDomain}, a...)...)
}

// finite reports whether every x is neither NaN nor ±Inf.
func finite(xs ...float64) bool {
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// checkOrbit validates the scaled semi-major axis a/R*, eccentricity e and argument of
// periastron ω (rad) shared by the transit-geometry functions.
func checkOrbit(aR, e, omega float64) error {
	if !finite(aR, e, omega) {
		return domainf("orbit parameters must be finite (a/R*=%g, e=%g, ω=%g)", aR, e, omega)
	}
	if aR <= 1 {
		return domainf("a/R* = %g must exceed 1", aR)
	}
	if e < 0 || e >= 1 {
		return domainf("eccentricity %g must lie in [0, 1)", e)
	}
	return nil
}

// transitFactor is (1 − e²)/(1 + e sin ω), the star–planet distance at mid-transit in
// units of a (Winn 2010, eq. 7 and 8 in his numbering, approximately).
func transitFactor(e, omega float64) float64 {
	return (1 - e*e) / (1 + e*math.Sin(omega))
}

// ScaledAxisFromGRho returns a/R* = (Gρ P² / 3π)^{1/3}, the semi-major axis in stellar
// radii of a planet of negligible mass on an orbit of period P around a star of mean
// density ρ: Kepler's third law a³ = GM* P²/4π² with M* = (4π/3) ρ R*³ (Seager &
// Mallén-Ornelas 2003, ApJ 585, 1038). Only the dimensionless Gρ P² enters, so gRho = G·ρ
// and period may be in any reciprocal units of time (s⁻² and s, or d⁻² and d). This is the
// one place the law is written for a/R*: ScaledAxisFromDensity and the step kinds, which
// work in days and g/cm³, fold their units into gRho or the period and call it.
func ScaledAxisFromGRho(gRho, period float64) (float64, error) {
	if !finite(gRho, period) || gRho <= 0 || period <= 0 {
		return 0, domainf("G·ρ %g and period %g must be positive", gRho, period)
	}
	return math.Cbrt(gRho * period * period / (3 * math.Pi)), nil
}

// PeriodFromScaledAxis inverts ScaledAxisFromGRho: the period P = √(3π (a/R*)³ / Gρ) of
// an orbit at a/R* = aR around a star with G·ρ = gRho, in the unit of time of gRho (Seager
// & Mallén-Ornelas 2003, ApJ 585, 1038, solved for P).
func PeriodFromScaledAxis(aR, gRho float64) (float64, error) {
	if !finite(aR, gRho) || aR <= 0 || gRho <= 0 {
		return 0, domainf("a/R* %g and G·ρ %g must be positive", aR, gRho)
	}
	return math.Sqrt(3 * math.Pi * aR * aR * aR / gRho), nil
}

// ScaledAxisAtPeriod returns a/R* at period p1 of a planet of negligible mass whose a/R* is
// aR at period p0 around the same star: at a fixed stellar density Kepler's third law gives
// a ∝ P^{2/3}, so a/R* = aR (p1/p0)^{2/3}. The periods may be in any one unit.
func ScaledAxisAtPeriod(aR, p0, p1 float64) (float64, error) {
	if !finite(aR, p0, p1) || aR <= 0 || p0 <= 0 || p1 <= 0 {
		return 0, domainf("a/R* %g and periods %g and %g must be positive", aR, p0, p1)
	}
	r := p1 / p0
	return aR * math.Cbrt(r*r), nil
}

// ScaledAxisFromDensity returns a/R* for a planet of negligible mass on a period of
// period seconds around a star of mean density rho (kg m⁻³):
// a/R* = (G ρ P² / 3π)^{1/3} (Seager & Mallén-Ornelas 2003, ApJ 585, 1038), through
// ScaledAxisFromGRho.
func ScaledAxisFromDensity(rho, period float64) (float64, error) {
	if !finite(rho, period) || rho <= 0 || period <= 0 {
		return 0, domainf("density %g and period %g must be positive", rho, period)
	}
	return ScaledAxisFromGRho(G*rho, period)
}

// DensityFromScaledAxis returns the stellar mean density in kg m⁻³ implied by a/R* and a
// period in seconds, neglecting the planet's mass: ρ* = 3π (a/R*)³ / (G P²) (Seager &
// Mallén-Ornelas 2003, ApJ 585, 1038).
func DensityFromScaledAxis(aR, period float64) (float64, error) {
	if !finite(aR, period) || aR <= 0 || period <= 0 {
		return 0, domainf("a/R* %g and period %g must be positive", aR, period)
	}
	return 3 * math.Pi * aR * aR * aR / (G * period * period), nil
}

// SemiMajorAxis returns the semi-major axis in m of an orbit of period seconds whose
// total mass parameter G(M* + Mp) is gm (m³ s⁻²), by Kepler's third law
// a³ = GM P² / 4π².
func SemiMajorAxis(period, gm float64) (float64, error) {
	if !finite(period, gm) || period <= 0 || gm <= 0 {
		return 0, domainf("period %g and GM %g must be positive", period, gm)
	}
	return math.Cbrt(gm * period * period / (4 * math.Pi * math.Pi)), nil
}

// SemiMajorAxisAU returns the semi-major axis in au for a period in days around a total
// mass in solar masses, using the exact nominal (GM)☉ of IAU 2015 B3.
func SemiMajorAxisAU(periodDays, massSun float64) (float64, error) {
	a, err := SemiMajorAxis(periodDays*Day, massSun*SolarGM)
	return a / AU, err
}

// ImpactParameter returns the transit impact parameter in stellar radii,
// b = (a/R*) cos i (1 − e²)/(1 + e sin ω), for inclination inc and argument of periastron
// omega in radians (Winn 2010, arXiv:1001.2010).
func ImpactParameter(aR, inc, e, omega float64) (float64, error) {
	if err := checkOrbit(aR, e, omega); err != nil {
		return 0, err
	}
	if !finite(inc) {
		return 0, domainf("inclination %g must be finite", inc)
	}
	return math.Abs(aR * math.Cos(inc) * transitFactor(e, omega)), nil
}

// Inclination returns the orbital inclination in radians (0 ≤ i ≤ π/2) for impact
// parameter b: i = arccos[b (R*/a)(1 + e sin ω)/(1 − e²)] (Winn 2010, arXiv:1001.2010).
// An impact parameter the orbit cannot reach is an error.
func Inclination(b, aR, e, omega float64) (float64, error) {
	if err := checkOrbit(aR, e, omega); err != nil {
		return 0, err
	}
	if !finite(b) || b < 0 {
		return 0, domainf("impact parameter %g must be non-negative", b)
	}
	c := b / (aR * transitFactor(e, omega))
	if c > 1 {
		return 0, domainf("impact parameter %g exceeds the projected orbit (%g stellar radii)", b, aR*transitFactor(e, omega))
	}
	return math.Acos(c), nil
}

// duration evaluates Winn's (2010) expression with chord half-length² = (1 ± k)² − b².
func duration(period, aR, chord2, b, e, omega float64) (float64, error) {
	inc, err := Inclination(b, aR, e, omega)
	if err != nil {
		return 0, err
	}
	if chord2 <= 0 {
		return 0, nil
	}
	x := math.Sqrt(chord2) / (aR * math.Sin(inc))
	if x > 1 { // the star fills the orbit's projected chord: half an orbit at most
		x = 1
	}
	return period / math.Pi * math.Asin(x) * math.Sqrt(1-e*e) / (1 + e*math.Sin(omega)), nil
}

func checkDuration(period, k float64) error {
	if !finite(period, k) || period <= 0 || k < 0 {
		return domainf("period %g must be positive and radius ratio %g non-negative", period, k)
	}
	return nil
}

// TotalDuration returns T14, first to fourth contact, in the unit of period:
// T14 = (P/π) arcsin[(R*/a) √((1+k)² − b²)/sin i] √(1−e²)/(1 + e sin ω)
// (Winn 2010, arXiv:1001.2010), for radius ratio k = Rp/R*, impact parameter b, eccentricity
// e and argument of periastron omega (rad). It is 0 when the planet misses the star.
func TotalDuration(period, aR, k, b, e, omega float64) (float64, error) {
	if err := checkDuration(period, k); err != nil {
		return 0, err
	}
	return duration(period, aR, (1+k)*(1+k)-b*b, b, e, omega)
}

// FullDuration returns T23, second to third contact, in the unit of period: as
// TotalDuration with (1 − k) in place of (1 + k) (Winn 2010, arXiv:1001.2010). It is 0 for
// a grazing transit or a miss.
func FullDuration(period, aR, k, b, e, omega float64) (float64, error) {
	if err := checkDuration(period, k); err != nil {
		return 0, err
	}
	if k >= 1 {
		return 0, nil
	}
	return duration(period, aR, (1-k)*(1-k)-b*b, b, e, omega)
}

// TransitProbability returns the geometric probability that a randomly oriented orbit
// transits, p = [(1 ± k)/(a/R*)] (1 + e sin ω)/(1 − e²) (Winn 2010, arXiv:1001.2010);
// withGrazing selects the + sign (any overlap) and otherwise the − sign (full transits).
// With k = 0 it is the probability that the planet's centre crosses the disc.
func TransitProbability(aR, k, e, omega float64, withGrazing bool) (float64, error) {
	if err := checkOrbit(aR, e, omega); err != nil {
		return 0, err
	}
	if !finite(k) || k < 0 {
		return 0, domainf("radius ratio %g must be non-negative", k)
	}
	r := 1 - k
	if withGrazing {
		r = 1 + k
	}
	if r <= 0 {
		return 0, nil
	}
	return math.Min(1, r/(aR*transitFactor(e, omega))), nil
}

// TransitDepth returns the geometric depth (Rp/R*)² of a planet of radius rp crossing a
// uniform star of radius rs (any common length unit), ignoring limb darkening.
func TransitDepth(rp, rs float64) (float64, error) {
	if !finite(rp, rs) || rp < 0 || rs <= 0 {
		return 0, domainf("radii %g and %g must be non-negative and positive", rp, rs)
	}
	k := rp / rs
	return k * k, nil
}

// AngularDiameter returns the angle in radians that a sphere of radius r subtends seen from
// a distance d from its centre (one length unit for both), 2 arcsin(r/d); π from inside it
// (d ≤ r) (common practice).
func AngularDiameter(r, d float64) (float64, error) {
	if !finite(r, d) || r < 0 || d <= 0 {
		return 0, domainf("radius %g must be non-negative and distance %g positive", r, d)
	}
	return 2 * math.Asin(math.Min(1, r/d)), nil
}
