package dilution

import (
	"fmt"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// What the dilution step shows: one table per hypothesis (the planet on the target, then on
// each companion) with the flux ratio, the radius-correction factor and, for a companion,
// its radius over the target's, each the median of the draws with the distances to their
// 15.9th and 84.1st percentiles, rounded by steps/internal/paper.

// Present shows a table per host hypothesis.
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	r, ok := art.(*Result)
	if !ok || r == nil {
		return steps.Presentation{}, fmt.Errorf("dilution: presenting a %T, not a dilution result", art)
	}
	var p steps.Presentation
	for k, h := range r.Hypotheses {
		p.Panels = append(p.Panels, r.hypothesisPanel(k, h.Host))
	}
	return p, nil
}

// hypothesisPanel is the table of hypothesis k.
func (r *Result) hypothesisPanel(k int, host string) steps.Panel {
	h := r.Hypotheses[k]
	on := "the target"
	if k > 0 {
		on = host
	}
	t := &steps.Table{Header: []string{"Quantity", "Value", "What it is"}}
	flux := paper.FromDraws(h.FluxRatio, paper.Bounds{}).Text()
	if r.AlreadyCorrected {
		flux = "0"
	}
	t.Rows = append(t.Rows, []string{"Flux ratio", flux,
		fmt.Sprintf("light of every other star over that of %s, in band %s; the observed depth is the true one over 1 + this", on, r.Band)})
	factor := paper.FromDraws(RadiusFactor(h), paper.Bounds{}).Text()
	if h.RadiusScale == nil {
		t.Rows = append(t.Rows, []string{"Flux factor √(1 + flux ratio)", factor,
			"the radius factor were the host the target's size; no radius for it: " + r.RadiusSource[k]})
	} else {
		t.Rows = append(t.Rows, []string{"Radius correction factor", factor,
			fmt.Sprintf("true planet radius on %s over the radius derived as if the target were alone, √(1 + flux ratio) × host radius / target radius", on)})
		if k > 0 {
			t.Rows = append(t.Rows, []string{"Host radius / target radius", paper.FromDraws(h.RadiusScale, paper.Bounds{}).Text(),
				"from " + r.RadiusSource[k]})
		}
	}
	t.Notes = []string{"Each value is the median of the draws with the distances to their 15.9th and 84.1st percentiles, rounded to two significant figures of the smaller error."}
	caption := "If the planet orbits the target, what the other stars' light does to its depth and radius."
	if r.AlreadyCorrected {
		t.Notes = append(t.Notes, "The light curve was already corrected for crowding: no further correction is applied.")
	}
	if k > 0 {
		caption = fmt.Sprintf("If the planet orbits %s instead: the depth and radius it would have. This %s; the table says what the hypothesis implies, not whether it holds.", host, boundCaution)
	}
	title := "Planet on the target"
	if k > 0 {
		title = "Planet on " + host
	}
	return steps.Panel{Title: title, Caption: caption, Table: t}
}
