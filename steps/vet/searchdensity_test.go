package vet

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/signals"
	"dipline/steps/star"
	"dipline/steps/units"
)

// The check values below were computed independently with /usr/bin/python3 from G (CODATA
// 2018) and the nominal Sun (IAU 2015 B3: GM☉, R☉, so ρ☉ = 1.40978 g/cm³): a/R* =
// (Gρ P²/(3π))^(1/3) (Seager & Mallén-Ornelas 2003), a central transit's duration
// T = (P/π) arcsin(R*/a) (Winn 2010, b = 0, k → 0), the boxes tried max(0.3 T, cadence) to
// 1.75 T at the assumed density with a 2-minute cadence, all at the planet's P = 3.3 d:
//
//	star 7 g/cm³:              T = 1.5853 h
//	assumed 0.007 g/cm³:       boxes 5.1391–29.978 h; best keeps √(1.5853/5.1391) = 0.5554
//	assumed 7000 g/cm³:        boxes 0.0475–0.2772 h; best keeps √(0.2772/1.5853) = 0.4182
//	assumed 7 g/cm³:           boxes 0.4756–2.7742 h
//	star 10 ρ☉, assumed ρ☉:    T = 1.2550 h, boxes 0.8124–4.7388 h; a transit is shorter
//	                           than 0.8124 h beyond b = 0.7621
//	star 0.25 ρ☉, assumed ρ☉:  T = 4.3112 h, boxes as above; a central transit fills the
//	                           longest box at k = 0.0981
//
// The star's draws scatter by 5 % (solarStar), so its 3σ ends are about e^(±0.15) ρ.

// vetSearched vets the planet's signal, found by a search that assumed rhoSearch (g/cm³),
// against a star of density rhoStar (nil: no star step); no fit, no derive.
func vetSearched(t *testing.T, rhoSearch float64, s *star.Artifact) (*Artifact, Test) {
	t.Helper()
	sig := []signals.Signal{planetSignal()}
	in := inputs(makeCurve(planetNoise, 31, planet), sig, nil, s, nil)
	in.Refs["signals"] = []steps.Artifact{searchOf(sig, rhoSearch)}
	a, _ := run(t, in)
	return a, verdict(t, a, "signal1", "search_density")
}

