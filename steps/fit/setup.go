package fit

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/transit"
)

// draft is newProblem's work in progress: the problem being built, the options, and per
// entry of the full parameter vector its start value and start scale.
type draft struct {
	*problem
	o           Options
	lay         layout // set once the bands are known (keepPoints)
	start, step []float64
	// sumW and sumWT are, per planet, Σ 1/σ² and Σ t/σ² over the points near its predicted
	// transits: their ratio is the weighted centre near which its reference epoch lies.
	sumW, sumWT []float64
}

// draftModel is the model's first phases, shared by a fit and by what it shows (view.go):
// the names checked, the points near the predicted transits kept, the planets, the
// global parameters and the bands added.
func draftModel(lc *lightcurve.LightCurve, o Options) (*draft, error) {
	d := &draft{o: o, problem: &problem{
		m:   &Model{planets: len(o.Signals), jitter: o.Jitter},
		art: &Artifact{Frame: lc.Frame(), Window: o.Window},
	}}
	if err := d.checkNames(lc); err != nil {
		return nil, err
	}
	if err := d.keepPoints(lc); err != nil {
		return nil, err
	}
	d.addPlanets()
	d.addGlobals()
	d.addBands()
	return d, nil
}

// newProblem selects the points near the predicted transits, builds the model over them
// and returns it with the artifact's frame, segment list, reference epochs and priors, the
// start point, the start scale per sampled parameter and the notes so far.
func newProblem(lc *lightcurve.LightCurve, o Options) (*problem, error) {
	d, err := draftModel(lc, o)
	if err != nil {
		return nil, err
	}
	if err := d.applyPriors(); err != nil {
		return nil, err
	}
	d.reparametrise()
	d.freeVector()
	d.notePriors()
	m := d.m
	m.maxFine = max(m.maxFine, 1)
	if lp := m.LogPost(d.x0); math.IsInf(lp, 0) || math.IsNaN(lp) {
		return nil, steps.BadInputf("signals: the start values give no valid model (log posterior %v)", lp)
	}
	return d.problem, nil
}

// checkNames checks the names the options use: the eccentric planets (which it marks in
// the model), the planets of the prior keys and the bands of the limb-darkening priors.
func (d *draft) checkNames(lc *lightcurve.LightCurve) error {
	np := d.m.planets
	for _, name := range d.o.Eccentric {
		j := planetIndex(name)
		if j < 0 || j >= np {
			return steps.Attrf("eccentric", "%q is not one of the %d planet(s) fitted (%s)", name, np, strings.Join(planetNames[:np], ", "))
		}
		d.m.ecc[j] = true
	}
	for key := range d.o.Priors {
		if err := checkPriorKey(key); err != nil {
			return steps.Attrf("priors", "key %q: %v", key, err)
		}
		if pl, _, ok := strings.Cut(key, "."); ok && planetIndex(pl) >= np {
			return steps.Attrf("priors", "key %q: planet %s is not fitted (%d planet(s))", key, pl, np)
		}
	}
	bandSeen := map[string]bool{}
	for _, seg := range lc.Segments {
		bandSeen[seg.Band] = true
	}
	for band := range d.o.Limb {
		if band != "default" && !bandSeen[band] {
			return steps.Attrf("limb_darkening", "band %q: no segment of the light curve has this band", band)
		}
	}
	return nil
}

