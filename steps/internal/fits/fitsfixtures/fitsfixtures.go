// Package fitsfixtures recomputes in Go the values that testdata/fits/make_fixtures.c writes
// with cfitsio, so that tests can compare what dipline's reader decodes with what an
// independent writer wrote. The formulas here and in the C program must change together;
// each function names the C function it mirrors. It is used by tests only and reads no files.
//
// All data are invented: a synthetic star with integer-derived noise and a box-shaped dip.
package fitsfixtures

import "math"

// Dir is the fixtures' folder relative to the repository root.
const Dir = "testdata/fits"

// noise mirrors noise() in make_fixtures.c: four draws of a 64-bit linear congruential
// generator (multiplier 6364136223846793005, increment 1442695040888963407; from memory),
// their top 24 bits summed as an exact integer, centred, times 1e-10.
type noise struct{ state uint64 }

func (n *noise) next() float64 {
	var k int64
	for j := 0; j < 4; j++ {
		n.state = n.state*6364136223846793005 + 1442695040888963407
		k += int64(n.state >> 40)
	}
	k -= 1 << 25
	return float64(k) * 1e-10
}

// InDip mirrors in_dip(): 17 cadences in a box every 461, from cadence 120.
func InDip(i int) bool { return i >= 120 && (i-120)%461 < 17 }

// DipDepth is the fractional depth of the box in lightcurve.fits.
const DipDepth = 0.01

// LightCurve rows mirror lightcurve() in make_fixtures.c (2000 rows, 10-min cadence).
type LCRow struct {
	Time    float64 // days since BJD_TDB 2460000.25
	Flux    float32 // NaN in some rows
	Err     float32 // 0 in some rows
	Quality int32
}

// LightCurve keywords as written by lightcurve().
const (
	LightCurveRows     = 2000
	LightCurveRefInt   = 2460000
	LightCurveRefFrac  = 0.25
	LightCurveExposure = 480.0 // seconds, EXPOSURE with comment unit "[s]"
	LightCurveCadence  = 10.0 / 1440.0
)

// LightCurve returns the rows of lightcurve.fits.
func LightCurve() []LCRow {
	rows := make([]LCRow, LightCurveRows)
	n := noise{42}
	for i := range rows {
		dip := 0.0
		if InDip(i) {
			dip = DipDepth
		}
		nz := n.next()
		r := &rows[i]
		r.Time = 0.5 + float64(i)*(10.0/1440.0)
		r.Flux = float32(1000.0 * ((1.0 + nz) - dip))
		if i%331 == 200 {
			r.Flux = float32(math.NaN())
		}
		r.Err = 0.97
		if i%503 == 300 {
			r.Err = 0
		}
		if i%97 == 13 {
			r.Quality |= 4
		}
		if i%250 == 7 {
			r.Quality |= 1
		}
	}
	return rows
}

// LightCurveLate keywords as written by lightcurve_late().
const (
	LateRows    = 1500
	LateRefInt  = 2460020
	LateRefFrac = 0.625
	LateTimeDel = 120.0 // seconds (TIMEUNIT = 's')
)

// LightCurveLate returns the columns of lightcurve_late.fits: time in seconds since
// BJD_TDB 2460020.625, and flux.
func LightCurveLate() (time []float64, flux []float32) {
	time, flux = make([]float64, LateRows), make([]float32, LateRows)
	n := noise{7}
	for i := range time {
		time[i] = 1800.0 + 120.0*float64(i)
		flux[i] = float32(52.5 * (1.0 + n.next()))
	}
	return time, flux
}

// UTC mirrors utc(): 40 rows, TIME = 0.1 i, FLUX = 1 + 0.001 (i % 3), FLUX_ERR = 0.001.
const UTCRows = 40

// MixedRows is the row count of the MIXED table in tables.fits.
const MixedRows = 25

// Mixed mirrors the MIXED table of tables() for row i.
type Mixed struct {
	Time      float64
	Raw       int32   // stored; physical = 0.5 raw + 100
	Counts    float64 // NaN where the stored value is TNULL3 = −999
	Vec       [3]float32
	Label     string
	Good      bool
	GoodKnown bool // false in row 4, written as a null
	Spec      []float32
	Byte      uint8
	Big       int64
	UShort    uint16
	Pair      [2]float64
}

// MixedRow returns row i of MIXED.
func MixedRow(i int) Mixed {
	m := Mixed{
		Time:      0.125 * float64(i),
		Raw:       int32(7*i - 50),
		Counts:    float64(3 * i),
		Vec:       [3]float32{float32(i), float32(i) + 0.25, float32(i) + 0.5},
		Label:     "row" + itoa(i),
		Good:      i%3 != 0,
		GoodKnown: i != 4,
		Byte:      uint8((10 * i) % 256),
		Big:       int64(i) * 1000000000000,
		UShort:    uint16(40000 + i),
		Pair:      [2]float64{-float64(i), float64(i * i)},
	}
	if i%5 == 3 {
		m.Counts = math.NaN()
	}
	if i == 0 {
		m.Label = "it's"
	}
	if i == 4 {
		m.Good = false
	}
	for j := 0; j < i%4+1; j++ {
		m.Spec = append(m.Spec, float32(i)+0.5*float32(j))
	}
	return m
}

// SecondRow mirrors Second_LC row i: TIME = 100 + i/48, FLUX = (float)(1 + i/1000).
func SecondRow(i int) (time float64, flux float32) {
	return 100 + float64(i)/48, float32(1 + float64(i)/1000)
}

// PrimaryPixel mirrors the primary image of tables.fits: 30 × 20, value x + 2y.
func PrimaryPixel(x, y int) int16 { return int16(x + 2*y) }

func itoa(i int) string {
	if i == 0 {
		return "0"
	}
	var b [20]byte
	p := len(b)
	for ; i > 0; i /= 10 {
		p--
		b[p] = byte('0' + i%10)
	}
	return string(b[p:])
}
