// Package rotation models a spotted star's rotational modulation as a periodic signal, so
// that a detrend can divide it out before its sliding window removes what is left. A star
// that turns in a few hours changes its light faster than any window that keeps a transit
// can follow; but spots rotate with the star, so its light repeats from one turn to the
// next, slowly changing as the spots grow, decay and drift. The model is a harmonic series
// in the rotation phase whose coefficients are cubic B-splines in time, with knots a few
// rotations apart: a varying-coefficient model (Hastie & Tibshirani 1993, JRSS B 55, 757,
// from memory), linear in its coefficients and fitted by weighted least squares on banded
// normal equations. A transit that does not share the rotation's period falls at a
// different rotation phase each time, so the model, which averages each phase over several
// turns, takes in little of it; stretches lying well below the model (transits, eclipses)
// are left out of its fit, and flares lose their weight, as robust reweighting gives them.
//
// It is plain Go over slices: no workflow files, no light-curve type. The detrend kind
// (steps/detrend) decides when to use it. Main entry points: FindPeriod, WhiteNoise, Fit.
package rotation

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mathext"

	"dipline/steps/detrend/robust"
	"dipline/steps/internal/parallel"
)

// Series is one gap-free stretch of photometry. Use, when not nil, leaves out of the fit
// the points where it is false (masked transits); points with a flux or error that is not
// finite, or an error that is not positive, are left out too. The model is evaluated at
// every point.
type Series struct {
	Time []float64 // days, sorted, finite
	Flux []float64
	Err  []float64 // nil: equal weights
	Use  []bool
}

// Options set Fit; a zero field takes its default.
type Options struct {
	// Period is the rotation period in days (required).
	Period float64
	// KnotSpacing is the widest spacing of the coefficients' knots in days (required), and
	// Halvings how many times it may be halved when finer knots fit significantly better:
	// the time over which the model lets the spots change.
	KnotSpacing float64
	Halvings    int
	// MinKnotSpacing is the narrowest spacing a halving may reach in days: a series whose
	// knots would come closer keeps its knots at the finer levels.
	MinKnotSpacing float64
	// MaxHarmonics is the most harmonics tried; DefaultMaxHarmonics.
	MaxHarmonics int
	// FalseAlarm is the probability, per harmonic tested, that white noise passes the
	// test that keeps it; DefaultFalseAlarm.
	FalseAlarm float64
	// Iterations is the number of fits: the first plain, each later one reweighted by the
	// previous residuals and without the dips they show; DefaultIterations.
	Iterations int
	// DipBox is the width in days of the sliding box whose mean residual marks a dip
	// (required), and DipSigma how many of its standard errors below the model it must lie
	// (DefaultDipSigma).
	DipBox, DipSigma float64
	// Noise is the white noise of one point relative to the flux (WhiteNoise), against
	// which Model.Explained is measured; 0 leaves Explained at 0.
	Noise float64
}

// Defaults of Options, each with its reason.
const (
	// DefaultMaxHarmonics: a single dark spot's light, a clipped cosine of the rotation
	// phase, has harmonics falling as 1/k² (its Fourier series, common practice), so the
	// sixth carries under 4 % of the fundamental's amplitude; limb darkening and the spot's
	// size round it further.
	DefaultMaxHarmonics = 6
	// DefaultFalseAlarm keeps a harmonic when white noise would pass its test once in a
	// thousand tries, the level at which the star's own periods are kept
	// (periodogram.DefaultFalseAlarm).
	DefaultFalseAlarm = 1e-3
	// DefaultIterations is one plain fit and three reweighted ones, the default of R's
	// loess for its robust family (loess.control(iterations = 4), from R's documentation),
	// as the detrend's local polynomial.
	DefaultIterations = 4
	// DefaultDipSigma marks a stretch as a dip when its mean lies 3 standard errors below
	// the model: white noise does so in 0.13 % of boxes (one-sided normal tail, common
	// practice), which costs the fit a box or two of points a month.
	DefaultDipSigma = 3.0
	// FlareSigma sets a point aside as in a flare when it lies this many robust standard
	// deviations above the model: white noise does so in 0.13 % of points (one-sided normal
	// tail, common practice). Flares are set aside asymmetrically, before the rotation's
	// harmonics are fitted (a common practice for flaring M dwarfs): a flare is a rise with
	// no counterpart below, and a plain fit that takes one in grows a narrow bump at its
	// rotation phase, repeated every turn, whose shortfall one rotation away the robust
	// weights and the dip marks then leave out of the fit, so it feeds itself.
	FlareSigma = 3.0
	// flareTail is the level, in robust standard deviations, above which the mean of the
	// next flareLook points must stay for a flare's decay to go on: a decay of 5–30
	// minutes from a few per cent takes a couple of hours to sink into 800 ppm of noise.
	// White noise after a lone high point carries it on with a probability of 4 % (the
	// mean of 3 normal points above 1 σ: 1.73 of its σ, common practice).
	flareTail = 1.0
	flareLook = 3
	// flareAfter and flareBefore widen each flare's stretch by points after and before it,
	// the end of a decay lost in the noise and the fast rise.
	flareAfter, flareBefore = 3, 1
	// FlarePeak is the height, in robust standard deviations, a stretch must reach to be
	// set aside as a flare at all: white noise reaches 5 σ in 3 of 10 million points
	// (common practice), never in a month of 2-minute data. Setting aside lower rises bent
	// the model on spotted stars that flare not at all (a one-day rotator of the spotted
	// grid then gave a false 1.5 d signal without a caution).
	FlarePeak = 5.0
	// flarePasses is the most fits made only to find the flares, before the robust ones.
	flarePasses = 4
	// MinCycles is the fewest rotations a stretch must span to be fitted: over less, a
	// harmonic series and a slow curve cannot be told apart.
	MinCycles = 2.0
	// shapePhases is the number of rotation phases at which a knot interval's periodic
	// shape is evaluated: a sixth harmonic is then sampled 60 times per cycle.
	shapePhases = 360
	// bisquareScale is the biweight's cut in median absolute residuals (Cleveland 1979).
	bisquareScale = 6.0
)

// Model is the fitted rotation model and what it says about the star.
type Model struct {
	Period float64 // days
	// KnotSpacing is the widest spacing of the knots chosen, in days: Options.KnotSpacing,
	// widened in each series until a whole number of intervals fills it (less than twice as
	// wide), then halved as often as finer knots fitted significantly better. FinerAlarm is
	// the false-alarm probability of the improvement the next finer knots gave, which was
	// not taken (NaN when no finer knots were tried).
	KnotSpacing, FinerAlarm float64
	// Harmonics is the number of harmonics kept: the highest whose test passed. 0 when none
	// did: the light holds nothing periodic at Period.
	Harmonics int
	// Values holds, per series, the model at every point: the star's flux as the model
	// gives it. A series that could not be fitted (Fitted false) holds NaN.
	Values [][]float64
	Fitted []bool
	// Amplitudes[k−1] is the semi-amplitude of harmonic k relative to the star's level,
	// and PeakToPeak the periodic part's full range relative to the level: each the median
	// over the knot intervals, weighted by their points.
	Amplitudes []float64
	PeakToPeak float64
	// LowShare is the share of the rotation phase in which the periodic part lies below
	// half-way between its extremes (median over the knot intervals): 1/2 for a sinusoid,
	// 1/3 for one dark spot seen half the time, about the duty cycle for a transit or an
	// eclipse, which a rotation model would swallow.
	LowShare float64
	// Before and Residual are the robust scatter (1.4826 × MAD) of the relative residuals
	// of the usable points outside dips about the level alone (the model without
	// harmonics) and about the model; Explained is the share of the star's variance above
	// the white noise the harmonics remove, (Before² − Residual²)/(Before² − Noise²),
	// within [0, 1]. The robust scatter leaves flares out of both: a flare star's bursts
	// are no variability a rotation model explains. (For a sinusoid of semi-amplitude A
	// it is 1.05·A against an rms of 0.71·A, so a rotation's share is if anything
	// overstated, never a flare's.)
	Before, Residual, Explained float64
	// Points is the number of points fitted; Dips the points left out of the fit as lying
	// in a dip below the model, in DipStretches stretches; FlarePoints the points set aside
	// as lying in a flare above it (FlareSigma), in stretches of which Flares rose above
	// FlarePeak robust standard deviations.
	Points, Dips, DipStretches int
	FlarePoints, Flares        int
}

