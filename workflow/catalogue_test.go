package workflow

import (
	"math"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps"
)

const catalogueFlow = `
analysis "toy" {
  seed = 7
}

catalogue "near" {
  file = "stars.csv"
  id   = "name"
}

lookup "host" {
  row       = catalogue.near["FW-1"]
  with_teff = true
}

lookup "other" {
  row = catalogue.near["FW-2"]
}
`

const stars = `# an invented catalogue
name,parallax,teff,vmag
FW-1,12.30,3300,11.0
FW-2,20.5,,12.5
FW-3,7.0,4100,13.0
`

func catalogueProject(t *testing.T) *project {
	return newProject(t, map[string]string{"analysis.hcl": catalogueFlow, "stars.csv": stars})
}

func TestCatalogueRowIsRead(t *testing.T) {
	p := catalogueProject(t)
	_, rep := p.run()
	if got := valueOf(t, rep, "lookup.host"); got != 12.3+3300 {
		t.Errorf("lookup.host = %v, want parallax + teff = 3312.3", got)
	}
	if got := valueOf(t, rep, "lookup.other"); got != 20.5 {
		t.Errorf("lookup.other = %v, want 20.5", got)
	}
}

func TestCatalogueEditsThatKeepTheRowKeepTheKey(t *testing.T) {
	edits := []struct {
		name string
		body string
	}{
		{"reformatting a number (12.30 → 12.3)", strings.Replace(stars, "12.30", "12.3", 1)},
		{"reordering the columns", "name,teff,vmag,parallax\nFW-1,3300,11.0,12.30\nFW-2,,12.5,20.5\nFW-3,4100,13.0,7.0\n"},
		{"adding a column", "name,parallax,teff,vmag,kmag\nFW-1,12.30,3300,11.0,8.1\nFW-2,20.5,,12.5,9.0\nFW-3,7.0,4100,13.0,9.9\n"},
		{"editing another star's row", strings.Replace(stars, "FW-3,7.0", "FW-3,7.5", 1)},
		{"editing a column this step does not read", strings.Replace(stars, "3300,11.0", "3300,11.4", 1)},
	}
	for _, e := range edits {
		t.Run(e.name+" reuses the host step", func(t *testing.T) {
			p := catalogueProject(t)
			p.run()
			p.write("stars.csv", e.body)
			st, _ := p.run()
			if st["lookup.host"] != StatusReused {
				t.Errorf("lookup.host %s, want reused", st["lookup.host"])
			}
		})
	}
}

func TestCatalogueRevisionRecomputesOnlyItsReaders(t *testing.T) {
	p := catalogueProject(t)
	p.run()
	p.write("stars.csv", strings.Replace(stars, "FW-1,12.30", "FW-1,12.45", 1))
	why := strings.Join(pendingOf(t, p)["lookup.host"].Reasons, ";")
	if !strings.Contains(why, `catalogue row catalogue.near["FW-1"] (stars.csv:3) column parallax: 12.3 → 12.45`) {
		t.Errorf("pending does not name the changed value: %q", why)
	}
	st, rep := p.run()
	if st["lookup.host"] != StatusComputed || st["lookup.other"] != StatusReused {
		t.Errorf("statuses %v, want host computed and other reused", st)
	}
	if got := valueOf(t, rep, "lookup.host"); got != 12.45+3300 {
		t.Errorf("lookup.host = %v after the revision", got)
	}
}

