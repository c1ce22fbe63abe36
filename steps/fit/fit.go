package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/optimize"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/parallel"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/sampler"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/transit"
)

// Limits and fixed choices, each with its reason.
const (
	// maxPlanets bounds the planets fitted jointly in this version.
	maxPlanets = 3
	// maxBands bounds the distinct segment bands (one q1, q2 pair each); it keeps the
	// per-call band table on the stack.
	maxBands = 8
	// maxSub caps the sub-exposures per point to bound the cost of very precise data; the
	// number itself comes from subexposures.
	maxSub = 60
	// integrationShare is the largest integration error allowed, in units of the typical
	// point error: a tenth (after Kipping 2010, MNRAS 408, 1758, who sets N by comparing the
	// integration error with the noise; the factor is our choice).
	integrationShare = 0.1
	// From lengthPerTau to chunk: the sampling schedule (sampler.Schedule, which runs it).
	// lengthPerTau is the chain length after burn-in, in autocorrelation times, at which
	// sampling stops (50τ, common practice).
	lengthPerTau = 50
	// burnShare is the share of each chain discarded as burn-in. The walkers start in a small
	// ball around the optimum, so they forget their start within a few τ; a third of a
	// chain that is at least 75τ long (50τ kept) is 25τ, ample (our choice; the R-hat across
	// independently started ensembles checks it).
	burnShare = 3
	// deShare is the share of sampler steps that use the differential-evolution move rather
	// than the stretch move (sampler.Options.DEShare): on a 5-D correlated Gaussian it cut τ
	// from 63 to 20 steps (sampler tests), and on the demo's two-planet posterior (BENCHMARKS.md).
	deShare = 0.8
	// guideShare and guidedDEShare are the shares of steps using the independence move and
	// the differential-evolution move once the ensembles have their guides (the rest are
	// stretch moves). Half the steps draw from the guide: on one planet in 60 days of 2-min
	// data τ fell from 49 to 15 steps, and in the calibration runs the median τ from 92 to
	// 44 (BENCHMARKS.md); the other moves keep the chains local where the guide fits badly.
	guideShare, guidedDEShare = 0.5, 0.4
	// guideAfter is the length of the first phase in autocorrelation times (τ estimated from
	// its last two thirds), and minFirstPhase its least length in steps: the guide is fitted
	// to the second half of that phase, which must have spread from the starting ball over
	// the posterior (τ estimates from a few hundred steps are far too short; our choice).
	guideAfter    = 10
	minFirstPhase = 2000
	// guideGain is the factor by which the first check after the guides are fitted expects
	// τ to have shrunk (it only places that check; τ is measured there).
	guideGain = 2
	// chunk is the number of steps run between checks of the autocorrelation time.
	chunk = 250
	// keepStored bounds the stored steps per ensemble (sampler.Schedule.Keep): a longer run
	// is thinned as it grows, at a spacing that doubles. Storing every step made a small fit
	// that ran to max_steps = 100,000 hold 1 GB. A run still sampling has its kept chain
	// (two thirds or more of at least keepStored/2 stored steps) shorter than 50τ, so the
	// spacing stays below τ/50, where τ, measured on the stored steps, keeps its value
	// (sampler tests) and dropping the steps in between loses almost nothing (our choice).
	keepStored = 8192
	// walkersPerDim is the ensemble size per parameter: 2, the fewest the stretch move
	// allows. Sampling runs to 50τ in steps whatever the ensemble size, so the cost grows with
	// the walkers while τ shrinks more slowly: on the demo, 24 walkers had τ = 512 and 48
	// had τ = 361 steps, so 24 reach 50τ in 0.7 of the time (BENCHMARKS.md).
	walkersPerDim = 2
	// Prior bounds on the stellar density (g/cm³), log-uniform: from giants to late M dwarfs.
	densityLo, densityHi = 0.01, 100.0
	// densityMin, densityMax bound the stellar density (g/cm³) whatever the prior: a
	// workflow's prior may reach beyond the default range, but not to 0 or infinity.
	densityMin, densityMax = 1e-5, 1e7
	// Prior bounds on the per-segment jitter, log-uniform, relative flux.
	jitterLo, jitterHi = 1e-6, 0.1
	// startB is the impact parameter the optimiser starts from (a box does not tell it).
	startB = 0.3
	// startQ1, startQ2 start the limb darkening near a Sun-like star's in the red
	// (u1 ≈ 0.4, u2 ≈ 0.2; from memory, only a start).
	startQ1, startQ2 = 0.36, 0.33
)

