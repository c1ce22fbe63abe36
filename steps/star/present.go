package star

import (
	"fmt"
	"slices"

	"dipline/steps"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/sampler"
)

// What the star step shows: a table of the star's quantities (median and errors of the
// draws, rounded by steps/internal/paper, and how each was obtained), histograms of the
// radius and mass draws, and the draws themselves thinned to at most maxDataRows rows
// (star_draws.csv).

// maxDataRows bounds the rows of star_draws: enough to redraw any histogram or correlation
// by eye, small enough for a spreadsheet.
const maxDataRows = 5000

// histogramBins is the number of bars of each histogram, over the 0.1st to 99.9th
// percentile of the draws (the extreme thousandths would stretch the axis for a few
// draws): about 600 draws a bar at the default 20,000.
const histogramBins = 30

// starRow is one quantity of the star's table and data.
type starRow struct {
	words, unit, column, source string
	draws                       []float64
}

// rows lists the quantities the method gave, in table order.
func (a *Artifact) rows() []starRow {
	s, b := a.Star, a.Basis
	rel := "from the mass and radius draws"
	absK := "the star's own light (companions measured in Ks removed)"
	if s.Relation != "" {
		absK += "; radius relation " + s.Relation
	}
	all := []starRow{
		{"Radius", "R☉", "radius_rsun", b.Radius, s.Radius},
		{"Mass", "M☉", "mass_msun", b.Mass, s.Mass},
		{"Mean density", "g/cm³", "density_gcm3", rel, s.Density},
		{"Surface gravity log g", "dex (cgs)", "logg_dex", rel, s.LogG},
		{"Effective temperature", "K", "teff_k", b.Teff, s.Teff},
		{"Luminosity", "L☉", "luminosity_lsun", b.Luminosity, s.Luminosity},
		{"Distance", "pc", "distance_pc", b.Distance, s.Distance},
		{"Absolute Ks magnitude", "mag", "abs_ks_mag", absK, s.MagK},
	}
	var out []starRow
	for _, r := range all {
		if r.draws != nil {
			if r.source == "" {
				r.source = "—"
			}
			out = append(out, r)
		}
	}
	return out
}

// Present shows the star's table, the radius and mass histograms and the thinned draws.
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok || a == nil || a.Star == nil {
		return steps.Presentation{}, fmt.Errorf("star: presenting a %T, not a star result", art)
	}
	rows := a.rows()
	t := &steps.Table{Header: []string{"Quantity", "Value", "Unit", "How it was obtained"}}
	for _, r := range rows {
		t.Rows = append(t.Rows, []string{r.words, paper.FromDraws(r.draws, paper.Bounds{}).Text(), r.unit, r.source})
	}
	bands := make([]string, 0, len(a.Star.Mags))
	for k := range a.Star.Mags {
		bands = append(bands, k)
	}
	slices.Sort(bands)
	for _, k := range bands {
		t.Rows = append(t.Rows, []string{"Apparent magnitude " + k, paper.SigFigs(a.Star.Mags[k], 4), "mag", "as catalogued, carried for the spectroscopy metrics (no error kept)"})
	}
	t.Notes = []string{
		fmt.Sprintf("Method: %s; %d joint draws, so correlations between the quantities are kept.", a.Method, a.Star.Len()),
		"Values are the median of the draws with the distances to their 15.9th and 84.1st percentiles, rounded to two significant figures of the smaller error.",
	}
	p := steps.Presentation{Panels: []steps.Panel{{
		Title:   "Host star",
		Caption: "The star's quantities from its draws, and where each came from.",
		Table:   t,
	}}}
	hist := &steps.Panel{Title: "Radius and mass draws", Columns: 2,
		Caption: fmt.Sprintf("Histograms of the star's radius and mass draws (%d bars over the 0.1st to 99.9th percentile), the median and the 15.9th and 84.1st percentiles marked.", histogramBins)}
	for _, r := range rows[:2] { // radius and mass, always present
		hist.Plots = append(hist.Plots, histogram(r))
	}
	p.Panels = append(p.Panels, *hist)
	p.Data = []steps.Data{a.thinned(rows)}
	return p, nil
}

// histogram bins a quantity's draws.
func histogram(r starRow) *steps.Plot {
	s := slices.Clone(r.draws)
	slices.Sort(s)
	lo, hi := sampler.Quantile(s, 0.001), sampler.Quantile(s, 0.999)
	x, y := binCounts(s, lo, hi, histogramBins)
	v := paper.FromDraws(s, paper.Bounds{})
	return &steps.Plot{
		Title: r.words, XLabel: r.words + " (" + r.unit + ")", YLabel: "draws per bar",
		Layers: []steps.Layer{{Label: r.words, Style: steps.Histogram, X: x, Y: y}},
		VLines: []steps.Mark{
			{Value: v.Median - v.Lower, Label: "15.9 %"},
			{Value: v.Median, Label: "median"},
			{Value: v.Median + v.Upper, Label: "84.1 %"},
		},
		Data: "star_draws",
	}
}

// binCounts counts the sorted draws s in n equal bins from lo to hi (draws outside left
// out) and returns the bins' centres and counts; one bin at lo when hi ≤ lo (every draw
// alike).
func binCounts(s []float64, lo, hi float64, n int) (centres, counts []float64) {
	if !(hi > lo) {
		c := 0.0
		for _, x := range s {
			if x == lo {
				c++
			}
		}
		return []float64{lo}, []float64{c}
	}
	w := (hi - lo) / float64(n)
	centres, counts = make([]float64, n), make([]float64, n)
	for i := range centres {
		centres[i] = lo + (float64(i)+0.5)*w
	}
	for _, x := range s {
		if x < lo || x > hi {
			continue
		}
		counts[min(int((x-lo)/w), n-1)]++
	}
	return centres, counts
}

// thinned returns the draws as data, every k-th draw from the first, k the smallest stride
// that leaves at most maxDataRows rows; each row is one joint draw.
func (a *Artifact) thinned(rows []starRow) steps.Data {
	n := a.Star.Len()
	stride := (n + maxDataRows - 1) / maxDataRows
	d := steps.Data{Name: "star_draws"}
	for _, r := range rows {
		col := steps.Series{Name: r.column}
		for i := 0; i < n; i += stride {
			col.Values = append(col.Values, r.draws[i])
		}
		d.Series = append(d.Series, col)
	}
	return d
}