func TestCatalogueOverrideIsAppliedAndRecorded(t *testing.T) {
	p := catalogueProject(t)
	o, err := ParseOverride(`catalogue.near["FW-1"].parallax=13`)
	if err != nil {
		t.Fatal(err)
	}
	st, rep := p.run(o)
	if got := valueOf(t, rep, "lookup.host"); got != 13+3300 || st["lookup.host"] != StatusComputed {
		t.Errorf("with the override lookup.host = %v (%s), want 3313", got, st["lookup.host"])
	}
	if len(rep.Run.Overrides) != 1 || rep.Run.Overrides[`catalogue.near["FW-1"].parallax`] != "13" {
		t.Errorf("run record overrides %v", rep.Run.Overrides)
	}
	if _, err := p.load(Override{Addr: `catalogue.near["FW-1"]`, Attr: "vmag", Value: "1"}); err == nil ||
		!strings.Contains(err.Error(), `no step reads column "vmag"`) {
		t.Errorf("an override of an unread column: %v", err)
	}
	if _, err := p.load(Override{Addr: `catalogue.near["FW-1"]`, Attr: "parallax", Value: "abc"}); err == nil ||
		!strings.Contains(err.Error(), `--set catalogue.near["FW-1"].parallax: "abc" is not a number (the value replaces stars.csv line 3`) {
		t.Errorf("a bad override is blamed on: %v", err)
	}
	row := steps.Row{File: "stars.csv", Line: 3, ID: "FW-1", Columns: map[string]string{"parallax": "parallax"}, Set: map[string]bool{"parallax": true}}
	if got := row.Where("parallax"); got != "stars.csv:3 (FW-1), column parallax, as given with --set" {
		t.Errorf("a row's place for an overridden value: %q", got)
	}
	if _, err := ParseOverride(`catalogue.near.FW-1.parallax=13`); err == nil {
		t.Error("a row override without the index form was accepted")
	}
}

func TestCatalogueMistakesAreDiagnosed(t *testing.T) {
	cases := []struct {
		name  string
		flow  string
		stars string
		want  []string
	}{
		{"a missing id suggests the closest", strings.Replace(catalogueFlow, `["FW-2"]`, `["FW-22"]`, 1), stars,
			[]string{`stars.csv has no row with name "FW-22".`, `Did you mean "FW-2"?`}},
		{"a duplicated id that a step reads is ambiguous", catalogueFlow, stars + "FW-1,13.0,3200,11.1\n",
			[]string{`stars.csv has "FW-1" on line 3 and again on line(s) 6.`, "Keep one of them."}},
		{"a missing required column is named", catalogueFlow, strings.Replace(stars, "parallax", "plx", 1),
			[]string{`lookup.host needs a column "parallax", which stars.csv lacks`, "columns = { parallax"}},
		{"a cell that is not a number names file, line and column", catalogueFlow, strings.Replace(stars, "3300", "33OO", 1),
			[]string{`stars.csv line 3, column teff (row FW-1): "33OO" is not a number.`}},
		{"an unknown catalogue suggests the closest", strings.Replace(catalogueFlow, `catalogue.near["FW-2"]`, `catalogue.nears["FW-2"]`, 1), stars,
			[]string{`There is no catalogue block "nears".`, `Did you mean "near"?`}},
		{"a row named without an index is explained", strings.Replace(catalogueFlow, `catalogue.near["FW-2"]`, `catalogue.near`, 1), stars,
			[]string{"This is not a catalogue row.", `catalogue.nearby["FW-3318"]`}},
		{"a missing id column is named", catalogueFlow, strings.Replace(stars, "name,", "star,", 1),
			[]string{"This catalogue cannot be used: ", `no id column "name"`}},
		{"a short line is named", catalogueFlow, stars + "FW-9,1.0\n",
			[]string{"stars.csv:6", "2 cells"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := newProject(t, map[string]string{"analysis.hcl": c.flow, "stars.csv": c.stars})
			_, err := p.load()
			if err == nil {
				t.Fatal("loaded without error")
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not contain %q", err, w)
				}
			}
		})
	}
	t.Run("a duplicated id that no step reads is no error", func(t *testing.T) {
		p := newProject(t, map[string]string{"analysis.hcl": catalogueFlow, "stars.csv": stars + "FW-3,7.1,4000,13.1\n"})
		if _, err := p.load(); err != nil {
			t.Fatal(err)
		}
	})
	t.Run("a byte-order mark before the header is not part of the first column's name", func(t *testing.T) {
		p := newProject(t, map[string]string{"analysis.hcl": catalogueFlow, "stars.csv": "\ufeff" + stars})
		_, rep := p.run()
		if got := valueOf(t, rep, "lookup.host"); got != 12.3+3300 {
			t.Errorf("lookup.host = %v with a byte-order mark, want 3312.3", got)
		}
	})
	t.Run("a short id column name is not matched to a far one", func(t *testing.T) {
		flow := strings.Replace(catalogueFlow, `id   = "name"`, `id   = "id"`, 1)
		p := newProject(t, map[string]string{"analysis.hcl": flow, "stars.csv": strings.Replace(stars, "name,", "j,", 1)})
		_, err := p.load()
		if err == nil || !strings.Contains(err.Error(), `no id column "id"`) || strings.Contains(err.Error(), "Did you mean") {
			t.Errorf("error %v; want the missing column named and no guess two edits from a two-letter name", err)
		}
	})
	t.Run("a renamed column is found through the catalogue block", func(t *testing.T) {
		flow := strings.Replace(catalogueFlow, `id   = "name"`, "id   = \"name\"\n  columns = { parallax = \"PLX\" }", 1)
		p := newProject(t, map[string]string{"analysis.hcl": flow, "stars.csv": strings.Replace(stars, "parallax", "plx", 1)})
		_, rep := p.run()
		if got := valueOf(t, rep, "lookup.other"); got != 20.5 {
			t.Errorf("lookup.other = %v through the rename", got)
		}
	})
}

