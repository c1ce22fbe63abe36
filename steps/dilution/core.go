package dilution

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"dipline/steps"
	"dipline/steps/companions"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/stellar"
)

// mann15Scatter is the fractional scatter of the Mann et al. (2015, ApJ 804, 64) Ks–radius
// relation, 2.89 % (Table 1, from memory). A companion radius estimated from
// the relation is drawn with this scatter, independently of the target's.
const mann15Scatter = 0.0289

// mann15MinMK and mann15MaxMK bound the Mann et al. (2015) relation, 4.6 ≤ M_Ks ≤ 9.8 (from
// memory), as astro.MannRadius enforces.
const mann15MinMK, mann15MaxMK = 4.6, 9.8

// maxOutsideFraction is the largest share of a companion's M_K draws that may fall beyond
// the relation's range and still be taken at its edge: a one-sided 2σ tail (2.3 %) of a
// companion whose M_K lies within the range (common practice). More, and the companion gets
// no radius from the relation.
const maxOutsideFraction = 0.025

// mann15Name names the relation in notes and in the artifact.
const mann15Name = "Mann et al. 2015"

// maxRadiusTries bounds the redraws of a truncated-normal companion radius; a radius whose
// error makes positive draws this rare is refused.
const maxRadiusTries = 1000

// BandRelation converts a magnitude difference from one band to another:
// Δm_To = Offset + Slope · Δm_From, with a normal Scatter (mag) drawn per sample. The user
// states it and its Source in the workflow; dipline holds no colour relations of its own.
type BandRelation struct {
	From, To               string
	Slope, Offset, Scatter float64
	Source                 string
}

// Options is the numerical core's configuration, built from a block's Config.
type Options struct {
	// Draws is the number of Monte Carlo samples per hypothesis.
	Draws int
	// Relation converts companions' Δm into the light curve's band; nil when none is stated.
	Relation *BandRelation
}

// Input is what the computation reads from the referenced steps.
type Input struct {
	// Band is the light curve's band; CrowdingCorrected whether its flux was already
	// corrected for other stars' light.
	Band              string
	CrowdingCorrected bool
	Companions        []stellar.Companion
	// Star is the target's draws, or nil when no star step is referenced.
	Star *stellar.Star
}

// sameBand compares band names as written, ignoring case and surrounding blanks.
func sameBand(a, b string) bool { return strings.EqualFold(strings.TrimSpace(a), strings.TrimSpace(b)) }

// isKs reports a band name meaning the 2MASS-style Ks (or K) band, the band of the Mann et al.
// (2015) relation.
func isKs(b string) bool {
	switch strings.ToLower(strings.TrimSpace(b)) {
	case "ks", "k", "k_s", "k-short":
		return true
	}
	return false
}

// Compute draws the hypotheses: the planet on the target, then on each companion in list
// order. It returns the artifact and the facts worth telling the user. Streams are derived
// from seed per companion and purpose, so the draws of one companion do not depend on the
// others'.
func Compute(cfg Options, in Input, seed uint64) (*Result, []string, error) {
	n := cfg.Draws
	if n < 1 {
		return nil, nil, fmt.Errorf("dilution: %d draws", n)
	}
	h := newHypotheses(cfg, in, seed)
	if in.CrowdingCorrected {
		h.alreadyCorrected()
		return h.res, h.notes, nil
	}
	if len(in.Companions) > 0 && strings.TrimSpace(in.Band) == "" {
		return nil, nil, steps.BadInputf("light_curve: the light curve has no band, so the companions' magnitude differences cannot be matched to it; set band in the photometry step")
	}
	comps, ksRows, err := perCompanion(in.Companions, in.Band, cfg.Relation)
	if err != nil {
		return nil, nil, err
	}
	h.comps, h.ksRows = comps, ksRows
	if err := h.fluxRatios(); err != nil {
		return nil, nil, err
	}
	h.onTarget()
	if len(comps) == 0 {
		h.note("no companions: flux ratio 0, radius factor 1")
		return h.res, h.notes, nil
	}
	h.targetStar()
	for j, c := range comps {
		if err := h.onCompanion(j, c); err != nil {
			return nil, nil, err
		}
	}
	h.note("planet-on-companion hypotheses assume the companion is bound, at the target's distance")
	return h.res, h.notes, nil
}

