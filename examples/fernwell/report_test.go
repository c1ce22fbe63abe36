package fernwell_test

import (
	"bytes"
	"context"
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"dipline/workflow"
	"dipline/workflow/report/reporttest"
)

// demoCopy copies the demo's workflow and data into a fresh folder, the imaging table
// passed through edit, and returns the folder.
func demoCopy(t *testing.T, edit func(string) string) string {
	t.Helper()
	dir := t.TempDir()
	for _, name := range []string{"analysis.hcl", "data/fw3318.csv", "data/nearby_stars.csv", "data/fw3318_imaging.csv"} {
		b, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		if name == "data/fw3318_imaging.csv" {
			b = []byte(edit(string(b)))
		}
		os.MkdirAll(filepath.Dir(filepath.Join(dir, name)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// checkPlots checks that every plot of a page parses, that each marked layer holds as many
// marks as it says it drew and no more rows than the plot's data file, and collects the
// plots whose marks are every row of their data file.
func checkPlots(t *testing.T, page string, rep *workflow.Report, whole_ *[]string) int {
	t.Helper()
	plots, err := reporttest.Plots(page)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Dir(rep.ReportPath)
	for _, p := range plots {
		csvRows := -1
		if p.CSV != "" {
			// The data file is in the folder of the step whose section holds the plot.
			sec := page[:p.At]
			step := sec[strings.LastIndex(sec, `data-step="`)+len(`data-step="`):]
			step = step[:strings.Index(step, `"`)]
			n, err := reporttest.CSVRows(filepath.Join(out, step, p.CSV+".csv"))
			if err != nil {
				t.Errorf("plot %q: %v", p.Label, err)
				continue
			}
			csvRows = n
		}
		sum, whole := 0, false
		for _, l := range p.Layers {
			if l.Marks != l.Drawn {
				t.Errorf("plot %q, %s layer: %d marks in the SVG, %d said drawn", p.Label, l.Style, l.Marks, l.Drawn)
			}
			if l.Drawn > l.Rows {
				t.Errorf("plot %q, %s layer: %d marks for %d rows", p.Label, l.Style, l.Drawn, l.Rows)
			}
			if csvRows >= 0 && l.Rows > csvRows {
				t.Errorf("plot %q, %s layer: %d rows, more than the %d of %s.csv", p.Label, l.Style, l.Rows, csvRows, p.CSV)
			}
			if l.Style == "points" {
				sum += l.Rows
			}
			whole = whole || l.Rows == csvRows
		}
		// A plot draws its data whole (one layer, or its points split into layers: kept and
		// clipped), or a summary of it (a histogram's bins, a peak, a thinned sample).
		if csvRows >= 0 && (whole || sum == csvRows) {
			*whole_ = append(*whole_, p.Label)
		}
	}
	return len(plots)
}

// TestTheDemosPageReadsInABrowser runs the demo (with a short fit) and opens its page in a
// headless Chromium: every step has its section in the DOM, the appendix is there, nothing
// reaches the console, every plot's marks match its data, and a screenshot is a PNG.
func TestTheDemosPageReadsInABrowser(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	chromium := reporttest.Chromium()
	if chromium == "" {
		t.Skip("chromium is not on PATH (apt-get install chromium); the browser check is skipped")
	}
	dir := demoCopy(t, func(s string) string { return s })
	t0 := time.Now()
	rep := runDir(t, dir, quick...)
	t.Logf("the demo ran and wrote its page in %.1f s", time.Since(t0).Seconds())
	if rep.ReportPath == "" {
		t.Fatal("no report was written")
	}
	page, err := os.ReadFile(rep.ReportPath)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("report.html: %d bytes", len(page))
	var whole []string
	n := checkPlots(t, string(page), rep, &whole)
	t.Logf("%d plots checked against their data; %d draw every row of it", n, len(whole))
	if len(whole) == 0 {
		t.Error("no plot draws its data whole (the light curve should)")
	}
	checkFoldDepths(t, rep)

	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	b := reporttest.Browser{Path: chromium, Profile: filepath.Join(t.TempDir(), "profile")}
	dom, console, err := b.DumpDOM(ctx, rep.ReportPath)
	if err != nil {
		t.Fatal(err)
	}
	if len(console) > 0 {
		t.Errorf("the browser logged:\n%s", strings.Join(console, "\n"))
	}
	for _, o := range rep.Outcomes {
		if !strings.Contains(dom, `data-step="`+o.Step.Addr+`"`) {
			t.Errorf("the browser's DOM has no section for %s", o.Step.Addr)
		}
		if !strings.Contains(dom, `id="made-`+o.Step.Addr+`"`) {
			t.Errorf("the browser's DOM has no appendix entry for %s", o.Step.Addr)
		}
	}
	if !strings.Contains(dom, `id="making"`) || !strings.Contains(dom, "data/fw3318.csv") {
		t.Error("the appendix is missing, or does not name the light curve's file")
	}
	if got := strings.Count(dom, `<svg class="plot"`); got != n {
		t.Errorf("the browser's DOM holds %d plots, the page %d", got, n)
	}
	png := filepath.Join(t.TempDir(), "page.png")
	if _, err := b.Screenshot(ctx, rep.ReportPath, png, 1280, 2000); err != nil {
		t.Fatal(err)
	}
	img, err := os.ReadFile(png)
	if err != nil || !bytes.HasPrefix(img, reporttest.PNGSignature) {
		t.Fatalf("the screenshot is not a PNG (%v)", err)
	}
}

// TestAHostileCompanionNameIsShownAsText names the imaging table's companion with a script
// tag: the page shows the name as text and holds no script element.
func TestAHostileCompanionNameIsShownAsText(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	const name = "<script>alert(1)</script>"
	dir := demoCopy(t, func(s string) string { return strings.ReplaceAll(s, "FW-3318 B", name) })
	rep := runDir(t, dir, quick...)
	page, err := os.ReadFile(rep.ReportPath)
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Contains(bytes.ToLower(page), []byte("<script")) {
		t.Fatal("the companion's name reached the page as a tag")
	}
	if !bytes.Contains(page, []byte("&lt;script&gt;alert(1)&lt;/script&gt;")) {
		t.Error("the companion's name is not on the page as text")
	}
	checkPlots(t, string(page), rep, new([]string))
}

// checkFoldDepths holds each planet's folded model, as written beside the page, to the
// depth the fit reports: the model's lowest point lies between k² and k² deepened by limb
// darkening, at most by the disc-centre factor 1/(1 − u1/3 − u2/6), which is below 1.5 for
// any physical u1, u2 (Kipping 2013's q1, q2 in [0, 1]); the 30-minute exposure can only
// make it shallower, by a few per cent for these durations.
func checkFoldDepths(t *testing.T, rep *workflow.Report) {
	t.Helper()
	depth := map[string]float64{}
	for _, o := range rep.Outcomes {
		if o.Step.Addr != "fit.planets" || o.Artifact == nil {
			continue
		}
		for _, f := range o.Artifact.Figures() {
			if strings.HasSuffix(f.Name, ".depth") && f.Unit == "ppm" {
				depth[strings.TrimSuffix(f.Name, ".depth")] = f.Value * 1e-6
			}
		}
	}
	if len(depth) != 2 {
		t.Fatalf("the fit reports depths for %v, want planets b and c", depth)
	}
	for planet, k2 := range depth {
		path := filepath.Join(filepath.Dir(rep.ReportPath), "fit.planets", "fold_"+planet+"_model.csv")
		low := math.Inf(1)
		for _, v := range csvColumn(t, path, "model_median") {
			low = math.Min(low, v)
		}
		if got := 1 - low; !(got > 0.9*k2 && got < 1.5*k2) {
			t.Errorf("planet %s: the folded model dips %.0f ppm, the fit's depth is %.0f ppm", planet, got*1e6, k2*1e6)
		}
	}
}

// csvColumn reads one column of a CSV file the run wrote.
func csvColumn(t *testing.T, path, name string) []float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil || len(rows) < 2 {
		t.Fatalf("%s: %v (%d rows)", path, err, len(rows))
	}
	col := -1
	for i, h := range rows[0] {
		if h == name {
			col = i
		}
	}
	if col < 0 {
		t.Fatalf("%s has no column %s", path, name)
	}
	var out []float64
	for _, r := range rows[1:] {
		v, err := strconv.ParseFloat(r[col], 64)
		if err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		out = append(out, v)
	}
	return out
}
