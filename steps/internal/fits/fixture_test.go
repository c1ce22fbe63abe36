package fits

import (
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"dipline/steps/internal/fits/fitsfixtures"
)

// The fixtures were written by cfitsio (testdata/fits/make_fixtures.c, rebuilt by make.sh);
// the expected values come from the same formulas, recomputed in package fitsfixtures.

var fixtureNames = []string{"lightcurve.fits", "lightcurve_late.fits", "utc.fits", "tables.fits"}

func fixture(t testing.TB, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "..", fitsfixtures.Dir, name))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func open(t testing.TB, name string) *File {
	t.Helper()
	f, err := Open(fixture(t, name))
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	return f
}

func TestFixturesPassFitsverify(t *testing.T) {
	bin, err := exec.LookPath("fitsverify")
	if err != nil {
		t.Skip("fitsverify is not installed (Debian package fitsverify)")
	}
	for _, name := range fixtureNames {
		t.Run(name+" conforms to the FITS standard according to fitsverify", func(t *testing.T) {
			path := filepath.Join("..", "..", "..", fitsfixtures.Dir, name)
			out, err := exec.Command(bin, "-q", path).CombinedOutput()
			if err != nil || !strings.Contains(string(out), "verification OK") {
				t.Fatalf("fitsverify: %v\n%s", err, out)
			}
		})
	}
}

