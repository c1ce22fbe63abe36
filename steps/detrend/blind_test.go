package detrend

import (
	"strings"
	"testing"

	"dipline/steps/detrend/robust"
)

// When the star varies too fast for any window but a narrow one (the fast rotator with its
// rotation left to the window, rotation = "off"), the window chosen takes most of a 2-hour
// transit away, and the result says so in plain words: which transit durations it removes
// and that a search is nearly blind to them. The narrowest window, against which the others'
// bias is measured, is named as the reference, not given a measured bias of 0 ± 0.
func TestANarrowWindowSaysWhatItRemoves(t *testing.T) {
	lc, _ := fastRotator(20, 6)
	res, notes := run(t, map[string]any{"rotation": "off"}, lc, nil, 2)
	kept := robust.KeptShare(res.Scale, spanReference, 2)
	t.Logf("span %.3g d keeps %.0f %% of a 2-hour transit; caution %q", res.Scale, 100*kept, res.Caution)
	if kept >= blindShare {
		t.Fatalf("the %.3g d window keeps %.0f %%: the test cannot tell the fault", res.Scale, 100*kept)
	}
	if !strings.Contains(res.Caution, "nearly blind to any it has not masked") || !strings.Contains(res.Caution, "transits longer than about") {
		t.Errorf("no caution that long transits are removed: %q", res.Caution)
	}
	if anyNote(notes, "0.25 d: bias 0 ± 0 ppm") || !anyNote(notes, "0.25 d: the reference the others' bias is measured against") {
		t.Errorf("the reference window's bias reads as measured: %q", notes)
	}
}

// LongestKept inverts the kept share: a quadratic keeps half of a dip of about a sixth of
// its window (robust.KeepingSpan, about 6·d), and exactly the share asked at the duration
// it returns.
func TestTheLongestDipAWindowKeeps(t *testing.T) {
	d := robust.LongestKept(0.25, 0.5, 2)
	if k := robust.KeptShare(0.25, d, 2); d < 0.25/8 || d > 0.25/4 || k < 0.49 || k > 0.51 {
		t.Errorf("longest dip kept half: %.3g h (keeps %.3f)", d*24, k)
	}
	if w := robust.KeepingSpan(d, 0.5, 2); w < 0.245 || w > 0.255 {
		t.Errorf("the window keeping half of %.3g h is %.4g d, not 0.25", d*24, w)
	}
}
