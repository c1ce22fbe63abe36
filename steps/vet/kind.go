// Package vet is the vet step kind: per signal of a search, a set of tests of the
// hypothesis that the signal is a planet transiting the target, each with its figures, the
// threshold used and its source, a verdict in plain words (the data agree, a caution, the
// data disagree, or "not run" with the reason) and a one-line reason. The tests: odd and
// even transit depths; a secondary eclipse near phase 0.5 and anywhere in phase, with the
// geometric albedo it would need after the hottest day side's thermal light; the shape
// (V-shaped or grazing); the star's density against the transit's; the faintest blended
// source able to make the transit's shape; the depth in each segment and band; the ratios
// between the signals' periods; the radius from a derive step; and the star's own periods,
// as the light curve's detrend step measured them in the trend it removed.
//
// It runs on the light curve (normally the masked detrend the fit used) with the signals
// of a search, and uses a fit, a star and a derive step when given. It fits no transit
// model and draws no random numbers; box depths come from steps/internal/boxmodel and the
// physics from steps/internal/astro. Vetting supports, and does not replace, a
// statistical validation of a planet, and the artifact says so. Main entry points: Kind
// (for the engine) and Vet (the library core).
package vet

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
	"dipline/steps/units"
)

// Kind is the vet step kind.
type Kind struct{}

// version is bumped whenever the numbers, the wording or the encoding change.
const version = 3

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
	// albedo: erring red is the cautious side for the planet.
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
	return "Tests each signal of a search against the hypothesis of a planet on the target (odd/even depths, secondary eclipse and albedo, shape, stellar density, blended sources, depth per segment and band, period ratios, radius, the star's own period) and says for each whether the data agree, give a caution or disagree."
}

// Params is the block's schema.
func (Kind) Params() []steps.Param {
	return []steps.Param{
		{Name: "signals", Type: steps.Ref, Kinds: []string{"search"},
			Doc: "the search whose signals are vetted, named signal1, signal2 … in its order"},
		{Name: "light_curve", Type: steps.Ref, Kinds: []string{"photometry", "detrend"},
			Doc: "the light curve the tests run on: normally the masked detrend the fit used"},
		{Name: "fit", Type: steps.Ref, Kinds: []string{"fit"}, Optional: true,
			Doc: "a fit of the same signals (planets b, c, d in the search's order): its samples give the grazing probability, the transit's density and the blend bound, and its ephemeris places the transits"},
		{Name: "star", Type: steps.Ref, Kinds: []string{"star"}, Optional: true,
			Doc: "the host star: its density for the density test and the orbit, its Teff for the day side's thermal light"},
		{Name: "derive", Type: steps.Ref, Kinds: []string{"derive"}, Optional: true,
			Doc: "derived planet parameters: the radius on the target is compared with max_planet_radius"},
		{Name: "odd_even_sigma", Type: steps.Number, Default: defaultOddEvenSigma,
			Doc: "difference of odd and even transit depths, in σ, at which the data disagree"},
		{Name: "secondary_false_alarm", Type: steps.Number, Default: defaultSecondaryAlarm,
			Doc: "family-wise false-alarm probability of the secondary-eclipse search; the significance each phase must reach is Šidák-corrected for the number of independent phases searched"},
		{Name: "secondary_depth_ratio", Type: steps.Number, Default: defaultSecondaryRatio,
			Doc: "a significant secondary dip at least this fraction of the transit's depth disagrees"},
		{Name: "max_albedo", Type: steps.Number, Default: defaultMaxAlbedo,
			Doc: "a significant secondary dip needing a geometric albedo above this (after the hottest day side's thermal light) disagrees"},
		{Name: "band_wavelength", Type: steps.Quantity, Dim: units.Length, Default: defaultWavelength,
			Doc: "effective wavelength of the light curve's band, for the day side's thermal light; by default \"800 nm\", a broad red band"},
		{Name: "grazing_probability", Type: steps.Number, Default: defaultGrazingProbability,
			Doc: "with a fit: the share of samples on a grazing chord (b + k > 1) that gives a caution"},
		{Name: "v_shape_fraction", Type: steps.Number, Default: defaultVShapeFraction,
			Doc: "without a fit: the ingress fraction T12/T14 of a fitted trapezoid which, reached at 2σ, gives a caution (0 a box, 0.5 a V)"},
		{Name: "density_sigma", Type: steps.Number, Default: defaultDensitySigma,
			Doc: "difference of the star's and the transit's ln density, in σ, that gives a caution"},
		{Name: "depth_false_alarm", Type: steps.Number, Default: defaultDepthAlarm,
			Doc: "p-value of one common depth across segments or bands below which the depths are said to differ"},
		{Name: "ratio_tolerance", Type: steps.Number, Optional: true,
			Doc: "relative tolerance for a period ratio near n, 1/n or p/q; by default the longer duration over the baseline, within which the data cannot tell two periods apart"},
		{Name: "max_planet_radius", Type: steps.Quantity, Dim: units.Radius, Default: deriveMaxPlanetRadius(),
			Doc: "with a derive step: a radius on the target above this disagrees; by default the derive step's own default, \"2 R_jup\""},
		{Name: "star_period_tolerance", Type: steps.Number, Optional: true,
			Doc: "relative tolerance for a signal's period near one of the star's periods P★, P★/2, P★/3, 2P★ or 3P★; by default P★/(4L) + D/T, a quarter of the star periodogram's resolution over the longest gap-free stretch L plus the signal's duration D over the baseline T"},
		{Name: "variability_depth_ratio", Type: steps.Number, Default: defaultVariabilityRatio,
			Doc: "the star's semi-amplitude at a period, over the dip's depth, from which a signal at that period or a fraction of it disagrees rather than gives a caution"},
	}
}

