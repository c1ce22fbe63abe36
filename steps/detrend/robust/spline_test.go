package robust

import (
	"math"
	"testing"
)

func cubic(x float64) float64 {
	u := x - 5
	return 1 + 1e-3*u - 2e-4*u*u + 3e-5*u*u*u
}

func TestRobustSplineRecoversACubicPastOutliers(t *testing.T) {
	// A cubic polynomial lies in the space of cubic splines on any knots (de Boor 1978, from
	// memory), so once the outliers are clipped the least-squares fit is the polynomial
	// itself, up to rounding: 1e-10 is a conditioning allowance.
	for _, tc := range []struct {
		name string
		hole [2]float64 // no data in this stretch
	}{
		{"evenly sampled data give the polynomial", [2]float64{-1, -1}},
		{"a hole of several knot spacings needs no knots inside it", [2]float64{4, 6.3}},
		{"a hole at the start shifts the knots to the data", [2]float64{-1, 1.7}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := newNoise(5)
			var tm, f []float64
			for x := 0.0; x <= 10; x += cadence294 {
				if x >= tc.hole[0] && x < tc.hole[1] {
					continue
				}
				tm = append(tm, x)
				f = append(f, cubic(x))
			}
			n := len(tm)
			for k := 0; k < 15; k++ {
				i := int(rng.uniform() * float64(n))
				f[i] = cubic(tm[i]) + 0.01*math.Copysign(1, rng.uniform()-0.5)
			}
			use := make([]bool, n)
			for i := range use {
				use[i] = true
			}
			dst := make([]float64, n)
			RobustSpline(dst, tm, f, use, 0.5, 3, 5)
			for i := range tm {
				if d := math.Abs(dst[i] - cubic(tm[i])); !(d <= 1e-10) {
					t.Fatalf("at t=%.4f the spline is %.12g, the cubic %.12g", tm[i], dst[i], cubic(tm[i]))
				}
			}
		})
	}
}

func TestRobustSplineOnNoisyData(t *testing.T) {
	// A linear least-squares fit with p free coefficients to N points of white noise σ has
	// a mean squared error of σ²·p/N at the data (the hat matrix has trace p; common
	// practice). The wave is smooth on the knot scale, so the spline's rms error should sit
	// near σ·√(p/N); we allow twice that. The clipping must keep it there despite 2 %
	// outliers of 60 σ; with clipping off (the control) the outliers push it well past.
	const sigma = 3e-4
	rng := newNoise(9)
	var tm, f, truth []float64
	for x := 0.0; x <= 20; x += cadence294 {
		tm = append(tm, x)
		v := 1 + 0.003*math.Sin(2*math.Pi*x/6)
		truth = append(truth, v)
		y := v + sigma*rng.normal()
		if rng.uniform() < 0.02 {
			y += 60 * sigma
		}
		f = append(f, y)
	}
	n := len(tm)
	use := make([]bool, n)
	for i := range use {
		use[i] = true
	}
	const spacing = 1.0
	p := 20 + 3 // intervals of 1 d over 20 d, plus the cubic's degree
	bound := 2 * sigma * math.Sqrt(float64(p)/float64(n))
	rms := func(clip float64) float64 {
		dst := make([]float64, n)
		RobustSpline(dst, tm, f, use, spacing, clip, 5)
		s := 0.0
		for i := range dst {
			s += (dst[i] - truth[i]) * (dst[i] - truth[i])
		}
		return math.Sqrt(s / float64(n))
	}
	t.Run("clipping at 3 sigma keeps the error near the noise floor", func(t *testing.T) {
		e := rms(3)
		t.Logf("rms error %.1f ppm, bound %.1f ppm", e*1e6, bound*1e6)
		if e > bound {
			t.Errorf("rms error %.3g ppm, bound %.3g ppm", e*1e6, bound*1e6)
		}
	})
	t.Run("without clipping the outliers spoil the fit (control)", func(t *testing.T) {
		e := rms(math.Inf(1))
		t.Logf("rms error %.1f ppm without clipping", e*1e6)
		if e <= bound {
			t.Errorf("rms error %.3g ppm is within the bound %.3g ppm even without clipping", e*1e6, bound*1e6)
		}
	})
}

func TestRobustSplineNeedsFourPoints(t *testing.T) {
	// Four coefficients of one cubic cannot be fixed by three points.
	tm := []float64{0, 1, 2, 3, 4}
	f := []float64{1, 1, 1, 1, 1}
	use := []bool{true, false, true, false, true}
	dst := make([]float64, 5)
	RobustSpline(dst, tm, f, use, 0.5, 3, 1)
	for i, v := range dst {
		if !math.IsNaN(v) {
			t.Fatalf("point %d: %v from three usable points", i, v)
		}
	}
	use[1] = true
	RobustSpline(dst, tm, f, use, 0.5, 3, 1)
	for i, v := range dst {
		if math.Abs(v-1) > 1e-12 {
			t.Fatalf("point %d: %v from four points of a constant", i, v)
		}
	}
}
