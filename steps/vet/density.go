package vet

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/stardensity"
)

// The ceiling on the eccentricity the density test allows for, each with its reason.
const (
	// envelopePeriod is the period, in days, of a circular orbit round a Sun-like star at
	// the closest periastron the eccentric planets reach, about 0.026 au: the upper edge of
	// the known planets' period–eccentricity diagram follows a constant periastron distance
	// q = a(1 − e), as tidal circularisation shapes it, so e_max = 1 − (P_q/P)^(2/3) with a
	// ∝ P^(2/3) (common practice). With P_q = 1.5 d it is 0.37 at 3 d, 0.55 at 5 d, 0.59 at
	// 5.6 d, 0.81 at 18 d and 0.94 at 111 d, above the most eccentric known planets near
	// those periods (about 0.5 at 5.6 d, 0.8 at 18 d and 0.93 at 111 d; from memory).
	envelopePeriod = 1.5
	// eccentricityFloor is the eccentricity never ruled out, whatever the period: a
	// moderate 0.3 (a density off by a factor up to 2.5) stays a caution, as a catalogue
	// density can be off by that much too.
	eccentricityFloor = 0.3
)

// MaxEccentricity returns the largest eccentricity the density test takes as plausible for
// a planet of period p days: max(eccentricityFloor, 1 − (envelopePeriod/p)^(2/3)).
func MaxEccentricity(p float64) float64 {
	if !(p > 0) {
		return eccentricityFloor
	}
	return math.Max(eccentricityFloor, 1-math.Pow(envelopePeriod/p, 2.0/3))
}