// keepPoints keeps the points within Window search durations of a predicted mid-transit
// of any planet, segment by segment, each segment with its band and its sub-exposures, and
// notes what it kept. The selection is fixed before fitting so the likelihood is a smooth
// function.
func (d *draft) keepPoints(lc *lightcurve.LightCurve) error {
	m, o := d.m, d.o
	d.sumW, d.sumWT = make([]float64, m.planets), make([]float64, m.planets)
	kept := 0
	bandIndex := map[string]int{}
	for si := range lc.Segments {
		seg := &lc.Segments[si]
		sd, err := d.nearTransits(seg)
		if err != nil {
			return err
		}
		if len(sd.t) == 0 {
			continue
		}
		b, ok := bandIndex[seg.Band]
		if !ok {
			if len(m.bands) == maxBands {
				return steps.BadInputf("light_curve: more than %d distinct bands; the fit takes at most %d", maxBands, maxBands)
			}
			b = len(m.bands)
			bandIndex[seg.Band] = b
			m.bands = append(m.bands, seg.Band)
			lp, ok := o.Limb[seg.Band]
			if !ok {
				lp = o.Limb["default"]
			}
			m.ld = append(m.ld, lp)
		}
		sd.band = b
		d.integrate(&sd, seg)
		m.maxFine = max(m.maxFine, len(sd.fine))
		m.maxPoints = max(m.maxPoints, len(sd.t))
		m.segs = append(m.segs, sd)
		kept += len(sd.t)
		d.art.Segments = append(d.art.Segments, SegmentInfo{ID: seg.ID, Band: seg.Band, Exposure: seg.Exposure, Points: len(sd.t), NSub: sd.nsub})
	}
	for j := range o.Signals {
		if d.sumW[j] == 0 {
			return steps.BadInputf("light_curve: no points within %g durations of any transit of signal %d (period %.6g d)", o.Window, j+1, o.Signals[j].Period)
		}
	}
	if kept < 10 {
		return steps.BadInputf("light_curve: only %d points near the transits; at least 10 are needed", kept)
	}
	d.lay = m.layout()
	d.notes = append(d.notes, fmt.Sprintf("likelihood: %d points within %g search durations of a predicted mid-transit, in %d segment(s); the rest of the light curve is left out", kept, o.Window, len(m.segs)))
	for _, s := range d.art.Segments {
		d.notes = append(d.notes, fmt.Sprintf("exposure: segment %s, %.4g min, integrated with %d sub-exposure(s) per point (bound on the integration error: %g of the median point error)", s.ID, s.Exposure*1440, s.NSub, integrationShare))
	}
	return nil
}

// nearTransits returns the points of seg within Window search durations of a predicted
// mid-transit of any planet, adding their weights to sumW and sumWT, or an error for a
// point that cannot be used.
func (d *draft) nearTransits(seg *lightcurve.Segment) (segData, error) {
	var sd segData
	for i, t := range seg.Time {
		f, e := seg.Flux[i], seg.Err[i]
		if math.IsNaN(t) || math.IsInf(t, 0) || math.IsNaN(f) || math.IsInf(f, 0) || !(e > 0) || math.IsInf(e, 0) {
			return segData{}, steps.BadInputf("light_curve: segment %s, point %d: time %v, flux %v, error %v are not usable", seg.ID, i+1, t, f, e)
		}
		in := false
		for j, s := range d.o.Signals {
			if s.InTransit(t, 2*d.o.Window) {
				in = true
				d.sumW[j] += 1 / (e * e)
				d.sumWT[j] += t / (e * e)
			}
		}
		if in {
			sd.t = append(sd.t, t)
			sd.f = append(sd.f, f)
			sd.v = append(sd.v, e*e)
		}
	}
	return sd, nil
}

// integrate sets the sub-exposures of the points sd kept from seg: their number
// (subexposures, when Supersample is on and the exposure is known), the half exposure and
// the sub-exposure times.
func (d *draft) integrate(sd *segData, seg *lightcurve.Segment) {
	o := d.o
	sd.nsub = 1
	if o.Supersample && seg.Exposure > 0 && !math.IsInf(seg.Exposure, 0) {
		sigma := typicalError(sd.v)
		for _, s := range o.Signals {
			k := math.Sqrt(math.Max(s.Depth, 1e-6))
			sd.nsub = max(sd.nsub, subexposures(seg.Exposure, k*k, s.Duration*k/(1+k), sigma))
		}
		if o.nsub > 0 {
			sd.nsub = o.nsub
		}
	}
	exposure := seg.Exposure
	if !(exposure > 0) || math.IsInf(exposure, 0) {
		exposure = 0
	}
	if sd.nsub > 1 {
		sd.half = exposure / 2
	}
	sd.fine = make([]float64, len(sd.t)*sd.nsub)
	// SubexposureTimes with n = 1 returns the mid-times themselves.
	copy(sd.fine, subTimes(sd.t, exposure, sd.nsub))
}

