package bls

import (
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"testing"
)

// noiseCase is one kind of light curve for the white-noise calibration of the SDE
// threshold: span and cadence in days, mid-span gap in days, the star's density, and the
// default period range of the search step (Roche-type limit or 0.2 d, to half the span).
type noiseCase struct {
	name               string
	span, cadence, gap float64
	density            float64
}

func (c noiseCase) options() Options {
	o := defaultOptions(math.Max(0.2, RochePeriod(c.density)), c.span/2)
	o.Density = c.density
	return o
}

// noiseCases are the light curves of the calibration: all at most 90 days long, as in the
// white-noise test of Hippke & Heller (2019, A&A 623, A39).
var noiseCases = []noiseCase{
	{"90 d at 30 min, Sun-like star", 90, 30.0 / 1440, 0, solarDensity},
	{"27 d at 2 min with a 1 d gap, Sun-like star", 27, 2.0 / 1440, 1, solarDensity},
	{"90 d at 10 min, red dwarf (4 ρ☉)", 90, 10.0 / 1440, 0, 4 * solarDensity},
	{"60 d at 30 min with a 3 d gap, dense dwarf (8 ρ☉)", 60, 30.0 / 1440, 3, 8 * solarDensity},
	{"45 d at 30 min, Sun-like star", 45, 30.0 / 1440, 0, solarDensity},
}

// noiseSDE returns the highest SDE of the first pass over pure white noise, by the method
// a search takes by default.
func noiseSDE(c noiseCase, seed uint64) float64 {
	s := synth(seed, c.span, c.cadence, 1e-3, c.gap)
	o := c.options()
	g, err := NewGrid(o.Density, s.Time[len(s.Time)-1]-s.Time[0], o.PeriodMin, o.PeriodMax, o.Oversampling)
	if err != nil {
		panic(err)
	}
	p := prepare(s, nil, s.Cadence())
	m, _ := choose(MethodAuto, p, g)
	return wholePass(m, p, g, nil, nil).score
}

// noiseSDEs runs trials light curves of case c, seeded base, base+1, …, spread over the
// machine's cores; the result is in seed order whatever the scheduling.
func noiseSDEs(c noiseCase, trials int, base uint64) []float64 {
	out := make([]float64, trials)
	forEach(trials, func(k int) { out[k] = noiseSDE(c, base+uint64(k)) })
	return out
}

// caseThreshold is the default threshold of a noise case's grid.
func caseThreshold(c noiseCase) float64 {
	s := synth(1, c.span, c.cadence, 1e-3, c.gap)
	o := c.options()
	g, err := NewGrid(o.Density, s.Time[len(s.Time)-1]-s.Time[0], o.PeriodMin, o.PeriodMax, o.Oversampling)
	if err != nil {
		panic(err)
	}
	return DefaultThreshold(g.N)
}

// quantile returns the q-quantile of v (sorted in place) as the order statistic ⌈q·n⌉.
func quantile(v []float64, q float64) float64 {
	sort.Float64s(v)
	k := int(math.Ceil(q*float64(len(v)))) - 1
	return v[max(0, min(len(v)-1, k))]
}

// TestCalibrateSDEThreshold measures, for each noise case, the distribution of the highest
// SDE over white-noise light curves and checks that DefaultThreshold of its grid is at least the
// 99th percentile of every case, i.e. a false-alarm rate of at most 1 % per star.
// It takes minutes; run it with
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run CalibrateSDE -v -timeout 2h
//
// (DIPLINE_SDE_TRIALS sets the trials per case, default 2000).
func TestCalibrateSDEThreshold(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("white-noise calibration of the SDE threshold; set DIPLINE_LONG=1 to run it")
	}
	trials := 2000
	if v, err := strconv.Atoi(os.Getenv("DIPLINE_SDE_TRIALS")); err == nil && v > 0 {
		trials = v
	}
	for i, c := range noiseCases {
		t.Run(c.name, func(t *testing.T) {
			v := noiseSDEs(c, trials, uint64(1_000_000*(i+1)))
			th := caseThreshold(c)
			exceed := 0
			for _, x := range v {
				if x >= th {
					exceed++
				}
			}
			q50, q90, q99, q999 := quantile(v, 0.5), quantile(v, 0.9), quantile(v, 0.99), quantile(v, 0.999)
			t.Logf("%s: %d trials; SDE median %.2f, 90%% %.2f, 99%% %.2f, 99.9%% %.2f, max %.2f; %d at or above %.1f",
				c.name, trials, q50, q90, q99, q999, v[len(v)-1], exceed, th)
			if q99 > th {
				t.Errorf("the 99th percentile %.2f exceeds the default threshold %.2f", q99, th)
			}
		})
	}
}

