package photometry

import (
	"bytes"
	"errors"
	"math"
	"math/big"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/fits/fitsfixtures"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/steptest"
)

// The FITS fixtures were written by cfitsio (testdata/fits/make_fixtures.c); expected values
// come from the same formulas, recomputed by package fitsfixtures.

func TestLightCurveFixture(t *testing.T) {
	res, notes, err := runKind(t, nil, load(t, "fits/lightcurve.fits"))
	if err != nil {
		t.Fatal(err)
	}
	rows := fitsfixtures.LightCurve()
	// Drop rules in the order build documents them: flag first, then non-finite, then a
	// non-positive error.
	var want lightcurve.Dropped
	var kept []fitsfixtures.LCRow
	for _, r := range rows {
		switch {
		case r.Quality != 0:
			want.Flagged++
		case math.IsNaN(float64(r.Flux)):
			want.Unusable++
		case r.Err <= 0:
			want.BadError++
		default:
			kept = append(kept, r)
		}
	}
	if want.Flagged == 0 || want.Unusable == 0 || want.BadError == 0 {
		t.Fatalf("the fixture should exercise every reason: %+v", want)
	}
	if res.LC.Dropped != want || res.Stats[0].Dropped != want {
		t.Errorf("dropped %+v, the writer's formulas give %+v", res.LC.Dropped, want)
	}
	s := res.LC.Segments[0]
	if s.Len() != len(kept) {
		t.Fatalf("%d points kept, want %d", s.Len(), len(kept))
	}
	fl := make([]float64, len(kept))
	for i, r := range kept {
		fl[i] = float64(r.Flux)
	}
	sort.Float64s(fl)
	med := fl[len(fl)/2] // an odd count: the middle value
	if len(fl)%2 == 0 {
		med = (fl[len(fl)/2-1] + fl[len(fl)/2]) / 2
	}
	for i, r := range kept {
		if s.Time[i] != r.Time || s.Flux[i] != float64(r.Flux)/med || s.Err[i] != float64(r.Err)/med {
			t.Fatalf("point %d = (%v, %v, %v), want (%v, %v/%v, %v/%v)", i, s.Time[i], s.Flux[i], s.Err[i], r.Time, r.Flux, med, r.Err, med)
		}
	}
	if res.LC.TimeScale != "BJD_TDB" || res.LC.RefInt != fitsfixtures.LightCurveRefInt || res.LC.RefFrac != fitsfixtures.LightCurveRefFrac {
		t.Errorf("time reference %s %d + %v", res.LC.TimeScale, res.LC.RefInt, res.LC.RefFrac)
	}
	// EXPOSURE = 480 with comment "[s]": 480 s = 8 min, within the 10-min cadence.
	if math.Abs(s.Exposure-fitsfixtures.LightCurveExposure/86400) > 1e-15 {
		t.Errorf("exposure %v d, the header says 480 s", s.Exposure)
	}
	if math.Abs(res.Stats[0].Cadence-fitsfixtures.LightCurveCadence) > 1e-12 {
		t.Errorf("cadence %v d, the writer used 10 min", res.Stats[0].Cadence)
	}
	if s.Band != "demo-red" || s.Instrument != "DEMO-CAM" || s.ID != "1" || !math.IsNaN(s.Contamination) {
		t.Errorf("segment description %+v", s)
	}
	for _, n := range []string{
		"lightcurve.fits: reading HDU 1 (LIGHTCURVE), the first binary table with a time and a flux column",
		"lightcurve.fits: exposure 8 min of one point from the header keyword EXPOSURE = 480 s",
		"lightcurve.fits: flux and errors divided by the median flux",
	} {
		if !containsNote(notes, n) {
			t.Errorf("no note %q among %q", n, notes)
		}
	}
}

