package vet

import (
	"fmt"
	"math"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/stardensity"
	"dipline/steps/search/bls"
	"dipline/steps/units"
)

// Searched is what the vet step reads of how a search was set: the star's mean density its
// grid and box durations were built for (g/cm³), and the box durations (days) it scans at a
// period for a star of a given density, on its light curve's cadence. The search step's
// artifact gives it.
type Searched interface {
	AssumedDensity() float64
	TriedDurations(period, density float64) (lo, hi float64)
}

// The search-density test's constants, each with its reason.
const (
	// searchDensitySigma: the star's density is taken at its 3σ ends before the search's
	// setting is said to be at fault (common practice).
	searchDensitySigma = 3.0
	// giantDensity, g/cm³: a density below it is a giant's (stardensity.Giant, which the
	// search's caution on its own star_density shares).
	giantDensity = stardensity.Giant
	// unitSlipFactor is one g/cm³ in kg/m³, the factor a density written in the wrong one
	// of the two units is off by; a ratio within unitSlipTolerance of it (or of its
	// inverse) is named as a likely slip.
	unitSlipFactor    = 1000.0
	unitSlipTolerance = 1.5
)

// solarDensity is the nominal Sun's mean density in g/cm³, the search's default.
var solarDensity = units.Density.Units["rho_sun"]

