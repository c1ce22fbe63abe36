// Package derive is the derive step kind: it turns a fit's posterior, the host star's draws
// and (optionally) a dilution step's draws into each planet's physical quantities (radius,
// semi-major axis, inclination, durations, equilibrium temperature, insolation, transit
// probability, the star's apparent size from the planet, mass, radial-velocity amplitude,
// spectroscopy metrics), summarised with their units and rounded by their uncertainty.
//
// The fit does not take the star's density in its likelihood by default (DESIGN principle
// 6), so this step combines them afterwards: the fit's samples are importance-reweighted by
// a kernel density estimate of the star's density (the fit's prior being log-uniform), each
// resampled draw is paired with a star draw close in density, and the effective sample size
// is reported with a caution below a threshold. When the two densities do not overlap at
// all, the step does not fail: the fit's samples keep equal weights, each paired with a star
// draw at random, every planet figure is marked provisional and a caution says why. Dilution is applied to the radius ratio draw
// by draw, for the target and for each companion host. It fits nothing and re-reads no light
// curve; the numbers come from steps/internal/astro. Main entry points: New (the kind, for
// the engine) and Derive (the library core).
package derive

import (
	"context"
	"errors"
	"math"
	"sort"
	"strings"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/stellar"
	"dipline/steps/units"
)

// Kind is the derive step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the derive kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var _ steps.Typed[Config] = Kind{}

// version is bumped whenever the numbers or the encoding change.
const version = 2

// Defaults, each with its reason.
const (
	// defaultAlbedo is a Bond albedo of 0.3, near Earth's (common practice for a generic
	// equilibrium temperature; it gives Earth's 255 K).
	defaultAlbedo = 0.3
	// defaultESSThreshold: with n effective draws the 16th and 84th percentiles of a
	// Gaussian scatter by about √(0.16·0.84/n)/φ(1) ≈ 1.5σ/√n (the variance of a sample
	// quantile, e.g. Stuart & Ord, Kendall's Advanced Theory of Statistics), 0.11σ at
	// n = 200: beyond that the second significant figure of the printed σ is noise.
	defaultESSThreshold = 200.0
	// defaultDraws: 10⁴ combined draws put the Monte Carlo scatter of the percentiles at
	// 0.015σ (same formula), well under the rounding, at a cost under a second.
	defaultDraws = 10000
	// defaultMaxPlanetRadius is 2 R_J: the largest inflated hot Jupiters are near that size
	// and anything bigger is taken for a star (common practice).
	defaultMaxPlanetRadius = 2.0
	// maxDraws bounds the draws: the step holds 20 quantities × planets × draws floats
	// (96 MB for three planets at the bound).
	maxDraws = 200000
)

// redistributions maps the redistribution attribute to the factor f (Cowan & Agol 2011
// convention; astro).
var redistributions = map[string]float64{
	"full":    astro.RedistributionFull,
	"dayside": astro.RedistributionDayside,
	"none":    astro.RedistributionNone,
}

// rJupInSun is one nominal Jupiter radius in R☉, the base unit of units.Radius.
var rJupInSun = units.Radius.Units["R_jup"]

