package bls

import (
	"math"
	"sort"
	"testing"
)

func TestDetrendedSDEMeasuresAPeakAgainstItsNeighbourhood(t *testing.T) {
	// A spectrum of 6400 points rising linearly from 1 to 11 (the low-frequency rise of a
	// box search), with a small deterministic ripple of ±0.1 and a peak of +2 near the low
	// end of the rise. Against the whole spectrum the peak is lost: its value, 4.6, is under
	// the spectrum's mean of 6 (σ about 2.9), and the raw SDE picks the top of the rise
	// instead. Against its neighbourhood it stands about 28 ripple-σ high.
	const n = 6400
	p := make([]float64, n)
	for j := range p {
		p[j] = 1 + 10*float64(j)/n + 0.1*math.Sin(float64(j)*1.7)
	}
	p[1000] += 2
	_, rawPeak := sde(p)
	got, peak := detrendedSDE(p)
	if peak != 1000 {
		t.Fatalf("detrended peak at %d, want 1000", peak)
	}
	if rawPeak == 1000 {
		t.Errorf("the raw SDE found the peak; the test meant to hide it under the rise")
	}
	// The ripple's robust σ is 1.4826 × 0.1·sin(π/4) = 0.1048 (the median of |sin| is
	// sin(π/4)); the peak's height 2 is about 19 of those; allow for the interpolated
	// trend's small error.
	if got < 17 {
		t.Errorf("detrended SDE %.2f, want ≥ 17", got)
	}
}

func TestDetrendedSDEOfAFlatSpectrumIsTheRawOne(t *testing.T) {
	// On a spectrum with no trend the block medians are all equal, so removing them changes
	// no difference between points: the SDE is that of the raw spectrum, its median and
	// median absolute deviation found here by sorting.
	const n = 1000
	p := make([]float64, n)
	for j := range p {
		p[j] = 5 + math.Sin(float64(j)*0.37)
	}
	p[333] = 9
	sorted := append([]float64(nil), p...)
	sort.Float64s(sorted)
	med := (sorted[n/2-1] + sorted[n/2]) / 2
	dev := make([]float64, n)
	for j, v := range p {
		dev[j] = math.Abs(v - med)
	}
	sort.Float64s(dev)
	raw := (9 - med) / (1.4826 * (dev[n/2-1] + dev[n/2]) / 2)
	got, gp := detrendedSDE(p)
	if gp != 333 || math.Abs(got-raw) > 0.02*raw {
		t.Errorf("flat spectrum: detrended SDE %.3f at %d, raw %.3f at 333", got, gp, raw)
	}
}

// TestAStrongSignalsAliasesDoNotHideIt models the spectrum of a strong signal on a short
// light curve: besides its peak, a fifth of the grid is raised by its harmonics and
// aliases. The classic SDE, against the standard deviation, falls under the threshold; the
// robust one, against the median absolute deviation of the rest, does not.
func TestAStrongSignalsAliasesDoNotHideIt(t *testing.T) {
	const n = 2000
	g := normals{state: 3}
	p := make([]float64, n)
	for j := range p {
		p[j] = 10 + g.norm()
		if j%5 == 0 {
			p[j] += 12 // an alias
		}
	}
	p[777] = 40
	classic, _ := sde(p)
	got, peak := detrendedSDE(p)
	if th := DefaultThreshold(n); peak != 777 || classic >= th || got < 2*th {
		t.Errorf("classic SDE %.2f, robust %.2f at %d: want the classic under %.2f and the robust far over it", classic, got, peak, DefaultThreshold(n))
	}
}

func TestSDESpectrumPeaksAtTheSDE(t *testing.T) {
	// The spectrum of the rising-ripple test above, and a short one (under 4·trendBlocks,
	// not detrended): the largest value of SDESpectrum is, to the bit, the SDE detrendedSDE
	// gives, at the same index, since both divide the same residual by the same σ.
	long := make([]float64, 6400)
	for j := range long {
		long[j] = 1 + 10*float64(j)/6400 + 0.1*math.Sin(float64(j)*1.7)
	}
	long[1000] += 2
	short := make([]float64, 100)
	for j := range short {
		short[j] = math.Cos(float64(j) * 0.3)
	}
	for _, p := range [][]float64{long, short} {
		want, peak := detrendedSDE(p)
		s := SDESpectrum(p)
		if len(s) != len(p) || s[peak] != want {
			t.Fatalf("%d values, %v at the peak %d, want %v", len(s), s[peak], peak, want)
		}
		for j, v := range s {
			if v > s[peak] {
				t.Fatalf("value %v at %d exceeds the peak's %v", v, j, s[peak])
			}
		}
	}
	if s := SDESpectrum(make([]float64, 10)); s[0] != 0 || len(s) != 10 {
		t.Errorf("a flat spectrum gives %v", s)
	}
}
