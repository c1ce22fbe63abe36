package vet

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/synth"
)

// The binary at half its period (issue 9's scenario; common practice: an eclipsing binary
// found at half its period shows odd and even depths that differ, and a secondary eclipse
// comparable to the primary at twice the period).
func TestABinaryAtHalfItsPeriodDisagrees(t *testing.T) {
	lc := makeCurve(1000e-6, 7, binary)
	sig := []signals.Signal{binaryHalfSignal()}
	for _, c := range []struct {
		name string
		in   func() *Artifact
	}{
		{"without a star (the depth ratio decides)", func() *Artifact { a, _ := run(t, inputs(lc, sig, nil, nil, nil)); return a }},
		{"with a star (the albedo is computed too)", func() *Artifact {
			a, _ := run(t, inputs(lc, sig, nil, solarStar(planetDensity()), nil))
			return a
		}},
	} {
		t.Run("odd/even and secondary disagree "+c.name, func(t *testing.T) {
			a := c.in()
			for _, test := range []string{"odd_even", "secondary"} {
				if v := verdict(t, a, "signal1", test); v.Verdict != steps.VerdictDisagree {
					t.Errorf("%s: %s, want disagree%s", test, v.Verdict, describe(a))
				}
			}
			if n := figure(t, a, "signal1.disagree").Value; n < 2 {
				t.Errorf("signal1.disagree = %v, want at least 2", n)
			}
			// A doubtful signal gets its line among the cautions, naming the tests.
			if c := a.Cautions(); len(c) != 2 || !strings.Contains(c[0], "the data disagree with a planet on the target") || !strings.Contains(c[0], "odd/even depths, secondary eclipse") {
				t.Errorf("cautions %q", c)
			}
			// The secondary search ran at twice the period, and the dip it found is the
			// 0.4 % eclipse: a V of 4000 ppm averaged over the box's middle 0.6 (from the
			// synth's triangle: 4000 × (1 − 0.3) = 2800 ppm), within 10 %.
			if p := figure(t, a, "signal1.secondary.period").Value; math.Abs(p-binary.Period) > 1e-9 {
				t.Errorf("secondary searched at %v d, want %v", p, binary.Period)
			}
			if d := figure(t, a, "signal1.secondary.depth").Value; math.Abs(d-2800) > 280 {
				t.Errorf("secondary depth %v ppm, want about 2800", d)
			}
		})
	}
	t.Run("the albedo a planet would need is far above one", func(t *testing.T) {
		a, _ := run(t, inputs(lc, sig, nil, solarStar(planetDensity()), nil))
		if ag := figure(t, a, "signal1.secondary.albedo").Value; !(ag > 10) {
			t.Errorf("albedo %v, want ≫ 1", ag)
		}
	})
}

// The same binary found at its true period (a search prefers it when the secondary is
// under about 0.41 of the primary, as the box SNR then favours the primary alone): the
// odd/even test sees only primaries, and the secondary test finds the 0.4 % eclipse.
func TestABinaryAtItsTruePeriodShowsItsSecondary(t *testing.T) {
	lc := makeCurve(1000e-6, 8, binary)
	sig := []signals.Signal{{Period: binary.Period, Epoch: binary.Epoch, Duration: 0.6 * binary.Duration, Depth: 0.007, DepthErr: 0.0003}}
	a, _ := run(t, inputs(lc, sig, nil, nil, nil))
	if v := verdict(t, a, "signal1", "secondary"); v.Verdict != steps.VerdictDisagree {
		t.Errorf("secondary: %s, want disagree%s", v.Verdict, describe(a))
	}
	if v := verdict(t, a, "signal1", "odd_even"); v.Verdict != steps.VerdictAgree {
		t.Errorf("odd_even: %s, want agree (every dip is a primary)%s", v.Verdict, describe(a))
	}
	if ph := figure(t, a, "signal1.secondary.phase").Value; math.Abs(ph-0.5) > 0.01 {
		t.Errorf("secondary at phase %v, want 0.5", ph)
	}
}

// An injected limb-darkened planet at SNR near 25 (Mandel & Agol 2002 through synth): no
// test disagrees, on any of five noise draws, without and with a fit, star and derive
// step. The false-alarm rates are 0.27 % (odd/even at 3σ) and 0.135 % (the secondary,
// family-wise), so five draws passing is what a correct test does; a wrong error scale or
// a wrong threshold would fail it.
func TestAnInjectedPlanetHasNoDisagreement(t *testing.T) {
	rho := planetDensity()
	for seed := uint64(1); seed <= 5; seed++ {
		lc := makeCurve(planetNoise, seed, planet)
		sig := []signals.Signal{planetSignal()}
		t.Run(fmt.Sprintf("noise draw %d with the light curve alone", seed), func(t *testing.T) {
			a, _ := run(t, inputs(lc, sig, nil, nil, nil))
			if n := figure(t, a, "signal1.disagree").Value; n != 0 {
				t.Errorf("%v tests disagree%s", n, describe(a))
			}
		})
		t.Run(fmt.Sprintf("noise draw %d with a fit, a star and a derive step", seed), func(t *testing.T) {
			f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, seed)
			a, _ := run(t, inputs(lc, sig, f, solarStar(rho), radii("b", 0.47, 0.49, 0.51)))
			if n := figure(t, a, "signal1.disagree").Value; n != 0 {
				t.Errorf("%v tests disagree%s", n, describe(a))
			}
			for _, test := range []string{"odd_even", "secondary", "shape", "density", "blend", "depth", "radius"} {
				if v := verdict(t, a, "signal1", test); v.Verdict == NotRun {
					t.Errorf("%s did not run: %s", test, v.Reason)
				}
			}
		})
	}
}

// Tests that need what was not given say so, with the reason (the issue: never silently
// dropped).
func TestMissingInputsAreReportedAsNotRun(t *testing.T) {
	lc := makeCurve(planetNoise, 3, planet)
	sig := []signals.Signal{planetSignal()}
	a, notes := run(t, inputs(lc, sig, nil, nil, nil))
	cases := []struct {
		test, says string
	}{
		{"density", "no fit given"},
		{"blend", "no fit given"},
		{"radius", "no derive step"},
		{"period_ratio", "one signal"},
	}
	for _, c := range cases {
		t.Run(c.test+" is not run and says why", func(t *testing.T) {
			v := verdict(t, a, "signal1", c.test)
			if v.Verdict != NotRun || !strings.Contains(v.Reason, c.says) {
				t.Errorf("%s: %s — %q, want not run saying %q", c.test, v.Verdict, v.Reason, c.says)
			}
		})
	}
	t.Run("the density test says a star is missing when only the fit is given", func(t *testing.T) {
		f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, planetDensity(), 3)
		a, _ := run(t, inputs(lc, sig, f, nil, nil))
		if v := verdict(t, a, "signal1", "density"); v.Verdict != NotRun || !strings.Contains(v.Reason, "no star") {
			t.Errorf("density: %s — %q", v.Verdict, v.Reason)
		}
	})
	t.Run("a signal every test agrees with gets no caution line, and the validation caution stands", func(t *testing.T) {
		c := a.Cautions()
		if len(c) != 1 || !strings.Contains(c[0], "does not replace") {
			t.Errorf("cautions %q", c)
		}
		// The line itself still lists what did not run (it is shown when a signal is doubtful).
		if line := a.Signals[0].summary(); !strings.Contains(line, "not run: stellar density, the search's stellar density, blended source") {
			t.Errorf("summary line %q", line)
		}
		if !strings.Contains(strings.Join(notes, "\n"), "does not replace") {
			t.Errorf("notes %q lack the validation caution", notes)
		}
	})
}