// Options configures Fit.
type Options struct {
	Signals     []signals.Signal // start values, one per planet, in planet order
	MaxSteps    int              // cap on ensemble updates per ensemble
	Ensembles   int              // independently seeded ensembles, ≥ 2
	Window      float64          // half-width of the data kept around each mid-transit, in search durations
	Supersample bool             // integrate the model over each exposure
	Jitter      bool             // fit one ln jitter per segment
	Seed        uint64
	// Priors replaces the fit's own prior on the named parameters ("star_density",
	// "b.period", "b.k", "b.b", …; see checkPriorKey), values in d, g/cm³ or dimensionless.
	// A Fixed prior removes the parameter from the sampled vector.
	Priors map[string]Prior
	// Limb holds Gaussian priors on u1, u2 by segment band; the key "default" serves bands
	// not listed (and segments without a band). Bands without one have flat priors on q1, q2.
	Limb map[string]LimbPrior
	// Eccentric lists the planets ("b", "c", "d") whose √e cos ω and √e sin ω are sampled;
	// the others are on circular orbits.
	Eccentric []string
	// Dilution, when not nil, is the prior on a sampled dilution D ≥ 0, the flux of other
	// stars over the target's; the model is (F + D)/(1 + D). A Fixed prior holds it.
	Dilution *Prior
	// InflateByBeta multiplies every point's error by the β factor of the best fit's
	// residuals (Pont, Zucker & Queloz 2006) before sampling, when β > 1.
	InflateByBeta bool
	// Parallel runs block(i) for i in [0, n); nil runs serially. Results do not depend on it.
	Parallel parallel.Func
	// Progress, when not nil, is told how far the sampling is: ensemble updates done out of
	// the most there can be (sampler.Schedule.Progress), ending at done = total. It only
	// watches; the results are the same bits with it or without it.
	Progress func(done, total int)

	nsub int // sub-exposures per point instead of subexposures' choice, for tests
}

// planetNames names planets in signal order.
var planetNames = [maxPlanets]string{"b", "c", "d"}

// Fit fits the transit model to lc and samples its posterior. Problems with the data are
// *steps.InputError values; the notes are facts for the user.
func Fit(ctx context.Context, lc *lightcurve.LightCurve, o Options) (*Artifact, []string, error) {
	if err := checkSignals(o.Signals); err != nil {
		return nil, nil, err
	}
	p, err := newProblem(lc, o)
	if err != nil {
		return nil, nil, err
	}
	best, bestLP := p.bestFit(ctx, o)
	if err := ctx.Err(); err != nil {
		return nil, nil, err // stopped during the optimisation; the sampler would stop at once too
	}
	run, err := sampler.RunEnsembles(ctx, p.m.LogPost, p.walkerStarts(best, o), schedule(o))
	if err != nil {
		if errors.Is(err, sampler.ErrConfig) {
			return nil, nil, fmt.Errorf("fit: %w", err)
		}
		return nil, nil, err
	}
	thin := p.noteSampling(run)
	p.diagnose(run, thin)
	best = p.keepSamples(run, thin, best, bestLP)
	if err := p.timeTransits(best, o); err != nil {
		return nil, nil, err
	}
	return p.art, p.notes, nil
}

// checkSignals checks that there are 1 to maxPlanets signals, each one a start for a fit.
func checkSignals(sigs []signals.Signal) error {
	np := len(sigs)
	if np == 0 || np > maxPlanets {
		return fmt.Errorf("fit: %d planets, must be 1 to %d", np, maxPlanets)
	}
	for j, s := range sigs {
		if !(s.Period > 0) || !(s.Duration > 0) || !(s.Duration < s.Period) || math.IsNaN(s.Epoch) {
			return steps.BadInputf("signals: signal %d has period %v d, duration %v d, epoch %v: cannot start a fit", j+1, s.Period, s.Duration, s.Epoch)
		}
	}
	return nil
}

