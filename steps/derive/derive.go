package derive

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/parallel"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/stellar"
	"dipline/steps/units"
)

// Fixed choices, each with its reason.
const (
	// blockSize is the number of combined draws per parallel block, each block with its own
	// random stream, so the draws do not depend on the worker count.
	blockSize = 256
	// bandJ, bandKs and bandK are the band names looked up in Star.Mags for the spectroscopy metrics;
	// "K" is accepted for Ks.
	bandJ, bandKs, bandK = "J", "Ks", "K"
)

// solarDensity is the nominal Sun's mean density in g/cm³.
var solarDensity = units.Density.Units["rho_sun"]

// sunAngle is the angular diameter of the nominal Sun seen from 1 au, in degrees:
// 2 arcsin(R☉/au) (IAU 2015 B3, IAU 2012 B2).
var sunAngle = orNaN(astro.AngularDiameter(astro.SolarRadius, astro.AU)) * 180 / math.Pi

// Options configures Derive.
type Options struct {
	// Albedo is the Bond albedo and Redistribution the heat-redistribution factor f of the
	// equilibrium temperature (astro.RedistributionFull etc.); RedistributionName is its
	// name for the docs.
	Albedo, Redistribution float64
	RedistributionName     string
	// Masses holds measured planet masses by planet name: value and one-sigma error in M⊕.
	Masses map[string][2]float64
	// ESSThreshold is the effective sample size below which the combination is flagged.
	ESSThreshold float64
	// Draws is the number of combined draws summarised.
	Draws int
	// FitHasStarPrior says the fit already took the star's density in its likelihood, so
	// its samples are not reweighted again.
	FitHasStarPrior bool
	// FitDensityPrior is the fit's own density prior as it states it (e.g.
	// "star_density log_normal(0.3, 0.1)"), for the method text; "" when unknown.
	FitDensityPrior string
	// MaxPlanetRadius (R_J) flags a host hypothesis whose radius exceeds it as not planetary.
	MaxPlanetRadius float64
	Seed            uint64
	// Parallel runs block(i) for i in [0, n); nil runs serially. Results do not depend on it.
	Parallel parallel.Func
}

// Posterior is the fit's sample table: column names and row-major samples.
type Posterior struct {
	Names   []string
	Samples []float64
}

func (p Posterior) rows() int {
	if len(p.Names) == 0 {
		return 0
	}
	return len(p.Samples) / len(p.Names)
}

func (p Posterior) col(name string) int {
	for j, n := range p.Names {
		if n == name {
			return j
		}
	}
	return -1
}

// planetCols are the fit columns one planet uses; −1 when absent.
type planetCols struct {
	name                            string
	period, k, b, aR, e, omega, dil int
}

// planets finds the planets of the posterior: every prefix p with a "p.period" column, in
// column order.
func (p Posterior) planets() ([]planetCols, error) {
	var out []planetCols
	for _, n := range p.Names {
		name, ok := strings.CutSuffix(n, ".period")
		if !ok || strings.Contains(name, ".") {
			continue
		}
		pc := planetCols{name: name, period: p.col(n), k: p.col(name + ".k"), b: p.col(name + ".b"),
			aR: p.col(name + ".a_over_rstar"), e: p.col(name + ".e"), omega: p.col(name + ".omega"), dil: p.col("dilution")}
		for _, need := range []struct {
			i int
			c string
		}{{pc.k, "k"}, {pc.b, "b"}, {pc.aR, "a_over_rstar"}} {
			if need.i < 0 {
				return nil, fmt.Errorf("the fit has no column %q for planet %s", name+"."+need.c, name)
			}
		}
		if (pc.e < 0) != (pc.omega < 0) {
			return nil, fmt.Errorf("the fit has only one of %q and %q", name+".e", name+".omega")
		}
		out = append(out, pc)
	}
	if len(out) == 0 {
		return nil, errors.New("the fit has no planet (no column named like \"b.period\")")
	}
	return out, nil
}

// quantity indices within a planet's table.
const (
	qRatio = iota
	qDepth
	qRadiusEarth
	qRadiusJup
	qAxisAU
	qAxisScaled
	qIncl
	qImpact
	qEcc
	qT14
	qT23
	qTeq
	qInsol
	qProb
	qAngle
	qAngleRel
	qMass
	qRV
	qTSM
	qESM
	nQuantities
)

// qspec describes one quantity: its name, unit, doc, and whether it is bounded below by 0
// (so the upper-limit rule applies).
type qspec struct {
	name, unit, doc string
	bounded         bool
}

// Derive combines the fit's posterior with the star's draws and (when d is not nil) the
// dilution's draws and summarises the derived quantities of every planet. Problems with
// the inputs are *steps.InputError values; the notes are facts for the user.
func Derive(post Posterior, star *stellar.Star, dil *stellar.Dilution, o Options) (*Artifact, []string, error) {
	c, err := newCombiner(post, star, dil, o)
	if err != nil {
		return nil, nil, err
	}
	// The order matters: each phase writes its part of the method text and its notes in
	// turn, and the draws depend on the weights, the pairing and the dilution before them.
	if err := c.reweight(); err != nil {
		return nil, nil, err
	}
	if err := c.applyDilution(); err != nil {
		return nil, nil, err
	}
	c.drawAll()
	return c.summarise(), c.notes, nil
}

