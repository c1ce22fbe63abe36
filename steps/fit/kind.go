// Package fit is the fit step kind: a physical transit model fitted to a light curve and its
// posterior sampled. Per planet it fits the period, the mid-transit time at a reference epoch
// near the weighted centre of the data, the radius ratio k and the impact parameter b, and,
// for the planets named in `eccentric`, √e cos ω and √e sin ω (uniform in e and ω, the
// periastron outside the star; the mid-transit time is the inferior conjunction, true anomaly
// π/2 − ω, through Kepler's equation); the others are on circular orbits. The star's mean
// density (shared) sets a/R* of every planet by Kepler's third law. Each distinct segment
// band has its own pair of Kipping (2013) limb-darkening parameters q1, q2, optionally under
// a Gaussian prior on u1, u2 (whose Jacobian in q is 1). The workflow may replace the prior
// of the density and of each planet's period, k and b (uniform, normal, log-uniform, or
// fixed, which removes the parameter from the sampled vector). The model (Mandel & Agol
// 2002) is integrated over each segment's own exposure; each segment's flux normalisation is
// marginalised analytically and, optionally, a white-noise jitter per segment is fitted. Only
// points within a few search durations of a predicted mid-transit enter the likelihood.
// The best fit comes from a Nelder–Mead optimiser started at the search's values; the
// posterior from two or more independently seeded affine-invariant ensembles (Goodman &
// Weare 2010; with differential-evolution moves, and after burn-in independence moves from a
// Student-t guide fitted to each ensemble's own burn-in) run to 50 autocorrelation times or
// max_steps, with τ, effective sample size and R-hat per parameter. The sampler works in
// coordinates that straighten the posterior (a depth-like δ for k, a chord for b, logits for
// q1 and q2; Model.physical), with their Jacobians, so the priors hold as documented.
//
// By default the fit does not depend on the star or on the dilution (DESIGN principle 6);
// in coupled mode a `star` reference turns the star's density draws into the density prior
// (a log-normal fitted to ln ρ) and a `dilution` reference turns the target's flux-ratio
// draws into the prior of a sampled dilution D (model (F + D)/(1 + D)).
//
// With the shape fixed at the best fit it times each transit (package timing) and reports
// the residuals' β factor. It does not fit correlated noise, occultations, or limb darkening
// other than quadratic; eccentricity from photometry alone is only as good as the density prior.
// Main entry points: New (the kind, for the engine) and Fit (the library core).
package fit

import (
	"context"
	"errors"
	"fmt"
	"maps"
	"math"
	"sort"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
)

// Kind is the fit step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the fit kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var _ steps.Typed[Config] = Kind{}

// version is bumped whenever the numbers or the encoding change.
const version = 10 // 10: the reported depth is the light lost at mid-transit (not k²); per-transit time errors are the likelihood's spread (not Δχ² = 1)

// Defaults, each with its reason.
const (
	// defaultMaxSteps bounds the steps per ensemble; sampling stops as soon as the kept
	// chains are 50τ long, which for τ of 50–750 steps (measured: 45 for one planet in
	// 60 days of 2-min data, 570–740 for the demo's two planets at 30 min; BENCHMARKS.md)
	// takes 4,000–56,000 steps. A Note says when the cap was reached first.
	defaultMaxSteps = 100000
	// defaultEnsembles: two independent ensembles are the fewest for R-hat.
	defaultEnsembles = 2
	// defaultWindow keeps points within 2.5 search durations of a mid-transit: the box
	// duration can be half the total duration, so this keeps at least one total duration of
	// baseline on each side.
	defaultWindow = 2.5
)

// Name is the block type.
func (Kind) Name() string { return "fit" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is true: the sampler draws from the step's seed.
func (Kind) Random() bool { return true }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Fits a limb-darkened transit model (circular or eccentric orbits, priors per parameter, limb darkening per band) to the transits of a search's signals and samples its posterior with independent ensembles of walkers."
}