// problem is a fit under way: the model over the points kept, the artifact so far, the
// start point and the start scale per sampled parameter (from newProblem), and the notes.
type problem struct {
	m         *Model
	art       *Artifact
	x0, scale []float64
	notes     []string
}

// bestFit runs the optimiser from the start point and measures the β factor of its
// residuals; with InflateByBeta and β > 1 it multiplies the errors by β and optimises
// again. It returns the best point and its log posterior (Model.bestLogPost).
func (p *problem) bestFit(ctx context.Context, o Options) ([]float64, float64) {
	m, art := p.m, p.art
	best, bestLP := optimum(ctx, m, p.x0, p.scale)
	p.notes = append(p.notes, fmt.Sprintf("best fit: Nelder–Mead from the search's values reached log posterior %.6g (start %.6g)", bestLP, m.bestLogPost(p.x0)))
	beta, err := m.beta(best)
	if err != nil {
		art.Beta = math.NaN()
		p.notes = append(p.notes, fmt.Sprintf("β factor not measured: %v", err))
		return best, bestLP
	}
	art.Beta = beta
	if o.InflateByBeta && beta > 1 {
		for s := range m.segs {
			for i := range m.segs[s].v {
				m.segs[s].v[i] *= beta * beta
			}
		}
		art.Inflated = true
		best, bestLP = optimum(ctx, m, best, p.scale)
		p.notes = append(p.notes, fmt.Sprintf("errors multiplied by β = %.3g, the residuals' time-averaging factor (Pont, Zucker & Queloz 2006), before sampling", beta))
	}
	// Above betaCaution without inflation, the artifact's Cautions say so.
	return best, bestLP
}

// walkerStarts draws each ensemble's walkers, from the ensemble's own stream, in a small
// ball around the best fit, with each eccentric planet's orbit spread over the unit disk
// (disperseOrbits).
func (p *problem) walkerStarts(best []float64, o Options) [][][]float64 {
	K := walkersPerDim * len(best)
	starts := make([][][]float64, o.Ensembles)
	for e := range starts {
		r := rng.Derive(o.Seed, "fit/start", uint64(e))
		init := make([][]float64, K)
		for w := range init {
			init[w] = ball(p.m, best, p.scale, r)
			p.m.disperseOrbits(init[w], r)
		}
		starts[e] = init
	}
	return starts
}

// schedule is the fit's sampling schedule, from the constants above.
func schedule(o Options) sampler.Schedule {
	return sampler.Schedule{
		MaxSteps: o.MaxSteps, Chunk: chunk, Keep: keepStored, LengthPerTau: lengthPerTau, BurnShare: burnShare,
		GuideAfter: guideAfter, MinFirstPhase: minFirstPhase, GuideGain: guideGain,
		DEShare: deShare, GuidedDEShare: guidedDEShare, GuideShare: guideShare,
		Seed: o.Seed, SeedLabel: "fit/ensemble", Parallel: o.Parallel, Progress: o.Progress,
	}
}

