package completeness

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"dipline/steps"
	"dipline/steps/detrend"
	"dipline/steps/detrend/robust"
	"dipline/steps/fit"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/transit"
	"dipline/steps/search"
	"dipline/steps/search/bls"
	"dipline/steps/units"
)

// Kind is the completeness step kind, written against its Config; New makes it the
// engine's.
type Kind struct{}

// New returns the completeness kind for the engine's registry.
func New() steps.Kind { return steps.Define[Config](Kind{}) }

var (
	_ steps.Typed[Config] = Kind{}
	_ steps.Artifact      = (*Result)(nil)
)

// version is bumped whenever the numbers or the encoding change. 2: the search it reruns
// (search version 6) keeps each refinement within reach of its peak and turns down boxes
// less than three errors deep. 3: the detrend it reruns (detrend version 8) fits its
// local polynomial at anchors where points are dense.
const version = 3

// Config is what a completeness block may say. The attributes tagged reuse:"parts" only
// choose which injections are made: changing them keeps every injection already made that
// the new grid draws again.
type Config struct {
	LightCurve steps.Ref         `step:"light_curve,required" accepts:"photometry" doc:"the raw light curve the planets are injected into, before any detrending"`
	Detrend    steps.SettingsRef `step:"detrend,required" accepts:"detrend" doc:"the detrend step whose settings detrend each copy (its mask is not used: an injected planet is not known in advance)"`
	Search     steps.SettingsRef `step:"search,required" accepts:"search" doc:"the search step whose settings search each copy"`
	Star       *steps.Ref        `step:"star" accepts:"star" doc:"the host star: its density shapes the injected transits and its radius turns radius ratios into Earth radii"`
	Fit        *steps.Ref        `step:"fit" accepts:"fit" doc:"the transit fit: its limb darkening shapes the injected transits, and its planets are placed on the map"`
	Planets    *steps.Ref        `step:"planets" accepts:"derive" doc:"the derived planets, whose radii (corrected for dilution) place them on the map; without it the fit's radius ratios do"`

	PeriodRange *[2]float64 `step:"period_range" dim:"time" reuse:"parts" doc:"shortest and longest injected period; by default the search's own range on this light curve"`
	PeriodCells int         `step:"period_cells" default:"4" reuse:"parts" doc:"cells across the period range, equal in the logarithm of the period"`
	RadiusRange *[2]float64 `step:"radius_range" dim:"radius" reuse:"parts" doc:"smallest and largest injected planet radius (needs the star); by default from a quarter to four times the depth a central transit at the middle period would need to reach a signal to noise of 7.1 in this light curve"`
	RadiusCells int         `step:"radius_cells" default:"4" reuse:"parts" doc:"cells across the radius range, equal in the logarithm of the radius"`
	PerCell     int         `step:"per_cell" default:"25" reuse:"parts" doc:"planets injected in each cell, each drawn from the workflow's seed"`
	Window      float64     `step:"window" default:"0.3" doc:"each copy is searched over periods within this fraction of the injected one (0: over the search's whole range, several times slower)"`
	FullChecks  int         `step:"full_grid_checks" default:"0" reuse:"parts" doc:"how many of the injections are also searched over the whole range, to measure what the window misses"`
}

// Bounds of the grid's attributes, to keep a mistyped number from asking for years of work.
const (
	maxCells   = 40
	maxPerCell = 10_000
	maxWindow  = 3 // a window wider than ×4 either side is the full search at more cost
)

// snrGoal is the signal to noise at which the default radius range is centred: the usual
// detection threshold of transit surveys (7.1σ; common practice).
const snrGoal = 7.1

// defaultLimb is the quadratic limb darkening (u1, u2) injected when no fit gives one: a
// middle value for Sun-like to cool stars in red optical bands (from memory). Whether a
// transit is detected hardly depends on it (the depth does, through k and b).
var defaultLimb = [2]float64{0.4, 0.25}

// Name implements steps.Typed.
func (Kind) Name() string { return "completeness" }

// Version implements steps.Typed.
func (Kind) Version() int { return version }

// Random implements steps.Typed: the planets are drawn from the seed.
func (Kind) Random() bool { return true }

// Doc implements steps.Typed.
func (Kind) Doc() string {
	return "injects planets over a period–radius grid into the raw light curve, detrends and searches each copy with the workflow's own settings, and maps how many are recovered, with the transit probability and an occurrence estimate"
}

