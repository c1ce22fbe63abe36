package derive

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"strconv"
	"strings"

	"dipline/steps"
	"dipline/steps/internal/paper"
)

// What the derive step shows: one table of every planet's quantities (a column per planet,
// a row per quantity, the companion-host radii below), the same numbers at full precision
// as a tidy CSV (planets.csv, one row per planet, host and quantity), and the table in
// LaTeX (planets.tex) for a manuscript. Values are rounded by steps/internal/paper.

// tableCaution is the caution every planet table carries.
const tableCaution = "A table of derived parameters assumes each signal is a planet transiting the star it is assigned to; it is not a validation of the planet. Eclipsing binaries and blended stars need vetting and follow-up, and the judgement of the scientist who publishes them."

// label is how a quantity is named in the tables: in plain words and units for the report,
// and in LaTeX for the manuscript table (ASCII only, so a bare install compiles it).
type label struct {
	words, unit      string
	latex, latexUnit string
}

// labels names the quantities derive gives, by their key in the artifact.
var labels = map[string]label{
	"radius_ratio":        {"Radius ratio Rp/R*", "", `$R_p/R_\star$`, ""},
	"depth_undiluted":     {"Depth without the other stars' light", "ppm", "Undiluted depth", "ppm"},
	"radius_earth":        {"Radius", "R⊕", "Radius", `$R_\oplus$`},
	"radius_jup":          {"Radius", "R_J", "Radius", `$R_\mathrm{J}$`},
	"a_au":                {"Semi-major axis a", "au", "Semi-major axis $a$", "au"},
	"a_over_rstar":        {"a/R*", "", `$a/R_\star$`, ""},
	"inclination":         {"Inclination", "deg", "Inclination $i$", "deg"},
	"impact":              {"Impact parameter b", "", "Impact parameter $b$", ""},
	"eccentricity":        {"Eccentricity", "", "Eccentricity $e$", ""},
	"t14":                 {"Duration, first to fourth contact", "h", "$T_{14}$", "h"},
	"t23":                 {"Duration, second to third contact", "h", "$T_{23}$", "h"},
	"teq":                 {"Equilibrium temperature", "K", "$T_\\mathrm{eq}$", "K"},
	"insolation":          {"Insolation", "S⊕", "Insolation", `$S_\oplus$`},
	"transit_probability": {"Geometric transit probability", "", "Transit probability", ""},
	"star_angle":          {"Star's angular diameter seen from the planet", "deg", "Star's angular diameter", "deg"},
	"star_angle_vs_sun":   {"…over the Sun's seen from Earth", "", "Angular diameter / Sun's from Earth", ""},
	"mass_earth":          {"Mass", "M⊕", "Mass", `$M_\oplus$`},
	"rv_amplitude":        {"Radial-velocity semi-amplitude", "m/s", "RV semi-amplitude $K$", `m\,s$^{-1}$`},
	"tsm":                 {"Transmission spectroscopy metric", "", "TSM", ""},
	"esm":                 {"Emission spectroscopy metric", "", "ESM", ""},
	transitDensityName:    {"Star's density from this transit alone", "g/cm³", `$\rho_\star$ from the transit`, `g\,cm$^{-3}$`},
}

// labelOf returns a quantity's label; a quantity this file does not know keeps its key.
func labelOf(q Quantity) label {
	if l, ok := labels[q.Name]; ok {
		return l
	}
	return label{q.Name, q.Unit, paper.EscapeLaTeX(q.Name), paper.EscapeLaTeX(q.Unit)}
}

// valueOf turns a summary into a value to print: the median with its errors to the 16th
// and 84th percentiles, or the 95 % upper limit (the artifact's own choice, Quantity).
func valueOf(q Quantity) paper.Value {
	v := paper.Percentiles(q.Median, q.Lo, q.Hi)
	if q.UpperLimit {
		v.Limit, v.Bound, v.Level = paper.UpperLimit, q.Limit, limitQuantile
	}
	return v
}

