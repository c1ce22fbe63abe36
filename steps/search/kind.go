// Package search is the search step kind: a periodic transit search by box least squares
// over a light curve from a photometry or detrend step. It builds a frequency grid uniform
// in f^{1/3} for the star's mean density (Ofir 2014), written as star_density or taken from
// a star step (star), keeps per frequency the best dip
// over durations and phases, takes the highest peak when its SDE reaches a threshold
// calibrated on white noise, refines it, accepts it when its box is at least three errors
// deep and its SNR reaches a floor (min_snr), masks its transits and searches again, up to
// a number of signals. The numerics live in the bls sub-package and know nothing of workflow
// files; this package turns a block's values into bls.Options, runs them on the engine's
// worker pool and wraps the outcome as an Artifact.
//
// Main entry points: New (register it with the engine) and Search (the same work as a
// library call). The artifact, *Artifact, gives its signals through signals.Source, so
// detrend (masking), fit, vet and ephemeris steps can take it, and says in plain words
// (steps.Cautioner) when a signal's period is doubtful: the data prefer half or twice it,
// one or two transits carry it, or only two transits have data; and when a written
// star_density, a giant's, kept much of the period range from being searched.
// It does not detrend, fit a transit model or judge whether a signal is a planet.
package search

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/parallel"
	"dipline/steps/internal/stardensity"
	"dipline/steps/internal/stellar"
	"dipline/steps/search/bls"
	"dipline/steps/units"
)

// Kind is the search step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the search kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var _ steps.Typed[Config] = Kind{}

// version is bumped whenever the numbers or the encoding change. 2: each signal's rival
// periods (P/2, 2P) and spread over its transits, with cautions. 3: the fast fold and
// the SDE against the median and the median absolute deviation. 4: the
// default threshold from the grid's size, kept in the result. 5: its constants refitted to
// four years of data; every pass whole. 6: the refinement keeps within reach of its peak
// and inside the grid, and a box less than three errors deep is no signal. 7: a box whose
// SNR is below min_snr is no signal either, and each pass keeps why its peak gave none.
// 8: the star's density may come from a star step (star), and the result keeps whether it
// did and whether the star's Roche-type limit set the shortest period, for the caution on
// a star_density that makes the star a giant's.
const version = 8

// Defaults, each with its reason.
const (
	// defaultShortest is the shortest trial period unless the star's Roche-type limit is
	// longer: 0.2 d is near the fluid Roche limit of a rocky planet of about 7 g/cm³,
	// P ≈ 12.6 h·(ρ_p/1 g cm⁻³)^{-1/2} (Rappaport et al. 2013, ApJ 773, L15, from memory).
	defaultShortest = 0.2
	// defaultSpanFraction puts the longest trial period at half the data span, so that at
	// least two transits fall in the data.
	defaultSpanFraction = 0.5
	// defaultOversampling samples a drift of one transit duration over the span three
	// times (Ofir 2014 uses 2–5; common practice).
	defaultOversampling = 3.0
	// defaultMaxSignals: three passes find the usual compact systems seen in one light curve
	// while bounding the work.
	defaultMaxSignals = 3
	// defaultMaskFactor masks two box durations around each found mid-transit before the
	// next pass: a box fitted to a limb-darkened or V-shaped transit is shorter than first
	// to last contact (down to about half of it), and leftover ingress and egress would
	// otherwise come back as a weaker signal at the same period.
	defaultMaskFactor = 2.0
	// defaultMinSNR is the signal-to-noise floor a refined box must reach besides the SDE
	// threshold. The SDE measures a peak against the rest of its periodogram, so on a
	// light curve whose noise is red on the transit's time scale (flares, leftover
	// variability) a peak can reach it with a box the binned noise explains; the SNR bins
	// the noise to the duration. Transit surveys ask for about 7 (common practice; the
	// Kepler pipeline's threshold on its multiple-event statistic is 7.1σ, Jenkins et al.
	// 2010, ApJ 713, from memory).
	defaultMinSNR = 7.0
)