// combiner holds what the phases of Derive share: the checked inputs, the notes and the
// method text written so far, and what each phase leaves for the next.
type combiner struct {
	post   Posterior
	star   *stellar.Star
	dil    *stellar.Dilution
	o      Options
	pls    []planetCols
	nfit   int             // fit samples
	ns     int             // star draws
	masses []*[2]float64   // measured mass (value, σ in M⊕) per planet; nil when none is given
	mags   magnitudes      // the star's apparent magnitudes for the spectroscopy metrics
	notes  []string        // facts for the user, in the order they arose
	method strings.Builder // how the sample sets were combined, in words

	// Set by reweight.
	fitLnRho                []float64 // ln ρ of each fit sample
	pair                    *Pairing  // nil: star draws are paired with fit samples at random
	cw                      []float64 // cumulative weights of the fit samples
	ess                     float64   // Kish effective sample size of the weights
	reweighted, mismatch    bool
	fitDensity, starDensity [3]float64 // percentiles for the artifact

	// Set by applyDilution.
	hyps       []stellar.Hypothesis // the target's first, then the companion hosts
	dilByIndex bool                 // dilution draw i goes with star draw i
	rescaled   float64              // median flux ratio applied to k after the fit

	// Set by drawAll.
	vals  [][][]float64                  // planet, quantity, draw
	hvals [][][nHostQuantities][]float64 // planet, companion host, quantity, draw
}

// magnitudes are the star's apparent J and Ks magnitudes, when it gives them.
type magnitudes struct {
	j, k       float64
	hasJ, hasK bool
}

// starMagnitudes looks up the bands the spectroscopy metrics need ("K" is taken for Ks).
func starMagnitudes(star *stellar.Star) magnitudes {
	var m magnitudes
	m.j, m.hasJ = star.Mags[bandJ]
	m.k, m.hasK = star.Mags[bandKs]
	if !m.hasK {
		m.k, m.hasK = star.Mags[bandK]
	}
	return m
}

// note records a fact for the user.
func (c *combiner) note(format string, a ...any) {
	c.notes = append(c.notes, fmt.Sprintf(format, a...))
}

// newCombiner checks the inputs and gathers what every phase needs.
func newCombiner(post Posterior, star *stellar.Star, dil *stellar.Dilution, o Options) (*combiner, error) {
	nfit := post.rows()
	if nfit == 0 || len(post.Samples)%len(post.Names) != 0 {
		return nil, steps.BadInputf("fit: the posterior holds no samples")
	}
	pls, err := post.planets()
	if err != nil {
		return nil, steps.BadInputf("fit: %v", err)
	}
	if o.Draws < 1 {
		return nil, fmt.Errorf("derive: %d draws", o.Draws)
	}
	if err := checkStar(star); err != nil {
		return nil, err
	}
	if err := checkMasses(o.Masses, pls); err != nil {
		return nil, err
	}
	c := &combiner{post: post, star: star, dil: dil, o: o, pls: pls, nfit: nfit, ns: star.Len(),
		mags: starMagnitudes(star), masses: make([]*[2]float64, len(pls))}
	for p, pc := range pls {
		if m, ok := o.Masses[pc.name]; ok {
			c.masses[p] = &m
		}
	}
	return c, nil
}

// checkStar checks that the star gives draws, that its columns are as long as its radius
// column, and that every radius is positive.
func checkStar(star *stellar.Star) error {
	if star == nil || star.Len() == 0 {
		return steps.BadInputf("star: the star step gives no draws")
	}
	ns := star.Len()
	for _, s := range []struct {
		v    []float64
		name string
	}{{star.Mass, "mass"}, {star.Teff, "Teff"}, {star.Luminosity, "luminosity"}, {star.Density, "density"}} {
		if s.v != nil && len(s.v) != ns {
			return steps.BadInputf("star: %d radius draws but %d %s draws", ns, len(s.v), s.name)
		}
	}
	for i, r := range star.Radius {
		if !(r > 0) || math.IsInf(r, 0) {
			return steps.BadInputf("star: radius draw %d is %v R_sun; radii must be positive", i+1, r)
		}
	}
	return nil
}

// checkMasses checks that every measured mass names a planet of the fit and is positive.
func checkMasses(masses map[string][2]float64, pls []planetCols) error {
	for name, m := range masses {
		found := false
		for _, p := range pls {
			found = found || p.name == name
		}
		if !found {
			return steps.BadInputf("masses: the fit has no planet %q", name)
		}
		if !(m[0] > 0) || !(m[1] >= 0) {
			return steps.BadInputf("masses: planet %s: mass %v ± %v M_earth must be positive", name, m[0], m[1])
		}
	}
	return nil
}

// transitDensity returns the star's mean density in g/cm³ implied by the planet's a/R* and
// period in one row of the fit.
func (pc planetCols) transitDensity(row []float64) float64 {
	rho, _ := astro.DensityFromScaledAxis(row[pc.aR], row[pc.period]*astro.Day)
	return rho / 1000 // kg/m³ to g/cm³
}

