package report

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"dipline/steps"
	"dipline/workflow/report/reporttest"
)

const xss = `<script>alert(1)</script>`

// synthetic is a document with every layer style, a grid with an empty cell, a table, log
// and reversed axes, a layer long enough to be thinned, and a hostile string in every place
// a workflow or a file could put one.
func synthetic() (Document, map[string]int) {
	n := 300
	x, y, lo, hi := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range x {
		x[i] = float64(i) * 0.1
		y[i] = math.Sin(x[i])
		lo[i], hi[i] = y[i]-0.2, y[i]+0.2
	}
	long := 45001
	lx, ly := make([]float64, long), make([]float64, long)
	for i := range lx {
		lx[i] = float64(i)
		ly[i] = math.Cos(float64(i) / 1000)
	}
	hx := []float64{-2, -1, 0, 1, 2}
	hy := []float64{3, 10, 20, 9, 2}
	bx := []float64{1, 10, 100, 1000}
	by := []float64{0.5, 5, 50, 500}
	rows := map[string]int{"curve": n, "long": long, "counts": len(hx), "powers": len(bx)}
	lightCurve := &steps.Plot{Title: "A wave " + xss, XLabel: "x " + xss, YLabel: "y", Data: "curve",
		Layers: []steps.Layer{
			{Label: "band " + xss, Style: steps.Band, X: x, Y: y, YLo: lo, YHi: hi},
			{Label: "points", Style: steps.Points, X: x, Y: y},
			{Label: "bars", Style: steps.ErrorBars, X: x[:40], Y: y[:40], YLo: lo[:40], YHi: hi[:40]},
			{Label: "line", Style: steps.Line, X: x, Y: y},
			{Label: "peaks", Style: steps.Emphasised, X: x[:5], Y: y[:5]},
		},
		HLines: []steps.Mark{{Value: 0.5, Label: "threshold " + xss}},
		VLines: []steps.Mark{{Value: 3, Label: "mid"}}}
	doc := Document{
		Title: "test " + xss, Subtitle: "a subtitle " + xss,
		Sections: []Section{
			{Step: "photometry.one", Kind: "photometry", Label: "one", Status: "computed", Finished: true,
				StepKey: "ab12", Made: Anchor("made", "photometry.one"),
				Presentation: steps.Presentation{Panels: []steps.Panel{
					{Title: "Wave " + xss, Caption: "What is shown " + xss, Plots: []*steps.Plot{lightCurve}},
					{Title: "Long", Plots: []*steps.Plot{{Title: "Many points", XLabel: "i", YLabel: "v", Data: "long",
						Layers: []steps.Layer{{Style: steps.Points, X: lx, Y: ly}}}}},
				}},
				Figures:  []Figure{{Name: "depth " + xss, Value: "1.5 ± 0.1", Unit: "ppm", Doc: "a number " + xss}},
				Cautions: []string{"careful " + xss},
				Verdicts: []Verdict{{Subject: "signal1", Test: "odd_even", Verdict: "agree", Threshold: "3 σ", Reason: "fine " + xss}},
				Files:    []WrittenFile{{Path: "photometry.one/curve.csv", What: "300 rows"}}},
			{Step: "search.two", Kind: "search", Label: "two", Status: "computed", Finished: true,
				StepKey: "cd34", Made: Anchor("made", "search.two"),
				Presentation: steps.Presentation{Panels: []steps.Panel{
					{Title: "Grid", Columns: 2, Plots: []*steps.Plot{
						{Title: "Counts", XLabel: "bin", YLabel: "n", Data: "counts",
							Layers: []steps.Layer{{Style: steps.Histogram, X: hx, Y: hy}}},
						nil,
						{Title: "Powers", XLabel: "mag", YLabel: "p", LogY: true, LogX: true, XReversed: true, Data: "powers",
							Layers: []steps.Layer{{Style: steps.Points, X: bx, Y: by}}},
					}},
					{Title: "A table", Table: &steps.Table{Header: []string{"name", "value"},
						Rows: [][]string{{xss, "1"}, {"b", "2"}}, Notes: []string{"note " + xss}}},
				}}},
			{Step: "fit.three", Kind: "fit", Label: "three", Status: "failed", StepKey: "", Made: Anchor("made", "fit.three"),
				Why: "it failed " + xss},
		},
		Appendix: Appendix{
			Run:       []Pair{{"run", "20260101-000000-abcd"}, {"workflow", "analysis.hcl"}},
			Overrides: []Pair{{"fit.three.max_steps", "300 " + xss}},
			Steps: []Making{
				{ID: Anchor("made", "photometry.one"), Step: "photometry.one", Version: "1", StepKey: "ab12", ResultKey: "ef56",
					Settings: []Pair{{"files", `["data/` + xss + `"]`}},
					Files:    []File{{Param: "files", Path: "data/" + xss, SHA256: "00ff", Bytes: "12"}}},
				{ID: Anchor("made", "search.two"), Step: "search.two", Version: "2", StepKey: "cd34",
					Inputs: []Input{{Param: "light_curve", Step: "photometry.one", ResultKey: "ef56"}},
					Rows: []Row{{Param: "row", Row: `catalogue.c["` + xss + `"]`, Place: "c.csv line 3",
						Values: []Pair{{"plx", "35.2"}}}}},
				{ID: Anchor("made", "fit.three"), Step: "fit.three", Version: "3"},
			},
		},
	}
	return doc, rows
}

