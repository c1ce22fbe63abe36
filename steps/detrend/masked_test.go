package detrend

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/detrend/robust"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/synth"
)

// White noise of 1000 ppm at a 10-minute cadence over 60 days with a 1200 ppm, 3.5-hour
// box transit every 11.3 d (the probe's case c04, invented data from our own stream).
const (
	wnNoise    = 1000e-6
	wnPeriod   = 11.3
	wnEpoch    = 4.4
	wnDuration = 3.5 / 24
	wnDepth    = 1200e-6
)

func whiteNoiseTransit(seed uint64) *lightcurve.LightCurve {
	s := synth.Curve{Span: 60, Cadence: 10.0 / 1440, Noise: wnNoise, Seed: seed,
		Dips: []synth.Signal{synth.Box{Period: wnPeriod, Epoch: wnEpoch, Duration: wnDuration, Depth: wnDepth}}}.Make()
	return &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 10.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
}

// boxMeasure measures a box of the given ephemeris on a detrended curve as a search does:
// depth = mean out of transit − mean in transit; SNR = depth / σ_T × √N_tr, σ_T the standard
// deviation of the out-of-transit flux averaged in bins one duration long (the search's
// SNRFormula), N_tr the transits with data.
func boxMeasure(c *lightcurve.LightCurve) (depth, snr float64, nIn int) {
	s := c.Segments[0]
	var in, out float64
	var nOut int
	tr := map[int]bool{}
	bins := map[int][]float64{}
	for i, t := range s.Time {
		x := (t - wnEpoch) / wnPeriod
		k := int(math.Round(x))
		if math.Abs(x-float64(k))*wnPeriod < wnDuration/2 {
			in += s.Flux[i]
			nIn++
			tr[k] = true
			continue
		}
		if math.Abs(x-float64(k))*wnPeriod < wnDuration { // leave the edges out of the scatter
			continue
		}
		out += s.Flux[i]
		nOut++
		b := int(math.Floor(t / wnDuration))
		bins[b] = append(bins[b], s.Flux[i])
	}
	depth = out/float64(nOut) - in/float64(nIn)
	var means []float64
	for _, v := range bins {
		if len(v) < 15 { // full bins only (21 points per 3.5 h)
			continue
		}
		m := 0.0
		for _, x := range v {
			m += x
		}
		means = append(means, m/float64(len(v)))
	}
	mu, ss := 0.0, 0.0
	for _, m := range means {
		mu += m
	}
	mu /= float64(len(means))
	for _, m := range means {
		ss += (m - mu) * (m - mu)
	}
	sigmaT := math.Sqrt(ss / float64(len(means)-1))
	return depth, depth / sigmaT * math.Sqrt(float64(len(tr))), nIn
}

