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

// spottedSeries is 45 days at a 2-minute cadence (32,401 points) of a star with a 1.5 %
// spot wave of 4.2 days and 800 ppm white noise: the spotted star.
func spottedSeries() []Series {
	const n = 32401
	rng := newNoise(45)
	tm, f, e := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range tm {
		tm[i] = float64(i) * 2 / 1440
		f[i] = 1 + 0.015*math.Sin(2*math.Pi*tm[i]/4.2) + 8e-4*rng.normal()
		e[i] = 8e-4
	}
	return []Series{{Time: tm, Flux: f, Err: e}}
}

// BenchmarkSpotted compares, on the spotted star, the biweight at 0.5 d with the local
// quadratic at the window ChooseSpan picks for an unmasked pass (1.41 d), and the choice
// itself; serial.
func BenchmarkSpotted(b *testing.B) {
	s := spottedSeries()
	b.Run("biweight 0.5 d", func(b *testing.B) {
		cfg := baseConfig(Biweight)
		for b.Loop() {
			Detrend(cfg, s, nil)
		}
	})
	b.Run("local quadratic 1.41 d", func(b *testing.B) {
		cfg := baseConfig(LocalPoly)
		cfg.Span = 1.414
		for b.Loop() {
			Detrend(cfg, s, nil)
		}
	})
	b.Run("choosing the window", func(b *testing.B) {
		for b.Loop() {
			ChooseSpan(s, 2, KeepTransits, 2.0/24, 0, 0.5, nil)
		}
	})
}

// BenchmarkChooseSpan4yr is the window choice on the four-year long-cadence series.
func BenchmarkChooseSpan4yr(b *testing.B) {
	s := benchSeries()
	for b.Loop() {
		ChooseSpan(s, 2, KeepTransits, 2.0/24, 0, 0.5, nil)
	}
}