// noteSampling notes how the sampling went, with a warning when the chains after burn-in
// are shorter than lengthPerTau autocorrelation times, and returns the thinning in steps:
// τ/2, rounded down to a multiple of the chains' stored spacing (run.Thin), at least one
// stored step.
func (p *problem) noteSampling(run *sampler.Sampling) (thin int) {
	K := walkersPerDim * len(p.x0)
	tauMax := run.MaxTau()
	if !run.Trusted || float64(run.Steps-run.Burn) < lengthPerTau*tauMax {
		p.notes = append(p.notes, fmt.Sprintf("warning: the chains after burn-in are %d steps, shorter than %d autocorrelation times (%.4g steps): the posterior summaries are preliminary; raise max_steps", run.Steps-run.Burn, lengthPerTau, lengthPerTau*tauMax))
	}
	half := max(1, int(tauMax/2))
	thin = max(1, half/run.Thin) * run.Thin
	how := "τ/2"
	if thin != half {
		how = fmt.Sprintf("τ/2 = %d rounded down to whole stored steps, %d steps apart", half, run.Thin)
	}
	p.notes = append(p.notes, fmt.Sprintf("sampling: %d ensembles of %d walkers, %d steps each, the first %d discarded as burn-in, thinned by %d (%s, τ = %.4g steps)", len(run.Chains), K, run.Steps, run.Burn, thin, how, tauMax))
	if run.Guided {
		p.notes = append(p.notes, fmt.Sprintf("sampling: after burn-in, %.0f %% of the steps drew from a Student-t guide fitted to each ensemble's own burn-in (independence moves, Tierney 1994), %.0f %% were differential-evolution moves and the rest stretch moves", 100*guideShare, 100*guidedDEShare))
	}
	return thin
}

// diagnose fills the artifact's columns, sampling figures and diagnostics per sampled
// parameter: τ, the effective sample size over all ensembles and R-hat across them, and
// the mean acceptance.
func (p *problem) diagnose(run *sampler.Sampling, thin int) {
	art, dim := p.art, len(p.x0)
	K, ens := walkersPerDim*dim, run.Chains
	art.Names = p.m.columns()
	art.Sampled = dim
	art.Walkers, art.Steps, art.Burn, art.Thin, art.Ensembles = K, run.Steps, run.Burn, thin, len(ens)
	for i := 0; i < dim; i++ {
		ess := 0.0
		for range ens {
			ess += sampler.EffectiveSamples(K, run.Steps-run.Burn, run.Taus[i])
		}
		rh, err := sampler.EnsembleRhat(ens, i, run.Kept())
		if err != nil || math.IsNaN(rh) {
			rh = math.NaN()
		}
		art.Diag = append(art.Diag, Diagnostic{Tau: run.Taus[i], ESS: ess, Rhat: rh})
	}
	acc := 0
	for _, ch := range ens {
		for _, a := range ch.Accepted {
			acc += a
		}
	}
	art.Acceptance = float64(acc) / float64(run.Steps*K*len(ens))
}

// keepSamples stores the draws after burn-in thinned by thin steps (a multiple of the
// stored spacing run.Thin) with their derived columns, and the best fit: the highest
// posterior density in the documented parameters seen (Model.bestLogPost), from the
// optimiser (best, bestLP) or the draws kept. It returns the best fit's sampled vector.
func (p *problem) keepSamples(run *sampler.Sampling, thin int, best []float64, bestLP float64) []float64 {
	m, art := p.m, p.art
	K := walkersPerDim * len(p.x0)
	stride := thin / run.Thin // in stored steps
	for _, ch := range run.Chains {
		for s := run.Kept() + stride - 1; s < ch.Stored; s += stride {
			for w := 0; w < K; w++ {
				x := ch.At(s, w)
				art.Samples = append(art.Samples, m.row(x)...)
				if lp := ch.LogProb[s*K+w] - m.logJacobian(x); lp > bestLP {
					bestLP, best = lp, append([]float64(nil), x...)
				}
			}
		}
	}
	art.Best = m.row(best)
	art.BestLogPost = bestLP
	return best
}

// timeTransits measures the per-transit times with the shape fixed at the best fit, and
// notes how many were timed and how well a linear ephemeris fits them.
func (p *problem) timeTransits(best []float64, o Options) error {
	times, err := p.m.transitTimes(best, o)
	if err != nil {
		return err
	}
	p.art.Times = times
	for j, pt := range times {
		timed := 0
		for _, t := range pt.Times {
			if t.Skipped == "" {
				timed++
			}
		}
		switch {
		case pt.Err != "":
			p.notes = append(p.notes, fmt.Sprintf("transit times of planet %s: %s", planetNames[j], pt.Err))
		default:
			p.notes = append(p.notes, fmt.Sprintf("transit times of planet %s: %d of %d transits timed with the shape fixed at the best fit; linear ephemeris χ² = %.1f for %d degrees of freedom (p = %.2g)",
				planetNames[j], timed, len(pt.Times), pt.Ephemeris.Chi2, pt.Ephemeris.Dof, pt.Ephemeris.PValue))
		}
	}
	return nil
}