// hypotheses holds what the phases of Compute share: the inputs, the result and notes so
// far, and what each phase leaves for the next.
type hypotheses struct {
	cfg   Options
	in    Input
	seed  uint64
	n     int // draws per hypothesis
	res   *Result
	notes []string
	ones  []float64 // the target's radius factor, 1 for every draw

	// Set by Compute from perCompanion: one row per companion, and its Ks row when the
	// chosen row is in another band.
	comps  []stellar.Companion
	ksRows map[int]stellar.Companion

	// Set by fluxRatios, per companion: its Δm draws in its own band (for radii) and its
	// flux over the target's in the light curve's band.
	native, ratio [][]float64

	// Set by targetStar: the target's radius draws (nil without a star step) and its
	// absolute Ks magnitude draws (nil unless one per radius draw).
	rt, mk []float64
}

// newHypotheses starts a computation of cfg.Draws draws per hypothesis.
func newHypotheses(cfg Options, in Input, seed uint64) *hypotheses {
	ones := make([]float64, cfg.Draws)
	for i := range ones {
		ones[i] = 1
	}
	return &hypotheses{cfg: cfg, in: in, seed: seed, n: cfg.Draws, ones: ones,
		res: &Result{Dilution: stellar.Dilution{Band: in.Band}}}
}

// note records a fact for the user.
func (h *hypotheses) note(format string, a ...any) {
	h.notes = append(h.notes, fmt.Sprintf(format, a...))
}

// alreadyCorrected gives the one hypothesis of a crowding-corrected light curve: the
// planet on the target, with nothing left to correct.
func (h *hypotheses) alreadyCorrected() {
	res := h.res
	res.AlreadyCorrected = true
	res.Hypotheses = []stellar.Hypothesis{{Host: targetHost, FluxRatio: make([]float64, h.n), RadiusScale: h.ones}}
	res.RadiusSource = []string{"the target"}
	h.note("the light curve is already corrected for crowding; no second correction (flux ratio 0, radius factor 1)")
	if len(h.in.Companions) > 0 {
		h.note("planet-on-companion hypotheses are not formed: a crowding-corrected flux no longer holds the companions' light in a known proportion")
	}
}

// fluxRatios draws every companion's Δm, converts it to the light curve's band where
// needed, and turns it into the companion's flux over the target's.
func (h *hypotheses) fluxRatios() error {
	nc := len(h.comps)
	h.native = make([][]float64, nc)
	h.ratio = make([][]float64, nc) // F_j/F_t
	for j, c := range h.comps {
		s := rng.Derive(h.seed, "dmag", uint64(j))
		nat := make([]float64, h.n)
		for i := range nat {
			nat[i] = c.DMag + c.DMagErr*s.Normal()
		}
		h.native[j] = nat
		dm := nat
		if !sameBand(c.Band, h.in.Band) {
			var err error
			if dm, err = h.toBand(j, c, nat); err != nil {
				return err
			}
		}
		rj := make([]float64, h.n)
		for i, x := range dm {
			rj[i] = math.Pow(10, -0.4*x)
			if !(rj[i] > 0) || math.IsInf(rj[i], 0) {
				return steps.BadInputf("companions: %q: a magnitude difference of %g mag gives no finite flux ratio", c.Name, x)
			}
		}
		h.ratio[j] = rj
	}
	return nil
}

// toBand converts companion j's Δm draws nat from its own band to the light curve's by the
// stated band relation, with the relation's scatter drawn on its own stream.
func (h *hypotheses) toBand(j int, c stellar.Companion, nat []float64) ([]float64, error) {
	band, r := h.in.Band, h.cfg.Relation
	switch {
	case r == nil:
		return nil, steps.BadInputf("companions: %q has its magnitude difference in band %q but the light curve is in band %q; state a band_relation from %q to %q (with its source) or give the difference in %q",
			c.Name, c.Band, band, c.Band, band, band)
	case !sameBand(r.From, c.Band) || !sameBand(r.To, band):
		return nil, steps.BadInputf("companions: %q has its magnitude difference in band %q and the light curve is in band %q, but band_relation converts %q to %q",
			c.Name, c.Band, band, r.From, r.To)
	}
	sc := rng.Derive(h.seed, "band", uint64(j))
	dm := make([]float64, h.n)
	for i, x := range nat {
		dm[i] = r.Offset + r.Slope*x + r.Scatter*sc.Normal()
	}
	h.note("companion %s: Δm in %s = %g + %g × Δm in %s, scatter %g mag (source: %s)",
		c.Name, band, r.Offset, r.Slope, r.From, r.Scatter, r.Source)
	return dm, nil
}