func TestTwoSegmentsWithDifferentReferences(t *testing.T) {
	// Given late file first: the segments must still come out in time order, with their
	// ids in file order.
	res, notes, err := runKind(t, nil, load(t, "fits/lightcurve_late.fits", "fits/lightcurve.fits"))
	if err != nil {
		t.Fatal(err)
	}
	lc := res.LC
	if len(lc.Segments) != 2 || lc.Segments[0].ID != "2" || lc.Segments[1].ID != "1" {
		t.Fatalf("segments %d, ids %s %s", len(lc.Segments), lc.Segments[0].ID, lc.Segments[1].ID)
	}
	if lc.RefInt != fitsfixtures.LightCurveRefInt || lc.RefFrac != fitsfixtures.LightCurveRefFrac {
		t.Fatalf("reference %d + %v: want that of the earlier segment", lc.RefInt, lc.RefFrac)
	}
	late := lc.Segments[1]
	ts, _ := fitsfixtures.LightCurveLate()
	// The exact time of each late point on the earlier reference, in 256-bit arithmetic:
	// (2460020.625 + t/86400) − 2460000.25. Adding full Julian dates in float64 would err by
	// up to half an ulp of 2.46e6 (2.3e-10 d, 20 µs); kept apart, the error stays near
	// 1e-15 d.
	worst := 0.0
	for i, tsec := range ts {
		exact := new(big.Float).SetPrec(256).SetFloat64(tsec)
		exact.Quo(exact, big.NewFloat(86400).SetPrec(256))
		exact.Add(exact, big.NewFloat(fitsfixtures.LateRefInt+fitsfixtures.LateRefFrac).SetPrec(256))
		exact.Sub(exact, big.NewFloat(fitsfixtures.LightCurveRefInt+fitsfixtures.LightCurveRefFrac).SetPrec(256))
		e, _ := exact.Float64()
		worst = math.Max(worst, math.Abs(late.Time[i]-e))
	}
	if worst > 1e-13 {
		t.Errorf("late times off by up to %g d from the exact conversion", worst)
	}
	// TIMEDEL = 120 with TIMEUNIT 's' and no EXPOSURE: 2 min.
	if math.Abs(late.Exposure-fitsfixtures.LateTimeDel/86400) > 1e-15 {
		t.Errorf("late exposure %v d, TIMEDEL says 120 s", late.Exposure)
	}
	// No error column: one estimated error per point, near the noise of the writer,
	// 2^24/√3 × 1e-10 (the standard deviation of four summed 24-bit uniform integers times
	// 1e-10, from its construction) within 10 %.
	sigma := math.Ldexp(1, 24) / math.Sqrt(3) * 1e-10
	if e := late.Err[0]; math.Abs(e/sigma-1) > 0.1 || e != late.Err[len(late.Err)-1] {
		t.Errorf("estimated error %v, the writer's noise is %v", e, sigma)
	}
	if !containsNote(notes, "lightcurve_late.fits: times moved by 20.375 d onto the reference JD 2460000 + 0.25 of lightcurve.fits") {
		t.Errorf("no note of the move among %q", notes)
	}
	if !containsNote(notes, "lightcurve_late.fits: no error column; every point's error set to") {
		t.Errorf("no note of the estimated error among %q", notes)
	}
	// The baseline runs from the first early point to the last late one.
	wantBase := late.Time[late.Len()-1] - lc.Segments[0].Time[0]
	if got := res.Figures()[len(res.Figures())-1]; got.Name != "baseline" || got.Value != wantBase {
		t.Errorf("figure %+v, want baseline %v", got, wantBase)
	}
}

func TestTimeScaleMustAgree(t *testing.T) {
	utc := load(t, "fits/utc.fits")
	noSys := []steps.File{{Name: "nosys.fits", Data: bytes.Replace(utc[0].Data, []byte("TIMESYS ="), []byte("XTIMESYS="), 1)}}
	cases := []struct {
		name  string
		attrs map[string]any
		files []steps.File
		want  string
	}{
		{"a UTC file is refused when the workflow states BJD_TDB", nil, utc,
			`utc.fits HDU 1 (LIGHTCURVE): TIMESYS = 'UTC' says the times are on UTC, but the workflow states time_scale = "BJD_TDB" (TDB); convert the file's times or state its scale`},
		{"a file without TIMESYS takes the workflow's scale, and its TIMEREF must still agree", nil, noSys,
			`nosys.fits HDU 1 (LIGHTCURVE): TIMEREF = 'TOPOCENTER' means JD times, but the workflow states time_scale = "BJD_TDB" (BJD)`},
		{"a UTC file is read when the workflow states JD_UTC", map[string]any{"time_scale": "JD_UTC"}, utc, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			res, _, err := runKind(t, c.attrs, c.files)
			if c.want == "" {
				if err != nil || res.LC.TimeScale != "JD_UTC" || res.LC.Len() != fitsfixtures.UTCRows {
					t.Fatalf("got %v", err)
				}
				return
			}
			if err == nil || !strings.HasPrefix(err.Error(), c.want) || !steps.IsInputError(err) {
				t.Fatalf("error %v\nwant  %s", err, c.want)
			}
		})
	}
}

