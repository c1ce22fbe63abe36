package sky

import (
	"math"

	"dipline/steps/internal/astro"
)

// Place is a direction on the sky referred to the mean equator and equinox of date: RA and
// Dec in degrees, and the distance in au.
type Place struct {
	RA, Dec, Distance float64
}

// vector returns the place as Cartesian coordinates in au.
func (p Place) vector() [3]float64 {
	sa, ca := math.Sincos(p.RA * deg)
	sd, cd := math.Sincos(p.Dec * deg)
	return [3]float64{p.Distance * cd * ca, p.Distance * cd * sa, p.Distance * sd}
}

// placeOf returns the place of a Cartesian vector (au).
func placeOf(v [3]float64) Place {
	r := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2])
	return Place{
		RA:       norm360(math.Atan2(v[1], v[0]) / deg),
		Dec:      math.Atan2(v[2], math.Hypot(v[0], v[1])) / deg,
		Distance: r,
	}
}

// obliquity returns the mean obliquity of the ecliptic in degrees at c Julian centuries TT
// from J2000 (IAU 1980: 23°26′21.448″ − 46.8150″ c; from memory). Over 2000–2040 it is
// within 0.1″ of the IAU 2006 value.
func obliquity(c float64) float64 {
	return 23.439291111 - 46.8150/3600*c
}

// ecliptic turns ecliptic longitude and latitude of date (degrees) and a distance into an
// equatorial vector of date.
func ecliptic(c, lon, lat, r float64) [3]float64 {
	se, ce := math.Sincos(obliquity(c) * deg)
	sl, cl := math.Sincos(lon * deg)
	sb, cb := math.Sincos(lat * deg)
	return [3]float64{r * cb * cl, r * (ce*cb*sl - se*sb), r * (se*cb*sl + ce*sb)}
}

// Sun returns the Sun's apparent geocentric place by the low-precision formulas of the
// Astronomical Almanac (section C, "Low precision formulas for the Sun"; from memory):
// mean longitude L = 280.460° + 0.9856474° n, mean anomaly g = 357.528° + 0.9856003° n,
// λ = L + 1.915° sin g + 0.020° sin 2g, β = 0, R = 1.00014 − 0.01671 cos g − 0.00014 cos 2g au,
// n the days from J2000.0. The Almanac gives 0.01° over 1950–2050; against ERFA see the tests.
func Sun(t Instant) Place {
	n := t.days()
	l := 280.460 + 0.9856474*n
	g := (357.528 + 0.9856003*n) * deg
	lon := l + 1.915*math.Sin(g) + 0.020*math.Sin(2*g)
	r := 1.00014 - 0.01671*math.Cos(g) - 0.00014*math.Cos(2*g)
	return placeOf(ecliptic(t.centuries(), lon, 0, r))
}

// SunAltAz returns the Sun's azimuth and altitude at the site (geocentric place: the 8.8″
// solar parallax is left out; no refraction).
func SunAltAz(s Site, t Instant) Horizontal {
	p := Sun(t)
	return HorizonOfDate(s, t, p.RA, p.Dec)
}

// earthRadiusAU is the nominal equatorial Earth radius in au (IAU 2015 B3, IAU 2012 B2).
const earthRadiusAU = astro.EarthRadius / astro.AU

// moonTerm is one periodic term of the low-precision lunar series: amplitude in degrees,
// argument phase in degrees and rate in degrees per Julian century.
type moonTerm struct{ amp, phase, rate float64 }

// The Astronomical Almanac's low-precision lunar series (section D, "Low precision formulae
// for the Moon's coordinates"; from memory), T in Julian centuries from J2000.0: ecliptic
// longitude λ = 218.32° + 481267.881° T + Σ, latitude β = Σ, horizontal parallax
// π = 0.9508° + Σ (cosines). The Almanac gives about 0.3° in λ, 0.2° in β and 0.003° in π.
var (
	moonLon = []moonTerm{
		{6.29, 135.0, 477198.87}, {-1.27, 259.3, -413335.36}, {0.66, 235.7, 890534.22},
		{0.21, 269.9, 954397.74}, {-0.19, 357.5, 35999.05}, {-0.11, 186.5, 966404.03},
	}
	moonLat = []moonTerm{
		{5.13, 93.3, 483202.02}, {0.28, 228.2, 960400.89}, {-0.28, 318.3, 6003.15},
		{-0.17, 217.6, -407332.21},
	}
	moonParallax = []moonTerm{
		{0.0518, 135.0, 477198.87}, {0.0095, 259.3, -413335.36}, {0.0078, 235.7, 890534.22},
		{0.0028, 269.9, 954397.74},
	}
)

// series sums the terms at c centuries, with sine or cosine.
func series(terms []moonTerm, c float64, cosine bool) float64 {
	var sum float64
	for _, k := range terms {
		a := (k.phase + k.rate*c) * deg
		if cosine {
			sum += k.amp * math.Cos(a)
		} else {
			sum += k.amp * math.Sin(a)
		}
	}
	return sum
}

// moonVector returns the Moon's geocentric equatorial vector of date in au.
func moonVector(t Instant) [3]float64 {
	c := t.centuries()
	lon := 218.32 + 481267.881*c + series(moonLon, c, false)
	lat := series(moonLat, c, false)
	par := 0.9508 + series(moonParallax, c, true)
	r := earthRadiusAU / math.Sin(par*deg)
	return ecliptic(c, lon, lat, r)
}

// Moon returns the Moon's geocentric place of date (Astronomical Almanac low-precision
// series; see moonLon).
func Moon(t Instant) Place { return placeOf(moonVector(t)) }

// MoonFrom returns the Moon's place of date seen from the site: the geocentric place less
// the site's position, which moves the Moon by up to about 1° (its horizontal parallax).
func MoonFrom(s Site, t Instant) Place {
	v := moonVector(t)
	rc, rs := s.geocentric()
	sl, cl := math.Sincos(LST(s, t) * deg)
	v[0] -= earthRadiusAU * rc * cl
	v[1] -= earthRadiusAU * rc * sl
	v[2] -= earthRadiusAU * rs
	return placeOf(v)
}

// MoonAltAz returns the Moon's azimuth and altitude at the site (topocentric; no refraction).
func MoonAltAz(s Site, t Instant) Horizontal {
	p := MoonFrom(s, t)
	return HorizonOfDate(s, t, p.RA, p.Dec)
}

// MoonIlluminated returns the illuminated fraction of the Moon's disk seen from the
// Earth's centre, (1 + cos i)/2 with i the Sun–Moon–Earth angle, from the two series.
func MoonIlluminated(t Instant) float64 {
	m := moonVector(t)
	sun := Sun(t).vector()
	var dot, a, b float64
	for k := range 3 {
		toSun, toEarth := sun[k]-m[k], -m[k]
		dot += toSun * toEarth
		a += toSun * toSun
		b += toEarth * toEarth
	}
	return 0.5 * (1 + dot/math.Sqrt(a*b))
}

// MoonSeparation returns the angle in degrees between a target at ICRS (ra, dec) and the
// Moon as seen from the site.
func MoonSeparation(s Site, t Instant, ra, dec float64) float64 {
	rd, dd := Precess(t, ra, dec)
	m := MoonFrom(s, t)
	return Separation(rd, dd, m.RA, m.Dec)
}