// Check holds the grid to sense.
func (Kind) Check(c *Config) error {
	switch {
	case c.PeriodRange != nil && !(c.PeriodRange[0] > 0 && c.PeriodRange[1] > c.PeriodRange[0] && !math.IsInf(c.PeriodRange[1], 0)):
		return steps.Attrf("period_range", "must run from a positive period to a longer, finite one")
	case c.RadiusRange != nil && !(c.RadiusRange[0] > 0 && c.RadiusRange[1] > c.RadiusRange[0] && !math.IsInf(c.RadiusRange[1], 0)):
		return steps.Attrf("radius_range", "must run from a positive radius to a larger, finite one")
	case c.RadiusRange != nil && c.Star == nil:
		return steps.Attrf("radius_range", "needs a star step (star = star.<label>) to turn radii into radius ratios")
	case c.PeriodCells < 1 || c.PeriodCells > maxCells:
		return steps.Attrf("period_cells", "must be from 1 to %d, not %d", maxCells, c.PeriodCells)
	case c.RadiusCells < 1 || c.RadiusCells > maxCells:
		return steps.Attrf("radius_cells", "must be from 1 to %d, not %d", maxCells, c.RadiusCells)
	case c.PerCell < 1 || c.PerCell > maxPerCell:
		return steps.Attrf("per_cell", "must be from 1 to %d, not %d", maxPerCell, c.PerCell)
	case !(c.Window >= 0 && c.Window <= maxWindow):
		return steps.Attrf("window", "must be 0 (the whole range) or a fraction up to %d, not %v", maxWindow, c.Window)
	case c.FullChecks < 0 || c.FullChecks > c.PerCell*c.PeriodCells*c.RadiusCells:
		return steps.Attrf("full_grid_checks", "must be from 0 to the number of injections (%d), not %d", c.PerCell*c.PeriodCells*c.RadiusCells, c.FullChecks)
	}
	return nil
}

// Run draws the planets, recovers each (or takes it from the step's finished pieces) and
// summarises the map.
func (k Kind) Run(ctx context.Context, c *Config, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	src, ok := in.Ref("light_curve").(lightcurve.Source)
	if !ok {
		return nil, errors.New("completeness: light_curve is not a light curve")
	}
	raw := src.LightCurve()
	dcfg, ok1 := in.Settings["detrend"].(*detrend.Config)
	scfg, ok2 := in.Settings["search"].(*search.Config)
	if !ok1 || !ok2 {
		return nil, errors.New("completeness: the detrend and search settings were not handed over")
	}
	if scfg.Star != nil {
		if err := sameStar(c, scfg); err != nil {
			return nil, err
		}
		withStar, err := search.WithStar(*scfg, in.Ref("star"))
		if err != nil {
			return nil, err
		}
		scfg = &withStar
	}
	host, err := hostOf(in, scfg, raw, env)
	if err != nil {
		return nil, err
	}
	res := &Result{Host: host, PerCell: c.PerCell, Window: c.Window}
	res.PeriodEdges, res.RadiusEdges, err = edges(c, raw, host, scfg, env)
	if err != nil {
		return nil, err
	}
	cells, err := Grid(res.PeriodEdges, res.RadiusEdges)
	if err != nil {
		return nil, err
	}
	first, last := raw.Span()
	drawn, err := Plan(cells, c.PerCell, env.Seed, [2]float64{first, last})
	if err != nil {
		return nil, err
	}
	if fa, ok := in.Ref("fit").(*fit.Artifact); ok {
		raw = withoutKnown(raw, fa, scfg.MaskFactor, env)
	}
	st := host.star()
	pieces := recoverer{raw: raw, st: st, dcfg: *dcfg, scfg: *scfg, env: env, total: len(drawn) + c.FullChecks}
	out, err := pieces.all(ctx, drawn, c.Window)
	if err != nil {
		return nil, err
	}
	if res.Cells, err = Summarise(drawn, out, cells, host.Density); err != nil {
		return nil, err
	}
	for i, d := range drawn {
		res.Searches = append(res.Searches, Searched{Drawn: d, Window: c.Window, Outcome: out[i]})
	}
	if c.FullChecks > 0 {
		fullOut, err := pieces.all(ctx, drawn[:c.FullChecks], 0)
		if err != nil {
			return nil, err
		}
		for i, o := range fullOut {
			res.Searches = append(res.Searches, Searched{Drawn: drawn[i], Window: 0, Outcome: o})
		}
	}
	res.Check = res.fullCheck()
	res.Detections = detectionsOf(in, host)
	res.occurrence()
	return res, nil
}

