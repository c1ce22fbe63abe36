package vet

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/lightcurve"
)

// starMultiple is a multiple or fraction of one of the star's periods: num/den × P★.
type starMultiple struct{ num, den int }

// starMultiples are the multiples and fractions of each of the star's periods a signal is
// compared with: P★ itself; P★/2 and P★/3, the harmonics a spotted star's light holds
// (two or three spot groups make them, and a windowed trend leaves more of a harmonic than
// of the fundamental, as its curvature is larger); and 2P★ and 3P★, where a box folded over
// two or three of the star's cycles also catches a residual when successive cycles differ.
// Beyond three a residual rarely shows, while each further pair widens the net for chance
// coincidences by two tolerances.
var starMultiples = []starMultiple{{1, 1}, {1, 2}, {2, 1}, {1, 3}, {3, 1}}

// harmonic says whether the multiple is P★ or a fraction of it: a period the star's own
// light holds, where a residual of the star is most at home.
func (m starMultiple) harmonic() bool { return m.num == 1 }

func (m starMultiple) factor() float64 { return float64(m.num) / float64(m.den) }

// words names the multiple in a sentence: "the star's own period", "half the star's period".
func (m starMultiple) words() string {
	switch {
	case m.num == 1 && m.den == 1:
		return "the star's own period"
	case m.num == 1 && m.den == 2:
		return "half the star's period"
	case m.num == 1 && m.den == 3:
		return "a third of the star's period"
	case m.num == 2 && m.den == 1:
		return "twice the star's period"
	case m.num == 3 && m.den == 1:
		return "three times the star's period"
	}
	return fmt.Sprintf("%d/%d of the star's period", m.num, m.den)
}

// starResolutionFraction is the share of the periodogram's resolution 1/L (L the longest
// gap-free stretch) within which the star's frequency is taken as known: the peak's half
// width at half maximum is 0.44/L (sinc², computed), and a coherent signal's peak is placed
// far better than that, but spots that grow and fade and latitudes that turn at different
// rates move it within its width. A quarter of 1/L is about half that half width.
const starResolutionFraction = 0.25

// starMatch is one comparison of the signal's period with a multiple of a star's period.
type starMatch struct {
	star      int          // index in the variability's lists
	mult      starMultiple // which multiple
	at        float64      // the multiple's period, days
	offset    float64      // |P/at − 1|
	tolerance float64      // relative tolerance used
}

