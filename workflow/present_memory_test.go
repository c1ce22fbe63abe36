package workflow

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"
	"weak"

	"dipline/cache"
	"dipline/steps"
	"dipline/workflow/report"
	"dipline/workflow/report/reporttest"
)

// longSeries shows a long series as a light curve's step does: every point in its data (six
// columns) and again in its plot (three layers), in slices of its own made when it is asked.
type longSeries struct{ toyBase }

type longConfig struct {
	Input steps.Ref `step:"input,required"`
	Rows  int       `step:"rows" default:"2000"`
}

func (longSeries) Name() string            { return "long" }
func (longSeries) Doc() string             { return "shows a long series" }
func (longSeries) Check(*longConfig) error { return nil }
func (longSeries) Run(ctx context.Context, c *longConfig, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	return toyNum(float64(c.Rows)), nil
}

func (longSeries) Present(c *longConfig, art steps.Artifact, in steps.Inputs) (steps.Presentation, error) {
	p := longPresentation(c.Rows, float64(in.Ref("input").(toyNum)))
	if t := longTracker; t != nil {
		t.asked(p)
	}
	return p, nil
}

// longPresentation is what a long step of rows rows shows, the same every time.
func longPresentation(rows int, shift float64) steps.Presentation {
	data := steps.Data{Name: "series"}
	for k, name := range []string{"time_d", "flux", "flux_err", "trend", "detrended", "kept"} {
		v := make([]float64, rows)
		for i := range v {
			v[i] = float64(i)/720 + float64(k) + 1e-3*math.Sin(float64(i*(k+1))) + shift*1e-6
		}
		data.Series = append(data.Series, steps.Series{Name: name, Values: v})
	}
	col := func(k int) []float64 { return slices.Clone(data.Series[k].Values) }
	plot := &steps.Plot{Title: "series", XLabel: "time (d)", YLabel: "flux", Data: data.Name, Layers: []steps.Layer{
		{Label: "flux", Style: steps.Points, X: col(0), Y: col(1)},
		{Label: "trend", Style: steps.Line, X: col(0), Y: col(3)},
		{Label: "detrended", Style: steps.Points, X: col(0), Y: col(4)},
	}}
	return steps.Presentation{Panels: []steps.Panel{{Title: "A long series", Plots: []*steps.Plot{plot}}},
		Data: []steps.Data{data}}
}

// presentationTracker notes, each time a long step is asked what it shows, which of the
// series earlier steps showed are still held by anyone (weak pointers, after a collection).
type presentationTracker struct {
	mu    sync.Mutex
	shown []weak.Pointer[float64]
	what  []string
	count int
	held  []string
}

// longTracker, when set, is told of every long presentation (tests only; nil otherwise).
var longTracker *presentationTracker

func (t *presentationTracker) asked(p steps.Presentation) {
	t.mu.Lock()
	defer t.mu.Unlock()
	t.count++
	runtime.GC()
	for i, w := range t.shown {
		if w.Value() != nil {
			t.held = append(t.held, fmt.Sprintf("presentation %d: %s", t.count, t.what[i]))
		}
	}
	n := t.count
	t.shown = append(t.shown, weak.Make(&p.Data[0].Series[0].Values[0]), weak.Make(&p.Panels[0].Plots[0].Layers[0].X[0]))
	t.what = append(t.what, fmt.Sprintf("the data of presentation %d", n), fmt.Sprintf("the plot of presentation %d", n))
}

func longRegistry() steps.Registry {
	r, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[longConfig](longSeries{}))
	if err != nil {
		panic(err)
	}
	return r
}

// longWorkflow is a source and n long steps of rows rows each.
func longWorkflow(n, rows int) string {
	var b strings.Builder
	b.WriteString("analysis \"long\" {\n  seed = 7\n}\n\nsource \"a\" {\n  files = [\"data/a.txt\"]\n}\n")
	for i := 1; i <= n; i++ {
		fmt.Fprintf(&b, "\nlong \"s%d\" {\n  input = source.a\n  rows  = %d\n}\n", i, rows)
	}
	return b.String()
}