// On white noise the masked pass must take a wide window, and the depth and SNR measured on
// its result must agree with the truth within their errors. The probe's case: the chooser
// took 0.25 d, 1.2 masked stretches, and the SNR came out 3.2 times too high (15.6 → 49.3).
func TestMaskedPassOnWhiteNoiseKeepsDepthAndSNR(t *testing.T) {
	sig := signals.Signal{Period: wnPeriod, Epoch: wnEpoch, Duration: wnDuration, Depth: wnDepth}
	for _, seed := range []uint64{4, 5, 6} {
		lc := whiteNoiseTransit(seed)
		res, notes := run(t, nil, lc, []signals.Signal{sig}, 2)
		if res.Scale < 2 {
			t.Errorf("seed %d: masked window %.3g d on white noise, want ≥ 2 d; notes %q", seed, res.Scale, notes)
		}
		if c := res.Cautions(); len(c) != 0 {
			t.Errorf("seed %d: a caution on white noise: %q", seed, c)
		}
		depth, snr, nIn := boxMeasure(res.Curve)
		// Expected, independently of the detrend: depth / (σ/√n_in), the white noise
		// averaged over every in-transit point (common practice); its error is about 1
		// (unit-variance noise on the SNR), and σ_T is itself estimated from ~300 bins
		// (relative error 1/√(2·300) ≈ 4 %), so 3 + 4 % of the SNR bounds it.
		want := wnDepth / (wnNoise / math.Sqrt(float64(nIn)))
		if math.Abs(snr-want) > 3+0.04*want {
			t.Errorf("seed %d: SNR %.1f, expected %.1f", seed, snr, want)
		}
		// The depth's error is σ/√n_in; three of them bound it.
		if e := wnNoise / math.Sqrt(float64(nIn)); math.Abs(depth-wnDepth) > 3*e {
			t.Errorf("seed %d: depth %.0f ppm, true %.0f ± %.0f", seed, depth*1e6, wnDepth*1e6, e*1e6)
		}
		t.Logf("seed %d: span %.3g d, depth %.0f ppm, SNR %.1f (expected %.1f)", seed, res.Scale, depth*1e6, snr, want)
	}
	// The bound has teeth: forced to the window the chooser once took, the SNR is far out.
	lc := whiteNoiseTransit(4)
	res, _ := run(t, map[string]any{"span": "0.25 d"}, lc, []signals.Signal{sig}, 2)
	_, snr, nIn := boxMeasure(res.Curve)
	if want := wnDepth / (wnNoise / math.Sqrt(float64(nIn))); snr < want+3+0.04*want {
		t.Errorf("at 0.25 d the SNR is %.1f against %.1f expected: the test cannot tell the fault", snr, want)
	}
	// And the written window is cautioned as a chosen one would be: the result's own
	// caution, which the run shows among the tests and cautions, gives the share of noise
	// kept and how far the SNR may be overstated.
	kept := robust.NoiseKept(0.25, wnDuration, 2)
	c := res.Cautions()
	if wantText := fmt.Sprintf("keeps only %.0f %% of the noise", 100*kept); len(c) != 1 || !strings.Contains(c[0], wantText) ||
		!strings.Contains(c[0], fmt.Sprintf("up to %.0f %% too high", 100*(1/kept-1))) {
		t.Errorf("cautions %q; want one saying the window %s", c, wantText)
	}
}

// A light curve too sparse for its window is refused with the counts and the window,
// not passed on empty (the probe's case s01_few40: 40 points over 27 d).
func TestTooSparseForTheWindowIsRefused(t *testing.T) {
	s := synth.Curve{Span: 27, Cadence: 27.0 / 39, Noise: 1e-3, Seed: 40}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 0.02, Contamination: math.NaN(), Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {photometry{lc}}}}
	_, _, err := steptest.Run(New(), block(nil), in, steptest.Pool(1))
	if err == nil {
		t.Fatal("a light curve of 40 points over 27 d was detrended to nothing without an error")
	}
	for _, w := range []string{"too sparse", "40 of 40 points", "0.5 d", "min_window_points"} {
		if !strings.Contains(err.Error(), w) {
			t.Errorf("the message lacks %q: %v", w, err)
		}
	}
	if !steps.IsInputError(err) {
		t.Errorf("not a bad-input error (exit status 2): %v", err)
	}
}

