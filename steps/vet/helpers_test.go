package vet

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/derive"
	"dipline/steps/fit"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/synth"
	"dipline/steps/search"
	"dipline/steps/search/bls"
	"dipline/steps/star"
)

// curveArtifact stands in for a photometry or detrend result.
type curveArtifact struct{ lc *lightcurve.LightCurve }

func (c curveArtifact) LightCurve() *lightcurve.LightCurve { return c.lc }
func (c curveArtifact) Encode() []byte                     { return c.lc.Encode() }
func (c curveArtifact) Figures() []steps.Figure            { return nil }

// signalArtifact stands in for a search result.
type signalArtifact []signals.Signal

func (s signalArtifact) Signals() []signals.Signal { return s }
func (s signalArtifact) Encode() []byte            { return nil }
func (s signalArtifact) Figures() []steps.Figure   { return nil }

// searchOf stands in for a search's result: the signals as its detections, found by a
// search that assumed a star of the given density (g/cm³) on the light curves' 2-minute
// cadence. It is the search step's own artifact, so the vet reads it as it reads a run's.
func searchOf(sigs []signals.Signal, density float64) *search.Artifact {
	a := &search.Artifact{Grid: bls.Grid{Density: density}, Cadence: cadence}
	for _, s := range sigs {
		a.Passes = append(a.Passes, bls.Pass{Found: &bls.Detection{
			Timing:   bls.Timing{Period: s.Period, Epoch: s.Epoch},
			Shape:    bls.Shape{Duration: s.Duration, Depth: s.Depth, DepthSigma: s.DepthErr},
			Strength: bls.Strength{SNR: s.SNR, SDE: s.SDE, Transits: s.Transits}}})
	}
	return a
}

// Every scenario below is invented: a 27-day light curve at a 2-minute cadence in two
// segments either side of a one-day gap, as an all-sky survey's sector gives.
const (
	span, cadence  = 27.0, 2.0 / 1440
	gapFrom, gapTo = 13.0, 14.0
)

// toCurve splits a synthetic series into two segments at the gap, with the given bands.
func toCurve(s synth.Series, bands [2]string) *lightcurve.LightCurve {
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5}
	for k := 0; k < 2; k++ {
		seg := lightcurve.Segment{ID: string(rune('1' + k)), Band: bands[k], Exposure: cadence, Contamination: math.NaN()}
		for i, t := range s.Time {
			if (k == 0) == (t < gapFrom) {
				seg.Time = append(seg.Time, t)
				seg.Flux = append(seg.Flux, s.Flux[i])
				seg.Err = append(seg.Err, s.Err[i])
			}
		}
		lc.Segments = append(lc.Segments, seg)
	}
	return lc
}

// makeCurve builds the light curve with the given dips and white noise.
func makeCurve(noise float64, seed uint64, dips ...synth.Signal) *lightcurve.LightCurve {
	c := synth.Curve{Span: span, Cadence: cadence, Gaps: [][2]float64{{gapFrom, gapTo}}, Noise: noise, Seed: seed, Dips: dips}
	return toCurve(c.Make(), [2]string{"survey-red", "survey-red"})
}

// The planet: a 3.3-day orbit of a Sun-like star (a/R* = 12, ρ ≈ 3.0 g/cm³), k = 0.05 and
// b = 0.3, with quadratic limb darkening near a Sun-like star's in a red band (from
// memory); 2500 ppm of white noise puts its SNR near 25.
var planet = synth.Transit{Period: 3.3, Epoch: 1.1, K: 0.05, B: 0.3, AR: 12, U1: 0.4, U2: 0.25, Exposure: cadence, Sub: 3}

const planetNoise = 2500e-6

// planetSignal is the signal a search would report for the planet: its period and epoch,
// a box nine tenths of T14 long and the box's depth (about k² times the limb-darkening
// factor).
func planetSignal() signals.Signal {
	return signals.Signal{Period: planet.Period, Epoch: planet.Epoch, Duration: 0.9 * planet.T14(),
		Depth: 2.8e-3, DepthErr: 0.12e-3, SNR: 25, SDE: 12, Transits: 8}
}

// binary is an eclipsing pair at twice the period a search reports: V-shaped eclipses of
// 1 % and 0.4 %, 3 hours from first to last contact.
var binary = synth.Binary{Period: 4.4, Epoch: 1.3, Duration: 0.125, Primary: 0.01, Secondary: 0.004}

// binaryHalfSignal is the binary as a search finds it at half its period: all eclipses on
// one ephemeris, a box about 0.6 of the V's width, the mean box depth.
func binaryHalfSignal() signals.Signal {
	return signals.Signal{Period: binary.Period / 2, Epoch: binary.Epoch, Duration: 0.6 * binary.Duration,
		Depth: 0.0045, DepthErr: 0.0002, SNR: 40, SDE: 20, Transits: 12}
}

