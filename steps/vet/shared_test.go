package vet

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/fit"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/synth"
)

// jointFit joins two one-planet fits (planetFit) into one fit of two planets, b and c,
// with the first's star_density column for both, as a joint fit shares one stellar density:
// the second's draws give planet c's columns.
func jointFit(b, c *fit.Artifact) *fit.Artifact {
	names := append([]string{}, fitColumns...)
	for _, n := range fitColumns {
		if strings.HasPrefix(n, "b.") {
			names = append(names, "c."+strings.TrimPrefix(n, "b."))
		}
	}
	out := &fit.Artifact{Names: names, Reference: append(append([]fit.Reference{}, b.Reference...), c.Reference...)}
	w := len(fitColumns)
	for i := 0; i < len(b.Samples)/w; i++ {
		out.Samples = append(out.Samples, b.Samples[i*w:(i+1)*w]...)
		for j, n := range fitColumns {
			if strings.HasPrefix(n, "b.") {
				out.Samples = append(out.Samples, c.Samples[i*w+j])
			}
		}
	}
	return out
}

// sharedSentence starts the reasons of the verdicts that rest on a joint fit's shared star
// when another of its signals is found not to be a planet on the target.
const sharedSentence = "the fit shares one stellar density and limb darkening between signal1 and signal2"

// A planet fitted jointly with an eclipsing binary found at half its period (odd/even and
// secondary disagree for it): the planet's verdicts that rest on the shared star (shape,
// density, blend, radius) say first that the binary pulls the shared density and that they
// wait for a fit without it, but keep their verdicts; its other verdicts, and the binary's
// own, say nothing of it. Two real planets fitted jointly carry no such sentence.
func TestAJointFitWithARejectedSignalQualifiesTheOthersFitVerdicts(t *testing.T) {
	rho := planetDensity()
	pf := planetFit(planet.Period, planet.Epoch, planet.K, planet.B, rho, 5)
	t.Run("a binary in the joint fit", func(t *testing.T) {
		lc := makeCurve(1000e-6, 7, planet, binary)
		bin := binaryHalfSignal()
		// The binary as a fit of one stellar density would read it: k from its mean depth
		// (√0.0045 ≈ 0.067), on the planet's density draws.
		f := jointFit(pf, planetFit(bin.Period, bin.Epoch, 0.067, 0.5, rho, 6))
		a, notes := run(t, inputs(lc, []signals.Signal{planetSignal(), bin}, f, solarStar(rho), radii("b", 0.45, 0.49, 0.53)))
		if v := verdict(t, a, "signal2", "odd_even"); v.Verdict != steps.VerdictDisagree {
			t.Fatalf("the binary's odd/even test: %s, want disagree (the case does not hold)%s", v.Verdict, describe(a))
		}
		for _, test := range []string{"shape", "density", "blend", "radius"} {
			v := verdict(t, a, "signal1", test)
			if !strings.HasPrefix(v.Reason, sharedSentence) || !strings.Contains(v.Reason, "its odd and even dips differ") ||
				!strings.Contains(v.Reason, "not to be trusted until it is fitted without signal2 (the fit's planets = 1") {
				t.Errorf("signal1 %s: %q, want it to start with the shared fit's caveat", test, v.Reason)
			}
			if v.Verdict == steps.VerdictDisagree {
				t.Errorf("signal1 %s: %s; the caveat must not reject the planet", test, v.Verdict)
			}
		}
		for _, test := range []string{"odd_even", "secondary", "star_period"} {
			if v := verdict(t, a, "signal1", test); strings.Contains(v.Reason, "shares one stellar density") {
				t.Errorf("signal1 %s does not rest on the fit but says %q", test, v.Reason)
			}
		}
		for _, test := range []string{"shape", "density"} {
			if v := verdict(t, a, "signal2", test); strings.Contains(v.Reason, "shares one stellar density") {
				t.Errorf("the rejected signal's %s says %q", test, v.Reason)
			}
		}
		found := false
		for _, n := range notes {
			found = found || strings.HasPrefix(n, "signal1: "+sharedSentence)
		}
		if !found {
			t.Errorf("no note says it: %q", notes)
		}
	})
	t.Run("two planets in the joint fit", func(t *testing.T) {
		// A second invented planet on the same star: 5.7 d, a/R* from the same density by
		// Kepler's third law, a ∝ P^(2/3).
		second := synth.Transit{Period: 5.7, Epoch: 2.3, K: 0.04, B: 0.2, AR: planet.AR * math.Pow(5.7/planet.Period, 2.0/3), U1: 0.4, U2: 0.25, Exposure: cadence, Sub: 3}
		lc := makeCurve(planetNoise, 4, planet, second)
		s2 := signals.Signal{Period: second.Period, Epoch: second.Epoch, Duration: 0.9 * second.T14(), Depth: 1.8e-3, DepthErr: 0.15e-3, SNR: 14, SDE: 10, Transits: 4}
		f := jointFit(pf, planetFit(second.Period, second.Epoch, second.K, second.B, rho, 6))
		a, notes := run(t, inputs(lc, []signals.Signal{planetSignal(), s2}, f, solarStar(rho), nil))
		for _, v := range a.Verdicts() {
			if strings.Contains(v.Reason, "shares one stellar density") || v.Verdict == steps.VerdictDisagree {
				t.Errorf("%s %s: %s — %q", v.Subject, v.Test, v.Verdict, v.Reason)
			}
		}
		for _, n := range notes {
			if strings.Contains(n, "shares one stellar density") {
				t.Errorf("note %q", n)
			}
		}
	})
}