// Name is the block type.
func (Kind) Name() string { return "derive" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is true: the combination resamples and pairs draws from the step's seed.
func (Kind) Random() bool { return true }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Combines a fit's posterior with the star's draws (reweighting by the star's density) and the dilution's, and summarises each planet's radius, orbit, temperature, mass and spectroscopy metrics."
}

// Config is what a derive block may say. Defaults are the constants above, written as a
// user writes them. Check completes the untagged fields from the tagged ones.
type Config struct {
	Fit            steps.Ref  `step:"fit,required" accepts:"fit" doc:"the fit whose posterior samples are combined"`
	Star           steps.Ref  `step:"star,required" accepts:"star" doc:"the host star's draws (radius, mass, Teff, luminosity, density, magnitudes)"`
	Dilution       *steps.Ref `step:"dilution" accepts:"dilution" doc:"flux-ratio draws per host hypothesis; without it k is taken as the target's own"`
	Albedo         float64    `step:"albedo" default:"0.3" doc:"Bond albedo for the equilibrium temperature (0 to 1)"`
	Redistribution string     `step:"redistribution" default:"full" choices:"full|dayside|none" doc:"heat redistribution for the equilibrium temperature: over the whole planet (f = 1/4), the day side only (f = 1/2), or none, re-radiated where absorbed (f = 2/3)"`
	// MassText holds the masses as written; Check parses them into Masses.
	MassText        map[string]string `step:"masses" doc:"measured masses by planet, e.g. { b = \"4.1 ± 0.6 M_earth\" }; planets without one get the Chen & Kipping (2017) relation's statistical mass"`
	ESSThreshold    float64           `step:"ess_threshold" default:"200" doc:"effective sample size after reweighting below which the combination is flagged and the coupled fit advised"`
	Draws           int               `step:"draws" default:"10000" doc:"combined draws summarised per quantity"`
	FitHasStarPrior bool              `step:"fit_has_star_prior" default:"false" doc:"the fit already used the star's density in its likelihood (a coupled fit): its samples are then not reweighted again; a fit that lists a density prior among its priors counts as such whatever this says"`
	// MaxPlanetRadius is in R☉, the base unit; Check gives it in R_J as MaxPlanetRadiusJup.
	MaxPlanetRadius float64 `step:"max_planet_radius" dim:"radius" default:"2 R_jup" doc:"a host hypothesis giving a larger median radius is flagged as not planetary; by default \"2 R_jup\""`

	// Masses are MassText parsed, by planet: value and one-sigma error in M⊕; nil when
	// there are none.
	Masses map[string][2]float64
	// MaxPlanetRadiusJup is MaxPlanetRadius in R_J.
	MaxPlanetRadiusJup float64
}

// Check holds the values to what the combination can take, parses the masses and gives
// the planetary limit in R_J.
func (Kind) Check(c *Config) error {
	c.Masses, c.MaxPlanetRadiusJup = nil, c.MaxPlanetRadius/rJupInSun
	if !(c.Albedo >= 0 && c.Albedo < 1) {
		return steps.Attrf("albedo", "must be at least 0 and below 1, not %v", c.Albedo)
	}
	if _, ok := redistributions[c.Redistribution]; !ok {
		return steps.Attrf("redistribution", "must be one of full, dayside, none, not %q", c.Redistribution)
	}
	if !(c.ESSThreshold >= 0) || math.IsInf(c.ESSThreshold, 0) {
		return steps.Attrf("ess_threshold", "must be a non-negative number, not %v", c.ESSThreshold)
	}
	if c.Draws < 100 || c.Draws > maxDraws {
		return steps.Attrf("draws", "must be between 100 and %d, not %d", maxDraws, c.Draws)
	}
	if !(c.MaxPlanetRadiusJup > 0) || math.IsInf(c.MaxPlanetRadiusJup, 0) {
		return steps.Attrf("max_planet_radius", "must be a positive radius")
	}
	if m := c.MassText; len(m) > 0 {
		c.Masses = map[string][2]float64{}
		earth := units.Mass.Units["M_earth"]
		names := make([]string, 0, len(m))
		for name := range m {
			names = append(names, name)
		}
		sort.Strings(names)
		for _, name := range names {
			val, sig, err := units.Mass.ParseMeasurement(m[name])
			if err != nil {
				return steps.Attrf("masses", "planet %s: %v", name, err)
			}
			if !(val > 0) {
				return steps.Attrf("masses", "planet %s: the mass must be positive, not %q", name, m[name])
			}
			c.Masses[name] = [2]float64{val / earth, sig / earth}
		}
	}
	return nil
}

// densityPriorTag starts the fit artifact's Priors entry for a density prior other than
// its own log-uniform one (steps/fit: "prior: star_density log_normal(…)"), which a coupled
// fit or a workflow prior puts there.
const densityPriorTag = "prior: star_density "

// Run combines the referenced fit, star and dilution.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	fa, ok := in.Ref("fit").(*fit.Artifact)
	if !ok || fa == nil {
		return nil, errors.New("derive: fit does not refer to a fit step's result")
	}
	ss, ok := in.Ref("star").(stellar.StarSource)
	if !ok {
		return nil, errors.New("derive: star does not refer to a step with star draws")
	}
	var dil *stellar.Dilution
	if r := in.Ref("dilution"); r != nil {
		ds, ok := r.(stellar.DilutionSource)
		if !ok {
			return nil, errors.New("derive: dilution does not refer to a step with dilution draws")
		}
		dil = ds.DilutionDraws()
	}
	coupled, prior := cfg.FitHasStarPrior, ""
	for _, p := range fa.Priors {
		if strings.HasPrefix(p, densityPriorTag) {
			coupled, prior = true, strings.TrimPrefix(p, "prior: ")
		}
	}
	o := Options{
		Albedo: cfg.Albedo, Redistribution: redistributions[cfg.Redistribution], RedistributionName: cfg.Redistribution,
		Masses: cfg.Masses, ESSThreshold: cfg.ESSThreshold, Draws: cfg.Draws, FitHasStarPrior: coupled,
		FitDensityPrior: prior, MaxPlanetRadius: cfg.MaxPlanetRadiusJup, Seed: env.Seed,
		Parallel: func(n int, block func(i int)) { env.Pool.Parallel(n, block) },
	}
	art, notes, err := Derive(Posterior{Names: fa.Names, Samples: fa.Samples}, ss.StarDraws(), dil, o)
	if err != nil {
		return nil, err
	}
	for _, s := range notes {
		env.Note("%s", s)
	}
	env.Note("caution: these parameters assume each signal is a planet transiting the star it is assigned to; they do not validate it. Eclipsing binaries, blended background stars and other false-positive scenarios need vetting and follow-up, and the judgement of whoever publishes them")
	return art, nil
}

// Decode reads an artifact back from its canonical encoding.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }
