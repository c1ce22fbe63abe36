package vet

import (
	"fmt"
	"math"

	"dipline/steps"
	"dipline/steps/derive"
	"dipline/steps/internal/boxmodel"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stardensity"
	"dipline/steps/internal/stellar"
)

// Posterior is what the vet step reads of a fit: the number of planets and the draws of a
// named column ("b.period", "b.k", "star_density" …), nil when there is no such column.
// The fit step's artifact gives it.
type Posterior interface {
	Planets() int
	Column(name string) []float64
}

// Radii is what the vet step reads of a derive step: a planet's summarised quantity by
// name, nil when absent. The derive step's artifact gives it.
type Radii interface {
	Quantity(planet, name string) *derive.Quantity
}

// Data are the inputs of Vet, as plain values.
type Data struct {
	// Light is the light curve the tests run on (normally the masked detrend the fit used).
	Light *lightcurve.LightCurve
	// Signals are the search's signals in its order.
	Signals []signals.Signal
	// Search is how the search behind the signals was set: the star's density it assumed
	// and the boxes it tried; nil when the signals' step does not say.
	Search Searched
	// Fit, Star and Derive are optional (nil when not given).
	Fit    Posterior
	Star   *stellar.Star
	Derive Radii
	// Variability is the star's own variability as the light curve's detrend step measured
	// it in the trend it removed; nil when the light curve's step does not measure it.
	Variability *lightcurve.Variability
	// FitDensityPrior is the density prior the fit states it took in place of its own
	// log-uniform one (e.g. "star_density log_normal(1.1, 0.05)" in coupled mode), or "":
	// its density is then not independent of the star's.
	FitDensityPrior string
	// Timing holds, per planet of the fit in its order, how its per-transit mid-times scatter
	// about one linear ephemeris; nil when the fit gives none.
	Timing []Timing
}

// Timing is how one fitted planet's transit mid-times, measured one by one with the shape
// fixed, scatter about a linear ephemeris: the χ² and its degrees of freedom and p-value,
// and the scatter beyond their errors.
type Timing struct {
	Transits int     // transits timed
	Chi2     float64 // χ² about the linear ephemeris
	Dof      int     // degrees of freedom, timed transits − 2
	PValue   float64 // P(χ²_dof ≥ Chi2); NaN when Dof = 0
	// Scatter is the excess root-mean-square of the O−C in days, √(max(0, mean(O−C² − σ²))):
	// how far the transits move about one period beyond what their errors explain.
	Scatter float64
}

// Options holds the thresholds; the kind documents each default and its source.
type Options struct {
	OddEvenSigma       float64 // σ of the odd/even difference at which the data disagree
	SecondaryAlarm     float64 // family-wise false-alarm probability of the secondary search
	SecondaryRatio     float64 // secondary over primary depth at which a significant dip disagrees
	MaxAlbedo          float64 // geometric albedo above which a significant dip disagrees
	Wavelength         float64 // effective wavelength of the band, m
	GrazingProbability float64 // share of grazing fit samples giving a caution
	VShapeFraction     float64 // lower 2σ end of T12/T14 giving a caution
	DensitySigma       float64 // σ of the log density difference giving a caution
	DepthAlarm         float64 // p-value of the common-depth χ² giving a caution
	RatioTolerance     float64 // relative tolerance of period ratios; 0: derived from the data
	MaxPlanetRadius    float64 // R_J
	StarTolerance      float64 // relative tolerance of a match with the star's periods; 0: derived from the data
	VariabilityRatio   float64 // star's semi-amplitude over the dip's depth from which a match at P★ or P★/k disagrees
}

// minPoints is the fewest light-curve points the tests accept.
const minPoints = 20

// Vet runs every test on every signal. Problems with the inputs are *steps.InputError
// values; the notes are facts for the user.
func Vet(d Data, o Options) (*Artifact, []string, error) {
	if d.Light == nil {
		return nil, nil, steps.BadInputf("light_curve: no light curve")
	}
	if err := d.Light.Validate(); err != nil {
		return nil, nil, steps.BadInputf("light_curve: %v", err)
	}
	if err := checkVariability(d.Variability); err != nil {
		return nil, nil, err
	}
	for j, s := range d.Signals {
		if !(s.Period > 0) || !(s.Duration > 0) || !(s.Duration < s.Period) || math.IsNaN(s.Epoch) || math.IsInf(s.Epoch, 0) {
			return nil, nil, steps.BadInputf("signals: signal %d has period %v d, duration %v d and epoch %v: it cannot be vetted", j+1, s.Period, s.Duration, s.Epoch)
		}
	}
	v := newVetter(d, o)
	art := &Artifact{}
	var notes []string
	if len(d.Signals) == 0 {
		notes = append(notes, "signals: the search found no signal; nothing to vet")
	}
	if v.n < minPoints {
		notes = append(notes, fmt.Sprintf("light_curve: %d points are too few for the tests on the light curve (at least %d)", v.n, minPoints))
	}
	for _, tg := range v.targets {
		if tg.fitNote != "" {
			notes = append(notes, tg.name+": "+tg.fitNote)
		}
		art.Signals = append(art.Signals, v.vetOne(tg))
	}
	notes = append(notes, v.sharedFitCaveat(art)...)
	return art, notes, nil
}

// target is one signal with what the tests need of it.
type target struct {
	index int
	name  string
	sig   signals.Signal
	// eph is the signal's ephemeris: the fit's period, mid-time and total duration T14 when
	// it is matched, the search's period, epoch and box duration otherwise.
	eph boxmodel.Ephemeris
	// planet is the fit's letter for it and post its draws; nil when not matched.
	planet  string
	post    *planetDraws
	fitNote string
	// ttv, when not empty, says that the fit's transit times vary enough to smear the
	// transit stacked on one period (vetter.timingOf); the shape, density and radius
	// verdicts then say so.
	ttv string
	// single, when not empty, says that the dip rests on one transit (singleTransit).
	single string
	// starResidual says that the star-period test gave a caution at P★ or a fraction of it
	// with the star's modulation no smaller than the dip (starResidualAlso).
	starResidual bool
}

// vetter holds the light curve flattened, with the signals and options.
type vetter struct {
	o        Options
	d        Data
	t, f, e  []float64
	seg      []int
	n        int
	baseline float64
	targets  []*target
}

func newVetter(d Data, o Options) *vetter {
	v := &vetter{o: o, d: d}
	v.t, v.f, v.e, v.seg = d.Light.Flat()
	v.n = len(v.t)
	v.baseline = d.Light.Baseline()
	for j, s := range d.Signals {
		tg := &target{index: j, name: fmt.Sprintf("signal%d", j+1), sig: s,
			eph: boxmodel.Ephemeris{Period: s.Period, Epoch: s.Epoch, Duration: s.Duration}}
		if d.Fit != nil {
			v.matchFit(tg)
			v.timingOf(tg)
		}
		v.targets = append(v.targets, tg)
	}
	return v
}

// vetOne runs the tests on one signal, in the artifact's fixed order.
func (v *vetter) vetOne(tg *target) Signal {
	s := Signal{Name: tg.name, Planet: tg.planet, FitNote: tg.fitNote, NoiseScale: math.NaN()}
	if v.n < minPoints {
		why := fmt.Sprintf("the light curve has %d points, too few (at least %d)", v.n, minPoints)
		for _, name := range []string{"odd_even", "secondary", "shape", "depth"} {
			s.Tests = append(s.Tests, notRun(name, why))
		}
		s.Tests = append(s.Tests, v.density(tg), v.searchDensity(tg), v.blend(tg), v.periodRatio(tg), v.radius(tg), v.starPeriod(tg))
		starResidualAlso(tg, &s)
		return s
	}
	w := v.weights(tg, false)
	scale := v.noiseScale(tg)
	s.NoiseScale = scale
	each := v.perTransit(tg.eph, w)
	tg.single = v.singleTransit(tg, each, scale)
	s.Single = tg.single
	oe, deeper := v.oddEven(tg, w, scale, each)
	s.Tests = append(s.Tests, oe)
	s.Tests = append(s.Tests, v.secondary(tg, scale, deeper))
	s.Tests = append(s.Tests, v.shape(tg, w, scale))
	s.Tests = append(s.Tests, v.density(tg), v.searchDensity(tg), v.blend(tg))
	s.Tests = append(s.Tests, v.depth(tg, w, scale))
	s.Tests = append(s.Tests, v.periodRatio(tg), v.radius(tg), v.starPeriod(tg))
	starResidualAlso(tg, &s)
	return s
}

// checkVariability refuses a variability whose lists do not pair up or hold a period that
// is not positive or an amplitude that is negative.
func checkVariability(vb *lightcurve.Variability) error {
	if vb == nil {
		return nil
	}
	if len(vb.Periods) != len(vb.Amplitudes) {
		return steps.BadInputf("light_curve: the star's variability lists %d periods and %d amplitudes", len(vb.Periods), len(vb.Amplitudes))
	}
	for j, p := range vb.Periods {
		a := vb.Amplitudes[j]
		if !(p > 0) || math.IsInf(p, 0) || !(a >= 0) || math.IsInf(a, 0) {
			return steps.BadInputf("light_curve: the star's variability has period %v d with amplitude %v; periods must be positive and amplitudes at least 0", p, a)
		}
	}
	return nil
}

// notRun is a test that could not run, with the reason.
func notRun(name, why string) Test {
	return Test{Name: name, Verdict: NotRun, Threshold: "—", Reason: why}
}

// maskFactor is the half-width, in box durations, of the stretch around another signal's
// mid-transit kept out of a signal's tests: a box is shorter than first to last contact
// (down to about half of it for a V shape; steps/search), so ±1 duration covers the
// whole dip.
const maskFactor = 2

// weights returns 1/σ² per point, 0 for points in other signals' transits and for
// non-finite values. With keepHarmonics false, every other signal is masked; with it true,
// signals whose period is commensurate with this one (same period, n·P or P/n within the
// tolerance) are left in, so that a binary's second eclipse found as its own signal still
// shows in the secondary-eclipse search.
func (v *vetter) weights(tg *target, keepHarmonics bool) []float64 {
	w := make([]float64, v.n)
	var others []*target
	for _, o := range v.targets {
		if o == tg {
			continue
		}
		if keepHarmonics {
			if rel, _ := v.classify(tg, o); rel.kind == relHarmonic || rel.kind == relSame {
				continue
			}
		}
		others = append(others, o)
	}
	for i := range w {
		if !(v.e[i] > 0) || math.IsNaN(v.f[i]) || math.IsInf(v.f[i], 0) || math.IsInf(v.e[i], 0) {
			continue
		}
		masked := false
		for _, o := range others {
			if o.inTransit(v.t[i], maskFactor) {
				masked = true
				break
			}
		}
		if !masked {
			w[i] = 1 / (v.e[i] * v.e[i])
		}
	}
	return w
}

// inTransit reports whether t lies within factor/2 durations of one of tg's mid-transits,
// on its ephemeris: the fit's period, mid-time and total duration when it is matched.
func (tg *target) inTransit(t, factor float64) bool {
	_, d := tg.eph.Cycle(t)
	return d <= factor*tg.eph.Duration/2
}

// noiseScale is the factor by which the stated errors are stretched for this signal's
// tests, measured outside every signal's transits on bins of its duration.
func (v *vetter) noiseScale(tg *target) float64 {
	keep := func(i int) bool {
		for _, o := range v.targets {
			if o.inTransit(v.t[i], maskFactor) {
				return false
			}
		}
		return true
	}
	return noiseScale(v.t, v.f, v.e, keep, tg.eph.Duration)
}

// quantileMC, finiteSorted and oneSigma summarise draws (see stardensity: the star's
// density is read with them, so they live there, shared with the search).
var (
	quantileMC   = stardensity.QuantileMC
	finiteSorted = stardensity.FiniteSorted
	oneSigma     = stardensity.OneSigma
)

// ppm formats a relative flux in parts per million.
func ppm(x float64) string { return fmt.Sprintf("%.0f ppm", x*1e6) }
