package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// lightCurveCSV writes an invented 20-day light curve at 30-minute cadence: white noise of
// 300 ppm from our own SplitMix64 + Box–Muller, and a 3000 ppm box transit every 2.5 days.
func lightCurveCSV() string {
	var b strings.Builder
	b.WriteString("# invented test data\ntime,flux,flux_err\n")
	next := uniforms(99)
	for i := 0; i < 960; i++ {
		t := float64(i) / 48
		f := 1 + 3e-4*math.Sqrt(-2*math.Log(next()))*math.Cos(2*math.Pi*next())
		if ph := math.Mod(t-1.1, 2.5); ph >= 0 && ph < 0.1 {
			f -= 3e-3
		}
		fmt.Fprintf(&b, "%.6f,%.7f,0.0003\n", t, f)
	}
	return b.String()
}

// uniforms returns a seeded stream of uniform draws in (0, 1): splitmix64 (Steele, Lea &
// Flood 2014), written here so the tests' invented data never change with a Go upgrade.
func uniforms(seed uint64) func() float64 {
	s := seed
	return func() float64 {
		s += 0x9e3779b97f4a7c15
		z := s
		z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
		z = (z ^ (z >> 27)) * 0x94d049bb133111eb
		return (float64((z^(z>>31))>>11) + 0.5) / (1 << 53)
	}
}

const workflowText = `analysis "cli-test" {
  seed = 1
}

photometry "raw" {
  files     = "lc.csv"
  time_zero = 2460000
}

detrend "quiet" {
  light_curve = photometry.raw
  span        = "0.5 d"
}

search "dips" {
  light_curve = detrend.quiet
}
`

type folder struct {
	t   *testing.T
	dir string
}

func newFolder(t *testing.T) *folder {
	f := &folder{t: t, dir: t.TempDir()}
	f.write("analysis.hcl", workflowText)
	f.write("lc.csv", lightCurveCSV())
	return f
}

func (f *folder) write(name, body string) {
	f.t.Helper()
	if err := os.WriteFile(filepath.Join(f.dir, name), []byte(body), 0o644); err != nil {
		f.t.Fatal(err)
	}
}

// dipline runs the command line in the folder and returns exit status, stdout and stderr.
func (f *folder) dipline(args ...string) (int, string, string) {
	f.t.Helper()
	wd, _ := os.Getwd()
	if err := os.Chdir(f.dir); err != nil {
		f.t.Fatal(err)
	}
	defer os.Chdir(wd)
	var out, errb bytes.Buffer
	code := realMain(args, &out, &errb)
	return code, out.String(), errb.String()
}

func TestRunThenReuse(t *testing.T) {
	f := newFolder(t)
	code, out, errs := f.dipline("run", "--workers", "2", "--events", "events.jsonl")
	if code != 0 {
		t.Fatalf("run: exit %d\n%s\n%s", code, out, errs)
	}
	if !strings.Contains(out, "computed  search.dips") || !strings.Contains(out, "signal1.period") {
		t.Fatalf("run output lacks the step lines or the summary:\n%s", out)
	}
	// The injected period, 2.5 d, within the duration/baseline scale (0.1 d / 20 d × 2.5 d).
	if p := figure(t, out, "signal1.period"); math.Abs(p-2.5) > 0.0125 {
		t.Errorf("the 2.5-day transit was not found (period %v):\n%s", p, out)
	}
	ev, err := os.ReadFile(filepath.Join(f.dir, "events.jsonl"))
	if err != nil || strings.Count(string(ev), "\n") != 3 || !strings.Contains(string(ev), `"status":"computed"`) ||
		!strings.Contains(string(ev), `"step":"search.dips"`) || strings.Contains(string(ev), `"address"`) {
		t.Fatalf("event log: %v\n%s", err, ev)
	}
	code, out, _ = f.dipline("run")
	if code != 0 || strings.Count(out, "reused") != 3 || strings.Contains(out, "computed") {
		t.Fatalf("second run did not reuse every step (exit %d):\n%s", code, out)
	}
}

