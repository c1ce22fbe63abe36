package search

import (
	"bytes"
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/steptest"
	"dipline/steps/search/bls"
)

// curveArtifact stands in for a photometry or detrend result.
type curveArtifact struct{ lc *lightcurve.LightCurve }

func (c curveArtifact) LightCurve() *lightcurve.LightCurve { return c.lc }
func (c curveArtifact) Encode() []byte                     { return c.lc.Encode() }
func (c curveArtifact) Figures() []steps.Figure            { return nil }

// fixture is a 30-day, 30-minute light curve in two segments with a 2.5 d gap, white
// noise of 1000 ppm and a box of 3.3 d, 2500 ppm, lasting the central duration around a
// Sun-like star (invented data).
func fixture() *lightcurve.LightCurve {
	g := rng.New(2024) // our own stream: no Go release changes the fixtures
	return boxCurve(2.5e-3, func() float64 { return 1e-3 * g.Normal() })
}

// boxCurve samples the fixtures' 30 days at 30 minutes in two segments (a 2.5 d gap), with
// the noise noise() draws for each point in turn and a box of the given depth at 3.3 d,
// epoch 1.1 d, lasting the central duration around a Sun-like star; errors 1000 ppm.
func boxCurve(depth float64, noise func() float64) *lightcurve.LightCurve {
	const per, epoch = 3.3, 1.1
	dur := bls.CentralDuration(per, solarDensity)
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5}
	for k, span := range [][2]float64{{0, 14}, {16.5, 30}} {
		s := lightcurve.Segment{ID: string(rune('1' + k)), Exposure: 30.0 / 1440, Contamination: math.NaN()}
		for t := span[0]; t <= span[1]; t += 30.0 / 1440 {
			f := 1 + noise()
			x := (t - epoch) / per
			if math.Abs(x-math.Round(x))*per < dur/2 {
				f -= depth
			}
			s.Time = append(s.Time, t)
			s.Flux = append(s.Flux, f)
			s.Err = append(s.Err, 1e-3)
		}
		lc.Segments = append(lc.Segments, s)
	}
	return lc
}

// defaults returns what a block that sets only its light curve writes; tests add to it.
func defaults() map[string]any {
	return map[string]any{"light_curve": "detrend.quiet"}
}

func run(t *testing.T, set map[string]any, lc *lightcurve.LightCurve, pool *steps.Pool) (*Artifact, []string) {
	t.Helper()
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{lc}}}}
	art, notes, err := steptest.Run(New(), set, in, pool)
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact), notes
}