// Fit fits the rotation model to every series that spans at least MinCycles rotations.
//
// Each series gets its own knots and coefficients. The knots are first KnotSpacing apart or
// a little more, so that a whole number of intervals fills the series; then, up to Halvings
// times, half as far apart (each finer set holds the coarser one's knots, so the coarser
// model is nested in the finer), as long as the finer knots fit significantly better: the
// χ² they remove, with the same weights and harmonics, over the scatter per degree of
// freedom the finer model leaves, is χ² with as many degrees of freedom as they add
// coefficients for white noise (the F-test of nested linear models with a large
// denominator, common practice), and a finer set is taken when its false-alarm probability
// is under FalseAlarm. A star whose spots do not change keeps the widest knots, whose
// coefficients average the most turns: a model with more freedom than the star needs takes
// in part of the noise on a transit's time scale, and a search after it would overstate
// the transits' signal to noise.
//
// At each knot spacing the number of harmonics is one for all series, chosen in each
// iteration by testing each harmonic k ≤ MaxHarmonics against the model with k − 1, pooled
// over the series likewise (2·(splines) degrees of freedom), the highest k whose test passes
// kept. After each fit but the last, points get biweight weights from their residuals
// (flares fall out) and the stretches lying in a dip below the model are left out of the
// next fit: every point at the centre of a box of DipBox whose mean relative residual lies
// DipSigma standard errors below zero (the errors from the robust scatter of the residuals),
// with the box's other points. par spreads the series over workers (nil: serially); the
// result does not depend on it.
func Fit(series []Series, o Options, par parallel.Func) (Model, error) {
	if !(o.Period > 0) || math.IsInf(o.Period, 0) || !(o.KnotSpacing > 0) || math.IsInf(o.KnotSpacing, 0) || !(o.DipBox > 0) || o.Halvings < 0 {
		return Model{}, fmt.Errorf("rotation: period %v d, knot spacing %v d and dip box %v d must be positive and finite, and halvings (%d) not negative", o.Period, o.KnotSpacing, o.DipBox, o.Halvings)
	}
	if o.MaxHarmonics <= 0 {
		o.MaxHarmonics = DefaultMaxHarmonics
	}
	if o.FalseAlarm == 0 {
		o.FalseAlarm = DefaultFalseAlarm
	}
	if o.Iterations <= 0 {
		o.Iterations = DefaultIterations
	}
	if o.DipSigma == 0 {
		o.DipSigma = DefaultDipSigma
	}
	if par == nil {
		par = func(n int, f func(int)) {
			for i := 0; i < n; i++ {
				f(i)
			}
		}
	}
	var best *level
	finer := math.NaN()
	for h := 0; h <= o.Halvings; h++ {
		lv, err := fitLevel(series, o, h, par)
		if err != nil {
			if best == nil {
				return Model{}, err
			}
			break
		}
		if best != nil && sameKnots(best, lv) {
			break
		}
		if best != nil {
			alarm := finerAlarm(best, lv, par)
			if !(alarm < o.FalseAlarm) {
				finer = alarm
				break
			}
		}
		best = lv
	}
	m := Model{Period: o.Period, Harmonics: best.k, FinerAlarm: finer, Values: make([][]float64, len(series)), Fitted: make([]bool, len(series))}
	for i, s := range series {
		f := best.fs[i]
		if f == nil {
			v := make([]float64, len(s.Time))
			for j := range v {
				v[j] = math.NaN()
			}
			m.Values[i] = v
			continue
		}
		m.Fitted[i] = true
		m.Values[i] = f.model
		m.KnotSpacing = max(m.KnotSpacing, f.h)
	}
	m.describe(best.fitted(), o.Noise)
	return m, nil
}

// level is the fit at one knot spacing: per series its fitter (nil when not fitted), and
// the harmonics kept.
type level struct {
	fs []*fitter
	k  int
}

// fitted lists the fitters of the series that were fitted.
func (lv *level) fitted() []*fitter {
	var out []*fitter
	for _, f := range lv.fs {
		if f != nil {
			out = append(out, f)
		}
	}
	return out
}

