// Package fernwell_test runs the demo workflow as a user would, and checks that it finds
// the two invented planets of examples/fernwell/data/truth.json.
package fernwell_test

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps/kinds"
	"dipline/workflow"
)

type truth struct {
	Planets []struct {
		Name     string  `json:"name"`
		PeriodD  float64 `json:"period_d"`
		EpochD   float64 `json:"epoch_d"`
		DepthPPM float64 `json:"depth_ppm"`
		T14H     float64 `json:"duration_h"`
	} `json:"planets"`
}

func readTruth(t *testing.T) truth {
	t.Helper()
	b, err := os.ReadFile("data/truth.json")
	if err != nil {
		t.Fatal(err)
	}
	var tr truth
	if err := json.Unmarshal(b, &tr); err != nil {
		t.Fatal(err)
	}
	return tr
}

// runIn copies the workflow (edited by edit) and the named data files into a fresh folder,
// runs it, and returns the periods of the signals of each search step.
func runIn(t *testing.T, edit func(string) string, data map[string]string) map[string][]float64 {
	t.Helper()
	dir := t.TempDir()
	src, err := os.ReadFile("analysis.hcl")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "analysis.hcl"), []byte(edit(string(src))), 0o644); err != nil {
		t.Fatal(err)
	}
	for to, from := range data {
		b, err := os.ReadFile(from)
		if err != nil {
			t.Fatal(err)
		}
		os.MkdirAll(filepath.Dir(filepath.Join(dir, to)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, to), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	reg, err := kinds.Registry()
	if err != nil {
		t.Fatal(err)
	}
	w, diags := workflow.Load(filepath.Join(dir, "analysis.hcl"), reg)
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := workflow.Run(context.Background(), w, store, workflow.Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The periods of the signals each search step found, from its reported figures.
	out := map[string][]float64{}
	for _, o := range rep.Outcomes {
		if o.Step.Kind.Name() != "search" {
			continue
		}
		out[o.Step.Addr] = []float64{}
		for _, f := range o.Artifact.Figures() {
			if strings.HasPrefix(f.Name, "signal") && strings.HasSuffix(f.Name, ".period") {
				out[o.Step.Addr] = append(out[o.Step.Addr], f.Value)
			}
		}
	}
	return out
}

// finds reports whether a signal matches the planet's period to within the scale a box
// search can resolve: the duration over the baseline, times the period (common practice).
func finds(periods []float64, period, durationD, baseline float64) bool {
	for _, p := range periods {
		if math.Abs(p-period) <= period*durationD/baseline {
			return true
		}
	}
	return false
}

const baseline = 80.3 // days, examples/fernwell/README.md

func TestTheWorkflowFindsBothPlanetsAndARawSearchMissesC(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	tr := readTruth(t)
	b, c := tr.Planets[0], tr.Planets[1]
	// The demo as written, plus a search of the raw light curve with the same settings.
	addRaw := func(s string) string {
		return s + "\nsearch \"raw\" {\n  light_curve  = photometry.survey\n  star_density = \"7 g/cm3\"\n}\n"
	}
	got := runIn(t, addRaw, map[string]string{"data/fw3318.csv": "data/fw3318.csv"})
	for _, p := range []struct {
		name      string
		period, d float64
	}{{"b", b.PeriodD, b.T14H / 24}, {"c", c.PeriodD, c.T14H / 24}} {
		if !finds(got["search.dips"], p.period, p.d, baseline) {
			t.Errorf("search.dips missed planet %s (P = %.4f d): %+v", p.name, p.period, got["search.dips"])
		}
	}
	if finds(got["search.raw"], c.PeriodD, c.T14H/24, baseline) {
		t.Errorf("a search without detrending found planet c; the demo should need the detrending: %+v", got["search.raw"])
	}
}

func TestTheWorkflowRunsOnOtherLightCurves(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	// Only the file name changes: a 10-minute tab-separated file with other column
	// spellings and flux in electrons per second, and a FITS file written by cfitsio.
	for _, c := range []struct{ name, file, from string }{
		{"a faster CSV", "data/fw3318_fast.csv", "data/fw3318_fast.csv"},
		{"a FITS file", "data/lightcurve.fits", "../../testdata/fits/lightcurve.fits"},
	} {
		t.Run("on "+c.name, func(t *testing.T) {
			edit := func(s string) string { return strings.Replace(s, "data/fw3318.csv", c.file, 1) }
			got := runIn(t, edit, map[string]string{c.file: c.from})
			if _, ok := got["search.dips"]; !ok {
				t.Fatalf("no search result: %+v", got)
			}
		})
	}
}

func TestTheFastLightCurveStillShowsPlanetB(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	tr := readTruth(t)
	b := tr.Planets[0]
	edit := func(s string) string { return strings.Replace(s, "data/fw3318.csv", "data/fw3318_fast.csv", 1) }
	got := runIn(t, edit, map[string]string{"data/fw3318_fast.csv": "data/fw3318_fast.csv"})
	if !finds(got["search.dips"], b.PeriodD, b.T14H/24, 30) {
		t.Errorf("planet b not found in the 30-day, 10-minute light curve: %+v", got["search.dips"])
	}
}
