package star

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// presentStar runs a Stefan–Boltzmann star with spread on every input and presents it.
func presentStar(t *testing.T, draws int) (*Artifact, steps.Presentation) {
	t.Helper()
	a, _ := mustRun(t, map[string]any{"method": "stefan-boltzmann", "luminosity": meas(1, 0.05, "L_sun"), "teff": meas(5772, 60, "K"),
		"mass": meas(1, 0.04, "M_sun"), "distance": meas(20, 0.3, "pc"), "draws": draws}, steps.Inputs{}, 7)
	p, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	return a, p
}

func TestStarTableRoundsTheDrawsAndSaysWhereEachCameFrom(t *testing.T) {
	a, p := presentStar(t, 20000)
	tab := p.Panels[0].Table
	if tab == nil {
		t.Fatal("the first panel is not a table")
	}
	byName := map[string][]string{}
	for _, r := range tab.Rows {
		byName[r[0]] = r
	}
	for _, c := range []struct {
		row    string
		draws  []float64
		source string
	}{
		{"Radius", a.Star.Radius, a.Basis.Radius},
		{"Mass", a.Star.Mass, "as given"},
		{"Effective temperature", a.Star.Teff, "as given"},
		{"Mean density", a.Star.Density, "from the mass and radius draws"},
		{"Distance", a.Star.Distance, "as given"},
	} {
		r, ok := byName[c.row]
		if !ok {
			t.Errorf("no row %q", c.row)
			continue
		}
		if want := paper.FromDraws(c.draws, paper.Bounds{}).Text(); r[1] != want {
			t.Errorf("%s: %q, want %q", c.row, r[1], want)
		}
		if r[3] != c.source {
			t.Errorf("%s comes from %q, want %q", c.row, r[3], c.source)
		}
	}
	// A mass of 1 ± 0.04 M☉ drawn 20,000 times: the median within 0.001 of 1 and each error
	// within 3 % of 0.04, so it prints 1.000 ± 0.040 (two figures of the error).
	if got := byName["Mass"][1]; got != "1.000 ± 0.040" {
		t.Errorf("mass prints %q, want \"1.000 ± 0.040\"", got)
	}
	if !strings.Contains(byName["Radius"][3], "Stefan–Boltzmann") {
		t.Errorf("radius source %q", byName["Radius"][3])
	}
}

func TestStarHistogramsCountEveryDrawInRange(t *testing.T) {
	a, p := presentStar(t, 20000)
	if len(p.Panels) != 2 || len(p.Panels[1].Plots) != 2 {
		t.Fatalf("want a table and a panel of two histograms, got %d panels", len(p.Panels))
	}
	for i, draws := range [][]float64{a.Star.Radius, a.Star.Mass} {
		pl := p.Panels[1].Plots[i]
		l := pl.Layers[0]
		if l.Style != steps.Histogram || len(l.X) != histogramBins {
			t.Fatalf("plot %d: style %v with %d bars", i, l.Style, len(l.X))
		}
		sum := 0.0
		for _, c := range l.Y {
			sum += c
		}
		// 0.1 % of the draws lie below the range and 0.1 % above: 99.8 % are counted (to
		// within the interpolation of the two quantiles, a draw or two).
		if want := 0.998 * float64(len(draws)); math.Abs(sum-want) > 3 {
			t.Errorf("plot %d counts %v draws, want %v", i, sum, want)
		}
	}
}

func TestStarDrawsAreThinnedToFiveThousandRows(t *testing.T) {
	for _, c := range []struct {
		draws, rows int
	}{
		{20000, 5000}, // stride 4
		{12001, 4001}, // stride 3: draws 0, 3, … 12000
		{3000, 3000},  // kept whole
	} {
		a, p := presentStar(t, c.draws)
		if len(p.Data) != 1 || p.Data[0].Name != "star_draws" {
			t.Fatalf("data %+v", p.Data)
		}
		for _, s := range p.Data[0].Series {
			if len(s.Values) != c.rows {
				t.Errorf("%d draws: column %s has %d rows, want %d", c.draws, s.Name, len(s.Values), c.rows)
			}
		}
		stride := (c.draws + maxDataRows - 1) / maxDataRows
		if got := p.Data[0].Series[0].Values[1]; got != a.Star.Radius[stride] {
			t.Errorf("%d draws: second row's radius %v, want draw %d, %v", c.draws, got, stride, a.Star.Radius[stride])
		}
	}
}

func TestBinCountsOfIdenticalDraws(t *testing.T) {
	x, y := binCounts([]float64{2, 2, 2}, 2, 2, histogramBins)
	if len(x) != 1 || x[0] != 2 || y[0] != 3 {
		t.Errorf("got %v %v, want one bar of 3 at 2", x, y)
	}
}
