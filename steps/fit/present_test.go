package fit

import (
	"math"
	"reflect"
	"regexp"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/transit"
)

// presented is a short fit of two invented planets (TestTwoPlanetsAreNamedInSignalOrder's
// light curve: 12 days at 30 min, 500 ppm) and what it shows.
type presented struct {
	art  *Artifact
	cfg  any
	in   steps.Inputs
	pres steps.Presentation
}

func presentTwoPlanets(t *testing.T) presented {
	t.Helper()
	second := truth{period: 4.7, t0: 2.2, k: 0.06, b: 0.2, rho: hot.rho, q1: hot.q1, q2: hot.q2}
	lc := synthetic(hot, 12, 500e-6, 7)
	two := synthetic(second, 12, 0, 0)
	for i := range lc.Segments[0].Flux {
		lc.Segments[0].Flux[i] += two.Segments[0].Flux[i] - 1
	}
	sigs := []signals.Signal{start(hot), start(second)}
	set := map[string]any{"light_curve": "detrend.x", "signals": "search.x", "max_steps": 200}
	art, _ := runKind(t, set, lc, sigs, 1, 5)
	cfg, err := steptest.Config(New(), set)
	if err != nil {
		t.Fatal(err)
	}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {searchArtifact{sigs}}}}
	p, err := steps.PresentationOf(New(), cfg, art, in)
	if err != nil {
		t.Fatal(err)
	}
	return presented{art: art, cfg: cfg, in: in, pres: p}
}

// dataOf returns the named Data's columns by name, failing the test when it is missing.
func dataOf(t *testing.T, p steps.Presentation, name string) map[string][]float64 {
	t.Helper()
	for _, d := range p.Data {
		if d.Name == name {
			out := map[string][]float64{}
			for _, s := range d.Series {
				out[s.Name] = s.Values
			}
			return out
		}
	}
	t.Fatalf("no data %q", name)
	return nil
}