// fitLevel fits the model with the knot intervals of every series halved h times from the
// widest.
func fitLevel(series []Series, o Options, h int, par parallel.Func) (*level, error) {
	lv := &level{fs: make([]*fitter, len(series))}
	for i, s := range series {
		lv.fs[i] = newFitter(s, o, h)
	}
	fs := lv.fitted()
	if len(fs) == 0 {
		return nil, fmt.Errorf("rotation: no stretch of the light curve spans %g rotations of %.4g d with enough points", MinCycles, o.Period)
	}
	// Flares first: fit, set aside what rises above the model, and again, until the set
	// aside no longer changes, so that no flare shapes the harmonics kept or the robust
	// weights and dips that follow.
	for pass := 0; pass < flarePasses; pass++ {
		par(len(fs), func(i int) { fs[i].solveAll() })
		k, err := chooseHarmonics(fs, o.FalseAlarm)
		if err != nil {
			return nil, err
		}
		changed := make([]bool, len(fs))
		par(len(fs), func(i int) {
			fs[i].evaluate(fs[i].model, k)
			changed[i] = fs[i].markFlares()
		})
		any := false
		for _, c := range changed {
			any = any || c
		}
		if !any {
			break
		}
	}
	for it := 0; it < o.Iterations; it++ {
		par(len(fs), func(i int) { fs[i].solveAll() })
		k, err := chooseHarmonics(fs, o.FalseAlarm)
		if err != nil {
			return nil, err
		}
		lv.k = k
		last := it == o.Iterations-1
		par(len(fs), func(i int) {
			fs[i].evaluate(fs[i].model, k)
			if !last {
				fs[i].markFlares()
				fs[i].reweigh(o.DipBox, o.DipSigma)
			}
		})
	}
	return lv, nil
}

// sameKnots says whether two levels have the same knots in every series.
func sameKnots(a, b *level) bool {
	for i := range a.fs {
		if (a.fs[i] == nil) != (b.fs[i] == nil) || a.fs[i] != nil && a.fs[i].nInt != b.fs[i].nInt {
			return false
		}
	}
	return true
}

// finerAlarm is the false-alarm probability of the finer knots' improvement over the
// coarser ones (see Fit): the coarser model refitted with the finer one's weights and
// harmonics, against the finer one. 1 when the two did not fit the same series.
func finerAlarm(coarse, fine *level, par parallel.Func) float64 {
	k := fine.k
	t := 2*k + 1
	pairs := make([][2]*fitter, 0, len(fine.fs))
	for i, f := range fine.fs {
		c := coarse.fs[i]
		if (c == nil) != (f == nil) {
			return 1
		}
		if f != nil {
			cc := *c
			cc.rho, cc.dip, cc.flare = f.rho, f.dip, f.flare
			pairs = append(pairs, [2]*fitter{&cc, f})
		}
	}
	par(len(pairs), func(i int) { pairs[i][0].solveAll() })
	var dchi, chi float64
	added, dof := 0, 0
	for _, p := range pairs {
		c, f := p[0], p[1]
		if !c.ok[k] || !f.ok[k] {
			return 1
		}
		dchi += c.chi[k] - f.chi[k]
		chi += f.chi[k]
		added += (f.nSpl - c.nSpl) * t
		dof += f.n - f.nSpl*t
	}
	if dof <= 0 || !(chi > 0) || added <= 0 {
		return 1
	}
	x := dchi / (chi / float64(dof))
	if !(x > 0) {
		return 1
	}
	return mathext.GammaIncRegComp(float64(added)/2, x/2)
}

// fitter is one series' fit: its knots, the weights and the normal equations.
type fitter struct {
	s          Series
	period     float64
	t0, h      float64 // first knot, knot spacing
	nInt, nSpl int     // knot intervals, splines (nInt + 3)
	kmax, T    int     // most harmonics, terms per spline at kmax (2·kmax + 1)
	base       []float64
	rho        []float64
	dip        []bool
	flare      []bool // set aside as in a flare (markFlares)
	// Per harmonic count k = 0 … kmax: the coefficients and χ² of the last solve, and
	// whether it succeeded.
	coef [][]float64
	chi  []float64
	ok   []bool
	n    int // points with weight
	// model is the model at every point with the chosen harmonics.
	model []float64
}

