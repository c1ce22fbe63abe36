// Package detrend is the detrend step kind: it divides a light curve by a robust estimate
// of its slow trend — a robust local quadratic in a sliding time window whose width is
// chosen from the data (the default), a time-windowed Tukey biweight, a robust cubic spline,
// or a running median — so that a transit search sees a flat light curve. It splits the
// series at long gaps, removes flares (upward outliers only, never dips), and, given the
// signals of a search step, leaves their transits out of the trend so that they come
// through undistorted. A star turning too fast for any window that keeps a transit to follow
// has its rotation divided out first, as a harmonic series in its rotation phase with slowly
// changing coefficients (spin.go decides; the rotation sub-package fits). The numerics live
// in the robust and rotation sub-packages and know nothing of workflow files; this package
// turns a block's values into their configurations, runs them and wraps the outcome as an
// Artifact.
//
// Main entry point: Kind (register it with the engine). The artifact, *Result, carries a
// lightcurve.LightCurve, so a search or another detrend can read it.
package detrend

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/parallel"
	"dipline/steps/internal/periodogram"
	"dipline/steps/internal/signals"
)

// Kind is the detrend step kind, written against its Config; New makes it the engine's.
type Kind struct{}

// New returns the detrend kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config] = Kind{}
	_ lightcurve.Source   = (*Result)(nil)
	_ steps.Artifact      = (*Result)(nil)
)

// version is bumped whenever the numbers or the encoding change.
const version = 10 // 6: a masked pass's window: bias judged against its own error, a floor of 5 masked stretches, bins a whole number of cadences; a light curve too sparse for its window refused. 7: a masked pass's caution kept in the result. 8: the local polynomial fitted at anchors 1/64 of a window apart where points are denser, interpolated between. 9: a masked pass narrower than the floor, down to 2 masked stretches, when the floor's window leaves a bias shown above the noise. 10: a star turning too fast for a window that keeps a transit has its rotation (a harmonic series with slowly changing coefficients) divided out before the window; rotation and rotation_period

// The estimator names written in a workflow.
const (
	estLocal    = "local-polynomial"
	estBiweight = "biweight"
	estSpline   = "robust-spline"
	estMedian   = "running-median"
)

