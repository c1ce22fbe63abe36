package workflow

import (
	"context"
	"encoding/binary"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps"
)

// spread is a toy kind whose artifact reports numbers the way a kind summarising draws
// does: a median with a lopsided 16–84 % interval, a number it knows to be undefined and
// says why, and one undefined without a reason.
type spread struct{ toyBase }

type spreadConfig struct {
	Input steps.Ref `step:"input,required" accepts:"source"`
	Width float64   `step:"width" default:"1"`
}

func (spread) Name() string              { return "spread" }
func (spread) Doc() string               { return "a median with a lopsided interval" }
func (spread) Check(*spreadConfig) error { return nil }
func (spread) Decode(b []byte) (steps.Artifact, error) {
	if len(b) != 12 || string(b[:4]) != "spr1" {
		return nil, errors.New("not a spread artifact")
	}
	return spreadResult(math.Float64frombits(binary.LittleEndian.Uint64(b[4:]))), nil
}
func (spread) Run(ctx context.Context, cfg *spreadConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	return spreadResult(float64(in.Ref("input").(toyNum)) * cfg.Width), nil
}

type spreadResult float64

func (r spreadResult) Encode() []byte {
	return binary.LittleEndian.AppendUint64([]byte("spr1"), steps.FloatBits(float64(r)))
}

func (r spreadResult) Figures() []steps.Figure {
	w := float64(r)
	return []steps.Figure{
		{Name: "median", Value: 10, Sigma: 1.5 * w, Lower: w, Upper: 2 * w, Unit: "d", Doc: "median, 16–84 %"},
		{Name: "exact", Value: 3, Doc: "an exact number"},
		{Name: "host_radius", Value: math.NaN(), Unit: "R_earth", Reason: "the companion's radius is not known"},
		{Name: "ratio", Value: math.Inf(1), Doc: "undefined, no reason given"},
	}
}

// The results file a paper can use: each figure drawn from samples carries its lopsided
// interval as numbers, no undefined number is written (each is named in the step's notes,
// with the kind's reason or the general one), and a --set run says it is a what-if run.
func TestTheResultsFileCarriesIntervalsNotesAndOverrides(t *testing.T) {
	reg, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[spreadConfig](spread{}))
	if err != nil {
		t.Fatal(err)
	}
	p := newProject(t, map[string]string{"a.txt": "1.5\n", "analysis.hcl": `
analysis "toy" { seed = 1 }
source "a" { files = "a.txt" }
spread "s" { input = source.a }
`})
	run := func(overrides ...Override) (string, ResultsFile, *Report) {
		w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), reg, overrides)
		if diags.HasErrors() {
			t.Fatal(diags)
		}
		store, err := cache.Open(w.StorePath)
		if err != nil {
			t.Fatal(err)
		}
		rep, err := Run(context.Background(), w, store, Options{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(p.dir, "results", "results.json"))
		if err != nil {
			t.Fatal(err)
		}
		return string(b), p.results(), rep
	}
	text, rf, _ := run()

	t.Run("the schema is the fourth", func(t *testing.T) {
		if rf.Schema != "dipline-results/4" {
			t.Errorf("schema %q", rf.Schema)
		}
	})
	s := stepResults(t, rf, "spread.s")
	t.Run("a figure with an interval has err_lower and err_upper as numbers", func(t *testing.T) {
		if !strings.Contains(text, `"err_lower": 1.5`) || !strings.Contains(text, `"err_upper": 3`) {
			t.Errorf("the file lacks the interval's numbers:\n%s", text)
		}
		var median, exact *FigureEntry
		for i := range s.Figures {
			switch s.Figures[i].Name {
			case "median":
				median = &s.Figures[i]
			case "exact":
				exact = &s.Figures[i]
			}
		}
		if median == nil || median.Lower == nil || median.Upper == nil || *median.Lower != 1.5 || *median.Upper != 3 {
			t.Errorf("median: %+v", median)
		}
		if exact == nil || exact.Lower != nil || exact.Upper != nil || exact.Sigma != nil {
			t.Errorf("an exact figure gains an interval: %+v", exact)
		}
	})
	t.Run("no undefined number is written", func(t *testing.T) {
		for _, bad := range []string{"NaN", "Inf", "null", `"host_radius"`, `"ratio"`} {
			if strings.Contains(text, bad) {
				t.Errorf("the results file holds %s:\n%s", bad, text)
			}
		}
		if len(s.Figures) != 2 {
			t.Errorf("figures %+v, want the two defined ones", s.Figures)
		}
	})
	t.Run("the step's notes say which figures are not given and why", func(t *testing.T) {
		want := []string{
			"host_radius is not given: the companion's radius is not known",
			"ratio is not given: it could not be computed from these data",
		}
		if strings.Join(s.Notes, "\n") != strings.Join(want, "\n") {
			t.Errorf("notes %q, want %q", s.Notes, want)
		}
	})
	t.Run("a run of the file as it stands says nothing of overrides", func(t *testing.T) {
		if rf.Overrides != nil || rf.WhatIf != "" || strings.Contains(text, "what_if") {
			t.Errorf("overrides %q, what-if %q", rf.Overrides, rf.WhatIf)
		}
	})

	text, rf, rep := run(Override{Addr: "spread.s", Attr: "width", Value: "2"}, Override{Addr: "source.a", Attr: "scale", Value: "3"})
	t.Run("a what-if run lists its settings as written and says what it is", func(t *testing.T) {
		want := []string{"source.a.scale=3", "spread.s.width=2"}
		if strings.Join(rf.Overrides, " ") != strings.Join(want, " ") {
			t.Errorf("overrides %q, want %q", rf.Overrides, want)
		}
		if !strings.Contains(rf.WhatIf, "what-if run") || !strings.Contains(rf.WhatIf, "--set source.a.scale=3, --set spread.s.width=2") {
			t.Errorf("what_if %q", rf.WhatIf)
		}
		if _, sentence := WhatIf(rep.Run.Overrides, rep.Run.SetBy); sentence != rf.WhatIf {
			t.Errorf("the run record's overrides give %q, the results file %q", sentence, rf.WhatIf)
		}
		if !strings.Contains(text, `"err_upper": 18`) { // 1.5 × 3 × 2 = 9, upper 2 × 9
			t.Errorf("the what-if run's interval:\n%s", text)
		}
	})
}