// Harmonics and aliases between signals (the issue: a signal at P/2 or 2P
// of another is recognised).
func TestPeriodRatiosRecogniseHarmonics(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	base := planetSignal()
	other := func(factor, phase float64) signals.Signal {
		s := base
		s.Period *= factor
		s.Epoch += phase * base.Period
		return s
	}
	cases := []struct {
		name    string
		second  signals.Signal
		verdict string
		says    string
	}{
		{"a signal at twice the period is a harmonic", other(2, 0.5), steps.VerdictCaution, "1/2 of signal2's"},
		{"a signal at half the period is a harmonic", other(0.5, 0.25), steps.VerdictCaution, "2 times signal2's"},
		{"a signal at three halves of the period is a small-integer alias", other(1.5, 0.3), steps.VerdictCaution, "2/3 of signal2's"},
		{"a signal at the same period half an orbit away disagrees", other(1, 0.5), steps.VerdictDisagree, "same period"},
		{"an unrelated period agrees", other(1.2345, 0.3), steps.VerdictAgree, "no other signal"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, _ := run(t, inputs(lc, []signals.Signal{base, c.second}, nil, nil, nil))
			v := verdict(t, a, "signal1", "period_ratio")
			if v.Verdict != c.verdict || !strings.Contains(v.Reason, c.says) {
				t.Errorf("%s — %q, want %s saying %q", v.Verdict, v.Reason, c.verdict, c.says)
			}
		})
	}
	t.Run("the harmonic says where the longer signal's dips fall", func(t *testing.T) {
		a, _ := run(t, inputs(lc, []signals.Signal{base, other(2, 0.5)}, nil, nil, nil))
		if v := verdict(t, a, "signal2", "period_ratio"); !strings.Contains(v.Reason, "half-way between signal1's") {
			t.Errorf("%q", v.Reason)
		}
	})
	t.Run("the tolerance is the longer duration over the baseline", func(t *testing.T) {
		a, _ := run(t, inputs(lc, []signals.Signal{base, other(2, 0.5)}, nil, nil, nil))
		first, last := lc.Span()
		want := base.Duration / (last - first)
		if got := figure(t, a, "signal1.period_ratio.tolerance").Value; math.Abs(got-want) > 1e-12 {
			t.Errorf("tolerance %v, want %v", got, want)
		}
	})
}

// A modest density mismatch (4 times, which an eccentricity near 0.34 explains, below the
// ceiling of 0.41 at 3.3 d) is a caution that names the eccentricity able to explain it
// (Dawson & Johnson 2012), not a disagreement.
func TestADensityMismatchIsACaution(t *testing.T) {
	lc := makeCurve(planetNoise, 5, planet)
	rho := planetDensity()
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 5)
	a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, solarStar(4*rho), nil))
	v := verdict(t, a, "signal1", "density")
	if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "eccentricity of at least") {
		t.Errorf("%s — %q", v.Verdict, v.Reason)
	}
	// ρ_star/ρ_transit = 4 within the draws' scatter (σ of ln ρ 0.1 and 0.05).
	if r := figure(t, a, "signal1.density.ratio").Value; math.Abs(r-4) > 0.3 {
		t.Errorf("ratio %v, want about 4", r)
	}
}

// A radius above the derive step's limit disagrees.
func TestARadiusTooLargeDisagrees(t *testing.T) {
	lc := makeCurve(planetNoise, 6, planet)
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, planetDensity(), 6)
	cases := []struct {
		name        string
		lo, med, hi float64
		verdict     string
	}{
		{"a radius of 3 R_jup disagrees", 2.8, 3, 3.2, steps.VerdictDisagree},
		{"a radius whose 84th percentile passes 2 R_jup gives a caution", 1.7, 1.9, 2.1, steps.VerdictCaution},
		{"a Jupiter agrees", 0.95, 1, 1.05, steps.VerdictAgree},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, nil, radii("b", c.lo, c.med, c.hi)))
			if v := verdict(t, a, "signal1", "radius"); v.Verdict != c.verdict {
				t.Errorf("%s — %q", v.Verdict, v.Reason)
			}
		})
	}
}