func TestTypoGivesItsLine(t *testing.T) {
	f := newFolder(t)
	f.write("analysis.hcl", strings.Replace(workflowText, "detrend.quiet", "detrend.quite", 1))
	code, _, errs := f.dipline("check")
	if code != exitBadUser {
		t.Fatalf("exit %d, want %d", code, exitBadUser)
	}
	// The file and line, the message with a suggestion, the line itself and a caret line.
	want := `analysis.hcl line 16, column 17: search "dips" reads detrend.quite for light_curve, and there is no detrend step "quite". Did you mean detrend.quiet?` + "\n" +
		"   16 |   light_curve = detrend.quite\n" +
		"      |   "
	if !strings.Contains(errs, want) || !strings.Contains(errs, "^^^^^^^^^^^^^\n") {
		t.Fatalf("diagnostic does not give the line and a suggestion:\n%s", errs)
	}
}

func TestBadDataNamesTheRowAndWritesNothing(t *testing.T) {
	f := newFolder(t)
	lines := strings.Split(lightCurveCSV(), "\n")
	lines[6] = "0.083333,abc,0.0003" // file line 7
	f.write("lc.csv", strings.Join(lines, "\n"))
	code, _, errs := f.dipline("run")
	if code != exitBadUser {
		t.Fatalf("exit %d, want %d; stderr:\n%s", code, exitBadUser, errs)
	}
	if !strings.Contains(errs, "lc.csv:7") {
		t.Fatalf("error does not name file and line:\n%s", errs)
	}
	code, out, _ := f.dipline("store", "stats")
	if code != 0 || !strings.Contains(out, "results    0 ") {
		t.Fatalf("a failed run left results behind (exit %d):\n%s", code, out)
	}
}

func TestTraceReachesTheDataFile(t *testing.T) {
	f := newFolder(t)
	if code, out, errs := f.dipline("run"); code != 0 {
		t.Fatalf("run: %s %s", out, errs)
	}
	code, out, errs := f.dipline("trace", "search.dips/signal1.period")
	if code != 0 {
		t.Fatalf("trace: exit %d %s", code, errs)
	}
	sum := sha256.Sum256([]byte(lightCurveCSV()))
	if p := figure(t, out, "search.dips/signal1.period ="); math.Abs(p-2.5) > 0.0125 {
		t.Errorf("traced period %v, want 2.5", p)
	}
	for _, want := range []string{"detrend.quiet", "photometry.raw",
		"file       lc.csv  sha256 " + hex.EncodeToString(sum[:]), "by dipline "} {
		if !strings.Contains(out, want) {
			t.Errorf("trace output lacks %q:\n%s", want, out)
		}
	}
}

func TestPendingAfterADetrendChange(t *testing.T) {
	f := newFolder(t)
	f.dipline("run")
	f.write("analysis.hcl", strings.Replace(workflowText, `span        = "0.5 d"`, `span        = "0.6 d"`, 1))
	code, out, _ := f.dipline("pending")
	if code != 0 {
		t.Fatalf("pending: exit %d", code)
	}
	for _, want := range []string{"stored      photometry.raw", "to compute  detrend.quiet", "because span changed: 0.5 d → 0.6 d",
		"depends     search.dips", "because it reads the result of detrend.quiet, which is to compute"} {
		if !strings.Contains(out, want) {
			t.Errorf("pending output lacks %q:\n%s", want, out)
		}
	}
	code, out, _ = f.dipline("run")
	if code != 0 || !strings.Contains(out, "reused    photometry.raw") || !strings.Contains(out, "computed  detrend.quiet") {
		t.Fatalf("run after the change:\n%s", out)
	}
}

