package search

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
	"dipline/steps/search/bls"
	"dipline/steps/star"
)

// These tests cover a search that takes its star's density from a star step (star), and
// the caution on a written star_density that makes the star a giant's.

// hostStar is an invented star step's result: 2001 density draws rho·exp(0.08·z), z evenly
// from −1 to 1, so that the middle draw, the median of ln ρ, is rho itself; radii about
// 0.8 R☉.
func hostStar(rho float64) *star.Artifact {
	s := &stellar.Star{}
	for i := range 2001 {
		z := float64(i-1000) / 1000
		s.Density = append(s.Density, rho*math.Exp(0.08*z))
		s.Radius = append(s.Radius, 0.8+0.02*z)
	}
	return &star.Artifact{Method: "invented", Star: s}
}

// runWith runs the search with the given block and inputs (the light curve is added).
func runWith(t *testing.T, set map[string]any, lc *lightcurve.LightCurve, refs map[string][]steps.Artifact) (*Artifact, []string, error) {
	t.Helper()
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{lc}}}}
	for k, v := range refs {
		in.Refs[k] = v
	}
	art, notes, err := steptest.Run(New(), set, in, steptest.Pool(2))
	if err != nil {
		return nil, notes, err
	}
	return art.(*Artifact), notes, nil
}

// planetCurve is an invented light curve: days days at 30-minute cadence, white noise of
// 1000 ppm (errors alike), and a box transit of the given depth every per days from epoch,
// lasting the central duration round a star of density rho (g/cm³).
func planetCurve(days, per, epoch, depth, rho float64, seed uint64) *lightcurve.LightCurve {
	g := rng.New(seed)
	dur := bls.CentralDuration(per, rho)
	s := lightcurve.Segment{ID: "1", Exposure: 30.0 / 1440, Contamination: math.NaN()}
	for t := 0.0; t <= days; t += 30.0 / 1440 {
		f := 1 + 1e-3*g.Normal()
		if x := (t - epoch) / per; math.Abs(x-math.Round(x))*per < dur/2 {
			f -= depth
		}
		s.Time, s.Flux, s.Err = append(s.Time, t), append(s.Flux, f), append(s.Err, 1e-3)
	}
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{s}}
}