// A fit whose planet has another period is not used for the signal, and the artifact says
// so.
func TestAFitOfAnotherPeriodIsNotUsed(t *testing.T) {
	lc := makeCurve(planetNoise, 9, planet)
	f := planetFit(2*planet.Period, planet.Epoch, planet.K, planet.B, planetDensity(), 9)
	a, notes := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, nil, nil))
	if a.Signals[0].Planet != "" || !strings.Contains(a.Signals[0].FitNote, "not this signal's") {
		t.Errorf("planet %q, note %q", a.Signals[0].Planet, a.Signals[0].FitNote)
	}
	if v := verdict(t, a, "signal1", "blend"); v.Verdict != NotRun {
		t.Errorf("blend ran with a fit of another period: %q", v.Reason)
	}
	if !strings.Contains(strings.Join(notes, "\n"), "not this signal's") {
		t.Errorf("notes %q", notes)
	}
	if c := a.Cautions()[0]; !strings.Contains(c, "not this signal's") {
		t.Errorf("summary %q", c)
	}
}

// A blend of two stars of different colour: the dip is 1.5 times deeper in one band than
// in the other (invented), which the depth test sees.
func TestDepthsThatDifferBetweenBandsGiveACaution(t *testing.T) {
	blue := synth.Curve{Span: span, Cadence: cadence, Gaps: [][2]float64{{gapFrom, gapTo}}, Noise: 1000e-6, Seed: 10,
		Dips: []synth.Signal{synth.Box{Period: 3.3, Epoch: 1.1, Duration: 0.1, Depth: 3e-3}}}.Make()
	red := synth.Curve{Span: span, Cadence: cadence, Gaps: [][2]float64{{gapFrom, gapTo}}, Noise: 1000e-6, Seed: 11,
		Dips: []synth.Signal{synth.Box{Period: 3.3, Epoch: 1.1, Duration: 0.1, Depth: 2e-3}}}.Make()
	lc := toCurve(blue, [2]string{"blue", "blue"})
	lcRed := toCurve(red, [2]string{"red", "red"})
	lc.Segments[1] = lcRed.Segments[1]
	sig := []signals.Signal{{Period: 3.3, Epoch: 1.1, Duration: 0.1, Depth: 2.5e-3}}
	a, _ := run(t, inputs(lc, sig, nil, nil, nil))
	v := verdict(t, a, "signal1", "depth")
	if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "between bands") {
		t.Errorf("%s — %q", v.Verdict, v.Reason)
	}
	// Both depths within 4σ of the truth.
	for _, c := range []struct {
		name string
		want float64
	}{{"signal1.depth.band_blue", 3000}, {"signal1.depth.band_red", 2000}} {
		f := figure(t, a, c.name)
		if math.Abs(f.Value-c.want) > 4*f.Sigma {
			t.Errorf("%s = %v ± %v ppm, want %v", c.name, f.Value, f.Sigma, c.want)
		}
	}
}

