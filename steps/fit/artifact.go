package fit

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/fit/timing"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/lightcurve"
)

// SegmentInfo describes one segment that entered the likelihood.
type SegmentInfo struct {
	ID       string
	Band     string  // the segment's band; "" when unknown
	Exposure float64 // days
	Points   int     // points within the transit windows
	NSub     int     // sub-exposures per point
}

// Reference is a planet's reference epoch: the transit Transit periods after the search's
// epoch, the one nearest the weighted centre of the data; Time is its start value.
type Reference struct {
	Transit int64
	Time    float64
}

// Diagnostic judges one sampled parameter.
type Diagnostic struct {
	Tau  float64 // integrated autocorrelation time after burn-in, largest over ensembles, steps
	ESS  float64 // effective samples, all ensembles: Σ walkers·steps/τ
	Rhat float64 // rank-normalised split R-hat across ensembles (Vehtari et al. 2021)
}

// Artifact is the fit step's result.
type Artifact struct {
	Frame lightcurve.Frame
	// Window is the half-width, in search durations, of the stretches around each predicted
	// mid-transit whose points enter the likelihood.
	Window    float64
	Segments  []SegmentInfo
	Reference []Reference // per planet
	// Names lists the columns of Samples and Best: the Sampled parameters first (per planet
	// period d, t0 d, k, b, and secosw, sesinw = √e cos ω, √e sin ω for eccentric orbits;
	// then log10_star_density, dilution when sampled, q1, q2 per band — "q1[band]" for a
	// named band — and ln jitter per segment), then the parameters the workflow fixed
	// (constant columns), then the derived star_density g/cm³ and per planet the transit depth,
	// a_over_rstar, t14 (d) and, for eccentric orbits, e and omega (deg).
	Names   []string
	Sampled int
	// Priors lists, as the notes say them, the priors that differ from the fit's own.
	Priors []string
	// Samples holds the thinned post-burn-in draws of all ensembles, row-major, one row of
	// len(Names) values per draw.
	Samples                               []float64
	Best                                  []float64 // the highest-posterior point seen (optimiser or chain)
	BestLogPost                           float64
	Diag                                  []Diagnostic // per sampled parameter
	Acceptance                            float64      // mean acceptance fraction over walkers and ensembles
	Walkers, Steps, Burn, Thin, Ensembles int
	// Beta is the time-averaging factor of the best fit's residuals (Pont, Zucker & Queloz
	// 2006), NaN when it could not be measured; Inflated says the errors were multiplied by
	// it before sampling.
	Beta     float64
	Inflated bool
	// Times holds per planet the transit mid-times measured with the shape fixed at the best
	// fit, epochs counted from the planet's reference transit, and their linear ephemeris.
	Times []PlanetTimes
}

// Planets is the number of planets fitted.
func (a *Artifact) Planets() int { return len(a.Reference) }

// PlanetNames returns the letters the fit names its planets by, in signal order ("b", "c",
// …): the prefixes of their columns ("b.period") and of their figures.
func (a *Artifact) PlanetNames() []string {
	out := make([]string, a.Planets())
	for j := range out {
		out[j] = planetNames[j]
	}
	return out
}

// Column returns the draws of the named column, or nil.
func (a *Artifact) Column(name string) []float64 {
	j := a.column(name)
	if j < 0 {
		return nil
	}
	c := len(a.Names)
	out := make([]float64, len(a.Samples)/c)
	for i := range out {
		out[i] = a.Samples[i*c+j]
	}
	return out
}

// column is the index of the named column, or −1.
func (a *Artifact) column(name string) int {
	for j, n := range a.Names {
		if n == name {
			return j
		}
	}
	return -1
}

// Summary returns the median of the named column and σ = (p84 − p16)/2.
func (a *Artifact) Summary(name string) (median, sigma float64) {
	lo, mid, hi := quantiles(a.Column(name))
	return mid, (hi - lo) / 2
}

