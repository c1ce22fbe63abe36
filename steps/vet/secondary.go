package vet

import (
	"fmt"
	"math"
	"sort"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/boxmodel"
	"dipline/steps/internal/stardensity"
)

// Fixed choices of the secondary-eclipse search, each with its reason.
const (
	// scanStep is the step between trial phases, in durations: four trials per duration
	// sample a box's position to a quarter of its width (common practice for box scans).
	scanStep = 0.25
	// halfWindow is the half-width, in durations, of the window around phase 0.5 where a
	// circular orbit's occultation falls: it allows for the ephemeris's drift and for a
	// small e cos ω, which moves the occultation by about (2P/π) e cos ω (Winn 2010,
	// from memory).
	halfWindow = 1.0
	// minBoxPoints is the fewest points a trial box needs.
	minBoxPoints = 3
)

// dip is the box fit at one trial phase.
type dip struct {
	phase, depth, sigma, signif float64
}

// secondary searches the folded light curve, with the transits masked, for the most
// significant dip of the transit's duration: within halfWindow durations of phase 0.5,
// and anywhere outside the transit (eccentric orbits). When the odd/even test found the
// dips alternating (deeper ≥ 0), it searches at twice the period with the deeper transits
// as the primary, so that the other half of the dips is what it tests.
func (v *vetter) secondary(tg *target, scale float64, deeper int64) Test {
	const name = "secondary"
	s := secondarySearch{eph: tg.eph, doubled: deeper >= 0}
	if s.doubled {
		s.eph.Epoch += float64(deeper) * s.eph.Period
		s.eph.Period *= 2
	}
	dur, per := s.eph.Duration, s.eph.Period
	if per < 3*dur {
		return notRun(name, fmt.Sprintf("the orbit (%.4g d) leaves less than one duration (%.3g h) clear of the transit on either side", per, dur*24))
	}
	if !v.searchSecondary(&s, tg, scale) {
		return notRun(name, "too few points away from the transit to search")
	}
	s.nHalf = independent(2 * halfWindow)
	s.nAny = independent((per - 2*dur) / dur)
	s.zHalf, s.zAny = SidakThreshold(v.o.SecondaryAlarm, s.nHalf), SidakThreshold(v.o.SecondaryAlarm, s.nAny)

	p := tg.name + "." + name + "."
	t := Test{Name: name, Threshold: fmt.Sprintf("significance %.2f σ near phase 0.5 (%d independent phases) and %.2f σ anywhere (%d phases): a family-wise false-alarm probability of %.3g (about the one-sided normal tail beyond 3 σ; common practice), Šidák-corrected (Šidák 1967, JASA 62, 626); a significant dip disagrees when it is %.3g of the transit's depth or more, or needs a geometric albedo above %.3g",
		s.zHalf, s.nHalf, s.zAny, s.nAny, v.o.SecondaryAlarm, v.o.SecondaryRatio, v.o.MaxAlbedo)}
	t.Figures = s.figures(p, v.o.SecondaryAlarm)
	sigHalf, sigAny := s.half.signif >= s.zHalf, s.wide.signif >= s.zAny
	judged := s.half
	if !sigHalf && sigAny {
		judged = s.wide
	}
	alb := v.albedo(tg, s.eph, s.doubled, s.priDepth, judged)
	t.Figures = append(t.Figures, alb.figures(p)...)
	t.Verdict, t.Reason = s.judge(v.o, alb, judged, sigHalf, sigAny)
	return t
}

// secondarySearch is what the secondary-eclipse search found at the ephemeris it folded on.
type secondarySearch struct {
	eph     boxmodel.Ephemeris
	doubled bool // the period is twice the signal's
	// priDepth and priSigma are the primary transit's box depth and its error.
	priDepth, priSigma float64
	// half is the most significant dip near phase 0.5 and wide the most significant
	// anywhere away from the transit.
	half, wide dip
	// nHalf and nAny are the independent phases searched for each, and zHalf and zAny the
	// significance each must reach.
	nHalf, nAny int
	zHalf, zAny float64
}

