// Package synth builds synthetic light curves for tests and measurements: a star's own
// variability (rotational spot modulation), periodic dips (flat-bottomed boxes, exact
// limb-darkened transits integrated over the exposure, and eclipsing binaries with unequal,
// V-shaped eclipses), single events and white noise, all drawn from our own seeded random
// streams so that a Go or library upgrade cannot change a fixture.
//
// It is test support: no step imports it. The stars and planets it makes are invented; each
// test states the scenario it builds. Main entry point: Curve.
package synth

import (
	"fmt"
	"math"
	"strings"

	"dipline/steps/internal/astro"
	"dipline/steps/internal/rng"
	"dipline/steps/internal/transit"
)

// Signal is anything that multiplies or offsets the star's light: Apply adds its relative
// flux change at each time to df (negative for a dip).
type Signal interface {
	Apply(df, t []float64)
}

// Curve describes a light curve: evenly sampled times from Start over Span days at Cadence,
// optional gaps, a star's variability and dips, and white noise of relative size Noise.
type Curve struct {
	Start, Span, Cadence float64 // days
	// Gaps lists [from, to) intervals in days with no data.
	Gaps [][2]float64
	// Noise is the white-noise standard deviation (relative flux); the errors are set to it.
	Noise float64
	// Seed draws the noise.
	Seed uint64
	// Star is the star's own variability, multiplied into the light (nil: constant).
	Star Signal
	// Dips are added on top of the star's relative flux: f = star·(1 + Σ dip).
	Dips []Signal
}

// Series is a generated light curve.
type Series struct {
	Time, Flux, Err []float64
	// Trend is the noise-free star without dips; Model the noise-free light with them.
	Trend, Model []float64
}

// Make generates the light curve.
func (c Curve) Make() Series {
	var s Series
	n := int(math.Floor(c.Span/c.Cadence)) + 1
	for i := 0; i < n; i++ {
		t := c.Start + float64(i)*c.Cadence
		if inGap(t, c.Gaps) {
			continue
		}
		s.Time = append(s.Time, t)
	}
	m := len(s.Time)
	star := make([]float64, m)
	if c.Star != nil {
		c.Star.Apply(star, s.Time)
	}
	dips := make([]float64, m)
	for _, d := range c.Dips {
		d.Apply(dips, s.Time)
	}
	r := rng.New(c.Seed)
	s.Flux, s.Err, s.Trend, s.Model = make([]float64, m), make([]float64, m), make([]float64, m), make([]float64, m)
	for i := range s.Time {
		s.Trend[i] = 1 + star[i]
		s.Model[i] = s.Trend[i] * (1 + dips[i])
		s.Flux[i] = s.Model[i] + c.Noise*r.Normal()
		s.Err[i] = c.Noise
	}
	return s
}

func inGap(t float64, gaps [][2]float64) bool {
	for _, g := range gaps {
		if t >= g[0] && t < g[1] {
			return true
		}
	}
	return false
}

// CSV writes the series as a comma-separated table with a header: time, flux, flux_err.
func (s Series) CSV() []byte {
	var b strings.Builder
	b.WriteString("time,flux,flux_err\n")
	for i := range s.Time {
		fmt.Fprintf(&b, "%.8f,%.9f,%.9f\n", s.Time[i], s.Flux[i], s.Err[i])
	}
	return []byte(b.String())
}

// Rotation is spot modulation: a sum of sinusoids at the rotation period and its harmonics,
// Σ A_k sin(2πk(t − Phase)/Period), with Amplitudes[0] the semi-amplitude of the
// fundamental. When Evolve > 0 each harmonic's amplitude wanders as
// A_k (1 + ½ sin(2π t/Evolve + k)), a crude stand-in for spots growing and decaying.
type Rotation struct {
	Period, Phase float64
	Amplitudes    []float64
	Evolve        float64
}

// Apply adds the modulation.
func (r Rotation) Apply(df, t []float64) {
	for i, ti := range t {
		for k, a := range r.Amplitudes {
			amp := a
			if r.Evolve > 0 {
				amp *= 1 + 0.5*math.Sin(2*math.Pi*ti/r.Evolve+float64(k))
			}
			df[i] += amp * math.Sin(2*math.Pi*float64(k+1)*(ti-r.Phase)/r.Period)
		}
	}
}

// Box is a flat-bottomed periodic dip of full width Duration and fractional Depth.
type Box struct {
	Period, Epoch, Duration, Depth float64
}

// Apply subtracts the box.
func (b Box) Apply(df, t []float64) {
	for i, ti := range t {
		if phaseDistance(ti, b.Epoch, b.Period) < b.Duration/2 {
			df[i] -= b.Depth
		}
	}
}

// phaseDistance is |t − nearest epoch| in days.
func phaseDistance(t, epoch, period float64) float64 {
	x := (t - epoch) / period
	return math.Abs(x-math.Round(x)) * period
}

// Transit is a planet on a circular orbit: k = Rp/R*, impact parameter B, scaled axis AR,
// quadratic limb darkening U1, U2, integrated over Exposure days with Sub sub-exposures
// (Mandel & Agol 2002 through transit.Flux).
type Transit struct {
	Period, Epoch, K, B, AR, U1, U2 float64
	Exposure                        float64
	Sub                             int
}

// Apply subtracts the transit.
func (p Transit) Apply(df, t []float64) {
	n := max(p.Sub, 1)
	fine := transit.SubexposureTimes(nil, t, p.Exposure, n)
	z := transit.SeparationCircular(nil, fine, p.Period, p.Epoch, p.AR, p.B)
	f := transit.Flux(nil, z, p.K, p.U1, p.U2)
	avg := transit.AverageBlocks(nil, f, n)
	for i := range t {
		df[i] += avg[i] - 1
	}
}

// T14 is the first-to-last-contact duration of the circular transit in days (Winn 2010,
// astro.TotalDuration); 0 when the planet misses the star or the orbit is not a valid one.
func (p Transit) T14() float64 {
	t, _ := astro.TotalDuration(p.Period, p.AR, p.K, p.B, 0, 0)
	return t
}

// Binary is an eclipsing binary at its true Period: a primary eclipse of depth Primary at
// Epoch and a secondary of depth Secondary half a period later, both V-shaped (triangles of
// full width Duration), as a grazing pair of stars gives.
type Binary struct {
	Period, Epoch, Duration, Primary, Secondary float64
}

// Apply subtracts both eclipses.
func (b Binary) Apply(df, t []float64) {
	half := b.Duration / 2
	for i, ti := range t {
		if u := phaseDistance(ti, b.Epoch, b.Period); u < half {
			df[i] -= b.Primary * (1 - u/half)
		}
		if u := phaseDistance(ti, b.Epoch+b.Period/2, b.Period); u < half {
			df[i] -= b.Secondary * (1 - u/half)
		}
	}
}

// Event is one non-periodic dip: a box of Depth and Duration centred on Time (a single
// deep systematic, say).
type Event struct {
	Time, Duration, Depth float64
}

// Apply subtracts the event.
func (e Event) Apply(df, t []float64) {
	for i, ti := range t {
		if math.Abs(ti-e.Time) < e.Duration/2 {
			df[i] -= e.Depth
		}
	}
}
