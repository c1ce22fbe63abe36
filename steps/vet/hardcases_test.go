package vet

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/fit/timing"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/synth"
	"dipline/steps/star"
)

// The eccentricity ceiling is the constant-periastron envelope max(0.3, 1 − (1.5 d/P)^(2/3))
// (density.go). The most eccentric known planets near 5.6 d (e ≈ 0.52) and 111 d (e ≈ 0.93)
// must lie below it (from memory), and the probe's transit 18 times too long for its star
// at 5 d, which needs e ≥ 0.66 at 3σ, above it.
func TestTheEccentricityCeilingFollowsThePeriod(t *testing.T) {
	cases := []struct {
		name   string
		period float64
		below  float64 // an eccentricity the ceiling must allow
		above  float64 // one it must not (NaN: none)
	}{
		{"a 1-day orbit keeps the floor of 0.3", 1, 0.3, 0.31},
		{"an e of 0.52 at 5.6 d is allowed", 5.63, 0.52, math.NaN()},
		{"an e of 0.66 at 5 d is not", 5, 0.55, 0.66},
		{"an e of 0.93 at 111 d is allowed", 111.4, 0.934, math.NaN()},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := MaxEccentricity(c.period)
			if e < c.below || (!math.IsNaN(c.above) && e >= c.above) {
				t.Errorf("ceiling %v at %v d", e, c.period)
			}
		})
	}
}

// A transit density far below the star's (18 times, the probe's long transit round an M
// dwarf) needs an eccentricity at 3.3 d that planets do not reach there: the data disagree,
// and the summary says so. The same mismatch at 100 d, where such orbits exist, and a
// modest one (4 times) at 3.3 d stay cautions.
func TestADensityMismatchNeedingAnImplausibleOrbitDisagrees(t *testing.T) {
	lc := makeCurve(planetNoise, 21, planet)
	rho := planetDensity()
	cases := []struct {
		name    string
		period  float64
		ratio   float64
		verdict string
		says    string
	}{
		{"18 times at 3.3 d disagrees", planet.Period, 18, steps.VerdictDisagree, "above the"},
		{"18 times at 100 d is a caution", 100, 18, steps.VerdictCaution, "within the"},
		{"4 times at 3.3 d is a caution", planet.Period, 4, steps.VerdictCaution, "within the"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sig := planetSignal()
			sig.Period = c.period
			f := planetFit(c.period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 21)
			// The fit's density is rho; the star is c.ratio times as dense.
			a, _ := run(t, inputs(lc, []signals.Signal{sig}, f, solarStar(c.ratio*rho), nil))
			v := verdict(t, a, "signal1", "density")
			if v.Verdict != c.verdict || !strings.Contains(v.Reason, c.says) {
				t.Errorf("%s — %q", v.Verdict, v.Reason)
			}
			line := a.Signals[0].summary()
			if disagrees := !strings.Contains(line, "no test disagrees"); disagrees != (c.verdict == steps.VerdictDisagree) {
				t.Errorf("summary %q", line)
			}
			// The figures hold the least eccentricity at 3σ and the ceiling it is held to, at
			// the fit's median period (within 1e-4 d of c.period).
			need := figure(t, a, "signal1.density.eccentricity_needed").Value
			ceil := figure(t, a, "signal1.density.eccentricity_max").Value
			if (need > ceil) != (c.verdict == steps.VerdictDisagree) || math.Abs(ceil-MaxEccentricity(c.period)) > 1e-4 {
				t.Errorf("needed %v, ceiling %v", need, ceil)
			}
		})
	}
}