// searchDensity compares the star's density that the search assumed with the star step's,
// through the durations it implies at the signal's period. The search scanned boxes from
// bls.DurationRange's 0.3 to 1.75 times the central-transit duration at its density
// (Winn 2010's total duration with b = 0 and k → 0, a/R* from the density by Kepler's law,
// Seager & Mallén-Ornelas 2003; never below the cadence); the star's central transit lasts
// ∝ ρ^(−1/3) of that (taken no shorter than one exposure, over which a shorter dip is
// smeared). Its rule: the data disagree when, even at searchDensitySigma of the star's
// density, the star's central transit lies outside the boxes tried; a caution when, at
// that σ, the star is less dense than bls.CoveredLessDense or denser than
// bls.CoveredDenser times the assumed star, the range the boxes were chosen to cover; else
// they agree. A disagreement is about the search's setting, not evidence against a planet,
// and its words say so and what to write instead.
//
// The fit's own density is not compared here: with a star given, the density test already
// compares it with the star's, and this test with the search's; without one, the fit's
// circular-orbit density is moved by eccentricity and blends and is no stand-in for the
// star's.
func (v *vetter) searchDensity(tg *target) Test {
	const name = "search_density"
	switch {
	case v.d.Search == nil:
		return notRun(name, "the signals' step does not say which star its search assumed")
	case v.d.Star == nil:
		return notRun(name, "no star given")
	}
	ls, ss, mcS, ns := stardensity.LogSummary(stardensity.Draws(v.d.Star))
	if ns == 0 {
		return notRun(name, "the star gives no density (nor mass and radius)")
	}
	p := tg.eph.Period
	rhoA := v.d.Search.AssumedDensity()
	if !(rhoA > 0) || math.IsInf(rhoA, 0) {
		return notRun(name, fmt.Sprintf("the search gives no usable density (%v g/cm3)", rhoA))
	}
	rho := math.Exp(ls)
	if a := bls.ScaledAxis(p, rho); !(a > 1) {
		return notRun(name, fmt.Sprintf("an orbit of %.3g d round the star step's star would lie inside it (a/R* = %.2g), so it has no transit to compare; the density test weighs the star against the transit", p, a))
	}
	lo, hi := v.d.Search.TriedDurations(p, rhoA)
	// starT is the star's central-transit duration at density r, no shorter than the
	// shortest box a search set for that star could try (the cadence, when it is longer).
	starT := func(r float64) float64 {
		lr, _ := v.d.Search.TriedDurations(p, r)
		return math.Max(bls.CentralDuration(p, r), lr)
	}
	k := searchDensitySigma
	tStar := starT(rho)
	tShort, tLong := starT(math.Exp(ls+k*ss)), starT(math.Exp(ls-k*ss)) // the denser end is the shorter
	ratio := rho / rhoA
	kept := boxShare(tStar, lo, hi)
	pre := tg.name + "." + name + "."
	t := Test{Name: name,
		Threshold: fmt.Sprintf("the star's central-transit duration at the signal's period (Winn 2010 with b = 0; a/R* from the density, Seager & Mallén-Ornelas 2003) against the boxes the search tried, %.2g to %.3g times the central duration at its density: the data disagree when it lies outside them even at %.3g σ of the star's density; a caution when, at %.3g σ, the star is less than %.2g or more than %.2g times as dense as the search assumed, the stars its boxes were chosen to cover",
			bls.ShortestBox, bls.LongestBox, k, k, bls.CoveredLessDense, bls.CoveredDenser),
		Figures: []steps.Figure{
			{Name: pre + "assumed", Value: rhoA, Unit: "g/cm3", Doc: "the star's mean density the search assumed (its star_density), for which it built its grid and chose its boxes"},
			{Name: pre + "ratio", Value: ratio, Sigma: ratio * ss, MCError: ratio * mcS,
				Doc: "the star step's density over the search's: exp of the median ln ρ over the assumed one; σ from the star's ln σ"},
			{Name: pre + "star_duration", Value: tStar * 24, Sigma: (starT(math.Exp(ls-ss)) - starT(math.Exp(ls+ss))) * 12, Unit: "h",
				Doc: "duration of a central transit at the signal's period round the star step's star (its median density; σ from its 16–84 % range), no shorter than the cadence"},
			{Name: pre + "shortest_box", Value: lo * 24, Unit: "h", Doc: "the shortest box the search tried at the signal's period"},
			{Name: pre + "longest_box", Value: hi * 24, Unit: "h", Doc: "the longest box the search tried at the signal's period"},
			{Name: pre + "snr_kept", Value: kept,
				Doc: "share of a box-shaped central transit's signal-to-noise that the best box tried keeps, √(shorter/longer) of box and transit (1 when the transit lies within the boxes)"},
		}}
	assumed := densityWords(rhoA)
	starText := paper.Symmetric(rho, rho*ss).Text() + " g/cm3"
	tried := fmt.Sprintf("at this %.3g d period the search tried transits of %s–%s h", p, hours(lo), hours(hi))
	advice := fmt.Sprintf("set star_density on the search to the star's, about \"%s g/cm3\", or write star = star.<label> there in its place, and run it again", figs(rho, 2))
	head := fmt.Sprintf("the search assumed %s; the star step gives %s, %s× as dense", assumed, starText, figs(ratio, 2))
	slip := unitSlip(rhoA, ratio)
	switch {
	case tLong < lo || tShort > hi:
		t.Verdict = steps.VerdictDisagree
		how := "too long and its grid, spaced for longer transits, too coarse"
		if tShort > hi {
			how = "too short"
		}
		t.Reason = fmt.Sprintf("%s: %s, where the star's would last %s h (central; %s–%s h at %.3g σ), so its boxes were %s: the best keeps about %.0f %% of such a transit's signal-to-noise, and weaker planets of this star may have been missed%s; %s (this is about the search's setting, not evidence against a planet)",
			head, tried, hours(tStar), hours(tShort), hours(tLong), k, how, 100*kept, slip, advice)
	case ratio*math.Exp(k*ss) < bls.CoveredLessDense || ratio*math.Exp(-k*ss) > bls.CoveredDenser || kept < 1:
		t.Verdict = steps.VerdictCaution
		beyond := ""
		if ratio*math.Exp(k*ss) < bls.CoveredLessDense || ratio*math.Exp(-k*ss) > bls.CoveredDenser {
			beyond = ", " + covered("outside")
		}
		t.Reason = fmt.Sprintf("%s%s: %s, and the star's central transit lasts %s h; %s%s; the signal was found, but a search set for this star would find weaker ones more surely: %s",
			head, beyond, tried, hours(tStar), missed(p, rho, rhoA, tStar, lo, hi), slip, advice)
	default:
		t.Verdict = steps.VerdictAgree
		t.Reason = fmt.Sprintf("the search assumed %s and the star step gives %s (ratio %s), %s: %s, and the star's central transit lasts %s h",
			assumed, starText, figs(ratio, 2), covered("within"), tried, hours(tStar))
	}
	return t
}

