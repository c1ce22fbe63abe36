package kinds

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/workflow"
)

// The starter reads real files of the kinds a user brings: the demo's CSV, its FITS
// fixture, a FITS table whose header says nothing about time, and a CSV laid out like a
// space survey's product. Its workflow must run as written, or, when the file cannot say
// what its times count from, say which setting to write, and run once it is written.

// readFixture reads a file below the repository root.
func readFixture(t testing.TB, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", path))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// withoutTimeKeywords renames a FITS header's TIMESYS, TIMEREF, BJDREFI and BJDREFF cards
// (to keywords nothing reads), so the table says nothing about its time scale or reference.
// The cards keep their length, so the file stays valid FITS.
func withoutTimeKeywords(t testing.TB, b []byte) []byte {
	t.Helper()
	out := bytes.Clone(b)
	for _, k := range []string{"TIMESYS =", "TIMEREF =", "BJDREFI =", "BJDREFF ="} {
		at := bytes.Index(out, []byte(k))
		if at < 0 || at%80 != 0 {
			t.Fatalf("no %s card to remove", k)
		}
		copy(out[at:], "X"+k[:7]+"=")
	}
	return out
}

// surveyCSV rewrites the demo light curve (invented data) with the column names of a space
// survey's product: full BJD_TDB times in TIME, the flux in electrons per second in
// PDCSAP_FLUX with its PDCSAP_FLUX_ERR, a raw SAP_FLUX 3 % higher with SAP_FLUX_ERR (which
// must not be chosen), and QUALITY.
func surveyCSV(t testing.TB) []byte {
	t.Helper()
	var b bytes.Buffer
	b.WriteString("TIME,SAP_FLUX,SAP_FLUX_ERR,PDCSAP_FLUX,PDCSAP_FLUX_ERR,QUALITY\n")
	const scale = 48210.0 // e-/s of the invented star
	rows := 0
	for _, line := range strings.Split(string(readFixture(t, "examples/fernwell/data/fw3318.csv")), "\n") {
		if line == "" || line[0] == '#' || strings.HasPrefix(line, "BJD_TDB") {
			continue
		}
		f := strings.Split(line, ",")
		tm, _ := strconv.ParseFloat(f[0], 64)
		fl, _ := strconv.ParseFloat(f[1], 64)
		er, _ := strconv.ParseFloat(f[2], 64)
		fmt.Fprintf(&b, "%.7f,%.3f,%.3f,%.3f,%.3f,%s\n", 2460000+tm, 1.03*fl*scale, 1.1*er*scale, fl*scale, er*scale, f[3])
		rows++
	}
	if rows < 3000 {
		t.Fatalf("only %d rows from the demo", rows)
	}
	return b.Bytes()
}

// ranEveryStep fails unless every step of the results was computed.
func ranEveryStep(t *testing.T, rf workflow.ResultsFile, err error) {
	t.Helper()
	if err != nil {
		t.Fatalf("the starter's workflow did not run as written: %v", err)
	}
	for _, s := range rf.Steps {
		if s.Status != "computed" {
			t.Errorf("%s: %s", s.Step, s.Status)
		}
	}
	if len(rf.Steps) != 7 {
		t.Errorf("%d steps, want 7 (photometry, two detrends, two searches, vet, fit)", len(rf.Steps))
	}
}

func TestStarterWorkflowsRunAsWritten(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the starter's workflow on four files")
	}
	lcFITS := readFixture(t, "testdata/fits/lightcurve.fits")
	cases := []struct {
		name, file string
		data       []byte
		found      []string // in the findings
		written    []string // in the workflow
		// complete is the line the user writes as the starter asks, when it cannot run
		// as written; "" when it runs as written.
		complete string
	}{
		{"the demo's CSV, whose comment names its offset", "fw3318.csv", readFixture(t, "examples/fernwell/data/fw3318.csv"),
			[]string{`time "BJD_TDB"`, "2450000, 2454833, 2457000 or 2460000 would each fit", "line 2 of the file", "bit 3 (value 8)", "29.4 min"},
			[]string{"time_zero = 2460000 "}, ""},
		{"the FITS fixture, whose header says everything", "lc.fits", lcFITS,
			[]string{"BJD_TDB (TIMESYS = 'TDB', TIMEREF = 'SOLARSYSTEM')", "JD 2460000.25", "bit 2 (value 4): 21"},
			nil, ""},
		{"a FITS table without time keywords, once time_zero is written", "bare.fits", withoutTimeKeywords(t, lcFITS),
			[]string{"FITS HDU 1 (LIGHTCURVE)"},
			[]string{`time_scale = "BJD_TDB"`, "# time_zero = ?"}, "time_zero = 2460000.25"},
		{"a CSV with a survey product's column names and full BJDs", "survey.csv", surveyCSV(t),
			[]string{`flux "PDCSAP_FLUX", error "PDCSAP_FLUX_ERR", flag "QUALITY"`, "full Julian dates"},
			nil, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			if err := os.WriteFile(filepath.Join(dir, c.file), c.data, 0o644); err != nil {
				t.Fatal(err)
			}
			sw, err := Starter(steps.File{Name: c.file, Data: c.data}, "analysis.hcl", "star", 1)
			if err != nil {
				t.Fatal(err)
			}
			found := strings.Join(sw.Found, "\n")
			for _, want := range c.found {
				if !strings.Contains(found, want) {
					t.Errorf("the findings lack %q:\n%s", want, found)
				}
			}
			for _, want := range c.written {
				if !strings.Contains(sw.Text, want) {
					t.Errorf("the workflow lacks %q:\n%s", want, sw.Text)
				}
			}
			unknown := strings.Join(sw.Unknown, "\n")
			if !strings.Contains(unknown, `the Sun's ("1 rho_sun")`) {
				t.Errorf("the starter does not say the density is the Sun's:\n%s", unknown)
			}
			text := sw.Text
			if c.complete != "" {
				if sw.Runs || !strings.Contains(unknown, "time_zero") || !strings.Contains(unknown, "2457000, or 2460000") && !strings.Contains(unknown, "2457000 or 2460000") {
					t.Fatalf("the starter does not ask for time_zero with its candidates (runs %v):\n%s", sw.Runs, unknown)
				}
				text = strings.Replace(text, "# time_zero = ?", c.complete+" #", 1)
			} else if !sw.Runs {
				t.Fatalf("the starter says its workflow will not run:\n%s", unknown)
			}
			rf, err := runIn(t, dir, text)
			ranEveryStep(t, rf, err)
		})
	}
}