// Figures lists per planet its period, t0, k, b, depth, a/R* and T14, the star's density,
// and the worst sampling diagnostics.
func (a *Artifact) Figures() []steps.Figure {
	var figs []steps.Figure
	frame := a.Frame.Since()
	minESS := math.Inf(1)
	for _, d := range a.Diag {
		minESS = math.Min(minESS, d.ESS)
	}
	add := func(name, col, unit, doc string, factor float64) {
		lo, med, hi := quantiles(a.Column(col))
		sig := (hi - lo) / 2
		// The Monte Carlo error of a median from ESS effective draws: √(π/2) σ/√ESS for a
		// near-normal posterior (common practice); derived columns take the smallest ESS.
		ess := minESS
		if j := a.column(col); j >= 0 && j < a.Sampled {
			ess = a.Diag[j].ESS
		}
		mc := 0.0
		if ess > 0 && !math.IsInf(ess, 0) {
			mc = math.Sqrt(math.Pi/2) * sig * factor / math.Sqrt(ess)
		}
		figs = append(figs, steps.Figure{Name: name, Value: med * factor, Sigma: sig * factor, MCError: mc, Unit: unit,
			Lower: (med - lo) * factor, Upper: (hi - med) * factor,
			Doc: doc + "; posterior median, σ half the 16–84 % range"})
	}
	for j := range a.Reference {
		p := planetNames[j] + "."
		add(p+"period", p+"period", "d", "orbital period", 1)
		add(p+"t0", p+"t0", "d", fmt.Sprintf("mid-transit time at the reference epoch (transit %d after the search's epoch), %s", a.Reference[j].Transit, frame), 1)
		add(p+"k", p+"k", "", "radius ratio Rp/R*", 1)
		add(p+"b", p+"b", "", "impact parameter", 1)
		add(p+"depth", p+"depth", "ppm", "transit depth: the fraction of the light lost at mid-transit, with the limb darkening of the first band and any fitted dilution (k² only for a central transit without limb darkening; a grazing transit is shallower)", 1e6)
		ecc := a.column(p+"e") >= 0
		if ecc {
			add(p+"a_over_rstar", p+"a_over_rstar", "", "a/R* from the star's density and the period (Kepler's third law)", 1)
			add(p+"t14", p+"t14", "h", "first-to-last-contact duration of the eccentric orbit (Winn 2010)", 24)
			add(p+"e", p+"e", "", "orbital eccentricity (uniform prior in e and ω)", 1)
			add(p+"omega", p+"omega", "deg", "argument of periastron", 1)
		} else {
			add(p+"a_over_rstar", p+"a_over_rstar", "", "a/R* from the star's density and the period (Kepler's third law, circular orbit)", 1)
			add(p+"t14", p+"t14", "h", "first-to-last-contact duration, circular orbit (Winn 2010)", 24)
		}
	}
	densityDoc := "mean stellar density from the transit shape (log-uniform prior 0.01–100 g/cm3)"
	for _, p := range a.Priors {
		if strings.HasPrefix(p, "prior: star_density ") {
			densityDoc = "mean stellar density from the transit shape and the " + strings.TrimPrefix(p, "prior: ")
		}
	}
	add("star_density", "star_density", "g/cm3", densityDoc, 1)
	if a.column("dilution") >= 0 {
		add("dilution", "dilution", "", "flux of other stars over the target's in the light curve's band, D in (F + D)/(1 + D)", 1)
	}
	used := 0
	for _, s := range a.Segments {
		used += s.Points
	}
	figs = append(figs, steps.Figure{Name: "window.points", Value: float64(used),
		Doc: fmt.Sprintf("points in the likelihood: those within %g search durations of a predicted mid-transit; the rest of the light curve is not used", a.Window)})
	var maxTau, maxRhat float64 = 0, 0
	for _, d := range a.Diag {
		maxTau = math.Max(maxTau, d.Tau)
		if math.IsNaN(d.Rhat) || d.Rhat > maxRhat {
			maxRhat = d.Rhat
		}
	}
	figs = append(figs,
		steps.Figure{Name: "diag.max_tau", Value: maxTau, Unit: "steps", Doc: "largest integrated autocorrelation time over the sampled parameters"},
		steps.Figure{Name: "diag.min_ess", Value: minESS, Doc: "smallest effective sample size over the sampled parameters"},
		steps.Figure{Name: "diag.max_rhat", Value: maxRhat, Doc: "largest rank-normalised split R-hat across ensembles (Vehtari et al. 2021); near 1 when they agree",
			Reason: "R-hat needs at least two ensembles, each with enough steps after burn-in"},
		steps.Figure{Name: "diag.acceptance", Value: a.Acceptance, Doc: "mean fraction of accepted stretch moves"},
	)
	betaDoc := "time-averaging factor β of the best fit's residuals over bins of 10 min to a transit duration (Pont, Zucker & Queloz 2006); 1 for white noise"
	if a.Inflated {
		betaDoc += "; the errors were multiplied by it before sampling"
	}
	figs = append(figs, steps.Figure{Name: "noise.beta", Value: a.Beta, Doc: betaDoc,
		Reason: "the best fit's residuals are too few or too short to be binned from 10 minutes to a transit duration"})
	return append(figs, a.timeFigures()...)
}

