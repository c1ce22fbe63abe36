package completeness

import (
	"fmt"
	"math"

	"dipline/steps/internal/rng"
)

// Cell is one box of the completeness map: periods in [PeriodLo, PeriodHi) days and
// radius ratios k = Rp/R* in [RadiusLo, RadiusHi). A caller with planet radii converts
// them to k with the star's radius first.
type Cell struct {
	PeriodLo, PeriodHi float64
	RadiusLo, RadiusHi float64
}

// check reports whether the cell can be drawn from: positive, increasing edges and k < 1.
func (c Cell) check() error {
	ok := c.PeriodLo > 0 && c.PeriodHi > c.PeriodLo && !math.IsInf(c.PeriodHi, 0) &&
		c.RadiusLo > 0 && c.RadiusHi > c.RadiusLo && c.RadiusHi < 1
	if !ok {
		return fmt.Errorf("periods %v–%v d and radius ratios %v–%v; periods must be positive and finite, radius ratios between 0 and 1, each pair increasing",
			c.PeriodLo, c.PeriodHi, c.RadiusLo, c.RadiusHi)
	}
	return nil
}

// Drawn is one planet to inject: the index of its cell, its draw number within the cell
// (from 0) and the planet.
type Drawn struct {
	Cell, Index int
	Injection   Injection
}

// streamLabel names the random streams of Plan (rng.Derive).
const streamLabel = "completeness-injection"

// Plan draws perCell planets in every cell from seed. Draw j of a cell comes from its own
// stream, rng.Derive(seed, streamLabel + the cell's four bounds, j), so it depends on
// nothing but the seed, the cell's bounds and j: raising perCell keeps every earlier draw,
// adding cells or moving them in the list keeps every other cell's draws, and the result
// is ordered draw by draw (draw 0 of every cell, then draw 1, …), so the longer plan
// begins with the shorter one.
//
// Each draw takes, in this order from its stream:
//   - the period log-uniform in [PeriodLo, PeriodHi) (equal numbers per factor of period,
//     the usual prior of occurrence studies);
//   - the radius ratio log-uniform in [RadiusLo, RadiusHi) (likewise);
//   - the epoch uniform over one period from the data start, epochSpan[0] + u·P, so the
//     first transit falls anywhere in the first period of the data;
//   - the impact parameter uniform in [0, 1 − k): grazing orbits (b ≥ 1 − k), whose depth
//     and shape differ from a full transit's, are left out; the map is the completeness of
//     full transits, and Summarise's transit probability is the matching one.
//
// epochSpan is the data's first and last time (days); the last only has to follow the first.
func Plan(cells []Cell, perCell int, seed uint64, epochSpan [2]float64) ([]Drawn, error) {
	if perCell < 0 || perCell > 1<<31-1 {
		return nil, fmt.Errorf("completeness: %d injections per cell; give a number from 0 to %d", perCell, 1<<31-1)
	}
	if !(epochSpan[1] > epochSpan[0]) || math.IsInf(epochSpan[0], 0) || math.IsInf(epochSpan[1], 0) {
		return nil, fmt.Errorf("completeness: data span %v to %v; it must be finite and increasing", epochSpan[0], epochSpan[1])
	}
	for c, cell := range cells {
		if err := cell.check(); err != nil {
			return nil, fmt.Errorf("completeness: cell %d: %w", c+1, err)
		}
	}
	out := make([]Drawn, 0, len(cells)*perCell)
	for j := 0; j < perCell; j++ {
		for c, cell := range cells {
			r := rng.Derive(seed, cellStream(cell), uint64(j))
			out = append(out, Drawn{Cell: c, Index: j, Injection: draw(r, cell, epochSpan[0])})
		}
	}
	return out, nil
}

// cellStream labels a cell's stream by its bounds, written exactly.
func cellStream(c Cell) string {
	return fmt.Sprintf("%s/%x/%x/%x/%x", streamLabel, math.Float64bits(c.PeriodLo), math.Float64bits(c.PeriodHi),
		math.Float64bits(c.RadiusLo), math.Float64bits(c.RadiusHi))
}

// draw takes one planet from r inside cell (see Plan for the distributions).
func draw(r *rng.Stream, cell Cell, start float64) Injection {
	p := logUniform(r.Float64(), cell.PeriodLo, cell.PeriodHi)
	k := logUniform(r.Float64(), cell.RadiusLo, cell.RadiusHi)
	return Injection{
		Period:      p,
		RadiusRatio: k,
		Epoch:       start + r.Float64()*p,
		Impact:      r.Float64() * (1 - k),
	}
}

// logUniform maps u in (0, 1) to lo·(hi/lo)^u, kept inside [lo, hi) against rounding.
func logUniform(u, lo, hi float64) float64 {
	v := lo * math.Exp(u*math.Log(hi/lo))
	if v >= hi {
		v = math.Nextafter(hi, lo)
	}
	return math.Max(v, lo)
}

// Grid returns the cells between consecutive period edges (days) and radius-ratio edges,
// period by period: cell i·(len(radii)−1) + j spans periods[i]–periods[i+1] and
// radii[j]–radii[j+1]. Edges must be positive and strictly increasing, radius ratios
// below 1, and each list at least two long.
func Grid(periods, radii []float64) ([]Cell, error) {
	if len(periods) < 2 || len(radii) < 2 {
		return nil, fmt.Errorf("completeness: %d period edges and %d radius edges; each needs at least two", len(periods), len(radii))
	}
	var cells []Cell
	for i := 0; i+1 < len(periods); i++ {
		for j := 0; j+1 < len(radii); j++ {
			c := Cell{PeriodLo: periods[i], PeriodHi: periods[i+1], RadiusLo: radii[j], RadiusHi: radii[j+1]}
			if err := c.check(); err != nil {
				return nil, fmt.Errorf("completeness: edges %d and %d: %w", i+1, j+1, err)
			}
			cells = append(cells, c)
		}
	}
	return cells, nil
}
