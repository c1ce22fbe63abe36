package timescale

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"strings"
	"sync"
	"testing"
)

// reference is testdata/timescale/erfa_reference.json, written by erfa_reference.py in the
// same folder with Debian's python3-erfa (pyerfa 2.0.0.1 over liberfa 2.0.0; the version
// is in the file). Every expected value in this file comes from it unless a comment says
// otherwise.
type reference struct {
	ERFAVersion string `json:"erfa_version"`
	LeapSeconds []struct {
		Year, Month, Day int
		TAIMinusUTC      float64 `json:"tai_minus_utc"`
	} `json:"leap_seconds"`
	TTMinusUTC []struct {
		Date       string
		UTCSeconds float64 `json:"utc_seconds"`
		UTC1       float64 `json:"utc_jd1"`
		UTC2       float64 `json:"utc_jd2"`
		TT1        float64 `json:"tt_jd1"`
		TT2        float64 `json:"tt_jd2"`
		TTMinusUTC float64 `json:"tt_minus_utc"`
	} `json:"tt_minus_utc"`
	Cal2JD []struct {
		Year, Month, Day int
		JD, MJD          float64
	} `json:"cal2jd"`
	JD2Cal []struct {
		JD               float64
		Year, Month, Day int
		Frac             float64
	} `json:"jd2cal"`
	Grid [][5]float64 `json:"grid"` // TT (= TDB) JD, TDB − TT (s), Earth x, y, z (au)
	BJD  []struct {
		UTC1 float64 `json:"utc_jd1"`
		UTC2 float64 `json:"utc_jd2"`
		RA   float64 `json:"ra_deg"`
		Dec  float64 `json:"dec_deg"`
		BJD1 float64 `json:"bjd_tdb_jd1"`
		BJD2 float64 `json:"bjd_tdb_jd2"`
	} `json:"bjd"`
	Moved []struct {
		RA    float64 `json:"ra_deg"`
		Dec   float64 `json:"dec_deg"`
		PMRA  float64 `json:"pm_ra_cosdec_mas_yr"`
		PMDec float64 `json:"pm_dec_mas_yr"`
		Epoch float64 `json:"epoch_jyear"`
		UTC1  float64 `json:"utc_jd1"`
		UTC2  float64 `json:"utc_jd2"`
		RANow float64 `json:"ra_now_deg"`
		DecNw float64 `json:"dec_now_deg"`
		BJD1  float64 `json:"bjd_tdb_jd1"`
		BJD2  float64 `json:"bjd_tdb_jd2"`
	} `json:"proper_motion"`
}

var (
	refOnce sync.Once
	ref     reference
	refErr  error
)

func loadReference(t *testing.T) *reference {
	t.Helper()
	refOnce.Do(func() {
		b, err := os.ReadFile("../../../testdata/timescale/erfa_reference.json")
		if err != nil {
			refErr = err
			return
		}
		refErr = json.Unmarshal(b, &ref)
	})
	if refErr != nil {
		t.Fatal(refErr)
	}
	return &ref
}

func TestTheLeapTableIsERFAs(t *testing.T) {
	// ERFA's dat, read at 0h on the first of each January and July 1972–2030 where it
	// changes: it must list exactly our steps.
	r := loadReference(t)
	if len(r.LeapSeconds) != len(leapSteps) {
		t.Fatalf("ERFA lists %d steps of TAI − UTC, the table %d", len(r.LeapSeconds), len(leapSteps))
	}
	for i, e := range r.LeapSeconds {
		s := leapSteps[i]
		if s.Year != e.Year || s.Month != e.Month || s.Offset != e.TAIMinusUTC {
			t.Errorf("step %d: table %d-%02d %g s, ERFA %d-%02d %g s", i, s.Year, s.Month, s.Offset, e.Year, e.Month, e.TAIMinusUTC)
		}
	}
}

func TestTTMinusUTCAcrossLeapSeconds(t *testing.T) {
	// ERFA's utctai and taitt at instants on days before, holding and after leap seconds,
	// including 23:59:60.5 on 2016-12-31 and the first second of 2017-01-01.
	r := loadReference(t)
	for _, c := range r.TTMinusUTC {
		utc := JD{c.UTC1, c.UTC2}
		tt, err := UTCToTT(utc)
		if err != nil {
			t.Fatalf("%s %.1f s: %v", c.Date, c.UTCSeconds, err)
		}
		if d := tt.SecondsSince(JD{c.TT1, c.TT2}); math.Abs(d) > 1e-6 {
			t.Errorf("%s at %.1f s of the day: TT off ERFA's by %.3g s", c.Date, c.UTCSeconds, d)
		}
		back, err := TTToUTC(tt)
		if err != nil {
			t.Fatal(err)
		}
		if d := back.SecondsSince(utc); math.Abs(d) > 1e-6 {
			t.Errorf("%s at %.1f s of the day: UTC → TT → UTC moves it by %.3g s", c.Date, c.UTCSeconds, d)
		}
	}
}

