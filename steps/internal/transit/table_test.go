package transit

import (
	"math"
	"testing"
)

func TestTableIsExactForQuadratics(t *testing.T) {
	// Catmull–Rom Hermite interpolation reproduces polynomials of degree ≤ 2 exactly away from
	// the ends (a textbook property of centred-difference slopes, from memory).
	tb := Table{Start: -1, Step: 0.1}
	x := tb.Nodes(nil, 21)
	tb.Y = make([]float64, len(x))
	f := func(v float64) float64 { return 3 - 2*v + 0.5*v*v }
	for i, v := range x {
		tb.Y[i] = f(v)
	}
	for _, v := range []float64{-0.87, -0.33, 0, 0.01, 0.42, 0.85} {
		if got := tb.At(v); math.Abs(got-f(v)) > 1e-13 {
			t.Errorf("At(%v) = %v, want %v", v, got, f(v))
		}
	}
	if tb.At(-5) != tb.Y[0] || tb.At(5) != tb.Y[20] {
		t.Error("outside the grid the end values are not returned")
	}
}

func TestTableErrorFallsAsTheStepShrinks(t *testing.T) {
	// For a smooth function the cubic Hermite error falls as h³ (centred slopes are O(h²)
	// accurate; from memory); a halving of h must cut the error by at least 4×.
	maxErr := func(h float64) float64 {
		n := int(math.Ceil(6/h)) + 1
		tb := Table{Start: -3, Step: h}
		x := tb.Nodes(nil, n)
		tb.Y = make([]float64, n)
		for i, v := range x {
			tb.Y[i] = math.Exp(-v * v)
		}
		worst := 0.0
		for v := -2.0; v <= 2; v += 0.0013 {
			worst = math.Max(worst, math.Abs(tb.At(v)-math.Exp(-v*v)))
		}
		return worst
	}
	e1, e2 := maxErr(0.1), maxErr(0.05)
	if !(e2 < e1/4) {
		t.Errorf("error %.3g at h = 0.1, %.3g at h = 0.05: not falling like h³", e1, e2)
	}
}

// TestTabulatedTransitMatchesDirectEvaluation measures the error of the tabulated,
// exposure-integrated transit against evaluating the same integral point by point, over
// radius ratios, impact parameters (including grazing) and exposures from 2 to 30 minutes.
func TestTabulatedTransitMatchesDirectEvaluation(t *testing.T) {
	const period, aR = 3.5, 16.0
	u1, u2 := 0.4, 0.25
	worstRel := 0.0
	for _, k := range []float64{0.02, 0.05, 0.1, 0.2} {
		for _, b := range []float64{0, 0.5, 0.85, 1.0} {
			for _, expMin := range []float64{2, 10, 30} {
				exposure := expMin / 1440
				nsub := max(1, int(math.Ceil(expMin/0.5)))
				// Contact times for a circular orbit (Winn 2010 eq. 14, 15).
				sini := math.Sqrt(1 - b*b/(aR*aR))
				t14 := period / math.Pi * math.Asin(math.Sqrt((1+k)*(1+k)-b*b)/(aR*sini))
				inner := (1-k)*(1-k) - b*b
				t23 := 0.0
				if inner > 0 {
					t23 = period / math.Pi * math.Asin(math.Sqrt(inner)/(aR*sini))
				}
				ingress := (t14 - t23) / 2
				smeared := func(dt []float64) []float64 {
					fine := SubexposureTimes(nil, dt, exposure, nsub)
					z := SeparationCircular(nil, fine, period, 0, aR, b)
					f := Flux(nil, z, k, u1, u2)
					return AverageBlocks(nil, f, nsub)
				}
				half := t14/2 + exposure
				h := TableStep(ingress, exposure)
				n := int(math.Ceil(2*half/h)) + 1
				tb := Table{Start: -half, Step: h}
				tb.Y = smeared(tb.Nodes(nil, n))
				var probe []float64
				for v := -half; v <= half; v += h / 7.3 {
					probe = append(probe, v)
				}
				want := smeared(probe)
				depth := 1 - Flux(nil, []float64{b}, k, u1, u2)[0]
				worst := 0.0
				for i, v := range probe {
					worst = math.Max(worst, math.Abs(tb.At(v)-want[i]))
				}
				rel := worst / depth
				worstRel = math.Max(worstRel, rel)
				if rel > 3e-4 {
					t.Errorf("k %.2f b %.2f exposure %.0f min: %d nodes, error %.2g of the depth", k, b, expMin, n, rel)
				}
			}
		}
	}
	t.Logf("largest tabulation error: %.2g of the depth", worstRel)
}
