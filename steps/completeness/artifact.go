package completeness

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"dipline/steps"
	"dipline/steps/derive"
	"dipline/steps/fit"
	"dipline/steps/internal/astro"
	"dipline/steps/internal/codec"
	"dipline/steps/internal/proportion"
	"dipline/steps/search/bls"
	"dipline/steps/units"
)

// Result is the completeness step's artifact: the map, what it was made around, the
// comparison with full-range searches, and the planets placed on it with the occurrence
// they imply.
type Result struct {
	Host Host
	// PeriodEdges (days) and RadiusEdges (radius ratios) bound the cells; cell
	// i·(len(RadiusEdges)−1) + j spans period edges i, i+1 and radius edges j, j+1.
	PeriodEdges, RadiusEdges []float64
	PerCell                  int
	Window                   float64
	Cells                    []CellSummary
	// Check compares the window's searches with full-range ones of the same injections;
	// nil when none were asked for. It is derived from Searches (fullCheck).
	Check *FullCheck
	// Detections are the workflow's own planets, placed on the map.
	Detections []Detection
	// Occurrence holds per cell the planets per star the detections imply.
	Occurrence []CellOccurrence
	// Searches lists every search of an injected planet, in the order drawn: each planet
	// searched in its window (or over the whole range when Window is 0), then those also
	// searched over the whole range for Check.
	Searches []Searched
}

// Searched is one search of one injected planet: the planet with its cell and draw, the
// window of periods searched (0: the whole range) and what became of it.
type Searched struct {
	Drawn
	Window float64
	Outcome
}

// FullCheck is the comparison of windowed and full-range searches of the same injections.
type FullCheck struct {
	// Checked injections; Windowed and Full count those each recovered; OnlyFull those
	// the full search recovered and the window missed, OnlyWindowed the reverse.
	Checked, Windowed, Full, OnlyFull, OnlyWindowed int
}

// Detection is one of the workflow's planets on the map.
type Detection struct {
	Name                string
	Period, RadiusRatio float64
	// Cell is the index of the cell it falls in, −1 when outside the map.
	Cell int
	// Efficiency is its detection efficiency: its cell's recovered fraction times its own
	// geometric probability of a full transit; NaN outside the map.
	Efficiency float64
}

// CellOccurrence is the occurrence a cell's detections imply for this one star.
type CellOccurrence struct {
	Detections int
	// Rate is Σ 1/efficiency over the detections (planets per star), 0 with none; Lower
	// and Upper its ends from Gehrels' single-sided S = 1 limits (with none, Upper is the
	// limit from a count of zero at the cell's mean efficiency). NaN when an efficiency is
	// zero (a planet found where no injection was).
	Rate, Lower, Upper float64
	// Efficiency is the cell's mean detection efficiency: recovered fraction × transit
	// probability.
	Efficiency float64
	Caution    string
}

// fullCheck counts what the window and the full search each recovered among the planets
// searched both ways: the searches past the planned ones (PerCell per cell) are the full
// searches of the first planets drawn. nil when there are none.
func (r *Result) fullCheck() *FullCheck {
	planned := r.PerCell * len(r.Cells)
	if len(r.Searches) <= planned {
		return nil
	}
	windowed, full := r.Searches[:len(r.Searches)-planned], r.Searches[planned:]
	c := &FullCheck{Checked: len(full)}
	for i := range full {
		w, f := windowed[i].Recovered, full[i].Recovered
		if w {
			c.Windowed++
		}
		if f {
			c.Full++
		}
		if f && !w {
			c.OnlyFull++
		}
		if w && !f {
			c.OnlyWindowed++
		}
	}
	return c
}

// detectionsOf places the fit's planets on the map: periods from the fit's posterior
// medians, radius ratios from the derive step (corrected for dilution) when given, else
// from the fit.
func detectionsOf(in steps.Inputs, h Host) []Detection {
	fa, _ := in.Ref("fit").(*fit.Artifact)
	if fa == nil {
		return nil
	}
	da, _ := in.Ref("planets").(*derive.Artifact)
	var out []Detection
	for _, name := range fa.PlanetNames() {
		p, _ := fa.Summary(name + ".period")
		k, _ := fa.Summary(name + ".k")
		if da != nil {
			if q := da.Quantity(name, "radius_ratio"); q != nil && q.Median > 0 {
				k = q.Median
			}
		}
		out = append(out, Detection{Name: name, Period: p, RadiusRatio: k, Cell: -1, Efficiency: math.NaN()})
	}
	return out
}