func TestFlagMask(t *testing.T) {
	// QUALITY is 4 when i % 97 == 13 and 1 when i % 250 == 7 (make_fixtures.c).
	rows := fitsfixtures.LightCurve()
	count := func(mask int32) int {
		n := 0
		for _, r := range rows {
			if r.Quality&mask != 0 {
				n++
			}
		}
		return n
	}
	for _, c := range []struct {
		name string
		mask int
		want int
	}{
		{"the default mask drops any nonzero flag", -1, count(^0)},
		{"mask 1 drops only rows with bit 0", 1, count(1)},
		{"mask 4 drops only rows with bit 2", 4, count(4)},
		{"mask 0 keeps every flagged row", 0, 0},
	} {
		t.Run(c.name, func(t *testing.T) {
			res, _, err := runKind(t, map[string]any{"flag_mask": c.mask}, load(t, "fits/lightcurve.fits"))
			if err != nil {
				t.Fatal(err)
			}
			if got := res.LC.Dropped.Flagged; got != c.want || c.mask != 0 && got == 0 {
				t.Fatalf("%d rows flagged, want %d", got, c.want)
			}
		})
	}
}

func TestExposureSources(t *testing.T) {
	cases := []struct {
		name  string
		attrs map[string]any
		file  string
		want  float64 // days
	}{
		{"the header's EXPOSURE in seconds (its comment says [s])", nil, "fits/lightcurve.fits", 480.0 / 86400},
		{"TIMEDEL when there is no EXPOSURE", nil, "fits/lightcurve_late.fits", 120.0 / 86400},
		{"the median cadence for a text file: 0.02 d steps (testdata/csv/README.md)", map[string]any{"time_zero": 2460100.5}, "csv/segment.csv", 0.02},
		{"the workflow's exposure over the header's", map[string]any{"exposure": "5 min"}, "fits/lightcurve.fits", 5.0 / 1440},
	}
	for _, c := range cases {
		t.Run("exposure from "+c.name, func(t *testing.T) {
			res, _, err := runKind(t, c.attrs, load(t, c.file))
			if err != nil {
				t.Fatal(err)
			}
			if got := res.LC.Segments[0].Exposure; math.Abs(got-c.want) > 1e-12 {
				t.Fatalf("exposure %v d, want %v d", got, c.want)
			}
		})
	}
}

func TestChoosingTheExtension(t *testing.T) {
	cases := []struct {
		name, ext, want string
	}{
		{"by EXTNAME without regard to case", "second_lc", ""},
		{"by extension number", "3", ""},
		{"an image extension is refused", "IMG", `tables.fits: extension = "IMG": HDU 2 (IMG) is an image extension, not a binary table`},
		{"a missing name lists the extensions", "LC", `tables.fits: extension = "LC": no extension named "LC" (extensions: HDU 1 (MIXED), HDU 2 (IMG), HDU 3 (Second_LC))`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			// Second_LC has no time keywords: time_scale fills them (here JD_UTC).
			res, _, err := runKind(t, map[string]any{"extension": c.ext, "time_scale": "JD_UTC"}, load(t, "fits/tables.fits"))
			if c.want != "" {
				if err == nil || err.Error() != c.want {
					t.Fatalf("error %v\nwant  %s", err, c.want)
				}
				return
			}
			if err == nil {
				t.Fatalf("Second_LC has no reference and times of 100 d; want the Julian-date check, got %d points", res.LC.Len())
			}
			if !strings.Contains(err.Error(), "tables.fits HDU 3 (Second_LC) row 1: the earliest time, 100, with no reference given") {
				t.Fatalf("error %v", err)
			}
		})
	}
	// Without extension, MIXED is passed over: it has a TIME but no flux column.
	_, _, err := runKind(t, map[string]any{"time_scale": "JD_UTC", "columns": map[string]string{"flux": "flux"}}, load(t, "fits/tables.fits"))
	if err == nil || !strings.Contains(err.Error(), "tables.fits HDU 3 (Second_LC) row 1: the earliest time, 100,") {
		t.Fatalf("default table choice: %v", err)
	}
}

