package vet

import (
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/steptest"
)

// TestOneRowPerCheck: the golden case (two signals, every check run) shows one row per
// check of each signal, in the artifact's order and words, none left out.
func TestOneRowPerCheck(t *testing.T) {
	a := fixture(t)
	p, err := steps.PresentationOf(New(), steptest.MustConfig(New(), block(nil)), a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	tab := p.Panels[0].Table
	i := 0
	for _, s := range a.Signals {
		for _, test := range s.Tests {
			if i >= len(tab.Rows) {
				t.Fatalf("the table has %d rows, fewer than the checks", len(tab.Rows))
			}
			row := tab.Rows[i]
			i++
			if !strings.HasPrefix(row[0], s.Name) || row[1] != title(test.Name) || row[2] != test.Verdict || row[4] != test.Threshold || row[5] != test.Reason {
				t.Errorf("row %d %q does not state %s's %s as the artifact does", i, row, s.Name, test.Name)
			}
			if len(test.Figures) > 0 && row[3] == "—" {
				t.Errorf("row %d: %s's %s has figures but shows no measured value", i, s.Name, test.Name)
			}
		}
	}
	if i != len(tab.Rows) {
		t.Errorf("%d rows for %d checks", len(tab.Rows), i)
	}
	if !strings.Contains(p.Panels[0].Caption, "does not replace") {
		t.Errorf("caption %q lacks the validation caution", p.Panels[0].Caption)
	}
}

// TestOddEvenPlotShowsTheCheckedDepths: a plot per signal whose odd/even check ran, its
// points the check's two depths with their errors, and the same numbers in odd_even.
func TestOddEvenPlotShowsTheCheckedDepths(t *testing.T) {
	a := fixture(t)
	p, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Panels) != 2 || p.Panels[1].Title != "Odd and even depths" {
		t.Fatalf("want the table and the odd/even panel, got %d panels", len(p.Panels))
	}
	plots := p.Panels[1].Plots
	if len(plots) != len(a.Signals) {
		t.Fatalf("%d plots for %d signals", len(plots), len(a.Signals))
	}
	for i, s := range a.Signals {
		even := figure(t, a, s.Name+".odd_even.even_depth")
		odd := figure(t, a, s.Name+".odd_even.odd_depth")
		l := plots[i].Layers[0]
		if l.Style != steps.ErrorBars || l.Y[0] != even.Value || l.Y[1] != odd.Value ||
			l.YHi[0] != even.Value+even.Sigma || l.YLo[1] != odd.Value-odd.Sigma {
			t.Errorf("%s: layer %+v, want even %v ± %v and odd %v ± %v", s.Name, l, even.Value, even.Sigma, odd.Value, odd.Sigma)
		}
		if d := p.Data[0].Series[2].Values; d[2*i] != even.Value || d[2*i+1] != odd.Value {
			t.Errorf("%s: odd_even data %v", s.Name, d)
		}
	}
}

// TestChecksNotRunKeepTheirRow: a check that could not run stays in the table with its
// reason, and a signal without an odd/even result gets no plot.
func TestChecksNotRunKeepTheirRow(t *testing.T) {
	a := &Artifact{Signals: []Signal{{Name: "signal1", Tests: []Test{
		notRun("odd_even", "the light curve has 1 even- and 0 odd-numbered transits with data; both are needed"),
		{Name: "radius", Verdict: steps.VerdictDisagree, Threshold: "2 R_jup", Reason: "too big",
			Figures: []steps.Figure{{Name: "signal1.radius.radius_jup", Value: 2.54, Sigma: 0.123, Unit: "R_jup"}}},
	}}}}
	p, err := Kind{}.Present(nil, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	rows := p.Panels[0].Table.Rows
	if len(rows) != 2 || rows[0][2] != steps.VerdictNotRun || !strings.Contains(rows[0][5], "both are needed") {
		t.Fatalf("rows %q", rows)
	}
	// 2.54 ± 0.123: two figures of the error, 0.12, so two decimals.
	if rows[1][3] != "radius jup 2.54 ± 0.12 R_jup" {
		t.Errorf("measured %q", rows[1][3])
	}
	if len(p.Panels) != 1 || len(p.Data) != 0 {
		t.Errorf("a check not run gets a plot: %d panels", len(p.Panels))
	}
}
