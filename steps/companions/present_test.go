package companions

import (
	"math"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/stellar"
)

func TestCompanionsTableKeepsNamesAndRoundsDmag(t *testing.T) {
	l := &List{Companions: []stellar.Companion{
		{Name: "<b>B</b> & co", Band: "Ks", DMag: 1.52, DMagErr: 0.05, Separation: 0.41, Radius: 0.31, RadiusErr: 0.02},
		{Name: "C 2", Band: "i'", DMag: -0.2, DMagErr: 0, Separation: math.NaN(), Radius: math.NaN(), RadiusErr: math.NaN()},
	}}
	p, err := steps.PresentationOf(New(), &Config{}, l, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	rows := p.Panels[0].Table.Rows
	// 1.52 ± 0.05: two figures of the error, 0.050, so three decimals: 1.520 ± 0.050.
	want := [][]string{
		{"<b>B</b> & co", "Ks", "1.520 ± 0.050", "0.41", "0.310 ± 0.020"},
		{"C 2", "i'", "−0.2", "—", "—"},
	}
	for i := range want {
		for j := range want[i] {
			if rows[i][j] != want[i][j] {
				t.Errorf("row %d column %d: %q, want %q", i, j, rows[i][j], want[i][j])
			}
		}
	}
}

func TestNoCompanionsSaySo(t *testing.T) {
	p, err := Kind{}.Present(&Config{}, &List{}, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Panels[0].Table.Rows) != 0 || p.Panels[0].Caption != "The companions table lists no star near the target." {
		t.Errorf("got %+v", p.Panels[0])
	}
}
