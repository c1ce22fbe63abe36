package vet

import (
	"bytes"
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/derive"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/units"
)

// fixture is the golden case: the planet with a fit, a star and a derive step, and a
// second signal at twice its period, so that every test runs.
func fixture(t *testing.T) *Artifact {
	t.Helper()
	rho := planetDensity()
	lc := makeCurve(planetNoise, 2024, planet)
	second := planetSignal()
	second.Period *= 2
	second.Epoch += planet.Period / 2
	f := planetFit(planet.Period, planet.Epoch+4*planet.Period, planet.K, planet.B, rho, 2024)
	sigs := []signals.Signal{planetSignal(), second}
	in := inputs(lc, sigs, f, solarStar(rho), radii("b", 0.47, 0.49, 0.51))
	// The search assumed the star's density, as a workflow with a star step should.
	in.Refs["signals"] = []steps.Artifact{searchOf(sigs, rho)}
	// The light curve comes with the star's own variability, at a period unrelated to both
	// signals' (4.9 d: 3.3 and 6.6 d are 0.67 and 1.35 times it).
	in.Refs["light_curve"] = []steps.Artifact{detrendedArtifact{curveArtifact{lc},
		lightcurve.Variability{Periods: []float64{4.9}, Amplitudes: []float64{0.002}}}}
	a, _ := run(t, in)
	return a
}

func TestGoldenRecord(t *testing.T) {
	golden.Check(t, "../..", "vet", version, fixture(t))
}

func TestTheSameInputsGiveTheSameBytes(t *testing.T) {
	if !bytes.Equal(fixture(t).Encode(), fixture(t).Encode()) {
		t.Error("two runs on the same inputs gave different bytes")
	}
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	a := fixture(t)
	b := a.Encode()
	t.Run("the decoded artifact equals the original", func(t *testing.T) {
		back, err := Decode(b)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(back, a) {
			t.Error("decoded artifact differs")
		}
		if !bytes.Equal(back.Encode(), b) {
			t.Error("re-encoding changed the bytes")
		}
	})
	t.Run("every truncation is refused", func(t *testing.T) {
		for n := 0; n < len(b); n += 1 + n/50 {
			if _, err := Decode(b[:n]); err == nil {
				t.Fatalf("%d of %d bytes decoded without error", n, len(b))
			}
		}
	})
	t.Run("a short record says so", func(t *testing.T) {
		if _, err := Decode(b[:len(b)-3]); !errors.Is(err, codec.ErrShort) {
			t.Errorf("error %v, want codec.ErrShort", err)
		}
	})
	t.Run("an unknown verdict is refused", func(t *testing.T) {
		bad := &Artifact{Signals: []Signal{{Name: "signal1", Tests: []Test{{Name: "odd_even", Verdict: "maybe"}}}}}
		if _, err := Decode(bad.Encode()); err == nil || !strings.Contains(err.Error(), "maybe") {
			t.Errorf("error %v", err)
		}
	})
	t.Run("the kind's decoder returns a nil artifact on error", func(t *testing.T) {
		if art, err := (Kind{}).Decode(b[:10]); art != nil || err == nil {
			t.Errorf("artifact %v, error %v", art, err)
		}
	})
}

func FuzzDecode(f *testing.F) {
	a := &Artifact{Signals: []Signal{{Name: "signal1", Planet: "b", Tests: []Test{{Name: "odd_even", Verdict: steps.VerdictAgree,
		Threshold: "3 σ", Reason: "fine", Figures: []steps.Figure{{Name: "signal1.odd_even.sigma", Value: 0.5, Doc: "d"}}}}}}}
	f.Add(a.Encode())
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, b []byte) {
		art, err := Decode(b)
		if err != nil {
			return
		}
		if !bytes.Equal(art.Encode(), b) {
			t.Fatal("a decoded artifact does not re-encode to its bytes")
		}
	})
}

func TestTheArtifactJudgesEveryTest(t *testing.T) {
	a := fixture(t)
	t.Run("it implements the engine's interfaces", func(t *testing.T) {
		var art steps.Artifact = a
		if _, ok := art.(steps.Judge); !ok {
			t.Error("not a steps.Judge")
		}
		if len(steps.CautionsOf(art)) != len(a.Signals)+1 {
			t.Errorf("cautions %q, want one per signal and the validation caution", steps.CautionsOf(art))
		}
	})
	t.Run("every verdict is one of the three words or not run, with a threshold and a reason", func(t *testing.T) {
		ok := map[string]bool{steps.VerdictAgree: true, steps.VerdictCaution: true, steps.VerdictDisagree: true, NotRun: true}
		vs := a.Verdicts()
		if len(vs) != 2*10 {
			t.Errorf("%d verdicts, want 10 per signal", len(vs))
		}
		for _, v := range vs {
			if !ok[v.Verdict] || v.Threshold == "" || v.Reason == "" || v.Subject == "" {
				t.Errorf("%+v", v)
			}
		}
	})
	t.Run("every figure has a doc and a unique name", func(t *testing.T) {
		seen := map[string]bool{}
		for _, f := range a.Figures() {
			if f.Doc == "" || seen[f.Name] {
				t.Errorf("figure %q: doc %q, seen before %v", f.Name, f.Doc, seen[f.Name])
			}
			seen[f.Name] = true
		}
		for _, name := range []string{"signal1.disagree", "signal2.disagree", "signal1.odd_even.sigma", "signal1.secondary.depth",
			"signal1.secondary.significance", "signal1.secondary.albedo", "signal1.blend.max_delta_mag", "signal1.density.ratio", "signal1.search_density.ratio",
			"signal1.shape.grazing_probability", "signal1.depth.segments_p_value", "signal1.period_ratio.signal2", "signal1.radius.radius_jup",
			"signal1.star_period.nearest", "signal1.star_period.ratio", "signal2.star_period.tolerance"} {
			if !seen[name] {
				t.Errorf("no figure %s", name)
			}
		}
	})
	t.Run("the fit's letter is given to the matched signal only", func(t *testing.T) {
		if a.Signals[0].Planet != "b" || a.Signals[1].Planet != "" {
			t.Errorf("planets %q and %q", a.Signals[0].Planet, a.Signals[1].Planet)
		}
	})
}