// Inspect refuses, before anything runs (dipline check), a search whose settings take a
// star that this step does not name (sameStar).
func (Kind) Inspect(c *Config, in steps.Inputs) error {
	if scfg, ok := in.Settings["search"].(*search.Config); ok {
		return sameStar(c, scfg)
	}
	return nil
}

// sameStar refuses a search whose settings take their density from a star step (star =
// star.<label>) unless this step names the same star: each copy is searched with the
// density the search used, read from the star this step is handed (search.WithStar), and
// only this step's own star puts the star's result in its key.
func sameStar(c *Config, scfg *search.Config) error {
	switch {
	case scfg.Star == nil:
		return nil
	case c.Star == nil:
		return steps.Attrf("star", "is needed: %s takes the star's density from %s (its star = %s), and each copy is searched with that density; write star = %s here too",
			c.Search, *scfg.Star, *scfg.Star, *scfg.Star)
	case *c.Star != *scfg.Star:
		return steps.Attrf("star", "names %s, but %s takes the star's density from %s: each copy is searched with the density the search used, so both must name the same star",
			*c.Star, c.Search, *scfg.Star)
	}
	return nil
}

// withoutKnown returns raw without the points within mask_factor × T14/2 of the fit's
// planets' mid-transits (posterior medians of period, t0 and T14): an injected planet
// should compete with the noise, not with the planets already found, which a search
// around a period near theirs would find first (common practice). It notes how many
// points it left out. The grid's time span stays raw's.
func withoutKnown(raw *lightcurve.LightCurve, fa *fit.Artifact, maskFactor float64, env steps.Env) *lightcurve.LightCurve {
	var known []signals.Signal
	for _, name := range fa.PlanetNames() {
		p, _ := fa.Summary(name + ".period")
		t0, _ := fa.Summary(name + ".t0")
		t14, _ := fa.Summary(name + ".t14")
		if p > 0 && t14 > 0 && !math.IsNaN(t0) {
			known = append(known, signals.Signal{Period: p, Epoch: t0, Duration: t14})
		}
	}
	if len(known) == 0 {
		return raw
	}
	out := *raw
	out.Segments = make([]lightcurve.Segment, 0, len(raw.Segments))
	dropped := 0
	for _, s := range raw.Segments {
		kept := s
		kept.Time, kept.Flux, kept.Err = nil, nil, nil
		for i, t := range s.Time {
			in := false
			for _, k := range known {
				in = in || k.InTransit(t, maskFactor)
			}
			if in {
				dropped++
				continue
			}
			kept.Time, kept.Flux, kept.Err = append(kept.Time, t), append(kept.Flux, s.Flux[i]), append(kept.Err, s.Err[i])
		}
		if len(kept.Time) > 0 {
			out.Segments = append(out.Segments, kept)
		}
	}
	env.Note("the fit's %d planet(s) left out before injecting: %d points within %.3g transit durations of their mid-transits", len(known), dropped, maskFactor)
	return &out
}

// Host is what the step knew of the star and where each value came from.
type Host struct {
	// Density is the mean density injected with, g/cm³; Radius the star's radius in R☉, 0
	// when no star step gave one (the map is then in radius ratios only).
	Density, Radius float64
	// U1, U2 are the quadratic limb-darkening coefficients injected.
	U1, U2 float64
	// DensityFrom and LimbFrom say in a few words where those came from.
	DensityFrom, LimbFrom string
}

func (h Host) star() Star { return Star{Density: h.Density, U1: h.U1, U2: h.U2} }

