package completeness

import (
	"bytes"
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/stardensity"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
	"dipline/steps/search"
	"dipline/steps/star"
)

// These tests cover a completeness step whose search takes its star's density from a star
// step (search star = star.host): each copy must be searched with that density.

// denseHost is an invented star step's result: 1001 density draws about 4 g/cm³ (a dwarf
// near 0.6 R☉) and radii about 0.6 R☉.
func denseHost() *star.Artifact {
	s := &stellar.Star{}
	for i := range 1001 {
		z := float64(i-500) / 500
		s.Density = append(s.Density, 4*math.Exp(0.1*z))
		s.Radius = append(s.Radius, 0.6+0.02*z)
	}
	return &star.Artifact{Method: "invented", Star: s}
}

// runWithSearch runs the kind (star = star.host unless set says otherwise) with the given
// search settings, on kindInputs' light curve and detrend, with the star denseHost.
func runWithSearch(t *testing.T, set map[string]any, scfg *search.Config) (*Result, error) {
	return runOrInspect(t, set, scfg, false)
}

// runOrInspect is runWithSearch, or with inspectOnly the kind's inspection of the same
// settings and inputs (what dipline check asks).
func runOrInspect(t *testing.T, set map[string]any, scfg *search.Config, inspectOnly bool) (*Result, error) {
	t.Helper()
	full := map[string]any{"light_curve": "photometry.raw", "detrend": "detrend.flat", "search": "search.dips", "star": "star.host",
		"period_range": []string{"1 d", "6 d"}, "period_cells": 1, "radius_cells": 1, "per_cell": 4}
	for k, v := range set {
		if v == nil {
			delete(full, k)
			continue
		}
		full[k] = v
	}
	cfg, err := steptest.Config(New(), full)
	if err != nil {
		t.Fatal(err)
	}
	in := kindInputs(t)
	in.Settings["search"] = scfg
	in.Refs["star"] = []steps.Artifact{denseHost()}
	env := steps.Env{Seed: 9, Pool: steptest.Pool(2), Notef: func(string, ...any) {}}
	if inspectOnly {
		return nil, (Kind{}).Inspect(cfg.(*Config), in)
	}
	art, err := New().Run(context.Background(), cfg, in, env)
	if err != nil {
		return nil, err
	}
	return art.(*Result), nil
}

// searchSettings returns the search settings of a block that writes set besides its light
// curve and one signal.
func searchSettings(t *testing.T, set map[string]any) *search.Config {
	t.Helper()
	full := map[string]any{"light_curve": "detrend.flat", "max_signals": 1}
	for k, v := range set {
		full[k] = v
	}
	return steptest.MustConfig(search.New(), full).(*search.Config)
}

func TestASearchThatTakesTheStarSearchesEachCopyWithItsDensity(t *testing.T) {
	// Source: the search step's contract (search.WithStar): a search given star = star.host
	// is the search given the star's density (stardensity.Median of its draws) by
	// star_density, so the maps must be the same bytes.
	withStar, err := runWithSearch(t, nil, searchSettings(t, map[string]any{"star": "star.host"}))
	if err != nil {
		t.Fatal(err)
	}
	rho, n := stardensity.Median(denseHost().Star)
	if n == 0 || math.Abs(rho-4) > 1e-9 {
		t.Fatalf("the star's median density %v g/cm3 from %d draws, want 4", rho, n)
	}
	given := searchSettings(t, nil)
	given.Density = &rho
	written, err := runWithSearch(t, nil, given)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(withStar.Encode(), written.Encode()) {
		t.Error("the map made with a search that takes the star differs from the one made with the star's density written")
	}
	// The Sun's density, the search's default, gives another map: the density matters.
	sun, err := runWithSearch(t, nil, searchSettings(t, nil))
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Equal(sun.Encode(), withStar.Encode()) {
		t.Error("the search's density made no difference to the map")
	}
}

func TestASearchThatTakesAStarNeedsTheSameStarHere(t *testing.T) {
	takesStar := searchSettings(t, map[string]any{"star": "star.host"})
	for _, c := range []struct {
		name  string
		set   map[string]any
		words string
	}{
		{"without a star of its own", map[string]any{"star": nil}, "write star = star.host here too"},
		{"naming another star", map[string]any{"star": "star.other"}, "names star.other, but search.dips takes the star's density from star.host"},
	} {
		t.Run("it refuses a completeness "+c.name, func(t *testing.T) {
			for _, inspect := range []bool{false, true} {
				_, err := runOrInspect(t, c.set, takesStar, inspect)
				var ae *steps.AttrError
				if !errors.As(err, &ae) || ae.Attr != "star" || !strings.Contains(ae.Msg, c.words) {
					t.Errorf("inspection only %v: error %v, want one on star with %q", inspect, err, c.words)
				}
			}
		})
	}
	t.Run("a search with star_density needs no star here", func(t *testing.T) {
		if _, err := runWithSearch(t, map[string]any{"star": nil}, searchSettings(t, map[string]any{"star_density": "4 g/cm3"})); err != nil {
			t.Error(err)
		}
	})
}