// targetHost names the planet-on-target rows in planets.csv.
const targetHost = "target"

// tableRow is one row of the planet table: a quantity on one host, across the planets.
type tableRow struct {
	host, name string
	label      label
	// cells are by planet, nil where the planet lacks the quantity.
	cells []*Quantity
}

// planetRows lays the artifact out as rows: the target's quantities in the order they
// first appear, then each companion host's.
func (a *Artifact) planetRows() []tableRow {
	var rows []tableRow
	at := map[string]int{}
	put := func(host string, p int, q *Quantity) {
		key := host + "\x00" + q.Name
		i, ok := at[key]
		if !ok {
			i = len(rows)
			at[key] = i
			rows = append(rows, tableRow{host: host, name: q.Name, label: labelOf(*q), cells: make([]*Quantity, len(a.Planets))})
		}
		rows[i].cells[p] = q
	}
	for p := range a.Planets {
		for q := range a.Planets[p].Quantities {
			put(targetHost, p, &a.Planets[p].Quantities[q])
		}
	}
	for p := range a.Planets {
		for h := range a.Planets[p].Hosts {
			hr := &a.Planets[p].Hosts[h]
			for q := range hr.Quantities {
				put(hr.Host, p, &hr.Quantities[q])
			}
		}
	}
	return rows
}

// Present shows the planet table, and writes it as planets.csv and planets.tex.
func (Kind) Present(c *Config, art steps.Artifact, _ steps.Inputs) (steps.Presentation, error) {
	a, ok := art.(*Artifact)
	if !ok || a == nil {
		return steps.Presentation{}, fmt.Errorf("derive: presenting a %T, not a derive result", art)
	}
	rows := a.planetRows()
	t := &steps.Table{Header: []string{"Quantity", "Unit"}}
	for _, p := range a.Planets {
		t.Header = append(t.Header, "Planet "+p.Name)
	}
	for _, r := range rows {
		words := r.label.words
		if r.host != targetHost {
			words = fmt.Sprintf("%s, if it orbits %s", words, r.host)
		}
		line := []string{words, r.label.unit}
		for _, q := range r.cells {
			line = append(line, cellText(q))
		}
		t.Rows = append(t.Rows, line)
	}
	t.Notes = a.tableNotes(c)
	texts := []steps.Text{{Name: "planets.csv", Body: a.planetsCSV()}, {Name: "planets.tex", Body: a.planetsLaTeX(rows)}}
	return steps.Presentation{
		Panels: []steps.Panel{{
			Title: "Planets",
			Caption: "Each planet's derived quantities: the median of the combined draws with the distances to their 16th and 84th percentiles, " +
				"rounded to two significant figures of the smaller error; \"<\" gives the 95th percentile where the draws pile against zero. " + tableCaution,
			Table: t,
		}},
		Texts: texts,
	}, nil
}

// cellText is one cell of the report's table.
func cellText(q *Quantity) string {
	if q == nil {
		return "—"
	}
	return valueOf(*q).Text()
}

// tableNotes are the sentences under the table: how the numbers were combined, and what
// makes some of them doubtful or statistical.
func (a *Artifact) tableNotes(c *Config) []string {
	notes := []string{a.Method}
	if a.Mismatch {
		notes = append(notes, "Provisional: the transit's stellar density and the star's do not overlap, so every planet figure pairs the fit's samples with the star's draws as if they agreed (see the step's cautions). The density from each transit alone is the fit's own.")
	}
	if a.LowESS {
		notes = append(notes, fmt.Sprintf("Only %.0f effective samples of %d survive the reweighting by the star's density: the errors' second figures are noisy.", a.ESS, a.FitSamples))
	}
	var statistical []string
	for _, p := range a.Planets {
		for _, q := range p.Quantities {
			if q.Name == "mass_earth" && strings.Contains(q.Doc, "Chen & Kipping") {
				statistical = append(statistical, p.Name)
			}
		}
	}
	if len(statistical) > 0 {
		notes = append(notes, fmt.Sprintf("The mass of planet %s is the Chen & Kipping (2017) mean mass–radius relation at the radius: a statistical guess, not a measurement, and so are the radial-velocity amplitude and the transmission metric built on it.", strings.Join(statistical, ", ")))
	}
	for _, p := range a.Planets {
		for _, h := range p.Hosts {
			if h.NotPlanetary {
				limit := "the planetary limit"
				if c != nil && c.MaxPlanetRadiusJup > 0 {
					limit = fmt.Sprintf("%g R_J", c.MaxPlanetRadiusJup)
				}
				notes = append(notes, fmt.Sprintf("If planet %s orbited %s, its median radius would exceed %s: not a planet on that host.", p.Name, h.Host, limit))
			}
		}
	}
	return notes
}