// optimum maximises the log posterior density in the documented parameters (Model.bestLogPost)
// by Nelder–Mead (gonum) in coordinates scaled so the initial simplex spans scale, restarting
// from the result; it returns the best point. It ends early, with the best point so far,
// once ctx is done (the caller checks ctx).
func optimum(ctx context.Context, m *Model, x0, scale []float64) ([]float64, float64) {
	dim := len(x0)
	toX := func(dst, y []float64) []float64 {
		for i := range y {
			dst[i] = x0[i] + y[i]*scale[i]
		}
		return dst
	}
	buf := make([]float64, dim)
	f := func(y []float64) float64 {
		lp := m.bestLogPost(toX(buf, y))
		if math.IsNaN(lp) || math.IsInf(lp, 0) {
			return 1e300
		}
		return -lp
	}
	y := make([]float64, dim)
	for round := 0; round < 3 && ctx.Err() == nil; round++ {
		res, err := optimize.Minimize(optimize.Problem{Func: f}, y,
			&optimize.Settings{FuncEvaluations: 1000 * dim, Concurrent: 1,
				Converger: stoppable{ctx, &optimize.FunctionConverge{Absolute: 1e-7, Iterations: 50 * dim}}},
			&optimize.NelderMead{SimplexSize: 1})
		if res == nil || (err != nil && res.F >= f(y)) {
			break
		}
		if res.F < f(y) {
			copy(y, res.X)
		}
	}
	best := toX(make([]float64, dim), y)
	return best, m.bestLogPost(best)
}

// stoppable ends an optimisation at its next iteration once ctx is done (an interrupted
// run), and otherwise defers to the converger it wraps.
type stoppable struct {
	ctx context.Context
	optimize.Converger
}

func (s stoppable) Converged(loc *optimize.Location) optimize.Status {
	if s.ctx.Err() != nil {
		return optimize.Failure
	}
	return s.Converger.Converged(loc)
}

// ball draws a walker start near x: a normal offset of 1 % of scale per parameter, drawn
// again (up to 100 times, then shrunk) until the posterior is finite.
func ball(m *Model, x, scale []float64, r *rng.Stream) []float64 {
	y := make([]float64, len(x))
	size := 0.01
	for try := 0; ; try++ {
		for i := range y {
			y[i] = x[i] + size*scale[i]*r.Normal()
		}
		if lp := m.LogPost(y); !math.IsInf(lp, 0) && !math.IsNaN(lp) {
			return y
		}
		if try%100 == 99 {
			size /= 10
		}
		if try > 1000 {
			return append(y[:0], x...)
		}
	}
}

// disperseOrbits redraws, in the walker start x, each eccentric planet's √e cos ω, √e sin ω
// from the prior (uniform in the unit disk, so in e and ω), until the posterior is finite
// (at most 100 tries; x is kept otherwise). The transit constrains e and ω only along a
// curved ridge (a duration set by (1 + e sin ω)/√(1 − e²)); an ensemble started in a small
// ball stays on the part of it the optimiser happened to reach, one started across the
// disk spreads along the ridge during burn-in (our choice, after trying both).
func (m *Model) disperseOrbits(x []float64, r *rng.Stream) {
	lay := m.layout()
	for j := 0; j < m.planets; j++ {
		if !m.ecc[j] {
			continue
		}
		ic, is := slices.Index(m.free, lay.Secosw(j)), slices.Index(m.free, lay.Sesinw(j))
		c0, s0 := x[ic], x[is]
		for try := 0; ; try++ {
			if try == 100 {
				x[ic], x[is] = c0, s0
				break
			}
			rad, ang := math.Sqrt(r.Float64()), 2*math.Pi*r.Float64()
			x[ic], x[is] = rad*math.Cos(ang), rad*math.Sin(ang)
			if lp := m.LogPost(x); !math.IsInf(lp, 0) && !math.IsNaN(lp) {
				break
			}
		}
	}
}