// One dip and one flat stretch a period later (the probe's single transit, which a search
// reports at 9.09 d): the odd/even test cannot be run, and says why in plain words, and the
// signal says that its period is not measured. With the one transit alone in the data, the
// same.
func TestASingleTransitIsNotReadAsAnAlternation(t *testing.T) {
	lc := makeCurve(1000e-6, 22, synth.Event{Time: 9, Duration: 0.15, Depth: 3e-3})
	for _, c := range []struct {
		name   string
		period float64
		says   string
	}{
		{"a second transit time with no dip", 9.086, "the other transit with data shows none"},
		{"no second transit time in the data", 20, "the only one with data"},
	} {
		t.Run(c.name, func(t *testing.T) {
			sig := signals.Signal{Period: c.period, Epoch: 9, Duration: 0.15, Depth: 1.6e-3, DepthErr: 1e-4, Transits: 2}
			a, _ := run(t, inputs(lc, []signals.Signal{sig}, nil, nil, nil))
			v := verdict(t, a, "signal1", "odd_even")
			if v.Verdict != NotRun || !strings.HasPrefix(v.Reason, "cannot be tested: ") || !strings.Contains(v.Reason, c.says) {
				t.Errorf("odd_even: %s — %q", v.Verdict, v.Reason)
			}
			s := a.Signals[0]
			if !strings.Contains(s.Single, "the period is not measured") || !s.doubtful() || !strings.Contains(s.summary(), "the period is not measured") {
				t.Errorf("single %q, summary %q", s.Single, s.summary())
			}
			back, err := Decode(a.Encode())
			if err != nil || back.Signals[0].Single != s.Single {
				t.Errorf("decoded single %q, error %v", back.Signals[0].Single, err)
			}
		})
	}
	t.Run("a planet's transits are not taken for one", func(t *testing.T) {
		for seed := uint64(1); seed <= 5; seed++ {
			a, _ := run(t, inputs(makeCurve(planetNoise, seed, planet), []signals.Signal{planetSignal()}, nil, nil, nil))
			if s := a.Signals[0].Single; s != "" {
				t.Errorf("draw %d: %q", seed, s)
			}
		}
	})
}

// A signal at half the star's period with a flat-bottomed transit (the probe's planet at
// 2.2 d round a star turning in 4.4 d) is a caution that says what to check, not that the
// dip is probably not a transit; a V-shaped dip at the star's period is said to be probably
// the star's.
func TestAStarPeriodCautionSaysWhatToCheck(t *testing.T) {
	t.Run("a flat-bottomed transit at half the star's period", func(t *testing.T) {
		vb := lightcurve.Variability{Periods: []float64{2 * planet.Period}, Amplitudes: []float64{0.005}}
		a, _ := run(t, starInputs(makeCurve(planetNoise, 4, planet), planet.Period, vb))
		v := verdict(t, a, "signal1", "star_period")
		if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "may be what the detrend left") || !strings.Contains(v.Reason, "check") || strings.Contains(v.Reason, "probably") {
			t.Errorf("%s — %q", v.Verdict, v.Reason)
		}
	})
	t.Run("a V-shaped dip at the star's period", func(t *testing.T) {
		v2 := synth.Binary{Period: 4.4, Epoch: 1.3, Duration: 0.125, Primary: 0.01}
		lc := makeCurve(1000e-6, 23, v2)
		sig := signals.Signal{Period: 4.4, Epoch: 1.3, Duration: 0.6 * v2.Duration, Depth: 0.007, DepthErr: 0.0003}
		in := inputs(lc, []signals.Signal{sig}, nil, nil, nil)
		// 2 % of the star's light: above the dip's depth, under ten times it.
		in.Refs["light_curve"] = []steps.Artifact{detrendedArtifact{curveArtifact{lc}, lightcurve.Variability{Periods: []float64{4.4}, Amplitudes: []float64{0.02}}}}
		a, _ := run(t, in)
		if s := verdict(t, a, "signal1", "shape"); s.Verdict != steps.VerdictCaution {
			t.Fatalf("shape: %s — %q", s.Verdict, s.Reason)
		}
		v := verdict(t, a, "signal1", "star_period")
		if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "with its shape also against a transit, it is probably what the detrend left of the star") {
			t.Errorf("%s — %q", v.Verdict, v.Reason)
		}
	})
}

// ttvFit is a grazing fit (k 0.19, b 1.05: the V a smeared stack gives) of a transit whose
// density is a fiftieth of the star's, with per-transit times that swing sinusoidally by
// amp minutes about one period (60 transits, each timed to ±2 min; invented).
func ttvFit(amp float64) *fit.Artifact {
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, 0.19, 1.05, planetDensity()/50, 24)
	var rows []timing.OC
	chi2 := 0.0
	for n := int64(0); n < 60; n++ {
		oc := amp * math.Sin(2*math.Pi*float64(n)*planet.Period/97)
		rows = append(rows, timing.OC{Epoch: n, OC: oc, SigmaOC: 2})
		chi2 += oc * oc / 4
	}
	f.Times = []fit.PlanetTimes{{Ephemeris: timing.Ephemeris{Rows: rows, Chi2: chi2, Dof: 58, PValue: 1e-100}}}
	return f
}