func TestLightCurveFixtureMatchesTheWriter(t *testing.T) {
	f := open(t, "lightcurve.fits")
	tab, err := f.Table("lightcurve")
	if err != nil {
		t.Fatal(err)
	}
	want := fitsfixtures.LightCurve()
	if tab.Rows() != len(want) {
		t.Fatalf("%d rows, want %d", tab.Rows(), len(want))
	}
	get := func(name string) []float64 {
		c, err := tab.Column(name)
		if err != nil {
			t.Fatal(err)
		}
		v, err := c.Floats(0, nil)
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	tm, fl, er, q := get("time"), get("Flux"), get("FLUX_ERR"), get("quality")
	for i, w := range want {
		sameFlux := float64(w.Flux) == fl[i] || math.IsNaN(float64(w.Flux)) && math.IsNaN(fl[i])
		if tm[i] != w.Time || !sameFlux || er[i] != float64(w.Err) || q[i] != float64(w.Quality) {
			t.Fatalf("row %d: got (%v, %v, %v, %v), the writer wrote %+v", i, tm[i], fl[i], er[i], q[i], w)
		}
	}
	h := tab.HDU().Header
	for _, c := range []struct {
		key  string
		want any
	}{
		{"TIMESYS", "TDB"}, {"TIMEREF", "SOLARSYSTEM"}, {"TIMEUNIT", "d"},
		{"BJDREFI", int64(fitsfixtures.LightCurveRefInt)}, {"BJDREFF", fitsfixtures.LightCurveRefFrac},
		{"EXPOSURE", fitsfixtures.LightCurveExposure},
	} {
		var got any
		var ok bool
		switch c.want.(type) {
		case string:
			got, ok = h.String(c.key)
		case int64:
			got, ok = h.Int(c.key)
		case float64:
			got, ok = h.Float(c.key)
		}
		if !ok || got != c.want {
			t.Errorf("%s = %v (found %v), the writer wrote %v", c.key, got, ok, c.want)
		}
	}
	if c := h.Card("exposure"); c == nil || !strings.HasPrefix(c.Comment, "[s]") {
		t.Errorf("EXPOSURE comment lost: %+v", c)
	}
}

func TestTablesFixtureMatchesTheWriter(t *testing.T) {
	f := open(t, "tables.fits")
	hdus := f.HDUs()
	kinds := []Kind{PrimaryHDU, BinTableHDU, ImageHDU, BinTableHDU}
	if len(hdus) != len(kinds) {
		t.Fatalf("%d HDUs, the writer wrote %d", len(hdus), len(kinds))
	}
	for i, k := range kinds {
		if hdus[i].Kind != k {
			t.Errorf("HDU %d is %s, want %s", i, hdus[i].Kind, k)
		}
	}
	// Primary: 30 × 20 pixels of 2 bytes; the data start after one header block.
	if hdus[0].DataSize != 1200 || hdus[0].DataOffset != 2880 {
		t.Errorf("primary data at %d, %d bytes; want 2880, 1200", hdus[0].DataOffset, hdus[0].DataSize)
	}
	mixed, err := f.Table("1")
	if err != nil {
		t.Fatal(err)
	}
	// The heap follows the 25 rows of 70 bytes; PCOUNT counts it (cfitsio wrote 244).
	if pc, _ := mixed.HDU().Header.Int("PCOUNT"); mixed.HDU().DataSize != 25*70+pc || pc == 0 {
		t.Errorf("MIXED data %d bytes with PCOUNT %d", mixed.HDU().DataSize, pc)
	}
	col := func(name string) *Column {
		c, err := mixed.Column(name)
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	floats := func(name string, elem int) []float64 {
		v, err := col(name).Floats(elem, nil)
		if err != nil {
			t.Fatal(err)
		}
		return v
	}
	tm, raw, counts := floats("TIME", 0), floats("raw", 0), floats("COUNTS", 0)
	vec := [3][]float64{floats("VEC", 0), floats("VEC", 1), floats("VEC", 2)}
	by, big, us := floats("BYTE", 0), floats("BIG", 0), floats("USHORT", 0)
	pair := [2][]float64{floats("PAIR", 0), floats("PAIR", 1)}
	labels, err := col("LABEL").Strings()
	if err != nil {
		t.Fatal(err)
	}
	good, known, err := col("GOOD").Bools(0)
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < fitsfixtures.MixedRows; i++ {
		w := fitsfixtures.MixedRow(i)
		checks := []struct {
			what      string
			got, want float64
		}{
			{"TIME", tm[i], w.Time},
			{"RAW scaled by TSCAL2/TZERO2", raw[i], 0.5*float64(w.Raw) + 100},
			{"COUNTS with TNULL3", counts[i], w.Counts},
			{"VEC[0]", vec[0][i], float64(w.Vec[0])},
			{"VEC[1]", vec[1][i], float64(w.Vec[1])},
			{"VEC[2]", vec[2][i], float64(w.Vec[2])},
			{"BYTE", by[i], float64(w.Byte)},
			{"BIG", big[i], float64(w.Big)},
			{"USHORT via TZERO10 = 32768", us[i], float64(w.UShort)},
			{"PAIR[0]", pair[0][i], w.Pair[0]},
			{"PAIR[1]", pair[1][i], w.Pair[1]},
		}
		for _, c := range checks {
			if c.got != c.want && !(math.IsNaN(c.got) && math.IsNaN(c.want)) {
				t.Errorf("row %d %s = %v, the writer wrote %v", i, c.what, c.got, c.want)
			}
		}
		if labels[i] != w.Label || good[i] != w.Good || known[i] != w.GoodKnown {
			t.Errorf("row %d: LABEL %q GOOD %v/%v, the writer wrote %q %v/%v", i, labels[i], good[i], known[i], w.Label, w.Good, w.GoodKnown)
		}
	}
	if v, err := col("VEC").Value(7, 2); err != nil || v != float64(fitsfixtures.MixedRow(7).Vec[2]) {
		t.Errorf("Value(7, 2) = %v, %v", v, err)
	}
	if _, err := col("SPEC").Floats(0, nil); err == nil || !strings.Contains(err.Error(), "variable-length") {
		t.Errorf("reading the heap column: %v", err)
	}

	// The second table sits after a heap and an image extension.
	second, err := f.Table("SECOND_lc")
	if err != nil {
		t.Fatal(err)
	}
	st, _ := second.Column("TIME")
	sf, _ := second.Column("FLUX")
	tv, _ := st.Floats(0, nil)
	fv, _ := sf.Floats(0, nil)
	for i := range tv {
		wt, wf := fitsfixtures.SecondRow(i)
		if tv[i] != wt || fv[i] != float64(wf) {
			t.Errorf("Second_LC row %d = (%v, %v), the writer wrote (%v, %v)", i, tv[i], fv[i], wt, wf)
		}
	}

	h := mixed.HDU().Header
	if s, _ := h.String("OBSERVER"); s != "O'Neil" {
		t.Errorf("OBSERVER = %q, the writer wrote O'Neil", s)
	}
	if v, _ := h.Float("TESTD"); v != 1500 {
		t.Errorf("TESTD = %v, the card says 1.5D+03", v)
	}
	if v, ok := h.Bool("TESTL"); !v || !ok {
		t.Errorf("TESTL = %v, %v", v, ok)
	}
	if v, _ := h.Int("TESTI"); v != -42 {
		t.Errorf("TESTI = %v", v)
	}
	if v, _ := h.Float("TESTF"); v != 0.1 {
		t.Errorf("TESTF = %v", v)
	}
}

func TestSelectingAnHDU(t *testing.T) {
	f := open(t, "tables.fits")
	cases := []struct {
		sel, want, err string
	}{
		{sel: "MIXED", want: "HDU 1 (MIXED)"},
		{sel: "mixed", want: "HDU 1 (MIXED)"},
		{sel: "3", want: "HDU 3 (Second_LC)"},
		{sel: "0", err: "HDU 0 (primary) is the primary HDU, not a binary table"},
		{sel: "IMG", err: "HDU 2 (IMG) is an image extension, not a binary table"},
		{sel: "7", err: "no HDU 7: the file has HDUs 0 to 3"},
		{sel: "nope", err: `no extension named "nope" (extensions: HDU 1 (MIXED), HDU 2 (IMG), HDU 3 (Second_LC))`},
	}
	for _, c := range cases {
		t.Run("selecting "+c.sel+" gives "+c.want+c.err, func(t *testing.T) {
			tab, err := f.Table(c.sel)
			if c.err != "" {
				if err == nil || err.Error() != c.err {
					t.Fatalf("error %v, want %q", err, c.err)
				}
				return
			}
			if err != nil || tab.HDU().String() != c.want {
				t.Fatalf("got %v, %v; want %s", tab, err, c.want)
			}
		})
	}
}

func TestDamagedFixtures(t *testing.T) {
	lc := fixture(t, "lightcurve.fits")
	// lightcurve.fits: a primary header block, one block of extension header, then
	// 2000 rows × 20 bytes = 40000 bytes of data.
	const dataStart = 2 * 2880
	corrupt := func(at int, with string) []byte {
		b := append([]byte(nil), lc...)
		copy(b[at:], with)
		return b
	}
	card := func(key string) int { // byte offset of a card in the extension header
		i := strings.Index(string(lc[2880:dataStart]), key+" ")
		if i < 0 {
			t.Fatalf("no %s card", key)
		}
		return 2880 + i
	}
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"a file cut inside the table data names the HDU and the bytes present",
			lc[:dataStart+4320], "file ends inside HDU 1's data: 4320 of 40000 bytes"},
		{"a file cut inside a header says the END card is missing",
			lc[:2880+400], "file ends inside HDU 1's header: no END card in its 400 bytes"},
		{"a garbled NAXIS2 value names the keyword",
			corrupt(card("NAXIS2")+28, "Q"), `HDU 1 (LIGHTCURVE): keyword NAXIS2: "20Q0" is a malformed value, not an integer`},
		{"a NUL byte in a header names the card and column",
			corrupt(card("TTYPE2")+12, "\x00"), "HDU 1 header, card 12: byte 0x00 in column 13 is not printable ASCII; the header is corrupt"},
		{"a TFORM with an unknown type names the keyword",
			corrupt(card("TFORM2")+11, "1Z"), "HDU 1 (LIGHTCURVE): TFORM2 = '1Z': unknown data type \"Z\""},
		{"columns that do not fill NAXIS1 are refused",
			corrupt(card("TFORM4")+11, "1I"), "HDU 1 (LIGHTCURVE): the columns take 18 bytes but NAXIS1 = 20"},
		{"a file that is not FITS says so",
			[]byte("time,flux\n1,2\n"), "not a FITS file: it does not start with a SIMPLE card"},
		{"bytes after the last HDU that are not an extension are refused",
			append(append([]byte(nil), lc...), []byte("junk")...), "4 bytes after HDU 1 (from byte 46080) do not start a FITS extension: no XTENSION card"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Open(c.data)
			if err == nil || err.Error() != c.want {
				t.Fatalf("error %v\nwant  %s", err, c.want)
			}
		})
	}
}