// Defaults, each with its reason.
const (
	// defaultSpan is the full width of the window of the location estimators (biweight,
	// running median), and of the local polynomial when the light curve is too short or too
	// sparse for ChooseSpan. A windowed location estimate keeps a transit shorter than about
	// a third of its span (Hippke et al. 2019, AJ 158, 143, from memory): 0.5 d keeps
	// transits up to 4 h, those of most short-period planets.
	defaultSpan = 0.5
	// spanReference is the transit duration the local polynomial's window is chosen for when
	// the workflow does not give a span: a small planet on an orbit of a few days around the
	// small stars dipline is for crosses in 1–3 hours (Winn 2010's T14 for 0.2–0.6 R☉ and
	// periods of 1–10 d; common practice), and the choice changes little across that range
	// because the trend's bias grows as the fourth power of the window.
	spanReference = 2.0 / 24
	// defaultKnots gives the spline the same time scale as the default span.
	defaultKnots = 0.5
	// defaultC is the biweight tuning constant in unscaled MADs found best for transit
	// work (Hippke et al. 2019, from memory; the classical value is 6).
	defaultC = 5.0
	// defaultFlareSigma removes points more than 3 robust sigmas above the trend: about
	// 0.13 % of pure Gaussian noise (one-sided normal tail, common practice).
	defaultFlareSigma = 3.0
	// defaultMaskFactor masks 1.5 transit durations around each mid-transit, so that a
	// duration or ephemeris slightly off still leaves ingress and egress out of the trend
	// (common practice).
	defaultMaskFactor = 1.5
	// defaultDegree is the local polynomial's degree: a quadratic cancels the curvature term
	// of the bias that a location or a line leaves (½ f''·h²/12 for a window of width h;
	// measured in robust/local_test.go).
	defaultDegree = 2
	// localFits is the number of fits of the local polynomial: one plain and three
	// reweighted by the previous residuals, the default of R's loess for its robust
	// ("symmetric") family (loess.control(iterations = 4), from R's documentation).
	localFits = 4
	// defaultMinPoints is the fewest usable points a window needs for a trend: fewer make
	// the median and MAD meaningless.
	defaultMinPoints = 5
	// splineClip is the two-sided clip of the spline's own fit, 3 robust sigmas
	// (Vanderburg & Johnson 2014, PASP 126, 948, from memory).
	splineClip = 3.0
	// maskedWindows is the floor of a chosen window in a masked pass, in masked stretches
	// (the longest of them): the trend under a masked stretch is then read from data on both
	// sides rather than extrapolated into the hole. For the local quadratic with tricube
	// weights the variance of the trend at the middle of a masked stretch, against that at
	// a point with data all round, is 2.1 at 5 stretches per window, 2.6 at 4, 13 at 2 and
	// about 740 at 1.2 (the window the chooser once took on white noise): the ratio of the
	// plain fit's Σℓ² with and without the hole, worked from its normal equations
	// (TestMaskedFloorKeepsTheTrendFromBothSides).
	maskedWindows = 5.0
	// leastWindows is how far below maskedWindows a masked pass's window may go when no
	// window that wide follows the star (a fast rotator: the floor's window leaves a bias
	// shown above the noise itself, not just above a tenth of it): at 2 stretches per window
	// the trend under a masked stretch has 13 times the variance it has elsewhere, far less
	// harm than a trend that cannot follow the star (a 0.35 d rotator's 0.5 d window left a
	// bias of 7500 ppm, 67 times the noise, and the searches after it found spurious dips).
	// A bias between a tenth of the noise and the noise keeps the floor, with its caution:
	// the demo's 0.5 d window leaves 40 ± 15 ppm against 154 ppm of noise, and 0.35 d
	// took part of planet c's depth with the trend.
	leastWindows = 2.0
	// honestNoise is the least share of the white noise averaged over a transit duration
	// that a masked pass may leave in the detrended light curve before its notes warn: a
	// search divides the depth by the out-of-transit scatter on that time scale, which a
	// short window smooths away while the masked transits keep their full noise, so the
	// signal to noise is overstated by 1/share; 0.9 allows 11 %, about the error of an
	// SNR of 10 (common practice: an SNR carries an error of about 1).
	honestNoise = 0.9
)

// Name is the block type.
func (Kind) Name() string { return "detrend" }

// Version is the kind's version.
func (Kind) Version() int { return version }

// Random is false: detrending draws no random numbers.
func (Kind) Random() bool { return false }

// Doc is one sentence for the kinds listing.
func (Kind) Doc() string {
	return "Divides a light curve by a robust trend (a local quadratic in a window chosen from the data by default; Tukey biweight, robust spline or running median), after dividing out a fast rotator's spot modulation as a periodic model when no window that keeps a transit can follow it, removing flares upward only, sparing masked transits and measuring the star's own periods."
}

