// Package fit is the fit step kind: a physical transit model fitted to a light curve and its
// posterior sampled. Per planet it fits the period, the mid-transit time at a reference epoch
// near the weighted centre of the data, the radius ratio k and the impact parameter b, on
// circular orbits; the star's mean density (shared, log-uniform prior) sets a/R* of every
// planet by Kepler's third law; one pair of Kipping (2013) limb-darkening parameters q1, q2
// is shared by all segments and bands. The model (Mandel & Agol 2002) is integrated over each
// segment's exposure; each segment's flux normalisation is marginalised analytically and,
// optionally, a white-noise jitter per segment is fitted. Only points within a few search
// durations of a predicted mid-transit enter the likelihood. The best fit comes from a
// Nelder–Mead optimiser started at the search's values; the posterior from two or more
// independently seeded affine-invariant ensembles (Goodman & Weare 2010) run to 50
// autocorrelation times or max_steps, with τ, effective sample size and R-hat per parameter.
//
// It does not fit eccentric orbits, per-transit times, band-dependent limb darkening or
// correlated noise, and does not use the catalogue star (DESIGN principle 6).
// Main entry points: Kind (for the engine) and Fit (the library core).
package fit

import (
	"context"
	"errors"
	"fmt"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
)

// Kind is the fit step kind.
type Kind struct{}

// version is bumped whenever the numbers or the encoding change.
const version = 1

// Defaults, each with its reason.
const (
	// defaultMaxSteps bounds the steps per ensemble so that a one-planet fit of a month of
	// 30-min data finishes in seconds; long data sets need more (a Note says so).
	defaultMaxSteps = 4000
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
	return "Fits a limb-darkened transit model on circular orbits to the transits of a search's signals and samples its posterior with independent ensembles of walkers."
}

// Params is the block's schema.
func (Kind) Params() []steps.Param {
	return []steps.Param{
		{Name: "light_curve", Type: steps.Ref, Kinds: []string{"photometry", "detrend"},
			Doc: "the light curve to fit: a photometry step, or (usually) a detrend step"},
		{Name: "signals", Type: steps.Ref, Kinds: []string{"search"},
			Doc: "the search whose signals give the start values (period, epoch, duration, depth); planets are named b, c, d in its order"},
		{Name: "planets", Type: steps.Integer, Optional: true,
			Doc: "fit the first this many signals jointly (1 to 3); all of the search's signals, up to 3, when absent"},
		{Name: "max_steps", Type: steps.Integer, Default: int64(defaultMaxSteps),
			Doc: "the most ensemble updates per ensemble; sampling stops earlier once the chains after burn-in (their second half) are 50 autocorrelation times long"},
		{Name: "ensembles", Type: steps.Integer, Default: int64(defaultEnsembles),
			Doc: "independently seeded ensembles of walkers (2 to 8), compared by R-hat"},
		{Name: "window", Type: steps.Number, Default: defaultWindow,
			Doc: "points within this many search durations of a predicted mid-transit enter the likelihood; the rest are left out"},
		{Name: "supersample", Type: steps.Bool, Default: true,
			Doc: "integrate the model over each point's exposure (needed for long exposures, Kipping 2010); off only for tests and comparisons"},
		{Name: "jitter", Type: steps.Bool, Default: true,
			Doc: "fit one white-noise jitter per segment (log-uniform prior, 1 ppm to 10 %), added in quadrature to the stated errors"},
	}
}

// Config is the decoded configuration of one fit block.
type Config struct {
	Planets     int // 0: all signals, up to 3
	MaxSteps    int
	Ensembles   int
	Window      float64
	Supersample bool
	Jitter      bool
}

// Prepare checks the values and builds a Config.
func (Kind) Prepare(v steps.Values) (any, error) {
	c := Config{Window: v.Float("window"), Supersample: v.Bool("supersample"), Jitter: v.Bool("jitter")}
	if v.Has("planets") {
		n := v.Int("planets")
		if n < 1 || n > maxPlanets {
			return nil, steps.Attrf("planets", "must be between 1 and %d, not %d", maxPlanets, n)
		}
		c.Planets = int(n)
	}
	n := v.Int("max_steps")
	if n < 100 || n > 1000000 {
		return nil, steps.Attrf("max_steps", "must be between 100 and 1000000, not %d", n)
	}
	c.MaxSteps = int(n)
	e := v.Int("ensembles")
	if e < 2 || e > 8 {
		return nil, steps.Attrf("ensembles", "must be between 2 and 8, not %d", e)
	}
	c.Ensembles = int(e)
	if !(c.Window >= 1 && c.Window <= 10) {
		return nil, steps.Attrf("window", "must be between 1 and 10 search durations, not %v", c.Window)
	}
	return c, nil
}

// Run fits the referenced light curve.
func (Kind) Run(ctx context.Context, cfgAny any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	cfg, ok := cfgAny.(Config)
	if !ok {
		return nil, fmt.Errorf("fit: configuration of type %T", cfgAny)
	}
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
		return nil, steps.BadInputf("signals: the search found no signal to fit")
	}
	n := cfg.Planets
	switch {
	case n == 0:
		n = min(len(sigs), maxPlanets)
		if len(sigs) > maxPlanets {
			env.Note("planets: the search found %d signals; the first %d are fitted", len(sigs), maxPlanets)
		}
	case n > len(sigs):
		return nil, steps.BadInputf("planets: %d asked for, but the search found %d signal(s)", n, len(sigs))
	}
	o := Options{
		Signals: sigs[:n], MaxSteps: cfg.MaxSteps, Ensembles: cfg.Ensembles, Window: cfg.Window,
		Supersample: cfg.Supersample, Jitter: cfg.Jitter, Seed: env.Seed,
		Parallel: func(k int, block func(i int)) {
			env.Pool.Parallel(k, block)
		},
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
