package vet

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// What the vet step shows: one table with a row per check of each signal (the signal, the
// check in plain words, the verdict, the measured numbers and the threshold as the check
// states them, and its reason), then one small plot per signal of its odd and even depths
// with their errors. The secondary-eclipse search keeps only its best dips, not the scan
// over phase, so it has no plot.

// measuredFigures names, per test, the figures (their last part) that the table shows as
// the measured value; a test not listed (or none of whose listed figures it has) shows all
// its figures.
var measuredFigures = map[string][]string{
	"odd_even":       {"sigma", "even_depth", "odd_depth"},
	"secondary":      {"significance", "threshold", "anywhere_significance", "anywhere_threshold", "albedo"},
	"shape":          {"grazing_probability", "ingress_fraction", "ingress_fraction_low"},
	"density":        {"ratio", "sigma"},
	"search_density": {"ratio", "star_duration", "shortest_box", "longest_box"},
	"blend":          {"ingress_ratio", "max_delta_mag"},
	"depth":          {"segments_p_value", "bands_p_value"},
	"radius":         {"radius_jup"},
	"star_period":    {"nearest", "ratio", "tolerance"},
}

// figureWords are plainer words for a few figure names; the others are shown as named,
// "_" read as a space.
var figureWords = map[string]string{
	"sigma":                 "apart by (σ)",
	"significance":          "significance (σ)",
	"threshold":             "needed (σ)",
	"anywhere_threshold":    "anywhere needed (σ)",
	"anywhere_significance": "anywhere significance (σ)",
	"segments_p_value":      "p across segments",
	"bands_p_value":         "p across bands",
}

// measured writes a test's measured numbers: "apart by (σ) 1.2; even depth 980 ± 40 ppm".
func measured(signal string, t Test) string {
	prefix := signal + "." + t.Name + "."
	byName := map[string]steps.Figure{}
	var order []string
	for _, f := range t.Figures {
		short := strings.TrimPrefix(f.Name, prefix)
		byName[short] = f
		order = append(order, short)
	}
	show := func(names []string) []string {
		var parts []string
		for _, name := range names {
			f, ok := byName[name]
			if !ok {
				continue
			}
			words, ok := figureWords[name]
			if !ok {
				words = strings.ReplaceAll(name, "_", " ")
			}
			parts = append(parts, words+" "+figureText(f))
		}
		return parts
	}
	parts := show(measuredFigures[t.Name])
	if len(parts) == 0 { // a test not listed, or whose figures were renamed: all of them
		parts = show(order)
	}
	if len(parts) == 0 {
		return "—"
	}
	return strings.Join(parts, "; ")
}

// figureText writes a figure's value, with its σ rounded by paper when it has one and to
// three significant figures when not, and its unit.
func figureText(f steps.Figure) string {
	var s string
	switch {
	case math.IsNaN(f.Value):
		s = "—"
	case f.Sigma > 0:
		s = paper.Symmetric(f.Value, f.Sigma).Text()
	default:
		s = strings.Replace(paper.SigFigs(f.Value, 3), "-", "−", 1)
	}
	if f.Unit != "" {
		s += " " + f.Unit
	}
	return s
}

// subject names a signal in the table: "signal1 (planet b)".
func (s Signal) subject() string {
	if s.Planet != "" {
		return fmt.Sprintf("%s (planet %s)", s.Name, s.Planet)
	}
	return s.Name
}