// Config is what a detrend block may say. Defaults are the constants above, written as a
// user writes them.
type Config struct {
	LightCurve steps.Ref `step:"light_curve,required" accepts:"photometry,detrend" doc:"the light curve to detrend: a photometry step, or another detrend step"`
	Estimator  string    `step:"estimator" default:"local-polynomial" choices:"local-polynomial|biweight|robust-spline|running-median" doc:"how the trend is estimated: a robust locally weighted polynomial in a sliding time window (Cleveland 1979), Tukey biweight location in a sliding time window, a cubic spline refitted with outliers clipped, or the median in a sliding time window"`
	Degree     int       `step:"degree" default:"2" doc:"degree of the local polynomial (local-polynomial): 0, 1 or 2; a quadratic follows a curved trend without bias, a location (0) or a line (1) leaves ½ f''·h²/12 beside every turn"`
	// Span is the window's full width in days; absent, local-polynomial chooses it from the
	// data and the location estimators take defaultSpan (see span).
	Span        *float64 `step:"span" dim:"time" doc:"full width in time of the sliding window. For local-polynomial, by default chosen from the light curve among 0.25–4 d: without a mask the window that keeps the most of an unmasked 2-hour transit's signal for the bias the star's variability leaves, with a mask the widest window whose bias is not shown to exceed a tenth of the noise, and never under 5 times the longest masked stretch (the run says what it weighed); for biweight and running-median 0.5 d, which keeps transits up to about a third of it"`
	KnotSpacing float64  `step:"knot_spacing" dim:"time" default:"0.5 d" doc:"spacing in time of the spline's knots (robust-spline); knots are dropped where there are too few points"`
	C           float64  `step:"biweight_c" default:"5" doc:"biweight tuning constant, in median absolute deviations: points further than this from the location get no weight"`
	FlareSigma  float64  `step:"flare_sigma" default:"3" doc:"points more than this many robust standard deviations above the trend are flares and removed; points below are never removed"`
	// SplitAtGap is in days; absent, it is derived from the cadence (robust.DefaultGap).
	SplitAtGap *float64   `step:"split_at_gap" dim:"time" doc:"split the light curve wherever no point falls for longer than this and detrend each piece alone; by default the larger of 0.5 d and 20 median cadences"`
	MinPoints  int        `step:"min_window_points" default:"5" doc:"fewest usable points a window (or a spline interval) needs; points with fewer are dropped"`
	Mask       *steps.Ref `step:"mask" accepts:"search" doc:"a search step whose signals' transits are left out of the trend (and kept in the light curve)"`
	MaskFactor float64    `step:"mask_factor" default:"1.5" doc:"the masked stretch around each mid-transit, in transit durations"`
	// MaskCount is absent to mask every signal.
	MaskCount *int `step:"mask_count" doc:"mask only the first this many signals of the search's ranking; all of them when absent"`
	// Rotation says whether the star's rotation is divided out first (spin.go).
	Rotation string `step:"rotation" default:"auto" choices:"auto|on|off" doc:"whether to divide out the star's rotation before the window, as a series of harmonics of its rotation period whose coefficients change slowly in time (knots 16 rotations apart, or 8 or 4 when they fit significantly better, and at least 1 d apart), fitted robustly with dips below it left out: auto does so when the light curve shows a period too fast for a window that keeps half of a 3-hour transit to follow (it leaves more than the white noise over such a transit), and the model removes at least 90 % of the star's variance above the white noise with a shape like spots' rather than a narrow dip; on always does (a warning says when the shape is a narrow dip), off never; the run says what it found and weighed"`
	// RotationPeriod is absent to find the period in the light curve.
	RotationPeriod *float64 `step:"rotation_period" dim:"time" doc:"the star's rotation period for the rotation model; by default the strongest period of the light curve (or twice it, when that is there too). With rotation = auto the decision is still made from the light curve's own periods"`
}

// rotation is the rotation setting, "auto" when empty (a Config made in code).
func (c *Config) rotation() string {
	if c.Rotation == "" {
		return rotationAuto
	}
	return c.Rotation
}

// span is the window in days, or 0 when local-polynomial is to choose it from the data.
func (c *Config) span() float64 {
	switch {
	case c.Span != nil:
		return *c.Span
	case c.Estimator == estLocal:
		return 0
	}
	return defaultSpan
}

// splitAtGap is the gap in days, or 0 to derive it from the cadence.
func (c *Config) splitAtGap() float64 {
	if c.SplitAtGap == nil {
		return 0
	}
	return *c.SplitAtGap
}

// maskCount is how many signals to mask, 0 for all.
func (c *Config) maskCount() int {
	if c.MaskCount == nil {
		return 0
	}
	return *c.MaskCount
}