// add appends an entry to the full vector with its start value x0 and start scale sc.
func (d *draft) add(p param, x0, sc float64) {
	d.m.params = append(d.m.params, p)
	d.start = append(d.start, x0)
	d.step = append(d.step, sc)
}

// addPlanets adds every planet's entries with their supports and start values, and its
// reference epoch: the transit nearest the weighted centre of its points. The bounds on
// period and mid-time keep every modelled transit inside the fixed windows.
func (d *draft) addPlanets() {
	m := d.m
	for j, s := range d.o.Signals {
		centre := d.sumWT[j] / d.sumW[j]
		n := math.Round((centre - s.Epoch) / s.Period)
		t0 := s.Epoch + n*s.Period
		nmax := 1.0
		for _, sd := range m.segs {
			for _, t := range sd.t {
				if s.InTransit(t, 2*d.o.Window) {
					nmax = math.Max(nmax, math.Abs(math.Round((t-t0)/s.Period)))
				}
			}
		}
		d.art.Reference = append(d.art.Reference, Reference{Transit: int64(n), Time: t0})
		dP := s.Duration / nmax
		k0 := math.Min(math.Sqrt(math.Max(s.Depth, 1e-6)), 0.9)
		pl := planetNames[j] + "."
		d.add(param{name: pl + "period", lo: math.Max(s.Period-dP, s.Period/2), hi: s.Period + dP}, s.Period, dP/10)
		d.add(param{name: pl + "t0", lo: t0 - s.Duration, hi: t0 + s.Duration}, t0, s.Duration/10)
		d.add(param{name: pl + "k", lo: 0, hi: 1}, k0, 0.2*k0)
		d.add(param{name: pl + "b", lo: 0, hi: 2}, startB, 0.1)
		hidden := !m.ecc[j]
		d.add(param{name: pl + "secosw", lo: -1, hi: 1, fixed: hidden}, 0, 0.1)
		d.add(param{name: pl + "sesinw", lo: -1, hi: 1, fixed: hidden}, 0, 0.1)
	}
}

// addGlobals adds the star's density, started where the first planet's box and start k
// put it, and the dilution: sampled or fixed under its prior when one is given, else held
// at 0.
func (d *draft) addGlobals() {
	s0 := d.o.Signals[0]
	k0 := d.start[d.lay.K(0)]
	aR0 := s0.Period / (math.Pi * s0.Duration) * math.Sqrt((1+k0)*(1+k0)-startB*startB)
	rho0 := math.Min(math.Max(DensityFromAxis(s0.Period, aR0), 2*densityLo), densityHi/2)
	d.add(param{name: "log10_star_density", lo: math.Log10(densityMin), hi: math.Log10(densityMax), log10: true,
		prior: Prior{Shape: LogUniform, A: densityLo, B: densityHi}}, math.Log10(rho0), 0.1)
	if p := d.o.Dilution; p != nil {
		d.m.dilution = true
		if p.Shape == Fixed {
			d.add(param{name: "dilution", fixed: true, value: p.A}, p.A, 0)
		} else {
			c := p.centre()
			d.add(param{name: "dilution", lo: 0, hi: math.MaxFloat64, prior: *p}, c, math.Min(p.width(), math.Max(c, 0.01)))
		}
	} else {
		d.add(param{name: "dilution", fixed: true}, 0, 0)
	}
}

// addBands adds q1, q2 per band, started from the band's limb-darkening prior when it has
// one (in range), and then the ln jitter per segment when jitter is on.
func (d *draft) addBands() {
	m := d.m
	for _, band := range m.bands {
		q1, q2 := "q1", "q2"
		if band != "" {
			q1, q2 = "q1["+band+"]", "q2["+band+"]"
		}
		d.add(param{name: q1, lo: 0, hi: 1}, startQ1, 0.1)
		d.add(param{name: q2, lo: 0, hi: 1}, startQ2, 0.1)
	}
	for i, lp := range m.ld {
		if lp.U1Sigma > 0 {
			q1, q2 := transit.KippingFromQuadratic(lp.U1, lp.U2)
			if q1 > 0 && q1 < 1 && q2 > 0 && q2 < 1 {
				d.start[d.lay.Q1(i)], d.start[d.lay.Q2(i)] = q1, q2
			}
		}
	}
	if d.o.Jitter {
		for s := range m.segs {
			d.add(param{name: fmt.Sprintf("segment%d.ln_jitter", s+1), lo: math.Log(jitterLo), hi: math.Log(jitterHi)}, math.Log(1e-5), 1)
		}
	}
}