// density parses a density as a workflow writes it, in g/cm³.
func density(t *testing.T, s string) float64 {
	t.Helper()
	v, err := units.Density.Parse(s)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

func near(got, want, rel float64) bool { return math.Abs(got/want-1) <= rel }

func TestTheSearchDensityIsComparedWithTheStars(t *testing.T) {
	rhoSun := density(t, "1 rho_sun")
	t.Run("a density written in kg/m3 for g/cm3 disagrees, names the unit and says what to write", func(t *testing.T) {
		a, v := vetSearched(t, density(t, "7 kg/m3"), solarStar(7))
		if v.Verdict != steps.VerdictDisagree {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
		for _, want := range []string{"0.007 g/cm3 (a giant's)", "1000", "\"7 kg/m3\" for 7 g/cm3", "check the unit",
			"5.1–30 h", "would last 1.6 h", "too long", "set star_density on the search to the star's, about \"7 g/cm3\", or write star = star.<label> there",
			"not evidence against a planet"} {
			if !strings.Contains(v.Reason, want) {
				t.Errorf("reason %q lacks %q", v.Reason, want)
			}
		}
		checks := []struct {
			name      string
			want, tol float64
		}{
			{"assumed", 0.007, 1e-12}, {"ratio", 1000, 0.01}, {"star_duration", 1.5853, 0.005},
			{"shortest_box", 5.1391, 1e-4}, {"longest_box", 29.978, 1e-4}, {"snr_kept", 0.5554, 0.005},
		}
		for _, c := range checks {
			if f := figure(t, a, "signal1.search_density."+c.name); !near(f.Value, c.want, c.tol) {
				t.Errorf("%s = %.5g, want %.5g", c.name, f.Value, c.want)
			}
		}
		// It is about the search's setting: the summary does not count it against the planet.
		line := a.Signals[0].summary()
		if !strings.Contains(line, "no test disagrees with a planet") || !strings.Contains(line, "set star_density on the search") {
			t.Errorf("summary line %q", line)
		}
	})
	t.Run("a density written in g/cm3 for kg/m3 disagrees and names the unit", func(t *testing.T) {
		a, v := vetSearched(t, density(t, "7000 g/cm3"), solarStar(7))
		if v.Verdict != steps.VerdictDisagree || !strings.Contains(v.Reason, "\"7000 g/cm3\" for 7000 kg/m3, which is 7 g/cm3") ||
			!strings.Contains(v.Reason, "too short") {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
		if f := figure(t, a, "signal1.search_density.snr_kept"); !near(f.Value, 0.4182, 0.01) {
			t.Errorf("snr_kept = %.4g, want 0.4182", f.Value)
		}
	})
	t.Run("the Sun's default on a star of 10 ρ☉ is a caution naming the chords the boxes miss", func(t *testing.T) {
		// The star's central transit (1.26 h) lies within the boxes (0.81–4.7 h), so the
		// search could find it: no disagreement. But the star is 10 times as dense, beyond
		// the twice the boxes were chosen for: chords beyond b = 0.76 are missed and the grid
		// is coarser than asked.
		a, v := vetSearched(t, rhoSun, solarStar(10*rhoSun))
		if v.Verdict != steps.VerdictCaution {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
		for _, want := range []string{"1.41 g/cm3 (the Sun's, the search's default)", "outside the range", "beyond b = 0.76",
			"0.81–4.7 h", "lasts 1.3 h", "coarser", "about \"14 g/cm3\""} {
			if !strings.Contains(v.Reason, want) {
				t.Errorf("reason %q lacks %q", v.Reason, want)
			}
		}
		if strings.Contains(v.Reason, "kg/m3") {
			t.Errorf("reason %q names a unit slip for the default", v.Reason)
		}
		if f := figure(t, a, "signal1.search_density.snr_kept"); f.Value != 1 {
			t.Errorf("snr_kept = %v, want 1", f.Value)
		}
	})
	t.Run("a star a quarter as dense as assumed is a caution naming the planets the boxes miss", func(t *testing.T) {
		_, v := vetSearched(t, rhoSun, solarStar(0.25*rhoSun))
		if v.Verdict != steps.VerdictCaution || !strings.Contains(v.Reason, "larger than k = 0.10") || !strings.Contains(v.Reason, "lasts 4.3 h") {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
	})
	t.Run("matching densities agree", func(t *testing.T) {
		a, v := vetSearched(t, density(t, "7 g/cm3"), solarStar(7))
		if v.Verdict != steps.VerdictAgree || !strings.Contains(v.Reason, "0.48–2.8 h") || !strings.Contains(v.Reason, "lasts 1.6 h") {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
		if c := a.Cautions(); len(c) != 1 {
			t.Errorf("cautions %q, want only the validation caution", c)
		}
	})
	t.Run("a star twice as dense as assumed still agrees", func(t *testing.T) {
		// At 3σ (5 % draws) the star may be 1.7 times as dense, within the 2 the boxes cover.
		_, v := vetSearched(t, 7, solarStar(14))
		if v.Verdict != steps.VerdictAgree {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
	})
	t.Run("without a star step it cannot be tested", func(t *testing.T) {
		_, v := vetSearched(t, 0.007, nil)
		if v.Verdict != NotRun || !strings.Contains(v.Reason, "no star given") {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
	})
	t.Run("signals from a step that does not say its density cannot be tested", func(t *testing.T) {
		a, _ := run(t, inputs(makeCurve(planetNoise, 31, planet), []signals.Signal{planetSignal()}, nil, solarStar(7), nil))
		if v := verdict(t, a, "signal1", "search_density"); v.Verdict != NotRun || !strings.Contains(v.Reason, "does not say") {
			t.Fatalf("%s — %s", v.Verdict, v.Reason)
		}
	})
}

// A transit shorter than the cadence is seen one exposure long whatever the density: the
// search's shortest box is then the cadence, and a matching density must not be blamed.
func TestATransitShorterThanTheCadenceIsNotBlamedOnTheDensity(t *testing.T) {
	// P = 0.5 d round a 7 g/cm³ star: a central transit of 0.85 h (python3, as above),
	// under a cadence of 2.4 h (0.1 d).
	sig := []signals.Signal{{Period: 0.5, Epoch: 0.1, Duration: 0.1, Depth: 1e-3, DepthErr: 1e-4, SNR: 10, SDE: 9, Transits: 50}}
	in := inputs(makeCurve(planetNoise, 32), sig, nil, solarStar(7), nil)
	s := searchOf(sig, 7)
	s.Cadence = 0.1
	in.Refs["signals"] = []steps.Artifact{s}
	a, _ := run(t, in)
	if v := verdict(t, a, "signal1", "search_density"); v.Verdict != steps.VerdictAgree {
		t.Errorf("%s — %s", v.Verdict, v.Reason)
	}
}
