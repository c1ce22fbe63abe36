package dilution

import (
	"math"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/stellar"
	"dipline/steps/internal/steptest"
)

// TestATablePerHypothesis: the target's table and one per companion, each value the draws
// rounded by paper, through the engine's adapter.
func TestATablePerHypothesis(t *testing.T) {
	b := comp("B & co", "survey-red", 1, 0.05)
	b.Radius, b.RadiusErr = 0.3, 0.01
	st := star{}.with(400, 0.5, math.NaN())
	r, _ := must(t, setup{set: map[string]any{"draws": 400}, lc: lightCurve("survey-red", false),
		comps: []stellar.Companion{b, comp("C", "survey-red", 2, 0.1)}, star: &st, seed: 7})
	cfg := steptest.MustConfig(New(), block(map[string]any{"draws": 400}))
	p, err := steps.PresentationOf(New(), cfg, r, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Panels) != len(r.Hypotheses) {
		t.Fatalf("%d panels for %d hypotheses", len(p.Panels), len(r.Hypotheses))
	}
	for k, h := range r.Hypotheses {
		panel := p.Panels[k]
		rows := panel.Table.Rows
		if want := paper.FromDraws(h.FluxRatio, paper.Bounds{}).Text(); rows[0][1] != want {
			t.Errorf("%s: flux ratio %q, want %q", h.Host, rows[0][1], want)
		}
		if want := paper.FromDraws(RadiusFactor(h), paper.Bounds{}).Text(); rows[1][1] != want {
			t.Errorf("%s: factor %q, want %q", h.Host, rows[1][1], want)
		}
		if k > 0 && !strings.Contains(panel.Caption, boundCaution) {
			t.Errorf("%s: caption %q lacks the bound-companion caution", h.Host, panel.Caption)
		}
	}
	if p.Panels[1].Title != "Planet on B & co" {
		t.Errorf("the name is not kept as written: %q", p.Panels[1].Title)
	}
	// B's radius over the target's: 0.3 ± 0.01 over exactly 0.5 is 0.6 ± 0.02.
	if got := p.Panels[1].Table.Rows[2]; got[0] != "Host radius / target radius" || !strings.HasPrefix(got[1], "0.60") {
		t.Errorf("B's radius row %q", got)
	}
}

func TestACorrectedCurveShowsNoDilution(t *testing.T) {
	r := &Result{Dilution: stellar.Dilution{Band: "red", AlreadyCorrected: true,
		Hypotheses: []stellar.Hypothesis{{Host: targetHost, FluxRatio: []float64{0, 0}, RadiusScale: []float64{1, 1}}}},
		RadiusSource: []string{"the target"}}
	p, err := Kind{}.Present(nil, r, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.Panels[0].Table.Rows[0][1]; got != "0" {
		t.Errorf("flux ratio %q, want 0", got)
	}
	if got := p.Panels[0].Table.Rows[1][1]; got != "1" {
		t.Errorf("factor %q, want 1", got)
	}
}
