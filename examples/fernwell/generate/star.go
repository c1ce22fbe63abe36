package main

import "math"

// Nominal solar values of IAU 2015 Resolution B3 (Prša et al. 2016, AJ 152, 41).
const (
	gmSun         = 1.3271244e20 // (GM)_sun, m^3 s^-2
	rSun          = 6.957e8      // R_sun, m
	secondsPerDay = 86400.0
)

// star describes the invented host FW-3318: a cool dwarf with a spotted, fast-rotating
// surface.
type star struct {
	ID     string
	Radius float64 // in solar radii
	Mass   float64 // in solar masses
	// U1 and U2 are the quadratic limb-darkening coefficients: the surface brightness at
	// μ = cos(angle from disc centre) is I(μ) = 1 − U1(1−μ) − U2(1−μ)². The values are
	// invented, of the size one expects for a cool dwarf in a red band.
	U1, U2 float64
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

// intensity is the limb-darkened surface brightness at μ, relative to disc centre.
func (s *star) intensity(mu float64) float64 {
	return 1 - s.U1*(1-mu) - s.U2*(1-mu)*(1-mu)
}

// meanIntensity is the disc-averaged brightness: the integral of 2μ·I(μ) over μ in [0, 1],
// which for the quadratic law is 1 − U1/3 − U2/6.
func (s *star) meanIntensity() float64 {
	return 1 - s.U1/3 - s.U2/6
}

// planet is one injected planet on a circular orbit. The first block is chosen; the
// second is derived by derive from the star and the first block.
type planet struct {
	Name   string
	Period float64 // days
	Epoch  float64 // a mid-transit time, BJD_TDB − 2460000
	Depth  float64 // relative flux deficit at mid-transit, limb darkening included
	Impact float64 // impact parameter b, in stellar radii

	ARs   float64 // a / R*, from Kepler's third law
	K     float64 // radius ratio Rp / R*
	Incl  float64 // orbital inclination, radians
	T14   float64 // first to fourth contact, days
	T23   float64 // second to third contact (flat part), days
	Ramp  float64 // deficit at second/third contact, where the ingress ramp ends
	Shape string  // a one-line description of the model, for truth.json
}

// derive fills in the geometry of p around s.
//
// a/R* comes from Kepler's third law, a³ = GM P²/(4π²). The radius ratio k is chosen so
// that the deficit at mid-transit equals Depth: a small planet at disc position μ blocks
// k² I(μ) / ⟨I⟩ of the light. The contact durations follow Winn (2010, "Transits and
// Occultations", arXiv:1001.2010, eqs. 14–15) for a circular orbit:
//
//	T14 = P/π · asin( √((1+k)² − b²) / (a/R* · sin i) ),  T23 the same with (1−k).
func (p *planet) derive(s *star) {
	a := math.Cbrt(gmSun * s.Mass * math.Pow(p.Period*secondsPerDay, 2) / (4 * math.Pi * math.Pi))
	p.ARs = a / (s.Radius * rSun)
	p.Incl = math.Acos(p.Impact / p.ARs)
	muMid := math.Sqrt(1 - p.Impact*p.Impact)
	p.K = math.Sqrt(p.Depth * s.meanIntensity() / s.intensity(muMid))
	p.T14 = contactDuration(p, 1+p.K)
	p.T23 = contactDuration(p, 1-p.K)
	p.Ramp = p.K * p.K * s.intensity(math.Sqrt(1-(1-p.K)*(1-p.K))) / s.meanIntensity()
	p.Shape = "limb-darkened trapezoid: deficit k²·I(μ)/⟨I⟩ between second and third contact, linear in separation during ingress and egress"
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

// deficit is the fraction of the star's light the planet blocks at time t, by a
// limb-darkened trapezoid:
//   - fully on the disc (z ≤ 1−k): k² I(μ)/⟨I⟩ with μ = √(1−z²), so the bottom is curved
//     by limb darkening as a real transit's is;
//   - during ingress and egress (1−k < z < 1+k): a straight ramp in z from the value at
//     second contact down to zero at first contact;
//   - off the disc: nothing.
//
// This is a stand-in for the exact Mandel & Agol (2002) model; its durations and depth
// are exactly those in truth.json.
func (p *planet) deficit(s *star, t float64) float64 {
	z, front := p.separation(t)
	k := p.K
	switch {
	case !front || z >= 1+k:
		return 0
	case z <= 1-k:
		mu := math.Sqrt(1 - z*z)
		return k * k * s.intensity(mu) / s.meanIntensity()
	default:
		return p.Ramp * (1 + k - z) / (2 * k)
	}
}

// nearestMid returns the mid-transit time of p closest to t.
func (p *planet) nearestMid(t float64) float64 {
	return p.Epoch + math.Round((t-p.Epoch)/p.Period)*p.Period
}