// hostOf gathers the star's density, radius and limb darkening: the density from the star
// step, else the fit, else the search's own; the limb darkening from the fit, else
// defaultLimb. It notes where each came from.
func hostOf(in steps.Inputs, scfg *search.Config, raw *lightcurve.LightCurve, env steps.Env) (Host, error) {
	h := Host{DensityFrom: "the search's star_density", U1: defaultLimb[0], U2: defaultLimb[1],
		LimbFrom: "a middle value for Sun-like to cool stars (no fit given)"}
	var fromStar bool
	if h.Density, fromStar = scfg.AssumedDensity(); fromStar {
		h.DensityFrom = "the search's star step (the median of its density draws)"
	}
	fa, _ := in.Ref("fit").(*fit.Artifact)
	if fa != nil {
		if rho, _ := fa.Summary("star_density"); rho > 0 {
			h.Density, h.DensityFrom = rho, "the fit's posterior median"
		}
		if q1, q2, ok := limbOf(fa, raw); ok {
			h.U1, h.U2 = transit.QuadraticFromKipping(q1, q2)
			h.LimbFrom = "the fit's posterior medians"
		}
	}
	if ss, ok := in.Ref("star").(stellar.StarSource); ok {
		s := ss.StarDraws()
		if rho := median(s.Density); rho > 0 {
			h.Density, h.DensityFrom = rho, "the star step's median"
		}
		h.Radius = median(s.Radius)
	}
	if !(h.Density > 0) || math.IsInf(h.Density, 0) {
		return Host{}, fmt.Errorf("completeness: the star's density (%v g/cm3, from %s) is not a usable density", h.Density, h.DensityFrom)
	}
	env.Note("injected around a star of %.3g g/cm3 (from %s), limb darkening u1 = %.3f, u2 = %.3f (from %s)",
		h.Density, h.DensityFrom, h.U1, h.U2, h.LimbFrom)
	return h, nil
}

// limbOf returns the fit's median Kipping q1, q2 for the band of the light curve's first
// segment, or for its only band.
func limbOf(fa *fit.Artifact, raw *lightcurve.LightCurve) (q1, q2 float64, ok bool) {
	names := [][2]string{{"q1", "q2"}}
	if len(raw.Segments) > 0 && raw.Segments[0].Band != "" {
		b := raw.Segments[0].Band
		names = append([][2]string{{"q1[" + b + "]", "q2[" + b + "]"}}, names...)
	}
	for _, n := range names {
		if fa.Column(n[0]) != nil && fa.Column(n[1]) != nil {
			q1, _ = fa.Summary(n[0])
			q2, _ = fa.Summary(n[1])
			return q1, q2, q1 >= 0 && q1 <= 1 && q2 >= 0 && q2 <= 1
		}
	}
	return 0, 0, false
}

// median is the middle value of v (robust.Median of a sorted copy), or NaN for none.
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	return robust.Median(slices.Sorted(slices.Values(v)))
}

// edges returns the grid's period edges (days) and radius-ratio edges, equal in the
// logarithm, from the written ranges or their defaults, and notes the defaults.
func edges(c *Config, raw *lightcurve.LightCurve, h Host, scfg *search.Config, env steps.Env) (periods, ratios []float64, err error) {
	var pr [2]float64
	if c.PeriodRange != nil {
		pr = *c.PeriodRange
	} else {
		pr[0], pr[1] = search.PeriodRange(*scfg, raw.Baseline())
		env.Note("period_range: %.4g–%.4g d, the search's own range on this light curve", pr[0], pr[1])
	}
	if !(pr[1] > pr[0] && pr[0] > 0) {
		return nil, nil, steps.BadInputf("completeness: the period range %.4g–%.4g d is empty for a light curve of %.4g d", pr[0], pr[1], raw.Baseline())
	}
	var kr [2]float64
	switch {
	case c.RadiusRange != nil:
		if !(h.Radius > 0) {
			return nil, nil, steps.BadInputf("completeness: radius_range needs the star's radius, and the star step gives none")
		}
		kr = [2]float64{c.RadiusRange[0] / h.Radius, c.RadiusRange[1] / h.Radius}
	default:
		k := transitRatio(raw, h, math.Sqrt(pr[0]*pr[1]))
		if !(k > 0) {
			return nil, nil, steps.BadInputf("completeness: the light curve's noise cannot be measured, so no radius range can be derived; write radius_range")
		}
		kr = [2]float64{k / 2, k * 2}
		words := fmt.Sprintf("radius ratio %.3g–%.3g", kr[0], kr[1])
		if h.Radius > 0 {
			words += fmt.Sprintf(" (%.3g–%.3g R_earth)", kr[0]*h.Radius/units.Radius.Units["R_earth"], kr[1]*h.Radius/units.Radius.Units["R_earth"])
		}
		env.Note("radius_range: %s, a quarter to four times the depth a central transit at %.3g d needs for a signal to noise of %.1f here",
			words, math.Sqrt(pr[0]*pr[1]), snrGoal)
	}
	if !(kr[0] > 0 && kr[1] < 1) {
		return nil, nil, steps.BadInputf("completeness: radius ratios %.3g–%.3g; a transit needs ratios between 0 and 1", kr[0], kr[1])
	}
	return logEdges(pr, c.PeriodCells), logEdges(kr, c.RadiusCells), nil
}

