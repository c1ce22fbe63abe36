package search

import (
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/steptest"
	"dipline/steps/search/bls"
)

func panelTitled(pr steps.Presentation, title string) *steps.Panel {
	for i := range pr.Panels {
		if pr.Panels[i].Title == title {
			return &pr.Panels[i]
		}
	}
	return nil
}

func layer(pl *steps.Plot, label string) *steps.Layer {
	for i := range pl.Layers {
		if pl.Layers[i].Label == label {
			return &pl.Layers[i]
		}
	}
	return nil
}

func TestPresentShowsPeriodogramsFoldsAndSignals(t *testing.T) {
	lc := fixture() // the package's fixture: P = 3.3 d, 2500 ppm, 1000 ppm noise
	art, _ := run(t, defaults(), lc, steps.NewPool(2))
	cfg := steptest.MustConfig(New(), defaults())
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{lc}}}}
	pr, err := steps.PresentationOf(New(), cfg, art, in)
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)
	dets := art.Detections()
	if len(dets) == 0 {
		t.Fatal("the fixture's signal was not found")
	}

	t.Run("it gives a table, a periodogram per pass and a fold per signal", func(t *testing.T) {
		want := []string{"Signals found"}
		for k, p := range art.Passes {
			want = append(want, fmt.Sprintf("Periodogram, pass %d", k+1))
			if p.Found != nil {
				want = append(want, fmt.Sprintf("Signal %d folded", k+1))
			}
		}
		var got []string
		for _, p := range pr.Panels {
			got = append(got, p.Title)
		}
		if !slices.Equal(got, want) {
			t.Fatalf("panels %q, want %q", got, want)
		}
		if rows := len(pr.Panels[0].Table.Rows); rows != len(dets) {
			t.Errorf("%d table rows for %d signals", rows, len(dets))
		}
		for k := range art.Passes {
			if _, ok := data[fmt.Sprintf("periodogram_pass%d", k+1)]; !ok {
				t.Errorf("no data for pass %d", k+1)
			}
		}
		for k := range dets {
			if _, ok := data[fmt.Sprintf("fold_signal%d", k+1)]; !ok {
				t.Errorf("no fold data for signal %d", k+1)
			}
		}
	})

	t.Run("each periodogram covers the grid with the threshold and the peak", func(t *testing.T) {
		for k, p := range art.Passes {
			d := data[fmt.Sprintf("periodogram_pass%d", k+1)]
			for _, name := range []string{"period_d", "frequency_per_d", "power", "sde", "duration_d"} {
				if n := len(steptest.Column(t, d, name)); n != art.Grid.N {
					t.Errorf("pass %d: %s has %d values for %d frequencies", k+1, name, n, art.Grid.N)
				}
			}
			pl := panelTitled(pr, fmt.Sprintf("Periodogram, pass %d", k+1)).Plots[0]
			// The threshold is the one the search used: by default the grid's.
			if len(pl.HLines) != 1 || pl.HLines[0].Value != bls.DefaultThreshold(art.Grid.N) || pl.HLines[0].Value != art.Threshold || !pl.LogX {
				t.Errorf("pass %d: marks %+v, log x %v", k+1, pl.HLines, pl.LogX)
			}
			// The SDE recomputed from the float32 power agrees with the search's own SDE of
			// the peak to float32 precision (the artifact keeps seven digits).
			sde := steptest.Column(t, d, "sde")
			if math.Abs(sde[p.Peak]-p.SDE) > 1e-4*p.SDE {
				t.Errorf("pass %d: SDE at the peak %v, recorded %v", k+1, sde[p.Peak], p.SDE)
			}
			pk := layer(pl, "highest peak")
			if pk == nil || len(pk.X) != 1 || pk.X[0] != art.Grid.Period(p.Peak) {
				t.Errorf("pass %d: peak layer %+v", k+1, pk)
			}
			if p.Found != nil {
				P := p.Found.Timing.Period
				var marks []float64
				for _, m := range pl.VLines {
					marks = append(marks, m.Value)
				}
				for _, v := range []float64{P / 2, 2 * P} {
					inGrid := v >= 1/art.Grid.FMax && v <= 1/art.Grid.FMin
					if slices.Contains(marks, v) != inGrid {
						t.Errorf("pass %d: %v d marked %v, in the grid %v", k+1, v, slices.Contains(marks, v), inGrid)
					}
				}
			}
		}
	})

	t.Run("the fold shows the points near transit with the signal's depth", func(t *testing.T) {
		s := dets[0]
		d := data["fold_signal1"]
		phase, model := steptest.Column(t, d, "phase_d"), steptest.Column(t, d, "model")
		// Counted independently of the presenter: points within three durations of a
		// mid-transit (foldWindow), as (t − E)/P folded to the nearest transit.
		t0, _, _, _ := lc.Flat()
		half := math.Min(s.Timing.Period/2, 3*s.Shape.Duration)
		want := 0
		for _, ti := range t0 {
			x := (ti - s.Timing.Epoch) / s.Timing.Period
			if math.Abs(x-math.Round(x))*s.Timing.Period <= half {
				want++
			}
		}
		if len(phase) != want || want == 0 {
			t.Fatalf("%d folded points, %d within %v d of a transit", len(phase), want, half)
		}
		if !slices.IsSorted(phase) {
			t.Error("the fold is not in phase order")
		}
		depth := slices.Max(model) - slices.Min(model)
		if math.Abs(depth-s.Shape.Depth) > 1e-12 {
			t.Errorf("the model is %v deep, the signal %v", depth, s.Shape.Depth)
		}
		pl := panelTitled(pr, "Signal 1 folded").Plots[0]
		box := layer(pl, "box model")
		if box == nil || math.Abs(slices.Max(box.Y)-slices.Min(box.Y)-s.Shape.Depth) > 1e-12 {
			t.Errorf("box line %+v, depth %v", box, s.Shape.Depth)
		}
		if layer(pl, "binned") != nil {
			t.Errorf("%d points binned; binning starts above %d", len(phase), binAbove)
		}
	})

	t.Run("the table words the signals", func(t *testing.T) {
		row, d := pr.Panels[0].Table.Rows[0], dets[0]
		if row[1] != withSigma(d.Timing.Period, d.Timing.PeriodSigma) || row[3] != withSigma(d.Shape.Depth*1e6, d.Shape.DepthSigma*1e6) {
			t.Errorf("row %q", row)
		}
		t.Logf("signal 1: %q", row)
	})

	t.Run("two calls give the same presentation", func(t *testing.T) {
		steptest.PresentsAlike(t, New(), cfg, art, in, pr)
	})

	t.Run("without the light curve there are no folds, and the table says so", func(t *testing.T) {
		bare, err := steps.PresentationOf(New(), cfg, art, steps.Inputs{})
		if err != nil {
			t.Fatal(err)
		}
		steptest.CheckPresentation(t, bare)
		if len(bare.Panels) != 1+len(art.Passes) {
			t.Errorf("%d panels, want the table and %d periodograms", len(bare.Panels), len(art.Passes))
		}
		notes := strings.Join(bare.Panels[0].Table.Notes, " ")
		if !strings.Contains(notes, "no signal is shown folded") {
			t.Errorf("notes %q", notes)
		}
	})
}