// starDensityDraws returns the star's density draws in g/cm³: given, or from mass and
// radius; nil when the star gives neither.
func (c *combiner) starDensityDraws() []float64 {
	if c.star.Density != nil || c.star.Mass == nil {
		return c.star.Density
	}
	rho := make([]float64, c.ns)
	for i := range rho {
		r := c.star.Radius[i]
		rho[i] = orNaN(astro.StellarDensityCGS(c.star.Mass[i], r))
	}
	return rho
}

// fitLnDensity returns ln ρ of each fit sample: the fit's own star_density column, or else
// the density from the first planet's a/R* and period.
func (c *combiner) fitLnDensity() []float64 {
	rhoCol := c.post.col("star_density")
	cols := len(c.post.Names)
	lnRho := make([]float64, c.nfit)
	for i := range lnRho {
		var rho float64
		if rhoCol >= 0 {
			rho = c.post.Samples[i*cols+rhoCol]
		} else {
			rho = c.pls[0].transitDensity(c.post.Samples[i*cols:])
		}
		lnRho[i] = math.Log(rho)
	}
	return lnRho
}

// reweight weights the fit's samples by the star's density and sets up the pairing of fit
// samples with star draws, falling back to equal weights and random pairing when the two
// densities do not overlap; it writes the first part of the method text.
func (c *combiner) reweight() error {
	starRho := c.starDensityDraws()
	c.fitLnRho = c.fitLnDensity()
	w := make([]float64, c.nfit)
	for i := range w {
		w[i] = 1
	}
	if starRho != nil {
		var err error
		if w, err = c.pairWithStar(starRho, w); err != nil {
			return err
		}
	} else {
		c.note("star: neither a density nor a mass is given, so the fit's density is not combined with the star; star draws are paired with fit samples at random, independently")
	}
	c.ess = KishESS(w)
	if c.pair != nil {
		c.fitDensity = densityRange(c.fitLnRho)
		c.starDensity = densityRange(c.pair.X)
	}
	// The densities do not overlap: no fit sample lies within the kernel's reach of a star
	// draw. The fit's samples are then used with equal weights, each paired with a star
	// draw at random, and the artifact says why (Cautions).
	c.mismatch = c.reweighted && c.ess < minESS
	if c.mismatch {
		c.reweighted = false
		c.pair = nil
		for i := range w {
			w[i] = 1
		}
	}
	c.cw = cumulative(w)
	c.describeWeights()
	return nil
}

// pairWithStar builds the kernel density estimate of the star's ln ρ, notes the draws it
// cannot use, and (unless the fit already had the star's density) returns w reweighted by
// the estimate: importance reweighting, the fit's prior being uniform in ln ρ.
func (c *combiner) pairWithStar(starRho, w []float64) ([]float64, error) {
	lnStar := make([]float64, c.ns)
	bad := 0
	for i, r := range starRho {
		if r > 0 {
			lnStar[i] = math.Log(r)
		} else {
			lnStar[i] = math.NaN()
			bad++
		}
	}
	if bad > 0 {
		c.note("star: %d of %d density draws are not positive and were left out of the density estimate", bad, c.ns)
	}
	c.pair = NewPairing(lnStar)
	if len(c.pair.X) == 0 {
		return nil, steps.BadInputf("star: no positive density draw")
	}
	outside := 0
	for _, x := range c.pair.X {
		if x < math.Log(fitDensityLo) || x > math.Log(fitDensityHi) {
			outside++
		}
	}
	if outside > 0 {
		c.note("star: %d of %d density draws lie outside the fit's prior range (%g–%g g/cm3); they cannot be matched", outside, len(c.pair.X), fitDensityLo, fitDensityHi)
	}
	if !c.o.FitHasStarPrior {
		c.reweighted = true
		w = c.pair.Weights(w, c.fitLnRho, c.o.Parallel)
	}
	return w, nil
}

// describeWeights writes how the fit's samples were weighted and paired with star draws.
func (c *combiner) describeWeights() {
	m, nfit, o := &c.method, c.nfit, c.o
	switch {
	case c.mismatch:
		fmt.Fprintf(m, "fit posterior (%d samples) taken with equal weights, NOT combined with the star's density: the reweighting by it left a Kish effective sample size of %.3g, below the floor of %g, as the transit's density and the star's do not overlap",
			nfit, c.ess, float64(minESS))
	case c.reweighted:
		fmt.Fprintf(m, "fit posterior (%d samples) reweighted by the star's density (Gaussian kernel density estimate in ln ρ over %d star draws, Silverman bandwidth h = %.3g, tabulated every h/20 and interpolated; the fit's prior is uniform in ln ρ, so the weight is the estimate itself; Kish effective sample size %.0f, %.1f %%)",
			nfit, len(c.pair.X), c.pair.H, c.ess, 100*c.ess/float64(nfit))
	case o.FitHasStarPrior:
		fmt.Fprintf(m, "fit posterior (%d samples) taken as it is: the fit already had a density prior", nfit)
		if o.FitDensityPrior != "" {
			fmt.Fprintf(m, " (%s)", o.FitDensityPrior)
		}
		fmt.Fprintf(m, ", so it is not reweighted again")
	default:
		fmt.Fprintf(m, "fit posterior (%d samples) taken as it is: the star gives no density", nfit)
	}
	switch {
	case c.pair != nil:
		fmt.Fprintf(m, "; %d draws resampled by weight, each paired with a star draw chosen with probability ∝ the kernel in ln ρ (so radius and mass stay consistent with the transit's density to within h)", o.Draws)
	case c.mismatch:
		fmt.Fprintf(m, "; %d draws resampled, each paired with a star draw chosen at random (independent pairing: the star's radius and mass are NOT consistent with the transit's density)", o.Draws)
	default:
		fmt.Fprintf(m, "; %d draws resampled, each paired with a star draw chosen at random (independent pairing: it neglects the correlation between the transit's density and the star's radius and mass)", o.Draws)
	}
}