// cellOf returns the index of the cell holding period p and radius ratio k, or −1.
func (r *Result) cellOf(p, k float64) int {
	i, j := bin(r.PeriodEdges, p), bin(r.RadiusEdges, k)
	if i < 0 || j < 0 {
		return -1
	}
	return i*(len(r.RadiusEdges)-1) + j
}

// bin is the index of the interval of edges holding x, or −1.
func bin(edges []float64, x float64) int {
	for i := 0; i+1 < len(edges); i++ {
		if x >= edges[i] && x < edges[i+1] {
			return i
		}
	}
	return -1
}

// occurrence places the detections in their cells and works out each cell's rate for
// this one star by inverse detection efficiency (proportion.InverseEfficiency, with
// Gehrels' S = 1 limits).
func (r *Result) occurrence() {
	r.Occurrence = make([]CellOccurrence, len(r.Cells))
	effs := make([][]float64, len(r.Cells))
	for d := range r.Detections {
		det := &r.Detections[d]
		det.Cell = r.cellOf(det.Period, det.RadiusRatio)
		if det.Cell < 0 {
			continue
		}
		aR := bls.ScaledAxis(det.Period, r.Host.Density)
		p, err := astro.TransitProbability(aR, det.RadiusRatio, 0, 0, false)
		if err != nil {
			continue
		}
		det.Efficiency = r.Cells[det.Cell].Fraction * p
		effs[det.Cell] = append(effs[det.Cell], det.Efficiency)
	}
	for i, c := range r.Cells {
		o := &r.Occurrence[i]
		o.Detections = len(effs[i])
		o.Efficiency = c.Fraction * c.TransitProbability
		if o.Detections == 0 {
			o.Rate, o.Lower = 0, 0
			o.Upper = math.NaN()
			if lim, err := proportion.NoDetectionLimit(o.Efficiency, 1, 1); err == nil {
				o.Upper = lim
			}
			continue
		}
		occ, err := proportion.InverseEfficiency(effs[i], 1, 1)
		if err != nil {
			o.Rate, o.Lower, o.Upper = math.NaN(), math.NaN(), math.NaN()
			o.Caution = "a planet lies where none of the injections was recovered, so its detection efficiency is zero and no rate follows"
			continue
		}
		o.Rate, o.Lower, o.Upper = occ.Rate, occ.Limits.Lower, occ.Limits.Upper
		if c.Fraction < lowCompleteness {
			o.Caution = fmt.Sprintf("a planet lies where the search recovers only %.0f %% of the injections; inverse detection efficiency is biased where completeness is low (Foreman-Mackey, Hogg & Morton 2014, ApJ 795, 64), so its rate rests on one uncertain weight", 100*c.Fraction)
		}
	}
}

// lowCompleteness is the recovered share below which a cell's rate is cautioned. The
// caution is about the search's completeness alone: the geometric transit probability,
// small for every transiting planet beyond a few days, is known well and adds no bias
// (our reading of Foreman-Mackey, Hogg & Morton 2014; the level is our choice, as in
// proportion's own caution).
const lowCompleteness = 0.1

// cellName is cell i's part of a figure's name: "p2_r3" for the second period and third
// radius interval.
func (r *Result) cellName(i int) string {
	nr := len(r.RadiusEdges) - 1
	return fmt.Sprintf("p%d_r%d", i/nr+1, i%nr+1)
}

// cellWords says where cell i lies: "1.2–3.4 d, k 0.012–0.017 (1.1–1.6 R⊕)".
func (r *Result) cellWords(i int) string {
	c := r.Cells[i].Cell
	return fmt.Sprintf("%.3g–%.3g d, %s", c.PeriodLo, c.PeriodHi, r.radiusWords(i%r.rows()))
}

