package robust

import "testing"

// The floor of a masked pass (the detrend kind's maskedWindows, 5 masked stretches): the
// variance of the plain local quadratic's trend at the middle of a masked stretch, against a
// point with data all round, is the ratio of Σℓ² with and without the hole, from the fit's
// normal equations. At 5 stretches per window it is about 2 (the trend still read from
// both sides); at 1.2, the window the chooser took on white noise, hundreds.
func TestMaskedFloorKeepsTheTrendFromBothSides(t *testing.T) {
	if r := HoleVariance(1, 1.0/5, 2); r > 2.2 {
		t.Errorf("5 stretches per window: variance ×%.2f, want ≤ 2.2", r)
	}
	if r := HoleVariance(1, 1/1.2, 2); r < 100 {
		t.Errorf("1.2 stretches per window: variance ×%.0f, want > 100", r)
	}
}

// NoiseKept: a window wide against the duration keeps nearly all the noise on that time
// scale; one little wider than it keeps a third (measured: 0.33 at 2 durations, 0.91 at 20).
func TestNoiseKept(t *testing.T) {
	if k := NoiseKept(2, 0.1, 2); k < 0.88 || k > 0.94 {
		t.Errorf("20 durations: %.3f", k)
	}
	if k := NoiseKept(0.2, 0.1, 2); k > 0.4 {
		t.Errorf("2 durations: %.3f", k)
	}
}