// newFitter sets up a series' fit with its widest knot intervals halved h times, or returns
// nil when it spans too few rotations or has too few usable points for its fullest model.
func newFitter(s Series, o Options, h int) *fitter {
	n := len(s.Time)
	if n < 2 {
		return nil
	}
	span := s.Time[n-1] - s.Time[0]
	if !(span >= MinCycles*o.Period) {
		return nil
	}
	f := &fitter{s: s, period: o.Period, t0: s.Time[0], kmax: o.MaxHarmonics, T: 2*o.MaxHarmonics + 1}
	f.nInt = max(1, int(math.Floor(span/o.KnotSpacing+1e-9)))
	for ; h > 0 && span/float64(2*f.nInt) >= o.MinKnotSpacing*(1-1e-9); h-- {
		f.nInt *= 2
	}
	f.h = span / float64(f.nInt)
	f.nSpl = f.nInt + 3
	f.base, f.rho, f.dip, f.flare = make([]float64, n), make([]float64, n), make([]bool, n), make([]bool, n)
	usable := 0
	for j := range s.Time {
		if s.Use != nil && !s.Use[j] || !finite(s.Flux[j]) {
			continue
		}
		w := 1.0
		if s.Err != nil {
			e := s.Err[j]
			if !(e > 0) || math.IsInf(e, 0) {
				continue
			}
			w = 1 / (e * e)
		}
		f.base[j], f.rho[j] = w, 1
		usable++
	}
	if usable < 2*f.nSpl*f.T {
		return nil
	}
	f.model = make([]float64, n)
	return f
}

// locate returns a time's knot interval and its four B-spline values (the uniform cubic
// B-spline basis; de Boor's recurrence on equal spacing, common practice).
func (f *fitter) locate(t float64) (int, [4]float64) {
	x := (t - f.t0) / f.h
	j := int(math.Floor(x))
	j = min(max(j, 0), f.nInt-1)
	u := x - float64(j)
	v := 1 - u
	return j, [4]float64{v * v * v / 6, (3*u*u*u - 6*u*u + 4) / 6, (-3*u*u*u + 3*u*u + 3*u + 1) / 6, u * u * u / 6}
}

// terms writes 1, cos θ, sin θ, cos 2θ, sin 2θ, … up to harmonic k into z, θ the rotation
// phase at t (the angle-addition recurrence from cos θ and sin θ).
func (f *fitter) terms(z []float64, t float64, k int) {
	x := (t - f.t0) / f.period
	x -= math.Floor(x)
	s1, c1 := math.Sincos(2 * math.Pi * x)
	z[0] = 1
	c, s := 1.0, 0.0
	for h := 1; h <= k; h++ {
		c, s = c*c1-s*s1, s*c1+c*s1
		z[2*h-1], z[2*h] = c, s
	}
}

// weight is a point's weight in the next fit.
func (f *fitter) weight(j int) float64 {
	if f.dip[j] || f.flare[j] {
		return 0
	}
	return f.base[j] * f.rho[j]
}

// solveAll builds the normal equations of the fullest model with the current weights and
// solves the nested models with 0 … kmax harmonics, each from its principal submatrix
// (the columns are ordered spline by spline, terms within, so every submodel is banded).
func (f *fitter) solveAll() {
	T := f.T
	L := 4 * T
	p := f.nSpl * T
	full := newBand(p, L-1)
	rhs := make([]float64, p)
	yy := 0.0
	x := make([]float64, L)
	z := make([]float64, T)
	f.n = 0
	for j, t := range f.s.Time {
		w := f.weight(j)
		if w == 0 {
			continue
		}
		f.n++
		iv, b := f.locate(t)
		f.terms(z, t, f.kmax)
		for a := 0; a < 4; a++ {
			for q := 0; q < T; q++ {
				x[a*T+q] = b[a] * z[q]
			}
		}
		y := f.s.Flux[j]
		off := iv * T
		for al := 0; al < L; al++ {
			v := w * x[al]
			row := full.a[(off+al)*L:]
			for be := 0; be <= al; be++ {
				row[al-be] += v * x[be]
			}
			rhs[off+al] += v * y
		}
		yy += w * y * y
	}
	f.coef = make([][]float64, f.kmax+1)
	f.chi = make([]float64, f.kmax+1)
	f.ok = make([]bool, f.kmax+1)
	for k := 0; k <= f.kmax; k++ {
		t := 2*k + 1
		idx := make([]int, 0, f.nSpl*t)
		for s := 0; s < f.nSpl; s++ {
			for q := 0; q < t; q++ {
				idx = append(idx, s*T+q)
			}
		}
		r := make([]float64, len(idx))
		for i, c := range idx {
			r[i] = rhs[c]
		}
		for _, rel := range []float64{1e-12, 1e-9, 1e-6} {
			sb := full.sub(idx, 4*t-1)
			if !sb.cholesky(rel * sb.maxDiag()) {
				continue
			}
			c := sb.solve(r)
			chi := yy
			for i := range c {
				chi -= c[i] * r[i]
			}
			f.coef[k], f.chi[k], f.ok[k] = c, max(chi, 0), true
			break
		}
	}
}

