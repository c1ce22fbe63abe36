package photometry

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
)

// table writes n rows of an invented light curve (time from 0 in 30-minute steps, flux
// about 1000 with a deterministic wiggle, error 1) with the separator sep, then lets bad
// replace the flux of chosen rows (0-based) by a text of its own.
func table(n int, sep string, bad map[int]string) []byte {
	var b strings.Builder
	fmt.Fprintf(&b, "time%sflux%sflux_err\n", sep, sep)
	for i := 0; i < n; i++ {
		flux := fmt.Sprintf("%.3f", 1000+math.Sin(float64(i)*0.7))
		if v, ok := bad[i]; ok {
			flux = v
		}
		fmt.Fprintf(&b, "%.6f%s%s%s1\n", float64(i)/48, sep, flux, sep)
	}
	return []byte(b.String())
}

func readOne(t *testing.T, data []byte) (*Result, []string, error) {
	t.Helper()
	return runKind(t, map[string]any{"time_zero": 2460000.0}, []steps.File{{Name: "lc.csv", Data: data}})
}

func TestAFluxNoStarGivesIsDroppedAndNamed(t *testing.T) {
	// Rows 100, 500 and 900 (lines 102, 502, 902: the header is line 1) hold a negative
	// flux, a zero and 1e30. One such point made a box search report a dip of more than
	// 100 % and a fit run away; none is a star's flux while the median is 1000.
	res, notes, err := readOne(t, table(1000, ",", map[int]string{100: "-1", 500: "0", 900: "1e30"}))
	if err != nil {
		t.Fatal(err)
	}
	if got, d := res.LC.Len(), res.Stats[0].Dropped; got != 997 || d.Unusable != 3 {
		t.Errorf("%d points kept, dropped %+v; want 997 kept and 3 unusable", got, d)
	}
	for _, f := range res.LC.Segments[0].Flux {
		if !(f > 0.99 && f < 1.01) {
			t.Fatalf("a normalised flux %v survived", f)
		}
	}
	if !containsNote(notes, "lc.csv:102: column flux: a flux of -1 while the median is 1000.02; 3 row(s)") {
		t.Errorf("no note naming the first such row among %q", notes)
	}
}

func TestManyFluxesAtZeroAreKeptAndTheNoteSaysWhy(t *testing.T) {
	// 30 of 1000 rows at or below zero are no longer a few faults: dropping them would bias
	// what is left, so they stay and the note says the light curve is doubtful.
	bad := map[int]string{}
	for i := 0; i < 30; i++ {
		bad[10+33*i] = "-5"
	}
	res, notes, err := readOne(t, table(1000, ",", bad))
	if err != nil {
		t.Fatal(err)
	}
	if got := res.LC.Len(); got != 1000 {
		t.Errorf("%d points kept, want all 1000", got)
	}
	if !containsNote(notes, "30 of 1000 rows") || !containsNote(notes, "they are kept") {
		t.Errorf("no note saying the rows are kept and why among %q", notes)
	}
}

func TestWordsForAMissingValueReadAsMissing(t *testing.T) {
	res, _, err := readOne(t, table(200, ",", map[int]string{3: "NA", 4: "null", 5: "None", 6: "-nan", 7: "N/A"}))
	if err != nil {
		t.Fatal(err)
	}
	if got, d := res.LC.Len(), res.Stats[0].Dropped; got != 195 || d.Unusable != 5 {
		t.Errorf("%d points kept, dropped %+v; want 195 and 5 unusable", got, d)
	}
}

func TestTheSeparatorIsTheOneHeaderAndRowsAgreeOn(t *testing.T) {
	want, _, err := readOne(t, table(100, ",", nil))
	if err != nil {
		t.Fatal(err)
	}
	aligned := strings.Replace(string(table(100, "   ", nil)), "time   flux", "time\tflux", 1) // a stray tab in the header
	for name, data := range map[string][]byte{
		"semicolons":                      table(100, ";", nil),
		"blanks with a tab in the header": []byte(aligned),
		"a comment line for a header":     []byte("# made by hand\n# " + string(table(100, ",", nil))),
	} {
		t.Run(name, func(t *testing.T) {
			got, _, err := readOne(t, data)
			if err != nil {
				t.Fatal(err)
			}
			if got.LC.Len() != want.LC.Len() || got.LC.Segments[0].Flux[7] != want.LC.Segments[0].Flux[7] {
				t.Errorf("%d points, flux[7] %v; the comma table gives %d, %v", got.LC.Len(), got.LC.Segments[0].Flux[7], want.LC.Len(), want.LC.Segments[0].Flux[7])
			}
		})
	}
}