// searchSecondary fits the primary transit, masks it, and finds the most significant dips
// near phase 0.5 and anywhere, re-fitting both with the shared box fit; false when too
// few points are left away from the transit.
func (v *vetter) searchSecondary(s *secondarySearch, tg *target, scale float64) bool {
	eph, dur := s.eph, s.eph.Duration
	w := v.weights(tg, true)
	prim := boxmodel.Fit(v.f, w, 1, func(i int) int {
		if _, in := eph.Inside(v.t[i]); in {
			return 0
		}
		return -1
	})
	for i := range w {
		if _, d := eph.Cycle(v.t[i]); d < dur {
			w[i] = 0
		}
	}
	var ok bool
	s.half, s.wide, ok = v.scan(eph, w, scale)
	if !ok {
		return false
	}
	// Report the best dips' numbers from the shared box fit.
	for _, d := range []*dip{&s.half, &s.wide} {
		sh := eph.Shifted(d.phase)
		r := boxmodel.Fit(v.f, w, 1, func(i int) int {
			if _, in := sh.Inside(v.t[i]); in {
				return 0
			}
			return -1
		})
		d.depth, d.sigma = r.Depth[0], scale*r.Sigma[0]
		d.signif = d.depth / d.sigma
	}
	s.priDepth, s.priSigma = prim.Depth[0], scale*prim.Sigma[0]
	return true
}

// figures are the search's numbers under the test's prefix p; alarm is the family-wise
// false-alarm probability the thresholds are set for.
func (s *secondarySearch) figures(p string, alarm float64) []steps.Figure {
	periodDoc := "period folded for the search: the signal's"
	if s.doubled {
		periodDoc = "period folded for the search: twice the signal's, as the odd and even dips differ; the deeper ones are the primary"
	}
	half, wide := s.half, s.wide
	return []steps.Figure{
		{Name: p + "period", Value: s.eph.Period, Unit: "d", Doc: periodDoc},
		{Name: p + "primary_depth", Value: s.priDepth * 1e6, Sigma: s.priSigma * 1e6, Unit: "ppm", Doc: "box depth of the primary transit at that period"},
		{Name: p + "depth", Value: half.depth * 1e6, Sigma: half.sigma * 1e6, Unit: "ppm",
			Doc: fmt.Sprintf("box depth of the most significant dip of the transit's duration within %g duration of phase 0.5", halfWindow)},
		{Name: p + "phase", Value: half.phase, Doc: "phase of that dip (0 at mid-transit)"},
		{Name: p + "significance", Value: half.signif, Doc: "that dip's depth over its error (errors scaled by the noise scale)"},
		{Name: p + "threshold", Value: s.zHalf, Doc: fmt.Sprintf("significance it must reach: family-wise false-alarm probability %.3g over %d independent phases, Šidák-corrected", alarm, s.nHalf)},
		{Name: p + "anywhere_depth", Value: wide.depth * 1e6, Sigma: wide.sigma * 1e6, Unit: "ppm",
			Doc: "box depth of the most significant dip of the transit's duration anywhere at least one duration from the transit (eccentric orbits)"},
		{Name: p + "anywhere_phase", Value: wide.phase, Doc: "phase of that dip (0 at mid-transit)"},
		{Name: p + "anywhere_significance", Value: wide.signif, Doc: "that dip's depth over its error"},
		{Name: p + "anywhere_threshold", Value: s.zAny, Doc: fmt.Sprintf("significance it must reach: family-wise false-alarm probability %.3g over %d independent phases, Šidák-corrected", alarm, s.nAny)},
	}
}

