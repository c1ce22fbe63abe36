package main

import (
	"math"
	"strconv"
)

// The invented catalogue of nearby cool dwarfs and the invented imaging of FW-3318. Every
// row is made up; the ids follow the demo's own "FW-nnnn" scheme.

// catalogueRow is one star of the catalogue. Parallax and its error are in mas, magnitudes
// in mag, Teff in K. The magnitudes are those of everything inside the catalogue's
// resolution: for FW-3318 the host and its close companion together.
type catalogueRow struct {
	ID                string
	RA, Dec           float64 // degrees
	Parallax, PlxErr  float64
	J, JErr, Ks, KsEr float64
	Teff, TeffErr     float64
}

// catalogueHeader is the first line of both revisions.
const catalogueHeader = "id,ra_deg,dec_deg,parallax,parallax_err,j,j_err,ks,ks_err,teff,teff_err"

// fw3318Parallax is FW-3318's parallax in revision 1, in mas (25.8 pc).
const fw3318Parallax, fw3318ParallaxErr = 38.72, 0.12

// fw3318Rev2 is what revision 2 says of FW-3318: a new parallax and a new Ks, nothing else.
// Together they lower M_Ks by about 0.076 mag, which raises the Mann et al. (2015) radius by
// about 0.9 σ of its uncertainty (the relation's 2.89 % scatter and the measurement errors
// in quadrature; checked in TestCatalogue).
var fw3318Rev2 = struct{ Parallax, PlxErr, Ks, KsErr float64 }{38.31, 0.05, 7.925, 0.019}

// otherStars are the catalogue's other invented cool dwarfs, as in revision 1. Their
// numbers are plausible for early-to-mid M dwarfs between 10 and 40 pc and mean nothing.
var otherStars = []catalogueRow{
	{"FW-0412", 12.48371, -31.20944, 61.05, 0.04, 7.412, 0.023, 6.553, 0.018, 3650, 60},
	{"FW-1187", 48.92015, 12.66108, 24.37, 0.06, 9.886, 0.024, 9.031, 0.021, 3560, 70},
	{"FW-2093", 83.11734, 44.08317, 15.92, 0.09, 10.903, 0.026, 10.082, 0.023, 3470, 80},
	{"FW-2741", 121.60248, -8.47712, 33.48, 0.11, 10.215, 0.025, 9.312, 0.022, 3290, 70},
	{"FW-4056", 203.77491, 27.35186, 48.66, 0.05, 9.618, 0.023, 8.705, 0.020, 3230, 60},
	{"FW-5520", 259.04386, -52.91425, 19.84, 0.07, 9.524, 0.024, 8.727, 0.019, 3760, 90},
	{"FW-6903", 331.88652, 5.72309, 72.13, 0.06, 9.107, 0.022, 8.163, 0.021, 3170, 60},
}

// fw2741Rev2 is the one other change of revision 2: FW-2741's parallax, re-measured.
var fw2741Rev2 = struct{ Parallax, PlxErr float64 }{33.21, 0.06}

// blend returns the magnitude of two stars seen as one: the host's magnitude m and a
// companion dm fainter, m_blend = m − 2.5 log10(1 + 10^(−0.4 dm)) (fluxes add; common
// practice).
func blend(m, dm float64) float64 {
	return m - 2.5*math.Log10(1+math.Pow(10, -0.4*dm))
}

// apparentFromAbsolute returns m = M − 5 log10(ϖ / 1 arcsec) − 5 for parallax ϖ in mas, the
// distance modulus (common practice; no extinction this close).
func apparentFromAbsolute(abs, parallaxMas float64) float64 {
	return abs - 5*math.Log10(parallaxMas/1000) - 5
}

// fw3318Row is FW-3318's row of revision 1, made from the scenario: the host's absolute
// Ks at the catalogue parallax, blended with the companion; J likewise with the host's
// invented J − Ks colour and the companion's invented ΔJ.
func fw3318Row(s *star, c *companion) catalogueRow {
	ks := apparentFromAbsolute(s.AbsKs, fw3318Parallax)
	return catalogueRow{
		ID: s.ID, RA: s.RA, Dec: s.Dec, Parallax: fw3318Parallax, PlxErr: fw3318ParallaxErr,
		J: round(blend(ks+s.JMinusKs, c.DeltaJ), 3), JErr: 0.024,
		Ks: round(blend(ks, c.DeltaKs), 3), KsEr: 0.021,
		Teff: s.Teff, TeffErr: 70,
	}
}

// catalogue returns the rows of revision rev (1 or 2), in id order.
func catalogue(s *star, c *companion, rev int) []catalogueRow {
	rows := append([]catalogueRow{}, otherStars[:4]...)
	rows = append(rows, fw3318Row(s, c))
	rows = append(rows, otherStars[4:]...)
	if rev == 2 {
		for i := range rows {
			switch rows[i].ID {
			case s.ID:
				rows[i].Parallax, rows[i].PlxErr = fw3318Rev2.Parallax, fw3318Rev2.PlxErr
				rows[i].Ks, rows[i].KsEr = fw3318Rev2.Ks, fw3318Rev2.KsErr
			case "FW-2741":
				rows[i].Parallax, rows[i].PlxErr = fw2741Rev2.Parallax, fw2741Rev2.PlxErr
			}
		}
	}
	return rows
}

// encodeCatalogue writes the rows as CSV with a fixed number of decimals per column.
func encodeCatalogue(rows []catalogueRow) []byte {
	b := []byte(catalogueHeader + "\n")
	for _, r := range rows {
		b = append(b, r.ID...)
		for _, v := range []struct {
			x   float64
			dec int
		}{{r.RA, 5}, {r.Dec, 5}, {r.Parallax, 2}, {r.PlxErr, 2}, {r.J, 3}, {r.JErr, 3}, {r.Ks, 3}, {r.KsEr, 3}, {r.Teff, 0}, {r.TeffErr, 0}} {
			b = append(b, ',')
			b = strconv.AppendFloat(b, v.x, 'f', v.dec, 64)
		}
		b = append(b, '\n')
	}
	return b
}

// imagingHeader is the first line of the companions table.
const imagingHeader = "name,band,dmag,dmag_err,separation"

// encodeImaging writes the companions table of FW-3318: one companion, measured in Ks
// (high-resolution imaging) and in the light curve's band. dmag is companion minus host,
// separation is in arcsec.
func encodeImaging(c *companion) []byte {
	b := []byte(imagingHeader + "\n")
	for _, m := range []struct {
		band     string
		dm, err  float64
		decimals int
	}{{"Ks", c.DeltaKs, c.DeltaKsErr, 2}, {lightCurveBand, c.DeltaBand, c.DeltaBandErr, 2}} {
		b = append(b, c.Name...)
		b = append(b, ',')
		b = append(b, m.band...)
		b = append(b, ',')
		b = strconv.AppendFloat(b, m.dm, 'f', m.decimals, 64)
		b = append(b, ',')
		b = strconv.AppendFloat(b, m.err, 'f', m.decimals, 64)
		b = append(b, ',')
		b = strconv.AppendFloat(b, c.Separation, 'f', 2, 64)
		b = append(b, '\n')
	}
	return b
}

// round rounds x to dec decimals, as the catalogue prints it.
func round(x float64, dec int) float64 {
	p := math.Pow(10, float64(dec))
	return math.Round(x*p) / p
}