func TestTablesWeCannotReadSayWhy(t *testing.T) {
	rows := string(table(50, ";", nil))
	for name, c := range map[string]struct {
		data []byte
		want string
	}{
		"no header":       {[]byte(rows[strings.IndexByte(rows, '\n')+1:]), "lc.csv:1: the first row holds numbers, not column names"},
		"a decimal comma": {[]byte(strings.Replace(rows, "1000.644", "1000,644", 1)), `column flux: "1000,644" is written with a decimal comma`},
	} {
		t.Run(name, func(t *testing.T) {
			_, _, err := readOne(t, c.data)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v; want %q", err, c.want)
			}
		})
	}
}

func TestOnePhotometryTwiceIsRefusedOrCautioned(t *testing.T) {
	lc := table(200, ",", nil)
	for name, files := range map[string][]steps.File{
		"one file named twice": {{Name: "lc.csv", Data: lc}, {Name: "lc.csv", Data: lc}},
		"two names, one file":  {{Name: "lc.csv", Data: lc}, {Name: "copy.csv", Data: lc}},
	} {
		t.Run(name, func(t *testing.T) {
			_, _, err := runKind(t, map[string]any{"time_zero": 2460000.0}, files)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != "files" || !strings.Contains(ae.Msg, "would count twice") {
				t.Errorf("error %v; want one on files saying the points would count twice", err)
			}
		})
	}
	t.Run("two files over the same nights", func(t *testing.T) {
		// The same stretch again with a different flux wiggle: other bytes, same nights.
		other := []byte(strings.ReplaceAll(string(lc), ",1\n", ",1.5\n"))
		res, _, err := runKind(t, map[string]any{"time_zero": 2460000.0}, []steps.File{{Name: "a.csv", Data: lc}, {Name: "b.csv", Data: other}})
		if err != nil {
			t.Fatal(err)
		}
		c := res.Cautions()
		if len(c) != 1 || !strings.Contains(c[0], "segments 1 and 2 overlap in time") {
			t.Errorf("cautions %q; want one about the overlap", c)
		}
	})
	t.Run("two files one after the other", func(t *testing.T) {
		// The same rows 10 days later (200 rows span 4.1 d): other nights, no caution.
		var later strings.Builder
		for k, line := range strings.Split(strings.TrimSpace(string(lc)), "\n") {
			if k == 0 {
				later.WriteString(line + "\n")
				continue
			}
			time, rest, _ := strings.Cut(line, ",")
			v, _ := strconv.ParseFloat(time, 64)
			fmt.Fprintf(&later, "%.6f,%s\n", v+10, rest)
		}
		res, _, err := runKind(t, map[string]any{"time_zero": 2460000.0}, []steps.File{{Name: "a.csv", Data: lc}, {Name: "b.csv", Data: []byte(later.String())}})
		if err != nil {
			t.Fatal(err)
		}
		if len(res.LC.Segments) != 2 {
			t.Fatalf("%d segments, want 2", len(res.LC.Segments))
		}
		if c := res.Cautions(); len(c) != 0 {
			t.Errorf("segments on other nights gave cautions %q", c)
		}
	})
}

func TestColumnNamesWithUnitsAndOtherFluxesAreRead(t *testing.T) {
	var b strings.Builder
	b.WriteString("Time [d],SAP_FLUX (e-/s),CORR_FLUX,flux_err\n")
	for i := 0; i < 100; i++ {
		fmt.Fprintf(&b, "%.5f,%.2f,%.2f,3\n", float64(i)/48, 1000+math.Sin(float64(i)), 990+math.Cos(float64(i)))
	}
	res, notes, err := readOne(t, []byte(b.String()))
	if err != nil {
		t.Fatal(err)
	}
	if res.LC.Len() != 100 {
		t.Errorf("%d points, want 100", res.LC.Len())
	}
	if !containsNote(notes, `the flux taken is "SAP_FLUX (e-/s)"; the file also has "CORR_FLUX"`) {
		t.Errorf("no note on the flux not taken among %q", notes)
	}
}

func TestAModifiedJulianDateColumnStatesItsOffset(t *testing.T) {
	// MJD = JD − 2400000.5 (common practice), so the column's name states the reference.
	var b strings.Builder
	b.WriteString("MJD,flux\n")
	for i := 0; i < 100; i++ {
		fmt.Fprintf(&b, "%.5f,%.4f\n", 60100+float64(i)/48, 1+0.001*math.Sin(float64(i)))
	}
	rep, err := InspectFile(DefaultConfig(), steps.File{Name: "lc.csv", Data: []byte(b.String())})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Stated != 2400000.5 || !slices.Contains(rep.Offsets, 2400000.5) {
		t.Errorf("stated offset %v among %v, want 2400000.5 from the column's name, and among the offsets that fit", rep.Stated, rep.Offsets)
	}
}

