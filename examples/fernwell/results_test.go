package fernwell_test

import (
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"

	"dipline/workflow"
)

// signedHyphen finds a hyphen before a digit, which a reader of a figure name could take
// for a minus sign ("transit-3"); plainName is what a figure name may be (DEVELOPERS.md,
// "Figure names").
var (
	signedHyphen = regexp.MustCompile(`-[0-9]`)
	plainName    = regexp.MustCompile(`^[a-z0-9_]+(\.[a-z0-9_]+)*$`)
)

// checkPaperReady reads the results file of a demo run (with a short fit, a what-if run)
// as a paper's tables would: no figure name of any step holds a hyphen before a digit
// (per-transit figures are transit_before3, transit0, transit_after3), every posterior
// summary of the fit, the star, the dilution and derive carries its interval's two sides as
// numbers, no undefined number is written, and the overrides are stated. The demo run of
// TestACatalogueRevisionRerunsOnlyTheStarsReaders calls it, so the suite runs no extra fit.
func checkPaperReady(t *testing.T, dir string, rep *workflow.Report) {
	t.Helper()
	text, err := os.ReadFile(filepath.Join(dir, "results", "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rf workflow.ResultsFile
	if err := json.Unmarshal(text, &rf); err != nil {
		t.Fatal(err)
	}

	t.Run("no figure name has a hyphen before a digit", func(t *testing.T) {
		names := 0
		for _, o := range rep.Outcomes {
			for _, f := range o.Artifact.Figures() {
				names++
				if signedHyphen.MatchString(f.Name) || !plainName.MatchString(f.Name) {
					t.Errorf("%s: figure %q", o.Step.Addr, f.Name)
				}
			}
		}
		if names == 0 {
			t.Fatal("no figures")
		}
	})
	t.Run("per-transit figures name their epoch in words", func(t *testing.T) {
		before, after := false, false
		for _, s := range rf.Steps {
			for _, f := range s.Figures {
				before = before || strings.Contains(f.Name, ".transit_before")
				after = after || strings.Contains(f.Name, ".transit_after")
			}
		}
		if !before || !after {
			t.Errorf("transits before the reference %v, after it %v", before, after)
		}
	})
	t.Run("posterior summaries carry both sides of their interval", func(t *testing.T) {
		want := map[string][]string{
			"fit.planets":       {"b.period", "b.k", "c.b", "star_density"},
			"star.host":         {"radius", "mass", "density"},
			"dilution.aperture": {"target.flux_ratio"},
			"derive.planets":    {"b.radius_earth", "c.radius_earth"},
		}
		for _, s := range rf.Steps {
			for _, name := range want[s.Step] {
				found := false
				for _, f := range s.Figures {
					if f.Name != name {
						continue
					}
					found = true
					if f.Lower == nil || f.Upper == nil || !(*f.Lower > 0) || !(*f.Upper > 0) {
						t.Errorf("%s/%s has no interval: %+v", s.Step, name, f)
					}
				}
				if !found {
					t.Errorf("%s has no figure %s", s.Step, name)
				}
			}
		}
		if !strings.Contains(string(text), `"err_lower": `) || !strings.Contains(string(text), `"err_upper": `) {
			t.Error("the results file has no err_lower or err_upper")
		}
	})
	t.Run("no undefined number is written", func(t *testing.T) {
		for _, bad := range []string{"NaN", `"value": null`} {
			if strings.Contains(string(text), bad) {
				t.Errorf("the results file holds %s", bad)
			}
		}
	})
	t.Run("the what-if settings are stated", func(t *testing.T) {
		// The overrides of quick, sorted as the results file keeps them.
		want := []string{"completeness.reach.full_grid_checks=3", "completeness.reach.per_cell=3", "fit.planets.max_steps=300"}
		if !reflect.DeepEqual(rf.Overrides, want) || !strings.Contains(rf.WhatIf, "what-if run") {
			t.Errorf("overrides %q, what_if %q", rf.Overrides, rf.WhatIf)
		}
	})
}