// applyDilution checks the dilution's hypotheses, decides how its draws are paired with the
// star's, and writes how k is corrected.
func (c *combiner) applyDilution() error {
	dil := c.dil
	if dil == nil || len(dil.Hypotheses) == 0 {
		fmt.Fprintf(&c.method, "; no dilution given: k is taken as the target's own")
		if c.pls[0].dil >= 0 {
			fmt.Fprintf(&c.method, " (the fit modelled the dilution itself)")
		}
		return nil
	}
	if err := checkHypotheses(dil.Hypotheses); err != nil {
		return err
	}
	c.hyps = dil.Hypotheses
	c.dilByIndex = len(c.hyps[0].FluxRatio) == c.ns
	switch {
	case c.pls[0].dil >= 0:
		fmt.Fprintf(&c.method, "; the fit modelled the dilution itself (column \"dilution\"), so its k is taken as the target's and the other hosts' k is rescaled from it")
	case dil.AlreadyCorrected:
		fmt.Fprintf(&c.method, "; the light curve was already corrected for crowding, so no dilution is applied for the target")
	default:
		fmt.Fprintf(&c.method, "; dilution applied to k draw by draw, k_true = k_obs √(1 + flux ratio)")
	}
	if c.dilByIndex {
		fmt.Fprintf(&c.method, ", each draw taking the dilution draw of the same index as its star draw")
	} else {
		fmt.Fprintf(&c.method, ", each draw taking a dilution draw at random (independent pairing)")
	}
	// The median flux ratio applied to k after the fit; Cautions warns when it is large.
	if c.pls[0].dil < 0 && !dil.AlreadyCorrected {
		c.rescaled = sortedQuantile(c.hyps[0].FluxRatio, 0.5, func(x float64) float64 { return x })
	}
	return nil
}

// checkHypotheses checks that every hypothesis has as many draws as the first, flux ratios
// non-negative and radius scales positive.
func checkHypotheses(hyps []stellar.Hypothesis) error {
	nd := len(hyps[0].FluxRatio)
	for _, h := range hyps {
		// A nil RadiusScale means the host's radius is unknown: only k can be given.
		if len(h.FluxRatio) != nd || (h.RadiusScale != nil && len(h.RadiusScale) != nd) || nd == 0 {
			return steps.BadInputf("dilution: hypothesis %q has %d flux-ratio and %d radius-scale draws, the target %d", h.Host, len(h.FluxRatio), len(h.RadiusScale), nd)
		}
		for i := range h.FluxRatio {
			bad := !(h.FluxRatio[i] >= 0) || math.IsInf(h.FluxRatio[i], 0)
			if h.RadiusScale != nil {
				bad = bad || !(h.RadiusScale[i] > 0) || math.IsInf(h.RadiusScale[i], 0)
			}
			if bad {
				return steps.BadInputf("dilution: hypothesis %q, draw %d: the flux ratio must be non-negative and the radius scale positive", h.Host, i+1)
			}
		}
	}
	return nil
}

// drawAll makes the combined draws in fixed blocks, each with its own random stream, so the
// draws do not depend on the worker count.
func (c *combiner) drawAll() {
	nh := 0
	if len(c.hyps) > 1 {
		nh = len(c.hyps) - 1
	}
	c.vals = make([][][]float64, len(c.pls))
	c.hvals = make([][][nHostQuantities][]float64, len(c.pls))
	for p := range c.vals {
		c.vals[p] = make([][]float64, nQuantities)
		for q := range c.vals[p] {
			c.vals[p][q] = make([]float64, c.o.Draws)
		}
		c.hvals[p] = make([][nHostQuantities][]float64, nh)
		for h := range c.hvals[p] {
			for q := range c.hvals[p][h] {
				c.hvals[p][h][q] = make([]float64, c.o.Draws)
			}
		}
	}
	nblocks := (c.o.Draws + blockSize - 1) / blockSize
	runBlocks(c.o.Parallel, nblocks, c.drawBlock)
}

