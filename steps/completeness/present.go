package completeness

import (
	"fmt"
	"math"

	"dipline/steps"
)

// Present draws the recovered share against period, one row of radii per series, and
// tabulates the map and the occurrence.
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	r, ok := art.(*Result)
	if !ok {
		return steps.Presentation{}, fmt.Errorf("completeness: cannot present %T", art)
	}
	return steps.Presentation{
		Panels: []steps.Panel{r.curvesPanel(), r.mapPanel(), r.planetsPanel()},
		Data:   []steps.Data{r.mapData(), r.searchData()},
	}, nil
}

// rows is the number of radius intervals, cols of period intervals.
func (r *Result) rows() int { return len(r.RadiusEdges) - 1 }
func (r *Result) cols() int { return len(r.PeriodEdges) - 1 }

// radiusWords names radius interval j: "k 0.012–0.017 (1.1–1.6 R⊕)".
func (r *Result) radiusWords(j int) string {
	lo, hi := r.RadiusEdges[j], r.RadiusEdges[j+1]
	s := fmt.Sprintf("k %.3g–%.3g", lo, hi)
	if r.Host.Radius > 0 {
		s += fmt.Sprintf(" (%.3g–%.3g R⊕)", r.earth(lo), r.earth(hi))
	}
	return s
}

func (r *Result) curvesPanel() steps.Panel {
	p := &steps.Plot{XLabel: "period (d)", YLabel: "share recovered", LogX: true, Data: "map"}
	for j := r.rows() - 1; j >= 0; j-- {
		l := steps.Layer{Label: r.radiusWords(j), Style: steps.ErrorBars}
		for i := 0; i < r.cols(); i++ {
			c := r.Cells[i*r.rows()+j]
			if math.IsNaN(c.Fraction) {
				continue
			}
			l.X = append(l.X, math.Sqrt(c.Cell.PeriodLo*c.Cell.PeriodHi))
			l.Y = append(l.Y, c.Fraction)
			l.YLo, l.YHi = append(l.YLo, c.Interval.Lower), append(l.YHi, c.Interval.Upper)
		}
		p.Layers = append(p.Layers, l)
	}
	for _, d := range r.Detections {
		p.VLines = append(p.VLines, steps.Mark{Value: d.Period, Label: d.Name})
	}
	p.HLines = []steps.Mark{{Value: 0.5, Label: "half"}}
	return steps.Panel{Title: "Share of injected planets recovered",
		Caption: fmt.Sprintf("Each point is one cell of the map at the middle of its periods: the share of its %d injected planets that the workflow's own detrend and search found again, with its 68 %% interval (Jeffreys); one series per band of radii. Vertical lines mark the workflow's planets.", r.PerCell),
		Plots:   []*steps.Plot{p}}
}

// mapPanel is the map as a table: radii down (largest first), periods across.
func (r *Result) mapPanel() steps.Panel {
	t := &steps.Table{Header: []string{"radius \\ period"}}
	for i := 0; i < r.cols(); i++ {
		t.Header = append(t.Header, fmt.Sprintf("%.3g–%.3g d", r.PeriodEdges[i], r.PeriodEdges[i+1]))
	}
	for j := r.rows() - 1; j >= 0; j-- {
		row := []string{r.radiusWords(j)}
		for i := 0; i < r.cols(); i++ {
			c := r.Cells[i*r.rows()+j]
			if math.IsNaN(c.Fraction) {
				row = append(row, "–")
				continue
			}
			row = append(row, fmt.Sprintf("%.0f %% (%.0f–%.0f); transits %.3g %%",
				100*c.Fraction, 100*c.Interval.Lower, 100*c.Interval.Upper, 100*c.TransitProbability))
		}
		t.Rows = append(t.Rows, row)
	}
	t.Notes = []string{
		"Each cell: the share recovered with its 68 % Jeffreys interval (Brown, Cai & DasGupta 2001), and the geometric probability of a full transit at its mean period.",
		fmt.Sprintf("Injected around %.3g g/cm³ (%s), limb darkening u1 %.2f, u2 %.2f (%s); each searched %s.",
			r.Host.Density, r.Host.DensityFrom, r.Host.U1, r.Host.U2, r.Host.LimbFrom, r.searchWords()),
	}
	if c := r.Check; c != nil {
		t.Notes = append(t.Notes, fmt.Sprintf("Of %d injections also searched over the whole range: %d recovered there, %d in the window; %d only there, %d only in the window.",
			c.Checked, c.Full, c.Windowed, c.OnlyFull, c.OnlyWindowed))
	}
	return steps.Panel{Title: "Completeness map", Table: t}
}

