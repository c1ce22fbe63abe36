package search

import (
	"math"
	"os"
	"testing"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/rng"
)

// noiseCurve is days of evenly sampled data at 30 minutes, with no gap and no transit:
// white noise of 1000 ppm plus, when red > 0, an AR(1) series of standard deviation red
// and correlation time 0.1 d (invented data).
func noiseCurve(seed uint64, days, red float64) *lightcurve.LightCurve {
	g := rng.New(seed)
	const cadence, tau = 30.0 / 1440, 0.1
	a := math.Exp(-cadence / tau)
	r := 0.0
	lc := &lightcurve.LightCurve{TimeScale: "BJD_TDB", RefInt: 2460000, RefFrac: 0.5}
	s := lightcurve.Segment{ID: "1", Exposure: cadence, Contamination: math.NaN()}
	for t := 0.0; t <= days; t += cadence {
		r = a*r + math.Sqrt(1-a*a)*red*g.Normal()
		s.Time = append(s.Time, t)
		s.Flux = append(s.Flux, 1+1e-3*g.Normal()+r)
		s.Err = append(s.Err, 1e-3)
	}
	lc.Segments = append(lc.Segments, s)
	return lc
}

// TestMeasureFalseAlarmsWithTheSNRFloor measures how many light curves without a transit
// give a signal, with the SNR floor (min_snr = 7, the default) and without it (min_snr = 0),
// the SDE threshold at its default in both. It is a measurement, not a check of the
// default run: DIPLINE_LONG=1 go test ./steps/search -run MeasureFalseAlarms -v -timeout 3h
// (figures in BENCHMARKS.md). Its one assertion is what the floor must do by construction:
// never pass on more than the search without it.
func TestMeasureFalseAlarmsWithTheSNRFloor(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("a measurement of some hours; set DIPLINE_LONG=1")
	}
	cases := []struct {
		name      string
		days, red float64
		density   string
		n         int
	}{
		{"90 d, white", 90, 0, "1 rho_sun", 300},
		{"90 d, white + red 600 ppm", 90, 6e-4, "1 rho_sun", 300},
		{"1 yr, white, 4 rho_sun", 365, 0, "4 rho_sun", 150},
	}
	for _, c := range cases {
		var with, without int
		for i := 0; i < c.n; i++ {
			lc := noiseCurve(uint64(1000+i), c.days, c.red)
			set := defaults()
			set["star_density"] = c.density
			floor, _ := run(t, set, lc, nil)
			set["min_snr"] = 0.0
			bare, _ := run(t, set, lc, nil)
			if len(floor.Signals()) > 0 {
				with++
			}
			if len(bare.Signals()) > 0 {
				without++
			}
			if len(floor.Signals()) > len(bare.Signals()) {
				t.Errorf("%s, seed %d: %d signal(s) with the floor, %d without it", c.name, 1000+i, len(floor.Signals()), len(bare.Signals()))
			}
		}
		t.Logf("%s: %d light curves; a signal in %d (%.1f %%) without the floor, %d (%.1f %%) with min_snr = 7",
			c.name, c.n, without, pct(without, c.n), with, pct(with, c.n))
	}
}

func pct(k, n int) float64 { return 100 * float64(k) / float64(n) }