// Check holds the values to what the filters can take.
func (Kind) Check(c *Config) error {
	if c.Degree < 0 || c.Degree > 2 {
		return steps.Attrf("degree", "must be 0, 1 or 2, not %d", c.Degree)
	}
	positive := func(name string, x float64, what string) error {
		if !(x > 0) || math.IsInf(x, 0) {
			return steps.Attrf(name, "must be a positive %s, not %v", what, x)
		}
		return nil
	}
	for _, q := range []struct {
		name string
		x    *float64
		what string
	}{{"span", c.Span, "time"}, {"knot_spacing", &c.KnotSpacing, "time"}, {"biweight_c", &c.C, "number"},
		{"mask_factor", &c.MaskFactor, "number"}, {"split_at_gap", c.SplitAtGap, "time"}} {
		if q.x == nil {
			continue
		}
		if err := positive(q.name, *q.x, q.what); err != nil {
			return err
		}
	}
	if !(c.FlareSigma >= 1) || math.IsInf(c.FlareSigma, 0) {
		return steps.Attrf("flare_sigma", "must be at least 1 (a lower cut would remove ordinary noise), not %v", c.FlareSigma)
	}
	if c.MinPoints < 3 || c.MinPoints > 1_000_000 {
		return steps.Attrf("min_window_points", "must be between 3 and 1000000, not %d", c.MinPoints)
	}
	if p := c.RotationPeriod; p != nil {
		if err := positive("rotation_period", *p, "time"); err != nil {
			return err
		}
		if c.rotation() == rotationOff {
			return steps.Attrf("rotation_period", "is given while rotation = \"off\"; write rotation = \"on\" or \"auto\" to use it, or leave it out")
		}
	}
	if n := c.MaskCount; n != nil && (*n < 1 || *n > 1_000_000) {
		return steps.Attrf("mask_count", "must be at least 1, not %d", *n)
	}
	return nil
}

