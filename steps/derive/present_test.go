package derive

import (
	"encoding/csv"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"dipline/steps"
	"dipline/steps/internal/paper"
	"dipline/steps/internal/steptest"
)

// presented runs the golden fixture (two planets, one piled at b = 0, a companion host)
// and presents it.
func presented(t *testing.T) (*Artifact, steps.Presentation) {
	t.Helper()
	cfg := steptest.MustConfig(New(), fixtureSet())
	art, _, err := steptest.RunConfig(New(), cfg, fixture(), nil)
	if err != nil {
		t.Fatal(err)
	}
	p, err := steps.PresentationOf(New(), cfg, art, fixture())
	if err != nil {
		t.Fatal(err)
	}
	return art.(*Artifact), p
}

// text returns the named Text of a presentation.
func text(t *testing.T, p steps.Presentation, name string) string {
	t.Helper()
	for _, x := range p.Texts {
		if x.Name == name {
			return x.Body
		}
	}
	t.Fatalf("no text %q among %d", name, len(p.Texts))
	return ""
}

// csvRecord is one line of planets.csv, read back.
type csvRecord struct {
	planet, host, quantity, unit string
	v                            paper.Value
}

func readPlanetsCSV(t *testing.T, body string) []csvRecord {
	t.Helper()
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"planet", "host", "quantity", "unit", "median", "err_lower", "err_upper", "limit_kind", "limit"}
	if strings.Join(recs[0], ",") != strings.Join(want, ",") {
		t.Fatalf("header %v, want %v", recs[0], want)
	}
	f := func(s string) float64 {
		x, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%q is not a number", s)
		}
		return x
	}
	var out []csvRecord
	for _, r := range recs[1:] {
		c := csvRecord{planet: r[0], host: r[1], quantity: r[2], unit: r[3],
			v: paper.Value{Median: f(r[4]), Lower: f(r[5]), Upper: f(r[6])}}
		switch r[7] {
		case "upper":
			c.v.Limit, c.v.Bound, c.v.Level = paper.UpperLimit, f(r[8]), 0.95
		case "none":
			if r[8] != "" {
				t.Errorf("a row without a limit gives limit %q", r[8])
			}
		default:
			t.Errorf("limit_kind %q", r[7])
		}
		out = append(out, c)
	}
	return out
}

// TestPlanetsCSVHoldsTheArtifactsNumbers: every quantity of every planet and host is one
// line, at full precision, equal to the artifact's summary; the figures carry the same
// medians and σ (found by value, whatever they are named).
func TestPlanetsCSVHoldsTheArtifactsNumbers(t *testing.T) {
	a, p := presented(t)
	recs := readPlanetsCSV(t, text(t, p, "planets.csv"))
	i, limits := 0, 0
	for _, pl := range a.Planets {
		check := func(host string, q Quantity) {
			if i >= len(recs) {
				t.Fatalf("planets.csv has %d lines, fewer than the artifact's quantities", len(recs))
			}
			r := recs[i]
			i++
			if r.planet != pl.Name || r.host != host || r.quantity != q.Name || r.unit != q.Unit {
				t.Errorf("line %d names %s/%s/%s [%s], want %s/%s/%s [%s]", i, r.planet, r.host, r.quantity, r.unit, pl.Name, host, q.Name, q.Unit)
			}
			if r.v.Median != q.Median || r.v.Lower != q.Median-q.Lo || r.v.Upper != q.Hi-q.Median {
				t.Errorf("%s.%s: csv %+v, artifact %v %v %v", pl.Name, q.Name, r.v, q.Lo, q.Median, q.Hi)
			}
			if (r.v.Limit == paper.UpperLimit) != q.UpperLimit || (q.UpperLimit && r.v.Bound != q.Limit) {
				t.Errorf("%s.%s: csv limit %v %v, artifact %v %v", pl.Name, q.Name, r.v.Limit, r.v.Bound, q.UpperLimit, q.Limit)
			}
			if q.UpperLimit {
				limits++
			}
		}
		for _, q := range pl.Quantities {
			check(targetHost, q)
		}
		for _, h := range pl.Hosts {
			for _, q := range h.Quantities {
				check(h.Host, q)
			}
		}
	}
	if i != len(recs) {
		t.Errorf("planets.csv has %d lines, the artifact %d quantities", len(recs), i)
	}
	if limits == 0 {
		t.Error("the fixture's planet c (b piled at zero) gives no upper limit: the test no longer covers limits")
	}
	figs := a.Figures()
	for _, r := range recs {
		found := false
		for _, f := range figs {
			if r.v.Limit == paper.UpperLimit && f.Value == r.v.Bound ||
				r.v.Limit == paper.NoLimit && f.Value == r.v.Median && f.Sigma == (r.v.Lower+r.v.Upper)/2 {
				found = true
				break
			}
		}
		if !found {
			t.Errorf("%s/%s/%s: no figure carries %+v", r.planet, r.host, r.quantity, r.v)
		}
	}
}

// tabularRows returns the cells of the data rows of a LaTeX tabular (lines with " & "
// below the header, multicolumn lines left out).
func tabularRows(tex string) [][]string {
	var rows [][]string
	header := true
	for _, line := range strings.Split(tex, "\n") {
		if !strings.HasSuffix(line, `\\`) || strings.HasPrefix(line, `\multicolumn`) {
			continue
		}
		if header {
			header = false
			continue
		}
		rows = append(rows, strings.Split(strings.TrimSuffix(line, ` \\`), " & "))
	}
	return rows
}