// num writes a number at full precision for a data file (the shortest text that reads back
// to the same float64).
func num(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// planetsCSV writes every quantity of every planet and host, one per line, unrounded:
// planet, host ("target" or the companion's name), quantity (its key), unit, median, the
// errors to the 16th and 84th percentiles, limit_kind ("none" or "upper") and limit (the
// 95th percentile when upper, else empty).
func (a *Artifact) planetsCSV() string {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	_ = w.Write([]string{"planet", "host", "quantity", "unit", "median", "err_lower", "err_upper", "limit_kind", "limit"})
	line := func(planet, host string, q Quantity) {
		v := valueOf(q)
		limit := ""
		if v.Limit != paper.NoLimit {
			limit = num(v.Bound)
		}
		_ = w.Write([]string{planet, host, q.Name, q.Unit, num(q.Median), num(v.Lower), num(v.Upper), v.Limit.String(), limit})
	}
	for _, p := range a.Planets {
		for _, q := range p.Quantities {
			line(p.Name, targetHost, q)
		}
		for _, h := range p.Hosts {
			for _, q := range h.Quantities {
				line(p.Name, h.Host, q)
			}
		}
	}
	w.Flush()
	return b.String()
}

// planetsLaTeX writes the table as a LaTeX table float with a plain tabular (no packages),
// values from paper.Value.LaTeX, names escaped.
func (a *Artifact) planetsLaTeX(rows []tableRow) string {
	var b strings.Builder
	b.WriteString("% Planet parameters written by dipline's derive step; values rounded by their uncertainty.\n")
	b.WriteString("\\begin{table}\n\\centering\n")
	caption := "Derived planet parameters: medians with the distances to the 16th and 84th percentiles; $<$ marks a 95\\,\\% upper limit where the posterior piles against zero."
	if a.Mismatch {
		caption += " Provisional: the transit's stellar density and the star's do not overlap."
	}
	caption += " " + paper.EscapeLaTeX(tableCaution)
	fmt.Fprintf(&b, "\\caption{%s}\n", caption)
	fmt.Fprintf(&b, "\\begin{tabular}{ll%s}\n\\hline\n", strings.Repeat("c", len(a.Planets)))
	b.WriteString("Quantity & Unit")
	for _, p := range a.Planets {
		fmt.Fprintf(&b, " & %s", paper.EscapeLaTeX(p.Name))
	}
	b.WriteString(" \\\\\n\\hline\n")
	host := targetHost
	for _, r := range rows {
		if r.host != host {
			host = r.host
			fmt.Fprintf(&b, "\\hline\n\\multicolumn{%d}{l}{If the planet orbits %s:} \\\\\n", 2+len(a.Planets), paper.EscapeLaTeX(host))
		}
		fmt.Fprintf(&b, "%s & %s", r.label.latex, r.label.latexUnit)
		for _, q := range r.cells {
			cell := "--"
			if q != nil {
				cell = valueOf(*q).LaTeX()
			}
			b.WriteString(" & " + cell)
		}
		b.WriteString(" \\\\\n")
	}
	b.WriteString("\\hline\n\\end{tabular}\n\\end{table}\n")
	return b.String()
}