// judge gives the verdict on the judged dip (the one near phase 0.5 unless only a dip
// elsewhere is significant) and the reason, in words.
func (s *secondarySearch) judge(o Options, alb albedoResult, judged dip, sigHalf, sigAny bool) (verdict, reason string) {
	at := func(d dip) string {
		return fmt.Sprintf("%s at phase %.3f (%.1f σ)", ppm(d.depth), d.phase, d.signif)
	}
	where := ""
	if s.doubled {
		where = "at twice the signal's period (the odd and even dips differ), "
	}
	switch {
	case !sigHalf && !sigAny:
		verdict = steps.VerdictAgree
		reason = fmt.Sprintf("%sno significant dip away from the transit: near phase 0.5 the deepest is %s, below %.2f σ; anywhere, %s, below %.2f σ",
			where, at(s.half), s.zHalf, at(s.wide), s.zAny)
	case judged.depth >= o.SecondaryRatio*s.priDepth && s.halfPeriodTwin(judged):
		verdict = steps.VerdictCaution
		reason = fmt.Sprintf("%sa significant dip of %s, as deep as the transit (%s ± %s) within %.3g σ: the signal itself at half the period (%.6g d) would give it (a planet's transits, found at twice their period), as would a binary of two like stars at this period; search down to half this period, or fit the signal at it, before reading it as a binary's",
			where, at(judged), ppm(s.priDepth), ppm(s.priSigma), twinSigma, s.eph.Period/2)
	case judged.depth >= o.SecondaryRatio*s.priDepth:
		verdict = steps.VerdictDisagree
		reason = fmt.Sprintf("%sa significant dip of %s, %.2f of the transit's depth: eclipses of comparable depth are a binary's",
			where, at(judged), judged.depth/s.priDepth)
	case alb.ok && alb.albedo > o.MaxAlbedo:
		verdict = steps.VerdictDisagree
		reason = fmt.Sprintf("%sa significant dip of %s: a planet would need a geometric albedo of %.3g (after %s of the hottest day side's thermal light), above %.3g",
			where, at(judged), alb.albedo, ppm(alb.thermal), o.MaxAlbedo)
	case sigHalf && alb.ok:
		verdict = steps.VerdictAgree
		reason = fmt.Sprintf("%sa significant dip of %s, as a planet's occultation with a geometric albedo of %.2g (after %s of thermal light) would give",
			where, at(judged), alb.albedo, ppm(alb.thermal))
	case sigHalf:
		verdict = steps.VerdictCaution
		reason = fmt.Sprintf("%sa significant dip of %s, small beside the transit, whose albedo cannot be judged", where, at(judged))
	default:
		verdict = steps.VerdictCaution
		reason = fmt.Sprintf("%sa significant dip of %s, away from phase 0.5: an eccentric planet's occultation, another body's transit or a systematic", where, at(judged))
	}
	if !alb.ok {
		reason += "; the albedo was not computed: " + alb.why
	}
	return verdict, reason
}

// twinSigma is the σ within which a dip near phase 0.5 and the transit are taken to be of
// one depth: 3σ (common practice).
const twinSigma = 3.0

// halfPeriodTwin reports whether d, the dip the secondary test judges, lies within
// halfWindow durations of phase 0.5 and is as deep as the transit within twinSigma of
// their combined error, at the signal's own period (not when the search was doubled for an
// alternation): the transit itself at half the period, which a search that could not try
// it (a Roche-type limit set for a giant, a period range) reports at twice its period,
// gives that dip, as a binary of two like stars does.
func (s *secondarySearch) halfPeriodTwin(d dip) bool {
	if s.doubled || math.Abs(d.phase-0.5)*s.eph.Period > halfWindow*s.eph.Duration+1e-12 {
		return false
	}
	return math.Abs(d.depth-s.priDepth) <= twinSigma*math.Hypot(d.sigma, s.priSigma)
}

// independent is the number of independent box positions in a stretch of the given length
// in durations: one per duration, and at least one.
func independent(lengthInDurations float64) int {
	return max(1, int(math.Floor(lengthInDurations+1e-9))+1)
}

// scan slides a box of the transit's duration over the folded points with positive weight
// and returns the most significant dip within halfWindow durations of phase 0.5 and the
// most significant anywhere, their centres between one duration after the transit and one
// before the next. The sums are prefix sums over the points sorted by phase, so the scan
// costs O(N log N + trials); its depth and error are boxmodel's closed form (level the
// weighted mean outside the box, σ = √(1/W_box + 1/W_out)), and the caller re-fits the
// best dips with boxmodel.Fit itself.
func (v *vetter) scan(eph boxmodel.Ephemeris, w []float64, scale float64) (half, wide dip, ok bool) {
	per, dur := eph.Period, eph.Duration
	type folded struct{ x, w, f float64 }
	var pts []folded
	for i, wi := range w {
		if wi > 0 {
			x := math.Mod(v.t[i]-eph.Epoch, per)
			if x < 0 {
				x += per
			}
			pts = append(pts, folded{x, wi, v.f[i]})
		}
	}
	if len(pts) < 2*minBoxPoints {
		return half, wide, false
	}
	sort.Slice(pts, func(a, b int) bool { return pts[a].x < pts[b].x })
	cw := make([]float64, len(pts)+1)
	cf := make([]float64, len(pts)+1)
	xs := make([]float64, len(pts))
	for j, p := range pts {
		xs[j] = p.x
		cw[j+1] = cw[j] + p.w
		cf[j+1] = cf[j] + p.w*p.f
	}
	wt, ft := cw[len(pts)], cf[len(pts)]
	half.signif, wide.signif = math.Inf(-1), math.Inf(-1)
	foundHalf, foundAny := false, false
	for c := dur; c <= per-dur+1e-12; c += scanStep * dur {
		lo := sort.SearchFloat64s(xs, c-dur/2)
		hi := sort.SearchFloat64s(xs, c+dur/2)
		wb, fb := cw[hi]-cw[lo], cf[hi]-cf[lo]
		wo := wt - wb
		if hi-lo < minBoxPoints || !(wo > 0) {
			continue
		}
		d := dip{phase: c / per, depth: (ft-fb)/wo - fb/wb, sigma: scale * math.Sqrt(1/wb+1/wo)}
		d.signif = d.depth / d.sigma
		if d.signif > wide.signif {
			wide, foundAny = d, true
		}
		if math.Abs(c-per/2) <= halfWindow*dur+1e-12 && d.signif > half.signif {
			half, foundHalf = d, true
		}
	}
	return half, wide, foundHalf && foundAny
}