func TestCheckNamesTheAttributeAtFault(t *testing.T) {
	cases := []struct {
		name, attr string
		val        any
	}{
		{"a zero star density", "star_density", "0 g/cm3"},
		{"an oversampling of one half", "oversampling", 0.5},
		{"no signals at all", "max_signals", 0},
		{"a negative SDE threshold", "sde_threshold", -1.0},
		{"a mask narrower than the transit", "mask_factor", 0.5},
		{"a negative SNR floor", "min_snr", -1.0},
		{"periods longest first", "periods", []string{"10 d", "1 d"}},
		{"a shortest period inside the star", "periods", []string{"0.05 d", "10 d"}},
	}
	for _, c := range cases {
		t.Run("it refuses "+c.name, func(t *testing.T) {
			v := defaults()
			v[c.attr] = c.val
			_, err := steptest.Config(New(), v)
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != c.attr {
				t.Errorf("error %v, want one on %s", err, c.attr)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		cfg, err := steptest.Config(New(), defaults())
		if err != nil {
			t.Fatal(err)
		}
		// The tags' defaults are the constants whose reasons are given beside them, and the
		// Sun's density to the bit.
		c := cfg.(*Config)
		if c.Periods != nil || c.periods() != [2]float64{} || c.Density != nil || c.Star != nil || c.Oversampling != defaultOversampling ||
			c.MaxSignals != defaultMaxSignals || c.SDEThreshold != nil || c.MaskFactor != defaultMaskFactor || c.MinSNR != defaultMinSNR {
			t.Fatalf("defaults decoded as %+v", c)
		}
		if rho, fromStar := c.density(); rho != solarDensity || fromStar {
			t.Fatalf("the default density is %v g/cm3 (from a star step: %v), want the Sun's", rho, fromStar)
		}
	})
}

func TestRunFindsTheInjectedSignal(t *testing.T) {
	art, notes := run(t, defaults(), fixture(), steps.NewPool(2))
	sig := art.Signals()
	if len(sig) == 0 {
		t.Fatal("no signal found")
	}
	// Injected in the fixture: P = 3.3 d, epoch 1.1 d, depth 2500 ppm.
	s := sig[0]
	if math.Abs(s.Period-3.3) > 3*art.Detections()[0].Timing.PeriodSigma || math.Abs(s.Depth-2.5e-3) > 3*s.DepthErr {
		t.Errorf("found P = %.5f d, depth %.0f ± %.0f ppm", s.Period, s.Depth*1e6, s.DepthErr*1e6)
	}
	if x := (s.Epoch - 1.1) / 3.3; math.Abs(x-math.Round(x))*3.3 > 0.01 {
		t.Errorf("epoch %.4f is not a mid-transit of the injected signal", s.Epoch)
	}
	want := map[string]string{"n_freq": "", "signal1.period": "d", "signal1.epoch": "d", "signal1.duration": "h",
		"signal1.depth": "ppm", "signal1.snr": "", "signal1.sde": "", "signal1.transits": ""}
	for _, f := range art.Figures() {
		if u, ok := want[f.Name]; ok {
			if f.Unit != u {
				t.Errorf("%s in %q, want %q", f.Name, f.Unit, u)
			}
			delete(want, f.Name)
		}
		if f.Name == "signal1.snr" && !strings.Contains(f.Doc, "σ_T") || f.Name == "n_freq" && f.Value != float64(art.Grid.N) {
			t.Errorf("figure %s: %v, %q", f.Name, f.Value, f.Doc)
		}
	}
	if len(want) > 0 {
		t.Errorf("figures missing: %v", want)
	}
	joined := strings.Join(notes, "\n")
	t.Log(joined)
	for _, w := range []string{"periods: 0.6019 d (the Roche-type limit", "to 15 d (half the 30 d span", "grid:"} {
		if !strings.Contains(joined, w) {
			t.Errorf("no note with %q in:\n%s", w, joined)
		}
	}
}

func TestExplicitPeriodsOutsideTheUsualRangeAreNoted(t *testing.T) {
	v := defaults()
	v["periods"] = []string{"0.4 d", "40 d"}
	art, notes := run(t, v, fixture(), nil)
	joined := strings.Join(notes, "\n")
	for _, w := range []string{"the shortest, 0.4 d, is inside the Roche-type limit", "the longest, 40 d, exceeds the 30 d span and was lowered to it"} {
		if !strings.Contains(joined, w) {
			t.Errorf("no note with %q in:\n%s", w, joined)
		}
	}
	if p := art.Grid.Period(0); math.Abs(p-30) > 1e-9 {
		t.Errorf("longest trial period %g d, want the 30 d span", p)
	}
}

func TestSameBytesForAnyNumberOfWorkers(t *testing.T) {
	lc := fixture()
	var ref []byte
	for _, n := range []int{1, 2, 4} {
		art, _ := run(t, defaults(), lc, steps.NewPool(n))
		b := art.Encode()
		if ref == nil {
			ref = b
		} else if !bytes.Equal(b, ref) {
			t.Fatalf("a pool of %d gives other bytes than a pool of 1", n)
		}
	}
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	art, _ := run(t, defaults(), fixture(), nil)
	b := art.Encode()
	back, err := Kind{}.Decode(b)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(back.Encode(), b) {
		t.Fatal("decode then encode changed the bytes")
	}
	if len(back.(*Artifact).Signals()) != len(art.Signals()) {
		t.Fatal("signals lost in decoding")
	}
	t.Run("every truncation is an error", func(t *testing.T) {
		for cut := 0; cut < len(b); cut++ {
			if cut > 400 && cut%97 != 0 && cut < len(b)-400 {
				continue
			}
			if _, err := Decode(b[:cut]); err == nil {
				t.Fatalf("decoding the first %d of %d bytes succeeded", cut, len(b))
			}
		}
	})
	t.Run("a trailing byte is an error", func(t *testing.T) {
		if _, err := Decode(append(append([]byte(nil), b...), 0)); err == nil {
			t.Fatal("decoded with a byte left over")
		}
	})
}

func TestRunRefusesABrokenLightCurve(t *testing.T) {
	lc := fixture()
	lc.Segments[1].Err[41] = -1e-3
	cfg := steptest.MustConfig(New(), defaults())
	_, err := New().Run(context.Background(), cfg, steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{lc}}}}, steps.Env{})
	if !steps.IsInputError(err) || !strings.Contains(err.Error(), "error -0.001 is not a positive number") {
		t.Errorf("error %v, want an input error naming the point", err)
	}
}

func TestGoldenRecord(t *testing.T) {
	art, _ := run(t, defaults(), fixture(), nil)
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), art)
}

func FuzzDecode(f *testing.F) {
	cfg, err := steptest.Config(New(), defaults())
	if err != nil {
		f.Fatal(err)
	}
	art, _, err := Search(*cfg.(*Config), fixture(), nil, nil)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(art.Encode())
	f.Add([]byte("dpl1"))
	f.Fuzz(func(t *testing.T, b []byte) {
		a, err := Decode(b)
		if err != nil {
			return
		}
		again, err := Decode(a.Encode())
		if err != nil || !bytes.Equal(again.Encode(), a.Encode()) {
			t.Fatalf("re-encoding a decoded record is not stable: %v", err)
		}
	})
}