// The levels above which the fit's diagnostics give a caution.
const (
	// betaCaution is the β factor of the residuals above which the fit cautions that the
	// posterior widths may be too narrow (common practice).
	betaCaution = 1.2
	// rhatCaution is the rank-normalised split R-hat above which the ensembles are taken to
	// disagree: Vehtari et al. (2021, Bayesian Analysis 16, 667) recommend R-hat < 1.01.
	rhatCaution = 1.01
)

// Cautions says in plain sentences what makes the fit's numbers doubtful, from what the
// artifact stores (so a reused fit says it too): residuals with red noise the errors do not
// carry, chains shorter than lengthPerTau autocorrelation times, ensembles that disagree,
// and transit times that scatter about the linear ephemeris.
func (a *Artifact) Cautions() []string {
	var c []string
	if a.Beta > betaCaution && !a.Inflated {
		c = append(c, fmt.Sprintf("The best fit's residuals binned over 10 min to a transit duration scatter %.2g× more than white noise would (β, Pont, Zucker & Queloz 2006): the posterior widths may be too narrow. inflate_by_beta = true multiplies the errors by β.", a.Beta))
	}
	tau, rhat, worst := 0.0, 0.0, -1
	for j, d := range a.Diag {
		if math.IsNaN(d.Tau) {
			tau = math.NaN()
		} else if !math.IsNaN(tau) {
			tau = math.Max(tau, d.Tau)
		}
		if d.Rhat > rhat {
			rhat, worst = d.Rhat, j
		}
	}
	if kept := a.Steps - a.Burn; len(a.Diag) > 0 && !(float64(kept) >= lengthPerTau*tau) {
		c = append(c, fmt.Sprintf("The chains after burn-in are %d steps, shorter than %d autocorrelation times (%.4g steps): the posterior summaries are preliminary; raise max_steps.", kept, lengthPerTau, lengthPerTau*tau))
	}
	if rhat > rhatCaution && worst < len(a.Names) {
		c = append(c, fmt.Sprintf("The independently started ensembles disagree: R-hat of %s is %.4g, above %g (Vehtari et al. 2021), so the posterior may not be fully explored; raise max_steps or look for a second mode.", a.Names[worst], rhat, rhatCaution))
	}
	for j, pt := range a.Times {
		if pt.Err == "" && pt.Ephemeris.Caution != "" && j < len(planetNames) {
			c = append(c, fmt.Sprintf("Planet %s: %s.", planetNames[j], strings.TrimSuffix(pt.Ephemeris.Caution, ".")))
		}
	}
	return c
}

// timeFigures lists per planet its linear ephemeris from the per-transit times and, per
// timed transit, the mid-time and its O−C.
func (a *Artifact) timeFigures() []steps.Figure {
	var figs []steps.Figure
	frame := a.Frame.Since()
	for j, pt := range a.Times {
		p := planetNames[j] + "."
		timed := 0
		for _, t := range pt.Times {
			if t.Skipped == "" {
				timed++
			}
		}
		figs = append(figs, steps.Figure{Name: p + "timing.transits", Value: float64(timed),
			Doc: fmt.Sprintf("transits timed with the shape fixed at the best fit, of %d with points in the fitted windows", len(pt.Times))})
		if pt.Err != "" {
			continue
		}
		e := pt.Ephemeris
		figs = append(figs,
			steps.Figure{Name: p + "timing.period", Value: e.Period, Sigma: e.SigmaPeriod, Unit: "d", Doc: "period of the weighted linear ephemeris through the transit times"},
			steps.Figure{Name: p + "timing.t_ref", Value: e.TRef, Sigma: e.SigmaTRef, Unit: "d",
				Doc: fmt.Sprintf("mid-time of transit %d of the linear ephemeris (nearly uncorrelated with its period), %s", e.RefEpoch, frame)},
			steps.Figure{Name: p + "timing.chi2", Value: e.Chi2, Doc: fmt.Sprintf("χ² of the transit times about the linear ephemeris, %d degrees of freedom", e.Dof)},
			steps.Figure{Name: p + "timing.p_value", Value: e.PValue, Doc: "probability of a χ² at least this large for a strictly periodic orbit; below 0.01 a caution is printed",
				Reason: "two transit times fix the linear ephemeris exactly, leaving no degree of freedom to test it"},
		)
		byEpoch := map[int64]timing.OC{}
		for _, r := range e.Rows {
			byEpoch[r.Epoch] = r
		}
		for _, t := range pt.Times {
			r, ok := byEpoch[t.Epoch]
			if t.Skipped != "" || !ok {
				continue
			}
			n := p + TransitName(t.Epoch) + "."
			figs = append(figs,
				steps.Figure{Name: n + "time", Value: t.Time, Sigma: t.Sigma(), Unit: "d", Doc: "mid-time of this transit, " + frame},
				steps.Figure{Name: n + "o_minus_c", Value: r.OC, Sigma: r.SigmaOC, Unit: "min", Doc: "observed minus calculated mid-time against the linear ephemeris"})
		}
	}
	return figs
}