// earth turns a radius ratio into Earth radii around the host (NaN without its radius).
func (r *Result) earth(k float64) float64 {
	if !(r.Host.Radius > 0) {
		return math.NaN()
	}
	return k * r.Host.Radius / units.Radius.Units["R_earth"]
}

// Figures lists the totals, the comparison with full-range searches and, per cell, the
// recovered fraction and the transit probability, and for a cell holding one of the
// workflow's planets the detections and the occurrence (a cell without is 0 planets per
// star, with the upper limit the map's data give).
func (r *Result) Figures() []steps.Figure {
	injected, recovered, harmonics := 0, 0, 0
	for _, c := range r.Cells {
		injected += c.Injected
		recovered += c.Recovered
		harmonics += c.Harmonic
	}
	figs := []steps.Figure{
		{Name: "injections", Value: float64(injected), Doc: fmt.Sprintf("planets injected, %d per cell, each searched %s", r.PerCell, r.searchWords())},
		{Name: "recovered", Value: float64(recovered), Doc: "injections whose period (within the box search's resolution) and epoch (within half a transit) the search found"},
		{Name: "harmonics", Value: float64(harmonics), Doc: "injections found only at half or twice their period, not counted as recovered"},
	}
	if c := r.Check; c != nil {
		figs = append(figs,
			steps.Figure{Name: "full_grid.checked", Value: float64(c.Checked), Doc: "injections searched both in the window and over the whole range"},
			steps.Figure{Name: "full_grid.recovered", Value: float64(c.Full), Doc: "of those, recovered by the search over the whole range"},
			steps.Figure{Name: "full_grid.windowed_recovered", Value: float64(c.Windowed), Doc: "of those, recovered by the windowed search"},
			steps.Figure{Name: "full_grid.missed_by_window", Value: float64(c.OnlyFull), Doc: "recovered over the whole range but not in the window"},
			steps.Figure{Name: "full_grid.only_in_window", Value: float64(c.OnlyWindowed), Doc: "recovered in the window but not over the whole range (there a stronger peak elsewhere, or the star's own signal, came first)"},
		)
	}
	for i, c := range r.Cells {
		p, where := r.cellName(i)+".", r.cellWords(i)
		frac := steps.Figure{Name: p + "recovered", Value: c.Fraction, Unit: "",
			Doc: fmt.Sprintf("share of the %d injections at %s recovered; interval: Jeffreys, 68.3 %%", c.Injected, where)}
		if !math.IsNaN(c.Fraction) {
			frac.Lower, frac.Upper = c.Fraction-c.Interval.Lower, c.Interval.Upper-c.Fraction
		}
		o := r.Occurrence[i]
		occ := steps.Figure{Name: p + "occurrence", Value: o.Rate,
			Doc:    fmt.Sprintf("planets per star at %s implied by this star's %d detection(s), by inverse detection efficiency; interval from Gehrels' single-sided S = 1 limits", where, o.Detections),
			Reason: "a planet lies where no injection was recovered"}
		if !math.IsNaN(o.Rate) {
			occ.Lower, occ.Upper = o.Rate-o.Lower, o.Upper-o.Rate
		}
		figs = append(figs, frac,
			steps.Figure{Name: p + "transit_probability", Value: c.TransitProbability,
				Doc: "geometric probability of a full transit at the cell's mean period and radius ratio (circular orbit); times the share recovered, the cell's detection efficiency"})
		if o.Detections > 0 {
			figs = append(figs,
				steps.Figure{Name: p + "detections", Value: float64(o.Detections), Doc: "the workflow's planets in this cell"},
				occ)
		}
	}
	return figs
}

// searchWords says how each injection was searched.
func (r *Result) searchWords() string {
	if r.Window == 0 {
		return "over the search's whole period range"
	}
	return fmt.Sprintf("over periods within a factor %.3g of its own (peaks judged against the whole range's noise)", 1+r.Window)
}

