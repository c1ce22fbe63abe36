package vet

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/stellar"
)

// starDensity returns the star's density draws in g/cm³: its own, or M/R³ in solar units
// times the Sun's density (astro.StellarDensityCGS; NaN for a draw without a positive mass
// and radius) when it gives mass and radius; nil when it gives neither.
func starDensity(s *stellar.Star) []float64 {
	if s == nil {
		return nil
	}
	if len(s.Density) > 0 {
		return s.Density
	}
	if len(s.Mass) == 0 || len(s.Mass) != len(s.Radius) {
		return nil
	}
	out := make([]float64, len(s.Mass))
	for i := range out {
		rho, err := astro.StellarDensityCGS(s.Mass[i], s.Radius[i])
		if err != nil {
			rho = math.NaN()
		}
		out[i] = rho
	}
	return out
}

// logSummary returns the median and σ (half the 16–84 % range) of ln x over the positive
// draws, the median's Monte Carlo error, and the number of draws used.
func logSummary(x []float64) (med, sigma, mc float64, n int) {
	lx := make([]float64, 0, len(x))
	for _, v := range x {
		if v > 0 && !math.IsInf(v, 0) {
			lx = append(lx, math.Log(v))
		}
	}
	s := finiteSorted(lx)
	if len(s) == 0 {
		return math.NaN(), math.NaN(), 0, 0
	}
	med, sigma, mc = oneSigma(s)
	return med, sigma, mc, len(s)
}

// density compares the star's density with the one the transit implies for a circular
// orbit (or the fit's own, for an eccentric fit), in ln ρ: the difference of medians over
// the two σ in quadrature (the draws are independent, as the fit does not take the star by
// default; when it took a density prior, the reason says so). Its rule: a caution beyond DensitySigma, never "disagree", since an eccentric
// orbit moves the circular-orbit density by ((1 + e sin ω)/√(1 − e²))³ (Dawson & Johnson
// 2012, ApJ 756, 122; from memory).
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
	ls, ss, mcS, ns := logSummary(starDensity(v.d.Star))
	lt, st, mcT, nt := logSummary(tg.post.transitDensity())
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
		Threshold: fmt.Sprintf("a caution beyond %.3g σ in ln ρ (common practice); never a disagreement on its own, as an eccentric orbit also moves the transit's density (Dawson & Johnson 2012)", v.o.DensitySigma),
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
		t.Reason = fmt.Sprintf("the star is %.2f× as dense as the transit and the fit's eccentric orbit imply (%.1f σ): a wrong star, a blend, or the transit on another star", ratio, z)
		return v.coupled(t)
	}
	// ρ_circ/ρ_true = 1/ratio.
	t.Reason = fmt.Sprintf("the star is %.2f× as dense as the transit implies for a circular orbit (%.1f σ): an eccentricity of at least %.2f would explain it (Dawson & Johnson 2012), as would a wrong star, a blend, or the transit on another star",
		ratio, z, MinEccentricity(1/ratio))
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
