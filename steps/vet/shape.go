package vet

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/internal/boxmodel"
)

// The trapezoid's grid, each with its reason.
const (
	// trapShortest, trapLongest bound the trial first-to-last-contact durations in box
	// durations: a search's box lies between the full and the total duration, and is down
	// to about half of the total for a V shape (steps/search), so T14 ∈ [0.7, 2.5] boxes
	// covers both ends with room.
	trapShortest, trapLongest = 0.7, 2.5
	// trapDurations is the number of trial durations, spaced evenly in log (3.6 % apart,
	// finer than a duration's typical error).
	trapDurations = 37
	// trapFractions is the number of trial ingress fractions T12/T14 from 0 (a box) to 0.5
	// (a V), 0.02 apart.
	trapFractions = 26
	// trapWindow is the half-width of the stretch around each mid-transit the trapezoid is
	// fitted to, in box durations: the longest trial reaches 1.25, leaving at least 1.25
	// of level on either side.
	trapWindow = 2.5
	// trapDelta2 is the Δχ² bounding the ingress fraction's interval: 4, two σ for one
	// parameter of a normal likelihood (common practice).
	trapDelta2 = 4.0
	// maxSub bounds the sub-exposures per point of the trapezoid; subPerDuration sets them
	// to one per 1/20 of the box duration, so that an exposure long beside the ingress
	// does not pass for a V shape (Kipping 2010's smearing, here in its simplest form).
	maxSub, subPerDuration = 21, 20
)

// shape judges whether the dip is V-shaped or grazing: from the fit's share of grazing
// samples when it is matched, otherwise from a trapezoid fitted to the folded transit.
func (v *vetter) shape(tg *target, w []float64, scale float64) Test {
	if tg.post != nil {
		return v.shapeFromFit(tg)
	}
	return v.shapeFromTrapezoid(tg, w, scale)
}

// shapeFromFit gives the posterior probability of a grazing chord, b + k > 1. Its rule:
// a caution when that probability reaches GrazingProbability (default ½: grazing is then
// more likely than not). Never "disagree": grazing planets exist, though a grazing
// binary fits such a dip as well, and a grazing planet's k is poorly measured. When the
// fit's transit times vary enough to smear the stacked transit (timingOf), the reason says
// that the V may be the smear's rather than a grazing binary's.
func (v *vetter) shapeFromFit(tg *target) Test {
	const name = "shape"
	p := tg.post
	share, mc := p.grazingShare()
	frac := make([]float64, 0, p.n())
	for i := 0; i < p.n(); i++ {
		t14, t23, ok := p.contacts(i)
		if ok {
			frac = append(frac, (t14-t23)/(2*t14))
		}
	}
	f, fSig, fMC := oneSigma(finiteSorted(frac))
	pre := tg.name + "." + name + "."
	t := Test{Name: name,
		Threshold: fmt.Sprintf("a caution when the posterior probability of a grazing chord reaches %.3g (more likely than not at 0.5); grazing planets exist, so never a disagreement", v.o.GrazingProbability),
		Figures: []steps.Figure{
			{Name: pre + "grazing_probability", Value: share, MCError: mc,
				Doc: fmt.Sprintf("share of the fit's samples of planet %s on a grazing chord, b + k > 1", tg.planet)},
			{Name: pre + "ingress_fraction", Value: f, Sigma: fSig, MCError: fMC,
				Doc: "T12/T14, ingress time over first-to-last contact, from the fit's samples (Winn 2010 durations); 0.5 for a V shape; median, σ half the 16–84 % range"},
		}}
	if share >= v.o.GrazingProbability {
		t.Verdict = steps.VerdictCaution
		if tg.ttv != "" {
			t.Reason = fmt.Sprintf("%.0f %% of the fit's samples graze the star (b + k > 1), a V-shaped dip", 100*share) +
				tg.timingCaveat("the V shape and the grazing chord (and so k and b) may be the smear's work rather than a grazing binary's")
			return t
		}
		t.Reason = fmt.Sprintf("%.0f %% of the fit's samples graze the star (b + k > 1): a V-shaped dip, as a grazing binary gives; a grazing planet's radius is poorly measured", 100*share)
		return t
	}
	t.Verdict = steps.VerdictAgree
	t.Reason = fmt.Sprintf("%.0f %% of the fit's samples graze the star; ingress and egress take %.2f of the transit", 100*share, f)
	return t
}

