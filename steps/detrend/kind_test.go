package detrend

import (
	"bytes"
	"context"
	"errors"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/golden"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
)

// cadence294 is the 29.4-min long cadence of a space survey (common practice), in days.
const cadence294 = 29.4 / 1440

// photometry stands in for a photometry step's artifact.
type photometry struct{ lc *lightcurve.LightCurve }

func (p photometry) Encode() []byte                     { return p.lc.Encode() }
func (p photometry) Figures() []steps.Figure            { return nil }
func (p photometry) LightCurve() *lightcurve.LightCurve { return p.lc }

// search stands in for a search step's artifact.
type search struct{ sigs []signals.Signal }

func (s search) Encode() []byte            { return nil }
func (s search) Figures() []steps.Figure   { return nil }
func (s search) Signals() []signals.Signal { return s.sigs }

// fixture is a light curve of nseg segments of n points each at 29.4-min cadence, with a
// slow wave, white noise of 300 ppm, a 1500 ppm transit every 3.1 d and a 5000 ppm flare
// at every 200th point from the 50th; segments are 2 d apart and the first has a 1-d gap in its middle.
func fixture(nseg, n int) (*lightcurve.LightCurve, signals.Signal) {
	sig := signals.Signal{Period: 3.1, Epoch: 0.7, Duration: 0.11, Depth: 1.5e-3}
	noise := rng.New(uint64(nseg*1000003 + n)) // our own stream: no Go release changes the fixtures
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5,
		Dropped: lightcurve.Dropped{Unusable: 3, Flagged: 2}}
	t0 := 0.0
	for k := 0; k < nseg; k++ {
		s := lightcurve.Segment{ID: string(rune('a' + k)), Band: "survey-red", Exposure: cadence294,
			Contamination: math.NaN()}
		for i := 0; i < n; i++ {
			t := t0 + float64(i)*cadence294
			if k == 0 && i > n/2 {
				t += 1
			}
			f := 1 + 0.004*math.Sin(2*math.Pi*t/5.7) + 3e-4*noise.Normal()
			if sig.InTransit(t, 1) {
				f -= sig.Depth
			}
			if i%200 == 50 {
				f += 5e-3
			}
			s.Time = append(s.Time, t)
			s.Flux = append(s.Flux, f)
			s.Err = append(s.Err, 3e-4)
		}
		t0 = s.Time[n-1] + 2
		lc.Segments = append(lc.Segments, s)
	}
	return lc, sig
}

// block is what a detrend block writes: the given attributes, and a light curve.
func block(set map[string]any) map[string]any {
	b := map[string]any{"light_curve": "photometry.survey"}
	for k, v := range set {
		b[k] = v
	}
	return b
}

func run(t testing.TB, set map[string]any, lc *lightcurve.LightCurve, sigs []signals.Signal, workers int) (*Result, []string) {
	t.Helper()
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {photometry{lc}}}}
	if sigs != nil {
		in.Refs["mask"] = []steps.Artifact{search{sigs}}
	}
	art, notes, err := steptest.Run(New(), block(set), in, steptest.Pool(workers))
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Result), notes
}

func TestCheckNamesTheAttributeAtFault(t *testing.T) {
	for _, tc := range []struct {
		name string
		set  map[string]any
		attr string
	}{
		{"an unknown estimator is refused", map[string]any{"estimator": "spline"}, "estimator"},
		{"a zero span is refused", map[string]any{"span": "0 d"}, "span"},
		{"a negative knot spacing is refused", map[string]any{"knot_spacing": "-1 d"}, "knot_spacing"},
		{"a zero tuning constant is refused", map[string]any{"biweight_c": 0.0}, "biweight_c"},
		{"a flare cut below one sigma is refused", map[string]any{"flare_sigma": 0.5}, "flare_sigma"},
		{"an infinite flare cut is refused", map[string]any{"flare_sigma": math.Inf(1)}, "flare_sigma"},
		{"a zero gap threshold is refused", map[string]any{"split_at_gap": "0 d"}, "split_at_gap"},
		{"windows of two points are refused", map[string]any{"min_window_points": 2}, "min_window_points"},
		{"a NaN mask factor is refused", map[string]any{"mask_factor": math.NaN()}, "mask_factor"},
		{"masking no signals is refused", map[string]any{"mask_count": 0}, "mask_count"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := steptest.Config(New(), block(tc.set))
			var ae *steps.AttrError
			if !errors.As(err, &ae) || ae.Attr != tc.attr {
				t.Fatalf("got %v, want an error on %s", err, tc.attr)
			}
		})
	}
	t.Run("the defaults are accepted", func(t *testing.T) {
		cfg, err := steptest.Config(New(), block(nil))
		if err != nil {
			t.Fatal(err)
		}
		// The tags' defaults are the constants whose reasons are given beside them.
		c := cfg.(*Config)
		if c.Estimator != estLocal || c.Degree != defaultDegree || c.span() != 0 || c.KnotSpacing != defaultKnots ||
			c.C != defaultC || c.FlareSigma != defaultFlareSigma || c.MinPoints != defaultMinPoints ||
			c.MaskFactor != defaultMaskFactor || c.splitAtGap() != 0 || c.maskCount() != 0 {
			t.Fatalf("defaults decoded as %+v", c)
		}
		c.Estimator = estBiweight
		if c.span() != defaultSpan {
			t.Errorf("a biweight without a span gets %v d, want %v d", c.span(), defaultSpan)
		}
	})
}