// onTarget adds the hypothesis of the planet on the target: FluxRatio = Σ_j F_j/F_t
// (common practice).
func (h *hypotheses) onTarget() {
	tgt := make([]float64, h.n)
	for _, rj := range h.ratio {
		for i, x := range rj {
			tgt[i] += x
		}
	}
	h.res.Hypotheses = append(h.res.Hypotheses, stellar.Hypothesis{Host: targetHost, FluxRatio: tgt, RadiusScale: h.ones})
	h.res.RadiusSource = append(h.res.RadiusSource, "the target")
}

// targetStar takes the target's radius and absolute Ks draws, when a star step is
// referenced, and notes how they will be used.
func (h *hypotheses) targetStar() {
	star := h.in.Star
	if star == nil {
		return
	}
	h.rt = star.Radius
	if h.rt == nil {
		h.rt = []float64{}
	}
	if len(star.MagK) == len(h.rt) {
		h.mk = star.MagK
	}
	if len(h.rt) > 0 && len(h.rt) != h.n {
		h.note("star: %d draws cycled over %d", len(h.rt), h.n)
	}
	if len(h.mk) > 0 && star.Relation != "" && !strings.Contains(star.Relation, "Mann") {
		h.note("star: the target's radius comes from %s; companions' radii from M_K use %s", star.Relation, mann15Name)
	}
}

// onCompanion adds the hypothesis of the planet on companion j:
// FluxRatio = (F_t + Σ_{i≠j} F_i)/F_j, i.e. (1 + Σ_{i≠j} r_i)/r_j, with the companion's
// radius over the target's when it can be had.
func (h *hypotheses) onCompanion(j int, c stellar.Companion) error {
	fr := make([]float64, h.n)
	for i := range fr {
		others := 1.0
		for k := range h.ratio {
			if k != j {
				others += h.ratio[k][i]
			}
		}
		fr[i] = others / h.ratio[j][i]
	}
	hyp := stellar.Hypothesis{Host: c.Name, FluxRatio: fr}
	rc, nat := c, h.native[j]
	if ks, ok := h.ksRows[j]; ok && !isKs(c.Band) {
		// The radius comes from the Δm in Ks, drawn on its own stream.
		rc, nat = ks, make([]float64, h.n)
		s := rng.Derive(h.seed, "dmag-ks", uint64(j))
		for i := range nat {
			nat[i] = ks.DMag + ks.DMagErr*s.Normal()
		}
	}
	rs, src, err := radiusScale(rc, nat, h.rt, h.mk, h.seed, j)
	if err != nil {
		return err
	}
	if rs == nil {
		h.note("planet on %s: no radius scale (%s); only its flux ratio is given", c.Name, src)
	}
	hyp.RadiusScale = rs
	h.res.Hypotheses = append(h.res.Hypotheses, hyp)
	h.res.RadiusSource = append(h.res.RadiusSource, src)
	return nil
}

