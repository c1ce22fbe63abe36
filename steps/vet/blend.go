package vet

import (
	"fmt"
	"math"

	"dipline/steps"
)

// Fixed choices of the blend bound, each with its reason.
const (
	// blendPercentile is the percentile of T12/T13 the bound takes: 99.7 %, about the
	// one-sided 3σ point, so the bound holds for nearly every chord the data allow
	// (Vanderburg et al. 2019, ApJL 881, L19, take a high percentile of the posterior; from
	// memory).
	blendPercentile = 0.997
	// maxGrazingShare is the largest share of grazing draws the bound accepts: the
	// geometry behind it needs a second contact, and once more than 1 − 0.997 of the draws
	// graze, the 99.7th percentile is a grazing chord's.
	maxGrazingShare = 1 - blendPercentile
)

// blend bounds the magnitude difference of a blended source able to make this transit's
// shape (MaxBlendDeltaMag), from the 99.7th percentile of T12/T13 over the fit's draws and
// the median depth k². It is informative: "agree" with the bound stated, or not run (no
// fit, or a grazing chord).
func (v *vetter) blend(tg *target) Test {
	const name = "blend"
	switch {
	case v.d.Fit == nil:
		return notRun(name, "no fit given: the bound needs the ingress time from the fit's samples")
	case tg.post == nil:
		return notRun(name, "the fit has no planet matching this signal")
	}
	p := tg.post
	share, _ := p.grazingShare()
	if share > maxGrazingShare {
		return notRun(name, fmt.Sprintf("%.1f %% of the fit's samples graze the star; the bound holds for non-grazing chords only (at most %.1f %%)", 100*share, 100*maxGrazingShare))
	}
	rho := make([]float64, 0, p.n())
	depth := make([]float64, 0, p.n())
	for i := 0; i < p.n(); i++ {
		e, w := p.eccentricity(i)
		rho = append(rho, ChordIngressRatio(p.k[i], p.b[i], p.aR[i], e, w))
		depth = append(depth, p.k[i]*p.k[i])
	}
	rs := finiteSorted(rho)
	if len(rs) == 0 {
		return notRun(name, "no sample of the fit gives a full transit")
	}
	r, rMC := quantileMC(rs, blendPercentile)
	dep, _, _ := oneSigma(finiteSorted(depth))
	dm := MaxBlendDeltaMag(r, dep)
	// The bound's Monte Carlo error, through d(Δm)/dρ = 5 ρ / (ln 10 (ρ² − δ)).
	mc := 5 * r / (math.Ln10 * (r*r - dep)) * rMC
	pre := tg.name + "." + name + "."
	t := Test{Name: name, Verdict: steps.VerdictAgree,
		Threshold: "informative: Δm ≤ 2.5 log10(ρ²/δ − 1) with ρ the 99.7th percentile of T12/T13 and δ = k² (the geometry of a fully diluted eclipse, after Vanderburg et al. 2019, ApJL 881, L19)",
		Figures: []steps.Figure{
			{Name: pre + "ingress_ratio", Value: r, MCError: rMC,
				Doc: "99.7th percentile of T12/T13 (ingress over first-to-third contact) over the fit's samples, Winn 2010 durations; it bounds the eclipsing body's radius ratio on any star"},
			{Name: pre + "max_delta_mag", Value: dm, Unit: "mag", MCError: mc,
				Doc: "largest magnitude difference, source minus target in the light curve's band, of a blended source whose diluted eclipse could make this transit: fainter sources cannot (uniform discs; limb darkening can loosen it by up to about 0.2 mag)"},
		}}
	if math.IsNaN(dm) {
		t.Reason = fmt.Sprintf("T12/T13 ≤ %.3f at 99.7 %% with a depth of %s: only a source at least as bright as the target could make this dip", r, ppm(dep))
		return t
	}
	t.Reason = fmt.Sprintf("a source more than %.2f mag fainter than the target cannot make this dip (T12/T13 ≤ %.3f at 99.7 %%, depth %s); brighter blends are not excluded", dm, r, ppm(dep))
	return t
}