func TestAStarStepGivesTheDensityTheSearchIsBuiltFor(t *testing.T) {
	// Source: hostStar's construction (its median draw is 2.5 g/cm³) and the search's own
	// grid: a search given the star step must be the search given that density by
	// star_density, to the bit, apart from saying where the density came from.
	lc := fixture()
	set := defaults()
	set["star"] = "star.host"
	withStar, notes, err := runWith(t, set, lc, map[string][]steps.Artifact{"star": {hostStar(2.5)}})
	if err != nil {
		t.Fatal(err)
	}
	rho := withStar.AssumedDensity()
	if math.Abs(rho-2.5) > 1e-12 {
		t.Fatalf("the search was built for %v g/cm3, want the star's median draw, 2.5", rho)
	}
	joined := strings.Join(notes, "\n")
	if !strings.Contains(joined, "star density: 2.5 g/cm3") || !strings.Contains(joined, "the median of star.host's draws") {
		t.Errorf("the notes do not say the density came from the star step:\n%s", joined)
	}
	cfg := steptest.MustConfig(New(), defaults()).(*Config)
	cfg.Density = &rho
	given, _, err := Search(*cfg, lc, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !withStar.FromStar || given.FromStar {
		t.Fatalf("from a star step: %v and %v, want true for star and false for star_density", withStar.FromStar, given.FromStar)
	}
	if withStar.Grid != given.Grid {
		t.Errorf("grids differ: %+v with the star, %+v with star_density", withStar.Grid, given.Grid)
	}
	// The Sun's grid would differ: the density is not ignored.
	sun, _, err := Search(*steptest.MustConfig(New(), defaults()).(*Config), lc, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if sun.Grid == withStar.Grid {
		t.Error("the star step's density left the Sun's grid unchanged")
	}
	sigs := withStar.Signals()
	if len(sigs) == 0 || math.Abs(sigs[0].Period-3.3) > 0.01 {
		t.Fatalf("signals %+v, want the fixture's 3.3 d box", sigs)
	}
	given.FromStar = true
	if !bytes.Equal(withStar.Encode(), given.Encode()) {
		t.Error("the search given the star step differs from the one given its density by star_density")
	}
}

func TestAStarWithoutADensityIsRefusedOnStar(t *testing.T) {
	set := defaults()
	set["star"] = "star.host"
	noDensity := &star.Artifact{Star: &stellar.Star{Radius: []float64{0.8, 0.81}}}
	_, _, err := runWith(t, set, fixture(), map[string][]steps.Artifact{"star": {noDensity}})
	var ae *steps.AttrError
	if !errors.As(err, &ae) || ae.Attr != "star" || !strings.Contains(ae.Msg, "star.host gives no density") {
		t.Errorf("error %v, want one on star saying it gives no density", err)
	}
}

func TestStarAndStarDensityTogetherAreRefused(t *testing.T) {
	set := defaults()
	set["star"] = "star.host"
	set["star_density"] = "7 g/cm3"
	_, err := steptest.Config(New(), set)
	var ae *steps.AttrError
	if !errors.As(err, &ae) || ae.Attr != "star_density" || !strings.Contains(ae.Msg, "not taken together with star = star.host") {
		t.Fatalf("error %v, want one on star_density naming star", err)
	}
	t.Run("each alone is taken", func(t *testing.T) {
		for _, drop := range []string{"star", "star_density"} {
			one := defaults()
			for k, v := range set {
				if k != drop {
					one[k] = v
				}
			}
			if _, err := steptest.Config(New(), one); err != nil {
				t.Errorf("without %s: %v", drop, err)
			}
		}
	})
}

func TestAKilogramPerCubicMetreSlipIsCautioned(t *testing.T) {
	// A 3.7 d planet of an invented dwarf of 7 g/cm³, 40 days of data. Written as
	// "7 kg/m3", the density is a giant's 0.007 g/cm³, whose Roche-type limit, the orbit at
	// 3 stellar radii, is P = sqrt(81π/(Gρ)) (bls.RochePeriod; Ofir 2014, A&A 561, A138):
	// 8.54 d with G = 6.674e-11 m³ kg⁻¹ s⁻² (CODATA 2018) and ρ = 7 kg/m³.
	lc := planetCurve(40, 3.7, 1.3, 3e-3, 7, 37)
	set := defaults()
	set["star_density"] = "7 kg/m3"
	slip, _, err := runWith(t, set, lc, nil)
	if err != nil {
		t.Fatal(err)
	}
	roche := math.Sqrt(81*math.Pi/(6.674e-11*7)) / 86400
	if lo := 1 / slip.Grid.FMax; math.Abs(lo/roche-1) > 1e-3 {
		t.Fatalf("shortest period %v d, want the Roche-type limit %v d", lo, roche)
	}
	for _, s := range slip.Signals() {
		if math.Abs(s.Period-3.7) < 0.1 {
			t.Fatalf("the 3.7 d planet was found below the shortest period searched: %+v", s)
		}
	}
	cautions := strings.Join(slip.Cautions(), "\n")
	for _, w := range []string{"star_density is 0.007 g/cm3, a giant's", "periods below 8.5 d could not be searched",
		"If the star is a dwarf, or the value was meant in g/cm3 (7 kg/m3 is 0.007 g/cm3), write its density or star = star.<label>"} {
		if !strings.Contains(cautions, w) {
			t.Errorf("no caution with %q in:\n%s", w, cautions)
		}
	}
	t.Run("the density as meant finds the planet, without the caution", func(t *testing.T) {
		set["star_density"] = "7 g/cm3"
		meant, _, err := runWith(t, set, lc, nil)
		if err != nil {
			t.Fatal(err)
		}
		if s := meant.Signals(); len(s) == 0 || math.Abs(s[0].Period-3.7) > 0.01 {
			t.Errorf("signals %+v, want the 3.7 d planet first", s)
		}
		for _, c := range meant.Cautions() {
			if strings.Contains(c, "star_density") {
				t.Errorf("caution %q for a dwarf's density", c)
			}
		}
	})
	t.Run("the same density from a star step is not cautioned", func(t *testing.T) {
		withStar := defaults()
		withStar["star"] = "star.host"
		art, _, err := runWith(t, withStar, lc, map[string][]steps.Artifact{"star": {hostStar(0.007)}})
		if err != nil {
			t.Fatal(err)
		}
		if art.Grid.FMax != slip.Grid.FMax || !art.RocheCut {
			t.Fatalf("the star step's 0.007 g/cm3 did not cut the periods as star_density did: %v d", 1/art.Grid.FMax)
		}
		for _, c := range art.Cautions() {
			if strings.Contains(c, "star_density") {
				t.Errorf("caution %q on a density the star step gave", c)
			}
		}
	})
}

func TestTheGiantCautionRule(t *testing.T) {
	// Source: densityCaution's rule, on hand-made results: a written density below 0.05
	// g/cm³ whose Roche-type limit (bls.RochePeriod) set the shortest period, cutting at
	// least a third of the range from 0.2 d to the longest period searched in ln P; the
	// slip named only for a density that is a dwarf's (0.5–50 g/cm³) read in kg/m³.
	art := func(rho, longest float64, fromStar, cut bool) *Artifact {
		return &Artifact{Grid: bls.Grid{Density: rho, FMax: 1 / bls.RochePeriod(rho), FMin: 1 / longest},
			FromStar: fromStar, RocheCut: cut}
	}
	cases := []struct {
		name      string
		a         *Artifact
		caution   bool
		slipNamed bool
	}{
		// 0.04 g/cm³: the limit is 3.6 d; ln(3.6/0.2)/ln(45/0.2) = 0.53.
		{"a giant's 0.04 g/cm3 on 90 days is cautioned, as 40 kg/m3", art(0.04, 45, false, true), true, true},
		// The same over ten years: ln(3.6/0.2)/ln(1826/0.2) = 0.32, under a third.
		{"a giant's 0.04 g/cm3 over ten years cuts too little to caution", art(0.04, 1826, false, true), false, false},
		// 0.0003 g/cm³ (a bright giant of 1.2 M☉ and 16 R☉, from memory): 0.3 kg/m³ would
		// be no dwarf's; the limit is 41 d, nearly all of a 90 d range.
		{"a bright giant's 0.0003 g/cm3 is cautioned without naming a slip", art(0.0003, 45, false, true), true, false},
		{"a density from the star step is not cautioned", art(0.007, 45, true, true), false, false},
		{"a written period range is searched as asked", art(0.007, 45, false, false), false, false},
		{"0.05 g/cm3 is no giant's", art(0.05, 45, false, true), false, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := c.a.densityCaution()
			if (got != "") != c.caution || strings.Contains(got, "kg/m3") != c.slipNamed {
				t.Errorf("caution %q; want one: %v, naming the slip: %v", got, c.caution, c.slipNamed)
			}
		})
	}
}

func TestADataSpanShorterThanTheGiantsLimitNamesTheSlip(t *testing.T) {
	// A 30-day light curve searches periods to 15 d. Source: bls.RochePeriod as above:
	// 1 kg/m³ puts the limit at 22.6 d, 0.3 kg/m³ at 41 d; the search refuses both, and
	// names the slip only for the first (1 g/cm³ is a dwarf's, 0.3 g/cm³ none).
	for _, c := range []struct {
		density string
		slip    bool
	}{{"1 kg/m3", true}, {"0.3 kg/m3", false}} {
		set := defaults()
		set["star_density"] = c.density
		_, _, err := runWith(t, set, fixture(), nil)
		if !steps.IsInputError(err) || !strings.Contains(err.Error(), "too short for two transits") || !strings.Contains(err.Error(), "a giant's") {
			t.Fatalf("%s: error %v, want the span refused with the density called a giant's", c.density, err)
		}
		if named := strings.Contains(err.Error(), "kg/m3 is"); named != c.slip {
			t.Errorf("%s: %v; the slip named: %v, want %v", c.density, err, named, c.slip)
		}
	}
}

func TestTheDenseCautionRule(t *testing.T) {
	// Source: denseCaution's rule, on hand-made results: a written density above
	// stardensity.Dense (200 g/cm³) is cautioned as denser than any main-sequence star;
	// the slip is named only when the value read in kg/m³ is a dwarf's (0.5–50 g/cm³):
	// 7000 kg/m³ is 7 g/cm³, 1e9 kg/m³ would be 1e6 g/cm³, a white dwarf's.
	art := func(rho float64, fromStar bool) *Artifact {
		return &Artifact{Grid: bls.Grid{Density: rho, FMax: 1 / 0.2, FMin: 1.0 / 45, N: 1000}, FromStar: fromStar}
	}
	cases := []struct {
		name    string
		a       *Artifact
		caution bool
		slip    string
	}{
		{"7000 g/cm3 is cautioned, as 7000 kg/m3 meant", art(7000, false), true, "If the value was meant in kg/m3 (7000 kg/m3 is 7 g/cm3), write 7 g/cm3"},
		{"1e9 g/cm3 is cautioned without naming a slip", art(1e9, false), true, ""},
		{"a density from the star step is not cautioned", art(7000, true), false, ""},
		{"150 g/cm3 is within a dwarf's reach", art(150, false), false, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := c.a.densityCaution()
			if (got != "") != c.caution || (c.caution && !strings.Contains(got, "denser than any main-sequence star")) {
				t.Fatalf("caution %q; want one: %v", got, c.caution)
			}
			if c.slip != "" && !strings.Contains(got, c.slip) || c.slip == "" && strings.Contains(got, "kg/m3") {
				t.Errorf("caution %q; want the slip named as %q", got, c.slip)
			}
		})
	}
	t.Run("the same slip the other way is still the giant's", func(t *testing.T) {
		// 7 kg/m³ written for 7 g/cm³: 0.007 g/cm³, whose limit (8.5 d) cuts most of 45 d.
		a := &Artifact{Grid: bls.Grid{Density: 0.007, FMax: 1 / bls.RochePeriod(0.007), FMin: 1.0 / 45}, RocheCut: true}
		if got := a.densityCaution(); !strings.Contains(got, "a giant's") || !strings.Contains(got, "(7 kg/m3 is 0.007 g/cm3)") {
			t.Errorf("caution %q", got)
		}
	})
}