func TestMeasurementIsDecodedAndKeyedByValue(t *testing.T) {
	p := catalogueProject(t)
	p.write("analysis.hcl", strings.Replace(catalogueFlow, "with_teff = true", "with_teff = true\n  offset = \"12 ± 1.5 h\"", 1))
	_, rep := p.run()
	if got := valueOf(t, rep, "lookup.host"); math.Abs(got-(12.3+3300+0.5+0.0625)) > 1e-9 {
		t.Errorf("lookup.host = %v with the measurement 0.5 ± 0.0625 d", got)
	}
	p.write("analysis.hcl", strings.Replace(catalogueFlow, "with_teff = true", "with_teff = true\n  offset = \"0.5 +/- 0.0625 d\"", 1))
	if st, _ := p.run(); st["lookup.host"] != StatusReused {
		t.Errorf("the same measurement in other units recomputed: %s", st["lookup.host"])
	}
	p.write("analysis.hcl", strings.Replace(catalogueFlow, "with_teff = true", "with_teff = true\n  offset = \"0.5 d\"", 1))
	if _, err := p.load(); err == nil || !strings.Contains(err.Error(), "no uncertainty") {
		t.Errorf("a measurement without ± : %v", err)
	}
}

func TestDiffExplainsACatalogueRevision(t *testing.T) {
	p := catalogueProject(t)
	_, first := p.run()
	p.write("stars.csv", strings.Replace(stars, "FW-1,12.30", "FW-1,12.45", 1))
	_, second := p.run()
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Diff(store, toyRegistry(), first.Run.ID, second.Run.ID)
	if err != nil {
		t.Fatal(err)
	}
	states := map[string]StepDiff{}
	for _, d := range rep.Steps {
		states[d.Step] = d
	}
	if states["lookup.other"].State != DiffUnchanged {
		t.Errorf("lookup.other: %+v, want same", states["lookup.other"])
	}
	host := states["lookup.host"]
	if host.State != DiffNewResult || !strings.Contains(strings.Join(host.Why, ";"), "column parallax: 12.3 → 12.45") {
		t.Fatalf("lookup.host: %+v", host)
	}
	if len(host.Shifts) != 1 {
		t.Fatalf("shifts %+v", host.Shifts)
	}
	// The toy estimate has σ = 0.5 and a Monte Carlo error of 0.03 in each run: the shift
	// of 0.15 is 0.3 σ, with a Monte Carlo error of 0.03·√2.
	s := host.Shifts[0]
	if math.Abs(s.Delta-0.15) > 1e-9 || math.Abs(s.InSigma-0.3) > 1e-9 || math.Abs(s.MCError-0.03*math.Sqrt2) > 1e-12 {
		t.Errorf("shift %+v, want Δ 0.15 = 0.3 σ ± %.4f", s, 0.03*math.Sqrt2)
	}
}