// solarStar gives draws of a Sun-like star with the planet's density (σ 5 %), Teff 5800 ±
// 100 K and radius 1.00 ± 0.03 R☉.
func solarStar(rho float64) *star.Artifact {
	g := rng.New(99)
	s := &stellar.Star{}
	for i := 0; i < 2000; i++ {
		s.Density = append(s.Density, rho*(1+0.05*g.Normal()))
		s.Teff = append(s.Teff, 5800+100*g.Normal())
		s.Radius = append(s.Radius, 1+0.03*g.Normal())
	}
	return &star.Artifact{Star: s}
}

// planetDensity is the star's density the planet's orbit implies (Seager & Mallén-Ornelas
// 2003, through astro), g/cm³.
func planetDensity() float64 {
	rho, _ := astro.DensityFromScaledAxis(planet.AR, planet.Period*astro.Day)
	return rho / 1000
}

// fitColumns are the columns of a one-planet circular fit (steps/fit/artifact.go).
var fitColumns = []string{"b.period", "b.t0", "b.k", "b.b", "star_density", "b.depth", "b.a_over_rstar", "b.t14"}

// planetFit builds a fit artifact from draws around the given truth, as a converged fit
// of the planet would give: period ± 1e-4 d, t0 ± 6e-4 d (at transit 4, near the middle of
// the data), k ± 0.002, b ± 0.1 (folded at 0), ln ρ ± 0.1; a/R* and T14 follow.
func planetFit(per, t0, k, b, rho float64, seed uint64) *fit.Artifact {
	g := rng.New(seed)
	a := &fit.Artifact{Names: fitColumns, Reference: []fit.Reference{{Transit: 4, Time: t0}}}
	for i := 0; i < 2000; i++ {
		p := per + 1e-4*g.Normal()
		ki := k + 0.002*g.Normal()
		bi := math.Abs(b + 0.1*g.Normal())
		r := rho * math.Exp(0.1*g.Normal())
		aR, _ := astro.ScaledAxisFromDensity(r*1000, p*astro.Day)
		t14, _ := astro.TotalDuration(p, aR, ki, bi, 0, 0)
		a.Samples = append(a.Samples, p, t0+6e-4*g.Normal(), ki, bi, r, ki*ki, aR, t14)
	}
	return a
}

// radii is a derive artifact holding one planet's radius in R_J (16th, 50th, 84th
// percentiles).
func radii(letter string, lo, med, hi float64) *derive.Artifact {
	return &derive.Artifact{Planets: []derive.Planet{{Name: letter, Quantities: []derive.Quantity{
		{Name: "radius_jup", Unit: "R_jup", Median: med, Lo: lo, Hi: hi}}}}}
}

// inputs assembles a vet step's inputs; nil artifacts are left out.
func inputs(lc *lightcurve.LightCurve, sigs []signals.Signal, f *fit.Artifact, s *star.Artifact, d *derive.Artifact) steps.Inputs {
	in := steps.Inputs{Refs: map[string][]steps.Artifact{
		"light_curve": {curveArtifact{lc}}, "signals": {signalArtifact(sigs)}}}
	if f != nil {
		in.Refs["fit"] = []steps.Artifact{f}
	}
	if s != nil {
		in.Refs["star"] = []steps.Artifact{s}
	}
	if d != nil {
		in.Refs["derive"] = []steps.Artifact{d}
	}
	return in
}

// block is what a vet block writes: the given attributes, the signals and the light curve.
func block(set map[string]any) map[string]any {
	b := map[string]any{"signals": "search.dips", "light_curve": "detrend.masked"}
	for k, v := range set {
		b[k] = v
	}
	return b
}

// run runs the kind with its defaults on the inputs.
func run(t *testing.T, in steps.Inputs) (*Artifact, []string) {
	t.Helper()
	art, notes, err := steptest.Run(New(), block(nil), in, nil)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact), notes
}

// verdict returns the named test of the named signal.
func verdict(t *testing.T, a *Artifact, signal, test string) Test {
	t.Helper()
	for _, s := range a.Signals {
		if s.Name != signal {
			continue
		}
		for _, x := range s.Tests {
			if x.Name == test {
				return x
			}
		}
	}
	t.Fatalf("no test %s for %s", test, signal)
	return Test{}
}

// figure returns the named figure.
func figure(t *testing.T, a *Artifact, name string) steps.Figure {
	t.Helper()
	for _, f := range a.Figures() {
		if f.Name == name {
			return f
		}
	}
	t.Fatalf("no figure %s", name)
	return steps.Figure{}
}

// describe lists every verdict with its reason, for failure messages.
func describe(a *Artifact) string {
	var b strings.Builder
	for _, v := range a.Verdicts() {
		b.WriteString("\n  " + v.Subject + " " + v.Test + ": " + v.Verdict + " — " + v.Reason)
	}
	return b.String()
}

// deriveMaxPlanetRadius returns the derive step's own default for the largest planetary
// radius, in R☉ (the base unit), as its schema decodes it, so that the threshold is defined
// once: the test of vet's own max_planet_radius default holds it to this; 0 if derive's
// defaults do not decode.
func deriveMaxPlanetRadius() float64 {
	cfg, err := derive.New().Schema().New()
	if err != nil {
		return 0
	}
	c, ok := cfg.(*derive.Config)
	if !ok {
		return 0
	}
	return c.MaxPlanetRadius
}