// Cautions says what the map cannot carry.
func (r *Result) Cautions() []string {
	var out []string
	if c := r.Check; c != nil && c.OnlyFull > 0 {
		out = append(out, fmt.Sprintf("The windowed search missed %d of the %d checked injections that the search over the whole range found; the map is that much too pessimistic there.", c.OnlyFull, c.Checked))
	}
	if c := r.Check; c != nil && c.OnlyWindowed > 0 {
		out = append(out, fmt.Sprintf("The windowed search recovered %d of the %d checked injections that the search over the whole range did not (there a stronger peak, or the star's own signal, came first); the map is that much too optimistic there.", c.OnlyWindowed, c.Checked))
	}
	seen := map[string]bool{}
	for i, o := range r.Occurrence {
		if o.Caution != "" && !seen[o.Caution] {
			seen[o.Caution] = true
			out = append(out, fmt.Sprintf("Cell %s: %s.", r.cellName(i), strings.TrimSuffix(o.Caution, ".")))
		}
	}
	for _, d := range r.Detections {
		if d.Cell < 0 {
			out = append(out, fmt.Sprintf("Planet %s (%.4g d, radius ratio %.3g) lies outside the map, so it enters no occurrence; widen period_range or radius_range to take it in.", d.Name, d.Period, d.RadiusRatio))
		}
	}
	if len(r.Detections) > 0 {
		out = append(out, "An occurrence from one star is a loose estimate; a survey's merge adds its stars up. It assumes the injected planets stand for the real ones and treats the efficiencies as known; it supports, and does not replace, the scientist's own population analysis.")
	}
	return out
}

const (
	tag    = "completeness"
	format = 1
	// maxCellsDecoded bounds what a decoder accepts (maxCells² cells), and
	// maxSearchesDecoded the searches (every injection, each also checked over the whole
	// range).
	maxCellsDecoded    = maxCells * maxCells
	maxSearchesDecoded = 2 * maxCellsDecoded * maxPerCell
)

// Encode returns the canonical encoding.
func (r *Result) Encode() []byte {
	w := codec.NewWriter(tag, format)
	h := r.Host
	for _, x := range []float64{h.Density, h.Radius, h.U1, h.U2} {
		w.Float(x)
	}
	w.String(h.DensityFrom)
	w.String(h.LimbFrom)
	w.Floats(r.PeriodEdges)
	w.Floats(r.RadiusEdges)
	w.Int(int64(r.PerCell))
	w.Float(r.Window)
	w.Uint64(uint64(len(r.Cells)))
	for _, c := range r.Cells {
		w.Ints([]int{c.Injected, c.Recovered, c.Harmonic})
		w.Floats([]float64{c.Fraction, c.Interval.Lower, c.Interval.Upper, c.MeanPeriod, c.TransitProbability})
	}
	w.Uint64(uint64(len(r.Detections)))
	for _, d := range r.Detections {
		w.String(d.Name)
		w.Floats([]float64{d.Period, d.RadiusRatio})
	}
	w.Uint64(uint64(len(r.Searches)))
	for _, s := range r.Searches {
		inj := s.Injection
		w.Ints([]int{s.Cell, s.Index})
		w.Floats([]float64{inj.Period, inj.Epoch, inj.RadiusRatio, inj.Impact, s.Window, s.FoundPeriod, s.FoundEpoch, s.SDE})
		w.Bool(s.Recovered)
		w.Bool(s.Harmonic)
		w.Bool(s.Windowed)
	}
	return w.Bytes()
}

// Decode implements steps.Typed.
func (Kind) Decode(b []byte) (steps.Artifact, error) { return steps.Decoded(Decode(b)) }