// A search set for a far denser star reports a box a sixth of the transit's length; with
// the fit matched, the vet windows the transit with the fit's total duration T14, says so,
// and the secondary search no longer takes the transit's own edges for a dip beside it.
func TestTheFitsDurationWindowsTheTransit(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	sig := planetSignal()
	sig.Duration = planet.T14() / 6
	rho := planetDensity()
	a, _ := run(t, inputs(lc, []signals.Signal{sig}, planetFit(planet.Period, planet.Epoch, planet.K, planet.B, rho, 5), solarStar(rho), nil))
	if v := verdict(t, a, "signal1", "secondary"); v.Verdict != steps.VerdictAgree {
		t.Errorf("secondary: %s — %q, want agree: no dip away from the transit", v.Verdict, v.Reason)
	}
	if v := verdict(t, a, "signal1", "odd_even"); v.Verdict != steps.VerdictAgree {
		t.Errorf("odd/even: %s — %q, want agree", v.Verdict, v.Reason)
	}
	if n := a.Signals[0].FitNote; !strings.Contains(n, "its total duration T14 of") || !strings.Contains(n, "sets the windows") {
		t.Errorf("fit note %q does not say which duration was used", n)
	}
}

// The planet found at twice its period (a search whose shortest period was cut, e.g. by a
// giant's Roche-type limit): its other transits sit at phase 0.5, as deep as the transit.
// The secondary test says that the same planet at half the period would give that dip, a
// caution rather than a binary's secondary; a binary's shallower secondary still
// disagrees (TestABinaryAtItsTruePeriodShowsItsSecondary).
func TestAPlanetAtTwiceItsPeriodIsNotCalledABinary(t *testing.T) {
	lc := makeCurve(planetNoise, 4, planet)
	sig := planetSignal()
	sig.Period *= 2
	a, _ := run(t, inputs(lc, []signals.Signal{sig}, nil, nil, nil))
	v := verdict(t, a, "signal1", "secondary")
	if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "the signal itself at half the period (3.3") {
		t.Errorf("secondary: %s — %q, want a caution naming half the period%s", v.Verdict, v.Reason, describe(a))
	}
}