// density compares the star's density with the one the transit implies for a circular
// orbit (or the fit's own, for an eccentric fit), in ln ρ: the difference of medians over
// the two σ in quadrature (the draws are independent, as the fit does not take the star by
// default; when it took a density prior, the reason says so). Its rule: a caution beyond
// DensitySigma, since an eccentric orbit moves the circular-orbit density by
// ((1 + e sin ω)/√(1 − e²))³ (Dawson & Johnson 2012, ApJ 756, 122; from memory); the data
// disagree when even the ratio's end nearest 1 at DensitySigma needs an eccentricity above
// MaxEccentricity for the period. An eccentric fit (its density holds the orbit already) and
// timing variations that smear the stacked transit (its a/R* is then not the orbit's) leave
// it a caution.
func (v *vetter) density(tg *target) Test {
	const name = "density"
	switch {
	case tg.post == nil && v.d.Fit == nil:
		return notRun(name, "no fit given: the transit's density needs its a/R* draws")
	case tg.post == nil:
		return notRun(name, "the fit has no planet matching this signal")
	case v.d.Star == nil:
		return notRun(name, "no star given")
	}
	ls, ss, mcS, ns := stardensity.LogSummary(stardensity.Draws(v.d.Star))
	lt, st, mcT, nt := stardensity.LogSummary(tg.post.transitDensity())
	if ns == 0 {
		return notRun(name, "the star gives no density (nor mass and radius)")
	}
	if nt == 0 {
		return notRun(name, "the fit's draws give no positive density")
	}
	diff := ls - lt
	sd := math.Hypot(ss, st)
	z := diff / sd
	ratio := math.Exp(diff)
	pre := tg.name + "." + name + "."
	kind := "circular-orbit density"
	if tg.post.eccentric {
		kind = "density (its eccentric orbit included)"
	}
	t := Test{Name: name,
		Threshold: fmt.Sprintf("a caution beyond %.3g σ in ln ρ (common practice); the data disagree when, even at %.3g σ, the least eccentricity that would reconcile the two (ρ_circ/ρ★ = ((1 + e sin ω)/√(1 − e²))³, Dawson & Johnson 2012) exceeds what planets reach at the period, max(%.2g, 1 − (%.3g d/P)^(2/3)) (a constant-periastron envelope, common practice); an eccentric fit, or transit times that smear the stacked transit, leave it a caution",
			v.o.DensitySigma, v.o.DensitySigma, eccentricityFloor, envelopePeriod),
		Figures: []steps.Figure{
			{Name: pre + "ratio", Value: ratio, Sigma: ratio * sd, MCError: ratio * math.Hypot(mcS, mcT),
				Doc: "the star's density over the transit's " + kind + ", exp of the difference of median ln ρ; σ from the two ln σ in quadrature"},
			{Name: pre + "sigma", Value: z, Doc: "difference of median ln ρ (star − transit) over the two σ in quadrature"},
		}}
	if math.Abs(z) < v.o.DensitySigma {
		t.Verdict = steps.VerdictAgree
		t.Reason = fmt.Sprintf("the star's density and the transit's %s agree (ratio %.2f, %.1f σ)", kind, ratio, z)
		return v.coupled(t)
	}
	t.Verdict = steps.VerdictCaution
	if tg.post.eccentric {
		t.Reason = fmt.Sprintf("the star is %.2f× as dense as the transit and the fit's eccentric orbit imply (%.1f σ): a wrong star, a blend, or the transit on another star", ratio, z) +
			tg.timingCaveat("its a/R*, and so this density, may be distorted by the timing variations")
		return v.coupled(t)
	}
	// ρ_circ/ρ_true = 1/ratio; at DensitySigma its end nearest 1.
	period := tg.eph.Period
	eNeed := MinEccentricity(math.Exp(math.Abs(diff) - v.o.DensitySigma*sd))
	eMax := MaxEccentricity(period)
	t.Figures = append(t.Figures,
		steps.Figure{Name: pre + "eccentricity_needed", Value: eNeed,
			Doc: fmt.Sprintf("least eccentricity that reconciles the two densities at the ratio's end nearest 1 at %.3g σ (Dawson & Johnson 2012, at the best argument of periastron)", v.o.DensitySigma)},
		steps.Figure{Name: pre + "eccentricity_max", Value: eMax,
			Doc: fmt.Sprintf("largest eccentricity taken as plausible at this period, max(%.2g, 1 − (%.3g d/P)^(2/3)): an envelope of constant periastron above the known planets", eccentricityFloor, envelopePeriod)})
	head := fmt.Sprintf("the star is %.2f× as dense as the transit implies for a circular orbit (%.1f σ)", ratio, z)
	switch {
	case eNeed > eMax && tg.ttv == "":
		t.Verdict = steps.VerdictDisagree
		t.Reason = fmt.Sprintf("%s: even at %.3g σ the orbit would need an eccentricity of at least %.2f (Dawson & Johnson 2012), above the %.2f planets reach at a %.3g d period; the transit does not fit a planet on this star as given: a wrong star (its catalogue values, or most of the light from another star), a blend, or the transit on another star",
			head, v.o.DensitySigma, eNeed, eMax, period)
	case eNeed > eMax:
		t.Reason = fmt.Sprintf("%s: even at %.3g σ the orbit would need an eccentricity of at least %.2f, above the %.2f planets reach at a %.3g d period", head, v.o.DensitySigma, eNeed, eMax, period) +
			tg.timingCaveat("its a/R*, and so this density, may be distorted by the timing variations rather than show a wrong star or a blend")
	default:
		t.Reason = fmt.Sprintf("%s: an eccentricity of at least %.2f would explain it (Dawson & Johnson 2012; %.2f at %.3g σ, within the %.2f planets reach at a %.3g d period), as would a wrong star, a blend, or the transit on another star",
			head, MinEccentricity(1/ratio), eNeed, v.o.DensitySigma, eMax, period) +
			tg.timingCaveat("its a/R*, and so this density, may be distorted by the timing variations")
	}
	return v.coupled(t)
}

// coupled adds to the density test's reason that the fit took a density prior, when it
// did: the transit's density then leans toward the prior, and a mismatch with the star
// shows smaller than it is.
func (v *vetter) coupled(t Test) Test {
	if v.d.FitDensityPrior != "" {
		t.Reason += fmt.Sprintf("; the fit took the prior %s, so its density is not independent of it and a mismatch shows smaller than it is", v.d.FitDensityPrior)
	}
	return t
}