// TransitName names the transit epoch transits after the planet's reference transit in
// figure names, without a sign that could be read as a hyphen or a minus: "transit0" for
// the reference transit, "transit_after3" for the third after it and "transit_before3" for
// the third before it.
func TransitName(epoch int64) string {
	switch {
	case epoch > 0:
		return "transit_after" + strconv.FormatInt(epoch, 10)
	case epoch < 0:
		return "transit_before" + strconv.FormatUint(uint64(-epoch), 10)
	}
	return "transit0"
}

const (
	tag    = "fit"
	format = 3
)

// Encode returns the canonical encoding.
func (a *Artifact) Encode() []byte {
	w := codec.NewWriter(tag, format)
	a.Frame.Write(w)
	w.Float(a.Window)
	w.Uint64(uint64(len(a.Segments)))
	for _, s := range a.Segments {
		w.String(s.ID)
		w.String(s.Band)
		w.Float(s.Exposure)
		w.Int(int64(s.Points))
		w.Int(int64(s.NSub))
	}
	w.Uint64(uint64(len(a.Reference)))
	for _, r := range a.Reference {
		w.Int(r.Transit)
		w.Float(r.Time)
	}
	w.Strings(a.Names)
	w.Int(int64(a.Sampled))
	w.Strings(a.Priors)
	w.Floats(a.Samples)
	w.Floats(a.Best)
	w.Float(a.BestLogPost)
	w.Uint64(uint64(len(a.Diag)))
	for _, d := range a.Diag {
		w.Float(d.Tau)
		w.Float(d.ESS)
		w.Float(d.Rhat)
	}
	w.Float(a.Acceptance)
	for _, v := range []int{a.Walkers, a.Steps, a.Burn, a.Thin, a.Ensembles} {
		w.Int(int64(v))
	}
	w.Float(a.Beta)
	w.Bool(a.Inflated)
	w.Uint64(uint64(len(a.Times)))
	for _, pt := range a.Times {
		w.String(pt.Err)
		w.Uint64(uint64(len(pt.Times)))
		for _, t := range pt.Times {
			w.Int(t.Epoch)
			w.Floats([]float64{t.Predicted, t.Time, t.Shift, t.ErrLow, t.ErrHigh, t.Chi2, t.Scale})
			w.Int(int64(t.Points))
			w.Int(int64(t.InTransit))
			w.String(t.Skipped)
		}
		e := pt.Ephemeris
		w.Floats([]float64{e.T0, e.Period, e.SigmaT0, e.SigmaPeriod, e.Cov, e.TRef, e.SigmaTRef, e.Chi2, e.PValue})
		w.Int(e.RefEpoch)
		w.Int(int64(e.Dof))
		w.String(e.Caution)
		w.Uint64(uint64(len(e.Rows)))
		for _, r := range e.Rows {
			w.Int(r.Epoch)
			w.Floats([]float64{r.Time, r.Sigma, r.OC, r.SigmaOC})
		}
	}
	return w.Bytes()
}

