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

// RomerDelay returns (r_earth · n̂)/c in seconds: how much earlier light from the direction
// n̂ (a unit vector, see Direction) reaches the Earth's centre than the solar system's
// barycentre, at the instant tdb (TDB).
func RomerDelay(tdb JD, n [3]float64) float64 {
	r := EarthBarycentric(tdb)
	return (r[0]*n[0] + r[1]*n[1] + r[2]*n[2]) * lightSecondsPerAU
}

// BJDTDB returns the barycentric Julian date in TDB of light from a target at (ra, dec)
// (degrees, ICRS) reaching the Earth's centre at the UTC instant utc (as UTCToTAI takes it):
// UTC → TAI → TT → TDB (TT + TDB − TT) plus the Rømer delay (r_earth · n̂)/c. Left out:
// the observer's place on the Earth (up to 21 ms), proper motion and parallax, the Shapiro
// delay. Past the leap-second table's expiry the result holds the last TAI − UTC (see
// LeapTableCovers and StaleLeapTableNote).
func BJDTDB(utc JD, raDeg, decDeg float64) (JD, error) {
	if err := checkDirection(raDeg, decDeg); err != nil {
		return JD{}, err
	}
	tt, err := UTCToTT(utc)
	if err != nil {
		return JD{}, err
	}
	tdb := tt.AddSeconds(TDBMinusTT(tt))
	return tdb.AddSeconds(RomerDelay(tdb, Direction(raDeg, decDeg))), nil
}

// UTCFromBJDTDB is the inverse of BJDTDB: the UTC instant at which light from (ra, dec)
// that reaches the barycentre at bjd reaches the Earth's centre. The Rømer delay is
// solved for by fixed-point iteration (it changes by at most 1e-4 s per second).
func UTCFromBJDTDB(bjd JD, raDeg, decDeg float64) (JD, error) {
	if err := checkDirection(raDeg, decDeg); err != nil {
		return JD{}, err
	}
	n := Direction(raDeg, decDeg)
	tdb := bjd
	for i := 0; i < 4; i++ {
		tdb = bjd.AddSeconds(-RomerDelay(tdb, n))
	}
	tt := tdb.AddSeconds(-TDBMinusTT(tdb))
	return TTToUTC(tt)
}

func checkDirection(raDeg, decDeg float64) error {
	if math.IsNaN(raDeg) || math.IsInf(raDeg, 0) || !(decDeg >= -90 && decDeg <= 90) {
		return fmt.Errorf("target at RA %g°, Dec %g° is not a direction: Dec must lie in −90° to 90°", raDeg, decDeg)
	}
	return nil
}
