// Package vet is the vet step kind: per signal of a search, a set of tests of the
// hypothesis that the signal is a planet transiting the target, each with its figures, the
// threshold used and its source, a verdict in plain words (the data agree, a caution, the
// data disagree, or "not run" with the reason) and a one-line reason. The tests: odd and
// even transit depths; a secondary eclipse near phase 0.5 and anywhere in phase, with the
// geometric albedo it would need after the hottest day side's thermal light; the shape
// (V-shaped or grazing); the star's density against the transit's, and against the one the
// search assumed for its boxes and grid (a setting to fix, not evidence against a planet);
// the faintest blended source able to make the transit's shape; the depth in each segment
// and band; the ratios between the signals' periods; the radius from a derive step; and
// the star's own periods, as the light curve's detrend step measured them in the trend it
// removed.
//
// It runs on the light curve (normally the masked detrend the fit used) with the signals
// of a search, and uses a fit, a star and a derive step when given. It fits no transit
// model and draws no random numbers; box depths come from steps/internal/boxmodel and the
// physics from steps/internal/astro. Vetting supports, and does not replace, a
// statistical validation of a planet, and the artifact says so. Main entry points: New
// (the kind, for the engine) and Vet (the library core).
package vet

import (
	"context"
	"errors"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
)

// Kind is the vet step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the vet kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var _ steps.Typed[Config] = Kind{}

// version is bumped whenever the numbers, the wording or the encoding change. 5: the
// search_density test, the star's density against the one the search assumed.
const version = 5

// Defaults, each with its source.
const (
	// defaultOddEvenSigma: odd and even depths differing by 3σ or more disagree (common
	// practice; we know of no published threshold).
	defaultOddEvenSigma = 3.0
	// defaultSecondaryAlarm is the family-wise false-alarm probability of the secondary
	// search, 0.00135: about the one-sided normal tail beyond 3σ (Φ(−3) = 0.0013499;
	// common practice), so that one trial is tested at 3σ.
	defaultSecondaryAlarm = 0.00135
	// defaultSecondaryRatio: a significant dip at least 0.2 of the transit's depth
	// disagrees. A planet's occultation over its transit is A_g (R*/a)² plus the Planck
	// ratio of its day side to the star; with A_g ≤ 1 and a/R* ≥ 3 it stays below 0.19 at
	// 800 nm even around a 6500 K star (0.186, worked in the tests).
	defaultSecondaryRatio = 0.2
	// defaultMaxAlbedo: a significant dip needing a geometric albedo above 1.5 disagrees.
	// A Lambert sphere has 2/3 and the brightest solar-system bodies reach about 1.4 by
	// backscattering (the icy moon Enceladus; from memory); the margin allows for the
	// albedo's own error.
	defaultMaxAlbedo = 1.5
	// defaultWavelength is 800 nm, near the middle of a broad red survey band (about 600 to
	// 1000 nm; from memory). A redder wavelength gives more thermal light and so a smaller
	// albedo: erring red is the cautious side for the planet. The tag writes it "0.8 um":
	// "800 nm" reads as 800 × 1e-9 m, one bit away from 800e-9 m, and the step key would move.
	defaultWavelength = 800e-9
	// defaultGrazingProbability: a caution when grazing is more likely than not.
	defaultGrazingProbability = 0.5
	// defaultVShapeFraction: a caution when the trapezoid's T12/T14 ≥ 0.35 at 2σ. On
	// noise-free Mandel & Agol transits every chord up to b = 0.85, limb-darkened or not,
	// stays below it and a V gives 0.5 (measured in the tests).
	defaultVShapeFraction = 0.35
	// defaultDensitySigma: a caution when the densities differ by 3σ or more (common
	// practice).
	defaultDensitySigma = 3.0
	// defaultDepthAlarm: a caution when the χ² of one common depth has p < 0.0027, the
	// two-sided normal tail beyond 3σ (common practice).
	defaultDepthAlarm = 0.0027
	// defaultVariabilityRatio: a signal at the star's own period P★ or a fraction P★/k
	// disagrees when the star's semi-amplitude there is at least 10 times the dip's depth.
	// A windowed trend leaves a share of a sinusoid of period P★ that grows with the
	// window h: a local location with tricube weights leaves 17 % at h = P★/2 and 4 % at
	// P★/4, a local quadratic 0.7 % and 0.04 %, a local quadratic at h = P★ 9 % (the
	// weighted least-squares gain at the window's centre, computed in the tests); beside a
	// masked stretch or at a piece's end, where the window is one-sided, more. A dip of a
	// tenth of the star's semi-amplitude is therefore well within what a detrend leaves,
	// and a transit that happens to fall on the star's period is rarer than such a residual.
	defaultVariabilityRatio = 10.0
)