func TestTTMinusUTCIs69184AfterJanuary2017(t *testing.T) {
	// TAI − UTC = 37 s since 2017-01-01 (IERS Bulletin C) and TT = TAI + 32.184 s, so
	// TT − UTC = 69.184 s (USNO time definitions); 68.184 s in the last second of 2016.
	jd, _ := CalendarJD(2017, 1, 1)
	cases := []struct {
		name string
		utc  JD
		want float64
	}{
		{"at 2017-01-01 0h", JD{jd, 0}, 69.184},
		{"in 2016's last ordinary second", JD{jd - 1, 86399.5 / 86401}, 68.184},
		{"in the leap second 2016-12-31 23:59:60", JD{jd - 1, 86400.5 / 86401}, 68.184},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tt, err := UTCToTT(c.utc)
			if err != nil {
				t.Fatal(err)
			}
			day0, frac := c.utc.midnight()
			secs := frac * 86400
			if day0 == jd-1 {
				secs = frac * 86401
			}
			if got := tt.SecondsSince(JD{day0, 0}) - secs; math.Abs(got-c.want) > 1e-6 {
				t.Errorf("TT − UTC = %.6f s, want %.3f s", got, c.want)
			}
		})
	}
}

func TestUTCBefore1972IsRefused(t *testing.T) {
	// UTC before 1972 had fractional offsets and a different second (common practice).
	jd, _ := CalendarJD(1971, 12, 31)
	if _, err := UTCToTAI(JD{jd, 0.9}); !errors.Is(err, ErrBefore1972) {
		t.Errorf("1971-12-31 gave %v, want ErrBefore1972", err)
	}
	if _, err := BJDTDB(JD{jd, 0.5}, Fixed(10, 10)); !errors.Is(err, ErrBefore1972) {
		t.Errorf("BJDTDB on 1971-12-31 gave %v, want ErrBefore1972", err)
	}
	jd72, _ := CalendarJD(1972, 1, 1)
	if _, err := TAIToUTC(JD{jd72, 5.0 / 86400}); !errors.Is(err, ErrBefore1972) {
		t.Errorf("TAI 1972-01-01 00:00:05 (UTC 1971) gave %v, want ErrBefore1972", err)
	}
}

func TestTheTableSaysWhenItHasExpired(t *testing.T) {
	// The expiry is 2026-07-01 (IERS Bulletin C 70, July 2025; from memory).
	before, _ := CalendarJD(2026, 6, 30)
	after, _ := CalendarJD(2026, 7, 1)
	if !LeapTableCovers(JD{before, 0.99}) {
		t.Error("2026-06-30 should be covered")
	}
	if LeapTableCovers(JD{after, 0.01}) {
		t.Error("2026-07-01 should be past the table")
	}
	tt, err := UTCToTT(JD{after + 3000, 0.25})
	if err != nil {
		t.Fatal(err)
	}
	if got := tt.SecondsSince(JD{after + 3000, 0.25}); math.Abs(got-69.184) > 1e-6 {
		t.Errorf("past the table TT − UTC = %.6f s, want the last 69.184 s kept", got)
	}
	if !strings.Contains(StaleLeapTableNote, "1 s") {
		t.Errorf("the note must say what an unannounced leap second would do: %q", StaleLeapTableNote)
	}
}

