package main

import (
	"cmp"
	"math"
	"slices"
	"strconv"
)

// subSamples is the number of instants averaged over one exposure. A 29.4-minute exposure
// smears ingress, egress and flare rises; averaging the model over sub-exposures is the
// remedy of Kipping (2010, MNRAS 408, 1758). 30 sub-samples of about a minute keep the
// average within a ppm of the exact exposure integral even across a contact point, where
// the light bends most (TestExposureIntegration), and resolve a flare's rise of 2–8 minutes.
const subSamples = 30

// interval is a stretch of time [From, To), in days.
type interval struct{ From, To float64 }

func (iv interval) contains(t float64) bool { return t >= iv.From && t < iv.To }

// campaign describes one light-curve file: when the photometer looked, how often, how
// noisy, which defects to plant, and how to write it.
type campaign struct {
	// Name labels the random streams ("main/noise", ...) and the file's role.
	Name string
	// File is the file name written into the data folder.
	File string
	// Stretches are the observing windows; the time between them is a gap (e.g. while
	// the spacecraft sends its data home).
	Stretches []interval
	// CadenceMin is the time between points, in minutes; each point integrates over the
	// whole cadence (exposure = cadence).
	CadenceMin float64
	// ShortGaps are unplanned interruptions placed at random inside the stretches, each
	// between ShortGapMin and ShortGapMax days long.
	ShortGaps                int
	ShortGapMin, ShortGapMax float64
	// NoisePPM is the white noise of one point, in parts per million of the median flux.
	NoisePPM float64
	// Flares, Flagged and Missing count the flares, the rows with a nonzero quality flag
	// and the rows whose flux is NaN.
	Flares, Flagged, Missing int
	// FluxUnit is the median flux in the file: 1 for relative flux, or a count rate.
	FluxUnit float64
	// Format says how the rows are written.
	Format format
}

// cadence is the time between points, in days.
func (c *campaign) cadence() float64 { return c.CadenceMin / 1440 }

// series is one simulated light curve, before it is written, together with the parts it
// was made of (so that the tests can check each part).
type series struct {
	Campaign *campaign
	Time     []float64 // mid-exposure, BJD_TDB − 2460000
	Flux     []float64 // as written, in FluxUnit; NaN in missing rows
	Err      []float64 // one-sigma error of Flux; NaN in missing rows
	Quality  []int     // 0 = good; otherwise one of the qualityBits
	// Star is the spotted star and its companion (no planets, flares or noise), averaged
	// over each exposure and scaled like Flux: the "local trend" the transits sit on.
	Star []float64
	// Model is the noise-free light of each row before scaling and defects: instant
	// averaged over the exposure.
	Model  []float64
	Spots  []spot
	Flares []flare
	Gaps   []interval // the short random gaps (the gaps between Stretches come on top)
}

// Quality bits. Their meanings are invented for the demo; a reader only needs to know
// that nonzero means "the instrument distrusts this row".
const (
	qualityPointing  = 1 // pointing drift: the star moved in its aperture, flux too low
	qualityWheel     = 2 // wheel unload: a small jolt, flux slightly low
	qualityScattered = 8 // scattered light: extra background, flux too high
)

// simulate makes the light curve of campaign c for star s, with its companion comp (nil
// for none) in the aperture and the given planets. Every random choice comes from seed
// through a stream named after c and the purpose.
func simulate(seed uint64, s *star, comp *companion, planets []planet, c *campaign) *series {
	stream := func(purpose string) *splitmix64 { return newStream(seed, c.Name+"/"+purpose) }
	out := &series{Campaign: c}

	// 1. When the photometer looked: one regular grid from the first stretch's start,
	//    kept inside the stretches and outside the short gaps.
	out.Gaps = drawGaps(stream("gaps"), c)
	first, last := c.Stretches[0].From, c.Stretches[len(c.Stretches)-1].To
	for i := 0; ; i++ {
		t := first + float64(i)*c.cadence()
		if t >= last {
			break
		}
		if inAny(t, c.Stretches) && !inAny(t, out.Gaps) {
			out.Time = append(out.Time, t)
		}
	}

	// 2. What the star did: spots throughout, flares at a few observed times.
	out.Spots = drawSpots(stream("spots"), first, last)
	out.Flares = drawFlares(stream("flares"), c.Flares, out.Time, planets)

	// 3. The noise-free light, averaged over each exposure by the midpoint rule over
	//    subSamples instants (Kipping 2010): the same sub-exposure times as dipline's
	//    transit model uses, t + exposure·((j+½)/n − ½).
	n := len(out.Time)
	out.Model = make([]float64, n)
	out.Star = make([]float64, n)
	exposure := c.cadence()
	dilution := comp.fluxRatio()
	for i, t := range out.Time {
		var quiet, total float64
		for j := 0; j < subSamples; j++ {
			u := t + exposure*((float64(j)+0.5)/subSamples-0.5)
			q, l := instant(s, dilution, out.Spots, out.Flares, planets, u)
			quiet += q
			total += l
		}
		out.Star[i] = quiet / subSamples
		out.Model[i] = total / subSamples
	}
	model := out.Model

	// 4. Scale to the file's unit and add white noise. The error of each point grows as
	//    the square root of its flux, as photon noise does.
	scale := c.FluxUnit / median(model)
	noise := stream("noise")
	sigma := c.NoisePPM * 1e-6
	out.Flux = make([]float64, n)
	out.Err = make([]float64, n)
	out.Quality = make([]int, n)
	for i := range model {
		e := sigma * math.Sqrt(model[i])
		out.Flux[i] = (model[i] + e*noise.normal()) * scale
		out.Err[i] = e * scale
		out.Star[i] *= scale
	}

	// 5. Defects: a few flagged rows, whose flux the flagged trouble really disturbed,
	//    and a few rows lost altogether.
	flags := stream("flags")
	for _, i := range distinctRows(flags, n, c.Flagged, nil) {
		switch flags.index(3) {
		case 0:
			out.Quality[i] = qualityPointing
			out.Flux[i] *= 1 - flags.between(0.003, 0.01)
		case 1:
			out.Quality[i] = qualityWheel
			out.Flux[i] *= 1 - flags.between(0.001, 0.004)
		default:
			out.Quality[i] = qualityScattered
			out.Flux[i] += flags.between(0.003, 0.012) * c.FluxUnit
		}
	}
	for _, i := range distinctRows(stream("missing"), n, c.Missing, out.Quality) {
		out.Flux[i] = math.NaN()
		out.Err[i] = math.NaN()
	}
	return out
}