// radiusScale draws R_j/R_t for companion j from its given radius, or from the target's
// M_K plus the companion's Δm in Ks through the Mann et al. (2015) relation. It returns nil
// and the reason when neither is possible; src says where the radius came from.
func radiusScale(c stellar.Companion, nat, rt, mk []float64, seed uint64, j int) (rs []float64, src string, err error) {
	note := ""
	n := len(nat)
	if rt == nil {
		return nil, "no star step is referenced for the target's radius", nil
	}
	if len(rt) == 0 {
		return nil, "the star step gives no radius for the target", nil
	}
	s := rng.Derive(seed, "radius", uint64(j))
	rs = make([]float64, n)
	if !math.IsNaN(c.Radius) {
		for i := range rs {
			r := c.Radius
			if c.RadiusErr > 0 {
				k := 0
				for r = c.Radius + c.RadiusErr*s.Normal(); !(r > 0); r = c.Radius + c.RadiusErr*s.Normal() {
					if k++; k == maxRadiusTries {
						return nil, "", steps.BadInputf("companions: %q: radius %g ± %g R_sun is too uncertain to draw positive radii", c.Name, c.Radius, c.RadiusErr)
					}
				}
			}
			rs[i] = r / rt[i%len(rt)]
		}
		if err := checkScale(rs); err != nil {
			return nil, "", steps.BadInputf("star: %v", err)
		}
		return rs, "the radius given in the companions table", nil
	}
	if !isKs(c.Band) {
		return nil, fmt.Sprintf("no radius given, and its Δm is in %s, not Ks, so %s cannot be applied", c.Band, mann15Name), nil
	}
	if len(mk) == 0 {
		return nil, "no radius given, and the star step gives no absolute Ks magnitude", nil
	}
	mks := make([]float64, n)
	outside := 0
	for i := range mks {
		mks[i] = mk[i%len(mk)] + nat[i]
		if _, err := astro.MannRadius(mks[i]); err != nil {
			outside++
		}
	}
	if outside > int(maxOutsideFraction*float64(n)) {
		lo, hi := slices.Min(mks), slices.Max(mks)
		return nil, fmt.Sprintf("its M_K (%.2f to %.2f) lies outside the %g–%g range of %s in %d of %d draws; give its radius in the companions table",
			lo, hi, mann15MinMK, mann15MaxMK, mann15Name, outside, n), nil
	}
	for i, m := range mks {
		r, err := astro.MannRadius(min(max(m, mann15MinMK), mann15MaxMK))
		if err != nil {
			return nil, "", steps.BadInputf("star: absolute Ks magnitude draw %d: %v", i%len(mk)+1, err)
		}
		rs[i] = r * (1 + mann15Scatter*s.Normal()) / rt[i%len(rt)]
	}
	if outside > 0 {
		note = fmt.Sprintf("; %d of %d draws of its M_K beyond the relation's range taken at its edge", outside, n)
	}
	if err := checkScale(rs); err != nil {
		return nil, "", steps.BadInputf("star: %v", err)
	}
	return rs, fmt.Sprintf("%s from the target's M_K plus Δm in Ks%s", mann15Name, note), nil
}

// checkScale refuses radius ratios that are not positive and finite (a star draw with a
// zero or negative radius).
func checkScale(rs []float64) error {
	for i, x := range rs {
		if !(x > 0) || math.IsInf(x, 0) {
			return fmt.Errorf("draw %d gives a radius ratio of %v; the target's radius draws must be positive", i+1, x)
		}
	}
	return nil
}

// perCompanion picks, for each companion (by name, in the order first listed), the row whose
// magnitude difference sets its flux in the light curve's band: the row in that band, or
// else the row in band_relation's source band. ksRows holds, by the same index, a row in Ks
// when the chosen row is in another band, for estimating the companion's radius. A radius
// given on any of a companion's rows is carried onto the chosen row.
func perCompanion(list []stellar.Companion, band string, rel *BandRelation) (chosen []stellar.Companion, ksRows map[int]stellar.Companion, err error) {
	var order []string
	rows := map[string][]stellar.Companion{}
	for _, c := range list {
		key := companions.FigureName(c.Name)
		if key == targetHost {
			return nil, nil, steps.BadInputf("companions: %q names the target", c.Name)
		}
		if _, ok := rows[key]; !ok {
			order = append(order, key)
		}
		rows[key] = append(rows[key], c)
	}
	ksRows = map[int]stellar.Companion{}
	for _, key := range order {
		rs := rows[key]
		pick := -1
		for i, c := range rs {
			if sameBand(c.Band, band) {
				pick = i
			}
		}
		if pick < 0 && rel != nil {
			for i, c := range rs {
				if sameBand(c.Band, rel.From) {
					pick = i
				}
			}
		}
		if pick < 0 {
			pick = 0 // refused below with the bands named
		}
		c := rs[pick]
		for _, o := range rs {
			if math.IsNaN(c.Radius) && !math.IsNaN(o.Radius) {
				c.Radius, c.RadiusErr = o.Radius, o.RadiusErr
			}
			if isKs(o.Band) && !isKs(c.Band) {
				ksRows[len(chosen)] = o
			}
		}
		chosen = append(chosen, c)
	}
	return chosen, ksRows, nil
}