func loadLong(tb testing.TB, dir string) (*Workflow, *cache.Store) {
	tb.Helper()
	w, diags := Load(filepath.Join(dir, "analysis.hcl"), longRegistry())
	if diags.HasErrors() {
		tb.Fatal(diags)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		tb.Fatal(err)
	}
	return w, store
}

// The results are written one step at a time: by the time a step is asked what it shows,
// the data and plots of the steps shown before it have been written, drawn and let go, so
// a run of many long series holds one at a time. The files so written are whole, and the
// page draws every row.
func TestEachStepsPresentationIsLetGoBeforeTheNextIsMade(t *testing.T) {
	const steps, rows = 3, 3000
	p := newProject(t, map[string]string{"analysis.hcl": longWorkflow(steps, rows), "data/a.txt": "1.25\n2.5\n"})
	w, store := loadLong(t, p.dir)
	tracker := &presentationTracker{}
	longTracker = tracker
	defer func() { longTracker = nil }()
	rep, err := Run(context.Background(), w, store, Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if tracker.count != steps {
		t.Fatalf("%d presentations made, want %d", tracker.count, steps)
	}
	for _, h := range tracker.held {
		t.Errorf("when %s was asked for, %s was still held", strings.SplitN(h, ": ", 2)[0], strings.SplitN(h, ": ", 2)[1])
	}

	out := filepath.Dir(rep.ReportPath)
	for i := 1; i <= steps; i++ {
		d := longPresentation(rows, 3.75).Data[0]
		var want bytes.Buffer
		if err := writeCSV(&want, d, rows); err != nil {
			t.Fatal(err)
		}
		got := readFile(t, filepath.Join(out, fmt.Sprintf("long.s%d", i), "series.csv"))
		if got != want.String() {
			t.Errorf("long.s%d/series.csv: %d bytes, want the %d of its data", i, len(got), want.Len())
		}
	}
	plots, err := reporttest.Plots(readFile(t, rep.ReportPath))
	if err != nil {
		t.Fatal(err)
	}
	if len(plots) != steps {
		t.Fatalf("the page has %d plots, want %d", len(plots), steps)
	}
	for _, pl := range plots {
		if l := pl.Layers[0]; l.Rows != rows || l.Marks != rows {
			t.Errorf("plot %q: %d marks of %d rows, want %d of %d", pl.Label, l.Marks, l.Rows, rows, rows)
		}
	}
}

// cutOff passes left bytes on to w, then fails: a disk that fills part-way.
type cutOff struct {
	w          io.Writer
	left, took int
}

func (c *cutOff) Write(p []byte) (int, error) {
	if len(p) > c.left {
		return 0, errors.New("no space left on the device")
	}
	c.left -= len(p)
	c.took += len(p)
	return c.w.Write(p)
}

// The page is written as it is made, so a write that fails part-way has already put part
// of a page into its file: the engine's temporary file and rename (writeAtomicWith) leave
// the page of the previous run whole and no temporary file behind.
func TestAPageThatFailsPartWayLeavesThePreviousPageWhole(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, reportName)
	previous := "<!DOCTYPE html>\n<p>the previous run's page</p>\n"
	if err := os.WriteFile(path, []byte(previous), resultsMode); err != nil {
		t.Fatal(err)
	}
	sec := report.Section{Step: "long.s1", Kind: "long", Label: "s1", Status: StatusComputed, Finished: true,
		Made: report.Anchor("made", "long.s1"), Presentation: longPresentation(20000, 1)}
	doc := report.Document{Title: "long", Sections: []report.Section{sec}}
	cut := &cutOff{left: 200_000}
	err := writeAtomicWith(path, func(out io.Writer) error {
		cut.w = out
		return report.Write(cut, doc)
	})
	if err == nil {
		t.Fatal("a page that could not be written was reported written")
	}
	if cut.took == 0 {
		t.Fatal("nothing of the page was written before the failure: the page was held whole, not written as it was made")
	}
	if got := readFile(t, path); got != previous {
		t.Errorf("after a failed write the page holds %d bytes, want the previous page's %d", len(got), len(previous))
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("after a failed write the folder holds %v", names)
	}
}