// A starter workflow that cannot run for want of a setting is caught by inspection, which
// `dipline check` runs, before anything runs.
func TestInspectionCatchesAStarterThatLacksItsReference(t *testing.T) {
	dir := t.TempDir()
	data := withoutTimeKeywords(t, readFixture(t, "testdata/fits/lightcurve.fits"))
	if err := os.WriteFile(filepath.Join(dir, "bare.fits"), data, 0o644); err != nil {
		t.Fatal(err)
	}
	sw, err := Starter(steps.File{Name: "bare.fits", Data: data}, "analysis.hcl", "star", 1)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "analysis.hcl")
	if err := os.WriteFile(path, []byte(sw.Text), 0o644); err != nil {
		t.Fatal(err)
	}
	reg, err := Registry()
	if err != nil {
		t.Fatal(err)
	}
	w, diags := workflow.LoadWith(path, reg, nil)
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	found := workflow.Inspect(w)
	if len(found) != 1 || found[0].Step.Addr != "photometry.lc" || !strings.Contains(found[0].Err.Error(), "time_zero") {
		t.Fatalf("inspection found %v", found)
	}
}

func TestTheStarterDoesNotPromiseARunTheReaderRefuses(t *testing.T) {
	// Full Julian dates, so the time reference is known, but a flux about zero (a
	// difference from a mean, not a flux): the photometry step refuses its median.
	var b strings.Builder
	b.WriteString("time,flux\n")
	for i := 0; i < 200; i++ {
		fmt.Fprintf(&b, "%.5f,%.5f\n", 2460100.5+float64(i)/48, 0.001*float64(i%7-3))
	}
	sw, err := Starter(steps.File{Name: "centred.csv", Data: []byte(b.String())}, "analysis.hcl", "star", 1)
	if err != nil {
		t.Fatal(err)
	}
	unknown := strings.Join(sw.Unknown, "\n")
	if sw.Runs || !strings.Contains(unknown, "would stop on it as written") || !strings.Contains(unknown, "median flux") {
		t.Errorf("runs %v; unknown:\n%s\nwant the reader's refusal of the median flux", sw.Runs, unknown)
	}
}