// A fast rotator (0.35 d, 3 %, the probe's case c06 in our own invented data): no window of
// five masked stretches follows it (the 0.5 d one left 7500 ppm of bias, 67 times the
// noise, and the searches after it found spurious dips), so the masked pass goes down to
// the widest window from two stretches that does follow it, and its caution says what the
// narrower window costs. The residuals away from the transits then stay at the noise. This
// is the window's own answer, with the rotation model off (rotation = "auto" divides the
// rotation out first: spin_test.go).
func TestAFastRotatorsMaskedPassFollowsTheStar(t *testing.T) {
	const period, epoch, dur = 1.5, 0.7, 1.84 / 24 / 1.5 // masked stretches of 1.84 h at the default 1.5 durations
	s := synth.Curve{Span: 27, Cadence: 2.0 / 1440, Noise: 1000e-6, Seed: 6,
		Star: synth.Rotation{Period: 0.35, Amplitudes: []float64{0.03}},
		Dips: []synth.Signal{synth.Box{Period: period, Epoch: epoch, Duration: dur, Depth: 1500e-6}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 2.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	res, notes := run(t, map[string]any{"rotation": "off"}, lc, []signals.Signal{{Period: period, Epoch: epoch, Duration: dur, Depth: 1500e-6}}, 2)
	stretch := 1.5 * dur
	if res.Scale >= maskedWindows*stretch || res.Scale < leastWindows*stretch {
		t.Fatalf("masked window %.3g d; want from %.3g to under %.3g d (2 to 5 masked stretches); notes %q",
			res.Scale, leastWindows*stretch, maskedWindows*stretch, notes)
	}
	c := res.Cautions()
	if len(c) != 1 || !strings.Contains(c[0], "times the variance it has elsewhere") {
		t.Errorf("cautions %q; want one naming the narrower window's cost", c)
	}
	// Away from the transits the detrended flux scatters near the white noise (a quadratic
	// over 0.25 d cannot follow 0.7 of the star's turn exactly), and far below what the
	// floor's 0.5 d window leaves.
	sig := []signals.Signal{{Period: period, Epoch: epoch, Duration: dur, Depth: 1500e-6}}
	floored, _ := run(t, map[string]any{"span": "0.5 d", "rotation": "off"}, lc, sig, 2)
	chosen, old := residualRMS(res.Curve, period, epoch, dur), residualRMS(floored.Curve, period, epoch, dur)
	t.Logf("residual scatter %.0f ppm; %.0f ppm at the floor's 0.5 d", chosen*1e6, old*1e6)
	if chosen > 1.5*1000e-6 || old < 3*chosen {
		t.Errorf("residual scatter away from the transits %.0f ppm (noise 1000 ppm); %.0f ppm at the floor's 0.5 d", chosen*1e6, old*1e6)
	}
}

// residualRMS is the scatter of a detrended curve about 1 farther than two durations from
// the transits of the ephemeris.
func residualRMS(c *lightcurve.LightCurve, period, epoch, dur float64) float64 {
	out := c.Segments[0]
	ss, n := 0.0, 0
	for i, tm := range out.Time {
		if math.Abs(math.Remainder(tm-epoch, period)) < 2*dur {
			continue
		}
		ss += (out.Flux[i] - 1) * (out.Flux[i] - 1)
		n++
	}
	return math.Sqrt(ss / float64(n))
}

// The floor gives way only to a star the floor's window cannot follow at all: its bias
// shown above the noise itself. The trials are the two light curves' own (the notes of the
// demo's masked pass, and of the 0.35 d rotator's): the demo's 0.5 d window leaves 40 ± 15
// ppm against 154 ppm of noise and keeps the floor (0.354 d took part of planet c's depth);
// the rotator's leaves 7501 ± 1046 ppm against 112 and goes down to 0.25 d.
func TestTheFloorGivesWayOnlyToABiasAboveTheNoise(t *testing.T) {
	trials := func(spans []float64, bias, errs []float64, quiet []bool, floor float64) []robust.SpanTrial {
		var out []robust.SpanTrial
		for i, s := range spans {
			out = append(out, robust.SpanTrial{Span: s, Bias: bias[i] * 1e-6, BiasErr: errs[i] * 1e-6, Quiet: quiet[i], Allowed: s >= floor})
		}
		return out
	}
	spans := []float64{0.25, 0.354, 0.5, 0.707}
	demo := robust.SpanChoice{Span: 0.5, Noise: 154e-6,
		Trials: trials(spans, []float64{0, 9, 40, 89}, []float64{0, 8, 15, 22}, []bool{true, true, false, false}, 2.25/24*maskedWindows)}
	if w, ok := narrowerQuiet(demo, 2.25/24); ok {
		t.Errorf("the demo's masked pass gave up its floor for %.3g d", w)
	}
	rotator := robust.SpanChoice{Span: 0.5, Noise: 112e-6,
		Trials: trials(spans, []float64{0, 2405, 7501, 10553}, []float64{0, 349, 1046, 1140}, []bool{true, false, false, false}, 1.84/24*maskedWindows)}
	if w, ok := narrowerQuiet(rotator, 1.84/24); !ok || w != 0.25 {
		t.Errorf("the rotator's masked pass took %.3g d (%v), want 0.25 d", w, ok)
	}
}