// columns names the columns of the artifact: the sampled parameters, the user-fixed ones
// (constant columns, so that readers find them by name), then the derived ones: the star's
// density, and per planet its transit depth, a/R*, T14, and for eccentric orbits e and ω (deg).
func (m *Model) columns() []string {
	var n []string
	for _, i := range m.free {
		n = append(n, m.params[i].name)
	}
	for i := range m.params {
		if m.shownFixed(i) {
			n = append(n, m.params[i].name)
		}
	}
	n = append(n, "star_density")
	for j := 0; j < m.planets; j++ {
		p := planetNames[j] + "."
		n = append(n, p+"depth", p+"a_over_rstar", p+"t14")
		if m.ecc[j] {
			n = append(n, p+"e", p+"omega")
		}
	}
	return n
}

// shownFixed reports whether full entry i is fixed by the workflow (and so has a column):
// the circular orbits' √e cos ω, √e sin ω and an absent dilution have none.
func (m *Model) shownFixed(i int) bool {
	if !m.params[i].fixed {
		return false
	}
	lay := m.layout()
	if i == lay.Dilution() {
		return m.dilution
	}
	return !lay.eccentricity(i)
}

// row returns the artifact row of the sampled vector x (see columns).
func (m *Model) row(x []float64) []float64 {
	full := m.expand(make([]float64, len(m.params)), x)
	rho, _, _, _ := m.physical(full)
	out := append([]float64(nil), x...)
	lay := m.layout()
	for j := 0; j < m.planets; j++ {
		// The columns hold k and b where the chain samples δ and the chord coordinate.
		if i := slices.Index(m.free, lay.K(j)); i >= 0 && m.depthParam[j] {
			out[i] = full[lay.K(j)]
		}
		if i := slices.Index(m.free, lay.B(j)); i >= 0 && m.chordParam[j] {
			out[i] = full[lay.B(j)]
		}
	}
	for i := range m.bands { // the columns hold q1, q2; the chain samples their logits
		for _, idx := range []int{lay.Q1(i), lay.Q2(i)} {
			if f := slices.Index(m.free, idx); f >= 0 {
				out[f] = full[idx]
			}
		}
	}
	for i := range m.params {
		if m.shownFixed(i) {
			out = append(out, full[i])
		}
	}
	out = append(out, rho)
	u1, u2 := transit.QuadraticFromKipping(full[lay.Q1(0)], full[lay.Q2(0)])
	for j := 0; j < m.planets; j++ {
		period, k := full[lay.Period(j)], full[lay.K(j)]
		aR := ScaledAxis(period, rho)
		e, w := 0.0, 0.0
		if m.ecc[j] {
			e, w = lay.eccentricOrbit(full, j)
		}
		t14, err := astro.TotalDuration(period, aR, k, full[lay.B(j)], e, w)
		if err != nil {
			t14 = 0
		}
		out = append(out, transitDepth(k, full[lay.B(j)], u1, u2, full[lay.Dilution()]), aR, t14)
		if m.ecc[j] {
			out = append(out, e, w*180/math.Pi)
		}
	}
	return out
}

// transitDepth is the fraction of the light lost at mid-transit, where the planet's centre
// is b stellar radii from the star's (Mandel & Agol 2002 with quadratic limb darkening
// u1, u2), diluted by the other stars' flux D: (1 − F(b))/(1 + D). It is about
// k²/(1 − u1/3 − u2/6) for a small planet crossing the centre, and less than k² for a
// grazing one, where k² would overstate it many times.
func transitDepth(k, b, u1, u2, dil float64) float64 {
	var z [1]float64
	z[0] = math.Abs(b)
	return (1 - transit.Flux(nil, z[:], k, u1, u2)[0]) / (1 + dil)
}

// quantiles returns the 16th, 50th and 84th percentiles of v (sorted copy, linear
// interpolation between order statistics).
func quantiles(v []float64) (lo, mid, hi float64) {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return sampler.Quantile(s, 0.16), sampler.Quantile(s, 0.5), sampler.Quantile(s, 0.84)
}