func TestLateFixtureAndPrimaryImage(t *testing.T) {
	f := open(t, "lightcurve_late.fits")
	tab, err := f.Table("LIGHTCURVE")
	if err != nil {
		t.Fatal(err)
	}
	tc, _ := tab.Column("TIME")
	fc, _ := tab.Column("FLUX")
	tv, _ := tc.Floats(0, nil)
	fv, _ := fc.Floats(0, nil)
	wt, wf := fitsfixtures.LightCurveLate()
	for i := range wt {
		if tv[i] != wt[i] || fv[i] != float64(wf[i]) {
			t.Fatalf("row %d: (%v, %v), the writer wrote (%v, %v)", i, tv[i], fv[i], wt[i], wf[i])
		}
	}
	if tc.Name != "time" || tc.Unit != "s" {
		t.Errorf("TTYPE1/TUNIT1 = %q/%q, the writer wrote time/s", tc.Name, tc.Unit)
	}

	// The primary image of tables.fits, read straight from the bytes at DataOffset
	// (big-endian int16, FITS 4.0 §5.2), places the data unit correctly.
	raw := fixture(t, "tables.fits")
	p := open(t, "tables.fits").HDUs()[0]
	for y := 0; y < 20; y++ {
		for x := 0; x < 30; x++ {
			at := p.DataOffset + int64(2*(y*30+x))
			got := int16(uint16(raw[at])<<8 | uint16(raw[at+1]))
			if got != fitsfixtures.PrimaryPixel(x, y) {
				t.Fatalf("pixel (%d, %d) = %d, the writer wrote %d", x, y, got, fitsfixtures.PrimaryPixel(x, y))
			}
		}
	}
}