func TestCalendarDatesAreERFAs(t *testing.T) {
	// ERFA's cal2jd and jd2cal.
	r := loadReference(t)
	for _, c := range r.Cal2JD {
		got, err := CalendarJD(c.Year, c.Month, c.Day)
		if err != nil {
			t.Fatal(err)
		}
		if got != c.JD || FromJD(got).MJD() != c.MJD {
			t.Errorf("%04d-%02d-%02d: JD %.1f MJD %.1f, ERFA %.1f %.1f", c.Year, c.Month, c.Day, got, FromJD(got).MJD(), c.JD, c.MJD)
		}
	}
	for _, c := range r.JD2Cal {
		y, m, d, f, err := Calendar(FromJD(c.JD))
		if err != nil {
			t.Fatal(err)
		}
		if y != c.Year || m != c.Month || d != c.Day || math.Abs(f-c.Frac) > 1e-9 {
			t.Errorf("JD %.4f: %04d-%02d-%02d + %.10f, ERFA %04d-%02d-%02d + %.10f", c.JD, y, m, d, f, c.Year, c.Month, c.Day, c.Frac)
		}
	}
	for _, bad := range [][3]int{{2023, 2, 29}, {2100, 2, 29}, {2024, 13, 1}, {0, 1, 1}, {2024, 4, 31}} {
		if _, err := CalendarJD(bad[0], bad[1], bad[2]); err == nil {
			t.Errorf("%v was accepted", bad)
		}
	}
}

func TestCalendarRoundTripsEveryDay(t *testing.T) {
	// Every day of 1900–2100 back to itself; JD − MJD = 2400000.5 (USNO).
	jd0, _ := CalendarJD(1900, 1, 1)
	jd1, _ := CalendarJD(2100, 12, 31)
	for jd := jd0; jd <= jd1; jd++ {
		y, m, d, f, err := Calendar(JD{jd, 0.3})
		if err != nil {
			t.Fatal(err)
		}
		back, _ := CalendarJD(y, m, d)
		if back != jd || math.Abs(f-0.3) > 1e-9 {
			t.Fatalf("JD %.1f → %04d-%02d-%02d → %.1f", jd, y, m, d, back)
		}
	}
	if got := FromMJD(0).Float(); got != MJDOffset {
		t.Errorf("MJD 0 is JD %.1f", got)
	}
}

// maxErrors measures the package against ERFA's dense grid (2000-01-01.5 to 2040, every
// 7.31 d, 1999 points): TDB − TT in s, the Earth's position in au.
func maxErrors(r *reference) (dtdb, pos float64) {
	for _, g := range r.Grid {
		jd := FromJD(g[0])
		dtdb = math.Max(dtdb, math.Abs(TDBMinusTT(jd)-g[1]))
		p := EarthBarycentric(jd)
		pos = math.Max(pos, math.Hypot(math.Hypot(p[0]-g[2], p[1]-g[3]), p[2]-g[4]))
	}
	return dtdb, pos
}

func TestTDBMinusTTIsWithin10MicrosecondsOfERFA(t *testing.T) {
	// ERFA's dtdb at the geocentre (the full Fairhead & Bretagnon series) on the dense grid.
	r := loadReference(t)
	worst, _ := maxErrors(r)
	t.Logf("TDB − TT: max |ours − dtdb| = %.2f µs over %d dates 2000–2040 (ERFA %s)", worst*1e6, len(r.Grid), r.ERFAVersion)
	if worst > 10e-6 {
		t.Errorf("TDB − TT off ERFA's by %.2f µs, more than 10 µs", worst*1e6)
	}
}

func TestEarthBarycentricIsNearERFA(t *testing.T) {
	// ERFA's epv00 barycentric position on the dense grid. 0.5 s of light time is 1.0e-3 au;
	// we hold the position to a fifth of that.
	r := loadReference(t)
	_, worst := maxErrors(r)
	t.Logf("Earth barycentric: max |ours − epv00| = %.3g au = %.3f s of light time over %d dates 2000–2040",
		worst, worst*lightSecondsPerAU, len(r.Grid))
	if worst > 2e-4 {
		t.Errorf("Earth position off ERFA's by %.3g au", worst)
	}
}

func TestBJDIsWithinHalfASecondOfERFA(t *testing.T) {
	// The BJD_TDB built from ERFA's utctai, taitt, dtdb and epv00 with the same formula,
	// for 6 directions × 20 UTC dates over 2000–2040.
	r := loadReference(t)
	var worst, worstBack float64
	for _, c := range r.BJD {
		utc := JD{c.UTC1, c.UTC2}
		got, err := BJDTDB(utc, Fixed(c.RA, c.Dec))
		if err != nil {
			t.Fatal(err)
		}
		worst = math.Max(worst, math.Abs(got.SecondsSince(JD{c.BJD1, c.BJD2})))
		back, err := UTCFromBJDTDB(got, Fixed(c.RA, c.Dec))
		if err != nil {
			t.Fatal(err)
		}
		worstBack = math.Max(worstBack, math.Abs(back.SecondsSince(utc)))
	}
	t.Logf("BJD_TDB: max |ours − ERFA-built| = %.3f s over %d cases; inverse round trip within %.2g s", worst, len(r.BJD), worstBack)
	if worst > 0.5 {
		t.Errorf("BJD_TDB off the ERFA-built value by %.3f s, more than 0.5 s", worst)
	}
	if worstBack > 1e-6 {
		t.Errorf("UTC → BJD_TDB → UTC moves the instant by %.3g s", worstBack)
	}
}

