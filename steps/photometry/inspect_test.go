package photometry

import (
	"bytes"
	"math"
	"slices"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/fits/fitsfixtures"
)

// bareFITS is lightcurve.fits (written by cfitsio, testdata/fits) with its TIMESYS,
// TIMEREF, BJDREFI and BJDREFF cards renamed to keywords nothing reads: a table that says
// nothing about its time scale or reference. Card lengths are kept, so it stays valid FITS.
func bareFITS(t testing.TB) []steps.File {
	t.Helper()
	f := load(t, "fits/lightcurve.fits")[0]
	b := bytes.Clone(f.Data)
	for _, k := range []string{"TIMESYS =", "TIMEREF =", "BJDREFI =", "BJDREFF ="} {
		at := bytes.Index(b, []byte(k))
		if at < 0 || at%80 != 0 {
			t.Fatalf("no %s card", k)
		}
		copy(b[at:], "X"+k[:7]+"=")
	}
	return []steps.File{{Name: "bare.fits", Data: b}}
}

func TestSettingsFillWhatAFITSHeaderLeavesOut(t *testing.T) {
	t.Run("without time_zero the times are refused as no Julian date, naming time_zero", func(t *testing.T) {
		_, _, err := runKind(t, nil, bareFITS(t))
		if err == nil || !steps.IsInputError(err) || !strings.Contains(err.Error(), "time_zero") {
			t.Fatalf("error %v", err)
		}
	})
	t.Run("time_zero and time_scale fill the reference and the scale, each with a note", func(t *testing.T) {
		res, notes, err := runKind(t, map[string]any{"time_zero": 2460000.25}, bareFITS(t))
		if err != nil {
			t.Fatal(err)
		}
		// The same rows as lightcurve.fits with its header's reference (make_fixtures.c).
		ref, _, err := runKind(t, nil, load(t, "fits/lightcurve.fits"))
		if err != nil {
			t.Fatal(err)
		}
		if res.LC.RefInt != fitsfixtures.LightCurveRefInt || res.LC.RefFrac != fitsfixtures.LightCurveRefFrac || res.LC.TimeScale != "BJD_TDB" {
			t.Fatalf("reference JD %d + %g on %s", res.LC.RefInt, res.LC.RefFrac, res.LC.TimeScale)
		}
		a, b := res.LC.Segments[0].Time, ref.LC.Segments[0].Time
		if len(a) != len(b) || a[0] != b[0] || a[len(a)-1] != b[len(b)-1] {
			t.Fatalf("times differ from the file with its keywords")
		}
		for _, want := range []string{
			`bare.fits HDU 1 (LIGHTCURVE): the header has no TIMESYS; time_scale = "BJD_TDB" fills it: TDB`,
			`bare.fits HDU 1 (LIGHTCURVE): the header has no TIMEREF; time_scale = "BJD_TDB" fills it: BJD times`,
			`bare.fits HDU 1 (LIGHTCURVE): the header has no BJDREFI/BJDREFF, JDREF or MJDREF; time_zero = 2460000.25 fills the reference`,
		} {
			if !containsNote(notes, want) {
				t.Errorf("no note %q among %q", want, notes)
			}
		}
	})
	t.Run("another stated scale fills it too", func(t *testing.T) {
		res, _, err := runKind(t, map[string]any{"time_zero": 2460000.25, "time_scale": "HJD_UTC"}, bareFITS(t))
		if err != nil || res.LC.TimeScale != "HJD_UTC" {
			t.Fatalf("%v", err)
		}
	})
}

// surveyTable is a small text table in a survey product's layout (invented values): flux in
// both SAP_FLUX and PDCSAP_FLUX, each with its error, and a SAP_QUALITY flag.
const surveyTable = `TIME,SAP_FLUX,SAP_FLUX_ERR,PDCSAP_FLUX,PDCSAP_FLUX_ERR,SAP_QUALITY
2460100.00,1010,3,1000,2,0
2460100.01,1011,3,1001,2,0
2460100.02,1009,3,999,2,4
2460100.03,1012,3,1002,2,0
2460100.04,1008,3,998,2,36
2460100.05,1010,3,1000,2,0
`

func TestSurveyProductColumns(t *testing.T) {
	files := []steps.File{{Name: "survey.csv", Data: []byte(surveyTable)}}
	res, notes, err := runKind(t, nil, files)
	if err != nil {
		t.Fatal(err)
	}
	if !containsNote(notes, `survey.csv: comma-separated; columns time "TIME", flux "PDCSAP_FLUX", error "PDCSAP_FLUX_ERR", flag "SAP_QUALITY"`) {
		t.Errorf("columns: %q", notes)
	}
	// Two of six rows are flagged; the error 2 over the median 1000.5 of the rest.
	if res.LC.Len() != 4 || res.LC.Dropped.Flagged != 2 || math.Abs(res.LC.Segments[0].Err[0]-2/1000.5) > 1e-12 {
		t.Fatalf("%d points, %d flagged, error %v", res.LC.Len(), res.LC.Dropped.Flagged, res.LC.Segments[0].Err[0])
	}
	// Naming SAP_FLUX takes its own errors, never the other flux's.
	_, notes, err = runKind(t, map[string]any{"columns": map[string]string{"flux": "sap_flux"}}, files)
	if err != nil || !containsNote(notes, `flux "SAP_FLUX", error "SAP_FLUX_ERR"`) {
		t.Fatalf("%v %q", err, notes)
	}
}

