package workflow

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow/report/reporttest"
)

// showing doubles its input and shows it: a plot of its values, their data, a text; or it
// misbehaves while presenting, as its mode says.
type showing struct{ toyBase }

type shownConfig struct {
	Input steps.Ref `step:"input,required"`
	Mode  string    `step:"mode" default:"good" choices:"good|panic|error|uneven|badname"`
	Title string    `step:"title" default:"values"`
}

func (showing) Name() string             { return "shown" }
func (showing) Doc() string              { return "doubles and shows" }
func (showing) Check(*shownConfig) error { return nil }
func (showing) Run(ctx context.Context, c *shownConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	return toyNum(2 * float64(in.Ref("input").(toyNum))), nil
}

func (showing) Present(c *shownConfig, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	up := float64(in.Ref("input").(toyNum)) // the inputs are those Run got
	v := float64(art.(toyNum))
	x := []float64{0, 1, 2, 0.1}
	y := []float64{up, v, v / 3, 1e-300}
	data := steps.Data{Name: "values", Series: []steps.Series{{Name: "x", Values: x}, {Name: "y_ppm", Values: y}}}
	switch c.Mode {
	case "panic":
		var m map[string]int
		m["x"] = 1 // a deliberate nil-map panic
	case "error":
		return steps.Presentation{}, errors.New("told to fail")
	case "uneven":
		data.Series[1].Values = y[:2]
	case "badname":
		data.Name = "../escape"
	}
	return steps.Presentation{
		Panels: []steps.Panel{{Title: c.Title, Caption: "Values " + c.Title,
			Plots: []*steps.Plot{{Title: c.Title, XLabel: "x", YLabel: "y", Data: "values",
				Layers: []steps.Layer{{Label: "y", Style: steps.Points, X: x, Y: y}}}}}},
		Data:  []steps.Data{data},
		Texts: []steps.Text{{Name: "table.tex", Body: "value & " + c.Title + "\n"}},
	}, nil
}

func presentRegistry() steps.Registry {
	r, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[troubleConfig](trouble{}),
		steps.Define[shownConfig](showing{}))
	if err != nil {
		panic(err)
	}
	return r
}

const shownWorkflow = `
analysis "toy" {
  seed = 7
}

source "a" {
  files = ["data/a.txt"]
}

shown "good" {
  input = source.a
  title = "<script>alert(1)</script>"
}

shown "boom" {
  input = source.a
  mode  = "panic"
}

shown "refuses" {
  input = source.a
  mode  = "error"
}

shown "uneven" {
  input = source.a
  mode  = "uneven"
}

shown "badname" {
  input = source.a
  mode  = "badname"
}

trouble "bad" {
  mode = "fail"
}

shown "after" {
  input = trouble.bad
}
`

