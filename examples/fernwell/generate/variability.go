package main

import (
	"cmp"
	"math"
	"slices"
)

// spot is one dark starspot. Its size grows and decays over weeks (a Gaussian envelope in
// time) while rotation carries it across the visible disc every ~2.6 days; a few spots
// at different longitudes and latitudes give the quasi-periodic, slowly changing
// modulation typical of a young cool dwarf.
type spot struct {
	Lat  float64 // latitude, radians
	Lon0 float64 // longitude at t = 0, radians
	Peak float64 // time of largest size, BJD_TDB − 2460000
	Life float64 // Gaussian width of the growth and decay, days
	Dark float64 // light lost at largest size when seen face-on (relative flux)
}

// Spot population. Spots emerge at random times, on average every spotSpacing days,
// mostly near one "active longitude" (spots on opposite sides of the star would cancel
// each other's modulation, as they tend not to on real active stars).
const (
	spotSpacing    = 2.0 // mean days between the peaks of successive spots
	spotLifeMin    = 4.0 // days
	spotLifeMax    = 9.0 // days
	spotDarkMin    = 0.003
	spotDarkMax    = 0.006
	spotLatMax     = 25 * math.Pi / 180
	activeScatter  = 0.6 // radians of longitude around the active longitude
	activeFraction = 0.8 // share of spots near the active longitude; the rest anywhere
)

// drawSpots returns the spots that shape the star's light between from and to (days),
// including some that peak before or after, whose wings reach into the interval.
func drawSpots(r *splitmix64, from, to float64) []spot {
	var spots []spot
	active := r.between(0, 2*math.Pi)
	for t := from - 3*spotLifeMax; t < to+3*spotLifeMax; t += -spotSpacing * math.Log(1-r.uniform()) {
		lon := r.between(0, 2*math.Pi)
		if r.uniform() < activeFraction {
			lon = active + r.between(-activeScatter, activeScatter)
		}
		spots = append(spots, spot{
			Lat:  math.Asin(r.between(-math.Sin(spotLatMax), math.Sin(spotLatMax))), // uniform on the sphere's band
			Lon0: lon,
			Peak: t,
			Life: r.between(spotLifeMin, spotLifeMax),
			Dark: r.between(spotDarkMin, spotDarkMax),
		})
	}
	return spots
}

// dimming is the light this spot takes away at time t: its darkness times its
// foreshortening μ (the cosine of the angle between the spot's normal and the line of
// sight), and nothing while it is on the far side.
func (sp *spot) dimming(s *star, t float64) float64 {
	size := math.Exp(-0.5 * math.Pow((t-sp.Peak)/sp.Life, 2))
	sinL := math.Sin(sp.Lat)
	period := s.RotationDays / (1 - s.Shear*sinL*sinL)
	lon := sp.Lon0 + 2*math.Pi*t/period
	inc := s.AxisInclinationDeg * math.Pi / 180
	mu := math.Cos(inc)*sinL + math.Sin(inc)*math.Cos(sp.Lat)*math.Cos(lon)
	if mu <= 0 {
		return 0
	}
	return sp.Dark * size * mu
}

// brightness is the star's spotted brightness at t relative to an unspotted star.
func brightness(s *star, spots []spot, t float64) float64 {
	f := 1.0
	for i := range spots {
		f -= spots[i].dimming(s, t)
	}
	return f
}

// flare is one stellar flare: the light rises linearly over Rise days to Amp (relative to
// the quiet star) and then decays exponentially with time constant Decay.
type flare struct {
	Peak  float64 // time of maximum, BJD_TDB − 2460000
	Amp   float64 // extra light at maximum, relative to the unspotted star
	Rise  float64 // days
	Decay float64 // e-folding time, days
}

// Flare population: amplitudes log-uniform between flareAmpMin and flareAmpMax, rises of
// a few minutes (faster than one exposure), decays of tens of minutes.
const (
	flareAmpMin   = 0.008
	flareAmpMax   = 0.06
	flareRiseMin  = 2.0 / 1440
	flareRiseMax  = 8.0 / 1440
	flareDecayMin = 15.0 / 1440
	flareDecayMax = 60.0 / 1440
	// flareSpacing keeps flares apart so that each is a separate event in the demo.
	flareSpacing = 0.5 // days
	// flareTransitGuard keeps flares this far (days) outside every transit, so that the
	// demo's transit depths are not disturbed by flare light.
	flareTransitGuard = 0.25
)

// light is the flare's extra light at time t.
func (f *flare) light(t float64) float64 {
	switch {
	case t < f.Peak-f.Rise:
		return 0
	case t < f.Peak:
		return f.Amp * (t - (f.Peak - f.Rise)) / f.Rise
	default:
		return f.Amp * math.Exp(-(t-f.Peak)/f.Decay)
	}
}

// drawFlares places n flares at observed times (so each one shows in the data), at least
// flareSpacing apart and flareTransitGuard outside every transit.
func drawFlares(r *splitmix64, n int, times []float64, planets []planet) []flare {
	var flares []flare
	for len(flares) < n {
		t := times[r.index(len(times))]
		f := flare{
			Peak:  t,
			Amp:   r.logUniform(flareAmpMin, flareAmpMax),
			Rise:  r.between(flareRiseMin, flareRiseMax),
			Decay: r.between(flareDecayMin, flareDecayMax),
		}
		if nearTransit(t, planets, flareTransitGuard) || nearFlare(t, flares, flareSpacing) {
			continue
		}
		flares = append(flares, f)
	}
	slices.SortFunc(flares, func(a, b flare) int { return cmp.Compare(a.Peak, b.Peak) })
	return flares
}

// nearTransit says whether t lies within guard days of any transit of the planets.
func nearTransit(t float64, planets []planet, guard float64) bool {
	for i := range planets {
		p := &planets[i]
		if math.Abs(t-p.nearestMid(t)) < p.T14/2+guard {
			return true
		}
	}
	return false
}

func nearFlare(t float64, flares []flare, spacing float64) bool {
	for _, f := range flares {
		if math.Abs(t-f.Peak) < spacing {
			return true
		}
	}
	return false
}
