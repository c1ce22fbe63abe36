package timescale

import (
	"math"

	"dipline/steps/internal/astro"
)

// elements are a planet's mean orbital elements on the ecliptic and equinox of J2000 and
// their rates per Julian century: semi-major axis (au), eccentricity, inclination, mean
// longitude, longitude of perihelion and of the ascending node (degrees); and the mass
// ratio M_sun / M_planet.
type elements struct {
	A, E, I, L, Peri, Node       float64
	DA, DE, DI, DL, DPeri, DNode float64
	MassRatio                    float64
}

// planets holds the Keplerian elements of E. M. Standish, "Keplerian Elements for
// Approximate Positions of the Major Planets" (JPL Solar System Dynamics), Table 1, fitted
// to DE405 over 1800–2050 (values from memory); the Earth's line is the Earth–Moon
// barycentre. The mass ratios M_sun/M are those of DE405, the IAU 2009 system's values (from
// memory); the Earth's is that of the Earth and Moon together.
var planets = []elements{
	{0.38709927, 0.20563593, 7.00497902, 252.25032350, 77.45779628, 48.33076593,
		0.00000037, 0.00001906, -0.00594749, 149472.67411175, 0.16047689, -0.12534081, 6023600},
	{0.72333566, 0.00677672, 3.39467605, 181.97909950, 131.60246718, 76.67984255,
		0.00000390, -0.00004107, -0.00078890, 58517.81538729, 0.00268329, -0.27769418, 408523.71},
	{1.00000261, 0.01671123, -0.00001531, 100.46457166, 102.93768193, 0.0,
		0.00000562, -0.00004392, -0.01294668, 35999.37244981, 0.32327364, 0.0, 328900.56},
	{1.52371034, 0.09339410, 1.84969142, -4.55343205, -23.94362959, 49.55953891,
		0.00001847, 0.00007882, -0.00813131, 19140.30268499, 0.44441088, -0.29257343, 3098708},
	{5.20288700, 0.04838624, 1.30439695, 34.39644051, 14.72847983, 100.47390909,
		-0.00011607, -0.00013253, -0.00183714, 3034.74612775, 0.21252668, 0.20469106, 1047.3486},
	{9.53667594, 0.05386179, 2.48599187, 49.95424423, 92.59887831, 113.66242448,
		-0.00125060, -0.00050991, 0.00193609, 1222.49362201, -0.41897216, -0.28867794, 3497.898},
	{19.18916464, 0.04725744, 0.77263783, 313.23810451, 170.95427630, 74.01692503,
		-0.00196176, -0.00004397, -0.00242939, 428.48202785, 0.40805281, 0.04240589, 22902.98},
	{30.06992276, 0.00859048, 1.77004347, -55.12002969, 44.96476227, 131.78422574,
		0.00026291, 0.00005105, 0.00035372, 218.45945325, -0.32241464, -0.00508664, 19412.24},
}

// earthLine is the index of the Earth–Moon barycentre in planets.
const earthLine = 2

// earthMoonMassRatio is M_earth/M_moon (DE405, IAU 2009 system; from memory).
const earthMoonMassRatio = 81.30056

// obliquityJ2000 is the obliquity of the ecliptic at J2000, 84381.448″ (IAU 1976; from
// memory), which turns Standish's ecliptic axes into the equator's; the 23 mas frame bias
// between that equator and ICRS (≈ 1e-7 au at 1 au) is left out.
const obliquityJ2000 = 84381.448 / 3600 * math.Pi / 180

const deg = math.Pi / 180

// heliocentric returns a planet's heliocentric position in au on the ecliptic and equinox
// of J2000 at T Julian centuries of TDB from J2000: the Kepler orbit of its mean elements.
func (p elements) heliocentric(t float64) [3]float64 {
	a := p.A + p.DA*t
	e := p.E + p.DE*t
	inc := (p.I + p.DI*t) * deg
	l := (p.L + p.DL*t) * deg
	peri := (p.Peri + p.DPeri*t) * deg
	node := (p.Node + p.DNode*t) * deg
	m := math.Remainder(l-peri, 2*math.Pi)
	ecc := keplerE(m, e)
	xp := a * (math.Cos(ecc) - e)
	yp := a * math.Sqrt(1-e*e) * math.Sin(ecc)
	w := peri - node
	cw, sw := math.Cos(w), math.Sin(w)
	cn, sn := math.Cos(node), math.Sin(node)
	ci, si := math.Cos(inc), math.Sin(inc)
	return [3]float64{
		(cw*cn-sw*sn*ci)*xp + (-sw*cn-cw*sn*ci)*yp,
		(cw*sn+sw*cn*ci)*xp + (-sw*sn+cw*cn*ci)*yp,
		sw*si*xp + cw*si*yp,
	}
}