// drawBlock makes the combined draws of block blk. Each takes a fit sample by weight, a
// star draw (by the kernel in ln ρ, or at random), a dilution draw (of the star draw's
// index, or at random) and, per planet with a measured mass, a mass; the random numbers
// are taken in that order.
func (c *combiner) drawBlock(blk int) {
	r := rng.Derive(c.o.Seed, "derive/draws", uint64(blk))
	lo, hi := blk*blockSize, min((blk+1)*blockSize, c.o.Draws)
	cols := len(c.post.Names)
	for n := lo; n < hi; n++ {
		i := pickWeighted(c.cw, r)
		j := r.Intn(c.ns)
		if c.pair != nil {
			j = c.pair.Pick(c.fitLnRho[i], r)
		}
		d := 0
		if len(c.hyps) > 0 {
			d = j
			if !c.dilByIndex {
				d = r.Intn(len(c.hyps[0].FluxRatio))
			}
		}
		s := sample{n: n, row: c.post.Samples[i*cols : (i+1)*cols], star: c.starAt(j), d: d}
		for p := range c.pls {
			s.mass = math.NaN()
			if m := c.masses[p]; m != nil {
				s.mass = truncNormal(r, m[0], m[1])
			}
			c.drawPlanet(p, s)
		}
	}
}

// summarise turns the combined draws into the artifact, noting the method text first and
// then, planet by planet, what was skipped or flagged.
func (c *combiner) summarise() *Artifact {
	a := &Artifact{Method: c.method.String(), FitSamples: c.nfit, Draws: c.o.Draws, ESS: c.ess,
		ESSThreshold: c.o.ESSThreshold, Reweighted: c.reweighted, LowESS: c.reweighted && c.ess < c.o.ESSThreshold,
		Mismatch: c.mismatch, FitDensity: c.fitDensity, StarDensity: c.starDensity, Rescaled: c.rescaled}
	if c.pair != nil {
		a.Bandwidth = c.pair.H
	}
	c.note("%s", a.Method)
	specs := quantitySpecs(c.o)
	for p := range c.pls {
		a.Planets = append(a.Planets, c.summarisePlanet(p, &specs))
	}
	return a
}

// summarisePlanet summarises planet p: its quantities on the target, the star's density
// from its transit alone, and its radius on each companion host.
func (c *combiner) summarisePlanet(p int, specs *[nQuantities]qspec) Planet {
	pc := c.pls[p]
	pl := Planet{Name: pc.name}
	for q := 0; q < nQuantities; q++ {
		if qt, ok := c.summariseQuantity(p, q, specs[q]); ok {
			pl.Quantities = append(pl.Quantities, qt)
		}
	}
	pl.Quantities = append(pl.Quantities, c.transitDensity(pc))
	if c.masses[p] == nil && hasMass(pl) {
		c.note("planet %s: the mass is the Chen & Kipping (2017) mean mass–radius relation evaluated at the radius: a statistical guess, not a measurement, and its spread leaves out the relation's intrinsic scatter; give a measured mass in masses when there is one", pc.name)
	}
	for h := range c.hvals[p] {
		pl.Hosts = append(pl.Hosts, c.summariseHost(p, h))
	}
	return pl
}

// summariseQuantity summarises quantity q of planet p; false when it is left out (not
// fitted, no magnitude for it, or undefined for too many draws), with a note saying why.
func (c *combiner) summariseQuantity(p, q int, sp qspec) (Quantity, bool) {
	pc := c.pls[p]
	if q == qEcc && pc.e < 0 {
		return Quantity{}, false
	}
	doc := sp.doc
	switch q {
	case qMass, qRV, qTSM:
		if c.masses[p] != nil {
			doc = strings.Replace(doc, massDocCK, massDocMeasured, 1)
		}
	}
	if (q == qTSM && !c.mags.hasJ) || (q == qESM && !c.mags.hasK) {
		band := "J"
		if q == qESM {
			band = "Ks"
		}
		c.note("planet %s: %s skipped: the star step gives no apparent %s magnitude", pc.name, sp.name, band)
		return Quantity{}, false
	}
	v := c.vals[p][q]
	undefined := 0
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			undefined++
		}
	}
	if float64(undefined) > maxUndefined*float64(len(v)) {
		c.note("planet %s: %s left out: undefined for %d of %d draws (%s)", pc.name, sp.name, undefined, len(v), undefinedReason(q))
		return Quantity{}, false
	}
	qt := Quantity{Name: sp.name, Unit: sp.unit, Doc: doc}
	if dropped := summarise(&qt, v, sp.bounded); dropped > 0 {
		c.note("planet %s: %s summarised over %d of %d draws; %d fell outside the relation's domain (%s)", pc.name, sp.name, len(v)-dropped, len(v), dropped, undefinedReason(q))
	}
	return qt, true
}

// transitDensity summarises the star's density from the planet's own transit, over the
// fit's samples before combining.
func (c *combiner) transitDensity(pc planetCols) Quantity {
	cols := len(c.post.Names)
	rho := make([]float64, c.nfit)
	for i := range rho {
		rho[i] = pc.transitDensity(c.post.Samples[i*cols:])
	}
	qt := Quantity{Name: transitDensityName, Unit: "g/cm3",
		Doc: "mean stellar density from this planet's a/R* and period alone, ρ = 3π(a/R*)³/(G P²) (Seager & Mallén-Ornelas 2003), from the fit's samples before combining with the star: compare it with the star's"}
	summarise(&qt, rho, false)
	return qt
}

