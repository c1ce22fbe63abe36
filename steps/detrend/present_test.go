package detrend

import (
	"bytes"
	"math"
	"testing"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
)

// layerPoints counts the points of the layers labelled label over a panel's plots.
func layerPoints(p steps.Panel, label string) int {
	n := 0
	for _, pl := range p.Plots {
		for _, l := range pl.Layers {
			if l.Label == label {
				n += len(l.X)
			}
		}
	}
	return n
}

func TestPresentShowsTrendMaskAndFlares(t *testing.T) {
	// The package's fixture: two segments with a transit every 3.1 d (masked here) and a
	// flare at every 200th point from the 50th.
	lc, sig := fixture(2, 600)
	res, _ := run(t, map[string]any{"estimator": "biweight"}, lc, []signals.Signal{sig}, 2)
	cfg := steptest.MustConfig(New(), block(map[string]any{"estimator": "biweight", "mask": "search.dips"}))
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {photometry{lc}}, "mask": {search{[]signals.Signal{sig}}}}}
	pr, err := steps.PresentationOf(New(), cfg, res, in)
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)
	count := func(m robust.Mark) int { return res.count(m) }

	t.Run("it gives the three panels and the data", func(t *testing.T) {
		want := []string{"Light curve and trend", "Detrended", "The star's own periods"}
		if len(pr.Panels) != len(want) {
			t.Fatalf("panels %d, want %v", len(pr.Panels), want)
		}
		for i, w := range want {
			if pr.Panels[i].Title != w {
				t.Errorf("panel %d is %q, want %q", i, pr.Panels[i].Title, w)
			}
		}
		for _, p := range pr.Panels[:2] {
			if len(p.Plots) != len(lc.Segments) {
				t.Errorf("%s: %d plots for %d segments", p.Title, len(p.Plots), len(lc.Segments))
			}
		}
		if len(data) != 1 || data["detrended"].Name != "detrended" {
			t.Fatalf("data %v", data)
		}
		if rows := len(pr.Panels[2].Table.Rows); rows != len(res.Star.Periods) {
			t.Errorf("%d rows for %d periods of the star", rows, len(res.Star.Periods))
		}
	})

	t.Run("every input point is shown and counted by its fate", func(t *testing.T) {
		if count(robust.InTransit) == 0 || count(robust.Flare) == 0 {
			t.Fatal("the fixture should have masked points and flares")
		}
		d := data["detrended"]
		if n := len(steptest.Column(t, d, "time_d")); n != lc.Len() {
			t.Fatalf("%d rows for %d input points", n, lc.Len())
		}
		sum := func(name string) int {
			n := 0
			for _, v := range steptest.Column(t, d, name) {
				n += int(v)
			}
			return n
		}
		if sum("in_output") != res.Curve.Len() || sum("in_masked_transit") != count(robust.InTransit) ||
			sum("flare") != count(robust.Flare) || sum("no_trend") != count(robust.NoTrend) {
			t.Errorf("0/1 columns do not match the marks")
		}
		trend, detr := pr.Panels[0], pr.Panels[1]
		if got := layerPoints(detr, "in a masked transit"); got != count(robust.InTransit) {
			t.Errorf("%d masked points drawn, %d marked", got, count(robust.InTransit))
		}
		if got := layerPoints(detr, "removed as a flare"); got != count(robust.Flare) {
			t.Errorf("%d flares drawn, %d marked", got, count(robust.Flare))
		}
		if got := layerPoints(detr, "detrended flux"); got != count(robust.Kept) {
			t.Errorf("%d detrended points drawn, %d kept", got, count(robust.Kept))
		}
		finite := 0
		for _, tr := range res.Trends {
			for _, v := range tr.Trend {
				if !math.IsNaN(v) {
					finite++
				}
			}
		}
		if got := layerPoints(trend, "trend"); got != finite {
			t.Errorf("the trend line has %d points, the artifact %d finite trend values", got, finite)
		}
		if got := layerPoints(trend, "flux") + layerPoints(trend, "in a masked transit"); got != lc.Len()-count(robust.NonFinite) {
			t.Errorf("%d input points drawn of %d", got, lc.Len())
		}
	})

	t.Run("the detrended flux is the artifact's", func(t *testing.T) {
		// newResult divides the input flux by the trend; the data do the same division, so
		// the values agree to the bit.
		d := data["detrended"]
		flux, out := steptest.Column(t, d, "flux"), steptest.Column(t, d, "in_output")
		var got []float64
		for i, o := range out {
			if o == 1 {
				got = append(got, flux[i])
			}
		}
		var want []float64
		for _, s := range res.Curve.Segments {
			want = append(want, s.Flux...)
		}
		if len(got) != len(want) {
			t.Fatalf("%d points in the output, %d in the artifact", len(got), len(want))
		}
		for i := range got {
			if got[i] != want[i] {
				t.Fatalf("point %d: %v, artifact %v", i, got[i], want[i])
			}
		}
	})

	t.Run("two calls give the same presentation", func(t *testing.T) {
		steptest.PresentsAlike(t, New(), cfg, res, in, pr)
	})
}

func TestPresentWithoutTheInputShowsTheKeptPoints(t *testing.T) {
	lc, sig := fixture(1, 600)
	res, _ := run(t, nil, lc, []signals.Signal{sig}, 1)
	cfg := steptest.MustConfig(New(), block(nil))
	pr, err := (Kind{}).Present(cfg.(*Config), res, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	data := steptest.CheckPresentation(t, pr)
	if n := len(steptest.Column(t, data["detrended"], "time_d")); n != res.Curve.Len() {
		t.Errorf("%d rows, want the %d kept points", n, res.Curve.Len())
	}
	if layerPoints(pr.Panels[1], "removed as a flare") != 0 {
		t.Error("flares drawn without the input light curve")
	}
	if res.count(robust.Flare) > 0 && !bytes.Contains([]byte(pr.Panels[1].Caption), []byte("cannot be shown")) {
		t.Errorf("the caption does not say the flares are missing: %q", pr.Panels[1].Caption)
	}
	// The input flux recovered as flux × trend is the input's to within rounding: one
	// division and one multiplication, each within half an ulp.
	d := data["detrended"]
	raw, tm := steptest.Column(t, d, "flux_as_read"), steptest.Column(t, d, "time_d")
	k := 0
	s := lc.Segments[0]
	for j := range s.Time {
		if m := res.Trends[0].Marks[j]; m != robust.Kept && m != robust.InTransit {
			continue
		}
		if tm[k] != s.Time[j] || math.Abs(raw[k]-s.Flux[j]) > 4e-16*math.Abs(s.Flux[j]) {
			t.Fatalf("point %d: (%v, %v), input (%v, %v)", j, tm[k], raw[k], s.Time[j], s.Flux[j])
		}
		k++
	}
}