// Transit times that swing by ±40 min about one period (the probe's timing variations) smear
// the stacked transit into a V: the shape, density and radius verdicts say they may be
// distorted by it, the grazing binary is no longer the reading, and the density's
// mismatch stays a caution. Times that scatter by a minute, however significant, leave the
// verdicts as they were.
func TestTimingVariationsTemperTheShapeVerdicts(t *testing.T) {
	lc := makeCurve(planetNoise, 24, planet)
	sig := []signals.Signal{planetSignal()}
	host := solarStar(planetDensity())
	t.Run("a ±40-minute swing", func(t *testing.T) {
		a, _ := run(t, inputs(lc, sig, ttvFit(40), host, radii("b", 2.8, 3, 3.2)))
		shape := verdict(t, a, "signal1", "shape")
		if shape.Verdict != steps.VerdictCaution || !strings.Contains(shape.Reason, "smeared") || !strings.Contains(shape.Reason, "rather than a grazing binary's") || strings.Contains(shape.Reason, "as a grazing binary gives") {
			t.Errorf("shape: %s — %q", shape.Verdict, shape.Reason)
		}
		for _, test := range []string{"density", "radius"} {
			if v := verdict(t, a, "signal1", test); v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "distorted by the timing variations") {
				t.Errorf("%s: %s — %q", test, v.Verdict, v.Reason)
			}
		}
	})
	for _, c := range []struct {
		name string
		f    *fit.Artifact
	}{
		{"a 1-minute swing", ttvFit(1)},
		{"no transit times", ttvFit(0)},
	} {
		t.Run(c.name, func(t *testing.T) {
			a, _ := run(t, inputs(lc, sig, c.f, host, radii("b", 2.8, 3, 3.2)))
			if shape := verdict(t, a, "signal1", "shape"); !strings.Contains(shape.Reason, "as a grazing binary gives") {
				t.Errorf("shape: %q", shape.Reason)
			}
			for _, test := range []string{"density", "radius"} {
				if v := verdict(t, a, "signal1", test); v.Verdict != steps.VerdictDisagree || strings.Contains(v.Reason, "timing") {
					t.Errorf("%s: %s — %q", test, v.Verdict, v.Reason)
				}
			}
		})
	}
}

// Without a derive step, a fit's radius ratio of 0.6 (the probe's equal eclipsing binary)
// gives a caution of its own, unless the star step gives a host small enough for a planet
// that large (0.15 R☉: 0.6 × 0.15 R☉ = 0.876 R_jup, with 1 R_jup = 0.10276 R☉, the
// IAU 2015 nominal equatorial Jupiter over the nominal solar radius, from memory).
func TestALargeRadiusRatioIsCautionedWithoutADeriveStep(t *testing.T) {
	lc := makeCurve(planetNoise, 25, planet)
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, 0.6, 0.3, planetDensity(), 25)
	small := &stellar.Star{}
	for i := 0; i < 100; i++ {
		small.Radius = append(small.Radius, 0.15)
	}
	cases := []struct {
		name    string
		star    *star.Artifact
		verdict string
		says    string
	}{
		{"without a star", nil, steps.VerdictCaution, "most often a star"},
		{"round a Sun-like star", solarStar(planetDensity()), steps.VerdictCaution, "round the star's 1.00 R☉"},
		{"round a star of 0.15 R☉", &star.Artifact{Star: small}, steps.VerdictAgree, "0.876 R_jup"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			a, _ := run(t, inputs(lc, []signals.Signal{planetSignal()}, f, c.star, nil))
			v := verdict(t, a, "signal1", "radius")
			if v.Verdict != c.verdict || !strings.Contains(v.Reason, c.says) {
				t.Errorf("%s — %q", v.Verdict, v.Reason)
			}
		})
	}
}