// applyPriors puts the workflow's priors in place of the fit's own; the supports stay. A
// fixed prior holds its entry, and must lie inside the support.
func (d *draft) applyPriors() error {
	for key, pr := range d.o.Priors {
		idx := d.lay.priorEntry(key)
		p := &d.m.params[idx]
		p.prior = pr
		v := pr.centre()
		if p.log10 {
			v = math.Log10(v)
		}
		if pr.Shape == Fixed {
			p.fixed, p.value, p.prior = true, v, Prior{}
			if !(v >= p.lo && v <= p.hi) {
				return steps.Attrf("priors", "key %q: %s lies outside what the data allow for it (%.6g to %.6g)", key, pr, p.lo, p.hi)
			}
			d.start[idx] = v
			continue
		}
		if key == "star_density" || math.IsInf(p.logPrior(d.start[idx]), -1) {
			d.start[idx] = math.Min(math.Max(v, p.lo), p.hi)
		}
		w := pr.width()
		if p.log10 {
			w /= pr.centre() * math.Ln10
		}
		d.step[idx] = math.Min(d.step[idx], w)
	}
	return nil
}

// reparametrise turns the entries that Model.physical maps into their sampled coordinates:
// δ for k, the chord for b, logits for q1, q2.
func (d *draft) reparametrise() {
	rhoStart := math.Pow(10, d.start[d.lay.Density()])
	d.depthCoordinates()
	d.chordCoordinates(rhoStart)
	// q1, q2 are sampled as logits (see Model.physical).
	for i := range d.m.bands {
		for _, idx := range []int{d.lay.Q1(i), d.lay.Q2(i)} {
			q := d.start[idx]
			d.m.params[idx].logit, d.m.params[idx].lo, d.m.params[idx].hi = true, math.Inf(-1), math.Inf(1)
			d.start[idx], d.step[idx] = logit(q), d.step[idx]/(q*(1-q))
		}
	}
}

// depthCoordinates makes each planet whose k has the fit's own prior sample a depth-like δ
// in place of k (see radius): at fixed δ, b changes the ingress but hardly the depth, where
// at fixed k a larger b makes the transit shallower through the limb darkening.
func (d *draft) depthCoordinates() {
	m, lay := d.m, d.lay
	u1, u2 := transit.QuadraticFromKipping(d.start[lay.Q1(0)], d.start[lay.Q2(0)])
	for j := 0; j < m.planets; j++ {
		kp := &m.params[lay.K(j)]
		if _, user := d.o.Priors[planetNames[j]+".k"]; user || kp.fixed {
			continue
		}
		c, ok := darkening(d.start[lay.B(j)], u1, u2)
		if !ok {
			continue
		}
		m.depthParam[j] = true
		kp.hi = math.Inf(1) // k ≤ 1 is enforced on k itself (radius)
		k0 := d.start[lay.K(j)]
		d.start[lay.K(j)], d.step[lay.K(j)] = k0*k0/c, 0.4*k0*k0/c
	}
}

