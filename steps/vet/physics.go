package vet

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"dipline/steps/internal/astro"
)

// DayTemperature returns the hottest day-side temperature a planet can have, in K: no
// reflected light (Bond albedo 0) and no heat carried to the night side, so the day side
// re-radiates all it absorbs where it absorbs it:
//
//	T_day = Teff √(R*/a) (2/3)^¼,
//
// the ε = 0, A_B = 0 case of T_d = T0 (1 − A_B)^¼ (2/3 − 5ε/12)^¼, T0 = Teff √(R*/a), of
// Cowan & Agol (2011, ApJ 729, 54; from memory). It is astro's equilibrium
// temperature with the "none" redistribution factor f = 2/3, so the formula lives in one
// place. teff in K, aR = a/R*.
func DayTemperature(teff, aR float64) (float64, error) {
	return astro.EquilibriumTemperature(teff, aR, 0, 0, astro.RedistributionNone)
}

// PlanckRatio returns B_λ(T1)/B_λ(T2), the ratio of black-body radiances at wavelength
// lambda (m), from astro.PlanckRadiance. It is 0 when T1 is so cold that its radiance
// underflows.
func PlanckRatio(lambda, t1, t2 float64) float64 {
	b2 := astro.PlanckRadiance(lambda, t2)
	if !(b2 > 0) {
		return math.NaN()
	}
	return astro.PlanckRadiance(lambda, t1) / b2
}

// ThermalDepth returns the depth, relative to the star's light, that a planet of radius
// ratio k whose day side is a black body at tDay adds to the light at wavelength lambda:
// k² B_λ(T_day)/B_λ(Teff).
func ThermalDepth(k, lambda, tDay, teff float64) float64 {
	return k * k * PlanckRatio(lambda, tDay, teff)
}

// GeometricAlbedo returns the geometric albedo a planet needs to reflect a secondary
// eclipse of depth dSec beyond its thermal emission dThermal:
// A_g = (δ_sec − δ_thermal)(a/Rp)², with a/Rp = (a/R*)/k (e.g. Winn 2010, eq. for the
// reflected-light occultation depth, from memory).
func GeometricAlbedo(dSec, dThermal, aR, k float64) float64 {
	s := aR / k
	return (dSec - dThermal) * s * s
}

// SidakThreshold returns the significance, in σ of a one-sided normal test, that one of n
// independent trials must reach for the family of all n to keep a false-alarm probability
// alpha: each trial is tested at α₁ = 1 − (1 − α)^{1/n} (Šidák 1967, JASA 62, 626). The
// expm1/log1p form keeps α₁ exact for small α.
func SidakThreshold(alpha float64, n int) float64 {
	if n < 1 {
		n = 1
	}
	a1 := -math.Expm1(math.Log1p(-alpha) / float64(n))
	return distuv.UnitNormal.Quantile(1 - a1)
}

// MaxBlendDeltaMag returns the largest magnitude difference, blended source minus target,
// of a source whose full eclipse, diluted by the target's light, could show an ingress
// ratio rho = T12/T13 and a depth of the occulted-area fraction depth. It is NaN when even
// a source as bright as the target cannot (rho² ≤ depth).
//
// Derivation (uniform discs, a planet or star of radius ratio k on a chord at impact
// parameter b, constant speed across the disc; Winn 2010's contact points). In units of
// the chord speed the contacts lie at ∓L14 and ∓L23 from mid-eclipse, with
// L14 = √((1+k)² − b²) and L23 = √((1−k)² − b²). So
//
//	T12/T13 = (L14 − L23)/(L14 + L23),  and  L14² − L23² = (1+k)² − (1−k)² = 4k,
//
// hence T12/T13 = 4k/(L14 + L23)². As L14 + L23 ≤ (1+k) + (1−k) = 2, with equality at
// b = 0, every non-grazing eclipse has k ≤ T12/T13: the observed ingress ratio bounds
// the eclipsing body's radius ratio on whichever star it eclipses. That star's own eclipse
// is then at most k² ≤ ρ² deep, and the light of the others dilutes it to
// δ = k² F_b/(F_t + F_b). So F_b/(F_t + F_b) ≥ δ/ρ², i.e. 1 + F_t/F_b ≤ ρ²/δ, and with
// F_b/F_t = 10^{−0.4 Δm}:
//
//	Δm ≤ 2.5 log10(ρ²/δ − 1).
//
// Measured against the combined light of target and source instead of the target alone,
// F_b/F_tot = 10^{−0.4 Δm_tot} ≥ δ/ρ² gives Δm_tot ≤ 2.5 log10(ρ²/δ), the form of Vanderburg
// et al. (2019, ApJL 881, L19; from memory): the two agree for a
// faint source. Limb darkening lets a central eclipse be deeper than k² (by 1/(1 − u1/3 −
// u2/6), about 1.2 for a Sun-like star), which would loosen the bound by up to 2.5 log10
// of that factor; like the published bound, this one is geometric.
func MaxBlendDeltaMag(rho, depth float64) float64 {
	x := rho*rho/depth - 1
	if !(x > 0) {
		return math.NaN()
	}
	return 2.5 * math.Log10(x)
}

// ChordIngressRatio returns T12/T13 for radius ratio k, impact parameter b, scaled axis
// aR, eccentricity e and argument of periastron omega (rad) from Winn's (2010) total and
// full durations (astro.TotalDuration, astro.FullDuration): T12 = (T14 − T23)/2 and
// T13 = (T14 + T23)/2. It is NaN for a grazing or missing transit.
func ChordIngressRatio(k, b, aR, e, omega float64) float64 {
	t14, err1 := astro.TotalDuration(1, aR, k, b, e, omega)
	t23, err2 := astro.FullDuration(1, aR, k, b, e, omega)
	if err1 != nil || err2 != nil || !(t23 > 0) || !(t14 > t23) {
		return math.NaN()
	}
	return (t14 - t23) / (t14 + t23)
}

// MinEccentricity returns the smallest eccentricity that explains a circular-orbit density
// ratio r = ρ_circ/ρ_true: by Dawson & Johnson (2012, ApJ 756, 122; from memory) ρ_circ =
// ρ_true g³ with g = (1 + e sin ω)/√(1 − e²), which ranges over [√((1−e)/(1+e)),
// √((1+e)/(1−e))]; so the least e has g² = (1+e)/(1−e) (or its inverse), e = |g² − 1|/(g² + 1).
func MinEccentricity(r float64) float64 {
	g2 := math.Pow(r, 2.0/3)
	return math.Abs(g2-1) / (g2 + 1)
}
