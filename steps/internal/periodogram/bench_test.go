package periodogram

import (
	"math"
	"testing"

	"dipline/steps/internal/rng"
)

// spottedTrend is an invented spotted star's trend: 1.5 % at a 3.1-day rotation with a
// 0.5 % first harmonic, both wandering over a 20-day spot lifetime, on a slow 0.1 % drift,
// with a little residual wander.
func spottedTrend(seed uint64) func(t float64, i int) float64 {
	g := rng.New(seed)
	return func(t float64, _ int) float64 {
		evolve := 1 + 0.3*math.Sin(2*math.Pi*t/20)
		return 1 + evolve*(0.015*math.Sin(2*math.Pi*t/3.1)+0.005*math.Sin(4*math.Pi*t/3.1+0.7)) +
			0.001*math.Sin(2*math.Pi*t/300) + 1e-5*g.Normal()
	}
}

// Benchmark4yrLongCadence measures Strongest on four years of 29.4-minute points in
// 27-day pieces with one-day gaps (52 pieces, 68,796 points), as a survey's full-frame
// images give, smoothed at 0.5 d:
//
//	go test ./steps/internal/periodogram -run '^$' -bench 4yr -benchtime 5x
func Benchmark4yrLongCadence(b *testing.B) {
	in := pieces(52, 27, 29.4/1440, spottedTrend(1))
	benchStrongest(b, in)
}

// Benchmark45dShortCadence measures Strongest on 45 days of 2-minute points in four
// pieces of 10.5 days with one-day gaps (30,241 points), as two sectors of a survey's
// 2-minute targets give, smoothed at 0.5 d:
//
//	go test ./steps/internal/periodogram -run '^$' -bench 45d -benchtime 20x
func Benchmark45dShortCadence(b *testing.B) {
	in := pieces(4, 10.5, 2.0/1440, spottedTrend(2))
	benchStrongest(b, in)
}

func benchStrongest(b *testing.B, in []Piece) {
	n := 0
	for _, p := range in {
		n += len(p.Time)
	}
	var got []Period
	for b.Loop() {
		var err error
		got, err = Strongest(in, Options{Smoothing: 0.5})
		if err != nil {
			b.Fatal(err)
		}
	}
	if len(got) == 0 || math.Abs(got[0].Period/3.1-1) > 0.01 {
		b.Fatalf("periods %+v, want 3.1 d first", got)
	}
	b.ReportMetric(float64(n), "points")
}

// BenchmarkPowerOnGrid measures one generalised periodogram of 1,000 points on 10,000
// frequencies (10 million point-frequency pairs):
//
//	go test ./steps/internal/periodogram -run '^$' -bench PowerOnGrid
func BenchmarkPowerOnGrid(b *testing.B) {
	s := unevenSeries(1000, 4)
	g := Grid{Start: 0.01, Step: 0.001, N: 10000}
	dst := make([]float64, g.N)
	for b.Loop() {
		if _, err := PowerOnGrid(dst, s, g, Floating); err != nil {
			b.Fatal(err)
		}
	}
}