// TestProperMotionMovesTheDirectionAsERFAsPmsafe compares DirectionAt with ERFA's pmsafe
// (space motion with zero radial velocity) for three stars — among them one moving 10.4″/yr
// (a nearby star's catalogue values, from memory, rounded) and one near the pole — from
// J2016.0 to dates over 2000–2040, and the BJD_TDB of their light with the ERFA-built one.
// It also shows why the motion matters: the fixed direction's BJD is off by more.
func TestProperMotionMovesTheDirectionAsERFAsPmsafe(t *testing.T) {
	r := loadReference(t)
	if len(r.Moved) == 0 {
		t.Fatal("the reference has no proper-motion cases")
	}
	var worstAngle, worstBJD, worstFixed float64
	for _, c := range r.Moved {
		tg := Target{RA: c.RA, Dec: c.Dec, PMRA: c.PMRA, PMDec: c.PMDec, Epoch: c.Epoch}
		utc := JD{c.UTC1, c.UTC2}
		tt, err := UTCToTT(utc)
		if err != nil {
			t.Fatal(err)
		}
		tdb := tt.AddSeconds(TDBMinusTT(tt))
		n, want := tg.DirectionAt(tdb), Direction(c.RANow, c.DecNw)
		worstAngle = math.Max(worstAngle, math.Hypot(math.Hypot(n[0]-want[0], n[1]-want[1]), n[2]-want[2])*masPerRad)
		got, err := BJDTDB(utc, tg)
		if err != nil {
			t.Fatal(err)
		}
		worstBJD = math.Max(worstBJD, math.Abs(got.SecondsSince(JD{c.BJD1, c.BJD2})))
		fixed, err := BJDTDB(utc, Fixed(c.RA, c.Dec))
		if err != nil {
			t.Fatal(err)
		}
		worstFixed = math.Max(worstFixed, math.Abs(fixed.SecondsSince(JD{c.BJD1, c.BJD2})))
		back, err := UTCFromBJDTDB(got, tg)
		if err != nil || math.Abs(back.SecondsSince(utc)) > 1e-6 {
			t.Errorf("the round trip moves %v by %v s (%v)", utc, back.SecondsSince(utc), err)
		}
	}
	t.Logf("proper motion: direction within %.3g mas of pmsafe, BJD within %.3f s; the fixed direction's BJD is off by up to %.3f s", worstAngle, worstBJD, worstFixed)
	if worstAngle > 1 {
		t.Errorf("the moved direction is %.3g mas from ERFA's pmsafe", worstAngle)
	}
	if worstBJD > 0.5 {
		t.Errorf("BJD_TDB with proper motion off the ERFA-built value by %.3f s", worstBJD)
	}
	if !(worstFixed > worstBJD) {
		t.Errorf("leaving the motion out costs nothing (%.3f s against %.3f s): the cases do not test it", worstFixed, worstBJD)
	}
}

func TestBadDirectionsAreRefused(t *testing.T) {
	for _, d := range [][2]float64{{10, 91}, {math.NaN(), 0}, {10, math.NaN()}} {
		if _, err := BJDTDB(FromMJD(60000), Fixed(d[0], d[1])); err == nil {
			t.Errorf("RA %g Dec %g accepted", d[0], d[1])
		}
	}
	for _, tg := range []Target{{RA: 10, Dec: 10, PMRA: 25000, Epoch: 2016}, {RA: 10, Dec: 10, PMDec: math.NaN(), Epoch: 2016},
		{RA: 10, Dec: 10, PMRA: 1, Epoch: 16}} {
		if _, err := BJDTDB(FromMJD(60000), tg); err == nil {
			t.Errorf("target %+v accepted", tg)
		}
	}
}

func BenchmarkBJDTDB(b *testing.B) {
	utc := FromMJD(60000.25)
	for i := 0; i < b.N; i++ {
		if _, err := BJDTDB(utc, Fixed(123.4, 45.6)); err != nil {
			b.Fatal(err)
		}
	}
}
