package photometry

import (
	"testing"

	"dipline/steps"
	"dipline/steps/internal/fits/fitsfixtures"
	"dipline/steps/internal/steptest"
)

func TestPresentShowsEverySegmentOfTheFixtures(t *testing.T) {
	files := load(t, "fits/lightcurve.fits", "fits/lightcurve_late.fits")
	res, _, err := runKind(t, nil, files)
	if err != nil {
		t.Fatal(err)
	}
	cfg := steptest.MustConfig(New(), block(nil, files))
	in := steps.Inputs{Files: map[string][]steps.File{"files": files}}
	pr, err := steps.PresentationOf(New(), cfg, res, in)
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)

	t.Run("it shows a plot per segment and a table of them", func(t *testing.T) {
		if len(pr.Panels) != 2 || pr.Panels[0].Title != "Light curve as read" || pr.Panels[1].Title != "Segments" {
			t.Fatalf("panels %v", titles(pr))
		}
		if n := len(pr.Panels[0].Plots); n != len(res.LC.Segments) || n != 2 {
			t.Fatalf("%d plots for %d segments (two fixture files)", n, len(res.LC.Segments))
		}
		if rows := len(pr.Panels[1].Table.Rows); rows != 2 {
			t.Errorf("%d rows in the segments table, want 2", rows)
		}
		for i, pl := range pr.Panels[0].Plots {
			if got, want := len(pl.Layers[0].X), res.LC.Segments[i].Len(); got != want {
				t.Errorf("segment %d: %d points drawn, %d kept", i+1, got, want)
			}
		}
	})

	t.Run("the time axis names the scale and zero point", func(t *testing.T) {
		// The fixtures' reference: BJD_TDB, JD 2460000 + 0.25 (fitsfixtures, written by
		// cfitsio in testdata/fits/make_fixtures.c); the late file is moved onto it.
		if fitsfixtures.LightCurveRefInt != 2460000 || fitsfixtures.LightCurveRefFrac != 0.25 {
			t.Fatal("the fixtures' reference changed; update this test")
		}
		for _, pl := range pr.Panels[0].Plots {
			if pl.XLabel != "time (days since BJD_TDB 2460000.25)" {
				t.Errorf("x label %q", pl.XLabel)
			}
		}
	})

	t.Run("the data hold every point with its error and segment", func(t *testing.T) {
		d, ok := data["lightcurve"]
		if !ok {
			t.Fatal("no Data lightcurve")
		}
		names := []string{"time_d", "flux", "flux_err", "segment"}
		if len(d.Series) != len(names) {
			t.Fatalf("%d columns, want %v", len(d.Series), names)
		}
		for i, n := range names {
			if d.Series[i].Name != n {
				t.Errorf("column %d is %q, want %q", i, d.Series[i].Name, n)
			}
		}
		if len(d.Series[0].Values) != res.LC.Len() {
			t.Fatalf("%d rows for %d points", len(d.Series[0].Values), res.LC.Len())
		}
		k := 0
		for i, s := range res.LC.Segments {
			for j := range s.Time {
				if d.Series[0].Values[k] != s.Time[j] || d.Series[1].Values[k] != s.Flux[j] ||
					d.Series[2].Values[k] != s.Err[j] || d.Series[3].Values[k] != float64(i+1) {
					t.Fatalf("row %d differs from segment %d point %d", k, i+1, j)
				}
				k++
			}
		}
	})

	t.Run("two calls give the same presentation", func(t *testing.T) {
		steptest.PresentsAlike(t, New(), cfg, res, in, pr)
	})
}

func TestPresentRefusesAnotherArtifact(t *testing.T) {
	var c Config
	if _, err := (Kind{}).Present(&c, nil, steps.Inputs{}); err == nil {
		t.Fatal("no error for a missing artifact")
	}
}

func titles(pr steps.Presentation) []string {
	var out []string
	for _, p := range pr.Panels {
		out = append(out, p.Title)
	}
	return out
}
