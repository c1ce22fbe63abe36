package astro

import (
	"errors"
	"math"
	"testing"
)

// Ciardi et al. (2015, ApJ 805, 16) radius correction (form from memory); check values
// computed independently: Δm = 0 → √2, Δm = 2.5 → √1.1.
func TestRadiusCorrection(t *testing.T) {
	cases := []struct {
		name string
		got  func() (float64, error)
		want float64
	}{
		{"an equal twin makes a planet on the target look √2 smaller",
			func() (float64, error) { return TargetRadiusCorrection([]float64{0}) }, math.Sqrt2},
		{"a companion 2.5 mag fainter makes it look √1.1 smaller",
			func() (float64, error) { return TargetRadiusCorrection([]float64{2.5}) }, math.Sqrt(1.1)},
		{"no companion means no correction",
			func() (float64, error) { return TargetRadiusCorrection(nil) }, 1},
		// Two companions at Δm = 2.5 and 5: 1 + 0.1 + 0.01 = 1.11 (Pogson ratio, hand arithmetic).
		{"two companions add their fluxes",
			func() (float64, error) { return TargetRadiusCorrection([]float64{2.5, 5}) }, math.Sqrt(1.11)},
		// Planet on an equal twin of equal radius: (1)·√(2·1) = √2, the same as on the target.
		{"a planet on an equal twin is corrected by √2 too",
			func() (float64, error) { return CompanionRadiusCorrection([]float64{0}, 0, 1) }, math.Sqrt2},
		// Planet on a companion 2.5 mag fainter with 0.5 the target's radius:
		// F_tot/F_c = 1.1 · 10 = 11, X_R = 0.5 √11 (Ciardi et al. 2015 form, hand arithmetic).
		{"a planet on a fainter, smaller companion is 0.5√11 times larger than assumed",
			func() (float64, error) { return CompanionRadiusCorrection([]float64{2.5}, 0, 0.5) }, 0.5 * math.Sqrt(11)},
		// Depth: 1000 ppm observed with an equal twin is 2000 ppm undiluted.
		{"an equal twin halves the depth",
			func() (float64, error) { return UndilutedDepth(1000e-6, []float64{0}) }, 2000e-6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got, err := c.got()
			if err != nil || relErr(got, c.want) > 1e-12 {
				t.Errorf("got %.15g, %v; want %.15g", got, err, c.want)
			}
		})
	}
	bad := []struct {
		name string
		err  error
	}{
		{"a companion index past the list is refused", func() error { _, e := CompanionRadiusCorrection([]float64{1}, 1, 1); return e }()},
		{"a non-positive companion radius is refused", func() error { _, e := CompanionRadiusCorrection([]float64{1}, 0, 0); return e }()},
		{"a NaN magnitude difference is refused", func() error { _, e := TargetRadiusCorrection([]float64{math.NaN()}); return e }()},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			if !errors.Is(c.err, ErrDomain) {
				t.Errorf("got %v, want ErrDomain", c.err)
			}
		})
	}
}
