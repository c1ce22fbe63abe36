package vet

import (
	"fmt"

	"dipline/steps"
	"dipline/steps/units"
)

// rJupInSun is one nominal Jupiter radius in R☉, the base unit of units.Radius.
var rJupInSun = units.Radius.Units["R_jup"]

// maxPlanetRatio is the radius ratio k above which, without a derive step, the companion
// is said to be most often a star: a planet of at most 2 R_jup (0.21 R☉) gives k above 0.3
// only round a star smaller than 0.68 R☉, and a radius ratio that large is what eclipsing
// binaries usually give (common practice).
const maxPlanetRatio = 0.3

// radius compares the planet's radius on the target from the derive step with the
// largest planetary radius. Its rule: "disagree" when the median exceeds it (a body that
// large is a star), a caution when only the 84th percentile does, else "agree". Without a
// derive step, a fit's radius ratio above maxPlanetRatio gives a caution of its own unless
// a star step gives a host small enough for a planet (ratioWithoutDerive). Transit times
// that smear the stacked transit (timingOf) turn a disagreement into a caution that says so.
func (v *vetter) radius(tg *target) Test {
	const name = "radius"
	if v.d.Derive == nil {
		return v.ratioWithoutDerive(tg)
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
	smeared := tg.timingCaveat("k, and so this radius, may be distorted by the timing variations")
	switch {
	case value > limit && smeared != "":
		t.Verdict = steps.VerdictCaution
		t.Reason = fmt.Sprintf("the radius on the target, %.3g R_jup, exceeds %.3g R_jup", value, limit) + smeared
	case value > limit:
		t.Verdict = steps.VerdictDisagree
		t.Reason = fmt.Sprintf("the radius on the target, %.3g R_jup, exceeds %.3g R_jup: a body that large is a star", value, limit)
	case hi > limit:
		t.Verdict = steps.VerdictCaution
		t.Reason = fmt.Sprintf("the radius on the target, %.3g ± %.2g R_jup, may exceed %.3g R_jup (its 84th percentile does)", value, sigma, limit) + smeared
	default:
		t.Verdict = steps.VerdictAgree
		t.Reason = fmt.Sprintf("the radius on the target, %.3g R_jup, is below %.3g R_jup", value, limit)
	}
	return t
}

// ratioWithoutDerive is the radius test without a derive step: not run unless the fit's
// median radius ratio exceeds maxPlanetRatio; then a caution, or "agree" when a star step
// gives a host whose median radius times k stays within max_planet_radius.
func (v *vetter) ratioWithoutDerive(tg *target) Test {
	const name = "radius"
	if tg.post == nil {
		return notRun(name, "no derive step given")
	}
	k, kSig, kMC := oneSigma(finiteSorted(tg.post.k))
	if !(k > maxPlanetRatio) {
		return notRun(name, "no derive step given")
	}
	limit := v.o.MaxPlanetRadius
	pre := tg.name + "." + name + "."
	t := Test{Name: name,
		Threshold: fmt.Sprintf("without a derive step: a radius ratio above %.2g is most often a star's (a planet of %.3g R_jup makes it only round a star below %.2f R☉; common practice), unless the star step's radius makes the companion at most %.3g R_jup",
			maxPlanetRatio, limit, limit*rJupInSun/maxPlanetRatio, limit),
		Figures: []steps.Figure{{Name: pre + "radius_ratio", Value: k, Sigma: kSig, MCError: kMC,
			Doc: "the fit's radius ratio k = Rp/R★ (no derive step given), median and σ half the 16–84 % range"}}}
	smeared := tg.timingCaveat("k may be distorted by the timing variations")
	host := ""
	if v.d.Star != nil && len(v.d.Star.Radius) > 0 {
		rs, _, _ := oneSigma(finiteSorted(v.d.Star.Radius))
		rp := k * rs / rJupInSun
		if rs > 0 && rp <= limit {
			t.Verdict = steps.VerdictAgree
			t.Reason = fmt.Sprintf("the radius ratio %.2f is large, but round the star's %.2f R☉ it makes %.3g R_jup, within %.3g R_jup (no derive step given for the full radius)", k, rs, rp, limit)
			return t
		}
		if rs > 0 {
			host = fmt.Sprintf("; round the star's %.2f R☉ it makes %.3g R_jup", rs, rp)
		}
	}
	t.Verdict = steps.VerdictCaution
	t.Reason = fmt.Sprintf("the radius ratio is %.2f: a companion %.0f %% of its star's radius is most often a star, since a planet that large needs a host below %.2f R☉%s; give a star and a derive step to measure the radius", k, 100*k, limit*rJupInSun/k, host) + smeared
	return t
}
