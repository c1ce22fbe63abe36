package completeness

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/proportion"
)

var _ steps.Combiner = Kind{}

// edgeTolerance is how closely two targets' cell edges must agree to be one cell: their
// radius edges in Earth radii come from each star's radius, so a map written in Earth
// radii lines up only to rounding.
const edgeTolerance = 1e-9

// Combine adds the targets' maps up into the survey's occurrence, cell by cell: with N*
// targets and the detections' efficiencies e_i (each its cell's recovered share on its own
// star times its own transit probability), the rate is (1/N*) Σ 1/e_i with Gehrels' (1986)
// single-sided S = 1 limits on the count scaled by the mean 1/e_i (proportion.
// InverseEfficiency); a cell without detections gives the upper limit from a count of zero
// at the targets' mean efficiency (proportion.NoDetectionLimit). The maps must have the
// same cells: the same period edges and the same radius edges, in Earth radii when every
// star has a radius, else in radius ratios; a survey writes period_range and radius_range
// in its workflow so that they do.
func (Kind) Combine(ids []string, arts []steps.Artifact) (steps.Combined, error) {
	if len(arts) == 0 {
		return steps.Combined{}, nil
	}
	maps := make([]*Result, len(arts))
	for i, a := range arts {
		r, ok := a.(*Result)
		if !ok {
			return steps.Combined{}, fmt.Errorf("completeness: target %s's result is %T", ids[i], a)
		}
		maps[i] = r
	}
	earth := true
	for _, r := range maps {
		earth = earth && r.Host.Radius > 0
	}
	first := maps[0]
	for i, r := range maps[1:] {
		if !sameEdges(first.PeriodEdges, r.PeriodEdges) || !sameEdges(radiusEdges(first, earth), radiusEdges(r, earth)) {
			return steps.Combined{}, fmt.Errorf("completeness: target %s's map has other cells than target %s's; write period_range and radius_range (in Earth radii) in the workflow so that every target's map has the same cells", ids[i+1], ids[0])
		}
	}
	out := steps.Combined{Figures: []steps.Figure{{Name: "targets", Value: float64(len(maps)), Doc: "targets whose completeness maps are added up"}}}
	low := false
	for c := range first.Cells {
		var effs []float64
		var meanEff float64
		for _, r := range maps {
			meanEff += r.Occurrence[c].Efficiency / float64(len(maps))
			for _, d := range r.Detections {
				if d.Cell == c {
					effs = append(effs, d.Efficiency)
					low = low || r.Cells[c].Fraction < lowCompleteness
				}
			}
		}
		p := first.cellName(c) + "."
		where := first.cellWords(c)
		if earth { // the radius ratios differ from star to star; the Earth radii do not
			cl := first.Cells[c].Cell
			where = fmt.Sprintf("%.3g–%.3g d, %.3g–%.3g R⊕", cl.PeriodLo, cl.PeriodHi, first.earth(cl.RadiusLo), first.earth(cl.RadiusHi))
		}
		out.Figures = append(out.Figures,
			steps.Figure{Name: p + "detections", Value: float64(len(effs)), Doc: "the targets' planets at " + where},
			steps.Figure{Name: p + "efficiency", Value: meanEff, Doc: "mean detection efficiency over the targets (share recovered × transit probability)"},
			occurrenceFigure(p, where, effs, meanEff, len(maps)))
	}
	if low {
		out.Cautions = append(out.Cautions, "Some planets lie where their star's search recovers under a tenth of the injections; inverse detection efficiency is biased where completeness is low (Foreman-Mackey, Hogg & Morton 2014, ApJ 795, 64).")
	}
	out.Cautions = append(out.Cautions, "These rates assume the injected planets stand for the real ones and treat each target's efficiencies as known; they support, and do not replace, the team's own population analysis.")
	return out, nil
}

// occurrenceFigure is a cell's planets per star over stars targets.
func occurrenceFigure(p, where string, effs []float64, meanEff float64, stars int) steps.Figure {
	f := steps.Figure{Name: p + "occurrence",
		Doc: fmt.Sprintf("planets per star at %s by inverse detection efficiency over %d targets; interval from Gehrels' single-sided S = 1 limits", where, stars)}
	if len(effs) == 0 {
		lim, err := proportion.NoDetectionLimit(meanEff, stars, 1)
		if err != nil {
			f.Value, f.Reason = math.NaN(), "no injection was recovered in this cell on any target, so no limit follows"
			return f
		}
		f.Upper = lim
		return f
	}
	occ, err := proportion.InverseEfficiency(effs, stars, 1)
	if err != nil {
		f.Value, f.Reason = math.NaN(), "a planet lies where its star's search recovered no injection"
		return f
	}
	f.Value, f.Lower, f.Upper = occ.Rate, occ.Rate-occ.Limits.Lower, occ.Limits.Upper-occ.Rate
	return f
}

// radiusEdges are r's radius edges in Earth radii (earth) or radius ratios.
func radiusEdges(r *Result, earth bool) []float64 {
	if !earth {
		return r.RadiusEdges
	}
	out := make([]float64, len(r.RadiusEdges))
	for i, k := range r.RadiusEdges {
		out[i] = r.earth(k)
	}
	return out
}

func sameEdges(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > edgeTolerance*math.Abs(a[i]) {
			return false
		}
	}
	return true
}