// logEdges cuts r into n cells equal in the logarithm: n+1 edges, the ends exactly r's.
func logEdges(r [2]float64, n int) []float64 {
	out := make([]float64, n+1)
	step := math.Log(r[1]/r[0]) / float64(n)
	for i := range out {
		out[i] = r[0] * math.Exp(float64(i)*step)
	}
	out[0], out[n] = r[0], r[1]
	return out
}

// transitRatio is the radius ratio whose central transit at period (days) reaches snrGoal
// in raw: depth k² = snrGoal·σ/√n, σ the point-to-point scatter of the flux (the robust
// scatter of the differences of neighbours, over √2: robust to slow trends and flares) and
// n the points in transit over the data, T14·(baseline/P)/cadence with T14 = P/(π·a/R*).
func transitRatio(raw *lightcurve.LightCurve, h Host, period float64) float64 {
	var diffs []float64
	var n int
	for _, s := range raw.Segments {
		for i := 1; i < len(s.Flux); i++ {
			diffs = append(diffs, s.Flux[i]-s.Flux[i-1])
		}
		n += len(s.Time)
	}
	sigma := 0.0
	if len(diffs) > 0 {
		sigma = robust.RobustSigma(diffs) / math.Sqrt2
	}
	baseline := raw.Baseline()
	if !(sigma > 0) || n < 2 || !(baseline > 0) {
		return 0
	}
	cadence := baseline / float64(n-1) // the mean spacing, gaps spread over the points
	t14 := period / (math.Pi * bls.ScaledAxis(period, h.Density))
	inTransit := math.Max(1, t14*(baseline/period)/cadence)
	return math.Sqrt(snrGoal * sigma / math.Sqrt(inTransit))
}

// recoverer recovers drawn planets through the step's finished pieces.
type recoverer struct {
	raw   *lightcurve.LightCurve
	st    Star
	dcfg  detrend.Config
	scfg  search.Config
	env   steps.Env
	done  int // injections finished, found or computed, over both passes
	total int
	// spanFixed says dcfg's span is chosen (FixSpan): once for both passes, and only
	// when an injection is to be made.
	spanFixed bool
}

// all returns the outcome of each drawn planet searched with window: taken from the step's
// pieces where one is kept, the rest recovered together (RunAll) and each kept as soon as
// it is known.
func (r *recoverer) all(ctx context.Context, drawn []Drawn, window float64) ([]Outcome, error) {
	out := make([]Outcome, len(drawn))
	var missing []int
	for i, d := range drawn {
		if o, ok := r.kept(d, window); ok {
			out[i] = o
			r.tick()
			continue
		}
		missing = append(missing, i)
	}
	if len(missing) == 0 {
		return out, nil
	}
	if len(missing) < len(drawn) {
		r.env.Note("%d of %d injections (window %v) taken from the ones made before; %d made now", len(drawn)-len(missing), len(drawn), window, len(missing))
	}
	if !r.spanFixed { // RunAll would choose it again for each pass
		r.dcfg, r.spanFixed = FixSpan(r.dcfg, r.raw, r.env.Pool), true
	}
	todo := make([]Drawn, len(missing))
	for j, i := range missing {
		todo[j] = drawn[i]
	}
	got, err := RunAll(ctx, r.raw, todo, r.st, r.dcfg, r.scfg, window, r.env.Pool, func(j int, o Outcome, _ int) {
		if r.env.Parts != nil {
			r.env.Parts.Put(pieceKey(todo[j], window), encodeOutcome(o))
		}
		r.tick()
	})
	if err != nil {
		return nil, err
	}
	for j, i := range missing {
		out[i] = got[j]
	}
	return out, nil
}

func (r *recoverer) tick() {
	r.done++
	if r.env.Progress != nil {
		r.env.Progress(r.done, r.total)
	}
}

// kept returns the outcome kept for d with window, if any.
func (r *recoverer) kept(d Drawn, window float64) (Outcome, bool) {
	if r.env.Parts == nil {
		return Outcome{}, false
	}
	b, ok := r.env.Parts.Get(pieceKey(d, window))
	if !ok {
		return Outcome{}, false
	}
	o, err := decodeOutcome(b)
	return o, err == nil
}