// albedoResult is the geometric albedo a dip implies, or why it cannot be computed.
type albedoResult struct {
	ok                               bool
	why                              string
	albedo, sigma, thermal, tDay, aR float64
	k                                float64
}

// figures are the albedo's numbers under the test's prefix p; none when it was not computed.
func (a albedoResult) figures(p string) []steps.Figure {
	if !a.ok {
		return nil
	}
	return []steps.Figure{
		{Name: p + "albedo", Value: a.albedo, Sigma: a.sigma,
			Doc: fmt.Sprintf("geometric albedo a planet would need for the judged dip (the one near phase 0.5 unless only a dip elsewhere is significant): A_g = (δ − δ_thermal)(a/Rp)², with a/R* = %.3g and k = %.3g", a.aR, a.k)},
		{Name: p + "thermal_depth", Value: a.thermal * 1e6, Unit: "ppm",
			Doc: "thermal emission of the hottest possible day side in the band, k² B_λ(T_day)/B_λ(Teff), subtracted before the albedo"},
		{Name: p + "day_temperature", Value: a.tDay, Unit: "K",
			Doc: "hottest day-side temperature: Bond albedo 0, no heat redistribution, T_day = Teff √(R*/a) (2/3)^¼ (Cowan & Agol 2011, from memory)"},
	}
}

// albedo computes the geometric albedo the dip d would need if it were the planet's
// occultation at the (possibly doubled) ephemeris eph. k comes from the fit (when matched
// and the period was not doubled) or from the primary's box depth; a/R* from the fit
// (scaled to the period by Kepler's third law) or from the star's density; Teff from the
// star.
func (v *vetter) albedo(tg *target, eph boxmodel.Ephemeris, doubled bool, priDepth float64, d dip) albedoResult {
	var r albedoResult
	r.k = math.Sqrt(math.Max(priDepth, 0))
	switch {
	case tg.post != nil:
		aR, _, _ := oneSigma(finiteSorted(tg.post.aR))
		per, _, _ := oneSigma(finiteSorted(tg.post.period))
		r.aR, _ = astro.ScaledAxisAtPeriod(aR, per, eph.Period) // 0, refused below, when undefined
		if !doubled {
			r.k, _, _ = oneSigma(finiteSorted(tg.post.k))
		}
	case v.d.Star != nil && len(stardensity.Draws(v.d.Star)) > 0:
		rho, _, _ := oneSigma(finiteSorted(stardensity.Draws(v.d.Star)))
		aR, err := astro.ScaledAxisFromDensity(rho*1000, eph.Period*astro.Day)
		if err != nil {
			r.why = "the star's density gives no orbit"
			return r
		}
		r.aR = aR
	default:
		r.why = "no fit and no star density to give a/R*"
		return r
	}
	if v.d.Star == nil || len(finiteSorted(v.d.Star.Teff)) == 0 {
		r.why = "no star temperature for the thermal emission"
		return r
	}
	if !(r.k > 0) {
		r.why = "the transit's depth is not positive"
		return r
	}
	teff, _, _ := oneSigma(finiteSorted(v.d.Star.Teff))
	tDay, err := DayTemperature(teff, r.aR)
	if err != nil {
		r.why = "the day-side temperature cannot be computed"
		return r
	}
	r.tDay = tDay
	r.thermal = ThermalDepth(r.k, v.o.Wavelength, tDay, teff)
	r.albedo = GeometricAlbedo(d.depth, r.thermal, r.aR, r.k)
	r.sigma = GeometricAlbedo(d.sigma, 0, r.aR, r.k)
	r.ok = !math.IsNaN(r.albedo)
	if !r.ok {
		r.why = "the thermal emission cannot be computed"
	}
	return r
}