// summariseHost summarises planet p's radius on companion host h and flags a radius too
// large for a planet.
func (c *combiner) summariseHost(p, h int) HostResult {
	hy := c.hyps[h+1]
	hr := HostResult{Host: hy.Host}
	for q, sp := range hostSpecs {
		qt := Quantity{Name: sp.name, Unit: sp.unit, Doc: sp.doc + ", if the planet orbits " + hy.Host}
		summarise(&qt, c.hvals[p][h][q], sp.bounded)
		hr.Quantities = append(hr.Quantities, qt)
	}
	radius := hr.Quantities[hostRadiusJup]
	hr.NotPlanetary = radius.Median > c.o.MaxPlanetRadius
	if hr.NotPlanetary {
		c.note("planet %s: if it orbited %s its radius would be %s, above %g R_jup: not a planet on that host", c.pls[p].name, hy.Host, radius.Format(), c.o.MaxPlanetRadius)
	}
	return hr
}

func hasMass(p Planet) bool {
	for _, q := range p.Quantities {
		if q.Name == "mass_earth" {
			return true
		}
	}
	return false
}

// transitDensityName names each planet's stellar density from its own transit.
const transitDensityName = "star_density_transit"

// minESS is the floor of the Kish effective sample size below which the fit's samples are
// not reweighted by the star's density at all: 1 effective sample. Kish's ESS is at least 1
// as soon as one weight is positive, so below 1 means every weight is zero: no fit sample
// lies within the kernel's reach (kernelReach bandwidths) of any star draw, and the two
// densities do not overlap. Any positive weight gives a valid reweighting, however noisy,
// which the low-ESS caution (below ess_threshold) already flags; a higher floor would also
// catch a star far narrower than the fit (TestLowESSWarns: ESS ≈ 3 with the densities in
// agreement), where "do not overlap" would be false.
const minESS = 1

// densityRange returns the 16th, 50th and 84th percentiles of exp(x) for draws x of ln ρ.
func densityRange(x []float64) [3]float64 {
	s := make([]float64, 0, len(x))
	for _, v := range x {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return [3]float64{}
	}
	sort.Float64s(s)
	return [3]float64{math.Exp(quantile(s, 0.16)), math.Exp(quantile(s, 0.5)), math.Exp(quantile(s, 0.84))}
}

// fitDensityLo, fitDensityHi are the fit's prior bounds on the stellar density (g/cm³,
// log-uniform; steps/fit).
const fitDensityLo, fitDensityHi = 0.01, 100.0

// massDocCK and massDocMeasured name the mass's origin in the docs.
const (
	massDocCK       = "mass from the Chen & Kipping (2017) mean mass–radius relation (statistical, not a measurement)"
	massDocMeasured = "measured mass given in masses"
)

// quantitySpecs lists the per-planet quantities in table order.
func quantitySpecs(o Options) [nQuantities]qspec {
	var s [nQuantities]qspec
	s[qRatio] = qspec{"radius_ratio", "", "radius ratio Rp/R* of a planet on the target, corrected for dilution (k_obs √(1 + flux ratio))", true}
	s[qDepth] = qspec{"depth_undiluted", "ppm", "occulted area fraction k² the target alone would show, corrected for dilution", true}
	s[qRadiusEarth] = qspec{"radius_earth", "R_earth", "planet radius on the target, k × R* (IAU 2015 nominal Earth equatorial radius)", true}
	s[qRadiusJup] = qspec{"radius_jup", "R_jup", "planet radius on the target, k × R* (IAU 2015 nominal Jupiter equatorial radius)", true}
	s[qAxisAU] = qspec{"a_au", "au", "semi-major axis from the period and the star's mass by Kepler's third law (planet mass neglected; a/R* × R* when the star gives no mass)", false}
	s[qAxisScaled] = qspec{"a_over_rstar", "", "semi-major axis over the star's radius, from the fit", false}
	s[qIncl] = qspec{"inclination", "deg", "orbital inclination, i = arccos[b (R*/a)(1 + e sin ω)/(1 − e²)] (Winn 2010)", false}
	s[qImpact] = qspec{"impact", "", "impact parameter b in stellar radii", true}
	s[qEcc] = qspec{"eccentricity", "", "orbital eccentricity", true}
	s[qT14] = qspec{"t14", "h", "first-to-fourth-contact duration (Winn 2010) with the fit's own k, b and a/R*: the transit as observed", false}
	s[qT23] = qspec{"t23", "h", "second-to-third-contact duration (Winn 2010) with the fit's own k, b and a/R*; 0 for a grazing transit", false}
	s[qTeq] = qspec{"teq", "K", fmt.Sprintf("equilibrium temperature, Teff (R*/a)^½ [f (1 − A)]^¼, Bond albedo A = %g, %s heat redistribution (f = %.3g); flux-averaged distance when eccentric", o.Albedo, o.RedistributionName, o.Redistribution), false}
	s[qInsol] = qspec{"insolation", "S_earth", "bolometric flux received relative to Earth's, (L*/L_sun)(1 au/a)², orbit-averaged (÷ √(1 − e²)) when eccentric; L* = R*² (Teff/5772 K)⁴ when the star gives no luminosity", false}
	s[qProb] = qspec{"transit_probability", "", "geometric probability that the planet's centre crosses the star's disc for a random orientation, (R*/a)(1 + e sin ω)/(1 − e²) (Winn 2010)", false}
	s[qAngle] = qspec{"star_angle", "deg", "angular diameter of the star seen from the planet at distance a, 2 arcsin(R*/a)", false}
	s[qAngleRel] = qspec{"star_angle_vs_sun", "", "angular diameter of the star seen from the planet over that of the Sun seen from Earth (2 arcsin(R_sun/1 au) = 0.533 deg)", false}
	s[qMass] = qspec{"mass_earth", "M_earth", massDocCK, true}
	s[qRV] = qspec{"rv_amplitude", "m/s", "radial-velocity semi-amplitude the planet induces on the star, K = (2πG/P)^⅓ Mp sin i/(M* + Mp)^⅔/√(1 − e²), using the " + massDocCK, false}
	s[qTSM] = qspec{"tsm", "", "transmission spectroscopy metric (Kempton et al. 2018), Teq for zero albedo and full redistribution, apparent J magnitude, using the " + massDocCK, false}
	s[qESM] = qspec{"esm", "", "emission spectroscopy metric at 7.5 µm (Kempton et al. 2018), dayside 1.10 Teq for zero albedo and full redistribution, apparent Ks magnitude", false}
	return s
}