func TestATimeColumnNamedWithItsOffset(t *testing.T) {
	// Files often write the offset their times count from into the time column's name
	// (common practice): the column is found by it, and the offset is stated, not assumed.
	for name, want := range map[string]float64{
		"BJD - 2457000": 2457000, "bjd_tdb-2459000.5": 2459000.5, "HJD-2450000": 2450000,
		"Time (BJD - 2456000)": 2456000, "JD-2400000": 2400000,
		"BJD - 2019": 0, "flux-2457000": 0, "JD-2470000": 0, "BJD - 24570001": 0, "tic-2457000": 0,
	} {
		got, _, ok := statedOffset(name)
		if ok != (want != 0) || got != want {
			t.Errorf("%q states %v (%v), want %v", name, got, ok, want)
		}
	}
	var b strings.Builder
	b.WriteString("BJD - 2457000,flux\n")
	for i := 0; i < 100; i++ {
		fmt.Fprintf(&b, "%.5f,%.4f\n", 3100+float64(i)/48, 1+0.001*math.Sin(float64(i)))
	}
	data := []byte(b.String())
	rep, err := InspectFile(DefaultConfig(), steps.File{Name: "lc.csv", Data: data})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Columns[TimeCol] != "BJD - 2457000" || rep.Stated != 2457000 {
		t.Errorf("time column %q, stated offset %v; want the column and 2457000 from its name", rep.Columns[TimeCol], rep.Stated)
	}
	_, _, err = runKind(t, map[string]any{}, []steps.File{{Name: "lc.csv", Data: data}})
	if err == nil || !strings.Contains(err.Error(), `the time column's name, "BJD - 2457000", says the times count from JD 2457000: write time_zero = 2457000 if they do`) {
		t.Errorf("without time_zero: %v; want the name's offset offered", err)
	}
	res, _, err := runKind(t, map[string]any{"time_zero": 2457000.0}, []steps.File{{Name: "lc.csv", Data: data}})
	if err != nil || res.LC.Len() != 100 {
		t.Fatalf("with time_zero: %v", err)
	}
}

func TestADamagedTimeIsNamedByItsRow(t *testing.T) {
	lc := strings.Replace(string(table(50, ",", nil)), "\n0.208333,", "\n-1.98e205,", 1) // row 10, line 12
	_, _, err := readOne(t, []byte(lc))
	if err == nil || !strings.Contains(err.Error(), "lc.csv:12: the earliest time, -1.98e+205,") {
		t.Errorf("error %v; want the damaged row named", err)
	}
}

func TestSinglePrecisionTimesAreNoted(t *testing.T) {
	// MIXED's VEC column is 3E: its first values 0 … 24 stand in for times stored as
	// float32, resolved near 24 to 2^(4−23) (IEEE 754).
	_, notes, _ := runKind(t, map[string]any{"extension": "MIXED", "time_zero": 2460000.0, "time_scale": "JD_UTC",
		"columns": map[string]string{"time": "VEC", "flux": "RAW"}}, load(t, "fits/tables.fits"))
	want := fmt.Sprintf("column VEC holds 32-bit floats, so times near 24 are resolved only to %.2g of its unit", math.Ldexp(1, 4-23))
	if !containsNote(notes, want) {
		t.Errorf("no note %q among %q", want, notes)
	}
}

func TestAFluxNamedLikeAMagnitudeIsQuestioned(t *testing.T) {
	var b strings.Builder
	b.WriteString("time,vmag\n")
	for i := 0; i < 100; i++ {
		fmt.Fprintf(&b, "%.5f,%.4f\n", float64(i)/48, 11.3+0.001*math.Sin(float64(i)))
	}
	_, notes, err := runKind(t, map[string]any{"time_zero": 2460000.0, "columns": map[string]string{"flux": "vmag"}}, []steps.File{{Name: "lc.csv", Data: []byte(b.String())}})
	if err != nil {
		t.Fatal(err)
	}
	if !containsNote(notes, `the flux column "vmag" is named like a magnitude`) {
		t.Errorf("no question about the magnitude among %q", notes)
	}
}

func TestTheInspectionKeepsWhatTheReaderKeeps(t *testing.T) {
	// dipline check and the starter count the rows a run keeps by the reader's own rule
	// for a flux no star gives.
	data := table(300, ",", map[int]string{7: "-1", 100: "0"})
	res, _, err := readOne(t, data)
	if err != nil {
		t.Fatal(err)
	}
	cfg := DefaultConfig()
	v := 2460000.0
	cfg.TimeZero = &v
	rep, err := InspectFile(cfg, steps.File{Name: "lc.csv", Data: data})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Kept != res.LC.Len() || rep.Unusable != 2 {
		t.Errorf("the inspection keeps %d (%d unusable), the reader %d", rep.Kept, rep.Unusable, res.LC.Len())
	}
}
