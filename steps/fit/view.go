package fit

import (
	"errors"
	"fmt"
	"math"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
	"dipline/steps/internal/transit"
)

// The fit's model seen again after a run, for the presentation: the same points, segments,
// sub-exposures and layout as Run built, evaluated at rows of the artifact (which hold the
// documented parameters) with the model code the likelihood uses (Model.curve, geometry).

// viewModel rebuilds the model of a finished fit from the light curve and the signals it
// read: the points within the artifact's window of the predicted transits, each segment
// with its band and sub-exposures, and the full vector's layout. Priors are not needed: a
// row of the artifact gives every entry's value. It refuses a light curve or signals that
// do not give the fit's own segments and reference epochs.
func viewModel(lc *lightcurve.LightCurve, sigs []signals.Signal, c *Config, a *Artifact) (*Model, error) {
	np := a.Planets()
	if np == 0 || len(sigs) < np {
		return nil, fmt.Errorf("fit: the result has %d planet(s) and the search %d signal(s)", np, len(sigs))
	}
	o := Options{Signals: sigs[:np], Window: a.Window, Supersample: c.Supersample, Jitter: c.Jitter,
		Eccentric: c.Eccentric, Limb: c.Limb}
	d, err := draftModel(lc, o)
	if err != nil {
		return nil, err
	}
	same := len(d.art.Segments) == len(a.Segments) && len(d.art.Reference) == len(a.Reference)
	for i := 0; same && i < len(a.Segments); i++ {
		g, w := d.art.Segments[i], a.Segments[i]
		same = g.ID == w.ID && g.Points == w.Points && g.NSub == w.NSub
	}
	for j := 0; same && j < len(a.Reference); j++ {
		same = d.art.Reference[j] == a.Reference[j]
	}
	if !same {
		return nil, errors.New("fit: the light curve and signals given do not select the points the fit used")
	}
	return d.m, nil
}

// rowReader turns rows of an artifact into full parameter vectors of a model.
type rowReader struct {
	m    *Model
	cols []int // per full entry, its column in the artifact; −1 when it has none
}

// newRowReader matches the model's entries to the artifact's columns by name. An entry
// without a column must be one the artifact leaves out because it is 0: a circular orbit's
// √e cos ω, √e sin ω, or the dilution when it was not fitted.
func newRowReader(m *Model, a *Artifact) (rowReader, error) {
	lay := m.layout()
	r := rowReader{m: m, cols: make([]int, len(m.params))}
	for i, p := range m.params {
		r.cols[i] = a.column(p.name)
		if r.cols[i] < 0 && !lay.eccentricity(i) && i != lay.Dilution() {
			return rowReader{}, fmt.Errorf("fit: the result has no column %q", p.name)
		}
	}
	return r, nil
}

// full returns the full vector of an artifact row, in the model's own coordinates after
// Model.physical: k, b, q1, q2 as documented, the density as its log10.
func (r rowReader) full(row []float64) []float64 {
	out := make([]float64, len(r.cols))
	for i, c := range r.cols {
		if c >= 0 {
			out[i] = row[c]
		}
	}
	return out
}

// state is the model at one full vector: the vector, each planet's orbit and each band's
// limb darkening.
type state struct {
	full []float64
	orb  []orbit
	u    [][2]float64
}

// stateOf is the model's state at a full vector in its own coordinates (Model.at without
// the coordinate change and the priors), or false when no planet can transit there.
func (m *Model) stateOf(full []float64) (state, bool) {
	rho := m.density(full)
	s := state{full: full, orb: make([]orbit, m.planets), u: make([][2]float64, len(m.bands))}
	for j := range s.orb {
		o, ok := m.geometry(full, j, rho)
		if !ok {
			return state{}, false
		}
		s.orb[j] = o
	}
	lay := m.layout()
	for i := range s.u {
		s.u[i][0], s.u[i][1] = transit.QuadraticFromKipping(full[lay.Q1(i)], full[lay.Q2(i)])
	}
	return s, true
}

// withPlanets is s with the planets for which keep(j) is false removed (their k set to 0,
// for which transit.Flux is 1).
func (m *Model) withPlanets(s state, keep func(j int) bool) state {
	full := append([]float64(nil), s.full...)
	lay := m.layout()
	for j := 0; j < m.planets; j++ {
		if !keep(j) {
			full[lay.K(j)] = 0
		}
	}
	s.full = full
	return s
}

// curveOf writes into out the model of segment sd at times t for state s, integrated over
// the segment's exposure as the likelihood integrates it (Model.curve).
func (m *Model) curveOf(out, t []float64, sd *segData, s state, sc *curveScratch) []float64 {
	if len(out) < len(t) {
		out = make([]float64, len(t))
	}
	out = out[:len(t)]
	if len(t) > 0 {
		m.curve(out, t, sd, s.full, s.orb, s.u[sd.band], sc)
	}
	return out
}

// scaleOf is segment sd's flux normalisation at model values mod: B/A, the maximum of the
// scale the likelihood marginalises (as residualsAt takes it).
func scaleOf(sd *segData, mod []float64) float64 {
	var A, B float64
	for i, mi := range mod {
		A += mi * mi / sd.v[i]
		B += sd.f[i] * mi / sd.v[i]
	}
	if !(A > 0) {
		return 1
	}
	return B / A
}

// jitterOf is the median jitter (relative flux) of segment s over the artifact's draws, 0
// when the fit has none.
func (m *Model) jitterOf(a *Artifact, s int) float64 {
	if !m.jitter {
		return 0
	}
	col := a.Column(m.params[m.layout().Jitter(s)].name)
	if len(col) == 0 {
		return 0
	}
	_, mid, _ := quantiles(col)
	return math.Exp(mid)
}
