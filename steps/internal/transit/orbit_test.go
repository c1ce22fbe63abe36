package transit

import (
	"fmt"
	"math"
	"testing"
)

// Kepler's equation E − e sin E = M is the definition; the residual is the check.
func TestEccentricAnomalySolvesKepler(t *testing.T) {
	for _, e := range []float64{0, 0.01, 0.3, 0.7, 0.9, 0.95, 0.99} {
		t.Run(fmt.Sprintf("residual stays below 1e-12 at e=%g", e), func(t *testing.T) {
			worst := 0.0
			for i := 0; i < 4000; i++ {
				m := 2 * math.Pi * float64(i) / 4000
				ea := EccentricAnomaly(m, e)
				r := math.Abs(math.Remainder(ea-e*math.Sin(ea)-m, 2*math.Pi))
				worst = math.Max(worst, r)
			}
			if worst > 1e-12 || math.IsNaN(worst) {
				t.Errorf("max residual %.3g", worst)
			}
		})
	}
	t.Run("an eccentricity of one or more is refused with NaN", func(t *testing.T) {
		if !math.IsNaN(EccentricAnomaly(1, 1)) || !math.IsNaN(EccentricAnomaly(1, -0.1)) {
			t.Error("want NaN")
		}
	})
}

func TestSeparationGeometry(t *testing.T) {
	const P, t0, aR, b = 3.5, 1.25, 12.0, 0.4
	times := []float64{t0, t0 + 0.02, t0 - 0.05, t0 + P/2, t0 + 3*P}
	circ := SeparationCircular(nil, times, P, t0, aR, b)
	t.Run("at mid-transit the separation is the impact parameter (definition of b)", func(t *testing.T) {
		if math.Abs(circ[0]-b) > 1e-14 || math.Abs(circ[4]-b) > 1e-12 {
			t.Errorf("z(t0) = %v, z(t0+3P) = %v", circ[0], circ[4])
		}
	})
	t.Run("the far side of the orbit gives no transit", func(t *testing.T) {
		if !math.IsInf(circ[3], 1) {
			t.Errorf("z at half phase = %v", circ[3])
		}
	})
	t.Run("a circular orbit follows z² = aR² sin²φ + b² cos²φ (Winn 2010, from memory)", func(t *testing.T) {
		phi := 2 * math.Pi * 0.02 / P
		want := math.Sqrt(aR*aR*math.Sin(phi)*math.Sin(phi) + b*b*math.Cos(phi)*math.Cos(phi))
		if math.Abs(circ[1]-want) > 1e-13 {
			t.Errorf("got %v want %v", circ[1], want)
		}
	})
	t.Run("zero eccentricity reproduces the circular orbit for any omega", func(t *testing.T) {
		for _, w := range []float64{0, 1, 2.5, -2} {
			ecc := SeparationEccentric(nil, times, P, t0, aR, b, 0, w)
			for i := range circ {
				if !(math.Abs(ecc[i]-circ[i]) < 1e-10 || math.IsInf(ecc[i], 1) && math.IsInf(circ[i], 1)) {
					t.Errorf("omega=%g t=%g: %v vs %v", w, times[i], ecc[i], circ[i])
				}
			}
		}
	})
	t.Run("an eccentric orbit passes at b at conjunction, f = pi/2 - omega", func(t *testing.T) {
		for _, c := range []struct{ e, w float64 }{{0.3, 0.5}, {0.6, -1.2}, {0.9, 2}} {
			z := SeparationEccentric(nil, []float64{t0}, P, t0, aR, b, c.e, c.w)[0]
			if math.Abs(z-b) > 1e-10 {
				t.Errorf("e=%g omega=%g: z(t0) = %.12f", c.e, c.w, z)
			}
		}
	})
	t.Run("an eccentric transit is shorter when it happens near periastron (Winn 2010 duration factor, from memory)", func(t *testing.T) {
		// Duration scales by sqrt(1−e²)/(1+e sin ω): periastron at conjunction (ω = π/2) shortens it.
		const e = 0.5
		half := func(w float64) float64 {
			lo, hi := 0.0, P/4
			for i := 0; i < 200; i++ { // bisection for z = 1 + k with k = 0.1
				mid := (lo + hi) / 2
				if SeparationEccentric(nil, []float64{t0 + mid}, P, t0, aR, 0, e, w)[0] < 1.1 {
					lo = mid
				} else {
					hi = mid
				}
			}
			return lo
		}
		ratio := half(math.Pi/2) / half(0)
		want := 1 / (1 + e) // factor at ω = π/2 over ω = 0, with b = 0
		if math.Abs(ratio-want) > 0.01 {
			t.Errorf("duration ratio %.4f, Winn's approximation %.4f", ratio, want)
		}
	})
}

// Midpoint supersampling converges as 1/N² where the model is smooth over the exposure
// (Kipping 2010 gives the error analysis; the 1/N² order of the midpoint rule is standard
// numerical analysis). Reference: N = 4096.
func TestSupersamplingConverges(t *testing.T) {
	const P, t0, aR, b, k, exposure = 3.5, 0.0, 12.0, 0.3, 0.1, 0.004 // days; ingress lasts ≈0.0097 d
	model := func(times []float64, n int) []float64 {
		fine := SubexposureTimes(nil, times, exposure, n)
		z := SeparationCircular(nil, fine, P, t0, aR, b)
		return AverageBlocks(nil, Flux(nil, z, k, 0.4, 0.25), n)
	}
	// Times whose exposure lies wholly inside ingress or inside the full transit (smooth);
	// an exposure spanning a contact point converges more slowly (kink in the slope).
	times := []float64{-0.0442, -0.0200, 0.0}
	ref := model(times, 4096)
	prev := 0.0
	for _, n := range []int{4, 8, 16, 32} {
		got := model(times, n)
		worst := 0.0
		for i := range got {
			worst = math.Max(worst, math.Abs(got[i]-ref[i]))
		}
		if prev > 0 {
			ratio := prev / worst
			t.Logf("N=%d: max error %.3g, ratio to N/2 %.3g", n, worst, ratio)
			if ratio < 3.5 || ratio > 4.5 {
				t.Errorf("N=%d: error ratio %.3g per doubling, want ≈4 (1/N²)", n, ratio)
			}
		}
		prev = worst
	}
	t.Run("one sub-exposure is the model at the mid-time", func(t *testing.T) {
		one := model(times, 1)
		direct := Flux(nil, SeparationCircular(nil, times, P, t0, aR, b), k, 0.4, 0.25)
		for i := range one {
			if one[i] != direct[i] {
				t.Errorf("%v vs %v", one[i], direct[i])
			}
		}
	})
}