// keplerE solves Kepler's equation E − e sin E = M by Newton's method (e < 0.3 here).
func keplerE(m, e float64) float64 {
	x := m + e*math.Sin(m)
	for i := 0; i < 8; i++ {
		dx := (x - e*math.Sin(x) - m) / (1 - e*math.Cos(x))
		x -= dx
		if math.Abs(dx) < 1e-14 {
			break
		}
	}
	return x
}

// moonGeocentric returns the Moon's geocentric position in au on the ecliptic from the
// low-precision formulae of the Astronomical Almanac (section D; from memory: about 0.3° in
// longitude, 0.2° in latitude, 0.003 in parallax), T in Julian centuries from J2000. The
// axes are those of the date, not J2000: over ±40 years the 0.6° of precession moves the
// Earth's 4,700 km offset from the Earth–Moon barycentre by about 50 km.
func moonGeocentric(t float64) [3]float64 {
	s := func(c0, c1 float64) float64 { return math.Sin((c0 + c1*t) * deg) }
	c := func(c0, c1 float64) float64 { return math.Cos((c0 + c1*t) * deg) }
	lon := 218.32 + 481267.881*t + 6.29*s(134.9, 477198.85) - 1.27*s(259.2, -413335.38) +
		0.66*s(235.7, 890534.23) + 0.21*s(269.9, 954397.70) - 0.19*s(357.5, 35999.05) -
		0.11*s(186.6, 966404.05)
	lat := 5.13*s(93.3, 483202.03) + 0.28*s(228.2, 960400.87) - 0.28*s(318.3, 6003.18) -
		0.17*s(217.6, -407332.20)
	par := 0.9508 + 0.0518*c(134.9, 477198.85) + 0.0095*c(259.2, -413335.38) +
		0.0078*c(235.7, 890534.23) + 0.0028*c(269.9, 954397.70)
	r := astro.EarthRadius / math.Sin(par*deg) / astro.AU
	cl, sl := math.Cos(lon*deg), math.Sin(lon*deg)
	cb, sb := math.Cos(lat*deg), math.Sin(lat*deg)
	return [3]float64{r * cb * cl, r * cb * sl, r * sb}
}

// EarthBarycentric returns the position of the Earth's centre relative to the solar
// system's barycentre in au, on ICRS axes (to the 23 mas frame bias), at the instant tdb
// (TDB; TT serves as well). It sums the Earth–Moon barycentre's heliocentric Kepler orbit,
// the Earth's offset from it (from a low-precision Moon) and the Sun's offset from the
// barycentre, −Σ m_i r_i / (M_sun + Σ m_i) over the eight planets' Kepler orbits, of which
// Jupiter, Saturn, Uranus and Neptune give nearly all (Neptune alone 0.0015 au, 0.8 s of
// light time). Against ERFA's epv00 over 2000–2040 it is within 1.1e-4 au (0.054 s of light
// time), mostly the Earth–Moon barycentre's mean elements; TestEarthBarycentricIsNearERFA
// measures it.
func EarthBarycentric(tdb JD) [3]float64 {
	t := ((tdb.Day - J2000) + tdb.Frac) / 36525
	var sun [3]float64
	total := 1.0
	var emb [3]float64
	for i, p := range planets {
		r := p.heliocentric(t)
		if i == earthLine {
			emb = r
		}
		mu := 1 / p.MassRatio
		total += mu
		for k := range sun {
			sun[k] -= mu * r[k]
		}
	}
	moon := moonGeocentric(t)
	moonShare := 1 / (1 + earthMoonMassRatio) // M_moon / (M_earth + M_moon)
	var ecl [3]float64
	for k := range ecl {
		ecl[k] = emb[k] - moonShare*moon[k] + sun[k]/total
	}
	ce, se := math.Cos(obliquityJ2000), math.Sin(obliquityJ2000)
	return [3]float64{ecl[0], ce*ecl[1] - se*ecl[2], se*ecl[1] + ce*ecl[2]}
}