// An eccentric fit (columns b.e and b.omega in degrees, steps/fit/artifact.go) already
// holds the orbit's effect on its density, and its durations enter the blend bound.
func TestAnEccentricFitIsReadWithItsOrbit(t *testing.T) {
	lc := makeCurve(planetNoise, 12, planet)
	rho := planetDensity()
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 12)
	rows := len(f.Samples) / len(f.Names)
	var s []float64
	for i := 0; i < rows; i++ {
		// e = 0.1 at ω = 90° leaves the transit's a/R* as drawn (the chord's speed changes),
		// which is all the test needs: it reads e and ω and uses them.
		s = append(append(s, f.Samples[i*len(f.Names):(i+1)*len(f.Names)]...), 0.1, 90)
	}
	f.Names = append(append([]string(nil), f.Names...), "b.e", "b.omega")
	f.Samples = s
	a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, solarStar(rho), nil))
	if v := verdict(t, a, "signal1", "density"); !strings.Contains(v.Reason, "eccentric orbit included") {
		t.Errorf("density: %s — %q", v.Verdict, v.Reason)
	}
	circ, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 12), nil, nil))
	// At ω = 90° the planet moves faster at transit by (1 + e)/√(1 − e²) (Winn 2010), which
	// shortens every duration alike: T12/T13 barely moves, so the bound stays within 0.05 mag.
	ecc, cir := figure(t, a, "signal1.blend.max_delta_mag").Value, figure(t, circ, "signal1.blend.max_delta_mag").Value
	if math.IsNaN(ecc) || math.Abs(ecc-cir) > 0.05 {
		t.Errorf("blend bound %v (eccentric) against %v (circular)", ecc, cir)
	}
}

// A light curve too short for the tests gives "not run" for those that read it.
func TestTooFewPointsAreReportedAsNotRun(t *testing.T) {
	lc := makeCurve(planetNoise, 13, planet)
	for k := range lc.Segments {
		s := &lc.Segments[k]
		s.Time, s.Flux, s.Err = s.Time[:5], s.Flux[:5], s.Err[:5]
	}
	a, notes := run(t, inputs(lc, []signals.Signal{planetSignal()}, nil, nil, nil))
	for _, test := range []string{"odd_even", "secondary", "shape", "depth"} {
		if v := verdict(t, a, "signal1", test); v.Verdict != NotRun || !strings.Contains(v.Reason, "too few") {
			t.Errorf("%s: %s — %q", test, v.Verdict, v.Reason)
		}
	}
	if !strings.Contains(strings.Join(notes, "\n"), "too few") {
		t.Errorf("notes %q", notes)
	}
}

// A fit that took a density prior (coupled mode, steps/fit's "prior: star_density …"
// entry) is not independent of the star, and the density test says so.
func TestACoupledFitsDensityIsFlaggedAsNotIndependent(t *testing.T) {
	lc := makeCurve(planetNoise, 14, planet)
	rho := planetDensity()
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 14)
	f.Priors = []string{"prior: star_density log_normal(1.1, 0.05)"}
	a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, solarStar(rho), nil))
	if v := verdict(t, a, "signal1", "density"); !strings.Contains(v.Reason, "not independent") || !strings.Contains(v.Reason, "log_normal(1.1, 0.05)") {
		t.Errorf("density: %s — %q", v.Verdict, v.Reason)
	}
}

// Single transits whose depths jitter (invented: even ones 2000 and 3200 ppm in turn, odd
// ones all 2400 ppm) differ by parity on average by 200 ppm, which their scatter within a
// parity (600 ppm) cannot support: the odd/even test measures that scatter and agrees.
func TestJitteringDepthsDoNotPassForAnAlternation(t *testing.T) {
	const per, epoch, dur = 3.3, 1.1, 0.1
	var dips []synth.Signal
	for n := 0; float64(n)*per+epoch < span; n++ {
		d := 2400e-6
		if n%2 == 0 {
			d = []float64{2000e-6, 3200e-6}[(n/2)%2]
		}
		dips = append(dips, synth.Event{Time: epoch + float64(n)*per, Duration: dur, Depth: d})
	}
	lc := makeCurve(300e-6, 15, dips...)
	a, _ := run(t, inputs(lc, []signals.Signal{{Period: per, Epoch: epoch, Duration: dur, Depth: 2.5e-3}}, nil, nil, nil))
	if v := verdict(t, a, "signal1", "odd_even"); v.Verdict != steps.VerdictAgree {
		t.Errorf("%s — %q", v.Verdict, v.Reason)
	}
	if f := figure(t, a, "signal1.odd_even.transit_scatter").Value; !(f > 5) {
		t.Errorf("transit scatter %v, want far above 1", f)
	}
}