// writeHeld writes a run's results as the engine did before its steps were shown one at a
// time: every step's presentation, data and plots, held until the page was drawn whole into
// memory and written. Kept for BenchmarkWriteResults's comparison only.
func writeHeld(w *Workflow, outcomes []*Outcome) error {
	arts := map[string]steps.Artifact{}
	for _, o := range outcomes {
		if o.Finished() {
			arts[o.Step.Addr] = o.Artifact
		}
	}
	doc := report.Document{Title: w.Name}
	for _, o := range outcomes {
		s := o.Step
		sec := report.Section{Step: s.Addr, Kind: s.Kind.Name(), Label: s.Label, Status: o.Status, Finished: o.Finished()}
		if o.Finished() {
			pres, err := presentGuarded(s, o.Artifact, stepInputs(s, func(a string) steps.Artifact { return arts[a] }))
			if err != nil {
				return err
			}
			for _, d := range pres.Data {
				rows, _ := checkData(d)
				write := func(out io.Writer) error { return writeCSV(out, d, rows) }
				if err := writeAtomicWith(filepath.Join(w.OutputDir, s.Addr, d.Name+".csv"), write); err != nil {
					return err
				}
			}
			sec.Presentation = pres
		}
		doc.Sections = append(doc.Sections, sec)
	}
	var page bytes.Buffer
	if err := report.Write(&page, doc); err != nil {
		return err
	}
	return writeAtomic(filepath.Join(w.OutputDir, reportName), page.Bytes())
}

// heapPeak samples the bytes of the heap's objects (live and not yet collected) every
// half millisecond while f runs and returns the most it saw above what was live before.
func heapPeak(f func()) (peak uint64) {
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	read := func() uint64 { metrics.Read(sample); return sample[0].Value.Uint64() }
	runtime.GC()
	base := read()
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		tick := time.NewTicker(500 * time.Microsecond)
		defer tick.Stop()
		for {
			if v := read(); v > base && v-base > peak {
				peak = v - base
			}
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	f()
	close(done)
	wg.Wait()
	return peak
}

// BenchmarkWriteResults writes the results of a run of six steps that each show a long
// series as a light curve's step does (250,000 rows: six data columns and three plotted
// layers, 24 MB of series per step), as the engine writes them ("one-at-a-time":
// writeReport) and as it did before ("held": every presentation held until the page is
// drawn whole). peak-heap-MB is the most the heap held above what the run's results hold;
// compare the two in one run, as ratios (the machine is shared and noisy).
//
//	go test ./workflow -run '^$' -bench WriteResults -benchtime 3x
func BenchmarkWriteResults(b *testing.B) {
	const steps, rows = 6, 250_000
	dir := b.TempDir()
	for name, body := range map[string]string{"analysis.hcl": longWorkflow(steps, rows), "data/a.txt": "1.25\n"} {
		os.MkdirAll(filepath.Dir(filepath.Join(dir, name)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
			b.Fatal(err)
		}
	}
	w, store := loadLong(b, dir)
	rep, err := Run(context.Background(), w, store, Options{Workers: 2})
	if err != nil {
		b.Fatal(err)
	}
	ways := []struct {
		name  string
		write func() error
	}{
		{"held", func() error { return writeHeld(w, rep.Outcomes) }},
		{"one-at-a-time", func() error { _, err := writeReport(w, store, rep.Run, rep.Outcomes); return err }},
	}
	for _, way := range ways {
		b.Run(way.name, func(b *testing.B) {
			b.ReportAllocs()
			var most uint64
			for b.Loop() {
				var err error
				most = max(most, heapPeak(func() { err = way.write() }))
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(most)/1e6, "peak-heap-MB")
		})
	}
}
