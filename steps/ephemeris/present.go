package ephemeris

import (
	"fmt"
	"math"
	"strconv"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// Present shows per planet a table of the predicted transits and writes them as data
// ("transits_b").
func (Kind) Present(_ *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok {
		return steps.Presentation{}, fmt.Errorf("ephemeris: cannot present %T", art)
	}
	var pr steps.Presentation
	for i := range a.Planets {
		p := &a.Planets[i]
		pr.Panels = append(pr.Panels, steps.Panel{
			Title:   "Predicted transits of planet " + p.Name,
			Caption: caption(a, p),
			Table:   table(a, p),
		})
		pr.Data = append(pr.Data, data(p))
	}
	return pr, nil
}

// caption says where the ephemeris comes from and how the errors were found.
func caption(a *Artifact, p *Planet) string {
	src := fmt.Sprintf("from %d posterior draws of the fit, each transit's mid-time computed per draw (so the period's and mid-time's covariance is kept) and summarised by its median and half its 16–84 %% range", p.Draws)
	if p.Draws == 0 {
		src = "from the written period and epoch, taken as independent: σ² = σ²_epoch + n²σ²_period"
	}
	s := fmt.Sprintf("Transits with mid-times in BJD_TDB %.5f to %.5f, %s; transit numbers count from the ephemeris' reference.", a.From, a.To, src)
	if p.Scatter > 0 {
		s += fmt.Sprintf(" Every σ has the fit's O−C scatter (%.3g min RMS) added in quadrature.", p.Scatter*minutesPerDay)
	}
	return s
}

// table lists n, mid-time ± σ, σ in minutes, UTC (when known), ingress and egress.
func table(a *Artifact, p *Planet) *steps.Table {
	t := &steps.Table{Header: []string{"transit", "mid-time (BJD_TDB)", "σ (min)", "mid-time (UTC)", "ingress (BJD_TDB)", "egress (BJD_TDB)"}}
	for i, tr := range p.Transits {
		utc := isoUTC(tr.UTC)
		if utc == "" {
			utc = "—"
		}
		t.Rows = append(t.Rows, []string{
			strconv.FormatInt(tr.Epoch, 10),
			paper.Symmetric(tr.Mid, p.Sigma(i)).Text(),
			strconv.FormatFloat(p.Sigma(i)*minutesPerDay, 'f', 1, 64),
			utc,
			timeText(tr.Ingress, tr.SigmaIngress, p.Scatter),
			timeText(tr.Egress, tr.SigmaEgress, p.Scatter),
		})
	}
	if p.Draws > 0 {
		t.Notes = append(t.Notes, "σ from the draws' percentiles; the analytic propagation σ² = σ²_T0 + n²σ²_P + 2n cov(T0, P) is in the data file beside it.")
	}
	if !a.Direction {
		t.Notes = append(t.Notes, "UTC needs the target's direction: write ra and dec in the block.")
	} else {
		t.Notes = append(t.Notes, "UTC is when the mid-transit's light reaches the Earth's centre (within about 0.02 s of any site).")
	}
	if math.IsNaN(p.Duration) {
		t.Notes = append(t.Notes, "Ingress and egress need the transit's duration.")
	}
	return t
}

// timeText writes an ingress or egress time with its error, or a dash when unknown.
func timeText(v, sigma, scatter float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return paper.Symmetric(v, math.Hypot(sigma, scatter)).Text()
}

// data writes the planet's transits as columns.
func data(p *Planet) steps.Data {
	n := len(p.Transits)
	col := func(name string) steps.Series { return steps.Series{Name: name, Values: make([]float64, n)} }
	cols := []steps.Series{col("epoch"), col("mid_bjd_tdb"), col("sigma_d"), col("sigma_analytic_d"),
		col("ingress_bjd_tdb"), col("egress_bjd_tdb"), col("mid_jd_utc")}
	for i, t := range p.Transits {
		for k, v := range []float64{float64(t.Epoch), t.Mid, p.Sigma(i), p.SigmaAnalytic(i), t.Ingress, t.Egress, t.UTC} {
			cols[k].Values[i] = v
		}
	}
	return steps.Data{Name: "transits_" + p.Name, Series: cols}
}