func TestCheckRefusesBadSettings(t *testing.T) {
	cases := []struct {
		name  string
		attrs map[string]any
		attr  string
		want  string
	}{
		{"an unknown columns key", map[string]any{"columns": map[string]string{"mag": "x"}}, "columns", `unknown key "mag"; the keys are time, flux, error, flag`},
		{"an empty column name", map[string]any{"columns": map[string]string{"flux": " "}}, "columns", "flux: empty column name"},
		{"a time scale not on the list", map[string]any{"time_scale": "GPS"}, "time_scale", `"GPS", which is not one of "BJD_TDB"`},
		{"a negative mask other than -1", map[string]any{"flag_mask": -2}, "flag_mask", "-2: give a bit mask"},
		{"a negative contamination", map[string]any{"contamination": -0.1}, "contamination", "-0.1"},
		{"extension 0", map[string]any{"extension": "0"}, "extension", "0 is not an extension number"},
		{"a blank extension", map[string]any{"extension": " "}, "extension", "empty; give an EXTNAME"},
		{"a zero exposure", map[string]any{"exposure": "0 d"}, "exposure", "must be positive"},
		{"a negative time zero", map[string]any{"time_zero": -1.0}, "time_zero", "-1 is not a Julian date"},
	}
	for _, c := range cases {
		t.Run(c.name+" is refused", func(t *testing.T) {
			_, err := steptest.Config(New(), block(c.attrs, []steps.File{{Name: "lc.csv"}}))
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr || !strings.Contains(ae.Msg, c.want) {
				t.Fatalf("error %v, want one on %s saying %s", err, c.attr, c.want)
			}
		})
	}
	t.Run("the defaults are those of a block that sets only its files", func(t *testing.T) {
		cfg, err := steptest.Config(New(), block(nil, []steps.File{{Name: "lc.csv"}}))
		if err != nil {
			t.Fatal(err)
		}
		c := cfg.(*Config)
		if c.TimeScale != "BJD_TDB" || c.flagMask() != ^uint64(0) || c.CrowdingCorrected || !math.IsNaN(c.contamination()) ||
			c.band() != "" || c.TimeZero != nil || c.Exposure != nil || c.Columns != [nRoles]string{} || c.Extension != "" {
			t.Fatalf("defaults decoded as %+v", c)
		}
		d := DefaultConfig()
		if d.TimeScale != c.TimeScale || d.FlagMask != c.FlagMask || d.CrowdingCorrected != c.CrowdingCorrected {
			t.Errorf("DefaultConfig %+v is not the block's %+v", d, c)
		}
	})
	t.Run("time_scale takes exactly the scales the FITS reader knows", func(t *testing.T) {
		got := New().Schema().Param("time_scale").Choices
		if want := TimeScaleChoices(); !slices.Equal(got, want) {
			t.Fatalf("choices %q, want %q", got, want)
		}
	})
	t.Run("a written column name is trimmed and put at its role", func(t *testing.T) {
		cfg, err := steptest.Config(New(), block(map[string]any{"columns": map[string]string{"flag": " QUALITY ", "time": "BJD"}, "extension": " LC "},
			[]steps.File{{Name: "lc.fits"}}))
		if err != nil {
			t.Fatal(err)
		}
		if c := cfg.(*Config); c.Columns != [nRoles]string{TimeCol: "BJD", FlagCol: "QUALITY"} || c.Extension != "LC" {
			t.Fatalf("columns %q, extension %q", c.Columns, c.Extension)
		}
	})
	// A workflow written for a text file runs unchanged on a FITS file whose header gives
	// the reference: time_zero is set aside with a note, and the header's reference is used.
	res, notes, err := runKind(t, map[string]any{"time_zero": 2460000.0}, load(t, "fits/lightcurve.fits"))
	if err != nil || !strings.Contains(strings.Join(notes, "\n"), "time_zero = 2460000 set aside: the header's BJDREFI/BJDREFF give the reference JD 2460000 + 0.25") {
		t.Fatalf("time_zero with FITS only: err %v, notes %q", err, notes)
	}
	if res.LC.RefInt == 2460000 && res.LC.RefFrac == 0 {
		t.Fatalf("time_zero was applied to a FITS file")
	}
}