// Config is the decoded configuration of one vet block.
type Config struct {
	Options
}

// Prepare checks the values and builds a Config.
func (Kind) Prepare(v steps.Values) (any, error) {
	o := Options{
		OddEvenSigma: v.Float("odd_even_sigma"), SecondaryAlarm: v.Float("secondary_false_alarm"),
		SecondaryRatio: v.Float("secondary_depth_ratio"), MaxAlbedo: v.Float("max_albedo"),
		Wavelength: v.Float("band_wavelength"), GrazingProbability: v.Float("grazing_probability"),
		VShapeFraction: v.Float("v_shape_fraction"), DensitySigma: v.Float("density_sigma"),
		DepthAlarm: v.Float("depth_false_alarm"), RatioTolerance: v.Float("ratio_tolerance"),
		MaxPlanetRadius: v.Float("max_planet_radius") / rJupInSun,
		StarTolerance:   v.Float("star_period_tolerance"), VariabilityRatio: v.Float("variability_depth_ratio"),
	}
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
		{"ratio_tolerance", !v.Has("ratio_tolerance") || (o.RatioTolerance > 0 && o.RatioTolerance < 0.5), "a relative tolerance between 0 and 0.5", o.RatioTolerance},
		{"max_planet_radius", o.MaxPlanetRadius > 0 && finite(o.MaxPlanetRadius), "a positive radius", o.MaxPlanetRadius},
		{"star_period_tolerance", !v.Has("star_period_tolerance") || (o.StarTolerance > 0 && o.StarTolerance < 0.5), "a relative tolerance between 0 and 0.5", o.StarTolerance},
		{"variability_depth_ratio", o.VariabilityRatio > 0 && finite(o.VariabilityRatio), "a positive ratio", o.VariabilityRatio},
	}
	for _, c := range checks {
		if !c.ok {
			return nil, steps.Attrf(c.attr, "must be %s, not %v", c.expect, c.val)
		}
	}
	return Config{Options: o}, nil
}

// Run vets the referenced search's signals.
func (Kind) Run(ctx context.Context, cfgAny any, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	cfg, ok := cfgAny.(Config)
	if !ok {
		return nil, fmt.Errorf("vet: configuration of type %T", cfgAny)
	}
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
	art, notes, err := Vet(d, cfg.Options)
	if err != nil {
		return nil, err
	}
	for _, n := range notes {
		env.Note("%s", n)
	}
	env.Note("caution: %s", validationCaution)
	return art, nil
}