func TestFoldBinsManyPoints(t *testing.T) {
	// Invented: 20,000 points over 20 d, 0.001 d apart from 0.0005 d (so none falls on a
	// window's or bin's edge), a 0.1-d box of 1000 ppm every 1 d, noise 500 ppm. Within
	// ±0.3 d of each mid-transit lie 600 points a day, 12,000 in all, above binAbove.
	g := rng.New(7)
	const per, epoch, dur, depth = 1.0, 0.5, 0.1, 1e-3
	s := lightcurve.Segment{ID: "1", Contamination: math.NaN()}
	for i := range 20000 {
		ti := (float64(i) + 0.5) / 1000
		f := 1 + 5e-4*g.Normal()
		x := (ti - epoch) / per
		if math.Abs(x-math.Round(x))*per < dur/2 {
			f -= depth
		}
		s.Time, s.Flux, s.Err = append(s.Time, ti), append(s.Flux, f), append(s.Err, 5e-4)
	}
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{s}}
	d := bls.Detection{Timing: bls.Timing{Period: per, Epoch: epoch}, Shape: bls.Shape{Duration: dur, Depth: depth}}
	panel, data := foldPanel(lc.Frame(), lc, 1, d, nil, defaultMaskFactor)
	pr := steps.Presentation{Panels: []steps.Panel{panel}, Data: data}
	got := steptest.CheckPresentation(t, pr)
	b, ok := got["fold_signal1_binned"]
	if !ok || layer(panel.Plots[0], "binned") == nil {
		t.Fatal("no binned points")
	}
	phase, n := steptest.Column(t, b, "phase_d"), steptest.Column(t, b, "points")
	// Bins a fifth of the duration wide (0.02 d), centred on mid-transit: round(φ/0.02) runs
	// from −15 to 15, 31 bins, holding every folded point once.
	if len(phase) != 31 {
		t.Errorf("%d bins, want 31", len(phase))
	}
	total := 0.0
	for k, p := range phase {
		if math.Abs(p-float64(k-15)*dur/5) > 1e-12 {
			t.Errorf("bin %d centred at %v, want %v", k, p, float64(k-15)*dur/5)
		}
		total += n[k]
	}
	if folded := len(steptest.Column(t, got["fold_signal1"], "phase_d")); int(total) != folded || folded != 12000 {
		t.Errorf("bins hold %v points of %d folded, want 12000", total, folded)
	}
	// The bin at mid-transit averages in-transit points only (20 a day, 400 in all): 1000 ppm
	// below 1 to within five of its errors, 500/√400 = 25 ppm.
	mid := steptest.Column(t, b, "flux")[15]
	if e := steptest.Column(t, b, "flux_err")[15]; math.Abs(1-depth-mid) > 5*e || n[15] != 400 {
		t.Errorf("mid-transit bin at %v ± %v, want %v", mid, e, 1-depth)
	}
}

func TestWithSigmaRoundsByTheError(t *testing.T) {
	// The error to two significant digits and the value to the same place (common practice).
	for _, c := range []struct {
		v, s float64
		want string
	}{
		{3.2998412, 0.000592, "3.29984 ± 0.00059"},
		{2512.3, 143.7, "2510 ± 140"},
		{2512.3, 14.37, "2512 ± 14"},
		{0.4812, 0.051, "0.481 ± 0.051"},
		{1.5, 0, "1.5"},
		{math.NaN(), 1, "–"},
	} {
		if got := withSigma(c.v, c.s); got != c.want {
			t.Errorf("withSigma(%v, %v) = %q, want %q", c.v, c.s, got, c.want)
		}
	}
}
