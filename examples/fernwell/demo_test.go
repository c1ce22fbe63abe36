// Package fernwell_test runs the demo workflow as a user would, and checks that it finds
// the two invented planets of examples/fernwell/data/truth.json.
package fernwell_test

import (
	"context"
	"encoding/json"
	"fmt"
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
		K        float64 `json:"radius_ratio"`
		Radius   float64 `json:"radius_rearth"`
		B        float64 `json:"impact_parameter"`
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

// quickFit keeps the demo tests' fits short: a few thousand steps give medians near the
// posterior's and exercise every step; the full run to 50 autocorrelation times is
// TestTheFullDemoCoversTheTruth. The completeness map is small too (3 planets per cell).
var quickFit = []workflow.Override{{Addr: "fit.planets", Attr: "max_steps", Value: "2500"},
	{Addr: "completeness.reach", Attr: "per_cell", Value: "3"},
	{Addr: "completeness.reach", Attr: "full_grid_checks", Value: "3"}}

// quick is for the runs that check something other than the fit and the completeness map
// (the search on other light curves, what a revision re-runs, the page): both still run,
// as every step must work, briefly.
var quick = []workflow.Override{{Addr: "fit.planets", Attr: "max_steps", Value: "300"},
	{Addr: "completeness.reach", Attr: "per_cell", Value: "3"},
	{Addr: "completeness.reach", Attr: "full_grid_checks", Value: "3"}}

// catalogueFiles are the star's catalogue and imaging table, which every run needs.
var catalogueFiles = map[string]string{
	"data/nearby_stars.csv": "data/nearby_stars.csv", "data/fw3318_imaging.csv": "data/fw3318_imaging.csv"}

// runIn copies the workflow (edited by edit), the catalogue files and the named data files
// into a fresh folder, runs it with the overrides, and returns the periods of the signals
// of each search step and the figures of every step by address.
func runIn(t *testing.T, edit func(string) string, data map[string]string, overrides ...workflow.Override) (map[string][]float64, map[string]map[string]float64) {
	t.Helper()
	dir := t.TempDir()
	src, err := os.ReadFile("analysis.hcl")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "analysis.hcl"), []byte(edit(string(src))), 0o644); err != nil {
		t.Fatal(err)
	}
	all := map[string]string{}
	for to, from := range catalogueFiles {
		all[to] = from
	}
	for to, from := range data {
		all[to] = from
	}
	for to, from := range all {
		b, err := os.ReadFile(from)
		if err != nil {
			t.Fatal(err)
		}
		os.MkdirAll(filepath.Dir(filepath.Join(dir, to)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, to), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	rep := runDir(t, dir, overrides...)
	// The periods of the signals each search step found, from its reported figures.
	out := map[string][]float64{}
	figs := map[string]map[string]float64{}
	for _, o := range rep.Outcomes {
		figs[o.Step.Addr] = map[string]float64{}
		for _, f := range o.Artifact.Figures() {
			figs[o.Step.Addr][f.Name] = f.Value
			figs[o.Step.Addr][f.Name+"/sigma"] = f.Sigma
		}
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
	return out, figs
}

// runDir runs the workflow in dir, with its store there, and returns the report.
func runDir(t *testing.T, dir string, overrides ...workflow.Override) *workflow.Report {
	t.Helper()
	reg, err := kinds.Registry()
	if err != nil {
		t.Fatal(err)
	}
	w, diags := workflow.LoadWith(filepath.Join(dir, "analysis.hcl"), reg, overrides)
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
	return rep
}

// TestACatalogueRevisionRerunsOnlyTheStarsReaders runs the demo, re-runs it (everything
// reused), then swaps in revision 2 of the catalogue: only the star and what reads it
// (dilution, derive) are recomputed, never the search or the fit. Then a prior of the fit
// changes: the fit and derive are recomputed, nothing else.
func TestACatalogueRevisionRerunsOnlyTheStarsReaders(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	dir := t.TempDir()
	src, err := os.ReadFile("analysis.hcl")
	if err != nil {
		t.Fatal(err)
	}
	files := map[string][]byte{"analysis.hcl": src}
	for _, name := range []string{"data/fw3318.csv", "data/nearby_stars.csv", "data/nearby_stars_rev2.csv", "data/fw3318_imaging.csv"} {
		b, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		files[name] = b
	}
	write := func(name string, b []byte) {
		os.MkdirAll(filepath.Dir(filepath.Join(dir, name)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	for name, b := range files {
		write(name, b)
	}
	statuses := func(rep *workflow.Report) map[string]string {
		st := map[string]string{}
		for _, o := range rep.Outcomes {
			st[o.Step.Addr] = o.Status
		}
		return st
	}
	checkPaperReady(t, dir, runDir(t, dir, quick...))
	for addr, s := range statuses(runDir(t, dir, quick...)) {
		if s != workflow.StatusReused {
			t.Errorf("second run: %s %s, want reused", addr, s)
		}
	}
	write("data/nearby_stars.csv", files["data/nearby_stars_rev2.csv"])
	// The completeness step reads the star too: its density shapes the injected transits
	// and its radius turns the map's Earth radii into radius ratios.
	want := map[string]string{"star.host": workflow.StatusComputed, "dilution.aperture": workflow.StatusComputed,
		"derive.planets": workflow.StatusComputed, "vet.planets": workflow.StatusComputed,
		"completeness.reach": workflow.StatusComputed}
	expectStatuses(t, "after the revision", statuses(runDir(t, dir, quick...)), want)
	// A prior changed for the fit re-runs the fit and what reads it, nothing upstream.
	prior := append(append([]workflow.Override(nil), quick...),
		workflow.Override{Addr: "fit.planets", Attr: "priors", Value: `{ "b.b" = "uniform(0, 0.9)" }`})
	want = map[string]string{"fit.planets": workflow.StatusComputed, "derive.planets": workflow.StatusComputed,
		"vet.planets": workflow.StatusComputed, "ephemeris.next": workflow.StatusComputed,
		"completeness.reach": workflow.StatusComputed} // the fit's limb darkening and planets
	expectStatuses(t, "after a prior changed", statuses(runDir(t, dir, prior...)), want)
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
	got, figs := runIn(t, addRaw, map[string]string{"data/fw3318.csv": "data/fw3318.csv"}, quickFit...)
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
	// The derived radii (fit, star from the catalogue, dilution by the companion) land on
	// the invented truth within 3σ, even from a short fit.
	d := figs["derive.planets"]
	for _, p := range []struct {
		name   string
		radius float64
	}{{"b", b.Radius}, {"c", c.Radius}} {
		got, sig := d[p.name+".radius_earth"], d[p.name+".radius_earth/sigma"]
		if !(sig > 0) || math.Abs(got-p.radius) > 3*sig {
			t.Errorf("planet %s: radius %.3f ± %.3f R⊕, truth %.3f", p.name, got, sig, p.radius)
		}
	}
}

// TestTheFullDemoCoversTheTruth runs the demo exactly as the README does (the fit to 50
// autocorrelation times) and checks that every fitted and derived quantity with a truth
// value covers it within 3σ, and that the vet step disagrees with neither planet. It takes about 20 s on 2 cores (fit version 9; version 8 took
// minutes and ran only behind DIPLINE_LONG); -short skips it.
func TestTheFullDemoCoversTheTruth(t *testing.T) {
	if testing.Short() {
		t.Skip("-short skips the full demo")
	}
	tr := readTruth(t)
	_, figs := runIn(t, func(s string) string { return s }, map[string]string{"data/fw3318.csv": "data/fw3318.csv"})
	for _, p := range tr.Planets {
		for _, c := range []struct {
			step, fig string
			truth     float64
		}{
			{"fit.planets", p.Name + ".period", p.PeriodD},
			{"fit.planets", p.Name + ".b", p.B},
			{"derive.planets", p.Name + ".radius_ratio", p.K},
			{"derive.planets", p.Name + ".radius_earth", p.Radius},
		} {
			got, sig := figs[c.step][c.fig], figs[c.step][c.fig+"/sigma"]
			t.Logf("%s %s = %.5g ± %.2g (truth %.5g)", c.step, c.fig, got, sig, c.truth)
			if !(sig > 0) || math.Abs(got-c.truth) > 3*sig {
				t.Errorf("%s %s = %.5g ± %.2g, truth %.5g", c.step, c.fig, got, sig, c.truth)
			}
		}
	}
	// The first predicted transit of the next season lands on the invented truth's linear
	// ephemeris within 3σ (months after the data, so the period's error has grown), and the
	// demo's site sees one night with two whole transits (README, "Planning the next
	// transits").
	eph := figs["ephemeris.next"]
	for _, p := range tr.Planets {
		mid, sig := eph[p.Name+".first_mid"], eph[p.Name+".first_mid/sigma"]
		n := math.Round((mid - 2460000 - p.EpochD) / p.PeriodD)
		want := 2460000 + p.EpochD + n*p.PeriodD
		t.Logf("ephemeris %s: first transit %.5f ± %.5f, truth %.5f", p.Name, mid, sig, want)
		if !(sig > 0) || math.Abs(mid-want) > 3*sig {
			t.Errorf("ephemeris %s: first transit %.5f ± %.5f d, truth %.5f", p.Name, mid, sig, want)
		}
	}
	if eph["double_nights"] != 1 {
		t.Errorf("the demo's site sees %v nights with two whole transits, the README says one", eph["double_nights"])
	}
	// The completeness map: its share recovered rises from the smallest radii to the largest
	// in every period column (a transit's signal to noise grows as k²), it spans the
	// detection limit (some cell under a half, some at or above nine tenths), and b and c
	// each sit in a cell the search recovers at least four times in five, as it found them.
	comp := figs["completeness.reach"]
	cols, rows, placed := 4, 4, 0.0
	for i := 1; i <= cols; i++ {
		small, large := comp[fmt.Sprintf("p%d_r1.recovered", i)], comp[fmt.Sprintf("p%d_r%d.recovered", i, rows)]
		if !(large > small) {
			t.Errorf("completeness column %d: %.2f recovered at the smallest radii, %.2f at the largest", i, small, large)
		}
		if small >= 0.5 || large < 0.9 {
			t.Errorf("completeness column %d (%.2f to %.2f) does not span the detection limit", i, small, large)
		}
		for j := 1; j <= rows; j++ {
			cell := fmt.Sprintf("p%d_r%d.", i, j)
			if n := comp[cell+"detections"]; n > 0 {
				placed += n
				if comp[cell+"recovered"] < 0.8 {
					t.Errorf("a planet lies in completeness cell %s, recovered at only %.2f", cell, comp[cell+"recovered"])
				}
			}
		}
	}
	if placed != 2 {
		t.Errorf("%v planets placed on the completeness map, want b and c", placed)
	}
	// Both injected signals are planets on the target: no vet test may disagree.
	for _, s := range []string{"signal1", "signal2"} {
		d, ok := figs["vet.planets"][s+".disagree"]
		if !ok || d != 0 {
			t.Errorf("vet.planets %s.disagree = %v (present %v), want 0", s, d, ok)
		}
	}
}

func TestTheWorkflowRunsOnOtherLightCurves(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	// Only the file name changes: a 10-minute tab-separated file with other column
	// spellings and flux in electrons per second, and a FITS file written by cfitsio.
	for _, c := range []struct {
		name, file, from string
		otherStar        bool
	}{
		{"a faster CSV", "data/fw3318_fast.csv", "data/fw3318_fast.csv", false},
		{"a FITS file", "data/lightcurve.fits", "../../testdata/fits/lightcurve.fits", true},
	} {
		t.Run("on "+c.name, func(t *testing.T) {
			edit := func(s string) string {
				s = strings.Replace(s, "data/fw3318.csv", c.file, 1)
				if c.otherStar {
					// The FITS fixture is another (invented) star: its transits do not fit
					// FW-3318's catalogue entry, and derive rightly refuses to combine them.
					s = s[:strings.Index(s, "# The host star.")]
				}
				return s
			}
			var set []workflow.Override
			if !c.otherStar {
				set = quick
			}
			got, _ := runIn(t, edit, map[string]string{c.file: c.from}, set...)
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
	got, _ := runIn(t, edit, map[string]string{"data/fw3318_fast.csv": "data/fw3318_fast.csv"}, quick...)
	if !finds(got["search.dips"], b.PeriodD, b.T14H/24, 30) {
		t.Errorf("planet b not found in the 30-day, 10-minute light curve: %+v", got["search.dips"])
	}
}

// expectStatuses checks every step's status in got against want, steps not in want being
// expected reused; when says which run it was.
func expectStatuses(t *testing.T, when string, got, want map[string]string) {
	t.Helper()
	for addr, s := range got {
		w, ok := want[addr]
		if !ok {
			w = workflow.StatusReused
		}
		if s != w {
			t.Errorf("%s: %s %s, want %s", when, addr, s, w)
		}
	}
}