func render(t *testing.T, doc Document) string {
	t.Helper()
	var b bytes.Buffer
	if err := Write(&b, doc); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

func TestThePageShowsEverySectionInOrderAndLinksItsMaking(t *testing.T) {
	doc, _ := synthetic()
	page := render(t, doc)
	last := -1
	for _, s := range doc.Sections {
		at := strings.Index(page, `<section class="step" id="`+Anchor("step", s.Step)+`"`)
		if at < 0 {
			t.Fatalf("no section for %s", s.Step)
		}
		if at < last {
			t.Errorf("%s is out of the workflow's order", s.Step)
		}
		last = at
		if !strings.Contains(page[at:], `href="#`+s.Made+`"`) {
			t.Errorf("%s does not link to how it was made", s.Step)
		}
		if !strings.Contains(page, `<article id="`+s.Made+`"`) {
			t.Errorf("the appendix has no entry %s", s.Made)
		}
	}
	if strings.Index(page, `id="making"`) < last {
		t.Error("the appendix is not after the sections")
	}
	for _, want := range []string{"Numbers", "Tests", "Written beside this page", "how it was made"} {
		if !strings.Contains(page, want) {
			t.Errorf("the page lacks %q", want)
		}
	}
	// Nothing is fetched: no script, no stylesheet or image from elsewhere.
	for _, bad := range []string{"<script", "<link", "<img", "http://", "https://", "src="} {
		for _, ok := range []string{"http://www.w3.org/2000/svg", "http://www.w3.org/1999/xlink"} {
			page = strings.ReplaceAll(page, ok, "")
		}
		if strings.Contains(strings.ToLower(page), bad) {
			t.Errorf("the page holds %q", bad)
		}
	}
}

func TestEveryStringFromAWorkflowIsText(t *testing.T) {
	doc, _ := synthetic()
	page := render(t, doc)
	if strings.Contains(strings.ToLower(page), "<script") {
		t.Fatal("a label reached the page as a tag")
	}
	escaped := "&lt;script&gt;alert(1)&lt;/script&gt;"
	// Each place a hostile string was put shows it as text: the title, captions, figures,
	// tables, cautions, reasons, the appendix, and inside the SVG (axis label, legend, mark).
	if n := strings.Count(page, escaped); n < 15 {
		t.Errorf("the escaped string appears %d times, want one per place (at least 15)", n)
	}
	plots, err := reporttest.Plots(page)
	if err != nil {
		t.Fatal(err)
	}
	inSVG := 0
	for _, svg := range strings.Split(page, `<svg class="plot"`)[1:] {
		inSVG += strings.Count(svg[:strings.Index(svg, "</svg>")], escaped)
	}
	if inSVG < 3 || len(plots) == 0 {
		t.Errorf("the plots show the hostile labels %d times, want the title, the axis and the mark", inSVG)
	}
}

func TestEveryPlotDrawsOneMarkPerRow(t *testing.T) {
	doc, rows := synthetic()
	page := render(t, doc)
	plots, err := reporttest.Plots(page)
	if err != nil {
		t.Fatal(err)
	}
	if len(plots) != 4 {
		t.Fatalf("%d plots, want 4 (the grid's empty cell draws none)", len(plots))
	}
	for _, p := range plots {
		if len(p.Layers) == 0 {
			t.Errorf("plot %q has no marked layer", p.Label)
		}
		for _, l := range p.Layers {
			if l.Marks != l.Drawn {
				t.Errorf("plot %q, %s: %d marks in the SVG, %d said drawn", p.Label, l.Style, l.Marks, l.Drawn)
			}
		}
		// The first marked layer of each of these plots draws every row of its data.
		first := p.Layers[0]
		want := rows[p.CSV]
		switch {
		case want > maxDrawn:
			k := (want + maxDrawn - 1) / maxDrawn
			if first.Rows != want || first.Drawn != (want+k-1)/k {
				t.Errorf("plot %q: %d of %d rows drawn, want every %dth", p.Label, first.Drawn, want, k)
			}
		case p.CSV == "curve":
			// The curve's marked layers: points (all rows), error bars (40), peaks (5).
			if first.Style != "points" || first.Drawn != want {
				t.Errorf("plot %q: first marked layer %s drew %d, want %d points", p.Label, first.Style, first.Drawn, want)
			}
		default:
			if first.Drawn != want {
				t.Errorf("plot %q: %d marks, its data has %d rows", p.Label, first.Drawn, want)
			}
		}
	}
	if !strings.Contains(page, "every 3rd point of 45,001 is drawn") {
		t.Error("the thinned layer is not said to be thinned")
	}
	if strings.Count(page, `<ul class="key">`) != 1 {
		t.Error("want a legend for the one plot with more than one layer")
	}
}

func TestTheSamePageGivesTheSameBytes(t *testing.T) {
	doc, _ := synthetic()
	a, b := render(t, doc), render(t, doc)
	if a != b {
		t.Fatal("two renderings of one document differ")
	}
}

func TestAPlotThatCannotBeDrawnIsANote(t *testing.T) {
	doc := Document{Title: "t", Sections: []Section{{Step: "a.b", Kind: "a", Label: "b", Made: "made-a.b",
		Presentation: steps.Presentation{Panels: []steps.Panel{{Title: "bad", Plots: []*steps.Plot{
			{Title: "uneven", Layers: []steps.Layer{{Style: steps.Points, X: []float64{1, 2}, Y: []float64{1}}}},
			{Title: "empty"},
			{Title: "no finite value", Layers: []steps.Layer{{Style: steps.Points, X: []float64{math.NaN()}, Y: []float64{1}}}},
		}}}}}}}
	page := render(t, doc)
	if !strings.Contains(page, "columns of unequal lengths") {
		t.Error("an uneven layer is not reported")
	}
	if !strings.Contains(page, "1 of 1 points have no value that can be placed") {
		t.Error("a point that cannot be drawn is not reported")
	}
	if _, err := reporttest.Plots(page); err != nil {
		t.Error(err)
	}
}

// TestAHeadlessBrowserReadsThePage opens the synthetic page in Chromium: the DOM it builds
// holds every section and plot, nothing is logged to its console, and a screenshot is a PNG.
func TestAHeadlessBrowserReadsThePage(t *testing.T) {
	path := reporttest.Chromium()
	if path == "" {
		t.Skip("chromium is not installed (apt-get install chromium); the browser check is skipped")
	}
	doc, _ := synthetic()
	dir := t.TempDir()
	page := filepath.Join(dir, "report.html")
	if err := os.WriteFile(page, []byte(render(t, doc)), 0o644); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	b := reporttest.Browser{Path: path, Profile: filepath.Join(dir, "profile")}
	dom, console, err := b.DumpDOM(ctx, page)
	if err != nil {
		t.Fatal(err)
	}
	if len(console) > 0 {
		t.Errorf("the browser logged:\n%s", strings.Join(console, "\n"))
	}
	for _, s := range doc.Sections {
		if !strings.Contains(dom, `id="`+Anchor("step", s.Step)+`"`) {
			t.Errorf("the browser's DOM lacks %s", s.Step)
		}
	}
	if got := strings.Count(dom, `<svg class="plot"`); got != 4 {
		t.Errorf("the browser's DOM holds %d plots, want 4", got)
	}
	if strings.Contains(strings.ToLower(dom), "<script") {
		t.Error("the browser built a script element from a label")
	}
	png := filepath.Join(dir, "page.png")
	if _, err := b.Screenshot(ctx, page, png, 1280, 2000); err != nil {
		t.Fatal(err)
	}
	img, err := os.ReadFile(png)
	if err != nil || !bytes.HasPrefix(img, reporttest.PNGSignature) {
		t.Fatalf("the screenshot is not a PNG (%v)", err)
	}
}

// TestSpansDrawOneBarPerRowAndWidenTheAxis draws a timeline of spans: one bar per row that
// can be placed (a NaN end leaves its row out, and the caption says so), the x axis reaching
// the spans' ends rather than their ticks, and uneven ends refused.
func TestSpansDrawOneBarPerRowAndWidenTheAxis(t *testing.T) {
	sp := steps.Layer{Label: "windows", Style: steps.Spans,
		X: []float64{0, 1, 2, 3}, Y: []float64{1, 2, 3, 4},
		XLo: []float64{-5, 0.5, math.NaN(), 2}, XHi: []float64{1, 1.5, 2.5, 7}}
	p := &steps.Plot{Title: "timeline", XLabel: "h", YLabel: "night", Layers: []steps.Layer{sp},
		YTicks: []steps.Mark{{Value: 1, Label: "2031-02-03"}, {Value: 4, Label: "2031-02-09"}}}
	x, _ := ranges(p)
	if !(x[0] <= -5 && x[1] >= 7) {
		t.Errorf("x axis %v does not reach the spans' ends −5 and 7", x)
	}
	doc := Document{Title: "t", Sections: []Section{{Step: "a.b", Kind: "a", Label: "b", Made: "made-a.b",
		Presentation: steps.Presentation{Panels: []steps.Panel{{Title: "spans", Plots: []*steps.Plot{p,
			{Title: "uneven", Layers: []steps.Layer{{Style: steps.Spans, X: []float64{1}, Y: []float64{1}, XLo: []float64{0}}}}}}}}}}}
	page := render(t, doc)
	plots, err := reporttest.Plots(page)
	if err != nil {
		t.Fatal(err)
	}
	if len(plots) != 1 || len(plots[0].Layers) != 1 {
		t.Fatalf("want one plot with one marked layer, got %+v", plots)
	}
	l := plots[0].Layers[0]
	if l.Style != "spans" || l.Rows != 4 || l.Drawn != 3 || l.Marks != 3 {
		t.Errorf("spans layer: style %s, %d rows, %d drawn, %d marks; want spans, 4, 3, 3", l.Style, l.Rows, l.Drawn, l.Marks)
	}
	if !strings.Contains(page, "1 of 4 points have no value that can be placed") {
		t.Error("the span that cannot be placed is not reported")
	}
	if !strings.Contains(page, "columns of unequal lengths") {
		t.Error("spans with uneven ends are not refused")
	}
	for _, d := range []string{">2031-02-03<", ">2031-02-09<"} {
		if !strings.Contains(page, d) {
			t.Errorf("the y axis is not labelled %s", strings.Trim(d, "<>"))
		}
	}
}
