package sky

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/timescale"
)

const deg = math.Pi / 180

// Site is a place on the Earth: geodetic latitude and east-positive longitude in degrees,
// height above the reference ellipsoid in metres.
type Site struct {
	Lat, Lon, Height float64
}

// Check refuses a site whose coordinates cannot be on the Earth.
func (s Site) Check() error {
	switch {
	case math.IsNaN(s.Lat) || s.Lat < -90 || s.Lat > 90:
		return fmt.Errorf("site latitude %g° is not between −90° and 90°", s.Lat)
	case math.IsNaN(s.Lon) || math.IsInf(s.Lon, 0):
		return fmt.Errorf("site longitude %g° is not a number of degrees", s.Lon)
	case math.IsNaN(s.Height) || s.Height < -500 || s.Height > 10000:
		return fmt.Errorf("site height %g m is not between −500 m and 10 000 m", s.Height)
	}
	return nil
}

// geocentric returns ρ cos φ′ and ρ sin φ′: the site's distance from the Earth's axis and
// from the equator's plane in equatorial Earth radii, on the ellipsoid of the nominal
// equatorial and polar radii (IAU 2015 B3; Meeus 1998, Astronomical Algorithms, ch. 11,
// from memory).
func (s Site) geocentric() (rhoCos, rhoSin float64) {
	ba := astro.EarthRadiusPolar / astro.EarthRadius
	phi := s.Lat * deg
	u := math.Atan(ba * math.Tan(phi))
	h := s.Height / astro.EarthRadius
	return math.Cos(u) + h*math.Cos(phi), ba*math.Sin(u) + h*math.Sin(phi)
}

// Instant is one moment, held in the two time scales the geometry needs: UTC (standing in
// for UT1, which turns the Earth) and TT (which moves the Sun, the Moon and the equinox).
type Instant struct {
	UTC, TT timescale.JD
}

// At returns the instant of a UTC Julian date. UTC before 1972 is refused (see
// timescale.ErrBefore1972); past the leap-second table's expiry TT − UTC is held at its last
// value, which moves nothing here by more than a second's worth of the Earth's turn.
func At(utc timescale.JD) (Instant, error) {
	tt, err := timescale.UTCToTT(utc)
	if err != nil {
		return Instant{}, err
	}
	return Instant{UTC: utc, TT: tt}, nil
}

// centuries returns TT in Julian centuries since J2000.0.
func (t Instant) centuries() float64 {
	return ((t.TT.Day - timescale.J2000) + t.TT.Frac) / 36525
}

// days returns TT in days since J2000.0.
func (t Instant) days() float64 {
	return (t.TT.Day - timescale.J2000) + t.TT.Frac
}

// norm360 returns x reduced to [0, 360).
func norm360(x float64) float64 {
	x = math.Mod(x, 360)
	if x < 0 {
		x += 360
	}
	return x
}