// instant is the noise-free light at one instant u, relative to the unspotted host and
// its companion together: quiet is the spotted host plus the companion, total adds the
// planets' shadows on the host and the flares' light. With F_c/F_t = dilution,
//
//	total = (F_t·(spotted host × transits + flares) + F_c) / (F_t + F_c).
//
// A transit removes the same fraction of the host's light whatever the spots do (the
// spots are assumed off the transit chord).
func instant(s *star, dilution float64, spots []spot, flares []flare, planets []planet, u float64) (quiet, total float64) {
	b := brightness(s, spots, u)
	transit := 1.0
	for k := range planets {
		transit -= planets[k].deficit(s, u)
	}
	light := 0.0
	for k := range flares {
		light += flares[k].light(u)
	}
	return (b + dilution) / (1 + dilution), (b*transit + light + dilution) / (1 + dilution)
}

// drawGaps places c.ShortGaps interruptions inside the stretches, apart from each other
// and at least a day from any stretch edge, so each one is a visible hole in the data.
func drawGaps(r *splitmix64, c *campaign) []interval {
	var gaps []interval
	for len(gaps) < c.ShortGaps {
		st := c.Stretches[r.index(len(c.Stretches))]
		length := r.between(c.ShortGapMin, c.ShortGapMax)
		from := r.between(st.From+1, st.To-1-length)
		g := interval{from, from + length}
		if slices.ContainsFunc(gaps, func(o interval) bool { return g.From < o.To+1 && o.From < g.To+1 }) {
			continue
		}
		gaps = append(gaps, g)
	}
	slices.SortFunc(gaps, func(a, b interval) int { return cmp.Compare(a.From, b.From) })
	return gaps
}

// distinctRows draws k different row indices in [0, n), skipping rows where avoid is
// nonzero, in increasing order.
func distinctRows(r *splitmix64, n, k int, avoid []int) []int {
	var rows []int
	for len(rows) < k {
		i := r.index(n)
		if slices.Contains(rows, i) || (avoid != nil && avoid[i] != 0) {
			continue
		}
		rows = append(rows, i)
	}
	slices.Sort(rows)
	return rows
}

func inAny(t float64, ivs []interval) bool {
	return slices.ContainsFunc(ivs, func(iv interval) bool { return iv.contains(t) })
}

// median of finite values (the model has no NaN).
func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	m := len(s) / 2
	if len(s)%2 == 1 {
		return s[m]
	}
	return (s[m-1] + s[m]) / 2
}

// format says how a light curve is written: comment lines, column names, separator and
// decimals. The two files differ on purpose, so that reading both exercises a reader's
// handling of names, case, separators and units.
type format struct {
	Comments []string  // written as "# ..." lines before the column names
	Columns  [4]string // time, flux, error, quality
	Sep      string
	TimeDec  int // decimals of time
	FluxDec  int // decimals of flux and error
}

// encode writes the series as text, row by row, with strconv so the bytes depend on
// nothing but the numbers.
func (s *series) encode() []byte {
	f := &s.Campaign.Format
	var b []byte
	for _, line := range f.Comments {
		b = append(b, "# "...)
		b = append(b, line...)
		b = append(b, '\n')
	}
	for j, name := range f.Columns {
		if j > 0 {
			b = append(b, f.Sep...)
		}
		b = append(b, name...)
	}
	b = append(b, '\n')
	for i := range s.Time {
		b = strconv.AppendFloat(b, s.Time[i], 'f', f.TimeDec, 64)
		b = append(b, f.Sep...)
		b = strconv.AppendFloat(b, s.Flux[i], 'f', f.FluxDec, 64)
		b = append(b, f.Sep...)
		b = strconv.AppendFloat(b, s.Err[i], 'f', f.FluxDec, 64)
		b = append(b, f.Sep...)
		b = strconv.AppendInt(b, int64(s.Quality[i]), 10)
		b = append(b, '\n')
	}
	return b
}
