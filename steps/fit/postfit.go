package fit

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"dipline/steps"
	"dipline/steps/fit/timing"
	"dipline/steps/internal/rednoise"
	"dipline/steps/internal/transit"
)

// Noise and timing checks made at the best fit: the residuals' time-averaging β factor
// (Pont, Zucker & Queloz 2006) and per-transit mid-times with their O−C against a linear
// ephemeris. Both use the model of this package at a fixed parameter vector; the numerics
// are in steps/internal/rednoise and steps/fit/timing.

// minBetaWidth is the narrowest bin of the β factor: ten minutes, finer than any transit
// feature worth binning (common practice is 10 min to about a transit duration).
const minBetaWidth = 10.0 / 1440

// fullAt returns the full parameter vector in the model's coordinates, the orbits and the
// limb darkening per band at the sampled vector x, or false when x is outside the prior.
func (m *Model) fullAt(x []float64) (full []float64, orb []orbit, u [][2]float64, ok bool) {
	full = m.expand(make([]float64, len(m.params)), x)
	pt, ok := m.at(full, 0)
	if !ok {
		return nil, nil, nil, false
	}
	return full, pt.orb[:m.planets], pt.u[:len(m.bands)], true
}

// residualsAt returns, per segment, the residuals f − c·model at the sampled vector x, c
// being the segment's best flux normalisation B/A (the marginalised scale's maximum); full,
// orb and u are fullAt's for x.
func (m *Model) residualsAt(full []float64, orb []orbit, u [][2]float64) [][]float64 {
	ws := m.workspace()
	defer m.scratch.Put(ws)
	dil := full[m.layout().Dilution()]
	out := make([][]float64, len(m.segs))
	for s := range m.segs {
		sd := &m.segs[s]
		mod := m.model(ws, sd, full, orb, u[sd.band][0], u[sd.band][1], dil)
		var A, B float64
		for i, mi := range mod {
			A += mi * mi / sd.v[i]
			B += sd.f[i] * mi / sd.v[i]
		}
		c := B / A
		r := make([]float64, len(mod))
		for i, mi := range mod {
			r[i] = sd.f[i] - c*mi
		}
		out[s] = r
	}
	return out
}

// beta is the β factor of the residuals at x over all segments, with bins from ten minutes
// to the longest total duration of the planets at x.
func (m *Model) beta(x []float64) (float64, error) {
	full, orb, u, ok := m.fullAt(x)
	if !ok {
		return 0, errors.New("the best fit lies outside the prior")
	}
	res := m.residualsAt(full, orb, u)
	longest := 0.0
	lay := m.layout()
	for j := range orb {
		longest = math.Max(longest, 2*orb[j].reach*full[lay.Period(j)])
	}
	var time, resid []float64
	var starts []int
	for s, sd := range m.segs {
		starts = append(starts, len(time))
		time = append(time, sd.t...)
		resid = append(resid, res[s]...)
	}
	b, _, err := rednoise.Beta(time, resid, starts, minBetaWidth, math.Max(longest, 2*minBetaWidth))
	return b, err
}

// curveScratch is the working space of curve.
type curveScratch struct{ fine, z, fl, sum []float64 }

// curve writes into out the model of segment sd at times t for the full vector full:
// 1 + Σ_planets (flux − 1), each point integrated over the segment's exposure by its
// sub-exposures, then diluted as (F + D)/(1 + D). It evaluates directly (no pruning, no
// table), reusing sc.
func (m *Model) curve(out, t []float64, sd *segData, full []float64, orb []orbit, u [2]float64, sc *curveScratch) {
	n := sd.nsub
	need := len(t) * n
	if cap(sc.fine) < need {
		sc.fine, sc.z, sc.fl, sc.sum = make([]float64, need), make([]float64, need), make([]float64, need), make([]float64, need)
	}
	fine := transit.SubexposureTimes(sc.fine[:need], t, 2*sd.half, n)
	sum := sc.sum[:need]
	for i := range sum {
		sum[i] = 1
	}
	lay := m.layout()
	for j := 0; j < m.planets; j++ {
		z := m.separation(sc.z[:need], fine, full, j, orb[j])
		for i, v := range transit.Flux(sc.fl[:need], z, full[lay.K(j)], u[0], u[1]) {
			sum[i] += v - 1
		}
	}
	dil := full[lay.Dilution()]
	for i := range t {
		s := 0.0
		for _, v := range sum[i*n : (i+1)*n] {
			s += v
		}
		out[i] = (s/float64(n) + dil) / (1 + dil)
	}
}

