package robust

import (
	"math"
	"testing"
)

// benchSeries is 70,000 points at the 29.4-min long cadence (about 1,430 d) of a star with a
// slow wave, white noise of 300 ppm and a flare every few days.
func benchSeries() []Series {
	const n = 70000
	rng := newNoise(70000)
	tm, f := make([]float64, n), make([]float64, n)
	for i := range tm {
		tm[i] = float64(i) * cadence294
		f[i] = 1 + 0.003*math.Sin(2*math.Pi*tm[i]/7.3) + 3e-4*rng.normal()
		if i%250 == 17 {
			f[i] += 0.004
		}
	}
	return []Series{{Time: tm, Flux: f}}
}

// BenchmarkDetrend measures each estimator on 70,000 points at 29.4-min cadence with a
// 0.5-d span (and 0.5-d knots for the spline), serially.
func BenchmarkDetrend(b *testing.B) {
	s := benchSeries()
	for _, e := range estimators {
		b.Run(e.name, func(b *testing.B) {
			cfg := baseConfig(e.est)
			for b.Loop() {
				Detrend(cfg, s, nil)
			}
		})
	}
}
