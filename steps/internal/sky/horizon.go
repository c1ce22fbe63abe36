package sky

import "math"

// Horizontal is a direction seen from a site: azimuth in degrees from north through east,
// altitude in degrees above the horizon, without refraction.
type Horizontal struct {
	Az, Alt float64
}

// Precess returns the mean place of date of an ICRS direction (degrees) at the instant,
// by the IAU 1976 precession angles ζ, z, θ (Lieske et al. 1977, A&A 58, 1; in the form of
// Meeus 1998, Astronomical Algorithms, ch. 21; from memory). The 0.02″ frame bias between
// ICRS and J2000 is left out; over 2000–2040 the angles agree with IAU 2006 to a few mas.
func Precess(t Instant, ra, dec float64) (raDate, decDate float64) {
	c := t.centuries()
	zeta := (2306.2181 + (0.30188+0.017998*c)*c) * c / 3600 * deg
	z := (2306.2181 + (1.09468+0.018203*c)*c) * c / 3600 * deg
	theta := (2004.3109 + (-0.42665-0.041833*c)*c) * c / 3600 * deg
	a0, d0 := ra*deg+zeta, dec*deg
	sa, ca := math.Sincos(a0)
	sd, cd := math.Sincos(d0)
	st, ct := math.Sincos(theta)
	x := ct*cd*ca - st*sd
	y := cd * sa
	w := st*cd*ca + ct*sd
	return norm360((math.Atan2(y, x) + z) / deg), math.Atan2(w, math.Hypot(x, y)) / deg
}

// HorizonOfDate returns the azimuth and altitude at the site of a direction referred to the
// mean equator and equinox of date (degrees), from the hour angle LST − RA.
func HorizonOfDate(s Site, t Instant, raDate, decDate float64) Horizontal {
	return horizon(s.Lat, (LST(s, t)-raDate)*deg, decDate*deg)
}

// horizon turns an hour angle and declination (radians) into azimuth and altitude at
// geodetic latitude lat (degrees).
func horizon(lat, ha, dec float64) Horizontal {
	sp, cp := math.Sincos(lat * deg)
	sh, ch := math.Sincos(ha)
	sd, cd := math.Sincos(dec)
	up := sp*sd + cp*cd*ch
	north := cp*sd - sp*cd*ch
	east := -cd * sh
	return Horizontal{
		Az:  norm360(math.Atan2(east, north) / deg),
		Alt: math.Atan2(up, math.Hypot(north, east)) / deg,
	}
}

// AltAz returns the azimuth and altitude at the site of a target at ICRS (ra, dec) in
// degrees: precessed to date (Precess), then turned by the local sidereal time. Nutation,
// aberration and refraction are left out (see the package comment).
func AltAz(s Site, t Instant, ra, dec float64) Horizontal {
	rd, dd := Precess(t, ra, dec)
	return HorizonOfDate(s, t, rd, dd)
}

// Separation returns the angle in degrees between two directions given as (longitude,
// latitude) pairs in degrees in the same frame — RA and Dec, or azimuth and altitude — by
// the Vincenty form of the haversine, accurate at every angle.
func Separation(lon1, lat1, lon2, lat2 float64) float64 {
	s1, c1 := math.Sincos(lat1 * deg)
	s2, c2 := math.Sincos(lat2 * deg)
	sd, cd := math.Sincos((lon2 - lon1) * deg)
	num := math.Hypot(c2*sd, c1*s2-s1*c2*cd)
	return math.Atan2(num, s1*s2+c1*c2*cd) / deg
}

// Refraction returns the mean atmospheric refraction in degrees for a true (airless)
// altitude in degrees, at 1010 hPa and 10 °C: Saemundsson's formula R = 1.02′ /
// tan(h + 10.3°/(h + 5.11°)) (Sky & Telescope 72, 70, 1986; from memory). It is meant for
// altitudes above −1°; below that it returns the value at −1°. Add it to a geometric
// altitude to get the apparent one. AltAz never adds it.
func Refraction(alt float64) float64 {
	h := math.Max(alt, -1)
	// Past about 89.9° the formula turns slightly negative; the zenith has none.
	return math.Max(0, 1.02/math.Tan((h+10.3/(h+5.11))*deg)/60)
}