func TestRunRefusesBadInputs(t *testing.T) {
	cfg := steptest.MustConfig(New(), block(nil))
	lc, sig := fixture(1, 100)
	unsorted, _ := fixture(1, 100)
	unsorted.Segments[0].Time[10] = 1e6
	nanTime, _ := fixture(1, 100)
	nanTime.Segments[0].Time[99] = math.NaN()
	badSig := sig
	badSig.Duration = 0
	for _, tc := range []struct {
		name  string
		in    steps.Inputs
		input bool // a user's data error (exit 2), not a program fault
		want  string
	}{
		{"unsorted times are the user's data error", steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {photometry{unsorted}}}}, true, "must be sorted"},
		{"a NaN time is the user's data error naming the point", steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {photometry{nanTime}}}}, true, "point 100"},
		{"a signal of zero duration cannot mask", steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {photometry{lc}}, "mask": {search{[]signals.Signal{badSig}}}}}, true, "duration"},
		{"a reference without a light curve is a fault", steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {search{}}}}, false, "light_curve"},
		{"a mask without signals is a fault", steps.Inputs{Refs: map[string][]steps.Artifact{
			"light_curve": {photometry{lc}}, "mask": {photometry{lc}}}}, false, "mask"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := New().Run(context.Background(), cfg, tc.in, steps.Env{})
			if err == nil || steps.IsInputError(err) != tc.input || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("got %v (input error %v), want one mentioning %q with input error %v", err, steps.IsInputError(err), tc.want, tc.input)
			}
		})
	}
}

func TestTheOutputIsFluxOverTrend(t *testing.T) {
	// By construction: each kept point's flux and error are the input's divided by the
	// trend, segments keep their metadata, and the counts add up.
	lc, sig := fixture(3, 600)
	for _, est := range []string{"biweight", "robust-spline", "running-median"} {
		t.Run("the "+est+" output divides by its trend", func(t *testing.T) {
			res, _ := run(t, map[string]any{"estimator": est}, lc, []signals.Signal{sig}, 2)
			if res.LightCurve() != res.Curve || res.Curve.TimeScale != "BJD_TDB" || res.Curve.RefInt != 2460000 ||
				res.Curve.Dropped != lc.Dropped {
				t.Fatal("light-curve header not carried over")
			}
			masked := 0
			for i, s := range lc.Segments {
				o := res.Curve.Segments[i]
				if o.ID != s.ID || o.Band != s.Band || o.Exposure != s.Exposure || !math.IsNaN(o.Contamination) {
					t.Fatalf("segment %d metadata not carried over", i)
				}
				k := 0
				for j, m := range res.Trends[i].Marks {
					if m == robust.InTransit {
						masked++
					}
					if m != robust.Kept && m != robust.InTransit {
						continue
					}
					tr := res.Trends[i].Trend[j]
					if o.Time[k] != s.Time[j] || o.Flux[k] != s.Flux[j]/tr || o.Err[k] != s.Err[j]/tr {
						t.Fatalf("segment %d point %d: output (%v, %v, %v) is not the input over the trend %v", i, j, o.Time[k], o.Flux[k], o.Err[k], tr)
					}
					k++
				}
			}
			fig := map[string]float64{}
			for _, f := range res.Figures() {
				fig[f.Name] = f.Value
			}
			t.Logf("figures: %v", fig)
			if fig["points.in"] != float64(lc.Len()) || fig["points.out"]+fig["points.flares"]+fig["points.without_trend"]+fig["points.non_finite"] != fig["points.in"] {
				t.Errorf("counts do not add up: %v", fig)
			}
			if fig["points.in_transit"] != float64(masked) || masked == 0 {
				t.Errorf("%v masked points reported, %d marked", fig["points.in_transit"], masked)
			}
			// Every injected flare (+5000 ppm, 17σ) must be removed, and no removed point
			// may lie below its trend (flares are clipped upward only).
			for i, s := range lc.Segments {
				for j, m := range res.Trends[i].Marks {
					if j%200 == 50 && m != robust.Flare {
						t.Errorf("segment %d: injected flare at point %d marked %d", i, j, m)
					}
					if m == robust.Flare && s.Flux[j] <= res.Trends[i].Trend[j] {
						t.Errorf("segment %d: point %d below its trend removed as a flare", i, j)
					}
				}
			}
			// The detrended scatter should be near the injected 300 ppm white noise.
			if s := fig["scatter"]; s < 250 || s > 350 {
				t.Errorf("scatter %v ppm, injected 300", s)
			}
			if fig["pieces"] != 4 { // the 1-d gap in the first segment splits it
				t.Errorf("%v pieces, want 4", fig["pieces"])
			}
		})
	}
}