// starPeriod compares the signal's period with each of the star's periods, their
// harmonics and multiples. Its rule: within the tolerance of any is a caution (the
// coincidence and what to check; "probably not a transit" only when other tests point
// there too, starResidualAlso); at P★ or
// P★/k where the star's semi-amplitude is at least variability_depth_ratio times the dip's
// depth the data disagree, because a windowed trend easily leaves a tenth of the star's
// modulation at its own period and harmonics (see defaultVariabilityRatio); elsewhere the
// data agree.
func (v *vetter) starPeriod(tg *target) Test {
	const name = "star_period"
	vb := v.d.Variability
	if vb == nil {
		return notRun(name, "the light curve comes from a step that does not measure the star's own variability; a detrend step measures it in the trend it removes")
	}
	if len(vb.Periods) == 0 {
		t := Test{Name: name, Verdict: steps.VerdictAgree, Threshold: v.starThreshold(),
			Reason: "the trend the detrend removed shows no period that stands out of its noise"}
		return t
	}
	long := longestStretch(v.d.Light)
	if v.o.StarTolerance == 0 && !(long > 0 && v.baseline > 0) {
		return notRun(name, "the light curve has no stretch of time over which to judge how precisely the periods are known")
	}
	P := tg.eph.Period
	var nearest, match *starMatch
	for j, ps := range vb.Periods {
		tol := v.starTolerance(ps, long, tg.eph.Duration)
		for _, m := range starMultiples {
			at := ps * m.factor()
			c := &starMatch{star: j, mult: m, at: at, offset: math.Abs(P/at - 1), tolerance: tol}
			if nearest == nil || math.Abs(math.Log(P/at)) < math.Abs(math.Log(P/nearest.at)) {
				nearest = c
			}
			if c.offset <= tol && (match == nil || c.offset/tol < match.offset/match.tolerance) {
				match = c
			}
		}
	}
	shown := nearest
	if match != nil {
		shown = match
	}
	pre := tg.name + "." + name + "."
	amp := vb.Amplitudes[shown.star]
	t := Test{Name: name, Threshold: v.starThreshold(), Figures: []steps.Figure{
		{Name: pre + "nearest", Value: shown.at, Unit: "d",
			Doc: "the multiple or fraction (P★/3, P★/2, P★, 2P★, 3P★) of the star's periods nearest this signal's period; the one matched, when one is"},
		{Name: pre + "ratio", Value: P / vb.Periods[shown.star],
			Doc: "this signal's period over that star's period P★ (near 1/3, 1/2, 1, 2 or 3 at a match)"},
		{Name: pre + "amplitude", Value: amp,
			Doc: "semi-amplitude of the star's variability at that P★, relative flux, as the detrend measured it in the trend it removed"},
		{Name: pre + "tolerance", Value: shown.tolerance,
			Doc: "relative tolerance of a match: a quarter of the star periodogram's resolution, P★/(4L) with L the longest gap-free stretch, plus the signal's duration over the baseline, unless star_period_tolerance is set"},
	}}
	depth := tg.sig.Depth
	strong := depth > 0 && amp >= v.o.VariabilityRatio*depth
	where := days(shown.at)
	if shown.mult != (starMultiple{1, 1}) {
		where = multipleOf(shown.mult, vb.Periods[shown.star]) + " = " + where
	}
	if match == nil {
		t.Verdict = steps.VerdictAgree
		t.Reason = fmt.Sprintf("the period (%.5g d) is not within the tolerance of the star's %s, nor of their multiples and fractions; nearest is %s (%s, %.2g %% off, tolerance %.2g %%)",
			P, starList(vb), shown.mult.words(), where, 100*shown.offset, 100*shown.tolerance)
		return t
	}
	lead := fmt.Sprintf("the period (%.5g d) lies at %s (%s, %.2g %% off, within %.2g %%; seen in the trend the detrend removed, semi-amplitude %s)",
		P, shown.mult.words(), where, 100*shown.offset, 100*shown.tolerance, fraction(amp))
	switch {
	case strong && shown.mult.harmonic():
		t.Verdict = steps.VerdictDisagree
		t.Reason = fmt.Sprintf("%s: the star's semi-amplitude is %.0f times the dip's depth (%s), so a detrend that left a tenth of the star's modulation would make this dip: it is very probably what the detrend left of the star, not a transit",
			lead, amp/depth, ppm(depth))
	case shown.mult.harmonic():
		t.Verdict = steps.VerdictCaution
		t.Reason = lead + ": the dip may be what the detrend left of the star; check that it keeps its depth and shape with another detrend window" + v.weakStar(amp, depth)
		tg.starResidual = !(depth > 0 && amp < depth)
	default:
		t.Verdict = steps.VerdictCaution
		t.Reason = lead + ": folded over several of the star's cycles, what the detrend left of the star can make a dip here; or it is a coincidence" + v.weakStar(amp, depth)
	}
	return t
}

// weakStar adds a clause when the star's modulation is smaller than the dip, so that it can
// hardly have made it alone.
func (v *vetter) weakStar(amp, depth float64) string {
	if depth > 0 && amp < depth {
		return fmt.Sprintf("; but the star's semi-amplitude (%s) is below the dip's depth (%s), so the star alone can hardly have made it: a transit the trend partly followed, or a coincidence", ppm(amp), ppm(depth))
	}
	return ""
}

// starTolerance is the relative tolerance of a match with a multiple of the star's period
// ps: the star's frequency is known to starResolutionFraction/L, so its period to
// ps·starResolutionFraction/L relative (the same for every multiple and fraction, which
// scale the frequency and its error alike), plus the signal's own precision, its duration
// over the baseline (a period off by less moves the transits by under one duration across
// the data). star_period_tolerance replaces the sum.
func (v *vetter) starTolerance(ps, long, dur float64) float64 {
	if v.o.StarTolerance > 0 {
		return v.o.StarTolerance
	}
	return ps*starResolutionFraction/long + dur/v.baseline
}