func TestTheStarterTakesHeliocentricDatesOnUTC(t *testing.T) {
	var b strings.Builder
	b.WriteString("HJD,flux\n")
	for i := 0; i < 200; i++ {
		fmt.Fprintf(&b, "%.5f,%.5f\n", 2460100.5+float64(i)/48, 1+0.001*float64(i%7-3))
	}
	sw, err := Starter(steps.File{Name: "hjd.csv", Data: []byte(b.String())}, "analysis.hcl", "star", 1)
	if err != nil {
		t.Fatal(err)
	}
	if !sw.Runs || !strings.Contains(sw.Text, `time_scale = "HJD_UTC"`) || !strings.Contains(strings.Join(sw.Unknown, "\n"), "heliocentric") {
		t.Errorf("runs %v; unknown %q; text:\n%s", sw.Runs, sw.Unknown, sw.Text)
	}
}

// The starter's advice on the star's density, followed to the letter, gives a workflow
// that loads and passes inspection: the star sketched at its end written out (with the
// demo's invented catalogue and star), and star_density replaced by star = star.host on
// both searches. Writing star beside star_density instead is refused on star_density.
func TestTheStarterSaysToTakeTheDensityFromTheStarStep(t *testing.T) {
	data := readFixture(t, "examples/fernwell/data/fw3318.csv")
	sw, err := Starter(steps.File{Name: "fw3318.csv", Data: data}, "analysis.hcl", "star", 1)
	if err != nil {
		t.Fatal(err)
	}
	const advice = "replace star_density on both searches by\n# star = star.host"
	if !strings.Contains(sw.Text, advice) || !strings.Contains(strings.Join(sw.Unknown, "\n"), "replace star_density on both searches by star = star.host") {
		t.Fatalf("the starter does not say to replace star_density by star = star.host:\n%s", sw.Text)
	}
	at := strings.Index(sw.Text, "# What usually follows")
	if at < 0 {
		t.Fatal("no sketch of what usually follows")
	}
	// The sketch begins after the first bare "#" line of that comment.
	var sketch []string
	inSketch := false
	for _, line := range strings.Split(sw.Text[at:], "\n") {
		switch {
		case line == "#":
			inSketch = true
		case inSketch && strings.HasPrefix(line, "# "):
			line = strings.ReplaceAll(line[2:], "YOUR-STAR-ID", "FW-3318")
			sketch = append(sketch, line)
		}
	}
	var searches []string
	for _, line := range strings.Split(sw.Text[:at], "\n") {
		if strings.HasPrefix(strings.TrimSpace(line), "star_density") {
			searches = append(searches, line)
		}
	}
	if len(searches) != 2 {
		t.Fatalf("%d searches write star_density, want the 2 searches", len(searches))
	}
	load := func(t *testing.T, text string) (*workflow.Workflow, error) {
		dir := t.TempDir()
		for name, b := range map[string][]byte{"fw3318.csv": data, "stars.csv": readFixture(t, "examples/fernwell/data/nearby_stars.csv"), "analysis.hcl": []byte(text)} {
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		reg, err := Registry()
		if err != nil {
			t.Fatal(err)
		}
		w, diags := workflow.LoadWith(filepath.Join(dir, "analysis.hcl"), reg, nil)
		if diags.HasErrors() {
			return nil, diags
		}
		return w, nil
	}
	withStar := sw.Text[:at] + strings.Join(sketch, "\n") + "\n"
	t.Run("followed, the searches take the star step's density", func(t *testing.T) {
		text := withStar
		for _, line := range searches {
			text = strings.Replace(text, line, "  star = star.host", 1)
		}
		w, err := load(t, text)
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range w.Steps {
			if s.Kind.Name() == "search" && s.Rendered()["star"] != "star.host" {
				t.Errorf("%s takes no star: %v", s.Addr, s.Rendered())
			}
		}
		if found := workflow.Inspect(w); len(found) > 0 {
			t.Errorf("inspection found %v", found)
		}
	})
	t.Run("star beside star_density is refused", func(t *testing.T) {
		text := strings.Replace(withStar, searches[0], searches[0]+"\n  star = star.host", 1)
		_, err := load(t, text)
		if err == nil || !strings.Contains(err.Error(), "star_density") {
			t.Errorf("error %v, want a refusal naming star_density", err)
		}
	})
}