// solarDensity is the nominal Sun's mean density in g/cm³, the density unit "rho_sun".
var solarDensity = units.Density.Units["rho_sun"]

// Name is the block type.
func (Kind) Name() string { return "search" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is false: the search draws no random numbers.
func (Kind) Random() bool { return false }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Searches a light curve for periodic transit-like dips by box least squares on a grid uniform in f^(1/3), finding up to max_signals signals one after another."
}

// Config is what a search block may say. Defaults are the constants above (and
// bls.DefaultThreshold), written as a user writes them.
type Config struct {
	LightCurve steps.Ref `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve to search: a photometry step, or (usually) a detrend step"`
	// Periods is the trial-period range in days; absent, it is derived from the data (see
	// periods).
	Periods *[2]float64 `step:"periods" dim:"time" doc:"shortest and longest trial period; by default from 0.2 d (or the star's Roche-type limit, the orbit at 3 stellar radii, if longer) to half the data span"`
	// Star names the star step whose density the grid is built for, instead of Density.
	Star *steps.Ref `step:"star" accepts:"star" doc:"the host star: the grid, the shortest period and the box durations are built for the median of its density draws (its own, or M/R³ from its mass and radius), the value the vet compares the search with; not together with star_density. The search then depends on the star's result, so a revision of the star's catalogue row re-runs the search and what follows it, the fit included (with star_density it does not)"`
	// Density is the star's mean density in g/cm³ as written; nil when star_density is
	// not written (the Sun's, or the star step's with Star): see density.
	Density      *float64 `step:"star_density" dim:"density" doc:"mean density of the star: it sets the grid's spacing, the shortest period searched (the orbit at 3 stellar radii) and the transit durations tried at each period (from 0.3 to 1.75 times that of a central transit); by default the Sun's, \"1 rho_sun\"; once a star step is written, star = star.<label> takes its density instead (not both)"`
	Oversampling float64  `step:"oversampling" default:"3" doc:"trial frequencies per drift of one transit duration over the data span (Ofir 2014); more finds weak signals a little more surely and costs proportionally more"`
	MaxSignals   int      `step:"max_signals" default:"3" doc:"the search stops after finding this many signals, each found after masking the ones before"`
	// SDEThreshold is absent for the default, which depends on the grid's size.
	SDEThreshold *float64 `step:"sde_threshold" doc:"signal detection efficiency a periodogram peak must reach to count as a signal; by default from the number of trial frequencies (about 7.1 for a month of data, 8.1 for three months, 8.7 for a year, 9.3 for four), holding white-noise false alarms to about 1 % per star, and the run says which"`
	MaskFactor   float64  `step:"mask_factor" default:"2" doc:"the stretch masked around each found mid-transit before searching again, in transit durations"`
	MinSNR       float64  `step:"min_snr" default:"7" doc:"signal-to-noise a peak above the SDE threshold must also reach, its box's depth over the out-of-transit noise binned to the duration, times the square root of the transits with data; a peak below it is set aside, the run's notes say which, and the search stops there; 7 is what transit surveys commonly ask (the Kepler pipeline's 7.1 σ); 0 turns the floor off"`
	Method       string   `step:"method" choices:"auto|fast_fold|fold_and_scan" default:"auto" doc:"how each periodogram is computed: fast_fold bins the light curve evenly in time and folds all trial periods at once (Staelin 1969), fold_and_scan folds every point at every frequency (for sparse, uneven data it can be the cheaper); auto takes the cheaper, and the run's notes say which ran and why"`

	// starRho is the star step's density (g/cm³) when Star is given, read by WithStar;
	// 0 until then. It is no attribute: the step key holds the star's result key instead.
	starRho float64
}

// density returns the star's mean density in g/cm³ the search is built for and whether it
// is the star step's: that one (0 until WithStar has read it), the written star_density,
// or the Sun's.
func (c *Config) density() (rho float64, fromStar bool) {
	switch {
	case c.Star != nil:
		return c.starRho, true
	case c.Density != nil:
		return *c.Density, false
	}
	return solarDensity, false
}