// PlanetTimes holds one planet's measured transit times and their linear ephemeris.
type PlanetTimes struct {
	Times     []timing.TransitTime // epochs counted from the planet's reference transit
	Ephemeris timing.Ephemeris
	Err       string // why no ephemeris could be fitted, when not empty
}

// transitTimes measures each transit's mid-time of every planet at the sampled vector x
// with the shape held fixed: the other planets stay at x, each point's error is its stated
// error with the jitter at x added in quadrature, and points within window search
// durations of the predicted mid-time are used. Transits split between segments are timed
// on the segment holding most of their points.
func (m *Model) transitTimes(x []float64, o Options) ([]PlanetTimes, error) {
	full, orb, u, ok := m.fullAt(x)
	if !ok {
		return nil, errors.New("the best fit lies outside the prior")
	}
	out := make([]PlanetTimes, m.planets)
	for j := 0; j < m.planets; j++ {
		half := o.Window * o.Signals[j].Duration
		t14 := 2 * orb[j].reach * full[m.layout().Period(j)]
		trs := m.transits(full, orb, u, j, half)
		if len(trs) == 0 {
			out[j].Err = "no transit has points in the fitted windows"
			continue
		}
		// At 30-min cadence a 1.5-hour transit holds three points; two inside T14 and three
		// outside still fix a mid-time when the shape is held (the smeared ingress and
		// egress carry most of the timing information).
		tt, err := timing.Measure(trs, timing.Options{Duration: t14, Parallel: o.Parallel, MinInTransit: 2, MinOutOfTransit: 3})
		if err != nil {
			if errors.Is(err, timing.ErrInput) {
				return nil, steps.BadInputf("transit times of planet %s: %v", planetNames[j], err)
			}
			return nil, err
		}
		out[j].Times = tt
		eph, err := timing.FitEphemeris(tt)
		if err != nil {
			out[j].Err = fmt.Sprintf("no linear ephemeris: %v", err)
			continue
		}
		out[j].Ephemeris = eph
	}
	return out, nil
}

// transits gathers planet j's transits for timing at the full vector full (orb and u as
// fullAt gives them): per epoch, in order, the points within half days of the predicted
// mid-time on the segment holding most of them, and the model of that segment with
// planet j's mid-times shifted by dt.
func (m *Model) transits(full []float64, orb []orbit, u [][2]float64, j int, half float64) []timing.Transit {
	lay := m.layout()
	period, t0 := full[lay.Period(j)], full[lay.T0(j)]
	type key struct {
		seg int
		n   int64
	}
	groups := map[key][]int{}
	count := map[int64]map[int]int{}
	var epochs []int64
	for s := range m.segs {
		sd := &m.segs[s]
		for i, t := range sd.t {
			n := int64(math.Round((t - t0) / period))
			if math.Abs(t-t0-float64(n)*period) > half {
				continue
			}
			if count[n] == nil {
				count[n] = map[int]int{}
				epochs = append(epochs, n)
			}
			count[n][s]++
			groups[key{s, n}] = append(groups[key{s, n}], i)
		}
	}
	slices.Sort(epochs)
	var trs []timing.Transit
	for _, n := range epochs {
		best, most := -1, 0
		for s := range m.segs {
			if c := count[n][s]; c > most {
				best, most = s, c
			}
		}
		sd := &m.segs[best]
		idx := groups[key{best, n}]
		tr := timing.Transit{Epoch: n, Predicted: t0 + float64(n)*period}
		js := 0.0
		if m.jitter {
			js = math.Exp(full[lay.Jitter(best)])
		}
		for _, i := range idx {
			tr.Time = append(tr.Time, sd.t[i])
			tr.Flux = append(tr.Flux, sd.f[i])
			tr.Err = append(tr.Err, math.Sqrt(sd.v[i]+js*js))
		}
		shifted := append([]float64(nil), full...)
		sc := &curveScratch{}
		uu := u[sd.band]
		tr.Model = func(dt float64, t, out []float64) {
			shifted[lay.T0(j)] = t0 + dt
			m.curve(out, t, sd, shifted, orb, uu, sc)
		}
		trs = append(trs, tr)
	}
	return trs
}