// chooseHarmonics pools the series' χ² of the nested models and returns the highest
// number of harmonics whose test passes (see Fit).
func chooseHarmonics(fs []*fitter, alarm float64) (int, error) {
	kmax := fs[0].kmax
	chi := make([]float64, kmax+1)
	splines, dof := 0, 0
	for _, f := range fs {
		for k := 0; k <= kmax; k++ {
			if !f.ok[k] {
				return 0, errors.New("rotation: the model's normal equations are singular; the light curve does not constrain it")
			}
			chi[k] += f.chi[k]
		}
		splines += f.nSpl
		dof += f.n - f.nSpl*f.T
	}
	if dof <= 0 || !(chi[kmax] > 0) {
		return 0, errors.New("rotation: too few points for the model")
	}
	scale := chi[kmax] / float64(dof)
	best := 0
	for k := 1; k <= kmax; k++ {
		x := (chi[k-1] - chi[k]) / scale
		// χ² with 2·splines degrees of freedom: its survival function at x is the
		// regularised upper incomplete gamma function Q(splines, x/2).
		if x > 0 && mathext.GammaIncRegComp(float64(splines), x/2) < alarm {
			best = k
		}
	}
	return best, nil
}

// evaluate writes the model with k harmonics at every point of the series into dst.
func (f *fitter) evaluate(dst []float64, k int) {
	c := f.coef[k]
	t := 2*k + 1
	z := make([]float64, t)
	for j, tj := range f.s.Time {
		iv, b := f.locate(tj)
		f.terms(z, tj, k)
		v := 0.0
		for a := 0; a < 4; a++ {
			cs := c[(iv+a)*t : (iv+a+1)*t]
			s := 0.0
			for q, zq := range z {
				s += cs[q] * zq
			}
			v += b[a] * s
		}
		dst[j] = v
	}
}

// markFlares sets aside the points in flares from the current model's residuals, afresh,
// and says whether the set changed: every usable point lying FlareSigma robust standard
// deviations above the model (the scatter measured on the points not set aside) and as far
// above the points just before it (rises), the
// points after it while the mean of the next flareLook lies flareTail of them above, then
// flareAfter more, and flareBefore before.
func (f *fitter) markFlares() bool {
	s := f.s
	var idx []int
	var rel []float64
	for j := range s.Time {
		if f.base[j] > 0 && finite(f.model[j]) && f.model[j] != 0 {
			idx = append(idx, j)
		}
	}
	if len(idx) < 3 {
		return false
	}
	r := make([]float64, len(idx))
	for c, j := range idx {
		r[c] = s.Flux[j]/f.model[j] - 1
		if !f.flare[j] {
			rel = append(rel, r[c])
		}
	}
	if len(rel) < 3 {
		rel = r
	}
	sigma := robust.RobustSigma(rel)
	if !(sigma > 0) {
		return false
	}
	mark := make([]bool, len(idx))
	for c := 0; c < len(idx); c++ {
		if r[c] <= FlareSigma*sigma || !rises(r, c, FlareSigma*sigma) {
			continue
		}
		from := max(0, c-flareBefore)
		e := c
		for e+1 < len(idx) {
			n, sum := 0, 0.0
			for q := e + 1; q < len(idx) && q <= e+flareLook; q++ {
				sum += r[q]
				n++
			}
			if r[e+1] > FlareSigma*sigma || sum/float64(n) > flareTail*sigma {
				e++
				continue
			}
			break
		}
		peak := 0.0
		for q := c; q <= e; q++ {
			peak = max(peak, r[q])
		}
		if peak < FlarePeak*sigma {
			c = e // a rise white noise or the star can give: nothing is set aside
			continue
		}
		to := min(len(idx)-1, e+flareAfter)
		for q := from; q <= to; q++ {
			mark[q] = true
		}
		c = e
	}
	changed := false
	for c, j := range idx {
		if f.flare[j] != mark[c] {
			changed = true
		}
		f.flare[j] = mark[c]
	}
	return changed
}

