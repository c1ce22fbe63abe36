package photometry

import (
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
)

// synthFITS builds a light-curve FITS file of n rows in the layout of lightcurve.fits:
// TIME 1D = i/720 d, FLUX 1E = 100 + (i % 13), FLUX_ERR 1E = 1, QUALITY 1J = i % 50 == 0.
func synthFITS(n int) []byte {
	var b strings.Builder
	block := func(cards ...string) {
		for _, c := range append(cards, "END") {
			b.WriteString(c + strings.Repeat(" ", 80-len(c)))
		}
		for b.Len()%2880 != 0 {
			b.WriteByte(' ')
		}
	}
	kw := func(k string, v any) string { return fmt.Sprintf("%-8s= %20v", k, v) }
	block(kw("SIMPLE", "T"), kw("BITPIX", 8), kw("NAXIS", 0), kw("EXTEND", "T"))
	block(kw("XTENSION", "'BINTABLE'"), kw("BITPIX", 8), kw("NAXIS", 2), kw("NAXIS1", 20),
		kw("NAXIS2", n), kw("PCOUNT", 0), kw("GCOUNT", 1), kw("TFIELDS", 4),
		kw("TTYPE1", "'TIME'"), kw("TFORM1", "'1D'"), kw("TTYPE2", "'FLUX'"), kw("TFORM2", "'1E'"),
		kw("TTYPE3", "'FLUX_ERR'"), kw("TFORM3", "'1E'"), kw("TTYPE4", "'QUALITY'"), kw("TFORM4", "'1J'"),
		kw("TIMESYS", "'TDB'"), kw("TIMEREF", "'SOLARSYSTEM'"), kw("TIMEUNIT", "'d'"),
		kw("BJDREFI", 2460000), kw("BJDREFF", 0.5), kw("EXTNAME", "'LIGHTCURVE'"))
	out := []byte(b.String())
	row := make([]byte, 20)
	for i := 0; i < n; i++ {
		binary.BigEndian.PutUint64(row, math.Float64bits(float64(i)/720))
		binary.BigEndian.PutUint32(row[8:], math.Float32bits(float32(100+i%13)))
		binary.BigEndian.PutUint32(row[12:], math.Float32bits(1))
		q := uint32(0)
		if i%50 == 0 {
			q = 1
		}
		binary.BigEndian.PutUint32(row[16:], q)
		out = append(out, row...)
	}
	for len(out)%2880 != 0 {
		out = append(out, 0)
	}
	return out
}

// synthCSV is the same light curve as comma-separated text with full Julian dates.
func synthCSV(n int) []byte {
	var b []byte
	b = append(b, "time,flux,flux_err,quality\n"...)
	for i := 0; i < n; i++ {
		b = strconv.AppendFloat(b, 2460000.5+float64(i)/720, 'f', 6, 64)
		b = append(b, ',')
		b = strconv.AppendInt(b, int64(100+i%13), 10)
		b = append(b, ",1,"...)
		if i%50 == 0 {
			b = append(b, '1')
		} else {
			b = append(b, '0')
		}
		b = append(b, '\n')
	}
	return b
}

func TestSyntheticFilesAgree(t *testing.T) {
	// The same rows as FITS and as text: equal counts, and times equal to the 6 decimals
	// the text keeps.
	fr, err := Read(DefaultConfig(), []steps.File{{Name: "s.fits", Data: synthFITS(1000)}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	cr, err := Read(DefaultConfig(), []steps.File{{Name: "s.csv", Data: synthCSV(1000)}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	// i % 50 == 0 flags 20 of 1000 rows.
	if fr.LC.Len() != 980 || cr.LC.Len() != 980 || fr.LC.Dropped.Flagged != 20 {
		t.Fatalf("%d and %d points, %d flagged", fr.LC.Len(), cr.LC.Len(), fr.LC.Dropped.Flagged)
	}
	ft, ct := fr.LC.Segments[0].Time, cr.LC.Segments[0].Time
	off := float64(cr.LC.RefInt-fr.LC.RefInt) + (cr.LC.RefFrac - fr.LC.RefFrac)
	for i := range ft {
		if math.Abs(ft[i]-(ct[i]+off)) > 6e-7 {
			t.Fatalf("point %d: %v (FITS) and %v (text)", i, ft[i], ct[i]+off)
		}
	}
}

func BenchmarkReadFITS100k(b *testing.B) {
	files := []steps.File{{Name: "s.fits", Data: synthFITS(100000)}}
	b.SetBytes(int64(len(files[0].Data)))
	for b.Loop() {
		if _, err := Read(DefaultConfig(), files, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkReadCSV100k(b *testing.B) {
	files := []steps.File{{Name: "s.csv", Data: synthCSV(100000)}}
	b.SetBytes(int64(len(files[0].Data)))
	for b.Loop() {
		if _, err := Read(DefaultConfig(), files, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func FuzzRead(f *testing.F) {
	f.Add(synthFITS(3))
	f.Add(synthCSV(3))
	f.Add(load(f, "fits/utc.fits")[0].Data)
	f.Fuzz(func(t *testing.T, data []byte) {
		res, err := Read(DefaultConfig(), []steps.File{{Name: "f", Data: data}}, nil)
		if err != nil {
			return
		}
		if err := res.LC.Validate(); err != nil {
			t.Fatal(err)
		}
		if _, err := DecodeResult(res.Encode()); err != nil {
			t.Fatal(err)
		}
	})
}
