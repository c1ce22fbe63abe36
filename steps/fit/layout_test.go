package fit

import (
	"fmt"
	"testing"

	"dipline/steps/internal/lightcurve"
	"dipline/steps/internal/signals"
)

// setup is newProblem in the shape the tests take apart: the model, the artifact so far,
// the start point, the start scale per sampled parameter and the notes.
func setup(lc *lightcurve.LightCurve, o Options) (*Model, *Artifact, []float64, []float64, []string, error) {
	p, err := newProblem(lc, o)
	if err != nil {
		return nil, nil, nil, nil, nil, err
	}
	return p.m, p.art, p.x0, p.scale, p.notes, nil
}

// global, qIndex and jitterIndex are the tests' shorthand for the layout's offsets.
func (m *Model) global() int           { return m.layout().global() }
func (m *Model) qIndex(i int) int      { return m.layout().Q1(i) }
func (m *Model) jitterIndex(s int) int { return m.layout().Jitter(s) }

// The layout names each entry of the full vector where setup put it: the names below are
// the documented parameter names (Artifact.Names), so each index must land on its own.
func TestLayoutNamesEveryEntryOfTheVector(t *testing.T) {
	second := truth{period: 4.7, t0: 2.2, k: 0.06, b: 0.2, rho: hot.rho, q1: hot.q1, q2: hot.q2}
	lc := invented(hot, []span{{"1", "red", 0, 8, 10.0 / 1440, 0.36, 0.3}, {"2", "blue", 8, 16, 30.0 / 1440, 0.5, 0.3}}, 5, 0, 500e-6, 2)
	m, _, _, _, _, err := setup(lc, Options{Signals: []signals.Signal{start(hot), start(second)}, Window: defaultWindow,
		Supersample: true, Jitter: true, Eccentric: []string{"c"}})
	if err != nil {
		t.Fatal(err)
	}
	lay := m.layout()
	want := map[int]string{lay.Density(): "log10_star_density", lay.Dilution(): "dilution",
		lay.Q1(0): "q1[red]", lay.Q2(0): "q2[red]", lay.Q1(1): "q1[blue]", lay.Q2(1): "q2[blue]",
		lay.Jitter(0): "segment1.ln_jitter", lay.Jitter(1): "segment2.ln_jitter"}
	for j, pl := range []string{"b", "c"} {
		for i, name := range map[int]string{lay.Period(j): "period", lay.T0(j): "t0", lay.K(j): "k", lay.B(j): "b",
			lay.Secosw(j): "secosw", lay.Sesinw(j): "sesinw"} {
			want[i] = pl + "." + name
		}
	}
	t.Run("the entries tile the vector", func(t *testing.T) {
		if len(want) != len(m.params) {
			t.Errorf("the layout names %d distinct entries, the vector has %d", len(want), len(m.params))
		}
	})
	for i, name := range want {
		t.Run(fmt.Sprintf("entry %d is %s", i, name), func(t *testing.T) {
			if i >= len(m.params) || m.params[i].name != name {
				t.Errorf("entry %d is not %s", i, name)
			}
		})
	}
	t.Run("only the orbit shapes count as eccentricity entries", func(t *testing.T) {
		for i := range m.params {
			if got, is := lay.eccentricity(i), i == lay.Secosw(0) || i == lay.Sesinw(0) || i == lay.Secosw(1) || i == lay.Sesinw(1); got != is {
				t.Errorf("eccentricity(%d) = %v for %s", i, got, m.params[i].name)
			}
		}
	})
}