// Config is what a fit block may say. Defaults are the constants above, written as a user
// writes them. Check completes the untagged fields from the tagged ones.
type Config struct {
	LightCurve steps.Ref `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve to fit: a photometry step, or (usually) a detrend step"`
	Signals    steps.Ref `step:"signals,required" accepts:"search" doc:"the search whose signals give the start values (period, epoch, duration, depth); planets are named b, c, d in its order"`
	// Planets is absent to fit all of the search's signals, up to maxPlanets (see planets).
	Planets       *int    `step:"planets" doc:"fit the first this many signals jointly (1 to 3); all of the search's signals, up to 3, when absent"`
	MaxSteps      int     `step:"max_steps" default:"100000" doc:"the most ensemble updates per ensemble; sampling stops earlier once the chains after burn-in (the first third is discarded) are 50 autocorrelation times long"`
	Ensembles     int     `step:"ensembles" default:"2" doc:"independently seeded ensembles of walkers (2 to 8), compared by R-hat"`
	Window        float64 `step:"window" default:"2.5" doc:"points within this many search durations of a predicted mid-transit enter the likelihood; the rest are left out"`
	Supersample   bool    `step:"supersample" default:"true" doc:"integrate the model over each point's exposure (needed for long exposures, Kipping 2010); off only for tests and comparisons"`
	Jitter        bool    `step:"jitter" default:"true" doc:"fit one white-noise jitter per segment (log-uniform prior, 1 ppm to 10 %), added in quadrature to the stated errors"`
	InflateByBeta bool    `step:"inflate_by_beta" default:"false" doc:"multiply every point's error by the time-averaging factor β of the best fit's residuals (Pont, Zucker & Queloz 2006) before sampling, when β > 1; β is reported either way"`
	// PriorText and LimbText are the priors as written; Check parses them into Priors and
	// Limb.
	PriorText map[string]string `step:"priors" doc:"priors replacing the fit's own, by parameter: star_density (g/cm3) and <planet>.period (d), <planet>.k, <planet>.b; each uniform(a, b), normal(mean, sigma), log_uniform(a, b) or fixed(value), e.g. { \"b.period\" = \"normal(3.7185, 0.0004)\", \"b.k\" = \"fixed(0.05)\" }; a fixed parameter is not sampled. Without it: uniform in period, k (0–1) and b (0–1+k), log-uniform density 0.01–100 g/cm3"`
	LimbText  map[string]string `step:"limb_darkening" doc:"Gaussian priors on the quadratic coefficients by segment band, e.g. { \"survey-red\" = \"u1 = 0.35 ± 0.05, u2 = 0.25 ± 0.05\" }; the key \"default\" serves other bands and segments without one. Each band has its own q1, q2 (Kipping 2013), sampled; without a prior they are uniform on 0–1"`
	Eccentric []string          `step:"eccentric" doc:"planets (b, c, d) fitted on eccentric orbits, sampling √e cos ω and √e sin ω (uniform in e and ω, periastron outside the star); the others are circular"`
	Star      *steps.Ref        `step:"star" accepts:"star" doc:"coupled mode: the star step whose density draws become the density prior (a log-normal fitted to the draws' ln density); without it the fit does not depend on the star and derive combines them afterwards"`
	Dilution  *steps.Ref        `step:"dilution" accepts:"dilution" doc:"coupled mode: the dilution step whose flux ratios for the target (the first hypothesis) become the prior on a sampled dilution D ≥ 0 (a log-normal fitted to the draws), the model being (F + D)/(1 + D)"`

	// Priors are PriorText parsed, by parameter; nil when there are none.
	Priors map[string]Prior
	// Limb are LimbText parsed, by band; nil when there are none.
	Limb map[string]LimbPrior
}

// planets is how many signals to fit, 0 for all of them up to maxPlanets.
func (c *Config) planets() int {
	if c.Planets == nil {
		return 0
	}
	return *c.Planets
}