// Present shows the checks' table and the odd/even plots.
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok || a == nil {
		return steps.Presentation{}, fmt.Errorf("vet: presenting a %T, not a vet result", art)
	}
	t := &steps.Table{Header: []string{"Signal", "Check", "Verdict", "Measured", "Threshold and its source", "Reason"}}
	for _, s := range a.Signals {
		for _, test := range s.Tests {
			t.Rows = append(t.Rows, []string{s.subject(), title(test.Name), test.Verdict, measured(s.Name, test), test.Threshold, test.Reason})
		}
		if s.FitNote != "" {
			t.Notes = append(t.Notes, s.Name+": "+s.FitNote)
		}
		if s.Single != "" {
			t.Notes = append(t.Notes, s.Name+": "+s.Single+".")
		}
		if !math.IsNaN(s.NoiseScale) {
			t.Notes = append(t.Notes, fmt.Sprintf("%s: the box fits' errors are the stated ones times %.3g (the scatter outside the transits over the stated errors).", s.Name, s.NoiseScale))
		}
	}
	p := steps.Presentation{Panels: []steps.Panel{{
		Title: "Checks of each signal",
		Caption: "One row per check: \"agree\" says the data agree with a planet transiting the target, \"caution\" that something is worth a look, " +
			"\"disagree\" that the data disagree with it, and \"not run\" that the check could not run (its reason says why). " +
			"Vetting supports, and does not replace, a statistical validation of a planet: passing every check does not make a signal a planet; the judgement is the scientist's.",
		Table: t,
	}}}
	if panel, data, ok := a.oddEvenPanel(); ok {
		p.Panels = append(p.Panels, panel)
		p.Data = append(p.Data, data)
	}
	return p, nil
}

// oddEvenPanel plots, per signal whose odd/even check ran, the even and odd box depths
// with their errors and their weighted mean; the numbers go to the data "odd_even" (signal
// number in the table's order, parity 0 even and 1 odd, depth and error in ppm).
func (a *Artifact) oddEvenPanel() (steps.Panel, steps.Data, bool) {
	panel := steps.Panel{Title: "Odd and even depths",
		Caption: "Box depths of the even- and odd-numbered transits (transit 0 at the signal's epoch) with their one-sigma errors, as the odd/even check measured them; the line is their weighted mean. Depths that differ by several errors are what a binary's two eclipses at twice the period give."}
	var num, parity, depth, sigma []float64
	for i, s := range a.Signals {
		var even, odd *steps.Figure
		for _, test := range s.Tests {
			if test.Name != "odd_even" || test.Verdict == NotRun {
				continue
			}
			for k := range test.Figures {
				switch strings.TrimPrefix(test.Figures[k].Name, s.Name+".odd_even.") {
				case "even_depth":
					even = &test.Figures[k]
				case "odd_depth":
					odd = &test.Figures[k]
				}
			}
		}
		if even == nil || odd == nil {
			continue
		}
		d := []float64{even.Value, odd.Value}
		e := []float64{even.Sigma, odd.Sigma}
		pl := &steps.Plot{Title: s.subject(), XLabel: "transit parity (0 even, 1 odd)", YLabel: "box depth (ppm)", Data: "odd_even",
			Layers: []steps.Layer{{Label: "depth", Style: steps.ErrorBars, X: []float64{0, 1}, Y: d,
				YLo: []float64{d[0] - e[0], d[1] - e[1]}, YHi: []float64{d[0] + e[0], d[1] + e[1]}}}}
		if e[0] > 0 && e[1] > 0 {
			w0, w1 := 1/(e[0]*e[0]), 1/(e[1]*e[1])
			pl.HLines = []steps.Mark{{Value: (w0*d[0] + w1*d[1]) / (w0 + w1), Label: "weighted mean"}}
		}
		panel.Plots = append(panel.Plots, pl)
		for k := range 2 {
			num = append(num, float64(i+1))
			parity = append(parity, float64(k))
			depth = append(depth, d[k])
			sigma = append(sigma, e[k])
		}
	}
	if len(panel.Plots) == 0 {
		return steps.Panel{}, steps.Data{}, false
	}
	panel.Columns = min(len(panel.Plots), 3)
	data := steps.Data{Name: "odd_even", Series: []steps.Series{
		{Name: "signal", Values: num}, {Name: "parity", Values: parity},
		{Name: "depth_ppm", Values: depth}, {Name: "depth_err_ppm", Values: sigma},
	}}
	return panel, data, true
}