// rises tells whether r[c] stands above the level just before it (the median of up to
// flareLook earlier residuals) by more than by: a flare rises within a cadence or two, while
// a slow departure of the star from the model (spots the model does not follow, a second
// period) climbs over hours and is not to be set aside on one side only, which would bend
// the model under it.
func rises(r []float64, c int, by float64) bool {
	if c == 0 {
		return true
	}
	before := append([]float64(nil), r[max(0, c-flareLook):c]...)
	return r[c]-robust.MedianOf(before) > by
}

// countFlares returns the points set aside as in flares, and the stretches of them whose
// highest point rose FlarePeak robust standard deviations above the model.
func (f *fitter) countFlares() (points, flares int) {
	s := f.s
	var rel []float64
	for j := range s.Time {
		if f.base[j] > 0 && !f.flare[j] && finite(f.model[j]) && f.model[j] != 0 {
			rel = append(rel, s.Flux[j]/f.model[j]-1)
		}
	}
	if len(rel) < 3 {
		return 0, 0
	}
	sigma := robust.RobustSigma(rel)
	in, peak := false, 0.0
	end := func() {
		if in && peak > FlarePeak*sigma {
			flares++
		}
		in, peak = false, 0
	}
	for j := range s.Time {
		if f.base[j] == 0 {
			continue
		}
		if !f.flare[j] {
			end()
			continue
		}
		points++
		in = true
		peak = max(peak, s.Flux[j]/f.model[j]-1)
	}
	end()
	return points, flares
}

// reweigh sets the biweight weights from the model's residuals and marks the dips (see
// Fit).
func (f *fitter) reweigh(box, nsig float64) {
	s := f.s
	var abs, rel []float64
	for j := range s.Time {
		if f.base[j] > 0 && finite(f.model[j]) {
			abs = append(abs, math.Abs(s.Flux[j]-f.model[j]))
			rel = append(rel, s.Flux[j]/f.model[j]-1)
		}
	}
	if len(abs) < 3 {
		return
	}
	scale := bisquareScale * robust.MedianOf(abs)
	sigma := robust.RobustSigma(rel)
	for j := range s.Time {
		if f.base[j] == 0 {
			continue
		}
		f.rho[j] = 0
		if u := (s.Flux[j] - f.model[j]) / scale; scale > 0 && math.Abs(u) < 1 {
			f.rho[j] = (1 - u*u) * (1 - u*u)
		} else if !(scale > 0) {
			f.rho[j] = 1
		}
		f.dip[j] = false
	}
	if !(sigma > 0) {
		return
	}
	// The usable points in order, their relative residuals, and a sliding box over them.
	var idx []int
	for j := range s.Time {
		if f.base[j] > 0 && !f.flare[j] && finite(f.model[j]) {
			idx = append(idx, j)
		}
	}
	n := len(idx)
	mark := make([]int, n+1) // difference array over positions in idx
	lo, hi, sum := 0, 0, 0.0
	for c := 0; c < n; c++ {
		tc := s.Time[idx[c]]
		for hi < n && s.Time[idx[hi]] <= tc+box/2 {
			sum += s.Flux[idx[hi]]/f.model[idx[hi]] - 1
			hi++
		}
		for s.Time[idx[lo]] < tc-box/2 {
			sum -= s.Flux[idx[lo]]/f.model[idx[lo]] - 1
			lo++
		}
		cnt := hi - lo
		if cnt >= 3 && sum/float64(cnt) < -nsig*sigma/math.Sqrt(float64(cnt)) {
			mark[lo]++
			mark[hi]--
		}
	}
	run := 0
	for c := 0; c < n; c++ {
		run += mark[c]
		if run > 0 {
			f.dip[idx[c]] = true
		}
	}
}