// AssumedDensity returns the star's mean density, g/cm³, a search with these settings
// builds its grid for, and whether it is the star step's (after WithStar).
func (c *Config) AssumedDensity() (rho float64, fromStar bool) { return c.density() }

// WithStar returns cfg ready to search around the star that a, the artifact of the step
// its star attribute names, describes: the grid and the box durations are built for
// stardensity.Median of its draws, the value the vet's search-density test compares the
// search with. Run calls it; so does the completeness step, which searches with these
// settings and hands the same star (its own star attribute, which must name the same
// step). A star that gives no density, nor mass and radius, is refused on star.
func WithStar(cfg Config, a steps.Artifact) (Config, error) {
	name := "the star step"
	if cfg.Star != nil {
		name = string(*cfg.Star)
	}
	src, ok := a.(stellar.StarSource)
	if !ok || src.StarDraws() == nil {
		return cfg, fmt.Errorf("search: star does not refer to a step that describes a star")
	}
	rho, n := stardensity.Median(src.StarDraws())
	if n == 0 || !(rho > 0) || math.IsInf(rho, 0) {
		return cfg, steps.Attrf("star", "%s gives no density, nor a mass and radius to make one: write the star's density in star_density instead", name)
	}
	cfg.starRho = rho
	return cfg, nil
}

// method reads the method choice.
func (c *Config) method() bls.Method {
	switch c.Method {
	case "fast_fold":
		return bls.MethodFast
	case "fold_and_scan":
		return bls.MethodDirect
	}
	return bls.MethodAuto
}

// periods is the trial-period range in days, or zeros when it is to be derived from the
// data.
func (c *Config) periods() [2]float64 {
	if c.Periods == nil {
		return [2]float64{}
	}
	return *c.Periods
}

// Check holds the values to what the search can take.
func (Kind) Check(c *Config) error {
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	if c.Star != nil && c.Density != nil {
		return steps.Attrf("star_density", "is not taken together with star = %s, which gives the star's density: write one of the two (star_density to give the density yourself, star to take the star step's)", *c.Star)
	}
	if c.Density != nil && (!(*c.Density > 0) || !finite(*c.Density)) {
		return steps.Attrf("star_density", "must be a positive density, not %v g/cm3", *c.Density)
	}
	if !(c.Oversampling >= 1 && c.Oversampling <= 20) {
		return steps.Attrf("oversampling", "must be between 1 and 20, not %v", c.Oversampling)
	}
	if n := c.MaxSignals; n < 1 || n > 20 {
		return steps.Attrf("max_signals", "must be between 1 and 20, not %d", n)
	}
	if c.SDEThreshold != nil && (!(*c.SDEThreshold > 0) || !finite(*c.SDEThreshold)) {
		return steps.Attrf("sde_threshold", "must be a positive number, not %v", *c.SDEThreshold)
	}
	if !(c.MinSNR >= 0) || !finite(c.MinSNR) {
		return steps.Attrf("min_snr", "must be a number at least 0 (0 turns the floor off), not %v", c.MinSNR)
	}
	if !(c.MaskFactor >= 1 && c.MaskFactor <= 10) {
		return steps.Attrf("mask_factor", "must be between 1 and 10 transit durations, not %v", c.MaskFactor)
	}
	if c.Periods != nil {
		r := *c.Periods
		if !(r[0] > 0) || !(r[1] > r[0]) || !finite(r[1]) {
			return steps.Attrf("periods", "must be two positive times, shortest first, not %v d and %v d", r[0], r[1])
		}
		if rho, fromStar := c.density(); !fromStar { // the star step's is known at Run
			return insideStar(r[0], rho, "")
		}
	}
	return nil
}

// insideStar refuses, on periods, a shortest trial period whose orbit lies inside a star of
// density rho (g/cm³), whose origin from tells ("" for a written or default density).
func insideStar(p, rho float64, from string) error {
	if a := bls.ScaledAxis(p, rho); a <= 1 {
		return steps.Attrf("periods", "the shortest period, %.4g d, would put the orbit inside a star of %.4g g/cm3%s (a/R* = %.3g); the shortest possible is %.4g d",
			p, rho, from, a, bls.PeriodAtAxis(1, rho))
	}
	return nil
}