func TestPresentShowsTheFit(t *testing.T) {
	pr := presentTwoPlanets(t)
	a, p := pr.art, pr.pres

	t.Run("each planet has its folded transit, in planet order", func(t *testing.T) {
		for j, name := range []string{"b", "c"} {
			if j >= len(p.Panels) || !strings.HasPrefix(p.Panels[j].Title, "Planet "+name+":") {
				t.Fatalf("panel %d is not planet %s's fold", j, name)
			}
			if len(p.Panels[j].Plots) != 2 || p.Panels[j].Columns != 1 {
				t.Errorf("planet %s: %d plots in %d columns, want the fold above its residuals", name, len(p.Panels[j].Plots), p.Panels[j].Columns)
			}
			dataOf(t, p, "fold_"+name)
			dataOf(t, p, "fold_"+name+"_binned")
			dataOf(t, p, "fold_"+name+"_model")
		}
	})

	t.Run("the band encloses its median, on the grid and at every point", func(t *testing.T) {
		for _, name := range []string{"fold_b_model", "fold_b", "fold_c_model", "fold_c"} {
			d := dataOf(t, p, name)
			for i := range d["model_median"] {
				if !(d["model_lo"][i] <= d["model_median"][i] && d["model_median"][i] <= d["model_hi"][i]) {
					t.Fatalf("%s row %d: %v ≤ %v ≤ %v fails", name, i, d["model_lo"][i], d["model_median"][i], d["model_hi"][i])
				}
			}
		}
	})

	t.Run("the model's depth at mid-transit is k² deepened by limb darkening", func(t *testing.T) {
		// A small planet over the disc at μ = √(1 − b²) dims the star by about k²·I(μ)/⟨I⟩
		// (Mandel & Agol 2002 §4): at least k² where I(μ) ≥ ⟨I⟩ (b = 0.4 and 0.2 here, with
		// u1 ≈ 0.4), at most k²·I(1)/⟨I⟩ = k²/(1 − u1/3 − u2/6) with the planet over the disc's
		// centre. Averaging over the 30-min exposure rounds the bottom a little, so the
		// lower bound is 0.95 k².
		_, q1, _ := quantiles(a.Column("q1"))
		_, q2, _ := quantiles(a.Column("q2"))
		u1, u2 := transit.QuadraticFromKipping(q1, q2)
		for _, name := range []string{"b", "c"} {
			_, k, _ := quantiles(a.Column(name + ".k"))
			d := dataOf(t, p, "fold_"+name+"_model")
			if d["phase_h"][gridHalf] != 0 {
				t.Fatalf("grid point %d is at %v h, not mid-transit", gridHalf, d["phase_h"][gridHalf])
			}
			depth := 1 - d["model_median"][gridHalf]
			lo, hi := 0.95*k*k, k*k/(1-u1/3-u2/6)
			if !(depth >= lo && depth <= hi) {
				t.Errorf("planet %s: depth %.5g at mid-transit, want %.5g to %.5g (k = %.4g)", name, depth, lo, hi, k)
			}
		}
	})

	t.Run("the bins are a tenth of the total duration wide, or wider for sparse points, and count every point of a kept bin", func(t *testing.T) {
		sigs := pr.in.Refs["signals"][0].(signals.Source).Signals()
		for j, name := range []string{"b", "c"} {
			checkBins(t, a, p, name, sigs[j])
		}
	})

	t.Run("the pairs grid is N by N, empty above the diagonal, with histograms counting every written draw", func(t *testing.T) {
		var grid *steps.Panel
		for i := range p.Panels {
			if p.Panels[i].Columns > 1 {
				grid = &p.Panels[i]
			}
		}
		if grid == nil {
			t.Fatal("no grid panel")
		}
		// Two planets' k and b, the density, then b's period and t0 and c's period: eight.
		N := grid.Columns
		if N != maxPairs || len(grid.Plots) != N*N {
			t.Fatalf("%d columns and %d plots, want %d and %d", N, len(grid.Plots), maxPairs, maxPairs*maxPairs)
		}
		if !strings.Contains(grid.Caption, "c.t0") {
			t.Errorf("the caption does not name the parameter left out: %q", grid.Caption)
		}
		rows := len(dataOf(t, p, "posterior")["b_period_d"])
		if n := len(a.Samples) / len(a.Names); rows != min(n, maxPosteriorRows) {
			t.Errorf("%d posterior rows written, want %d", rows, min(n, maxPosteriorRows))
		}
		for i := 0; i < N; i++ {
			for j := 0; j < N; j++ {
				pl := grid.Plots[i*N+j]
				switch {
				case j > i && pl != nil:
					t.Errorf("cell (%d, %d) above the diagonal is drawn", i, j)
				case j == i:
					if pl == nil || len(pl.Layers) != 1 || pl.Layers[0].Style != steps.Histogram {
						t.Fatalf("cell (%d, %d) is not a histogram", i, j)
					}
					s := 0.0
					for _, c := range pl.Layers[0].Y {
						s += c
					}
					if int(s) != rows {
						t.Errorf("histogram %d counts %v draws, want %d", i, s, rows)
					}
				case j < i:
					// 28 scatters share the grid's 20,000 points: 714 draws each.
					if pl == nil || len(pl.Layers) != 1 || pl.Layers[0].Style != steps.Points || len(pl.Layers[0].X) > maxScatterTotal/28 {
						t.Errorf("cell (%d, %d) is not a scatter of at most %d draws", i, j, maxScatterTotal/28)
					}
				}
			}
		}
	})

	t.Run("O−C is the time minus the linear ephemeris, in minutes", func(t *testing.T) {
		e := a.Times[0].Ephemeris
		d := dataOf(t, p, "transit_times_b")
		if len(d["epoch"]) < 2 {
			t.Fatalf("%d timed transits", len(d["epoch"]))
		}
		for i := range d["epoch"] {
			want := (d["time_d"][i] - (e.T0 + d["epoch"][i]*e.Period)) * minutesPerDay
			if math.Abs(d["o_minus_c_min"][i]-want) > 1e-6 {
				t.Errorf("row %d: O−C %.9g min, want %.9g", i, d["o_minus_c_min"][i], want)
			}
		}
		// One row by hand from the artifact's own numbers.
		r, tt := e.Rows[0], a.Times[0].Times
		var measured float64
		for _, x := range tt {
			if x.Epoch == r.Epoch {
				measured = x.Time
			}
		}
		hand := (measured - e.T0 - float64(r.Epoch)*e.Period) * 1440
		if math.Abs(d["o_minus_c_min"][0]-hand) > 1e-6 {
			t.Errorf("first row %.9g min, by hand %.9g", d["o_minus_c_min"][0], hand)
		}
	})

	t.Run("the diagnostics table has a row per sampled parameter", func(t *testing.T) {
		last := p.Panels[len(p.Panels)-1]
		if last.Table == nil || len(last.Table.Rows) != a.Sampled {
			t.Fatalf("last panel %q has no table of %d rows", last.Title, a.Sampled)
		}
		for _, r := range last.Table.Rows {
			if len(r) != len(last.Table.Header) {
				t.Errorf("row %q does not match the header", r)
			}
		}
	})

	t.Run("every plot draws equal lengths from data that exist", func(t *testing.T) {
		names := map[string]bool{}
		snake := regexp.MustCompile(`^[a-z0-9]+(_[a-z0-9]+)*$`)
		for _, d := range p.Data {
			if names[d.Name] {
				t.Errorf("data %q twice", d.Name)
			}
			names[d.Name] = true
			seen := map[string]bool{}
			for _, s := range d.Series {
				if !snake.MatchString(s.Name) || seen[s.Name] {
					t.Errorf("data %q: column %q is not a unique snake-case name", d.Name, s.Name)
				}
				seen[s.Name] = true
				if len(s.Values) != len(d.Series[0].Values) {
					t.Errorf("data %q: column %q has %d values, the first %d", d.Name, s.Name, len(s.Values), len(d.Series[0].Values))
				}
			}
		}
		for _, pn := range p.Panels {
			if len(pn.Plots) == 0 && pn.Table == nil {
				t.Errorf("panel %q shows nothing", pn.Title)
			}
			for _, pl := range pn.Plots {
				if pl == nil {
					continue
				}
				if !names[pl.Data] {
					t.Errorf("panel %q: plot reads data %q, which is not given", pn.Title, pl.Data)
				}
				for _, l := range pl.Layers {
					if len(l.X) != len(l.Y) || (l.YLo != nil && len(l.YLo) != len(l.X)) || (l.YHi != nil && len(l.YHi) != len(l.X)) {
						t.Errorf("panel %q, layer %q: lengths %d, %d, %d, %d", pn.Title, l.Label, len(l.X), len(l.Y), len(l.YLo), len(l.YHi))
					}
					if (l.Style == steps.Band || l.Style == steps.ErrorBars) && (len(l.YLo) != len(l.X) || len(l.YHi) != len(l.X)) {
						t.Errorf("panel %q, layer %q lacks its ends", pn.Title, l.Label)
					}
				}
			}
		}
	})

	t.Run("the same result shows the same, also when read back", func(t *testing.T) {
		again, err := steps.PresentationOf(New(), pr.cfg, a, pr.in)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(again, p) {
			t.Error("two calls differ")
		}
		back, err := Decode(a.Encode())
		if err != nil {
			t.Fatal(err)
		}
		decoded, err := steps.PresentationOf(New(), pr.cfg, back, pr.in)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(decoded, p) {
			t.Error("the decoded result shows something else")
		}
	})

	t.Run("another light curve is refused", func(t *testing.T) {
		lc := synthetic(hot, 9, 500e-6, 7)
		in := steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {curveArtifact{lc}}, "signals": pr.in.Refs["signals"]}}
		if _, err := steps.PresentationOf(New(), pr.cfg, a, in); err == nil {
			t.Error("no error")
		}
	})
}