// missed says which transits of the star the boxes tried do not reach, at its median
// density rho: for a denser star than assumed, those on chords beyond the impact parameter
// at which a transit is as short as the shortest box (Winn 2010: T = (P/π) arcsin(√(1 − b²)/
// (a/R*)) for k → 0, so b = √(1 − (a/R* · sin(π lo/P))²)), a share 1 − b of transiting
// orbits as b is uniform over them; and its grid's coarseness; for a less dense one, central
// transits of planets larger than the k at which (1 + k) fills the longest box.
func missed(p, rho, rhoA, tStar, lo, hi float64) string {
	a := bls.ScaledAxis(p, rho)
	if tStar < lo || tStar > hi {
		return fmt.Sprintf("the star's central transit lies beyond the boxes tried (though within %.3g σ of its density it may reach them), and the best keeps about %.0f %% of its signal-to-noise",
			searchDensitySigma, 100*boxShare(tStar, lo, hi))
	}
	if rho > rhoA {
		coarse := bls.CentralDuration(p, rhoA) / bls.CentralDuration(p, rho)
		x := a * math.Sin(math.Pi*lo/p)
		b := math.Sqrt(math.Max(0, 1-x*x))
		return fmt.Sprintf("a transit on a chord beyond b = %.2f (about %.0f %% of transiting orbits) is shorter than every box tried, and the grid, spaced for transits %s× as long as the star's, is that much coarser than asked",
			b, 100*(1-b), figs(coarse, 2))
	}
	kMax := a*math.Sin(math.Pi*hi/p) - 1
	return fmt.Sprintf("a central transit of a planet larger than k = %.2f of the star lasts longer than every box tried, and the best box keeps less of its signal-to-noise (the grid, spaced for shorter transits, is finer than needed, which costs only time)", kMax)
}

// covered writes where the star lies against the range the search's boxes were chosen for.
func covered(where string) string {
	return fmt.Sprintf("%s the range the search's boxes were chosen for (a star %.2g to %.2g times as dense as assumed)", where, bls.CoveredLessDense, bls.CoveredDenser)
}

// boxShare returns the share of a box-shaped transit's signal-to-noise, of duration d,
// that the best box between lo and hi keeps, in white noise with n points per unit time:
// a box of length D > d holds the depth δ diluted to δ d/D over nD points, SNR ∝ δ d/√D;
// one of D < d the full depth over nD points, SNR ∝ δ √D; the best, D = d, gives δ √d; so
// the share is √(min(d, D)/max(d, D)) at the nearest box (the box search's matched filter;
// common practice).
func boxShare(d, lo, hi float64) float64 {
	switch {
	case d < lo:
		return math.Sqrt(d / lo)
	case d > hi:
		return math.Sqrt(hi / d)
	}
	return 1
}

// densityWords writes a density the search assumed, in g/cm³, naming the Sun's (the
// search's default) or a giant's.
func densityWords(rho float64) string {
	s := figs(rho, 3) + " g/cm3"
	switch {
	case rho == solarDensity:
		return s + " (the Sun's, the search's default)"
	case rho < giantDensity:
		return s + " (a giant's)"
	}
	return s
}

// unitSlip names a likely unit slip when the star is about unitSlipFactor times as dense as
// the search assumed (a density meant in g/cm³ written in kg/m³) or as many times less
// dense (the other way round); not when the search kept the Sun's, its default.
func unitSlip(rhoA, ratio float64) string {
	if rhoA == solarDensity {
		return ""
	}
	tol := math.Log(unitSlipTolerance)
	switch {
	case math.Abs(math.Log(ratio/unitSlipFactor)) < tol:
		n := figs(rhoA*unitSlipFactor, 3)
		return fmt.Sprintf("; a ratio near %.0f is what a density meant in g/cm3 and written in kg/m3 gives (\"%s kg/m3\" for %s g/cm3): check the unit", unitSlipFactor, n, n)
	case math.Abs(math.Log(ratio*unitSlipFactor)) < tol:
		n := figs(rhoA, 3)
		return fmt.Sprintf("; a ratio near 1/%.0f is what a density meant in kg/m3 and written in g/cm3 gives (\"%s g/cm3\" for %s kg/m3, which is %s g/cm3): check the unit", unitSlipFactor, n, n, figs(rhoA/unitSlipFactor, 3))
	}
	return ""
}

// hours writes a duration in days as hours to two significant figures.
func hours(d float64) string { return figs(d*24, 2) }

// figs writes x rounded to n significant figures as a user writes it: no exponent and no
// trailing zeros ("0.007", "1000", "1.41").
func figs(x float64, n int) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', n, 64)
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', n, 64), 64)
	return strconv.FormatFloat(r, 'f', -1, 64)
}