// Run searches the referenced light curve.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return nil, errors.New("search: light_curve does not refer to a step with a light curve")
	}
	if cfg.Star != nil {
		c, err := WithStar(*cfg, in.Ref("star"))
		if err != nil {
			return nil, err
		}
		cfg = &c
	}
	par := func(n int, block func(i int)) {
		env.Pool.Parallel(n, func(i int) {
			if ctx.Err() == nil {
				block(i)
			}
		})
	}
	// Progress is one count over every pass the search may make (max_signals of them, each
	// counted in the same units, bls reckoning how far a pass is), never going back: blocks
	// finish out of order, so a smaller count arriving late is dropped. A search that ends
	// before its last pass then reports the whole as done.
	var (
		mu       sync.Mutex
		reported int
		all      int // blocks in all passes; 0 until the first report
	)
	progress := func(pass, done, perPass int) {
		if env.Progress == nil {
			return
		}
		mu.Lock()
		defer mu.Unlock()
		all = cfg.MaxSignals * perPass
		if n := min(pass*perPass+done, all); n > reported {
			reported = n
			env.Progress(n, all)
		}
	}
	art, notes, err := Search(*cfg, src.LightCurve(), par, progress)
	if err != nil {
		return nil, err
	}
	if env.Progress != nil && all > 0 && reported < all {
		env.Progress(all, all)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	for _, n := range notes {
		env.Note("%s", n)
	}
	return art, nil
}

