package robust

import (
	"math"
	"sort"
	"testing"
)

// directWindow applies est to the usable fluxes within ±half of each point by looping over
// all points: O(N²), no sliding, no shared state.
func directWindow(t, f []float64, use []bool, half float64, minPoints int, est func([]float64) float64) []float64 {
	out := make([]float64, len(t))
	for i := range t {
		var v []float64
		for j := range t {
			if use[j] && t[j] >= t[i]-half && t[j] <= t[i]+half {
				v = append(v, f[j])
			}
		}
		if len(v) < minPoints {
			out[i] = math.NaN()
			continue
		}
		out[i] = est(v)
	}
	return out
}

func directMedian(v []float64) float64 {
	y := append([]float64(nil), v...)
	sort.Float64s(y)
	if n := len(y); n%2 == 1 {
		return y[n/2]
	} else {
		return (y[n/2-1] + y[n/2]) / 2
	}
}

// irregular makes n sorted times at about the 29.4-min cadence with random jitter, repeated
// times, and a few holes, with a flux of a slow wave, noise, outliers and some unusable
// points.
func irregular(rng *noise, n int) (t, f []float64, use []bool) {
	t, f, use = make([]float64, n), make([]float64, n), make([]bool, n)
	x := 0.0
	for i := 0; i < n; i++ {
		switch u := rng.uniform(); {
		case u < 0.03:
			// a repeated time
		case u < 0.05:
			x += 0.4 * rng.uniform() // a hole
		default:
			x += cadence294 * (0.5 + rng.uniform())
		}
		t[i] = x
		f[i] = 1 + 0.004*math.Sin(x) + 3e-4*rng.normal()
		if rng.uniform() < 0.02 {
			f[i] += 0.01 * (rng.uniform() - 0.3)
		}
		use[i] = rng.uniform() > 0.1
	}
	return t, f, use
}

func TestWindowFiltersMatchDirectLoops(t *testing.T) {
	// Source: the definitions, evaluated by the O(N²) loops above.
	for _, tc := range []struct {
		name      string
		seed      uint64
		n         int
		span      float64
		minPoints int
		grid      bool // times on a grid of 1/64 d, so t ± span/2 is exact and falls on points
	}{
		{"a half-day span agrees", 11, 900, 0.5, 5, false},
		{"a short span with many thin windows agrees", 12, 600, 0.08, 3, false},
		{"a span wider than the series agrees", 13, 150, 10, 5, false},
		{"a one-point minimum agrees", 14, 300, 0.3, 1, false},
		{"windows ending exactly on a point include it", 15, 400, 0.5, 5, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := newNoise(tc.seed)
			tm, f, use := irregular(rng, tc.n)
			if tc.grid {
				for i := range tm {
					tm[i] = float64(i) / 64
				}
			}
			half := tc.span / 2
			wantB := directWindow(tm, f, use, half, tc.minPoints, func(v []float64) float64 { return directBiweight(v, 5) })
			wantM := directWindow(tm, f, use, half, tc.minPoints, directMedian)
			gotB, gotM := make([]float64, tc.n), make([]float64, tc.n)
			// Fill in two uneven blocks to check that a block starts its window correctly.
			cut := tc.n / 3
			BiweightFilter(gotB, tm, f, use, half, 5, tc.minPoints, 0, cut)
			BiweightFilter(gotB, tm, f, use, half, 5, tc.minPoints, cut, tc.n)
			MedianFilter(gotM, tm, f, use, half, tc.minPoints, 0, cut)
			MedianFilter(gotM, tm, f, use, half, tc.minPoints, cut, tc.n)
			for i := range tm {
				if math.IsNaN(wantB[i]) != math.IsNaN(gotB[i]) || math.Abs(gotB[i]-wantB[i]) > 1e-12 {
					t.Fatalf("biweight at %d: %.17g, direct %.17g", i, gotB[i], wantB[i])
				}
				if math.IsNaN(wantM[i]) != math.IsNaN(gotM[i]) || (!math.IsNaN(wantM[i]) && gotM[i] != wantM[i]) {
					t.Fatalf("median at %d: %.17g, direct %.17g", i, gotM[i], wantM[i])
				}
			}
		})
	}
}
