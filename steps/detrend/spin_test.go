package detrend

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/steptest"
	"dipline/steps/internal/synth"
)

// An invented fast rotator, as the probe's case c06 but our own: 27 days of 2-minute
// photometry with 800 ppm of white noise, spots modulating the light by 3 % and 0.8 % at a
// 0.35-day rotation and its first harmonic, their amplitudes wandering by ±50 % over evolve
// days, and a planet of 1.5 d whose 1.1-hour box transits are 1500 ppm deep (relative to
// the star's light).
const (
	fastRotation = 0.35
	fastPeriod   = 1.5
	fastEpoch    = 0.6
	fastDuration = 1.1 / 24
	fastDepth    = 1500e-6
	fastNoise    = 800e-6
)

func fastRotator(evolve float64, seed uint64) (*lightcurve.LightCurve, synth.Series) {
	s := synth.Curve{Span: 27, Cadence: 2.0 / 1440, Noise: fastNoise, Seed: seed,
		Star: synth.Rotation{Period: fastRotation, Amplitudes: []float64{0.03, 0.008}, Evolve: evolve},
		Dips: []synth.Signal{synth.Box{Period: fastPeriod, Epoch: fastEpoch, Duration: fastDuration, Depth: fastDepth}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 2.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	return lc, s
}

// depthKept measures the transit's depth in a detrended light curve: the mean of the points
// farther than two durations from every transit less the mean of those in transit, with its
// standard error from the white noise; and the scatter (rms about 1) of the points away from
// the transits.
func depthKept(c *lightcurve.LightCurve) (depth, err, scatter float64) {
	var in, out, ss float64
	var nin, nout int
	for i, tm := range c.Segments[0].Time {
		x := math.Abs(math.Remainder(tm-fastEpoch, fastPeriod))
		f := c.Segments[0].Flux[i]
		switch {
		case x < fastDuration/2:
			in += f
			nin++
		case x > 2*fastDuration:
			out += f
			ss += (f - 1) * (f - 1)
			nout++
		}
	}
	return out/float64(nout) - in/float64(nin), fastNoise * math.Sqrt(1/float64(nin)+1/float64(nout)), math.Sqrt(ss / float64(nout))
}

// The first, unmasked pass on the fast rotator: the rotation is found in the light curve
// (0.35 d within a tenth of its periodogram peak's width, P²/T = 0.0045 d), divided out,
// and the window then chosen is wide; the transits keep their depth within twice its
// standard error (about 24 ppm here), and the light curve away from them scatters at the
// white noise: within 3 % of it per point, within 15 % over 2 hours (the ratio's own
// estimate carries about 7 %, see wellAbove). Without the model (rotation = "off", today's
// method) the window must be short to follow the star and takes most of the depth away.
func TestAFastRotatorKeepsItsTransit(t *testing.T) {
	lc, _ := fastRotator(20, 6)
	res, notes := run(t, nil, lc, nil, 2)
	ro := res.Rotation
	if ro == nil {
		t.Fatalf("no rotation model; notes %q", notes)
	}
	if math.Abs(ro.Period-fastRotation) > 0.00045 || ro.Harmonics < 2 {
		t.Errorf("rotation %.5f d with %d harmonics; want 0.35 d and at least the star's two", ro.Period, ro.Harmonics)
	}
	depth, derr, scatter := depthKept(res.Curve)
	t.Logf("span %.3g d; depth %.0f ± %.0f ppm (injected %.0f); scatter %.0f ppm; over 2 h %.3f of the white noise's",
		res.Scale, depth*1e6, derr*1e6, fastDepth*1e6, scatter*1e6, ro.Excess)
	if res.Scale < 2 {
		t.Errorf("window %.3g d; with the rotation divided out a wide one should be taken", res.Scale)
	}
	if math.Abs(depth-fastDepth) > 2*derr {
		t.Errorf("depth %.0f ± %.0f ppm, injected %.0f", depth*1e6, derr*1e6, fastDepth*1e6)
	}
	if math.Abs(scatter/fastNoise-1) > 0.03 || math.Abs(ro.Excess-1) > 0.15 {
		t.Errorf("scatter %.0f ppm per point against %.0f of white noise; %.3f of it over 2 hours", scatter*1e6, fastNoise*1e6, ro.Excess)
	}
	if !anyNote(notes, "rotation: modelled and divided out before the window: a series of ") || !anyNote(notes, "too fast for a window to follow") {
		t.Errorf("the notes do not say which model was used and why: %q", notes)
	}
	if len(res.Cautions()) != 0 {
		t.Errorf("cautions %q on a light curve left at its white noise", res.Cautions())
	}

	off, _ := run(t, map[string]any{"rotation": "off"}, lc, nil, 2)
	d, _, s := depthKept(off.Curve)
	t.Logf("without the model: span %.3g d, depth %.0f ppm, scatter %.0f ppm", off.Scale, d*1e6, s*1e6)
	if off.Rotation != nil || d > fastDepth/2 {
		t.Errorf("rotation = off kept %.0f ppm of the depth in a %.3g d window (model %v): the test cannot tell the fault", d*1e6, off.Scale, off.Rotation)
	}
}

// The masked pass on the fast rotator takes the rotation model too, and then the widest
// window of negligible bias instead of one narrower than five masked stretches: no caution
// about the variance of the trend under the masked transits.
func TestAFastRotatorsMaskedPassTakesAWideWindow(t *testing.T) {
	lc, _ := fastRotator(20, 6)
	sig := []signals.Signal{{Period: fastPeriod, Epoch: fastEpoch, Duration: fastDuration, Depth: fastDepth}}
	res, notes := run(t, nil, lc, sig, 2)
	if res.Rotation == nil || res.Scale < maskedWindows*1.5*fastDuration {
		t.Fatalf("rotation model %v, window %.3g d; notes %q", res.Rotation, res.Scale, notes)
	}
	depth, derr, _ := depthKept(res.Curve)
	if math.Abs(depth-fastDepth) > 2*derr {
		t.Errorf("masked pass: depth %.0f ± %.0f ppm, injected %.0f", depth*1e6, derr*1e6, fastDepth*1e6)
	}
	if len(res.Cautions()) != 0 {
		t.Errorf("cautions %q", res.Cautions())
	}
}

// A slow rotator (the 4.2-day spotted star of spotted_test.go) is left to the window, and
// its result is the very bytes rotation = "off" gives: the result, and every key after it,
// as before the rotation model existed. The notes say why.
func TestASlowRotatorIsLeftToTheWindow(t *testing.T) {
	lc, _ := spottedStar(true)
	res, notes := run(t, nil, lc, nil, 2)
	off, _ := run(t, map[string]any{"rotation": "off"}, lc, nil, 2)
	if res.Rotation != nil {
		t.Fatalf("a 4.2-day rotator got a rotation model: %+v", res.Rotation)
	}
	if !bytes.Equal(res.Encode(), off.Encode()) {
		t.Error("the slow rotator's result differs from rotation = off's")
	}
	if !anyNote(notes, "rotation: not modelled: the light curve's periods, 4.") || !anyNote(notes, "slow enough for a window to follow") {
		t.Errorf("the notes do not say why the rotation was not modelled: %q", notes)
	}
}

// When the star's spots change within about a dozen rotations (amplitudes wandering by
// ±50 % over 4 days, faster than the finest knots, 4 rotations apart, can follow), the
// model cannot follow it all: the detrended light curve stays well above its white noise
// over 2 hours (2.3 times it here), and the result says so in its caution.
func TestAStarTheModelCannotFollowIsCautioned(t *testing.T) {
	lc, _ := fastRotator(4, 7)
	res, notes := run(t, nil, lc, nil, 2)
	if res.Rotation == nil {
		t.Fatalf("no rotation model; notes %q", notes)
	}
	t.Logf("excess %.2f", res.Rotation.Excess)
	c := res.Cautions()
	if res.Rotation.Excess <= wellAbove || len(c) != 1 || !strings.Contains(c[0], "still varies well above its white noise") {
		t.Errorf("excess %.2f, cautions %q", res.Rotation.Excess, c)
	}
}

// An ultra-short-period planet is periodic too, but a narrow dip, not spots: auto leaves
// it to the window and says why; rotation = "on" models it anyway and the result cautions
// that the model may have removed a transit. (0.3 d, 35-minute transits 1500 ppm deep.)
func TestANarrowPeriodicDipIsNoRotation(t *testing.T) {
	s := synth.Curve{Span: 27, Cadence: 2.0 / 1440, Noise: fastNoise, Seed: 10,
		Dips: []synth.Signal{synth.Box{Period: 0.3, Epoch: 0.1, Duration: 35.0 / 1440, Depth: 1500e-6}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 2.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	res, notes := run(t, nil, lc, nil, 2)
	if res.Rotation != nil || !anyNote(notes, "it dips narrowly, as a transit or an eclipse does") {
		t.Errorf("rotation model %+v; notes %q", res.Rotation, notes)
	}
	on, _ := run(t, map[string]any{"rotation": "on"}, lc, nil, 2)
	if c := on.Cautions(); on.Rotation == nil || len(c) != 1 || !strings.Contains(c[0], "not shaped like spots") {
		t.Errorf("rotation = on: model %+v, cautions %q", on.Rotation, c)
	}
}

// Flatten, which an injection–recovery runs on many copies, gives Detrend's light curve bit
// for bit on a fast rotator; WithChosenSpan makes the rotation decision once (rotation = on
// at the period found) and chooses the window on the light curve without the rotation.
func TestTheRotationDecisionIsMadeOnceForCopies(t *testing.T) {
	lc, _ := fastRotator(20, 6)
	cfg := *steptest.MustConfig(New(), block(nil)).(*Config)
	res, _ := Detrend(cfg, lc, nil, nil)
	if !bytes.Equal(Flatten(cfg, lc, nil, nil).Encode(), res.Curve.Encode()) {
		t.Error("Flatten differs from Detrend")
	}
	fixed := WithChosenSpan(cfg, lc, nil)
	if fixed.Rotation != rotationOn || fixed.RotationPeriod == nil || *fixed.RotationPeriod != res.Rotation.Period || fixed.Span == nil || *fixed.Span != res.Scale {
		t.Errorf("WithChosenSpan gave rotation %q, period %v, span %v; Detrend modelled %.5f d and took %.3g d", fixed.Rotation, fixed.RotationPeriod, fixed.Span, res.Rotation.Period, res.Scale)
	}
	slow, _ := spottedStar(true)
	if f := WithChosenSpan(cfg, slow, nil); f.Rotation != rotationOff {
		t.Errorf("WithChosenSpan on a slow rotator gave rotation %q", f.Rotation)
	}
}

// The rotation model's result does not depend on the number of workers (its stretches are
// fitted in parallel, their sums taken in order): two stretches here, split at a day's gap.
func TestARotationModelIsTheSameOnAnyWorkers(t *testing.T) {
	s := synth.Curve{Span: 12, Cadence: 2.0 / 1440, Noise: fastNoise, Seed: 9, Gaps: [][2]float64{{5, 6}},
		Star: synth.Rotation{Period: fastRotation, Amplitudes: []float64{0.03, 0.008}, Evolve: 20}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 2.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	one, _ := run(t, nil, lc, nil, 1)
	two, _ := run(t, nil, lc, nil, 2)
	if one.Rotation == nil || !bytes.Equal(one.Encode(), two.Encode()) {
		t.Errorf("rotation model %v; one and two workers give the same bytes: %v", one.Rotation, bytes.Equal(one.Encode(), two.Encode()))
	}
}

// A rotation period written with the rotation off is refused at the attribute; a result
// with a rotation model round-trips through its encoding and shows the model's figures.
func TestRotationSettingsAndRecord(t *testing.T) {
	_, err := steptest.Config(New(), block(map[string]any{"rotation": "off", "rotation_period": "0.35 d"}))
	var ae *steps.AttrError
	if !errors.As(err, &ae) || ae.Attr != "rotation_period" {
		t.Errorf("got %v, want an error on rotation_period", err)
	}
	if _, err := steptest.Config(New(), block(map[string]any{"rotation": "on", "rotation_period": "0 d"})); !errors.As(err, &ae) || ae.Attr != "rotation_period" {
		t.Errorf("got %v, want an error on rotation_period", err)
	}
	// Three days at a 10-minute cadence: a record short enough to cut at every byte.
	s := synth.Curve{Span: 3, Cadence: 10.0 / 1440, Noise: fastNoise, Seed: 8,
		Star: synth.Rotation{Period: fastRotation, Amplitudes: []float64{0.03}}}.Make()
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, Segments: []lightcurve.Segment{{
		ID: "1", Band: "survey-red", Exposure: 10.0 / 1440, Contamination: math.NaN(),
		Time: s.Time, Flux: s.Flux, Err: s.Err}}}
	res, _ := run(t, map[string]any{"rotation": "on", "rotation_period": "0.35 d"}, lc, nil, 1)
	if res.Rotation == nil || res.Rotation.Period != 0.35 {
		t.Fatalf("rotation %+v; want the written period", res.Rotation)
	}
	b := res.Encode()
	back, err := Decode(b)
	if err != nil || back.Rotation == nil || !bytes.Equal(back.Encode(), b) {
		t.Fatalf("round trip: %v", err)
	}
	names := map[string]bool{}
	for _, f := range back.Figures() {
		names[f.Name] = true
	}
	for _, n := range []string{"rotation.period", "rotation.harmonics", "rotation.peak_to_peak", "rotation.explained", "rotation.excess"} {
		if !names[n] {
			t.Errorf("figure %s missing", n)
		}
	}
	for n := 0; n < len(b); n++ {
		if _, err := Decode(b[:n]); err == nil {
			t.Fatalf("a record cut to %d of %d bytes was accepted", n, len(b))
		}
	}
}

func anyNote(notes []string, s string) bool {
	for _, n := range notes {
		if strings.Contains(n, s) {
			return true
		}
	}
	return false
}