// starThreshold states the rule.
func (v *vetter) starThreshold() string {
	tol := "P★/(4L) + D/T: a quarter of the star periodogram's resolution 1/L over the longest gap-free stretch L, plus the signal's duration D over the baseline T"
	if v.o.StarTolerance > 0 {
		tol = fmt.Sprintf("%.2g %% (star_period_tolerance)", 100*v.o.StarTolerance)
	}
	return fmt.Sprintf("a period within the tolerance of P★/3, P★/2, P★, 2P★ or 3P★ for any of the star's periods P★ gives a caution; at P★ or a fraction of it, with the star's semi-amplitude at least %.3g times the dip's depth, the data disagree (a windowed trend leaves a tenth of the star's modulation at its own period easily; computed for a local fit in the tests); tolerance %s",
		v.o.VariabilityRatio, tol)
}

// starList names the star's periods: "period 1.000 d (3.0 %)", or "periods 4.200 d (1.5 %)
// and 2.100 d (0.30 %)".
func starList(vb *lightcurve.Variability) string {
	var parts []string
	for j, p := range vb.Periods {
		parts = append(parts, fmt.Sprintf("%s (%s)", days(p), fraction(vb.Amplitudes[j])))
	}
	if len(parts) == 1 {
		return "period " + parts[0]
	}
	return "periods " + strings.Join(parts[:len(parts)-1], ", ") + " and " + parts[len(parts)-1]
}

// multipleOf writes a multiple or fraction of ps as arithmetic: "2 × 1.000 d", "1.000 d / 3".
func multipleOf(m starMultiple, ps float64) string {
	switch {
	case m.den == 1:
		return fmt.Sprintf("%d × %s", m.num, days(ps))
	case m.num == 1:
		return fmt.Sprintf("%s / %d", days(ps), m.den)
	}
	return fmt.Sprintf("%d/%d × %s", m.num, m.den, days(ps))
}

// days writes a period to four significant digits, trailing zeros kept: "1.000 d".
func days(x float64) string { return fmt.Sprintf("%#.4g d", x) }

// fraction writes a relative flux as a percentage when it is at least 0.1 %, else in ppm.
func fraction(x float64) string {
	if x >= 1e-3 {
		return fmt.Sprintf("%#.2g %%", 100*x)
	}
	return ppm(x)
}

// longestStretch is the longest stretch of the light curve without a gap, in days, gaps
// found by the detrend step's own default rule (robust.DefaultGap: the larger of half a day
// and 20 median cadences), so that it matches the pieces the star's periods were measured
// on.
func longestStretch(lc *lightcurve.LightCurve) float64 {
	series := make([]robust.Series, len(lc.Segments))
	for i, s := range lc.Segments {
		series[i] = robust.Series{Time: s.Time}
	}
	gap := robust.DefaultGap(robust.MedianCadence(series))
	longest := 0.0
	for _, s := range lc.Segments {
		start := 0
		for i := 1; i <= len(s.Time); i++ {
			if i == len(s.Time) || s.Time[i]-s.Time[i-1] > gap {
				longest = math.Max(longest, s.Time[i-1]-s.Time[start])
				start = i
			}
		}
	}
	return longest
}

// starResidualAlso adds to a star-period caution at P★ or a fraction of it, when another
// test also speaks against a transit (the shape gives a caution, or the stellar density a
// caution or a disagreement), that the dip is then probably the star's, not a transit.
func starResidualAlso(tg *target, s *Signal) {
	if !tg.starResidual {
		return
	}
	var also []string
	var star *Test
	for k := range s.Tests {
		t := &s.Tests[k]
		switch {
		case t.Name == "star_period":
			star = t
		case t.Name == "shape" && t.Verdict == steps.VerdictCaution:
			also = append(also, "its shape")
		case t.Name == "density" && (t.Verdict == steps.VerdictCaution || t.Verdict == steps.VerdictDisagree):
			also = append(also, "the stellar density")
		}
	}
	if star == nil || star.Verdict != steps.VerdictCaution || len(also) == 0 {
		return
	}
	star.Reason += "; with " + strings.Join(also, " and ") + " also against a transit, it is probably what the detrend left of the star, not a transit"
}