// describe measures the fitted model: amplitudes and shape per knot interval, the
// variance explained, the points fitted and left out.
func (m *Model) describe(fs []*fitter, noise float64) {
	k := m.Harmonics
	var wts []float64
	amps := make([][]float64, k)
	var ptp, low []float64
	var r0s, rks []float64
	for _, f := range fs {
		t := 2*k + 1
		c := f.coef[k]
		count := make([]float64, f.nInt)
		level := make([]float64, len(f.s.Time))
		f.evaluate(level, 0)
		p, n := f.countFlares()
		m.FlarePoints += p
		m.Flares += n
		inDip := false
		for j, tj := range f.s.Time {
			if f.base[j] > 0 {
				if f.dip[j] {
					m.Dips++
					if !inDip {
						m.DipStretches++
					}
				}
				inDip = f.dip[j]
			}
			if f.base[j] > 0 && !f.dip[j] && !f.flare[j] {
				r0s, rks = append(r0s, f.s.Flux[j]/level[j]-1), append(rks, f.s.Flux[j]/f.model[j]-1)
			}
			if f.weight(j) == 0 {
				continue
			}
			m.Points++
			iv, _ := f.locate(tj)
			count[iv]++
		}
		// The coefficients at the middle of each knot interval, where the four splines
		// are 1/48, 23/48, 23/48 and 1/48.
		mid := [4]float64{1.0 / 48, 23.0 / 48, 23.0 / 48, 1.0 / 48}
		cv := make([]float64, t)
		for iv := 0; iv < f.nInt; iv++ {
			if count[iv] == 0 {
				continue
			}
			for q := range cv {
				cv[q] = 0
				for a := 0; a < 4; a++ {
					cv[q] += mid[a] * c[(iv+a)*t+q]
				}
			}
			if !(cv[0] > 0) {
				continue
			}
			wts = append(wts, count[iv])
			for h := 1; h <= k; h++ {
				amps[h-1] = append(amps[h-1], math.Hypot(cv[2*h-1], cv[2*h])/cv[0])
			}
			p, l := shape(cv, k)
			ptp, low = append(ptp, p), append(low, l)
		}
	}
	m.Amplitudes = make([]float64, k)
	for h := range amps {
		m.Amplitudes[h] = weightedMedian(amps[h], wts)
	}
	if k > 0 {
		m.PeakToPeak, m.LowShare = weightedMedian(ptp, wts), weightedMedian(low, wts)
	}
	if len(r0s) > 0 {
		m.Before, m.Residual = robust.RobustSigma(r0s), robust.RobustSigma(rks)
		if d := m.Before*m.Before - noise*noise; noise > 0 && d > 0 {
			m.Explained = min(1, max(0, (m.Before*m.Before-m.Residual*m.Residual)/d))
		}
	}
}

// shape returns the periodic part's peak-to-peak range relative to the level cv[0], and
// the share of the phase in which it lies below half-way between its extremes.
func shape(cv []float64, k int) (ptp, low float64) {
	g := make([]float64, shapePhases)
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range g {
		th := 2 * math.Pi * float64(i) / shapePhases
		v := 0.0
		for h := 1; h <= k; h++ {
			s, c := math.Sincos(float64(h) * th)
			v += cv[2*h-1]*c + cv[2*h]*s
		}
		g[i] = v
		lo, hi = min(lo, v), max(hi, v)
	}
	if !(hi > lo) {
		return 0, 0.5
	}
	n := 0
	for _, v := range g {
		if v < (lo+hi)/2 {
			n++
		}
	}
	return (hi - lo) / cv[0], float64(n) / shapePhases
}

// weightedMedian is the value at which the cumulative weight of the sorted values first
// reaches half the total; NaN for none.
func weightedMedian(x, w []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	ord := make([]int, len(x))
	for i := range ord {
		ord[i] = i
	}
	sort.SliceStable(ord, func(a, b int) bool { return x[ord[a]] < x[ord[b]] })
	tot := 0.0
	for _, v := range w {
		tot += v
	}
	acc := 0.0
	for _, i := range ord {
		acc += w[i]
		if acc >= tot/2 {
			return x[i]
		}
	}
	return x[ord[len(ord)-1]]
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