// Run detrends the referenced light curve.
func (k Kind) Run(ctx context.Context, cfg *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok || src.LightCurve() == nil {
		return nil, errors.New("detrend: light_curve does not refer to a step with a light curve")
	}
	lc := src.LightCurve()
	if err := checkCurve(lc); err != nil {
		return nil, err
	}
	var sigs []signals.Signal
	if m := in.Ref("mask"); m != nil {
		ss, ok := m.(signals.Source)
		if !ok {
			return nil, errors.New("detrend: mask does not refer to a step with signals")
		}
		sigs = ss.Signals()
		if n := cfg.maskCount(); n > 0 && len(sigs) > n {
			sigs = sigs[:n]
		}
		for i, s := range sigs {
			if !(s.Period > 0) || !(s.Duration > 0) || math.IsInf(s.Period, 0) || math.IsInf(s.Duration, 0) || math.IsNaN(s.Epoch) || math.IsInf(s.Epoch, 0) {
				return nil, steps.BadInputf("mask: signal %d has period %v, epoch %v and duration %v; a mask needs positive, finite values", i+1, s.Period, s.Epoch, s.Duration)
			}
		}
	}
	res, notes := Detrend(*cfg, lc, sigs, env.Pool)
	if err := tooSparse(res, cfg.MinPoints); err != nil {
		return nil, err
	}
	for _, n := range notes {
		env.Note("%s", n)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return res, nil
}

// tooSparse refuses a result that lost most of its light curve for want of neighbours:
// when more than half of the points with a finite flux got no trend, the window is too
// short for the light curve's spacing, and a search on what is left would fail or mislead.
// The message names the counts, the window and the spacing a window would need.
func tooSparse(r *Result, minPoints int) error {
	none := r.count(robust.NoTrend)
	usable := 0
	for _, t := range r.Trends {
		usable += len(t.Marks)
	}
	usable -= r.count(robust.NonFinite)
	if none == 0 || 2*none <= usable {
		return nil
	}
	return steps.BadInputf("light_curve: too sparse for its window: %d of %d points have fewer than %d usable points (min_window_points) within %s, and would be dropped; write a wider span (or knot_spacing), or detrend a denser light curve",
		none, usable, minPoints, estimatorWords(r))
}

// checkCurve rejects a light curve the filters cannot take: columns of different lengths,
// non-finite or unsorted times. Messages name the segment and the point (from 1).
func checkCurve(lc *lightcurve.LightCurve) error {
	for _, s := range lc.Segments {
		if len(s.Flux) != len(s.Time) || len(s.Err) != len(s.Time) {
			return steps.BadInputf("light_curve: segment %s: %d times, %d fluxes and %d errors", s.ID, len(s.Time), len(s.Flux), len(s.Err))
		}
		for j, t := range s.Time {
			if math.IsNaN(t) || math.IsInf(t, 0) {
				return steps.BadInputf("light_curve: segment %s, point %d: time is %v", s.ID, j+1, t)
			}
			if j > 0 && t < s.Time[j-1] {
				return steps.BadInputf("light_curve: segment %s, point %d: time %v is before the previous %v; times must be sorted", s.ID, j+1, t, s.Time[j-1])
			}
		}
	}
	return nil
}

// Detrend is the library entry point behind Run: it detrends lc with cfg, masking the
// transits of sigs, on the pool's workers (nil runs serially), and returns the artifact
// with the facts worth telling the user (the derived gap threshold, points dropped).
func Detrend(cfg Config, lc *lightcurve.LightCurve, sigs []signals.Signal, pool *steps.Pool) (*Result, []string) {
	res, out, notes := trend(cfg, lc, sigs, pool)
	smooth := res.Scale
	if r := res.Rotation; r != nil {
		// The rotation model resolves 2K + 1 terms per knot interval.
		smooth = min(smooth, r.KnotSpacing/float64(2*r.Harmonics+1))
	}
	res.Star = starPeriods(lc, out, res.SplitAtGap, smooth, &notes)
	if n := res.count(robust.NoTrend); n > 0 {
		notes = append(notes, fmt.Sprintf("%d points dropped: fewer than %d usable points within their window", n, cfg.MinPoints))
	}
	return res, notes
}

// Flatten is Detrend's detrended light curve alone, without the star's periods it
// measures in the trend for the report and the vet step (on four years of data they cost
// several times the filter): for a step that detrends many copies of one light curve, such
// as an injection–recovery. The curve is the same, bit for bit.
func Flatten(cfg Config, lc *lightcurve.LightCurve, sigs []signals.Signal, pool *steps.Pool) *lightcurve.LightCurve {
	res, _, _ := trend(cfg, lc, sigs, pool)
	return res.Curve
}

// WithChosenSpan returns cfg with the window Detrend would choose for lc written in, when
// cfg is the local polynomial's and leaves its span to the data (unmasked); otherwise cfg
// as it is. A step detrending many copies of one light curve makes the choice, which costs
// more than the filter, once.
//
// It also makes the rotation decision once (spinOf), writing rotation = "off", or "on" with
// the rotation period found, and chooses the window on the light curve with the rotation
// divided out when it is.
func WithChosenSpan(cfg Config, lc *lightcurve.LightCurve, pool *steps.Pool) Config {
	if cfg.span() != 0 && cfg.rotation() == rotationOff {
		return cfg
	}
	series, gap, _ := seriesOf(cfg, lc, nil)
	var notes []string
	if cfg.rotation() != rotationOff {
		if sp := spinOf(cfg, series, gap, 0, parOf(pool), &notes); sp == nil {
			cfg.Rotation, cfg.RotationPeriod = rotationOff, nil
		} else {
			p := sp.info.Period
			cfg.Rotation, cfg.RotationPeriod = rotationOn, &p
			series = sp.series
		}
	}
	if cfg.span() != 0 {
		return cfg
	}
	span, _, _ := chooseSpan(series, cfg.Degree, 0, 0, gap, parOf(pool), &notes)
	cfg.Span = &span
	return cfg
}

// parOf is the pool's Parallel, or nil (serial) for a nil pool.
func parOf(pool *steps.Pool) parallel.Func {
	if pool == nil {
		return nil
	}
	return pool.Parallel
}

// seriesOf turns lc's segments into the filter's series, with the transits of sigs masked,
// and returns the gap that splits them: the written one, or derived from the median
// cadence, which it then returns too (0 when the gap is written).
func seriesOf(cfg Config, lc *lightcurve.LightCurve, sigs []signals.Signal) (series []robust.Series, gap, cadence float64) {
	series = make([]robust.Series, len(lc.Segments))
	for i, s := range lc.Segments {
		series[i] = robust.Series{Time: s.Time, Flux: s.Flux, Err: s.Err}
		if len(sigs) > 0 {
			m := make([]bool, len(s.Time))
			for j, t := range s.Time {
				for _, sg := range sigs {
					if sg.InTransit(t, cfg.MaskFactor) {
						m[j] = true
						break
					}
				}
			}
			series[i].Mask = m
		}
	}
	gap = cfg.splitAtGap()
	if gap == 0 {
		cadence = robust.MedianCadence(series)
		gap = robust.DefaultGap(cadence)
	}
	return series, gap, cadence
}

// trend filters lc as cfg says and returns the result without the star's periods, the
// filter's output and the notes.
func trend(cfg Config, lc *lightcurve.LightCurve, sigs []signals.Signal, pool *steps.Pool) (*Result, []robust.Result, []string) {
	var notes []string
	series, gap, cadence := seriesOf(cfg, lc, sigs)
	span := cfg.span()
	if cfg.splitAtGap() == 0 { // derived from the cadence: say so
		notes = append(notes, fmt.Sprintf("split_at_gap: %.4g d (the larger of 0.5 d and 20 × the median cadence, %.4g min)",
			gap, cadence*1440))
	}
	rc := robust.Config{
		Span: span, KnotSpacing: cfg.KnotSpacing, C: cfg.C, FlareSigma: cfg.FlareSigma,
		SplineSigma: splineClip, MinPoints: cfg.MinPoints, GapOver: gap,
	}
	scale := span
	switch cfg.Estimator {
	case estSpline:
		rc.Estimator = robust.Spline
		scale = cfg.KnotSpacing
	case estMedian:
		rc.Estimator = robust.RunningMedian
	case estLocal:
		rc.Estimator = robust.LocalPoly
		rc.Degree, rc.Iterations = cfg.Degree, localFits
	default:
		rc.Estimator = robust.Biweight
	}
	var stretch, dur float64 // the longest masked stretch and masked transit duration
	for _, s := range sigs {
		stretch, dur = max(stretch, s.Duration*cfg.MaskFactor), max(dur, s.Duration)
	}
	if len(sigs) > 0 && cfg.Estimator != estSpline && span > 0 && stretch >= span {
		notes = append(notes, fmt.Sprintf("mask: the longest masked stretch (%.4g h) is at least the span (%.4g h); the trend across it is interpolated from its edges",
			stretch*24, span*24))
	}
	par := parOf(pool)
	sp := spinOf(cfg, series, gap, dur, par, &notes)
	if sp != nil {
		series = sp.series
	}
	var doubt spanDoubt
	if rc.Span == 0 {
		rc.Span, scale, doubt = chooseSpan(series, cfg.Degree, stretch, dur, gap, par, &notes)
	}
	out := robust.Detrend(rc, series, par)
	if sp != nil {
		sp.restore(out)
	}
	res := newResult(lc, out, cfg.Estimator, scale, gap)
	if cfg.Estimator == estLocal {
		res.Degree = cfg.Degree
		if stretch > 0 {
			res.Caution = maskedCaution(rc.Span, dur, cfg.Degree, doubt)
		}
	}
	if c := blindCaution(rc.Span, doubt.kept, cfg.Degree); c != "" {
		if res.Caution != "" {
			res.Caution += " "
		}
		res.Caution += c
	}
	if sp != nil {
		sp.tell(res, &notes)
	}
	return res, out, notes
}

// chooseSpan picks the local polynomial's window from the data (robust.ChooseSpan), for a
// masked pass (follow the star; stretch the longest masked stretch and dur the longest
// masked transit, days) or an unmasked one (stretch 0: keep the transits), and says why in
// a note; when the data cannot tell it keeps defaultSpan, or in a masked pass the floor if
// wider, and says so. A masked pass's window is at least maskedWindows stretches; when the
// window taken may bias the depths and signal to noise measured after it, a note says so.
func chooseSpan(series []robust.Series, degree int, stretch, dur, gap float64, par parallel.Func, notes *[]string) (span, scale float64, doubt spanDoubt) {
	goal, why := robust.KeepTransits, "keeps the most of an unmasked 2-hour transit's signal to noise for the bias the star's variability leaves"
	floor := maskedWindows * stretch
	if stretch > 0 {
		goal, why = robust.FollowStar, fmt.Sprintf("is the widest window, of those at least %g times the longest masked stretch (%.3g h), whose bias is not shown to exceed a tenth of the noise, the transits being masked",
			maskedWindows, stretch*24)
	}
	ch, ok := robust.ChooseSpan(series, degree, goal, spanReference, floor, gap, par)
	if !ok {
		span = max(defaultSpan, floor)
		why := "too few evenly spaced points to choose one from the data"
		if span > defaultSpan {
			why += fmt.Sprintf("; %g times the longest masked stretch, %.3g h", maskedWindows, stretch*24)
		}
		*notes = append(*notes, fmt.Sprintf("span: %.3g d (%s)", span, why))
		return span, span, doubt
	}
	var tried []string
	for _, tr := range ch.Trials {
		t := fmt.Sprintf("%.3g d: bias %.0f ± %.0f ppm, keeps %.0f %%", tr.Span, tr.Bias*1e6, tr.BiasErr*1e6, tr.Kept*100)
		if tr.Reference {
			t = fmt.Sprintf("%.3g d: the reference the others' bias is measured against, keeps %.0f %%", tr.Span, tr.Kept*100)
		}
		if !tr.Allowed {
			t += ", under the floor"
		}
		tried = append(tried, t)
	}
	if narrow, ok := narrowerQuiet(ch, stretch); ok && !ch.Negligible {
		doubt.holeVariance = robust.HoleVariance(narrow, stretch, degree)
		*notes = append(*notes, fmt.Sprintf("span: %.3g d, chosen from the light curve: narrower than %g times the longest masked stretch (%.3g h), because no window that wide follows the star; it is the widest, of those at least %g stretches, whose bias is not shown to exceed a tenth of the noise, and the trend under a masked stretch has %.2g times the variance it has elsewhere (noise per 2 h %.0f ppm; tried %s)",
			narrow, maskedWindows, stretch*24, leastWindows, doubt.holeVariance, ch.Noise*1e6, strings.Join(tried, "; ")))
		return narrow, narrow, doubt
	}
	switch {
	case ch.Floored:
		*notes = append(*notes, fmt.Sprintf("span: %.3g d, %g times the longest masked stretch (%.3g h), wider than every window tried, so its bias was not measured (noise per 2 h %.0f ppm; tried %s)",
			ch.Span, maskedWindows, stretch*24, ch.Noise*1e6, strings.Join(tried, "; ")))
	case !ch.Negligible:
		*notes = append(*notes, fmt.Sprintf("span: %.3g d, chosen from the light curve: the narrowest window allowed, at least %g times the longest masked stretch (%.3g h); no window's bias was shown to stay under a tenth of the noise (noise per 2 h %.0f ppm; tried %s)",
			ch.Span, maskedWindows, stretch*24, ch.Noise*1e6, strings.Join(tried, "; ")))
	default:
		*notes = append(*notes, fmt.Sprintf("span: %.3g d, chosen from the light curve: it %s (noise per 2 h %.0f ppm; tried %s)",
			ch.Span, why, ch.Noise*1e6, strings.Join(tried, "; ")))
	}
	doubt.biased = stretch > 0 && !ch.Negligible
	for _, tr := range ch.Trials {
		if tr.Span == ch.Span && tr.Kept < blindShare {
			doubt.kept = tr.Kept
		}
	}
	return ch.Span, ch.Span, doubt
}

// spanDoubt is what a masked pass's window may do to the depths measured after it: a bias
// shown above a tenth of the noise (biased), or a window narrower than maskedWindows
// stretches, taken because no wider one follows the star, under which the trend in a masked
// stretch has holeVariance times the variance it has elsewhere (0 when not narrowed).
type spanDoubt struct {
	biased       bool
	holeVariance float64
	// kept is the share of an unmasked 2-hour transit's depth the chosen window keeps,
	// when under blindShare (0 otherwise): see blindCaution.
	kept float64
}

// narrowerQuiet is, when the window a masked pass's floor allowed leaves a bias shown to
// exceed the noise itself, the widest window of its trials from leastWindows masked
// stretches up to under the floor whose bias is not shown to exceed the negligible level.
func narrowerQuiet(ch robust.SpanChoice, stretch float64) (float64, bool) {
	floorBiased := false
	for _, tr := range ch.Trials {
		if tr.Span == ch.Span {
			floorBiased = tr.ShownAbove(ch.Noise)
		}
	}
	if !floorBiased {
		return 0, false
	}
	best := 0.0
	for _, tr := range ch.Trials {
		if tr.Quiet && !tr.Allowed && tr.Span >= leastWindows*stretch && tr.Span > best {
			best = tr.Span
		}
	}
	return best, best > 0
}

// blindShare is the share of an unmasked transit of the reference duration below which the
// window chosen is said to remove such transits: under a quarter of the depth, a search
// needs a transit four times as deep, sixteen times the data, to find it. (The demo's masked
// pass keeps 49 %: its sensitivity is halved there, which its notes give, not lost.)
const blindShare = 0.25

// blindCaution says in plain words, or returns "", when the window chosen from the light
// curve keeps less than blindShare of an unmasked transit of the reference duration (kept,
// 0 when it keeps more): the transits longer than the longest it keeps half of are mostly
// removed with the star, and a search on the light curve all but cannot find them.
func blindCaution(span, kept float64, degree int) string {
	if !(kept > 0) {
		return ""
	}
	long := robust.LongestKept(span, keptShare, degree)
	return fmt.Sprintf("The %.3g d window chosen keeps %.0f %% of a %.3g-hour transit's depth, and transits longer than about %.2g hours keep less than half of theirs: they are mostly removed with the star, so a search on this light curve is nearly blind to any it has not masked; the star varies too fast for a wider window.",
		span, 100*kept, spanReference*24, long*24)
}

// maskedCaution says in plain words, or returns "", when a masked pass's window, chosen or
// written, may bias what a search measures after it: a window short against the transit
// duration dur smooths away the out-of-transit noise on the transit's time scale, which the
// masked transits keep, so a search's signal to noise comes out too high
// (robust.NoiseKept); a trend with a bias shown above a tenth of the noise (biased) shifts
// the depths.
func maskedCaution(span, dur float64, degree int, doubt spanDoubt) string {
	kept := robust.NoiseKept(span, dur, degree)
	if kept >= honestNoise && !doubt.biased && doubt.holeVariance == 0 {
		return ""
	}
	var why []string
	if kept < honestNoise {
		why = append(why, fmt.Sprintf("the %.3g d window keeps only %.0f %% of the noise averaged over the %.3g-hour transits outside them, while the masked transits keep all of theirs, so a search's signal to noise may come out up to %.0f %% too high",
			span, 100*kept, dur*24, 100*(1/kept-1)))
	}
	if doubt.holeVariance > 0 {
		why = append(why, fmt.Sprintf("the star varies too fast for a window of %g masked stretches, and in the %.3g d window taken the trend under the masked transits has %.2g times the variance it has elsewhere, so their depths carry that extra noise",
			maskedWindows, span, doubt.holeVariance))
	}
	if doubt.biased {
		why = append(why, "the star varies too fast for any window tried to follow it with a negligible bias, so the trend under the masked transits may be off and their depths with it")
	}
	return "depths and signal-to-noise ratios measured on this light curve may be biased: " + strings.Join(why, "; ") + ". A search on it is best compared with the first, unmasked pass."
}

// starPeriods measures the star's own periodic variability in the trend: the strongest
// periods of its gap-free pieces (periodogram.Variability), which a vet step compares with
// the signals found, and says what it found.
func starPeriods(lc *lightcurve.LightCurve, out []robust.Result, gap, scale float64, notes *[]string) lightcurve.Variability {
	var pieces []periodogram.Piece
	for i, s := range lc.Segments {
		tr := out[i].Trend
		start := 0
		for j := 1; j <= len(s.Time); j++ {
			if j == len(s.Time) || s.Time[j]-s.Time[j-1] > gap {
				pieces = append(pieces, periodogram.Piece{Time: s.Time[start:j], Value: tr[start:j]})
				start = j
			}
		}
	}
	v, err := periodogram.Variability(pieces, periodogram.Options{Smoothing: scale})
	if err != nil {
		*notes = append(*notes, fmt.Sprintf("star's periods: not measured (%v)", err))
		return lightcurve.Variability{}
	}
	if len(v.Periods) == 0 {
		*notes = append(*notes, "star's periods: none stands out in the trend")
		return v
	}
	var found []string
	for k, p := range v.Periods {
		found = append(found, fmt.Sprintf("%.4g d (semi-amplitude %.3g %%)", p, 100*v.Amplitudes[k]))
	}
	*notes = append(*notes, "star's periods in the trend: "+strings.Join(found, ", "))
	return v
}