// Decode reads an artifact back; the grid's cells and the occurrence are rebuilt from the
// edges and the detections. (The reader's error, which also counts bytes left over, is
// asked for only at the end; a short record reads as zeros before that, which the length
// checks on the way catch.)
func Decode(b []byte) (*Result, error) {
	rd := codec.NewReader(b, tag, format)
	r := &Result{}
	r.Host.Density, r.Host.Radius, r.Host.U1, r.Host.U2 = rd.Float(), rd.Float(), rd.Float(), rd.Float()
	r.Host.DensityFrom, r.Host.LimbFrom = rd.String(), rd.String()
	r.PeriodEdges, r.RadiusEdges = rd.Floats(), rd.Floats()
	r.PerCell, r.Window = int(rd.Int()), rd.Float()
	n := rd.Uint64()
	if n > maxCellsDecoded {
		return nil, fmt.Errorf("completeness: malformed result: %d cells", n)
	}
	cells, err := Grid(r.PeriodEdges, r.RadiusEdges)
	if err != nil || uint64(len(cells)) != n {
		return nil, fmt.Errorf("completeness: malformed result: %d cells for its edges (%v)", n, err)
	}
	for _, c := range cells {
		counts, vals := rd.Ints(), rd.Floats()
		if len(counts) != 3 || len(vals) != 5 {
			return nil, errors.Join(errors.New("completeness: malformed cell"), rd.Err())
		}
		r.Cells = append(r.Cells, CellSummary{Cell: c, Injected: counts[0], Recovered: counts[1], Harmonic: counts[2],
			Fraction: vals[0], Interval: proportion.Interval{Lower: vals[1], Upper: vals[2]}, MeanPeriod: vals[3], TransitProbability: vals[4]})
	}
	nd := rd.Uint64()
	if nd > 26 {
		return nil, errors.New("completeness: malformed result: too many planets")
	}
	for i := uint64(0); i < nd; i++ {
		name, v := rd.String(), rd.Floats()
		if len(v) != 2 {
			return nil, errors.Join(errors.New("completeness: malformed planet"), rd.Err())
		}
		r.Detections = append(r.Detections, Detection{Name: name, Period: v[0], RadiusRatio: v[1], Cell: -1, Efficiency: math.NaN()})
	}
	ns := rd.Uint64()
	if ns > maxSearchesDecoded {
		return nil, fmt.Errorf("completeness: malformed result: %d searches", ns)
	}
	for i := uint64(0); i < ns; i++ {
		ix, v := rd.Ints(), rd.Floats()
		rec, harm, win := rd.Bool(), rd.Bool(), rd.Bool()
		if len(ix) != 2 || len(v) != 8 {
			return nil, errors.Join(errors.New("completeness: malformed search"), rd.Err())
		}
		r.Searches = append(r.Searches, Searched{
			Drawn:   Drawn{Cell: ix[0], Index: ix[1], Injection: Injection{Period: v[0], Epoch: v[1], RadiusRatio: v[2], Impact: v[3]}},
			Window:  v[4],
			Outcome: Outcome{Recovered: rec, Harmonic: harm, Windowed: win, FoundPeriod: v[5], FoundEpoch: v[6], SDE: v[7]},
		})
	}
	if err := rd.Err(); err != nil {
		return nil, fmt.Errorf("completeness: %w", err)
	}
	if !(r.Host.Density > 0) || len(r.Searches) < r.PerCell*len(r.Cells) || len(r.Searches) > 2*r.PerCell*len(r.Cells) {
		return nil, errors.New("completeness: malformed result: no density, or searches that do not fit the grid")
	}
	r.Check = r.fullCheck()
	r.occurrence()
	return r, nil
}

// pieceKey names one injection searched with window, exactly: the piece's key within the
// step's parts.
func pieceKey(d Drawn, window float64) []byte {
	w := codec.NewWriter("injection", 1)
	inj := d.Injection
	for _, x := range []float64{inj.Period, inj.Epoch, inj.RadiusRatio, inj.Impact, window} {
		w.Float(x)
	}
	return w.Bytes()
}

func encodeOutcome(o Outcome) []byte {
	w := codec.NewWriter("outcome", 1)
	w.Bool(o.Recovered)
	w.Bool(o.Harmonic)
	w.Bool(o.Windowed)
	w.Floats([]float64{o.FoundPeriod, o.FoundEpoch, o.SDE})
	return w.Bytes()
}

func decodeOutcome(b []byte) (Outcome, error) {
	rd := codec.NewReader(b, "outcome", 1)
	o := Outcome{Recovered: rd.Bool(), Harmonic: rd.Bool(), Windowed: rd.Bool()}
	v := rd.Floats()
	if err := rd.Err(); err != nil || len(v) != 3 {
		return Outcome{}, errors.Join(errors.New("completeness: malformed piece"), err)
	}
	o.FoundPeriod, o.FoundEpoch, o.SDE = v[0], v[1], v[2]
	return o, nil
}