// Quantity indices within a companion host's table.
const (
	hostRatio = iota
	hostRadiusEarth
	hostRadiusJup
	nHostQuantities
)

// hostSpecs are the quantities reported per companion host hypothesis.
var hostSpecs = [nHostQuantities]qspec{
	hostRatio:       {"radius_ratio", "", "radius ratio against the host, k_obs √(1 + flux ratio of all other stars over the host's)", true},
	hostRadiusEarth: {"radius_earth", "R_earth", "planet radius, k × R_host", true},
	hostRadiusJup:   {"radius_jup", "R_jup", "planet radius, k × R_host", true},
}

// undefinedReason says why a quantity can be undefined for a draw.
func undefinedReason(q int) string {
	switch q {
	case qMass, qRV:
		return "the Chen & Kipping relation gives no mass above about 14 R_earth, where radius does not determine mass, or the star gives no mass"
	case qTSM:
		return "the metric's scale factors stop at 10 R_earth, or there is no mass"
	case qTeq, qInsol, qESM:
		return "the star gives no effective temperature"
	case qIncl, qT14, qT23:
		return "the impact parameter exceeds the projected orbit"
	}
	return "outside the relation's domain"
}

// sample is one combined draw as a planet's quantities need it.
type sample struct {
	n    int       // index of the combined draw
	row  []float64 // the fit sample
	star starDraw  // the star draw paired with it
	d    int       // the dilution draw (0 without dilution)
	mass float64   // measured mass drawn for the planet, M⊕; NaN when none is given
}

// starDraw is one draw of the star; NaN where the star step gives no such column.
type starDraw struct {
	radius, teff, mass, lum float64
}

// starAt returns star draw j; without a luminosity it is R*² (Teff/T☉)⁴ when Teff is given.
func (c *combiner) starAt(j int) starDraw {
	nan := math.NaN()
	star := c.star
	rs := star.Radius[j]
	teff, ms, lum := nan, nan, nan
	if star.Teff != nil {
		teff = star.Teff[j]
	}
	if star.Mass != nil {
		ms = star.Mass[j]
	}
	if star.Luminosity != nil {
		lum = star.Luminosity[j]
	} else if star.Teff != nil {
		lum = orNaN(astro.NominalLuminosity(rs, teff))
	}
	return starDraw{radius: rs, teff: teff, mass: ms, lum: lum}
}

// drawPlanet fills draw s.n of planet p's quantities, on the target and on each companion
// host.
func (c *combiner) drawPlanet(p int, s sample) {
	pc := c.pls[p]
	// k as the undiluted light curve gives it, and k on the target.
	kObs := s.row[pc.k]
	kRaw, kTrue := kObs, kObs
	if pc.dil >= 0 {
		kRaw = kObs / math.Sqrt(1+s.row[pc.dil])
	} else if len(c.hyps) > 0 && !c.dil.AlreadyCorrected {
		kTrue = kObs * math.Sqrt(1+c.hyps[0].FluxRatio[s.d])
	}
	c.drawTarget(c.vals[p], pc, s, kTrue)
	c.drawHosts(c.hvals[p], s, kRaw)
}