func TestTooManyPointsAreShownBinnedOnly(t *testing.T) {
	for _, n := range []int{maxDrawnPoints, maxDrawnPoints + 1} {
		f := folded{planet: "b", window: 2.5, binWidth: 0.2}
		for i := 0; i < n; i++ {
			f.phase = append(f.phase, float64(i%100)/10-5)
			f.flux = append(f.flux, 1)
			f.resid = append(f.resid, 0)
		}
		f.bins = binPhases(f.phase, f.flux, f.resid, f.binWidth)
		points := 0
		for _, pl := range f.panel().Plots {
			for _, l := range pl.Layers {
				if l.Style == steps.Points {
					points++
				}
			}
		}
		if want := map[bool]int{true: 2, false: 0}[n <= maxDrawnPoints]; points != want {
			t.Errorf("%d points: %d layers of single points, want %d", n, points, want)
		}
	}
}

func TestColumnNamesAreSnakeCaseWithUnits(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"b.period", "b_period_d"}, {"c.t0", "c_t0_d"}, {"b.k", "b_k"}, {"b.t14", "b_t14_d"},
		{"b.omega", "b_omega_deg"}, {"log10_star_density", "log10_star_density_g_cm3"},
		{"star_density", "star_density_g_cm3"}, {"q1[Survey-Red]", "q1_survey_red"},
		{"segment2.ln_jitter", "segment2_ln_jitter"}, {"b.a_over_rstar", "b_a_over_rstar"},
	} {
		if got := columnName(c.in); got != c.want {
			t.Errorf("%q gives %q, want %q", c.in, got, c.want)
		}
	}
}

