package main

import "math"

// Nominal solar values of IAU 2015 Resolution B3 (Prša et al. 2016, AJ 152, 41), and G of
// CODATA 2018 (it cancels out of a/R*, see planet.derive).
const (
	gmSun         = 1.3271244e20 // (GM)_sun, m^3 s^-2
	rSun          = 6.957e8      // R_sun, m
	rEarth        = 6.3781e6     // equatorial R_earth, m
	gravity       = 6.67430e-11  // m^3 kg^-1 s^-2
	secondsPerDay = 86400.0
)

// lightCurveBand is the invented name of the photometer's band. The light curves, the
// limb darkening and the companion's second magnitude difference are all in it.
const lightCurveBand = "survey-red"

// star describes the invented host FW-3318: an early-to-mid M dwarf with a spotted,
// fast-rotating surface.
type star struct {
	ID      string
	RA, Dec float64 // degrees (invented)
	// AbsKs is the absolute Ks magnitude of the host alone (without its companion).
	AbsKs float64
	// Radius and Mass, in solar units, are the Mann et al. (2015) radius and Mann et al.
	// (2019) mass at AbsKs, rounded to three decimals (checked in TestStar).
	Radius, Mass float64
	Teff         float64 // K
	JMinusKs     float64 // the host's J − Ks colour, mag
	// LD is the quadratic limb darkening in the light curve's band: I(μ)/I(1) =
	// 1 − u1(1−μ) − u2(1−μ)². The values are invented, of the size one expects for a cool
	// dwarf in a red band.
	LD limbDarkening
	// RotationDays is the equatorial rotation period.
	RotationDays float64
	// AxisInclinationDeg is the angle between the rotation axis and the line of sight
	// (90° = seen equator-on).
	AxisInclinationDeg float64
	// Shear is the relative differential rotation α: a spot at latitude ℓ goes round in
	// RotationDays / (1 − α sin²ℓ). It makes spots drift against each other, so the
	// modulation evolves slowly even while spots keep their size.
	Shear float64
}

// density is the star's mean density in kg m⁻³: M / (4/3 π R³), with M = (GM)☉/G.
func (s *star) density() float64 {
	r := s.Radius * rSun
	return s.Mass * gmSun / gravity / (4.0 / 3 * math.Pi * r * r * r)
}

// companion is a fainter star close to the host on the sky, inside the photometer's
// aperture and the catalogue's resolution, so that its light is in both.
type companion struct {
	Name       string
	Separation float64 // arcsec
	// Magnitude differences, companion minus host, with their one-sigma errors: in Ks
	// (from imaging), in J (only blended into the catalogue) and in the light curve's
	// band.
	DeltaKs, DeltaKsErr     float64
	DeltaJ                  float64
	DeltaBand, DeltaBandErr float64
}

// fluxRatio is the companion's light over the host's in the light curve's band,
// F_c/F_t = 10^(−0.4 Δm) (Pogson's ratio, common practice).
func (c *companion) fluxRatio() float64 {
	if c == nil {
		return 0
	}
	return math.Pow(10, -0.4*c.DeltaBand)
}

// planet is one injected planet on a circular orbit. The first block is chosen; the
// second is derived by derive from the star, its companion and the first block.
type planet struct {
	Name   string
	Period float64 // days
	Epoch  float64 // a mid-transit time, BJD_TDB − 2460000
	// Depth is the relative flux deficit at mid-transit as the light curves show it:
	// diluted by the companion, limb darkening included, before exposure smearing.
	Depth  float64
	Impact float64 // impact parameter b, in stellar radii

	ARs            float64 // a / R*, from the star's density by Kepler's third law
	K              float64 // radius ratio Rp / R*, solved so that the depth is Depth
	DepthUndiluted float64 // the deficit at mid-transit the host alone would show
	Incl           float64 // orbital inclination, radians
	T14            float64 // first to fourth contact, days
	T23            float64 // second to third contact (flat part), days
	Shape          string  // a one-line description of the model, for truth.json
}

// derive fills in the geometry of p around s, whose light is diluted by a companion
// giving dilution = F_c/F_t of the host's light.
//
// a/R* follows from Kepler's third law on a circular orbit and the star's mean density,
// a/R* = (G ρ P² / 3π)^{1/3} (Seager & Mallén-Ornelas 2003, ApJ 585, 1038). The radius
// ratio k is solved (by bisection: the deficit grows with k) so that the host's deficit
// at mid-transit, z = b, is Depth·(1 + F_c/F_t): diluted by the companion's light it is
// Depth. The contact durations follow Winn (2010, "Transits and Occultations",
// arXiv:1001.2010, eqs. 14–15) for a circular orbit:
//
//	T14 = P/π · asin( √((1+k)² − b²) / (a/R* · sin i) ),  T23 the same with (1−k).
func (p *planet) derive(s *star, dilution float64) {
	period := p.Period * secondsPerDay
	p.ARs = math.Cbrt(gravity * s.density() * period * period / (3 * math.Pi))
	p.Incl = math.Acos(p.Impact / p.ARs)
	p.DepthUndiluted = p.Depth * (1 + dilution)
	lo, hi := 0.0, 0.5
	for hi-lo > 1e-15 {
		mid := (lo + hi) / 2
		if 1-occultedFlux(p.Impact, mid, s.LD) < p.DepthUndiluted {
			lo = mid
		} else {
			hi = mid
		}
	}
	p.K = (lo + hi) / 2
	p.T14 = contactDuration(p, 1+p.K)
	p.T23 = contactDuration(p, 1-p.K)
	p.Shape = "Mandel and Agol (2002) occultation of a quadratically limb-darkened star by an opaque disc, circular orbit, diluted by the companion, averaged over each exposure"
}

// contactDuration is the time the planet's centre spends within separation r of the
// star's centre (r = 1+k for T14, 1−k for T23).
func contactDuration(p *planet, r float64) float64 {
	x := math.Sqrt(r*r-p.Impact*p.Impact) / (p.ARs * math.Sin(p.Incl))
	return p.Period / math.Pi * math.Asin(x)
}

// separation returns the sky-projected distance between the centres of planet and star,
// in stellar radii, at time t, and whether the planet is on the near side of the star.
func (p *planet) separation(t float64) (z float64, front bool) {
	phase := 2 * math.Pi * (t - p.Epoch) / p.Period
	x := p.ARs * math.Sin(phase)
	y := p.ARs * math.Cos(p.Incl) * math.Cos(phase)
	return math.Hypot(x, y), math.Cos(phase) > 0
}

// deficit is the fraction of the host's own light (no companion) the planet hides at
// time t, at that instant: 1 − occultedFlux(z(t)). Occultations of the planet by the star
// are not modelled (the planet gives no light).
func (p *planet) deficit(s *star, t float64) float64 {
	z, front := p.separation(t)
	if !front || z >= 1+p.K {
		return 0
	}
	return 1 - occultedFlux(z, p.K, s.LD)
}

// nearestMid returns the mid-transit time of p closest to t.
func (p *planet) nearestMid(t float64) float64 {
	return p.Epoch + math.Round((t-p.Epoch)/p.Period)*p.Period
}
