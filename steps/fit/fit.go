package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/optimize"

	"dipline/steps"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/lightcurve"
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
	Parallel func(n int, block func(i int))

	nsub int // sub-exposures per point instead of subexposures' choice, for tests
}

// planetNames names planets in signal order.
var planetNames = [maxPlanets]string{"b", "c", "d"}

// Fit fits the transit model to lc and samples its posterior. Problems with the data are
// *steps.InputError values; the notes are facts for the user.
func Fit(ctx context.Context, lc *lightcurve.LightCurve, o Options) (*Artifact, []string, error) {
	np := len(o.Signals)
	if np == 0 || np > maxPlanets {
		return nil, nil, fmt.Errorf("fit: %d planets, must be 1 to %d", np, maxPlanets)
	}
	for j, s := range o.Signals {
		if !(s.Period > 0) || !(s.Duration > 0) || !(s.Duration < s.Period) || math.IsNaN(s.Epoch) {
			return nil, nil, steps.BadInputf("signals: signal %d has period %v d, duration %v d, epoch %v: cannot start a fit", j+1, s.Period, s.Duration, s.Epoch)
		}
	}
	m, art, x0, scale, notes, err := setup(lc, o)
	if err != nil {
		return nil, nil, err
	}
	dim := len(x0)
	best, bestLP := optimum(m, x0, scale)
	notes = append(notes, fmt.Sprintf("best fit: Nelder–Mead from the search's values reached log posterior %.6g (start %.6g)", bestLP, m.bestLogPost(x0)))
	if beta, err := m.beta(best); err != nil {
		art.Beta = math.NaN()
		notes = append(notes, fmt.Sprintf("β factor not measured: %v", err))
	} else {
		art.Beta = beta
		switch {
		case o.InflateByBeta && beta > 1:
			for s := range m.segs {
				for i := range m.segs[s].v {
					m.segs[s].v[i] *= beta * beta
				}
			}
			art.Inflated = true
			best, bestLP = optimum(m, best, scale)
			notes = append(notes, fmt.Sprintf("errors multiplied by β = %.3g, the residuals' time-averaging factor (Pont, Zucker & Queloz 2006), before sampling", beta))
		}
		// Above betaCaution without inflation, the artifact's Cautions say so.
	}

	// Ensembles started in a small ball around the best fit.
	K := walkersPerDim * dim
	par := o.Parallel
	if par == nil {
		par = func(n int, block func(i int)) {
			for i := 0; i < n; i++ {
				block(i)
			}
		}
	}
	ens := make([]*sampler.Chain, o.Ensembles)
	last := make([][][]float64, o.Ensembles)
	for e := range ens {
		r := rng.Derive(o.Seed, "fit/start", uint64(e))
		init := make([][]float64, K)
		for w := range init {
			init[w] = ball(m, best, scale, r)
			m.disperseOrbits(init[w], r)
		}
		last[e] = init
		ens[e] = &sampler.Chain{Walkers: K, Dim: dim, Thin: 1, Accepted: make([]int, K)}
	}
	// guides[e] is ensemble e's guide once the first phase is over (see below).
	guides := make([]*sampler.Guide, o.Ensembles)
	total := 0
	// advance runs n steps of every ensemble, each with its guide when it has one.
	advance := func(n int) error {
		for e := range ens {
			seed := rng.DeriveSeed(o.Seed, "fit/ensemble", uint64(e)<<32|uint64(total/chunk))
			so := sampler.Options{Steps: n, Seed: seed, Parallel: par, DEShare: deShare}
			if guides[e] != nil {
				so.DEShare, so.GuideShare, so.Guide = guidedDEShare, guideShare, guides[e]
			}
			ch, err := sampler.Run(ctx, m.LogPost, last[e], so)
			if err != nil {
				if errors.Is(err, sampler.ErrConfig) {
					return fmt.Errorf("fit: %w", err)
				}
				return err
			}
			appendChain(ens[e], ch)
			for w := range last[e] {
				last[e][w] = append([]float64(nil), ch.At(ch.Stored-1, w)...)
			}
		}
		total += n
		return nil
	}
	// Two phases. First the stretch and differential-evolution moves alone, from the ball,
	// until the chains are guideAfter autocorrelation times long; each ensemble's guide is
	// then fitted to the second half of its own chains (so the ensembles stay independent)
	// and frozen, and everything so far is burn-in. Then all three moves, until the chains
	// after burn-in are lengthPerTau autocorrelation times long. A problem that reaches that
	// length in the first phase (its last two thirds) stops there.
	burn := 0
	var taus []float64
	trusted := false
	// τ is estimated (an FFT per walker and parameter) only at checkpoints, a quarter of the
	// chain apart, and once trusted not before the chains could be long enough for it.
	nextCheck := chunk
	for total < o.MaxSteps {
		if err := advance(min(chunk, o.MaxSteps-total)); err != nil {
			return nil, nil, err
		}
		if total < nextCheck && total < o.MaxSteps {
			continue
		}
		guided := guides[0] != nil
		from := burn
		if !guided {
			from = total / burnShare
		}
		taus, trusted = tausOf(ens, dim, from, par)
		if trusted && float64(total-from) >= lengthPerTau*maxOf(taus) {
			burn = from
			break
		}
		if !guided && total >= minFirstPhase && float64(total) >= guideAfter*maxOf(taus) {
			if fitGuides(guides, ens, total/2) {
				burn = total
				nextCheck = total + max(chunk, int(lengthPerTau*maxOf(taus)/guideGain))
				continue
			}
		}
		// Each check costs an FFT per walker and parameter over the whole chain, so the
		// checks grow apart geometrically (a quarter of the chain at a time, at most a
		// quarter of overshoot in steps).
		nextCheck = max(total+chunk, total+(total-from)/4)
		if trusted {
			// The total at which the kept share reaches 50τ, if τ holds.
			need := from + int(lengthPerTau*maxOf(taus)) + 1
			if !guided {
				need = int(lengthPerTau*maxOf(taus)*burnShare/(burnShare-1)) + 1
			}
			nextCheck = max(nextCheck, min(need, o.MaxSteps))
		}
	}
	if guides[0] == nil || burn >= total {
		burn = total / burnShare
	}
	if taus == nil || !(burn < total) {
		taus, trusted = tausOf(ens, dim, burn, par)
	}
	tauMax := maxOf(taus)
	if !trusted || float64(total-burn) < lengthPerTau*tauMax {
		notes = append(notes, fmt.Sprintf("warning: the chains after burn-in are %d steps, shorter than %d autocorrelation times (%.4g steps): the posterior summaries are preliminary; raise max_steps", total-burn, lengthPerTau, lengthPerTau*tauMax))
	}
	thin := max(1, int(tauMax/2))
	notes = append(notes, fmt.Sprintf("sampling: %d ensembles of %d walkers, %d steps each, the first %d discarded as burn-in, thinned by %d (τ/2, τ = %.4g steps)", o.Ensembles, K, total, burn, thin, tauMax))
	if guides[0] != nil {
		notes = append(notes, fmt.Sprintf("sampling: after burn-in, %.0f %% of the steps drew from a Student-t guide fitted to each ensemble's own burn-in (independence moves, Tierney 1994), %.0f %% were differential-evolution moves and the rest stretch moves", 100*guideShare, 100*guidedDEShare))
	}

	// Diagnostics per sampled parameter.
	art.Names = m.columns()
	art.Sampled = dim
	art.Walkers, art.Steps, art.Burn, art.Thin, art.Ensembles = K, total, burn, thin, o.Ensembles
	for p := 0; p < dim; p++ {
		ess := 0.0
		for range ens {
			ess += sampler.EffectiveSamples(K, total-burn, taus[p])
		}
		rh, err := sampler.EnsembleRhat(ens, p, burn)
		if err != nil || math.IsNaN(rh) {
			rh = math.NaN()
		}
		art.Diag = append(art.Diag, Diagnostic{Tau: taus[p], ESS: ess, Rhat: rh})
	}
	acc := 0
	for _, ch := range ens {
		for _, a := range ch.Accepted {
			acc += a
		}
	}
	art.Acceptance = float64(acc) / float64(total*K*len(ens))

	// Thinned samples with derived columns; the best fit is the highest posterior density in
	// the documented parameters seen (Model.bestLogPost).
	for _, ch := range ens {
		for s := burn + thin - 1; s < ch.Stored; s += thin {
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

	// Per-transit times with the shape fixed at the best fit.
	times, err := m.transitTimes(best, o)
	if err != nil {
		return nil, nil, err
	}
	art.Times = times
	for j, pt := range times {
		timed := 0
		for _, t := range pt.Times {
			if t.Skipped == "" {
				timed++
			}
		}
		switch {
		case pt.Err != "":
			notes = append(notes, fmt.Sprintf("transit times of planet %s: %s", planetNames[j], pt.Err))
		default:
			notes = append(notes, fmt.Sprintf("transit times of planet %s: %d of %d transits timed with the shape fixed at the best fit; linear ephemeris χ² = %.1f for %d degrees of freedom (p = %.2g)",
				planetNames[j], timed, len(pt.Times), pt.Ephemeris.Chi2, pt.Ephemeris.Dof, pt.Ephemeris.PValue))
		}
	}
	return art, notes, nil
}

// setup selects the points near the predicted transits, builds the model over them and
// returns it with the artifact's frame and segment list, the start point, the start scale
// per sampled parameter and the notes so far.
func setup(lc *lightcurve.LightCurve, o Options) (m *Model, art *Artifact, x0, scale []float64, notes []string, err error) {
	fail := func(e error) (*Model, *Artifact, []float64, []float64, []string, error) {
		return nil, nil, nil, nil, nil, e
	}
	np := len(o.Signals)
	m = &Model{planets: np, jitter: o.Jitter}
	art = &Artifact{Frame: lc.Frame(), Window: o.Window}
	for _, name := range o.Eccentric {
		j := planetIndex(name)
		if j < 0 || j >= np {
			return fail(steps.Attrf("eccentric", "%q is not one of the %d planet(s) fitted (%s)", name, np, strings.Join(planetNames[:np], ", ")))
		}
		m.ecc[j] = true
	}
	for key := range o.Priors {
		if err := checkPriorKey(key); err != nil {
			return fail(steps.Attrf("priors", "key %q: %v", key, err))
		}
		if pl, _, ok := strings.Cut(key, "."); ok && planetIndex(pl) >= np {
			return fail(steps.Attrf("priors", "key %q: planet %s is not fitted (%d planet(s))", key, pl, np))
		}
	}
	bandSeen := map[string]bool{}
	for _, seg := range lc.Segments {
		bandSeen[seg.Band] = true
	}
	for band := range o.Limb {
		if band != "default" && !bandSeen[band] {
			return fail(steps.Attrf("limb_darkening", "band %q: no segment of the light curve has this band", band))
		}
	}

	// Points within Window search durations of a predicted mid-transit of any planet.
	// The selection is fixed before fitting so the likelihood is a smooth function.
	kept := 0
	sumW := make([]float64, np)
	sumWT := make([]float64, np)
	bandIndex := map[string]int{}
	for si := range lc.Segments {
		seg := &lc.Segments[si]
		var sd segData
		for i, t := range seg.Time {
			f, e := seg.Flux[i], seg.Err[i]
			if math.IsNaN(t) || math.IsInf(t, 0) || math.IsNaN(f) || math.IsInf(f, 0) || !(e > 0) || math.IsInf(e, 0) {
				return fail(steps.BadInputf("light_curve: segment %s, point %d: time %v, flux %v, error %v are not usable", seg.ID, i+1, t, f, e))
			}
			in := false
			for j, s := range o.Signals {
				if s.InTransit(t, 2*o.Window) {
					in = true
					sumW[j] += 1 / (e * e)
					sumWT[j] += t / (e * e)
				}
			}
			if in {
				sd.t = append(sd.t, t)
				sd.f = append(sd.f, f)
				sd.v = append(sd.v, e*e)
			}
		}
		if len(sd.t) == 0 {
			continue
		}
		b, ok := bandIndex[seg.Band]
		if !ok {
			if len(m.bands) == maxBands {
				return fail(steps.BadInputf("light_curve: more than %d distinct bands; the fit takes at most %d", maxBands, maxBands))
			}
			b = len(m.bands)
			bandIndex[seg.Band] = b
			m.bands = append(m.bands, seg.Band)
			lp, ok := o.Limb[seg.Band]
			if !ok {
				lp = o.Limb["default"]
			}
			m.ld = append(m.ld, lp)
		}
		sd.band = b
		sd.nsub = 1
		if o.Supersample && seg.Exposure > 0 && !math.IsInf(seg.Exposure, 0) {
			sigma := typicalError(sd.v)
			for _, s := range o.Signals {
				k := math.Sqrt(math.Max(s.Depth, 1e-6))
				sd.nsub = max(sd.nsub, subexposures(seg.Exposure, k*k, s.Duration*k/(1+k), sigma))
			}
			if o.nsub > 0 {
				sd.nsub = o.nsub
			}
		}
		exposure := seg.Exposure
		if !(exposure > 0) || math.IsInf(exposure, 0) {
			exposure = 0
		}
		if sd.nsub > 1 {
			sd.half = exposure / 2
		}
		sd.fine = make([]float64, len(sd.t)*sd.nsub)
		// SubexposureTimes with n = 1 returns the mid-times themselves.
		copy(sd.fine, subTimes(sd.t, exposure, sd.nsub))
		m.maxFine = max(m.maxFine, len(sd.fine))
		m.maxPoints = max(m.maxPoints, len(sd.t))
		m.segs = append(m.segs, sd)
		kept += len(sd.t)
		art.Segments = append(art.Segments, SegmentInfo{ID: seg.ID, Band: seg.Band, Exposure: seg.Exposure, Points: len(sd.t), NSub: sd.nsub})
	}
	for j := range o.Signals {
		if sumW[j] == 0 {
			return fail(steps.BadInputf("light_curve: no points within %g durations of any transit of signal %d (period %.6g d)", o.Window, j+1, o.Signals[j].Period))
		}
	}
	if kept < 10 {
		return fail(steps.BadInputf("light_curve: only %d points near the transits; at least 10 are needed", kept))
	}
	notes = append(notes, fmt.Sprintf("likelihood: %d points within %g search durations of a predicted mid-transit, in %d segment(s); the rest of the light curve is left out", kept, o.Window, len(m.segs)))
	for _, s := range art.Segments {
		notes = append(notes, fmt.Sprintf("exposure: segment %s, %.4g min, integrated with %d sub-exposure(s) per point (bound on the integration error: %g of the median point error)", s.ID, s.Exposure*1440, s.NSub, integrationShare))
	}

	// The full parameter vector with its supports and start values. Reference epochs near
	// the weighted centre; bounds on period and mid-time keep every modelled transit inside
	// the fixed windows.
	var start, step []float64
	add := func(p param, x0, sc float64) {
		m.params = append(m.params, p)
		start = append(start, x0)
		step = append(step, sc)
	}
	for j, s := range o.Signals {
		centre := sumWT[j] / sumW[j]
		n := math.Round((centre - s.Epoch) / s.Period)
		t0 := s.Epoch + n*s.Period
		nmax := 1.0
		for _, sd := range m.segs {
			for _, t := range sd.t {
				if s.InTransit(t, 2*o.Window) {
					nmax = math.Max(nmax, math.Abs(math.Round((t-t0)/s.Period)))
				}
			}
		}
		art.Reference = append(art.Reference, Reference{Transit: int64(n), Time: t0})
		dP := s.Duration / nmax
		k0 := math.Min(math.Sqrt(math.Max(s.Depth, 1e-6)), 0.9)
		pl := planetNames[j] + "."
		add(param{name: pl + "period", lo: math.Max(s.Period-dP, s.Period/2), hi: s.Period + dP}, s.Period, dP/10)
		add(param{name: pl + "t0", lo: t0 - s.Duration, hi: t0 + s.Duration}, t0, s.Duration/10)
		add(param{name: pl + "k", lo: 0, hi: 1}, k0, 0.2*k0)
		add(param{name: pl + "b", lo: 0, hi: 2}, startB, 0.1)
		hidden := !m.ecc[j]
		add(param{name: pl + "secosw", lo: -1, hi: 1, fixed: hidden}, 0, 0.1)
		add(param{name: pl + "sesinw", lo: -1, hi: 1, fixed: hidden}, 0, 0.1)
	}
	s0 := o.Signals[0]
	k0 := start[iK]
	aR0 := s0.Period / (math.Pi * s0.Duration) * math.Sqrt((1+k0)*(1+k0)-startB*startB)
	rho0 := math.Min(math.Max(DensityFromAxis(s0.Period, aR0), 2*densityLo), densityHi/2)
	add(param{name: "log10_star_density", lo: math.Log10(densityMin), hi: math.Log10(densityMax), log10: true,
		prior: Prior{Shape: LogUniform, A: densityLo, B: densityHi}}, math.Log10(rho0), 0.1)
	if d := o.Dilution; d != nil {
		m.dilution = true
		if d.Shape == Fixed {
			add(param{name: "dilution", fixed: true, value: d.A}, d.A, 0)
		} else {
			c := d.centre()
			add(param{name: "dilution", lo: 0, hi: math.MaxFloat64, prior: *d}, c, math.Min(d.width(), math.Max(c, 0.01)))
		}
	} else {
		add(param{name: "dilution", fixed: true}, 0, 0)
	}
	for _, band := range m.bands {
		q1, q2 := "q1", "q2"
		if band != "" {
			q1, q2 = "q1["+band+"]", "q2["+band+"]"
		}
		add(param{name: q1, lo: 0, hi: 1}, startQ1, 0.1)
		add(param{name: q2, lo: 0, hi: 1}, startQ2, 0.1)
	}
	for i, lp := range m.ld {
		if lp.U1Sigma > 0 {
			q1, q2 := transit.KippingFromQuadratic(lp.U1, lp.U2)
			if q1 > 0 && q1 < 1 && q2 > 0 && q2 < 1 {
				start[m.qIndex(i)], start[m.qIndex(i)+1] = q1, q2
			}
		}
	}
	if o.Jitter {
		for s := range m.segs {
			add(param{name: fmt.Sprintf("segment%d.ln_jitter", s+1), lo: math.Log(jitterLo), hi: math.Log(jitterHi)}, math.Log(1e-5), 1)
		}
	}

	// The workflow's priors replace the fit's own; the supports stay.
	g := m.global()
	for key, pr := range o.Priors {
		idx := g + gDensity
		if key != "star_density" {
			pl, par, _ := strings.Cut(key, ".")
			idx = perPlanet*planetIndex(pl) + map[string]int{"period": iPeriod, "k": iK, "b": iB}[par]
		}
		p := &m.params[idx]
		p.prior = pr
		v := pr.centre()
		if p.log10 {
			v = math.Log10(v)
		}
		if pr.Shape == Fixed {
			p.fixed, p.value, p.prior = true, v, Prior{}
			if !(v >= p.lo && v <= p.hi) {
				return fail(steps.Attrf("priors", "key %q: %s lies outside what the data allow for it (%.6g to %.6g)", key, pr, p.lo, p.hi))
			}
			start[idx] = v
			continue
		}
		if key == "star_density" || math.IsInf(p.logPrior(start[idx]), -1) {
			start[idx] = math.Min(math.Max(v, p.lo), p.hi)
		}
		w := pr.width()
		if p.log10 {
			w /= pr.centre() * math.Ln10
		}
		step[idx] = math.Min(step[idx], w)
	}
	rhoStart := math.Pow(10, start[g+gDensity])
	// Each planet whose k has the fit's own prior samples a depth-like δ in place
	// of k (see radius): at fixed δ, b changes the ingress but hardly the depth,
	// where at fixed k a larger b makes the transit shallower through the limb darkening.
	u1, u2 := transit.QuadraticFromKipping(start[m.qIndex(0)], start[m.qIndex(0)+1])
	for j := 0; j < np; j++ {
		kp := &m.params[perPlanet*j+iK]
		if _, user := o.Priors[planetNames[j]+".k"]; user || kp.fixed {
			continue
		}
		c, ok := darkening(start[perPlanet*j+iB], u1, u2)
		if !ok {
			continue
		}
		m.depthParam[j] = true
		kp.hi = math.Inf(1) // k ≤ 1 is enforced on k itself (radius)
		k0 := start[perPlanet*j+iK]
		start[perPlanet*j+iK], step[perPlanet*j+iK] = k0*k0/c, 0.4*k0*k0/c
	}
	// Each circular planet whose b is not fixed samples its chord coordinate in place of b
	// while the density is free (see Model.impact): the data measure each transit's
	// duration, and at fixed durations the shared density moves every planet's b at once, so
	// in chords that ridge runs along the density's own axis.
	for j := 0; j < np && !m.params[g+gDensity].fixed; j++ {
		bp := &m.params[perPlanet*j+iB]
		if m.ecc[j] || bp.fixed {
			continue
		}
		m.chordParam[j], m.bPrior[j] = true, bp.prior
		a := ScaledAxis(o.Signals[j].Period, rhoStart)
		b0 := start[perPlanet*j+iB]
		bs := math.Max(b0, startB)
		dw := 2 * bs * (a*a - 1) / ((a*a - bs*bs) * (a*a - bs*bs)) * step[perPlanet*j+iB] // |dw/db|·Δb
		// Every b in [0, 1 + k) has a chord in ((1 − (1+k)²)/(a² − (1+k)²), 1/a²], so the
		// stored coordinate is bounded only by impact.
		*bp = param{name: bp.name, lo: math.Inf(-1), hi: 1}
		start[perPlanet*j+iB], step[perPlanet*j+iB] = chord(b0, a), dw
	}
	// q1, q2 are sampled as logits (see Model.physical).
	for i := range m.bands {
		for _, idx := range []int{m.qIndex(i), m.qIndex(i) + 1} {
			q := start[idx]
			m.params[idx].logit, m.params[idx].lo, m.params[idx].hi = true, math.Inf(-1), math.Inf(1)
			start[idx], step[idx] = logit(q), step[idx]/(q*(1-q))
		}
	}
	for i := range m.params {
		p := &m.params[i]
		if p.fixed {
			p.value = start[i]
			continue
		}
		m.free = append(m.free, i)
		x0 = append(x0, start[i])
		scale = append(scale, step[i])
	}
	var pn []string
	for key, pr := range o.Priors {
		pn = append(pn, fmt.Sprintf("prior: %s %s", key, pr))
	}
	if o.Dilution != nil {
		pn = append(pn, fmt.Sprintf("prior: dilution %s", *o.Dilution))
	}
	for i, band := range m.bands {
		if lp := m.ld[i]; lp.U1Sigma > 0 {
			pn = append(pn, fmt.Sprintf("prior: band %q: u1 = %g ± %g, u2 = %g ± %g (Gaussian, sampled in q1, q2)", band, lp.U1, lp.U1Sigma, lp.U2, lp.U2Sigma))
		}
	}
	sort.Strings(pn)
	notes = append(notes, pn...)
	art.Priors = pn
	m.maxFine = max(m.maxFine, 1)
	if lp := m.LogPost(x0); math.IsInf(lp, 0) || math.IsNaN(lp) {
		return fail(steps.BadInputf("signals: the start values give no valid model (log posterior %v)", lp))
	}
	return m, art, x0, scale, notes, nil
}

// subexposures is the number N of sub-exposures per point for an exposure of length T, a
// transit of depth δ whose ingress lasts τ, and points of error σ: the least N for which a
// bound on the midpoint-rule error is below ε = integrationShare·σ, capped at maxSub. The
// bound is our derivation for a trapezoid (ingress a linear ramp of slope s = δ/τ): the
// midpoint rule is exact on the linear pieces; a sub-interval of width h = T/N holding one
// kink errs in its integral by at most s h²/8, and by no more when it holds both ends of a
// ramp shorter than h (error δ(h−τ)/2 ≤ s h²/8 since (h−2τ)² ≥ 0) or when a step-like ramp
// is reduced to δh/2; kinks in different sub-intervals err with opposite signs. Averaged
// over T: E ≤ min(δT/(8τN²), δ/(2N)), so N ≥ min(√(δT/(8τε)), δ/(2ε)). The error falls
// as 1/N² (Kipping 2010, MNRAS 408, 1758). τ is taken from the search's box (its duration
// times k/(1+k)), short of the true ingress, which errs on the safe side; the limb-darkened
// model is smoother than the trapezoid (model_test.go measures the real error).
func subexposures(exposure, depth, ingress, sigma float64) int {
	eps := integrationShare * sigma
	if !(exposure > 0) || !(depth > 0) || !(eps > 0) {
		return 1
	}
	n := math.Inf(1)
	if ingress > 0 {
		n = math.Sqrt(depth * exposure / (8 * ingress * eps))
	}
	n = math.Ceil(math.Min(n, depth/(2*eps)))
	return int(math.Max(1, math.Min(maxSub, n)))
}

// typicalError is the median point error √v of a segment.
func typicalError(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return math.Sqrt(s[len(s)/2])
}

// subTimes wraps transit.SubexposureTimes, with exposure 0 giving the mid-times.
func subTimes(t []float64, exposure float64, n int) []float64 {
	if n == 1 || exposure == 0 {
		return append([]float64(nil), t...)
	}
	return transit.SubexposureTimes(nil, t, exposure, n)
}

// optimum maximises the log posterior density in the documented parameters (Model.bestLogPost)
// by Nelder–Mead (gonum) in coordinates scaled so the initial simplex spans scale, restarting
// from the result; it returns the best point.
func optimum(m *Model, x0, scale []float64) ([]float64, float64) {
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
	for round := 0; round < 3; round++ {
		res, err := optimize.Minimize(optimize.Problem{Func: f}, y,
			&optimize.Settings{FuncEvaluations: 1000 * dim, Concurrent: 1,
				Converger: &optimize.FunctionConverge{Absolute: 1e-7, Iterations: 50 * dim}},
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
	for j := 0; j < m.planets; j++ {
		if !m.ecc[j] {
			continue
		}
		ic, is := -1, -1
		for i, f := range m.free {
			switch f {
			case perPlanet*j + iSecosw:
				ic = i
			case perPlanet*j + iSesinw:
				is = i
			}
		}
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

// fitGuides fits each ensemble's guide to its chains from step from on (sampler.FitGuide).
// It reports whether every ensemble has one, and leaves none when any fit fails.
func fitGuides(guides []*sampler.Guide, ens []*sampler.Chain, from int) bool {
	for e, ch := range ens {
		g, err := sampler.FitGuide([]*sampler.Chain{ch}, from, 1)
		if err != nil {
			clear(guides)
			return false
		}
		guides[e] = g
	}
	return true
}

// appendChain appends the stored steps of c to acc.
func appendChain(acc, c *sampler.Chain) {
	acc.Samples = append(acc.Samples, c.Samples...)
	acc.LogProb = append(acc.LogProb, c.LogProb...)
	acc.Stored += c.Stored
	acc.Steps += c.Steps
	for w, a := range c.Accepted {
		acc.Accepted[w] += a
	}
}

// tausOf is, per parameter, the largest autocorrelation time over the ensembles after burn,
// and whether every estimate is trusted.
func tausOf(ens []*sampler.Chain, dim, burn int, par func(n int, block func(i int))) ([]float64, bool) {
	taus := make([]float64, dim)
	ok := make([]bool, dim)
	// One block per parameter: each writes only its own entries, so the result does not
	// depend on how the blocks are scheduled.
	par(dim, func(p int) {
		ok[p] = true
		for _, ch := range ens {
			ac, err := sampler.AutoCorrTime(ch.Series(p, burn), 0)
			if err != nil {
				ok[p] = false
				continue
			}
			taus[p] = math.Max(taus[p], ac.Tau)
			ok[p] = ok[p] && ac.Trusted
		}
		if taus[p] < 1 {
			taus[p] = 1
		}
	})
	trusted := true
	for _, t := range ok {
		trusted = trusted && t
	}
	return taus, trusted
}

func maxOf(v []float64) float64 {
	m := 0.0
	for _, x := range v {
		m = math.Max(m, x)
	}
	return m
}

// columns names the columns of the artifact: the sampled parameters, the user-fixed ones
// (constant columns, so that readers find them by name), then the derived ones: the star's
// density, and per planet its depth k², a/R*, T14, and for eccentric orbits e and ω (deg).
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
	if i == m.global()+gDilution {
		return m.dilution
	}
	if i < m.global() {
		r := i % perPlanet
		return r != iSecosw && r != iSesinw
	}
	return true
}

// row returns the artifact row of the sampled vector x (see columns).
func (m *Model) row(x []float64) []float64 {
	full := m.expand(make([]float64, len(m.params)), x)
	rho, _, _, _ := m.physical(full)
	out := append([]float64(nil), x...)
	for j := 0; j < m.planets; j++ {
		// The columns hold k and b where the chain samples δ and the chord coordinate.
		if i := slices.Index(m.free, perPlanet*j+iK); i >= 0 && m.depthParam[j] {
			out[i] = full[perPlanet*j+iK]
		}
		if i := slices.Index(m.free, perPlanet*j+iB); i >= 0 && m.chordParam[j] {
			out[i] = full[perPlanet*j+iB]
		}
	}
	for i := range m.bands { // the columns hold q1, q2; the chain samples their logits
		for _, idx := range []int{m.qIndex(i), m.qIndex(i) + 1} {
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
	for j := 0; j < m.planets; j++ {
		p := full[perPlanet*j:]
		aR := ScaledAxis(p[iPeriod], rho)
		e, w := 0.0, 0.0
		if m.ecc[j] {
			e = p[iSecosw]*p[iSecosw] + p[iSesinw]*p[iSesinw]
			w = math.Atan2(p[iSesinw], p[iSecosw])
		}
		t14, err := astro.TotalDuration(p[iPeriod], aR, p[iK], p[iB], e, w)
		if err != nil {
			t14 = 0
		}
		out = append(out, p[iK]*p[iK], aR, t14)
		if m.ecc[j] {
			out = append(out, e, w*180/math.Pi)
		}
	}
	return out
}

// quantiles returns the 16th, 50th and 84th percentiles of v (sorted copy, linear
// interpolation between order statistics).
func quantiles(v []float64) (lo, mid, hi float64) {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return sampler.Quantile(s, 0.16), sampler.Quantile(s, 0.5), sampler.Quantile(s, 0.84)
}
