package timescale

import (
	"fmt"
	"math"

	"dipline/steps/internal/astro"
)

// MJDOffset is JD − MJD in days (USNO; the modified Julian date starts at 1858-11-17 0h).
const MJDOffset = 2400000.5

// J2000 is the Julian date of the epoch J2000.0, 2000-01-01 12h TT (IAU; from memory).
const J2000 = 2451545.0

// JD is a Julian date held in two parts whose sum is the date, so that an instant keeps
// microseconds where one float64 near 2.45e6 keeps only about 40 µs. Day is usually the
// date of a 0h and Frac the fraction of the day, but any split is allowed.
type JD struct {
	Day, Frac float64
}

// FromJD returns the Julian date jd as a JD.
func FromJD(jd float64) JD { return JD{Day: jd} }

// FromMJD returns the modified Julian date mjd as a JD.
func FromMJD(mjd float64) JD { return JD{Day: MJDOffset, Frac: mjd} }

// Float returns the date as one number (rounded to about 40 µs near the present).
func (j JD) Float() float64 { return j.Day + j.Frac }

// MJD returns the modified Julian date, JD − 2400000.5.
func (j JD) MJD() float64 { return (j.Day - MJDOffset) + j.Frac }

// AddSeconds returns the date s seconds later (the seconds of the date's own scale).
func (j JD) AddSeconds(s float64) JD { return JD{j.Day, j.Frac + s/astro.Day} }

// SecondsSince returns j − k in seconds, computed part by part.
func (j JD) SecondsSince(k JD) float64 {
	return ((j.Day - k.Day) + (j.Frac - k.Frac)) * astro.Day
}

// midnight splits a date into the Julian date of the preceding 0h (an integer plus one
// half) and the fraction of the day since then, in [0, 1).
func (j JD) midnight() (day0, frac float64) {
	d := math.Floor(j.Day - 0.5)
	r := (j.Day - 0.5 - d) + j.Frac // exact first term: both are near the same magnitude
	n := math.Floor(r)
	return d + n + 0.5, r - n
}

// CalendarJD returns the Julian date of 0h on the given day of the proleptic Gregorian
// calendar (the Gregorian rules carried back before 1582), for years 1 to 9999. The day
// number is the integer formula of Fliegel & Van Flandern (1968, CACM 11, 657; from memory).
func CalendarJD(year, month, day int) (float64, error) {
	if year < 1 || year > 9999 {
		return 0, fmt.Errorf("year %d is outside 1 to 9999", year)
	}
	if month < 1 || month > 12 {
		return 0, fmt.Errorf("month %d is not 1 to 12", month)
	}
	if day < 1 || day > daysIn(year, month) {
		return 0, fmt.Errorf("%04d-%02d has no day %d", year, month, day)
	}
	a := (14 - month) / 12 // 1 for January and February, counted with the year before
	y := year + 4800 - a
	m := month + 12*a - 3
	noon := day + (153*m+2)/5 + 365*y + y/4 - y/100 + y/400 - 32045
	return float64(noon) - 0.5, nil
}

// daysIn returns the number of days in a month of the proleptic Gregorian calendar.
func daysIn(year, month int) int {
	switch month {
	case 2:
		if year%4 == 0 && (year%100 != 0 || year%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}

// Calendar returns the proleptic Gregorian date holding the Julian date j and the fraction
// of that day since 0h, for dates from year 1 to 9999 (the inverse of CalendarJD; Richards
// 2013, Explanatory Supplement to the Astronomical Almanac, 3rd ed., ch. 15; from memory).
func Calendar(j JD) (year, month, day int, frac float64, err error) {
	day0, frac := j.midnight()
	if !(day0 >= 1721425.5 && day0 <= 5373483.5) { // 0001-01-01 and 9999-12-31
		return 0, 0, 0, 0, fmt.Errorf("Julian date %.6f is outside the years 1 to 9999", j.Float())
	}
	n := int(day0 + 0.5) // the day number counted at noon
	f := n + 1401 + (((4*n+274277)/146097)*3)/4 - 38
	e := 4*f + 3
	h := 5*((e%1461)/4) + 2
	day = (h%153)/5 + 1
	month = (h/153+2)%12 + 1
	year = e/1461 - 4716 + (14-month)/12
	return year, month, day, frac, nil
}
