package timescale

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// TTMinusTAI is TT − TAI in seconds, exact by definition (IAU 1991 Resolution A4, from memory; USNO).
const TTMinusTAI = 32.184

// leapStep is one line of the leap-second table: from 0h UTC on the date, TAI − UTC is
// Offset seconds.
type leapStep struct {
	Year, Month int
	Offset      float64
}

// leapSteps is TAI − UTC since the start of integer leap seconds, from the IERS Bulletin C
// series (values from memory, checked entry by entry against ERFA's table in the tests).
// Every step so far added one second at the end of June or December.
var leapSteps = []leapStep{
	{1972, 1, 10}, {1972, 7, 11}, {1973, 1, 12}, {1974, 1, 13}, {1975, 1, 14},
	{1976, 1, 15}, {1977, 1, 16}, {1978, 1, 17}, {1979, 1, 18}, {1980, 1, 19},
	{1981, 7, 20}, {1982, 7, 21}, {1983, 7, 22}, {1985, 7, 23}, {1988, 1, 24},
	{1990, 1, 25}, {1991, 1, 26}, {1992, 7, 27}, {1993, 7, 28}, {1994, 7, 29},
	{1996, 1, 30}, {1997, 7, 31}, {1999, 1, 32}, {2006, 1, 33}, {2009, 1, 34},
	{2012, 7, 35}, {2015, 7, 36}, {2017, 1, 37},
}

// leapTableValidUntil is the first 0h UTC the table cannot vouch for: IERS Bulletin C
// announces each leap second about six months ahead, and the last bulletin we know of
// (Bulletin C 70, July 2025; from memory) announced none at the end of December 2025, so the
// table holds before 2026-07-01, the next date a second could be added. Update it, and the
// table, with each new bulletin.
var leapTableValidUntil = leapStep{2026, 7, 0}

// StaleLeapTableNote is the sentence a caller can print for an instant past the table's
// expiry (see LeapTableCovers).
const StaleLeapTableNote = "this date lies past the end of the leap-second table " +
	"(valid before 2026-07-01 UTC); TAI − UTC is held at its last value, 37 s, and a leap " +
	"second announced since would shift UTC by 1 s"

// ErrBefore1972 is returned for UTC before 1972-01-01, when UTC's seconds were not SI
// seconds and its offsets from TAI were not whole seconds; this package does not guess them.
var ErrBefore1972 = errors.New("UTC before 1972-01-01 is not supported: its offset from TAI was not a whole number of seconds")

// leapMJD holds the MJD of 0h of each step of leapSteps, and expiryMJD that of the expiry.
var leapMJD, expiryMJD = func() ([]float64, float64) {
	mjd := func(s leapStep) float64 {
		jd, err := CalendarJD(s.Year, s.Month, 1)
		if err != nil {
			panic(err) // the table above is fixed; a test covers it
		}
		return jd - MJDOffset
	}
	out := make([]float64, len(leapSteps))
	for i, s := range leapSteps {
		out[i] = mjd(s)
	}
	return out, mjd(leapTableValidUntil)
}()

// taiMinusUTC returns TAI − UTC in seconds over the UTC day starting at 0h of mjd (an
// integer).
func taiMinusUTC(mjd float64) (float64, error) {
	if mjd < leapMJD[0] {
		return 0, ErrBefore1972
	}
	i := len(leapMJD) - 1
	for mjd < leapMJD[i] {
		i--
	}
	return leapSteps[i].Offset, nil
}

// LeapTableCovers reports whether the leap-second table vouches for the UTC instant utc;
// past its expiry the last offset (37 s) is kept and StaleLeapTableNote says what that risks.
func LeapTableCovers(utc JD) bool {
	day0, _ := utc.midnight()
	return day0-MJDOffset < expiryMJD
}

// UTCToTAI converts UTC to TAI. UTC is given the way ERFA takes it: a Julian date whose
// day holding a leap second is 86401 s long, so 23:59:60.5 on such a day is the day's
// 0h plus 86400.5/86401 of a day. UTC before 1972 returns ErrBefore1972.
func UTCToTAI(utc JD) (JD, error) {
	day0, frac := utc.midnight()
	mjd := day0 - MJDOffset
	off, err := taiMinusUTC(mjd)
	if err != nil {
		return JD{}, err
	}
	next, _ := taiMinusUTC(mjd + 1)
	length := astro.Day + (next - off) // 86401 s on a day ending with a leap second
	return JD{day0, (frac*length + off) / astro.Day}, nil
}

// TAIToUTC converts TAI to UTC, the inverse of UTCToTAI.
func TAIToUTC(tai JD) (JD, error) {
	day0, _ := tai.midnight()
	off, err := taiMinusUTC(math.Max(day0-MJDOffset-1, leapMJD[0]))
	if err != nil {
		return JD{}, err
	}
	utc := tai.AddSeconds(-off)
	// UTCToTAI is continuous and piecewise linear with slope 1 or 86401/86400; a few
	// steps land on the right piece.
	for i := 0; i < 6; i++ {
		got, err := UTCToTAI(utc)
		if err != nil {
			return JD{}, err
		}
		d := tai.SecondsSince(got)
		if math.Abs(d) < 1e-9 {
			break
		}
		utc = utc.AddSeconds(d)
	}
	return utc, nil
}

// TAIToTT returns TT = TAI + 32.184 s.
func TAIToTT(tai JD) JD { return tai.AddSeconds(TTMinusTAI) }

// TTToTAI returns TAI = TT − 32.184 s.
func TTToTAI(tt JD) JD { return tt.AddSeconds(-TTMinusTAI) }

// UTCToTT converts UTC (as UTCToTAI takes it) to TT.
func UTCToTT(utc JD) (JD, error) {
	tai, err := UTCToTAI(utc)
	if err != nil {
		return JD{}, err
	}
	return TAIToTT(tai), nil
}

// TTToUTC converts TT to UTC.
func TTToUTC(tt JD) (JD, error) {
	utc, err := TAIToUTC(TTToTAI(tt))
	if err != nil {
		return JD{}, fmt.Errorf("TT %.6f: %w", tt.Float(), err)
	}
	return utc, nil
}