// shapeFromTrapezoid fits a trapezoid to the transits and profiles its ingress fraction.
// Its rule: a caution when even the lower end of the fraction's 2σ interval reaches
// VShapeFraction (default 0.35), i.e. the data exclude a flat bottom as long as
// 1 − 2·0.35 = 30 % of the dip. Measured on noise-free limb-darkened transits, every
// non-grazing chord up to b = 0.85 gives the trapezoid less than 0.35, grazing chords
// 0.32–0.38 and a binary's V 0.5 (TestTheVShapeThresholdSeparatesChordsFromVs), so the
// caution marks V-shaped and grazing dips. Never "disagree", as for the fit.
func (v *vetter) shapeFromTrapezoid(tg *target, w []float64, scale float64) Test {
	const name = "shape"
	tr, ok := v.trapezoid(tg.eph, w, scale)
	if !ok {
		return notRun(name, "too few points in and around the transits to fit a trapezoid")
	}
	pre := tg.name + "." + name + "."
	t := Test{Name: name,
		Threshold: fmt.Sprintf("a caution when the trapezoid's ingress fraction T12/T14 is at least %.3g at 2 σ (Δχ² = 4): no flat bottom; limb-darkened chords up to b = 0.85 stay below 0.35 and a V gives 0.5 (measured on the Mandel & Agol model)", v.o.VShapeFraction),
		Figures: []steps.Figure{
			{Name: pre + "ingress_fraction", Value: tr.frac,
				Doc: "T12/T14 of the best trapezoid fitted to the transits (level, depth, duration and ingress fitted, mid-times fixed, integrated over each exposure); 0 a box, 0.5 a V"},
			{Name: pre + "ingress_fraction_low", Value: tr.fracLo,
				Doc: "lower end of the ingress fraction's 2σ interval (Δχ² = 4 on the profile over duration, level and depth, errors scaled by the noise scale)"},
			{Name: pre + "trapezoid_duration", Value: tr.t14 * 24, Unit: "h", Doc: "first-to-last-contact duration of the best trapezoid"},
		}}
	if tr.fracLo >= v.o.VShapeFraction {
		t.Verdict = steps.VerdictCaution
		t.Reason = fmt.Sprintf("V-shaped: ingress and egress fill the dip (T12/T14 = %.2f, at least %.2f at 2 σ): a near-grazing planet or an eclipsing binary", tr.frac, tr.fracLo)
		return t
	}
	t.Verdict = steps.VerdictAgree
	t.Reason = fmt.Sprintf("a flat bottom fits: T12/T14 = %.2f (down to %.2f at 2 σ)", tr.frac, tr.fracLo)
	return t
}

// trapFit is the best trapezoid and the lower end of its ingress fraction's interval.
type trapFit struct {
	t14, frac, fracLo float64
}

// trapezoid fits level − depth·s(t) on a grid of durations T14 and ingress fractions
// f = T12/T14, where s is 1 on the flat bottom, falls linearly to 0 over each ingress
// and egress and is averaged over each point's exposure; level and depth are solved by
// weighted least squares at every grid point, and the fraction's profile χ² is the least
// over durations.
func (v *vetter) trapezoid(eph boxmodel.Ephemeris, w []float64, scale float64) (trapFit, bool) {
	dur := eph.Duration
	type pt struct {
		dt   []float64 // sub-exposure times from mid-transit, days
		w, y float64
	}
	var pts []pt
	for i, wi := range w {
		if !(wi > 0) {
			continue
		}
		n, d := eph.Cycle(v.t[i])
		if d >= trapWindow*dur {
			continue
		}
		x := v.t[i] - (eph.Epoch + float64(n)*eph.Period)
		exp := v.d.Light.Segments[v.seg[i]].Exposure
		ns := 1
		if exp > 0 {
			ns = min(maxSub, max(1, int(math.Ceil(exp*subPerDuration/dur))))
		}
		sub := make([]float64, ns)
		for k := range sub {
			sub[k] = x + exp*((float64(k)+0.5)/float64(ns)-0.5)
		}
		pts = append(pts, pt{dt: sub, w: wi / (scale * scale), y: v.f[i]})
	}
	if len(pts) < 10 {
		return trapFit{}, false
	}
	// Centre the fluxes so that χ² is not a small difference of large sums.
	var sw, swy float64
	for _, p := range pts {
		sw += p.w
		swy += p.w * p.y
	}
	for j := range pts {
		pts[j].y -= swy / sw
	}
	prof := make([]float64, trapFractions)
	bestT14 := make([]float64, trapFractions)
	for j := range prof {
		prof[j] = math.Inf(1)
	}
	for a := 0; a < trapDurations; a++ {
		t14 := dur * trapShortest * math.Pow(trapLongest/trapShortest, float64(a)/float64(trapDurations-1))
		for j := 0; j < trapFractions; j++ {
			f := 0.5 * float64(j) / float64(trapFractions-1)
			var s0, s1, s2, y0, y1, y2 float64
			for _, p := range pts {
				m := 0.0
				for _, x := range p.dt {
					m += trapShape(math.Abs(x), t14, f)
				}
				m /= float64(len(p.dt))
				s0 += p.w
				s1 += p.w * m
				s2 += p.w * m * m
				y0 += p.w * p.y
				y1 += p.w * p.y * m
				y2 += p.w * p.y * p.y
			}
			det := s0*s2 - s1*s1
			if !(det > 1e-12*s0*s2) {
				continue
			}
			level := (y0*s2 - y1*s1) / det
			c := (s0*y1 - s1*y0) / det // c = −depth
			chi2 := y2 - level*y0 - c*y1
			if c < 0 && chi2 < prof[j] {
				prof[j], bestT14[j] = chi2, t14
			}
		}
	}
	best := -1
	for j, c := range prof {
		if !math.IsInf(c, 1) && (best < 0 || c < prof[best]) {
			best = j
		}
	}
	if best < 0 {
		return trapFit{}, false
	}
	tr := trapFit{t14: bestT14[best], frac: 0.5 * float64(best) / float64(trapFractions-1), fracLo: 0.5}
	for j, c := range prof {
		if c-prof[best] <= trapDelta2 {
			tr.fracLo = 0.5 * float64(j) / float64(trapFractions-1)
			break
		}
	}
	return tr, true
}

// trapShape is the trapezoid's shape at distance u from mid-transit: 1 on the flat
// bottom, 0 outside, linear over the ingress of length f·t14.
func trapShape(u, t14, f float64) float64 {
	half := t14 / 2
	switch {
	case u >= half:
		return 0
	case f <= 0:
		return 1
	}
	ramp := f * t14
	if u <= half-ramp {
		return 1
	}
	return (half - u) / ramp
}