// chordCoordinates makes each circular planet whose b is not fixed sample its chord
// coordinate in place of b while the density is free (see Model.impact), at the start
// density rhoStart: the data measure each transit's duration, and at fixed durations the
// shared density moves every planet's b at once, so in chords that ridge runs along the
// density's own axis.
func (d *draft) chordCoordinates(rhoStart float64) {
	m, lay := d.m, d.lay
	for j := 0; j < m.planets && !m.params[lay.Density()].fixed; j++ {
		bp := &m.params[lay.B(j)]
		if m.ecc[j] || bp.fixed {
			continue
		}
		m.chordParam[j], m.bPrior[j] = true, bp.prior
		a := ScaledAxis(d.o.Signals[j].Period, rhoStart)
		b0 := d.start[lay.B(j)]
		bs := math.Max(b0, startB)
		dw := 2 * bs * (a*a - 1) / ((a*a - bs*bs) * (a*a - bs*bs)) * d.step[lay.B(j)] // |dw/db|·Δb
		// Every b in [0, 1 + k) has a chord in ((1 − (1+k)²)/(a² − (1+k)²), 1/a²], so the
		// stored coordinate is bounded only by impact.
		*bp = param{name: bp.name, lo: math.Inf(-1), hi: 1}
		d.start[lay.B(j)], d.step[lay.B(j)] = chord(b0, a), dw
	}
}

// freeVector lists the sampled entries and gives each its start value and scale; the
// fixed ones keep their start value.
func (d *draft) freeVector() {
	m := d.m
	for i := range m.params {
		p := &m.params[i]
		if p.fixed {
			p.value = d.start[i]
			continue
		}
		m.free = append(m.free, i)
		d.x0 = append(d.x0, d.start[i])
		d.scale = append(d.scale, d.step[i])
	}
}

// notePriors notes, in a stable order, the priors that differ from the fit's own, and
// keeps them in the artifact.
func (d *draft) notePriors() {
	var pn []string
	for key, pr := range d.o.Priors {
		pn = append(pn, fmt.Sprintf("prior: %s %s", key, pr))
	}
	if d.o.Dilution != nil {
		pn = append(pn, fmt.Sprintf("prior: dilution %s", *d.o.Dilution))
	}
	for i, band := range d.m.bands {
		if lp := d.m.ld[i]; lp.U1Sigma > 0 {
			pn = append(pn, fmt.Sprintf("prior: band %q: u1 = %g ± %g, u2 = %g ± %g (Gaussian, sampled in q1, q2)", band, lp.U1, lp.U1Sigma, lp.U2, lp.U2Sigma))
		}
	}
	sort.Strings(pn)
	d.notes = append(d.notes, pn...)
	d.art.Priors = pn
}

// subexposures is the number N of sub-exposures per point for an exposure of length T, a
// transit of depth δ whose ingress lasts τ, and points of error σ: the least N for which a
// bound on the midpoint-rule error is below ε = integrationShare·σ, capped at maxSub. The
// bound is our derivation for a trapezoid (ingress a linear ramp of slope s = δ/τ): the
// midpoint rule is exact on the linear pieces; a sub-interval of width h = T/N holding one
// kink errs in its integral by at most s h²/8, and by no more when it holds both ends of a
// ramp shorter than h (error δ(h−τ)/2 ≤ s h²/8 since (h−2τ)² ≥ 0) or when a step-like ramp
// is reduced to δh/2; kinks in different sub-intervals err with opposite signs. Averaged
// over T: E ≤ min(δT/(8τN²), δ/(2N)), so N ≥ min(√(δT/(8τε)), δ/(2ε)). The error falls
// as 1/N² (Kipping 2010, MNRAS 408, 1758). τ is taken from the search's box (its duration
// times k/(1+k)), short of the true ingress, which errs on the safe side; the limb-darkened
// model is smoother than the trapezoid (model_test.go measures the real error).
func subexposures(exposure, depth, ingress, sigma float64) int {
	eps := integrationShare * sigma
	if !(exposure > 0) || !(depth > 0) || !(eps > 0) {
		return 1
	}
	n := math.Inf(1)
	if ingress > 0 {
		n = math.Sqrt(depth * exposure / (8 * ingress * eps))
	}
	n = math.Ceil(math.Min(n, depth/(2*eps)))
	return int(math.Max(1, math.Min(maxSub, n)))
}

// typicalError is the median point error √v of a segment.
func typicalError(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return math.Sqrt(s[len(s)/2])
}

// subTimes wraps transit.SubexposureTimes, with exposure 0 giving the mid-times.
func subTimes(t []float64, exposure float64, n int) []float64 {
	if n == 1 || exposure == 0 {
		return append([]float64(nil), t...)
	}
	return transit.SubexposureTimes(nil, t, exposure, n)
}