// fitDensityPriorTag starts the fit artifact's Priors entry for a density prior other than
// its own log-uniform one (steps/fit: "prior: star_density log_normal(…)"), which a coupled
// fit or a workflow prior puts there.
const fitDensityPriorTag = "prior: star_density "

// Name is the block type.
func (Kind) Name() string { return "vet" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is false: the tests draw no random numbers.
func (Kind) Random() bool { return false }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Tests each signal of a search against the hypothesis of a planet on the target (odd/even depths, secondary eclipse and albedo, shape, stellar density, the stellar density the search assumed, blended sources, depth per segment and band, period ratios, radius, the star's own period) and says for each whether the data agree, give a caution or disagree."
}

// Config is what a vet block may say. Defaults are the constants above, written as a user
// writes them; max_planet_radius's is the derive kind's own (a test holds them together).
type Config struct {
	Signals            steps.Ref  `step:"signals,required" accepts:"search" doc:"the search whose signals are vetted, named signal1, signal2 … in its order"`
	LightCurve         steps.Ref  `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve the tests run on: normally the masked detrend the fit used"`
	Fit                *steps.Ref `step:"fit" accepts:"fit" doc:"a fit of the same signals (planets b, c, d in the search's order): its samples give the grazing probability, the transit's density and the blend bound, and its ephemeris places the transits"`
	Star               *steps.Ref `step:"star" accepts:"star" doc:"the host star: its density for the density test, the search's assumed density and the orbit, its Teff for the day side's thermal light"`
	Derive             *steps.Ref `step:"derive" accepts:"derive" doc:"derived planet parameters: the radius on the target is compared with max_planet_radius"`
	OddEvenSigma       float64    `step:"odd_even_sigma" default:"3" doc:"difference of odd and even transit depths, in σ, at which the data disagree"`
	SecondaryAlarm     float64    `step:"secondary_false_alarm" default:"0.00135" doc:"family-wise false-alarm probability of the secondary-eclipse search; the significance each phase must reach is Šidák-corrected for the number of independent phases searched"`
	SecondaryRatio     float64    `step:"secondary_depth_ratio" default:"0.2" doc:"a significant secondary dip at least this fraction of the transit's depth disagrees"`
	MaxAlbedo          float64    `step:"max_albedo" default:"1.5" doc:"a significant secondary dip needing a geometric albedo above this (after the hottest day side's thermal light) disagrees"`
	Wavelength         float64    `step:"band_wavelength" dim:"length" default:"0.8 um" doc:"effective wavelength of the light curve's band, for the day side's thermal light; by default \"800 nm\", a broad red band"`
	GrazingProbability float64    `step:"grazing_probability" default:"0.5" doc:"with a fit: the share of samples on a grazing chord (b + k > 1) that gives a caution"`
	VShapeFraction     float64    `step:"v_shape_fraction" default:"0.35" doc:"without a fit: the ingress fraction T12/T14 of a fitted trapezoid which, reached at 2σ, gives a caution (0 a box, 0.5 a V)"`
	DensitySigma       float64    `step:"density_sigma" default:"3" doc:"difference of the star's and the transit's ln density, in σ, that gives a caution"`
	DepthAlarm         float64    `step:"depth_false_alarm" default:"0.0027" doc:"p-value of one common depth across segments or bands below which the depths are said to differ"`
	// RatioTolerance is absent to derive it from the data.
	RatioTolerance *float64 `step:"ratio_tolerance" doc:"relative tolerance for a period ratio near n, 1/n or p/q; by default the longer duration over the baseline, within which the data cannot tell two periods apart"`
	// MaxPlanetRadius is in R☉, the base unit; options gives it in R_J.
	MaxPlanetRadius float64 `step:"max_planet_radius" dim:"radius" default:"2 R_jup" doc:"with a derive step: a radius on the target above this disagrees; by default the derive step's own default, \"2 R_jup\""`
	// StarTolerance is absent to derive it from the data.
	StarTolerance    *float64 `step:"star_period_tolerance" doc:"relative tolerance for a signal's period near one of the star's periods P★, P★/2, P★/3, 2P★ or 3P★; by default P★/(4L) + D/T, a quarter of the star periodogram's resolution over the longest gap-free stretch L plus the signal's duration D over the baseline T"`
	VariabilityRatio float64  `step:"variability_depth_ratio" default:"10" doc:"the star's semi-amplitude at a period, over the dip's depth, from which a signal at that period or a fraction of it disagrees rather than gives a caution"`
}

// options are the tests' options: the thresholds as decoded, the planetary radius in R_J,
// and an absent tolerance as 0, derived from the data.
func (c *Config) options() Options {
	o := Options{
		OddEvenSigma: c.OddEvenSigma, SecondaryAlarm: c.SecondaryAlarm, SecondaryRatio: c.SecondaryRatio,
		MaxAlbedo: c.MaxAlbedo, Wavelength: c.Wavelength, GrazingProbability: c.GrazingProbability,
		VShapeFraction: c.VShapeFraction, DensitySigma: c.DensitySigma, DepthAlarm: c.DepthAlarm,
		MaxPlanetRadius: c.MaxPlanetRadius / rJupInSun, VariabilityRatio: c.VariabilityRatio,
	}
	if c.RatioTolerance != nil {
		o.RatioTolerance = *c.RatioTolerance
	}
	if c.StarTolerance != nil {
		o.StarTolerance = *c.StarTolerance
	}
	return o
}

// Check holds each threshold to the values it can take.
func (Kind) Check(c *Config) error {
	o := c.options()
	finite := func(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
	checks := []struct {
		attr   string
		ok     bool
		expect string
		val    float64
	}{
		{"odd_even_sigma", o.OddEvenSigma > 0 && finite(o.OddEvenSigma), "a positive number of σ", o.OddEvenSigma},
		{"secondary_false_alarm", o.SecondaryAlarm > 0 && o.SecondaryAlarm < 1, "a probability between 0 and 1", o.SecondaryAlarm},
		{"secondary_depth_ratio", o.SecondaryRatio > 0 && finite(o.SecondaryRatio), "a positive fraction of the transit's depth", o.SecondaryRatio},
		{"max_albedo", o.MaxAlbedo > 0 && finite(o.MaxAlbedo), "a positive geometric albedo", o.MaxAlbedo},
		{"band_wavelength", o.Wavelength >= 100e-9 && o.Wavelength <= 1e-3, "a wavelength between 100 nm and 1 mm", o.Wavelength},
		{"grazing_probability", o.GrazingProbability > 0 && o.GrazingProbability <= 1, "a probability above 0 and at most 1", o.GrazingProbability},
		{"v_shape_fraction", o.VShapeFraction > 0 && o.VShapeFraction <= 0.5, "a fraction above 0 and at most 0.5 (a V)", o.VShapeFraction},
		{"density_sigma", o.DensitySigma > 0 && finite(o.DensitySigma), "a positive number of σ", o.DensitySigma},
		{"depth_false_alarm", o.DepthAlarm > 0 && o.DepthAlarm < 1, "a probability between 0 and 1", o.DepthAlarm},
		{"ratio_tolerance", c.RatioTolerance == nil || (o.RatioTolerance > 0 && o.RatioTolerance < 0.5), "a relative tolerance between 0 and 0.5", o.RatioTolerance},
		{"max_planet_radius", o.MaxPlanetRadius > 0 && finite(o.MaxPlanetRadius), "a positive radius", o.MaxPlanetRadius},
		{"star_period_tolerance", c.StarTolerance == nil || (o.StarTolerance > 0 && o.StarTolerance < 0.5), "a relative tolerance between 0 and 0.5", o.StarTolerance},
		{"variability_depth_ratio", o.VariabilityRatio > 0 && finite(o.VariabilityRatio), "a positive ratio", o.VariabilityRatio},
	}
	for _, k := range checks {
		if !k.ok {
			return steps.Attrf(k.attr, "must be %s, not %v", k.expect, k.val)
		}
	}
	return nil
}

// Run vets the referenced search's signals.
func (Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	ss, ok := in.Ref("signals").(signals.Source)
	if !ok {
		return nil, errors.New("vet: signals does not refer to a step with signals")
	}
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return nil, errors.New("vet: light_curve does not refer to a step with a light curve")
	}
	d := Data{Light: src.LightCurve(), Signals: ss.Signals()}
	if sd, ok := ss.(Searched); ok {
		d.Search = sd
	}
	if vs, ok := src.(lightcurve.VariabilitySource); ok {
		vb := vs.Variability()
		d.Variability = &vb
	}
	if a := in.Ref("fit"); a != nil {
		post, ok := a.(Posterior)
		if !ok {
			return nil, errors.New("vet: fit does not refer to a step with posterior samples")
		}
		d.Fit = post
		if fa, ok := a.(*fit.Artifact); ok {
			for _, p := range fa.Priors {
				if strings.HasPrefix(p, fitDensityPriorTag) {
					d.FitDensityPrior = strings.TrimPrefix(p, "prior: ")
				}
			}
			d.Timing = fitTiming(fa)
		}
	}
	if a := in.Ref("star"); a != nil {
		s, ok := a.(stellar.StarSource)
		if !ok || s.StarDraws() == nil {
			return nil, errors.New("vet: star does not refer to a step with star draws")
		}
		d.Star = s.StarDraws()
	}
	if a := in.Ref("derive"); a != nil {
		r, ok := a.(Radii)
		if !ok {
			return nil, errors.New("vet: derive does not refer to a step with derived quantities")
		}
		d.Derive = r
	}
	art, notes, err := Vet(d, cfg.options())
	if err != nil {
		return nil, err
	}
	for _, n := range notes {
		env.Note("%s", n)
	}
	env.Note("caution: %s", validationCaution)
	return art, nil
}

// fitTiming summarises, per planet of the fit, its transit times about their linear
// ephemeris; a planet without an ephemeris gets a zero Timing (no degrees of freedom).
func fitTiming(fa *fit.Artifact) []Timing {
	out := make([]Timing, len(fa.Times))
	for j, pt := range fa.Times {
		if pt.Err != "" {
			continue
		}
		e := pt.Ephemeris
		tm := Timing{Transits: len(e.Rows), Chi2: e.Chi2, Dof: e.Dof, PValue: e.PValue}
		var excess float64
		for _, r := range e.Rows {
			excess += r.OC*r.OC - r.SigmaOC*r.SigmaOC
		}
		if len(e.Rows) > 0 && excess > 0 {
			tm.Scatter = math.Sqrt(excess/float64(len(e.Rows))) / (24 * 60) // O−C is in minutes
		}
		out[j] = tm
	}
	return out
}