// TestWhiteNoiseStaysBelowThreshold: over 200 seeded 45-day white-noise light curves (the
// last noise case) the highest SDE reaches the default threshold in at most 6: at a true
// false-alarm rate of 1 %, 7 or more happen with probability 0.5 % (binomial, n = 200),
// while a rate of 5 % would give 7 or more with probability 87 %.
func TestWhiteNoiseStaysBelowThreshold(t *testing.T) {
	c := noiseCases[len(noiseCases)-1]
	v := noiseSDEs(c, 200, 42)
	th := caseThreshold(c)
	exceed := 0
	for _, x := range v {
		if x >= th {
			exceed++
		}
	}
	if exceed > 6 {
		t.Errorf("%d of 200 white-noise light curves reached SDE %.2f; at most 6 expected at a 1 %% false-alarm rate", exceed, th)
	}
	t.Log(fmt.Sprintf("max SDE %.2f, %d of 200 at or above %.2f", quantile(v, 1), exceed, th))
}

// TestCalibrateSDEWithGridSize measures how the white-noise SDE grows with the grid: the
// highest SDE of a search over more frequencies is the largest of more draws, so a fixed
// threshold's false-alarm rate grows with the baseline. Light curves of 1, 2 and 4 years at
// 30 minutes around a red dwarf (4 ρ☉), 0.4 d to half the span, oversampling 3; the 99th
// percentile and the share at or above the grid's DefaultThreshold per case.
//
//	DIPLINE_LONG=1 go test ./steps/search/bls -run CalibrateSDEWithGridSize -v -timeout 3h
func TestCalibrateSDEWithGridSize(t *testing.T) {
	if os.Getenv("DIPLINE_LONG") == "" {
		t.Skip("white-noise SDE against the grid size; set DIPLINE_LONG=1 to run it")
	}
	for i, c := range []struct {
		years  float64
		trials int
	}{{1, 1000}, {2, 400}, {4, 200}} {
		nc := noiseCase{name: fmt.Sprintf("%g yr at 30 min, red dwarf (4 ρ☉)", c.years), span: 365.25 * c.years,
			cadence: 30.0 / 1440, density: 4 * solarDensity}
		v := noiseSDEs(nc, c.trials, uint64(20_000_000*(i+1)))
		s := synth(1, nc.span, nc.cadence, 1e-3, 0)
		o := nc.options()
		g, _ := NewGrid(o.Density, s.Time[len(s.Time)-1]-s.Time[0], o.PeriodMin, o.PeriodMax, o.Oversampling)
		th := DefaultThreshold(g.N)
		exceed := 0
		for _, x := range v {
			if x >= th {
				exceed++
			}
		}
		t.Logf("%s: N_freq %d, %d trials; SDE median %.2f, 90%% %.2f, 99%% %.2f, max %.2f; %d (%.1f %%) at or above %.2f",
			nc.name, g.N, c.trials, quantile(v, 0.5), quantile(v, 0.9), quantile(v, 0.99), v[len(v)-1], exceed, 100*float64(exceed)/float64(c.trials), th)
		if quantile(v, 0.99) > th {
			t.Errorf("the 99th percentile %.2f exceeds the default threshold %.2f", quantile(v, 0.99), th)
		}
	}
}
