package sky

import (
	"math"

	"dipline/steps/internal/timescale"
)

// EarthRotationAngle returns the Earth rotation angle in degrees at the instant, UT1 taken
// as UTC (IAU 2000 Resolution B1.8; Capitaine, Guinot & McCarthy 2000, A&A 355, 398; the
// form ERFA's era00 uses).
func EarthRotationAngle(t Instant) float64 {
	d := (t.UTC.Day - timescale.J2000) + t.UTC.Frac
	f := frac(t.UTC.Day) + frac(t.UTC.Frac) // the whole turns per day drop out exactly
	return norm360(360 * (f + 0.7790572732640 + 0.00273781191135448*d))
}

// frac returns the fractional part of x.
func frac(x float64) float64 { return x - math.Floor(x) }

// GMST returns the Greenwich mean sidereal time in degrees: the Earth rotation angle plus
// the IAU 2006 polynomial in TT (Capitaine, Wallace & Chapront 2005, A&A 432, 355; IERS
// Conventions 2010 eq. 5.32; ERFA's gmst06), UT1 taken as UTC.
func GMST(t Instant) float64 {
	c := t.centuries()
	arcsec := 0.014506 + (4612.156534+(1.3915817+(-0.00000044+(-0.000029956+(-0.0000000368)*c)*c)*c)*c)*c
	return norm360(EarthRotationAngle(t) + arcsec/3600)
}

// LST returns the local mean sidereal time at the site in degrees (GMST + east longitude).
func LST(s Site, t Instant) float64 {
	return norm360(GMST(t) + s.Lon)
}