// Check holds the values to what the sampler can take and parses the priors.
func (Kind) Check(c *Config) error {
	c.Priors, c.Limb = nil, nil
	if n := c.Planets; n != nil && (*n < 1 || *n > maxPlanets) {
		return steps.Attrf("planets", "must be between 1 and %d, not %d", maxPlanets, *n)
	}
	if c.MaxSteps < 100 || c.MaxSteps > 1000000 {
		return steps.Attrf("max_steps", "must be between 100 and 1000000, not %d", c.MaxSteps)
	}
	if c.Ensembles < 2 || c.Ensembles > 8 {
		return steps.Attrf("ensembles", "must be between 2 and 8, not %d", c.Ensembles)
	}
	if !(c.Window >= 1 && c.Window <= 10) {
		return steps.Attrf("window", "must be between 1 and 10 search durations, not %v", c.Window)
	}
	for _, key := range sortedKeys(c.PriorText) {
		if err := checkPriorKey(key); err != nil {
			return steps.Attrf("priors", "key %q: %v", key, err)
		}
		p, err := ParsePrior(c.PriorText[key])
		if err != nil {
			return steps.Attrf("priors", "key %q: %v", key, err)
		}
		if err := checkPriorRange(key, p); err != nil {
			return steps.Attrf("priors", "key %q: %v", key, err)
		}
		if key == "star_density" && c.Star != nil {
			return steps.Attrf("priors", "key %q: the star reference already gives the density prior; give one or the other", key)
		}
		if c.Priors == nil {
			c.Priors = map[string]Prior{}
		}
		c.Priors[key] = p
	}
	for _, band := range sortedKeys(c.LimbText) {
		lp, err := ParseLimbPrior(c.LimbText[band])
		if err != nil {
			return steps.Attrf("limb_darkening", "band %q: %v", band, err)
		}
		if c.Limb == nil {
			c.Limb = map[string]LimbPrior{}
		}
		c.Limb[band] = lp
	}
	seen := map[string]bool{}
	for _, name := range c.Eccentric {
		j := planetIndex(name)
		if j < 0 || (c.planets() > 0 && j >= c.planets()) || seen[name] {
			return steps.Attrf("eccentric", "%q: name each fitted planet (b, c, d) at most once", name)
		}
		seen[name] = true
	}
	return nil
}

// checkPriorRange refuses priors outside a parameter's possible values: densities and
// periods are positive, k lies in [0, 1], b in [0, 2].
func checkPriorRange(key string, p Prior) error {
	lo, hi := p.A, p.B
	if p.Shape == Normal {
		lo, hi = p.A, p.A
	}
	_, par, _ := strings.Cut(key, ".")
	switch {
	case key == "star_density" || par == "period":
		if !(lo > 0) {
			return fmt.Errorf("%s: the value must be positive", p)
		}
	case par == "k":
		if !(hi >= 0 && lo <= 1) || (p.Shape == Fixed && !(p.A > 0 && p.A < 1)) {
			return fmt.Errorf("%s: k = Rp/R* lies between 0 and 1", p)
		}
	case par == "b":
		if !(hi >= 0 && lo < 2) || (p.Shape == Fixed && p.A < 0) {
			return fmt.Errorf("%s: b lies between 0 and 1 + k", p)
		}
	}
	return nil
}

func sortedKeys(m map[string]string) []string {
	k := make([]string, 0, len(m))
	for key := range m {
		k = append(k, key)
	}
	sort.Strings(k)
	return k
}

// DensityPrior is the coupled-mode prior on the star's density from its draws (g/cm³): a
// log-normal with the mean and standard deviation of ln ρ over the draws (a fixed density
// when they do not vary). Draws that are not positive and finite are bad input.
func DensityPrior(draws []float64) (Prior, error) {
	return logNormalOf("star: density", draws, false)
}

// DilutionPrior is the coupled-mode prior on the dilution D from the target's flux-ratio
// draws: a log-normal fitted to ln D; D = 0 when every draw is 0 (no companion, or a light
// curve already corrected for crowding). Draws must be finite and not negative; a mix of
// zero and positive draws is fitted to its positive part, the zeros' share given as a note
// by the caller (see Run).
func DilutionPrior(draws []float64) (Prior, error) {
	return logNormalOf("dilution: flux ratio", draws, true)
}

