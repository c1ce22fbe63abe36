package vet

import (
	"fmt"

	"dipline/steps"
	"dipline/steps/units"
)

// rJupInSun is one nominal Jupiter radius in R☉, the base unit of units.Radius.
var rJupInSun = units.Radius.Units["R_jup"]

// radius compares the planet's radius on the target from the derive step with the
// largest planetary radius. Its rule: "disagree" when the median exceeds it (a body that
// large is a star), a caution when only the 84th percentile does, else "agree".
func (v *vetter) radius(tg *target) Test {
	const name = "radius"
	if v.d.Derive == nil {
		return notRun(name, "no derive step given")
	}
	letter, how := tg.planet, "the fit's planet "+tg.planet
	if letter == "" {
		if v.d.Fit != nil {
			return notRun(name, "the fit has no planet matching this signal, so the derive step's planets cannot be matched to it")
		}
		letter, how = planetLetter(tg.index), "planet "+planetLetter(tg.index)+", the derive step's name for the search's signal in this place (no fit given to check it)"
	}
	q := v.d.Derive.Quantity(letter, "radius_jup")
	if q == nil {
		return notRun(name, fmt.Sprintf("the derive step gives no radius for planet %s", letter))
	}
	limit := v.o.MaxPlanetRadius
	value, sigma, hi := q.Median, (q.Hi-q.Lo)/2, q.Hi
	doc := "planet radius on the target from the derive step (" + how + "), median and σ half the 16–84 % range"
	if q.UpperLimit {
		value, sigma, hi = q.Limit, 0, q.Limit
		doc = "95 % upper limit of the planet radius on the target from the derive step (" + how + ")"
	}
	t := Test{Name: name,
		Threshold: fmt.Sprintf("%.3g R_jup, the derive step's largest planetary radius (the largest inflated hot Jupiters are near 2 R_jup; common practice)", limit),
		Figures:   []steps.Figure{{Name: tg.name + "." + name + ".radius_jup", Value: value, Sigma: sigma, Unit: "R_jup", Doc: doc}}}
	switch {
	case value > limit:
		t.Verdict = steps.VerdictDisagree
		t.Reason = fmt.Sprintf("the radius on the target, %.3g R_jup, exceeds %.3g R_jup: a body that large is a star", value, limit)
	case hi > limit:
		t.Verdict = steps.VerdictCaution
		t.Reason = fmt.Sprintf("the radius on the target, %.3g ± %.2g R_jup, may exceed %.3g R_jup (its 84th percentile does)", value, sigma, limit)
	default:
		t.Verdict = steps.VerdictAgree
		t.Reason = fmt.Sprintf("the radius on the target, %.3g R_jup, is below %.3g R_jup", value, limit)
	}
	return t
}
