package synth

import (
	"math"
	"testing"
)

// T14 of the Earth transiting the Sun, central, circular: 13.095 h (Winn 2010,
// arXiv:1001.2010, with IAU 2015 B3 nominal values: k = 0.0091679, a/R* = 215.032; worked
// independently at high precision).
func TestTransitDurationOfTheEarth(t *testing.T) {
	p := Transit{Period: 365.25, K: 0.0091679, B: 0, AR: 215.032}
	if got := p.T14() * 24; math.Abs(got-13.095) > 0.002 {
		t.Errorf("T14 = %.4f h, want 13.095", got)
	}
}

// The pieces add as documented: a box of depth d removes d inside and nothing outside; a
// binary's eclipses are triangles with their full depth at the centres; the star's
// modulation multiplies; the noise has the asked standard deviation.
func TestCurveAddsItsParts(t *testing.T) {
	c := Curve{Span: 10, Cadence: 0.001, Noise: 0,
		Star: Rotation{Period: 5, Amplitudes: []float64{0.01}},
		Dips: []Signal{Box{Period: 4, Epoch: 1, Duration: 0.2, Depth: 0.002},
			Binary{Period: 6, Epoch: 2, Duration: 0.4, Primary: 0.01, Secondary: 0.004}}}
	s := c.Make()
	at := func(x float64) int { return int(math.Round(x / 0.001)) }
	star := func(x float64) float64 { return 1 + 0.01*math.Sin(2*math.Pi*x/5) }
	for _, k := range []struct {
		x, rel float64
	}{
		{1, -0.002},            // the box
		{1.2, 0},               // outside everything
		{2, -0.01},             // the primary's centre
		{2.1, -0.005},          // half-way down the primary's V
		{5, -0.006},            // the secondary's centre, in a box too
		{5.05, -0.002 - 0.003}, // the box and three quarters of the secondary
		{7, 0},
	} {
		i := at(k.x)
		if want := star(s.Time[i]) * (1 + k.rel); math.Abs(s.Flux[i]-want) > 1e-12 {
			t.Errorf("t = %.3f: flux %.9f, want %.9f", s.Time[i], s.Flux[i], want)
		}
	}
	c.Noise, c.Star, c.Dips = 1e-3, nil, nil
	s = c.Make()
	var ss float64
	for _, f := range s.Flux {
		ss += (f - 1) * (f - 1)
	}
	if sd := math.Sqrt(ss / float64(len(s.Flux))); math.Abs(sd/1e-3-1) > 0.03 {
		t.Errorf("noise %.3g, want 1e-3 within 3 %% (10,001 draws)", sd)
	}
}
