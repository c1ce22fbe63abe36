package search

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/steptest"
)

// weakCurve is the fixture's sampling (30 days at 30 minutes, a 2.5 d gap) with white noise
// of 1000 ppm, correlated noise of standard deviation red (an AR(1) series with a
// correlation time of 0.1 d, about the 2.6-hour central duration of a 3.3-day orbit around
// a Sun-like star, so that it is red on a transit's time scale) and a box of the given
// depth at 3.3 d, epoch 1.1 d, lasting the central duration (invented data).
func weakCurve(seed uint64, depth, red float64) *lightcurve.LightCurve {
	g := rng.New(seed) // our own stream: no Go release changes the light curve
	const cadence, tau = 30.0 / 1440, 0.1
	a := math.Exp(-cadence / tau)
	r := 0.0
	return boxCurve(depth, func() float64 {
		r = a*r + math.Sqrt(1-a*a)*red*g.Normal()
		return 1e-3*g.Normal() + r
	})
}

// setAsideNote returns the note that says a peak was set aside, or "".
func setAsideNote(notes []string) string {
	for _, n := range notes {
		if strings.Contains(n, "was set aside") {
			return n
		}
	}
	return ""
}

// TestAPeakBelowTheSNRFloorIsSetAside searches a light curve of white and red noise with
// no transit in it (seed 1). Its highest peak, at 0.772 d, reaches the SDE threshold, and
// with the floor off it is passed on as a signal of SNR 5.3: the noise binned to the
// duration explains it. With the default floor of 7 it is set aside, the notes say so with
// its period, SDE and SNR, and the search stops there rather than masking it and going on.
func TestAPeakBelowTheSNRFloorIsSetAside(t *testing.T) {
	lc := weakCurve(1, 0, 6e-4)
	off := defaults()
	off["min_snr"] = 0.0
	bare, notes := run(t, off, lc, nil)
	if len(bare.Detections()) == 0 {
		t.Fatalf("with the floor off the noise peak gave no signal; notes:\n%s", strings.Join(notes, "\n"))
	}
	d := bare.Detections()[0]
	if !(d.Strength.SDE >= bare.Threshold) || !(d.Strength.SNR < defaultMinSNR) || math.Abs(d.Timing.Period-0.772) > 0.002 {
		t.Fatalf("the case has changed: signal at %.4f d with SDE %.2f (threshold %.2f) and SNR %.2f; want one near 0.772 d above the threshold and below SNR %g",
			d.Timing.Period, d.Strength.SDE, bare.Threshold, d.Strength.SNR, defaultMinSNR)
	}
	if setAsideNote(notes) != "" {
		t.Errorf("with the floor off a note still says a peak was set aside: %q", setAsideNote(notes))
	}

	art, notes := run(t, defaults(), lc, nil)
	if n := len(art.Signals()); n != 0 {
		t.Fatalf("%d signal(s) passed on; the peak below the SNR floor must be set aside", n)
	}
	if len(art.Passes) != 1 {
		t.Errorf("%d passes; the search must stop at the peak it set aside", len(art.Passes))
	}
	note := setAsideNote(notes)
	for _, w := range []string{
		"0 signal(s) found",
		fmt.Sprintf("(%.4g d, SDE %.2f, above the threshold %.3g)", art.Grid.Period(art.Passes[0].Peak), d.Strength.SDE, art.Threshold),
		fmt.Sprintf("box at %.4g d", d.Timing.Period),
		fmt.Sprintf("its SNR is %.2f, below min_snr = 7", d.Strength.SNR),
		"The search stopped there",
	} {
		if !strings.Contains(note, w) {
			t.Errorf("the note %q lacks %q", note, w)
		}
	}
	// The artifact keeps why, and the report's periodogram says it.
	if r := art.Passes[0].Refused; !strings.Contains(r, fmt.Sprintf("whose SNR, %.2f, is below the floor of 7", d.Strength.SNR)) {
		t.Errorf("the pass keeps %q as why it gave no signal", r)
	}
	back, err := Decode(art.Encode())
	if err != nil || back.Passes[0].Refused != art.Passes[0].Refused {
		t.Fatalf("why the peak gave no signal did not survive encoding: %v", err)
	}
	cfg := steptest.MustConfig(New(), defaults())
	in := steps.Inputs{Refs: map[string][]steps.Artifact{"light_curve": {curveArtifact{lc}}}}
	pr, err := steps.PresentationOf(New(), cfg, back, in)
	if err != nil {
		t.Fatal(err)
	}
	if p := panelTitled(pr, "Periodogram, pass 1"); p == nil || !strings.Contains(p.Caption, "so it is set aside, not taken for a signal: the search stopped here") ||
		strings.Contains(p.Caption, "gave no dip") {
		t.Errorf("the periodogram's caption does not say the peak was set aside for its SNR: %+v", p)
	}
}