// drawTarget fills draw s.n of a planet's quantities on the target, whose radius ratio is
// kTrue; the durations use the fit's own k as the transit shows it.
func (c *combiner) drawTarget(v [][]float64, pc planetCols, s sample, kTrue float64) {
	nan := math.NaN()
	n, row := s.n, s.row
	per, kObs, b, aR := row[pc.period], row[pc.k], row[pc.b], row[pc.aR]
	e, om := 0.0, math.Pi/2
	if pc.e >= 0 {
		e, om = row[pc.e], row[pc.omega]*math.Pi/180 // the fit gives ω in degrees
	}
	rs, teff, ms, lum := s.star.radius, s.star.teff, s.star.mass, s.star.lum
	rpSun := kTrue * rs
	rpEarth := rpSun * astro.SolarRadius / astro.EarthRadius
	v[qRatio][n] = kTrue
	v[qDepth][n] = kTrue * kTrue * 1e6
	v[qRadiusEarth][n] = rpEarth
	v[qRadiusJup][n] = rpSun * astro.SolarRadius / astro.JupiterRadius
	aAU := aR * rs * astro.SolarRadius / astro.AU
	if ms > 0 {
		aAU, _ = astro.SemiMajorAxisAU(per, ms)
	}
	v[qAxisAU][n] = aAU
	v[qAxisScaled][n] = aR
	inc, err := astro.Inclination(b, aR, e, om)
	if err != nil {
		inc = nan
	}
	v[qIncl][n] = inc * 180 / math.Pi
	v[qImpact][n] = b
	v[qEcc][n] = e
	v[qT14][n] = orNaN(astro.TotalDuration(per, aR, kObs, b, e, om)) * 24
	v[qT23][n] = orNaN(astro.FullDuration(per, aR, kObs, b, e, om)) * 24
	v[qTeq][n] = orNaN(astro.EquilibriumTemperature(teff, aR, e, c.o.Albedo, c.o.Redistribution))
	v[qInsol][n] = orNaN(astro.Insolation(lum, aAU)) / math.Sqrt(1-e*e)
	v[qProb][n] = orNaN(astro.TransitProbability(aR, 0, e, om, false))
	ang := orNaN(astro.AngularDiameter(1, aR)) * 180 / math.Pi
	v[qAngle][n] = ang
	v[qAngleRel][n] = ang / sunAngle
	mass := s.mass
	if math.IsNaN(mass) {
		mass = orNaN(astro.ChenKippingMass(rpEarth))
	}
	v[qMass][n] = mass
	v[qRV][n] = nan
	if mass > 0 && ms > 0 {
		v[qRV][n] = orNaN(astro.RVSemiAmplitude(per*astro.Day, mass*astro.EarthGM, ms*astro.SolarGM, inc, e))
	}
	c.drawMetrics(v, n, s.star, e, aR, rpEarth, mass, kTrue)
}

// drawMetrics fills draw n of the transmission and emission spectroscopy metrics, for the
// planet's zero-albedo, fully redistributed equilibrium temperature; NaN without the
// magnitude each needs (or, for transmission, without a mass).
func (c *combiner) drawMetrics(v [][]float64, n int, st starDraw, e, aR, rpEarth, mass, kTrue float64) {
	teq0 := orNaN(astro.EquilibriumTemperature(st.teff, aR, e, 0, astro.RedistributionFull))
	v[qTSM][n], v[qESM][n] = math.NaN(), math.NaN()
	if c.mags.hasJ && mass > 0 {
		v[qTSM][n] = orNaN(astro.TransmissionMetric(rpEarth, mass, st.radius, teq0, c.mags.j))
	}
	if c.mags.hasK {
		v[qESM][n] = orNaN(astro.EmissionMetric(kTrue, teq0, st.teff, c.mags.k))
	}
}

// drawHosts fills draw s.n of the planet's radius on each companion host: kRaw, the k of
// the undiluted light curve, rescaled by the light of all stars but the host.
func (c *combiner) drawHosts(hv [][nHostQuantities][]float64, s sample, kRaw float64) {
	rs := s.star.radius
	for h := range hv {
		hy := c.hyps[h+1]
		k := kRaw * math.Sqrt(1+hy.FluxRatio[s.d])
		r := math.NaN() // the host's radius is unknown
		if hy.RadiusScale != nil {
			r = k * hy.RadiusScale[s.d] * rs
		}
		hv[h][hostRatio][s.n] = k
		hv[h][hostRadiusEarth][s.n] = r * astro.SolarRadius / astro.EarthRadius
		hv[h][hostRadiusJup][s.n] = r * astro.SolarRadius / astro.JupiterRadius
	}
}

// maxRescaledDilution is the largest flux ratio of contaminating to target light for which
// rescaling k after the fit, k√(1+D), matches a fit of the diluted shape to 1 % of k (for
// k ≤ 0.2; measured in TestRescaledKMatchesAFitOfTheDilutedShape).
const maxRescaledDilution = 0.1

// orNaN returns x, or NaN when err is set.
func orNaN(x float64, err error) float64 {
	if err != nil {
		return math.NaN()
	}
	return x
}

// truncNormal draws from a normal of mean m and deviation s truncated to positive values
// (a measured mass cannot be negative), by redrawing; a hopeless case returns m.
func truncNormal(r *rng.Stream, m, s float64) float64 {
	for try := 0; try < 100; try++ {
		if x := m + s*r.Normal(); x > 0 {
			return x
		}
	}
	return m
}

// sortedQuantile returns f of the p-quantile of a copy of v.
func sortedQuantile(v []float64, p float64, f func(float64) float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return f(quantile(s, p))
}

// par runs body over [0, n) in fixed blocks of blockSize.
func par(parallel func(int, func(int)), n int, body func(lo, hi int)) {
	nb := (n + blockSize - 1) / blockSize
	runBlocks(parallel, nb, func(b int) { body(b*blockSize, min((b+1)*blockSize, n)) })
}

func runBlocks(parallel func(int, func(int)), n int, block func(int)) {
	if parallel == nil {
		for i := 0; i < n; i++ {
			block(i)
		}
		return
	}
	parallel(n, block)
}