// checkBins checks planet name's bins: their width (a tenth of the median T14 in hours, or
// 2·minBinPoints times the mean spacing of the points over their phase span, whichever is
// wider), their centres on whole widths, and their counts and means against the points.
func checkBins(t *testing.T, a *Artifact, p steps.Presentation, name string, sig signals.Signal) {
	t.Helper()
	_, t14, _ := quantiles(a.Column(name + ".t14"))
	pts, bins := dataOf(t, p, "fold_"+name), dataOf(t, p, "fold_"+name+"_binned")
	n := len(pts["phase_h"])
	var reach float64
	for _, ph := range pts["phase_h"] {
		reach = math.Max(reach, math.Abs(ph))
	}
	reach = math.Max(reach, a.Window*sig.Duration*hoursPerDay)
	width := math.Max(t14*hoursPerDay/10, 2*minBinPoints*(2*reach)/float64(n))
	count := map[int]int{}
	sum := map[int]float64{}
	for i, ph := range pts["phase_h"] {
		k := int(math.Round(ph / width))
		count[k]++
		sum[k] += pts["flux"][i]
	}
	want := 0
	for _, c := range count {
		if c >= minBinPoints {
			want++
		}
	}
	if len(bins["phase_h"]) != want {
		t.Errorf("%d bins, want %d (bins of %.4g h with at least %d points)", len(bins["phase_h"]), want, width, minBinPoints)
	}
	for i, ph := range bins["phase_h"] {
		k := int(math.Round(ph / width))
		if math.Abs(ph-float64(k)*width) > 1e-9 {
			t.Errorf("bin %d centred at %v h, not a whole number of %v-h widths", i, ph, width)
		}
		if int(bins["points"][i]) != count[k] {
			t.Errorf("bin %d holds %v points, want %d", i, bins["points"][i], count[k])
		}
		if m := sum[k] / float64(count[k]); math.Abs(bins["flux"][i]-m) > 1e-12 {
			t.Errorf("bin %d mean %v, want %v", i, bins["flux"][i], m)
		}
	}
}