func TestArtifactRoundTripAndTruncation(t *testing.T) {
	res, _, err := runKind(t, map[string]any{"contamination": 0.05, "band": "demo", "crowding_corrected": true},
		load(t, "fits/lightcurve.fits", "fits/lightcurve_late.fits"))
	if err != nil {
		t.Fatal(err)
	}
	b := res.Encode()
	back, err := Kind{}.Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), b) {
		t.Fatal("decode then encode changed the bytes")
	}
	if s := back.(*Result).LightCurve().Segments[1]; s.Contamination != 0.05 || s.Band != "demo" || !s.CrowdingCorrected {
		t.Errorf("segment description lost: %+v", s)
	}
	for _, n := range []int{0, 10, len(b) / 2, len(b) - 1} {
		if _, err := (Kind{}).Decode(b[:n]); err == nil {
			t.Errorf("%d of %d bytes decoded without error", n, len(b))
		}
	}
	if _, err := (Kind{}).Decode(append(append([]byte(nil), b...), 0)); err == nil {
		t.Error("a trailing byte decoded without error")
	}
	var _ lightcurve.Source = res
}

func TestFiguresNameEverySegment(t *testing.T) {
	res, _, err := runKind(t, map[string]any{"time_zero": 2460100.5}, load(t, "csv/segment.csv"))
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, f := range res.Figures() {
		got[f.Name] = f.Value
	}
	// testdata/csv/README.md: 54 kept of 60; 0.02 d = 28.8 min steps; first 0, last 1.18.
	want := map[string]float64{
		"segment1.points": 54, "segment1.dropped_flagged": 4, "segment1.dropped_unusable": 1,
		"segment1.dropped_bad_error": 1, "baseline": 1.18,
	}
	for k, v := range want {
		if math.Abs(got[k]-v) > 1e-12 {
			t.Errorf("%s = %v, want %v", k, got[k], v)
		}
	}
	if math.Abs(got["segment1.cadence"]-28.8) > 1e-9 || math.Abs(got["segment1.exposure"]-28.8) > 1e-9 {
		t.Errorf("cadence %v, exposure %v min; want 28.8", got["segment1.cadence"], got["segment1.exposure"])
	}
}

func TestPointScatterOfNormalNoise(t *testing.T) {
	// For independent normal deviates of standard deviation σ, successive differences have
	// σ√2 and their MAD is 0.6745 σ√2 (common practice), so the estimate is σ. A slow trend
	// barely changes the differences. 20 000 draws: the MAD's relative standard error is
	// about 1.17/√n ≈ 1 % (from memory), so 4 % is a four-sigma bound.
	rng := rand.New(rand.NewPCG(1, 2))
	const sigma = 0.003
	f := make([]float64, 20000)
	for i := range f {
		f[i] = 1 + 0.01*float64(i)/float64(len(f)) + sigma*rng.NormFloat64()
	}
	if got := PointScatter(f); math.Abs(got/sigma-1) > 0.04 {
		t.Fatalf("PointScatter = %v, want %v within 4 %%", got, sigma)
	}
}

func TestGoldenOnTheFixtures(t *testing.T) {
	res, _, err := runKind(t, nil, load(t, "fits/lightcurve.fits", "fits/lightcurve_late.fits"))
	if err != nil {
		t.Fatal(err)
	}
	again, _, _ := runKind(t, nil, load(t, "fits/lightcurve.fits", "fits/lightcurve_late.fits"))
	if !bytes.Equal(res.Encode(), again.Encode()) {
		t.Fatal("two runs on the same files gave different bytes")
	}
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), res)
}

func TestRegistryAcceptsTheSchema(t *testing.T) {
	if _, err := steps.NewRegistry(New()); err != nil {
		t.Fatal(err)
	}
}