// Decode reads an artifact back; truncated, foreign or inconsistent bytes are an error.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads an artifact written by Encode.
func Decode(b []byte) (*Artifact, error) {
	r := codec.NewReader(b, tag, format)
	a := &Artifact{}
	a.Frame = lightcurve.ReadFrame(r)
	a.Window = r.Float()
	ns, err := count(r, 4096, "segments")
	if err != nil {
		return nil, err
	}
	for i := uint64(0); i < ns; i++ {
		a.Segments = append(a.Segments, SegmentInfo{ID: r.String(), Band: r.String(), Exposure: r.Float(), Points: int(r.Int()), NSub: int(r.Int())})
	}
	np, err := count(r, maxPlanets, "planets")
	if err != nil {
		return nil, err
	}
	for i := uint64(0); i < np; i++ {
		a.Reference = append(a.Reference, Reference{Transit: r.Int(), Time: r.Float()})
	}
	a.Names = r.Strings()
	a.Sampled = int(r.Int())
	a.Priors = r.Strings()
	a.Samples = r.Floats()
	a.Best = r.Floats()
	a.BestLogPost = r.Float()
	nd := r.Uint64()
	if nd > uint64(len(a.Names)) {
		return nil, fmt.Errorf("fit artifact: %d diagnostics for %d columns", nd, len(a.Names))
	}
	for i := uint64(0); i < nd; i++ {
		a.Diag = append(a.Diag, Diagnostic{Tau: r.Float(), ESS: r.Float(), Rhat: r.Float()})
	}
	a.Acceptance = r.Float()
	for _, p := range []*int{&a.Walkers, &a.Steps, &a.Burn, &a.Thin, &a.Ensembles} {
		*p = int(r.Int())
	}
	a.Beta = r.Float()
	a.Inflated = r.Bool()
	npt, err := count(r, maxPlanets, "planets with transit times")
	if err != nil {
		return nil, err
	}
	for i := uint64(0); i < npt; i++ {
		var pt PlanetTimes
		pt.Err = r.String()
		nt, err := count(r, 1<<20, "transit times")
		if err != nil {
			return nil, err
		}
		for k := uint64(0); k < nt; k++ {
			t := timing.TransitTime{Epoch: r.Int()}
			v, err := floats(r, 7, "a transit time")
			if err != nil {
				return nil, err
			}
			t.Predicted, t.Time, t.Shift, t.ErrLow, t.ErrHigh, t.Chi2, t.Scale = v[0], v[1], v[2], v[3], v[4], v[5], v[6]
			t.Points, t.InTransit = int(r.Int()), int(r.Int())
			t.Skipped = r.String()
			pt.Times = append(pt.Times, t)
		}
		e := &pt.Ephemeris
		v, err := floats(r, 9, "an ephemeris")
		if err != nil {
			return nil, err
		}
		e.T0, e.Period, e.SigmaT0, e.SigmaPeriod, e.Cov, e.TRef, e.SigmaTRef, e.Chi2, e.PValue = v[0], v[1], v[2], v[3], v[4], v[5], v[6], v[7], v[8]
		e.RefEpoch = r.Int()
		e.Dof = int(r.Int())
		e.Caution = r.String()
		nr, err := count(r, 1<<20, "O−C rows")
		if err != nil {
			return nil, err
		}
		for k := uint64(0); k < nr; k++ {
			oc := timing.OC{Epoch: r.Int()}
			v, err := floats(r, 4, "an O−C row")
			if err != nil {
				return nil, err
			}
			oc.Time, oc.Sigma, oc.OC, oc.SigmaOC = v[0], v[1], v[2], v[3]
			e.Rows = append(e.Rows, oc)
		}
		a.Times = append(a.Times, pt)
	}
	if err := r.Err(); err != nil {
		return nil, fmt.Errorf("fit artifact: %w", err)
	}
	c := len(a.Names)
	if c == 0 || len(a.Samples)%c != 0 || len(a.Best) != c || a.Sampled > c || len(a.Diag) != a.Sampled {
		return nil, errors.New("fit artifact: columns, samples, best fit and diagnostics disagree")
	}
	return a, nil
}

// count reads a list's length, refusing one beyond limit (damaged or foreign bytes).
func count(r *codec.Reader, limit uint64, what string) (uint64, error) {
	n := r.Uint64()
	if n > limit {
		return 0, fmt.Errorf("fit artifact: %d %s", n, what)
	}
	return n, nil
}

// floats reads a group of exactly n numbers, what naming it in the error.
func floats(r *codec.Reader, n int, what string) ([]float64, error) {
	v := r.Floats()
	if len(v) != n {
		return nil, fmt.Errorf("fit artifact: %s is damaged", what)
	}
	return v, nil
}