func TestStoreVerifyPinAndPrune(t *testing.T) {
	f := newFolder(t)
	f.dipline("run")
	if code, out, _ := f.dipline("store", "verify"); code != 0 || !strings.Contains(out, "every result matches its key") {
		t.Fatalf("verify: exit %d\n%s", code, out)
	}
	if code, out, _ := f.dipline("pin", "latest", "--note", "paper draft"); code != 0 || !strings.Contains(out, "pinned run") {
		t.Fatalf("pin: exit %d\n%s", code, out)
	}
	f.write("analysis.hcl", strings.Replace(workflowText, `span        = "0.5 d"`, `span        = "0.7 d"`, 1))
	f.dipline("run")
	code, out, _ := f.dipline("store", "prune", "--spare", "1")
	if code != 0 || !strings.Contains(out, "dropped 0 runs") {
		t.Fatalf("prune dropped a pinned run (exit %d):\n%s", code, out)
	}
	code, out, _ = f.dipline("runs")
	if code != 0 || strings.Count(out, "\n") != 2 || !strings.Contains(out, "[pinned: paper draft]") {
		t.Fatalf("runs after prune:\n%s", out)
	}
}

func TestRunsOnAFreshStoreSaysItHoldsNone(t *testing.T) {
	f := newFolder(t)
	code, out, errs := f.dipline("runs")
	if code != 0 || out != "the store holds no runs yet; dipline run makes the first\n" {
		t.Errorf("runs on a fresh folder: exit %d, %q %q", code, out, errs)
	}
}

// The commands that only read leave a fresh workflow's folder as they found it: no store
// folder, no results folder.
func TestLookingMakesNoFolders(t *testing.T) {
	f := newFolder(t)
	for _, args := range [][]string{{"check"}, {"pending"}, {"runs"}, {"store", "stats"}, {"diff"}, {"trace", "search.dips"}} {
		f.dipline(args...)
		entries, err := os.ReadDir(f.dir)
		if err != nil {
			t.Fatal(err)
		}
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		if strings.Join(names, " ") != "analysis.hcl lc.csv" {
			t.Errorf("after dipline %s the folder holds %v", strings.Join(args, " "), names)
		}
	}
	if code, _, errs := f.dipline("run", "--quiet"); code != 0 {
		t.Fatalf("run after looking: exit %d\n%s", code, errs)
	}
	for _, made := range []string{".dipline/store.db", "results/results.json"} {
		if _, err := os.Stat(filepath.Join(f.dir, made)); err != nil {
			t.Errorf("a run made no %s: %v", made, err)
		}
	}
}

func TestUnknownCommand(t *testing.T) {
	var out, errb bytes.Buffer
	if code := realMain([]string{"flatten"}, &out, &errb); code != exitBadUser {
		t.Fatalf("exit %d", code)
	}
}

// figure reads the number printed after a label.
func figure(t *testing.T, out, label string) float64 {
	t.Helper()
	i := strings.Index(out, label)
	if i < 0 {
		t.Fatalf("no %q in:\n%s", label, out)
	}
	var v float64
	if _, err := fmt.Sscan(out[i+len(label):], &v); err != nil {
		t.Fatalf("no number after %q: %v", label, err)
	}
	return v
}

func TestOneFluxValueChangedRecomputesItsDependants(t *testing.T) {
	f := newFolder(t)
	f.dipline("run")
	now := time.Now().Add(time.Minute)
	os.Chtimes(filepath.Join(f.dir, "lc.csv"), now, now)
	if code, out, _ := f.dipline("run"); code != 0 || strings.Count(out, "reused") != 3 {
		t.Fatalf("touching the data file recomputed something:\n%s", out)
	}
	lines := strings.Split(lightCurveCSV(), "\n")
	fields := strings.Split(lines[100], ",")
	fields[1] = "0.9900000" // one flux value, far off
	lines[100] = strings.Join(fields, ",")
	f.write("lc.csv", strings.Join(lines, "\n"))
	code, out, _ := f.dipline("run")
	if code != 0 || strings.Count(out, "computed") < 2 || !strings.Contains(out, "computed  photometry.raw") {
		t.Fatalf("a changed flux value did not recompute what depends on it:\n%s", out)
	}
}