// TestLaTeXAndTableRoundTheCSVsNumbers: each cell of planets.tex is the CSV's numbers
// rounded by paper.Value.LaTeX, and each cell of the report's table the same by Text.
func TestLaTeXAndTableRoundTheCSVsNumbers(t *testing.T) {
	a, p := presented(t)
	recs := readPlanetsCSV(t, text(t, p, "planets.csv"))
	byKey := map[string]paper.Value{}
	for _, r := range recs {
		byKey[r.planet+"/"+r.host+"/"+r.quantity] = r.v
	}
	rows := a.planetRows()
	tex := tabularRows(text(t, p, "planets.tex"))
	if len(tex) != len(rows) {
		t.Fatalf("planets.tex has %d rows, want %d", len(tex), len(rows))
	}
	table := p.Panels[0].Table
	if len(table.Rows) != len(rows) {
		t.Fatalf("the table has %d rows, want %d", len(table.Rows), len(rows))
	}
	for i, r := range rows {
		for j, pl := range a.Planets {
			v, ok := byKey[pl.Name+"/"+r.host+"/"+r.name]
			wantTeX, wantText := "--", "—"
			if ok {
				wantTeX, wantText = v.LaTeX(), v.Text()
			}
			if got := tex[i][2+j]; got != wantTeX {
				t.Errorf("planets.tex row %d (%s %s), planet %s: %q, want %q", i, r.host, r.name, pl.Name, got, wantTeX)
			}
			if got := table.Rows[i][2+j]; got != wantText {
				t.Errorf("table row %d (%s %s), planet %s: %q, want %q", i, r.host, r.name, pl.Name, got, wantText)
			}
		}
	}
	if !strings.Contains(text(t, p, "planets.tex"), `$<`) {
		t.Error("planets.tex shows no upper limit")
	}
}

func TestPlanetTableCarriesTheCaution(t *testing.T) {
	_, p := presented(t)
	if len(p.Panels) != 1 || p.Panels[0].Table == nil {
		t.Fatalf("want one table panel, got %+v", p.Panels)
	}
	if !strings.Contains(p.Panels[0].Caption, "not a validation") {
		t.Errorf("caption %q lacks the caution", p.Panels[0].Caption)
	}
	if !strings.Contains(text(t, p, "planets.tex"), "not a validation") {
		t.Error("planets.tex lacks the caution")
	}
	notes := strings.Join(p.Panels[0].Table.Notes, " ")
	if !strings.Contains(notes, "mass of planet b is the Chen & Kipping") || strings.Contains(notes, "planet b, c") {
		t.Errorf("notes %q should call b's mass statistical and not c's (measured)", notes)
	}
}

// TestNamesAreTextInTheTableAndEscapedInLaTeX: a host named in a user's file keeps its
// characters in the report's table (the renderer escapes) and is escaped in the LaTeX.
func TestNamesAreTextInTheTableAndEscapedInLaTeX(t *testing.T) {
	q := Quantity{Name: "radius_earth", Unit: "R_earth", Median: 2, Lo: 1.9, Hi: 2.1}
	a := &Artifact{Method: "test", FitSamples: 10, Draws: 10, ESS: 10, Planets: []Planet{{
		Name: "b", Quantities: []Quantity{q},
		Hosts: []HostResult{{Host: "<A&B>_1 50%", Quantities: []Quantity{q}}},
	}}}
	p, err := Kind{}.Present(&Config{}, a, steps.Inputs{})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.Panels[0].Table.Rows[1][0]; got != "Radius, if it orbits <A&B>_1 50%" {
		t.Errorf("table row names the host %q", got)
	}
	if tex := text(t, p, "planets.tex"); !strings.Contains(tex, `If the planet orbits \textless{}A\&B\textgreater{}\_1 50\%:`) {
		t.Errorf("planets.tex does not escape the host's name:\n%s", tex)
	}
	if body := text(t, p, "planets.csv"); !strings.Contains(body, "b,<A&B>_1 50%,radius_earth") {
		t.Errorf("planets.csv changes the host's name:\n%s", body)
	}
}

// TestPlanetsTeXCompiles runs the table through pdflatex (or lualatex) inside a bare
// article, when one is installed.
func TestPlanetsTeXCompiles(t *testing.T) {
	engine := ""
	for _, e := range []string{"pdflatex", "lualatex"} {
		if _, err := exec.LookPath(e); err == nil {
			engine = e
			break
		}
	}
	if engine == "" {
		t.Skip("neither pdflatex nor lualatex is on PATH: planets.tex not compiled")
	}
	_, p := presented(t)
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "planets.tex"), []byte(text(t, p, "planets.tex")), 0o644); err != nil {
		t.Fatal(err)
	}
	doc := "\\documentclass{article}\n\\begin{document}\n\\input{planets}\n\\end{document}\n"
	if err := os.WriteFile(filepath.Join(dir, "doc.tex"), []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(engine, "-interaction=nonstopmode", "-halt-on-error", "doc.tex")
	cmd.Dir = dir
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("%s failed: %v\n%s", engine, err, out)
	}
	if _, err := os.Stat(filepath.Join(dir, "doc.pdf")); err != nil {
		t.Fatalf("%s wrote no PDF: %v", engine, err)
	}
	if strings.Contains(string(out), "Overfull") {
		t.Logf("%s reports an overfull box (the table is wider than the text; not an error)", engine)
	}
}