func runShown(t *testing.T, dir string) (*Report, error) {
	t.Helper()
	w, diags := Load(filepath.Join(dir, "analysis.hcl"), presentRegistry())
	if diags.HasErrors() {
		t.Fatal(diags)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	return Run(context.Background(), w, store, Options{Workers: 2})
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestARunWritesItsPageAndDataWhateverFailed(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": shownWorkflow, "data/a.txt": "1.25\n2.5\n"})
	rep, err := runShown(t, p.dir)
	var re *RunError
	if !errors.As(err, &re) || len(re.Faults) > 0 {
		t.Fatalf("want a run error for trouble.bad alone, got %v", err)
	}
	if rep.ReportPath == "" {
		t.Fatal("no report was written")
	}
	page := readFile(t, rep.ReportPath)
	out := filepath.Dir(rep.ReportPath)

	t.Run("every step has its section, in the workflow's order", func(t *testing.T) {
		last := -1
		for _, o := range rep.Outcomes {
			at := strings.Index(page, `data-step="`+o.Step.Addr+`"`)
			if at < last {
				t.Errorf("%s is missing or out of order", o.Step.Addr)
			}
			last = at
		}
		if !strings.Contains(page, "not run: trouble.bad failed") {
			t.Error("the skipped step's section does not say why")
		}
	})
	t.Run("a presenter that fails or panics is a note", func(t *testing.T) {
		for _, want := range []string{"could not be made: told to fail", "could not be made: a fault in dipline (panic:",
			`column &#34;x&#34; has 4 values and &#34;y_ppm&#34; has 2`, `The data &#34;../escape&#34; were not written`} {
			if !strings.Contains(page, want) {
				t.Errorf("the page lacks %q", want)
			}
		}
		for _, bad := range []string{"shown.uneven/values.csv", "escape.csv", "shown.boom"} {
			if _, err := os.Stat(filepath.Join(out, bad)); err == nil {
				t.Errorf("%s was written", bad)
			}
		}
	})
	t.Run("data are CSV with the shortest exact numbers", func(t *testing.T) {
		got := readFile(t, filepath.Join(out, "shown.good", "values.csv"))
		want := "x,y_ppm\n0,3.75\n1,7.5\n2,2.5\n0.1,1e-300\n"
		if got != want {
			t.Errorf("values.csv:\n%s\nwant\n%s", got, want)
		}
		if tex := readFile(t, filepath.Join(out, "shown.good", "table.tex")); tex != "value & <script>alert(1)</script>\n" {
			t.Errorf("table.tex is %q", tex)
		}
		plots, err := reporttest.Plots(page)
		if err != nil {
			t.Fatal(err)
		}
		if len(plots) != 3 { // good, uneven (plot still drawn) and badname
			t.Fatalf("%d plots, want 3", len(plots))
		}
		if l := plots[0].Layers[0]; l.Marks != 4 || l.Rows != 4 {
			t.Errorf("the plot drew %d marks of %d rows, want 4 of 4", l.Marks, l.Rows)
		}
	})
	t.Run("a title from the workflow is text", func(t *testing.T) {
		if strings.Contains(strings.ToLower(page), "<script") {
			t.Error("the title reached the page as a tag")
		}
		if !strings.Contains(page, "&lt;script&gt;alert(1)&lt;/script&gt;") {
			t.Error("the title is not shown escaped")
		}
	})
	t.Run("the appendix has the file's digest and every step", func(t *testing.T) {
		for _, want := range []string{`id="made-source.a"`, `id="made-shown.after"`, "data/a.txt",
			hexKey(rep.Outcomes[0].Step.Files["files"][0].Digest), rep.Run.ID} {
			if !strings.Contains(page, want) {
				t.Errorf("the page lacks %q", want)
			}
		}
	})
	t.Run("nothing half-written is left", func(t *testing.T) {
		filepath.Walk(out, func(path string, info os.FileInfo, err error) error {
			if err == nil && strings.HasPrefix(info.Name(), ".") {
				t.Errorf("a temporary file is left: %s", path)
			}
			return nil
		})
	})
}

func TestTheSameResultsWriteTheSameFiles(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": shownWorkflow, "data/a.txt": "1.25\n2.5\n"})
	rep1, _ := runShown(t, p.dir)
	page1 := readFile(t, rep1.ReportPath)
	csv1 := readFile(t, filepath.Join(filepath.Dir(rep1.ReportPath), "shown.good", "values.csv"))
	rep2, _ := runShown(t, p.dir)
	page2 := readFile(t, rep2.ReportPath)
	csv2 := readFile(t, filepath.Join(filepath.Dir(rep2.ReportPath), "shown.good", "values.csv"))
	if csv1 != csv2 {
		t.Error("the data changed between two runs of the same results")
	}
	// The pages differ only in the run's id and each step's state (computed, then reused).
	norm := func(s, id string) string {
		s = strings.ReplaceAll(s, id, "RUN")
		return strings.NewReplacer("computed", "STATE", "reused", "STATE").Replace(s)
	}
	if norm(page1, rep1.Run.ID) != norm(page2, rep2.Run.ID) {
		t.Error("the page changed between two runs of the same results")
	}
}

func TestWrittenResultsAreReadableByOthers(t *testing.T) {
	// Results are for sharing: every file a run writes is mode 0644 (a temporary file
	// starts as 0600).
	p := newProject(t, map[string]string{"analysis.hcl": shownWorkflow, "data/a.txt": "1.25\n2.5\n"})
	rep, _ := runShown(t, p.dir)
	out := filepath.Dir(rep.ReportPath)
	for _, name := range []string{"report.html", "results.json", filepath.Join("shown.good", "values.csv")} {
		info, err := os.Stat(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		if info.Mode().Perm() != resultsMode {
			t.Errorf("%s has mode %v, want %v", name, info.Mode().Perm(), os.FileMode(resultsMode))
		}
	}
}