func TestStarterWorkflowRunsOnAFITSFile(t *testing.T) {
	// The starter written for a FITS file written by cfitsio (testdata/fits) checks and runs
	// without edits: every other setting is derived from the data.
	f := &folder{t: t, dir: t.TempDir()}
	b, err := os.ReadFile("../../testdata/fits/lightcurve.fits")
	if err != nil {
		t.Fatal(err)
	}
	f.write("lc.fits", string(b))
	if code, out, errs := f.dipline("starter", "lc.fits"); code != 0 {
		t.Fatalf("starter: exit %d\n%s%s", code, out, errs)
	}
	if code, out, errs := f.dipline("run"); code != 0 || !strings.Contains(out, "computed  search.dips") {
		t.Fatalf("the starter workflow did not run: exit %d\n%s%s", code, out, errs)
	}
	if code, _, errs := f.dipline("starter", "lc.fits"); code != exitBadUser || !strings.Contains(errs, "exists") {
		t.Fatalf("starter overwrote a workflow: exit %d %s", code, errs)
	}
}

// A star read from a catalogue row: revising that row re-runs the star alone, the diff
// names the column with its old and new value and how far the radius moved, and --set
// tries a value without editing the file.
const starFlow = `analysis "cli-star" {
  seed = 2
}

catalogue "near" {
  file = "stars.csv"
}

star "host" {
  method = "cool-dwarf"
  teff   = "3400 ± 70 K"
  row    = catalogue.near["FW-0001"]
}
`

// Invented catalogue rows; FW-0001 has M_Ks ≈ 6.0, inside the Mann et al. (2015) range.
const starsCSV = "id,parallax,parallax_err,ks,ks_err\nFW-0001,40.00,0.05,8.000,0.020\nFW-0002,25.0,0.1,9.5,0.02\n"

func TestCatalogueRevisionAndDiff(t *testing.T) {
	f := newFolder(t)
	f.write("analysis.hcl", starFlow)
	f.write("stars.csv", starsCSV)
	if code, out, errs := f.dipline("run"); code != 0 {
		t.Fatalf("run: exit %d\n%s\n%s", code, out, errs)
	}
	// Reformatting a number and editing another star's row change nothing here.
	f.write("stars.csv", strings.Replace(strings.Replace(starsCSV, "40.00", "40.0", 1), "25.0,", "26.0,", 1))
	if code, out, _ := f.dipline("run"); code != 0 || !strings.Contains(out, "reused    star.host") {
		t.Fatalf("an edit elsewhere in the catalogue re-ran the star (exit %d):\n%s", code, out)
	}
	f.write("stars.csv", strings.Replace(starsCSV, "40.00,0.05,8.000", "39.00,0.05,8.000", 1))
	if code, out, _ := f.dipline("run"); code != 0 || !strings.Contains(out, "computed  star.host") {
		t.Fatalf("a new parallax did not re-run the star (exit %d):\n%s", code, out)
	}
	code, out, errs := f.dipline("diff")
	if code != 0 {
		t.Fatalf("diff: exit %d\n%s", code, errs)
	}
	// A closer star is brighter at fixed Ks: the radius grows. 40 → 39 mas moves M_Ks by
	// 5 log10(40/39) = 0.055 mag, about 1.9 % in radius (Mann et al. 2015 slope near
	// M_Ks = 6), which is about 0.6 of the relation's 2.9 % scatter.
	for _, want := range []string{"new result  star.host", `column parallax: 40 → 39`, "radius", "moved 0."} {
		if !strings.Contains(out, want) {
			t.Errorf("diff output lacks %q:\n%s", want, out)
		}
	}
	code, out, _ = f.dipline("run", "--set", `catalogue.near["FW-0001"].parallax=41`)
	if code != 0 || !strings.Contains(out, "computed  star.host") {
		t.Fatalf("--set on a catalogue value (exit %d):\n%s", code, out)
	}
	code, out, _ = f.dipline("trace", "star.host")
	if code != 0 || !strings.Contains(out, "set on the command line: parallax=41") {
		t.Errorf("trace does not show the override (exit %d):\n%s", code, out)
	}
}