func TestInspectFile(t *testing.T) {
	t.Run("a text table: flag bits, sampling, full Julian dates", func(t *testing.T) {
		rep, err := InspectFile(DefaultConfig(), steps.File{Name: "survey.csv", Data: []byte(surveyTable)})
		if err != nil {
			t.Fatal(err)
		}
		// Flags 4 (bit 2) and 36 (bits 2 and 5).
		want := []BitCount{{Bit: 2, Rows: 2}, {Bit: 5, Rows: 1}}
		if rep.Flagged != 2 || len(rep.FlagBits) != 2 || rep.FlagBits[0] != want[0] || rep.FlagBits[1] != want[1] {
			t.Fatalf("flag bits %+v", rep.FlagBits)
		}
		// Kept times 0, .01, .03, .05: spacings .01, .02, .02, median .02; no gap.
		if rep.Kept != 4 || !rep.FullJD || math.Abs(rep.Cadence-0.02) > 1e-9 || math.Abs(rep.Baseline-0.05) > 1e-9 || rep.Gaps != 0 || rep.Offsets != nil {
			t.Fatalf("%+v", rep)
		}
	})
	t.Run("a relative time fits several common offsets, and a comment may name one", func(t *testing.T) {
		data := "# times are BJD_TDB - 2457000\ntime,flux\n1500.0,1\n1500.1,1\n1500.2,1\n1503.2,1\n"
		rep, err := InspectFile(DefaultConfig(), steps.File{Name: "rel.csv", Data: []byte(data)})
		if err != nil {
			t.Fatal(err)
		}
		// 1500 + 2 400 000 falls in 1863; the others between 1968 and 2050.
		if len(rep.Offsets) != 4 || rep.Offsets[0] != 2450000 || rep.FullJD || rep.HasRef || rep.Stated != 2457000 || !strings.Contains(rep.StatedHow, "line 1") {
			t.Fatalf("%+v", rep)
		}
		if rep.Gaps != 1 || math.Abs(rep.LongestGap-3) > 1e-9 {
			t.Fatalf("gaps %d, longest %v", rep.Gaps, rep.LongestGap)
		}
	})
	t.Run("a FITS table: the keywords as written, and what is missing", func(t *testing.T) {
		rep, err := InspectFile(DefaultConfig(), bareFITS(t)[0])
		if err != nil {
			t.Fatal(err)
		}
		if !rep.FITS || rep.TimeSys != "" || rep.TimeRef != "" || rep.TimeUnit != "d" || rep.ScaleKnown || rep.HasRef || len(rep.Offsets) != 4 {
			t.Fatalf("%+v", rep)
		}
		rep, err = InspectFile(DefaultConfig(), load(t, "fits/utc.fits")[0])
		if err != nil || !rep.ScaleKnown || rep.Scale != "JD_UTC" || !rep.HasRef {
			t.Fatalf("%v %+v", err, rep)
		}
	})
}

// TestTimeKeywordsLeftInThePrimaryHeaderAreNamed moves BJDREFI and BJDREFF from the table's
// header to the primary header, without INHERIT = T: by the standard (FITS 4.0 §4.4.2.6)
// they are not the table's, and the reader says so rather than leaving the user to wonder
// why the header "has no" reference.
func TestTimeKeywordsLeftInThePrimaryHeaderAreNamed(t *testing.T) {
	f := load(t, "fits/lightcurve.fits")[0]
	b := bytes.Clone(f.Data)
	end := -1
	for at := 0; at < 2880; at += 80 {
		if string(b[at:at+8]) == "END     " {
			end = at
			break
		}
	}
	if end < 0 || end+3*80 > 2880 {
		t.Fatal("no room before the end of the primary header's first block")
	}
	var moved [][]byte
	for _, k := range []string{"BJDREFI =", "BJDREFF ="} {
		at := bytes.Index(b[2880:], []byte(k)) + 2880
		if at < 2880 || at%80 != 0 {
			t.Fatalf("no %s card in the table's header", k)
		}
		moved = append(moved, bytes.Clone(b[at:at+80]))
		copy(b[at:], "X"+k[:7]+"=")
	}
	copy(b[end:], moved[0])
	copy(b[end+80:], moved[1])
	copy(b[end+160:], "END"+strings.Repeat(" ", 77))
	file := steps.File{Name: "primary.fits", Data: b}

	_, notes, _ := runKind(t, map[string]any{}, []steps.File{file})
	if !containsNote(notes, "the primary header holds BJDREFI, BJDREFF, which this table does not inherit") {
		t.Errorf("no note naming the keywords not read among %q", notes)
	}
	rep, err := InspectFile(DefaultConfig(), file)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(rep.Uninherited, []string{"BJDREFI", "BJDREFF"}) {
		t.Errorf("the report's keywords not inherited: %v", rep.Uninherited)
	}
}
