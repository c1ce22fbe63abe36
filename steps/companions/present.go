package companions

import (
	"fmt"
	"math"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// What the companions step shows: the companions as the user's table gives them, one row
// per companion and band. Names and bands are kept as written; the report escapes them.

// Present shows the companions' table.
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	l, ok := art.(*List)
	if !ok || l == nil {
		return steps.Presentation{}, fmt.Errorf("companions: presenting a %T, not a companions result", art)
	}
	t := &steps.Table{Header: []string{"Companion", "Band", "Δmag", "Separation (arcsec)", "Radius (R☉)"}}
	for _, c := range l.Companions {
		t.Rows = append(t.Rows, []string{c.Name, c.Band, measured(c.DMag, c.DMagErr), given(c.Separation), measured(c.Radius, c.RadiusErr)})
	}
	t.Notes = []string{"Δmag is the companion's magnitude minus the target's in the band, with its error rounded to two significant figures; the separation is as given. A radius is shown when the table gives one; otherwise the dilution step estimates it."}
	caption := "Stars near the target whose light may fall in the photometric aperture, as listed in the companions table."
	if len(l.Companions) == 0 {
		caption = "The companions table lists no star near the target."
	}
	return steps.Presentation{Panels: []steps.Panel{{Title: "Companions", Caption: caption, Table: t}}}, nil
}

// measured writes a value with its error rounded by paper, "—" when absent (NaN).
func measured(v, sigma float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return paper.Symmetric(v, sigma).Text()
}

// given writes a value as given (shortest form), "—" when absent.
func given(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
