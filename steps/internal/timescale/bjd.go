package timescale

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// lightSecondsPerAU is the light time across 1 au, au/c ≈ 499.004784 s (IAU 2012 B2, SI).
const lightSecondsPerAU = astro.AU / astro.SpeedOfLight

// Direction returns the unit vector towards right ascension ra and declination dec, both in
// degrees on ICRS axes.
func Direction(raDeg, decDeg float64) [3]float64 {
	a, d := raDeg*deg, decDeg*deg
	return [3]float64{math.Cos(d) * math.Cos(a), math.Cos(d) * math.Sin(a), math.Sin(d)}
}

// Target is a star's ICRS direction at an epoch, with its proper motion.
type Target struct {
	RA, Dec float64 // degrees, at Epoch
	// PMRA is μ_α* = μ_α cos δ and PMDec is μ_δ, both in mas/yr; zero for a fixed direction.
	PMRA, PMDec float64
	// Epoch is the Julian year (TDB) of RA and Dec, e.g. 2016.0; it matters only with motion.
	Epoch float64
}

// Fixed returns the target at (ra, dec) without proper motion.
func Fixed(raDeg, decDeg float64) Target { return Target{RA: raDeg, Dec: decDeg, Epoch: 2000} }

// masPerRad converts radians to milliarcseconds.
const masPerRad = 180 / math.Pi * 3.6e6

// julianYearDays is the Julian year in days; J2000.0 is JD 2451545.0 (TDB).
const (
	julianYearDays = 365.25
	j2000          = 2451545.0
)

// DirectionAt returns the unit vector towards the target at the instant tdb: its position
// at Epoch moved along the tangent plane by the proper motion over the years between,
// n = n₀ + Δt (μ_α* p̂ + μ_δ q̂), normalised, with p̂ and q̂ the unit vectors of increasing RA
// and Dec at n₀. That is straight-line space motion with no radial velocity; against
// ERFA's pmsafe it is within a few µas over decades for any proper motion (tests). The
// radial velocity's perspective term, left out, moves a nearby fast star by less than
// 1 mas over a decade.
func (t Target) DirectionAt(tdb JD) [3]float64 {
	n := Direction(t.RA, t.Dec)
	if t.PMRA == 0 && t.PMDec == 0 {
		return n
	}
	years := (tdb.Day - j2000 + tdb.Frac - (t.Epoch-2000)*julianYearDays) / julianYearDays
	a, d := t.RA*deg, t.Dec*deg
	p := [3]float64{-math.Sin(a), math.Cos(a), 0}
	q := [3]float64{-math.Sin(d) * math.Cos(a), -math.Sin(d) * math.Sin(a), math.Cos(d)}
	ma, md := t.PMRA/masPerRad*years, t.PMDec/masPerRad*years
	var norm float64
	for i := range n {
		n[i] += ma*p[i] + md*q[i]
		norm += n[i] * n[i]
	}
	norm = math.Sqrt(norm)
	for i := range n {
		n[i] /= norm
	}
	return n
}

// RomerDelay returns (r_earth · n̂)/c in seconds: how much earlier light from the direction
// n̂ (a unit vector, see Direction) reaches the Earth's centre than the solar system's
// barycentre, at the instant tdb (TDB).
func RomerDelay(tdb JD, n [3]float64) float64 {
	r := EarthBarycentric(tdb)
	return (r[0]*n[0] + r[1]*n[1] + r[2]*n[2]) * lightSecondsPerAU
}

// BJDTDB returns the barycentric Julian date in TDB of light from the target reaching the
// Earth's centre at the UTC instant utc (as UTCToTAI takes it): UTC → TAI → TT → TDB (TT +
// TDB − TT) plus the Rømer delay (r_earth · n̂)/c, n̂ the target's direction at that instant
// (DirectionAt). Left out: the observer's place on the Earth (up to 21 ms), parallax, the
// Shapiro delay. Past the leap-second table's expiry the result holds the last TAI − UTC
// (see LeapTableCovers and StaleLeapTableNote).
func BJDTDB(utc JD, t Target) (JD, error) {
	if err := t.Check(); err != nil {
		return JD{}, err
	}
	tt, err := UTCToTT(utc)
	if err != nil {
		return JD{}, err
	}
	tdb := tt.AddSeconds(TDBMinusTT(tt))
	return tdb.AddSeconds(RomerDelay(tdb, t.DirectionAt(tdb))), nil
}

// UTCFromBJDTDB is the inverse of BJDTDB: the UTC instant at which light from the target
// that reaches the barycentre at bjd reaches the Earth's centre. The Rømer delay is
// solved for by fixed-point iteration (it changes by at most 1e-4 s per second).
func UTCFromBJDTDB(bjd JD, t Target) (JD, error) {
	if err := t.Check(); err != nil {
		return JD{}, err
	}
	n := t.DirectionAt(bjd) // the direction moves by at most µas in the delay's minutes
	tdb := bjd
	for i := 0; i < 4; i++ {
		tdb = bjd.AddSeconds(-RomerDelay(tdb, n))
	}
	tt := tdb.AddSeconds(-TDBMinusTT(tdb))
	return TTToUTC(tt)
}

// maxProperMotion bounds a proper motion, in mas/yr: the fastest known star moves about
// 10.4″/yr (from memory), so anything over 20″/yr is a mistake in the units.
const maxProperMotion = 20000

// Check refuses a target that is not a direction, a proper motion over 20″/yr (a unit
// mistake) and an epoch more than a thousand years from 2000.
func (t Target) Check() error {
	if math.IsNaN(t.RA) || math.IsInf(t.RA, 0) || !(t.Dec >= -90 && t.Dec <= 90) {
		return fmt.Errorf("target at RA %g°, Dec %g° is not a direction: Dec must lie in −90° to 90°", t.RA, t.Dec)
	}
	if !(math.Abs(t.PMRA) <= maxProperMotion) || !(math.Abs(t.PMDec) <= maxProperMotion) {
		return fmt.Errorf("proper motion %g, %g mas/yr is not a star's: each must be finite and at most %d mas/yr", t.PMRA, t.PMDec, maxProperMotion)
	}
	if math.IsNaN(t.Epoch) || math.IsInf(t.Epoch, 0) || math.Abs(t.Epoch-2000) > 1000 {
		return fmt.Errorf("the position's epoch %g is not a Julian year within a thousand years of 2000", t.Epoch)
	}
	return nil
}