func TestTheDerivedGapIsNoted(t *testing.T) {
	// At 29.4-min cadence 20 cadences are 0.41 d, so the default is the 0.5-d floor.
	lc, _ := fixture(1, 300)
	res, notes := run(t, nil, lc, nil, 1)
	if res.SplitAtGap != 0.5 {
		t.Errorf("derived gap %v d, want 0.5", res.SplitAtGap)
	}
	if len(notes) == 0 || !strings.Contains(notes[0], "split_at_gap") {
		t.Errorf("notes %q do not mention the derived gap", notes)
	}
	res, notes = run(t, map[string]any{"split_at_gap": "2 d", "span": "0.5 d"}, lc, nil, 1)
	if res.SplitAtGap != 2 || strings.Contains(strings.Join(notes, "\n"), "split_at_gap") {
		t.Errorf("given gap: %v d, notes %q", res.SplitAtGap, notes)
	}
}

func TestSameBytesForAnyWorkerCount(t *testing.T) {
	// Determinism: 3 × 5000 points make several blocks of 2048 per segment. Zero workers
	// means no pool at all.
	lc, sig := fixture(3, 5000)
	for _, est := range []string{"biweight", "robust-spline", "running-median"} {
		t.Run("the "+est+" gives the same bytes on 0, 1, 2 and 4 workers", func(t *testing.T) {
			var first []byte
			for _, w := range []int{0, 1, 2, 4} {
				res, _ := run(t, map[string]any{"estimator": est}, lc, []signals.Signal{sig}, w)
				b := res.Encode()
				if first == nil {
					first = b
				} else if !bytes.Equal(b, first) {
					t.Fatalf("%d workers changed the bytes", w)
				}
			}
		})
	}
}

func TestEncodingRoundTripsAndRejectsDamage(t *testing.T) {
	lc, sig := fixture(2, 80)
	res, _ := run(t, nil, lc, []signals.Signal{sig}, 1)
	b := res.Encode()
	t.Run("decoding then encoding gives the same bytes", func(t *testing.T) {
		back, err := Kind{}.Decode(b)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(back.Encode(), b) {
			t.Fatal("bytes changed")
		}
	})
	t.Run("every truncation is rejected", func(t *testing.T) {
		for n := 0; n < len(b); n++ {
			if _, err := Decode(b[:n]); err == nil {
				t.Fatalf("a record cut to %d of %d bytes was accepted", n, len(b))
			}
		}
	})
	t.Run("an invalid mark is rejected", func(t *testing.T) {
		bad := append([]byte(nil), b...)
		bad[len(bad)-1] = byte(robust.NumMarks)
		if _, err := Decode(bad); err == nil {
			t.Fatal("accepted")
		}
	})
	t.Run("a kept mark without a point is rejected", func(t *testing.T) {
		r, _ := Decode(b)
		for j, m := range r.Trends[1].Marks {
			if m == robust.Flare {
				r.Trends[1].Marks[j] = robust.Kept
				break
			}
		}
		if _, err := Decode(r.Encode()); err == nil {
			t.Fatal("accepted")
		}
	})
}

func FuzzDecode(f *testing.F) {
	lc, sig := fixture(2, 40)
	res, _ := run(f, nil, lc, []signals.Signal{sig}, 1)
	f.Add(res.Encode())
	f.Add([]byte("dpl1"))
	f.Fuzz(func(t *testing.T, b []byte) {
		r, err := Decode(b)
		if err != nil {
			return
		}
		// An accepted record may hold a NaN or −0 in another bit pattern; once re-encoded
		// it is canonical and must then round-trip exactly.
		c := r.Encode()
		r2, err := Decode(c)
		if err != nil {
			t.Fatalf("the re-encoding of an accepted record is refused: %v", err)
		}
		if !bytes.Equal(r2.Encode(), c) {
			t.Fatal("a canonical record does not round-trip")
		}
		_ = r.Figures()
	})
}

func TestGolden(t *testing.T) {
	// Guards the version: these bytes may change only with a version bump.
	lc, sig := fixture(2, 150)
	res, _ := run(t, nil, lc, []signals.Signal{sig}, 1)
	golden.Check(t, "../..", Kind{}.Name(), Kind{}.Version(), res)
}

// BenchmarkRun measures the step on 70,000 points at 29.4-min cadence (about 1,430 d in 7
// segments of 10,000), span 0.5 d, with a mask and flares, on one and on two workers.
func BenchmarkRun(b *testing.B) {
	lc, sig := fixture(7, 10000)
	for _, est := range []string{"biweight", "robust-spline", "running-median"} {
		for _, w := range []int{1, 2} {
			b.Run(est+"/workers="+string(rune('0'+w)), func(b *testing.B) {
				for b.Loop() {
					run(b, map[string]any{"estimator": est}, lc, []signals.Signal{sig}, w)
				}
			})
		}
	}
}