// planetsPanel places the workflow's planets and gives each cell's occurrence.
func (r *Result) planetsPanel() steps.Panel {
	t := &steps.Table{Header: []string{"planet", "period (d)", "radius ratio", "cell", "efficiency", "planets per star in the cell"}}
	for _, d := range r.Detections {
		cell, eff, occ := "outside the map", "–", "–"
		if d.Cell >= 0 {
			cell = r.cellWords(d.Cell)
			eff = fmt.Sprintf("%.3g", d.Efficiency)
			if o := r.Occurrence[d.Cell]; !math.IsNaN(o.Rate) {
				occ = fmt.Sprintf("%.3g (%.3g–%.3g)", o.Rate, o.Lower, o.Upper)
			}
		}
		t.Rows = append(t.Rows, []string{d.Name, fmt.Sprintf("%.5g", d.Period), fmt.Sprintf("%.4g", d.RadiusRatio), cell, eff, occ})
	}
	if len(t.Rows) == 0 {
		t.Rows = append(t.Rows, []string{"none given", "", "", "", "", ""})
	}
	t.Notes = []string{
		"Efficiency: the cell's recovered share times the planet's own probability of a full transit. Planets per star: Σ 1/efficiency over the cell's planets for this one star, with Gehrels' (1986) single-sided S = 1 limits on the count.",
		"Inverse efficiency is biased where the efficiency is low (Foreman-Mackey, Hogg & Morton 2014); one star's estimate is loose, and a survey's merge adds the stars up.",
	}
	return steps.Panel{Title: "The planets on the map", Table: t}
}

// searchData is every search of an injected planet, one row each: its cell (from 1) and
// draw, the planet, the window searched (0: the whole range), and what became of it.
func (r *Result) searchData() steps.Data {
	names := []string{"cell", "draw", "period_d", "epoch_d", "radius_ratio", "impact", "window",
		"recovered", "harmonic", "found_period_d", "found_epoch_d", "sde"}
	cols := make([][]float64, len(names))
	flag := func(b bool) float64 {
		if b {
			return 1
		}
		return 0
	}
	for _, s := range r.Searches {
		inj := s.Injection
		for k, v := range []float64{float64(s.Cell + 1), float64(s.Index), inj.Period, inj.Epoch, inj.RadiusRatio, inj.Impact,
			s.Window, flag(s.Recovered), flag(s.Harmonic), s.FoundPeriod, s.FoundEpoch, s.SDE} {
			cols[k] = append(cols[k], v)
		}
	}
	return dataOf("injections", names, cols)
}

// dataOf names the columns cols.
func dataOf(name string, names []string, cols [][]float64) steps.Data {
	d := steps.Data{Name: name}
	for k, n := range names {
		d.Series = append(d.Series, steps.Series{Name: n, Values: cols[k]})
	}
	return d
}

// mapData is every cell's numbers, one row per cell.
func (r *Result) mapData() steps.Data {
	names := []string{"period_lo_d", "period_hi_d", "radius_ratio_lo", "radius_ratio_hi", "radius_lo_earth", "radius_hi_earth",
		"injected", "recovered", "harmonic", "share", "share_lo", "share_hi", "transit_probability", "efficiency",
		"detections", "occurrence", "occurrence_lo", "occurrence_hi"}
	cols := make([][]float64, len(names))
	for i, c := range r.Cells {
		o := r.Occurrence[i]
		for k, v := range []float64{c.Cell.PeriodLo, c.Cell.PeriodHi, c.Cell.RadiusLo, c.Cell.RadiusHi, r.earth(c.Cell.RadiusLo), r.earth(c.Cell.RadiusHi),
			float64(c.Injected), float64(c.Recovered), float64(c.Harmonic), c.Fraction, c.Interval.Lower, c.Interval.Upper,
			c.TransitProbability, o.Efficiency, float64(o.Detections), o.Rate, o.Lower, o.Upper} {
			cols[k] = append(cols[k], v)
		}
	}
	return dataOf("map", names, cols)
}