// TestMinSNRLowersTheFloor: a real box of 1000 ppm at 3.3 d in white noise of 1000 ppm
// (seed 1) is found at SNR 6.7, its peak just above the SDE threshold. The default floor
// sets it aside; min_snr = 6 passes it on.
func TestMinSNRLowersTheFloor(t *testing.T) {
	lc := weakCurve(1, 1e-3, 0)
	art, notes := run(t, defaults(), lc, nil)
	if n := len(art.Signals()); n != 0 {
		t.Fatalf("%d signal(s) at the default floor; the SNR 6.7 box must be set aside", n)
	}
	if note := setAsideNote(notes); !strings.Contains(note, "box at 3.29") || !strings.Contains(note, "below min_snr = 7") {
		t.Errorf("no note setting aside the box at 3.3 d: %q", note)
	}

	low := defaults()
	low["min_snr"] = 6.0
	art, notes = run(t, low, lc, nil)
	sig := art.Signals()
	if len(sig) == 0 {
		t.Fatalf("min_snr = 6 still sets the box aside; notes:\n%s", strings.Join(notes, "\n"))
	}
	// Injected: P = 3.3 d, epoch 1.1 d.
	s := sig[0]
	if math.Abs(s.Period-3.3) > 0.01 || s.SNR < 6 || s.SNR >= defaultMinSNR {
		t.Errorf("found P = %.4f d at SNR %.2f; want the 3.3 d box between SNR 6 and 7", s.Period, s.SNR)
	}
	if x := (s.Epoch - 1.1) / 3.3; math.Abs(x-math.Round(x))*3.3 > 0.05 {
		t.Errorf("epoch %.4f is not a mid-transit of the injected box", s.Epoch)
	}
	if note := setAsideNote(notes); note != "" {
		t.Errorf("a note still sets a peak aside: %q", note)
	}
}

// TestAStrongBoxIsStillFound: the fixture's 2500 ppm box stands far above the floor and
// is passed on at the default floor with no peak set aside.
func TestAStrongBoxIsStillFound(t *testing.T) {
	art, notes := run(t, defaults(), fixture(), nil)
	sig := art.Signals()
	if len(sig) == 0 || math.Abs(sig[0].Period-3.3) > 0.01 || !(sig[0].SNR > 2*defaultMinSNR) {
		t.Fatalf("signals %+v; want the 3.3 d box at an SNR well above %g", sig, defaultMinSNR)
	}
	if note := setAsideNote(notes); note != "" {
		t.Errorf("a note sets a peak aside: %q", note)
	}
}

// An eclipsing binary's secondary eclipse, or what a spotted star leaves at its own period,
// comes back at the first signal's period once its transits are masked. Two planets do not
// share a period, so the search passes on one signal and says what the second box is (a
// fast rotator's residual spots were found three times over at 0.35 d, and the joint fit of
// three "planets" at one period ran for a quarter of an hour). Invented data: 30 days at
// 30 minutes, 1000 ppm of white noise, a 2 % primary and a 0.2 % secondary eclipse of
// 3 hours every 2.5 d, the secondary half a period after the primary.
func TestASecondBoxAtTheFirstsPeriodIsNoSecondSignal(t *testing.T) {
	g := rng.New(7)
	const per, epoch, dur, cadence = 2.5, 0.9, 3.0 / 24, 30.0 / 1440
	s := lightcurve.Segment{ID: "1", Exposure: cadence, Contamination: math.NaN()}
	for tm := 0.0; tm <= 30; tm += cadence {
		f := 1 + 1e-3*g.Normal()
		x := (tm - epoch) / per
		switch d := math.Abs(x-math.Round(x)) * per; {
		case d < dur/2:
			f -= 0.02
		case math.Abs(d-per/2) < dur/2:
			f -= 0.002
		}
		s.Time, s.Flux, s.Err = append(s.Time, tm), append(s.Flux, f), append(s.Err, 1e-3)
	}
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5, Segments: []lightcurve.Segment{s}}
	art, notes := run(t, defaults(), lc, nil)
	sig := art.Signals()
	if len(sig) != 1 || math.Abs(sig[0].Period-per) > 0.01 {
		t.Fatalf("signals %+v; want the primary alone at 2.5 d; notes:\n%s", sig, strings.Join(notes, "\n"))
	}
	var note string
	for _, n := range notes {
		if strings.Contains(n, "of signal 1 (") {
			note = n
		}
	}
	for _, want := range []string{"two planets do not share a period", "half a period from signal 1's transits", "secondary eclipse"} {
		if !strings.Contains(note, want) {
			t.Errorf("the note on the second box lacks %q: %q", want, note)
		}
	}
}