// Search is the library entry point behind Run: it searches lc with cfg, spreading blocks
// of frequencies with par (nil: serially), and returns the artifact with the facts worth
// telling the user (the derived period range, the grid). Problems with the light curve are
// *steps.InputError values.
func Search(cfg Config, lc *lightcurve.LightCurve, par parallel.Func, progress func(pass, done, total int)) (*Artifact, []string, error) {
	t, f, e, _ := lc.Flat()
	s := bls.Series{Time: t, Flux: f, Err: e}
	if err := s.Check(); err != nil {
		return nil, nil, steps.BadInputf("light_curve: %v", err)
	}
	if len(t) < minPoints {
		return nil, nil, steps.BadInputf("light_curve: %d points are too few to search (at least %d)", len(t), minPoints)
	}
	var notes []string
	rho, fromStar := cfg.density()
	if fromStar {
		if !(rho > 0) {
			return nil, nil, errors.New("search: the star step's density was not read before searching (WithStar)")
		}
		if cfg.Periods != nil {
			if err := insideStar(cfg.Periods[0], rho, ", the star step's"); err != nil {
				return nil, nil, err
			}
		}
		notes = append(notes, fmt.Sprintf("star density: %.4g g/cm3 (%.3g rho_sun), the median of %s's draws (as the vet reads it), taken from the star step instead of star_density",
			rho, rho/solarDensity, *cfg.Star))
	}
	span := t[len(t)-1] - t[0]
	r := cfg.periods()
	lo, hi := r[0], r[1]
	roche := bls.RochePeriod(rho)
	rocheCut := false
	if hi == 0 {
		lo, hi = PeriodRange(cfg, span)
		why := "0.2 d"
		if roche > defaultShortest {
			why = fmt.Sprintf("the Roche-type limit of a %.3g g/cm3 star, the orbit at 3 stellar radii", rho)
			rocheCut = true
		}
		if lo >= hi {
			return nil, nil, steps.BadInputf("light_curve: the data span %.4g d, too short for two transits of any period above %.4g d (%s)%s", span, lo, why, slipAdvice(rho, fromStar))
		}
		notes = append(notes, fmt.Sprintf("periods: %.4g d (%s) to %.4g d (half the %.4g d span, so that two transits fall in the data)", lo, why, hi, span))
	} else {
		if lo < roche {
			notes = append(notes, fmt.Sprintf("periods: the shortest, %.4g d, is inside the Roche-type limit of a %.3g g/cm3 star (%.4g d, the orbit at 3 stellar radii); searched as asked", lo, rho, roche))
		}
		if hi > span {
			if lo >= span {
				return nil, nil, steps.BadInputf("light_curve: the data span %.4g d is shorter than the shortest trial period %.4g d", span, lo)
			}
			notes = append(notes, fmt.Sprintf("periods: the longest, %.4g d, exceeds the %.4g d span and was lowered to it", hi, span))
			hi = span
		}
	}
	opt := bls.Options{
		Density: rho, PeriodMin: lo, PeriodMax: hi, Oversampling: cfg.Oversampling,
		MaxSignals: cfg.MaxSignals, MaskFactor: cfg.MaskFactor,
		Method: cfg.method(), MinSNR: cfg.MinSNR,
	}
	if cfg.SDEThreshold != nil {
		opt.SDEThreshold = *cfg.SDEThreshold
	}
	res, err := bls.Search(s, opt, par, progress)
	if err != nil {
		return nil, nil, steps.BadInputf("light_curve: %v", err)
	}
	g := res.Grid
	notes = append(notes, fmt.Sprintf("grid: %d frequencies uniform in f^(1/3) (Ofir 2014) over %.4g–%.4g d for a star of %.4g g/cm3 (%.3g rho_sun), oversampling %g",
		g.N, 1/g.FMax, 1/g.FMin, g.Density, g.Density/solarDensity, g.Oversampling), "method: "+res.Why)
	if cfg.SDEThreshold == nil {
		notes = append(notes, fmt.Sprintf("sde_threshold: %.2f, for a grid of %d frequencies (white noise reaches it on about 1 %% of stars)", res.Threshold, g.N))
	}
	art := newArtifact(lc, res)
	art.FromStar, art.RocheCut = fromStar, rocheCut
	found := len(art.Signals())
	last := res.Passes[len(res.Passes)-1]
	switch {
	case last.Found == nil && last.SDE < res.Threshold:
		notes = append(notes, fmt.Sprintf("%d signal(s) found; the next peak (%.4g d) has SDE %.2f, below %.3g", found, g.Period(last.Peak), last.SDE, res.Threshold))
	case last.Found == nil && res.SetAside != nil:
		d := res.SetAside
		notes = append(notes, fmt.Sprintf("%d signal(s) found; the next peak (%.4g d, SDE %.2f, above the threshold %.3g) was set aside and not passed on as a signal: refined to a box at %.4g d, %.0f ppm deep, its SNR is %.2f, below min_snr = %g. The search stopped there: the strongest peak left is no credible signal, so weaker ones were not tried",
			found, g.Period(last.Peak), last.SDE, res.Threshold, d.Timing.Period, d.Shape.Depth*1e6, d.Strength.SNR, cfg.MinSNR))
	case last.Found == nil:
		why := res.Refused
		if why == "" {
			why = "gave no dip on refinement"
		}
		notes = append(notes, fmt.Sprintf("%d signal(s) found; the next peak (%.4g d, SDE %.2f) %s", found, g.Period(last.Peak), last.SDE, why))
	default:
		notes = append(notes, fmt.Sprintf("%d signal(s) found; max_signals reached", found))
	}
	return art, notes, nil
}

// PeriodRange returns the trial periods a search with cfg tries on data spanning span days:
// the written range (its longest no beyond the span), or by default from 0.2 d or the
// star's Roche-type limit, whichever is longer, to half the span. A cfg that names a star
// must have been through WithStar (else the limit is NaN).
func PeriodRange(cfg Config, span float64) (lo, hi float64) {
	if cfg.Periods != nil {
		return cfg.Periods[0], math.Min(cfg.Periods[1], span)
	}
	rho, _ := cfg.density()
	return math.Max(defaultShortest, bls.RochePeriod(rho)), defaultSpanFraction * span
}

// minPoints is the fewest points the search accepts.
const minPoints = 20