func TestCheckNamesTheAttributeAtFault(t *testing.T) {
	cases := []struct {
		name, attr string
		val        any
	}{
		{"a zero odd/even threshold", "odd_even_sigma", 0.0},
		{"a false-alarm probability of one", "secondary_false_alarm", 1.0},
		{"a negative depth ratio", "secondary_depth_ratio", -0.1},
		{"an infinite albedo", "max_albedo", math.Inf(1)},
		{"a wavelength of 10 nm", "band_wavelength", "10 nm"},
		{"a grazing probability above one", "grazing_probability", 1.5},
		{"a V-shape fraction above one half", "v_shape_fraction", 0.6},
		{"a negative density threshold", "density_sigma", -3.0},
		{"a depth p-value of zero", "depth_false_alarm", 0.0},
		{"a ratio tolerance of one", "ratio_tolerance", 1.0},
		{"a zero planet radius", "max_planet_radius", "0 R_jup"},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			_, err := steptest.Config(New(), block(map[string]any{c.attr: c.val}))
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one naming %s", err, c.attr)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		cfg, err := steptest.Config(New(), block(nil))
		if err != nil {
			t.Fatal(err)
		}
		// The tags' defaults are the constants whose reasons are given beside them, to the
		// bit (they enter step keys).
		c := cfg.(*Config)
		o := c.options()
		want := Options{OddEvenSigma: defaultOddEvenSigma, SecondaryAlarm: defaultSecondaryAlarm,
			SecondaryRatio: defaultSecondaryRatio, MaxAlbedo: defaultMaxAlbedo, Wavelength: defaultWavelength,
			GrazingProbability: defaultGrazingProbability, VShapeFraction: defaultVShapeFraction,
			DensitySigma: defaultDensitySigma, DepthAlarm: defaultDepthAlarm, MaxPlanetRadius: o.MaxPlanetRadius,
			VariabilityRatio: defaultVariabilityRatio}
		if o != want || c.RatioTolerance != nil || c.StarTolerance != nil || c.Fit != nil || c.Star != nil || c.Derive != nil {
			t.Fatalf("defaults decoded as %+v", c)
		}
	})
}

func TestTheRadiusLimitIsDerivesOwn(t *testing.T) {
	// One threshold in one place: the vet kind's default is the derive kind's.
	want := deriveMaxPlanetRadius()
	got := steptest.MustConfig(New(), block(nil)).(*Config).MaxPlanetRadius
	if want == 0 || got != want {
		t.Errorf("vet's default %v R_sun, derive's %v R_sun", got, want)
	}
	// Both are written the same way, so that the schemas (and `dipline kinds`) show one value.
	if vp, dp := New().Schema().Param("max_planet_radius"), derive.New().Schema().Param("max_planet_radius"); vp.Default != dp.Default {
		t.Errorf("vet's default is written %q, derive's %q", vp.Default, dp.Default)
	}
	// And it is 2 R_jup (common practice, as derive documents), in R_J to the bit.
	if r, _ := units.Radius.Parse("2 R_jup"); got != r {
		t.Errorf("default %v R_sun, want 2 R_jup = %v", got, r)
	}
	if o := steptest.MustConfig(New(), block(nil)).(*Config).options(); o.MaxPlanetRadius != 2 {
		t.Errorf("default %v R_jup, want 2", o.MaxPlanetRadius)
	}
}

func TestBrokenInputsAreRefused(t *testing.T) {
	lc := makeCurve(planetNoise, 1, planet)
	cases := []struct {
		name string
		in   steps.Inputs
		says string
		bad  bool // a user's data problem, not a program fault
	}{
		{"a signal with no duration", inputs(lc, []signals.Signal{{Period: 3, Epoch: 1}}, nil, nil, nil), "signal 1", true},
		{"a signals reference without signals", steps.Inputs{Refs: map[string][]steps.Artifact{"signals": {curveArtifact{lc}}, "light_curve": {curveArtifact{lc}}}}, "signals does not refer", false},
		{"a light curve reference without a light curve", steps.Inputs{Refs: map[string][]steps.Artifact{"signals": {signalArtifact{}}, "light_curve": {signalArtifact{}}}}, "light_curve does not refer", false},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			_, _, err := steptest.Run(New(), block(nil), c.in, nil)
			if err == nil || !strings.Contains(err.Error(), c.says) || steps.IsInputError(err) != c.bad {
				t.Errorf("error %v", err)
			}
		})
	}
	t.Run("a search without signals gives an empty vetting and a note", func(t *testing.T) {
		a, notes := run(t, inputs(lc, nil, nil, nil, nil))
		if len(a.Signals) != 0 || !strings.Contains(strings.Join(notes, "\n"), "no signal") {
			t.Errorf("signals %d, notes %q", len(a.Signals), notes)
		}
	})
}