func logNormalOf(what string, draws []float64, zeroOK bool) (Prior, error) {
	var s, s2 float64
	n := 0
	for i, d := range draws {
		if math.IsNaN(d) || math.IsInf(d, 0) || d < 0 || (d == 0 && !zeroOK) {
			return Prior{}, steps.BadInputf("%s draw %d is %v; draws must be positive and finite", what, i+1, d)
		}
		if d == 0 {
			continue
		}
		l := math.Log(d)
		s += l
		s2 += l * l
		n++
	}
	if len(draws) == 0 {
		return Prior{}, steps.BadInputf("%s: no draws", what)
	}
	if n == 0 {
		return Prior{Shape: Fixed, A: 0, B: 0}, nil
	}
	mean := s / float64(n)
	v := 0.0
	if n > 1 {
		v = math.Max(0, (s2-float64(n)*mean*mean)/float64(n-1))
	}
	if v == 0 {
		return Prior{Shape: Fixed, A: math.Exp(mean), B: math.Exp(mean)}, nil
	}
	return Prior{Shape: LogNormal, A: mean, B: math.Sqrt(v)}, nil
}

// Run fits the referenced light curve.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return nil, errors.New("fit: light_curve does not refer to a step with a light curve")
	}
	ss, ok := in.Ref("signals").(signals.Source)
	if !ok {
		return nil, errors.New("fit: signals does not refer to a step with signals")
	}
	sigs := ss.Signals()
	if len(sigs) == 0 {
		return nil, steps.Nothing("nothing to fit: the search found no signal above its threshold")
	}
	n := cfg.planets()
	switch {
	case n == 0:
		n = min(len(sigs), maxPlanets)
		if len(sigs) > maxPlanets {
			env.Note("planets: the search found %d signals; the first %d are fitted", len(sigs), maxPlanets)
		}
	case n > len(sigs):
		return nil, steps.BadInputf("planets: %d asked for, but the search found %d signal(s)", n, len(sigs))
	}
	priors := cfg.Priors
	if a := in.Ref("star"); a != nil {
		ss, ok := a.(stellar.StarSource)
		if !ok || ss.StarDraws() == nil {
			return nil, errors.New("fit: star does not refer to a step with star draws")
		}
		if len(ss.StarDraws().Density) == 0 {
			return nil, steps.BadInputf("star: the star step gives no density draws")
		}
		p, err := DensityPrior(ss.StarDraws().Density)
		if err != nil {
			return nil, err
		}
		priors = maps.Clone(priors)
		if priors == nil {
			priors = map[string]Prior{}
		}
		priors["star_density"] = p
	}
	var dil *Prior
	if a := in.Ref("dilution"); a != nil {
		ds, ok := a.(stellar.DilutionSource)
		if !ok || ds.DilutionDraws() == nil {
			return nil, errors.New("fit: dilution does not refer to a step with dilution draws")
		}
		d := ds.DilutionDraws()
		if len(d.Hypotheses) == 0 {
			return nil, steps.BadInputf("dilution: the dilution step gives no hypothesis")
		}
		p, err := DilutionPrior(d.Hypotheses[0].FluxRatio)
		if err != nil {
			return nil, err
		}
		zeros := 0
		for _, f := range d.Hypotheses[0].FluxRatio {
			if f == 0 {
				zeros++
			}
		}
		if zeros > 0 && p.Shape != Fixed {
			env.Note("dilution: %d of %d flux-ratio draws are 0; the prior is fitted to the others", zeros, len(d.Hypotheses[0].FluxRatio))
		}
		dil = &p
	}
	o := Options{
		Signals: sigs[:n], MaxSteps: cfg.MaxSteps, Ensembles: cfg.Ensembles, Window: cfg.Window,
		Supersample: cfg.Supersample, Jitter: cfg.Jitter, InflateByBeta: cfg.InflateByBeta, Seed: env.Seed,
		Priors: priors, Limb: cfg.Limb, Eccentric: cfg.Eccentric, Dilution: dil,
		Parallel: func(k int, block func(i int)) {
			env.Pool.Parallel(k, block)
		},
		Progress: env.Progress,
	}
	art, notes, err := Fit(ctx, src.LightCurve(), o)
	if err != nil {
		return nil, err
	}
	for _, s := range notes {
		env.Note("%s", s)
	}
	return art, nil
}
