package sky

import (
	"testing"

	"dipline/steps/internal/timescale"
)

// BenchmarkNightOf measures one night's crossings for one darkness (about 170 Sun
// altitudes).
func BenchmarkNightOf(b *testing.B) {
	s := Site{Lat: -30.17, Lon: -70.8, Height: 2200}
	for b.Loop() {
		if _, err := NightOf(s, 2028, 12, 21, Astronomical); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkMoonSeparation measures the Moon's distance from one target at one instant.
func BenchmarkMoonSeparation(b *testing.B) {
	s := Site{Lat: 28.76, Lon: -17.88, Height: 2350}
	t, err := At(timescale.FromJD(2461500.5))
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		MoonSeparation(s, t, 279.23, 38.78)
	}
}
