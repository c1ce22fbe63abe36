package workflow

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"dipline/cache"
)

// project is a workflow folder in a temporary directory.
type project struct {
	t   *testing.T
	dir string
}

func newProject(t *testing.T, files map[string]string) *project {
	t.Helper()
	p := &project{t: t, dir: t.TempDir()}
	for name, body := range files {
		p.write(name, body)
	}
	return p
}

func (p *project) write(name, body string) {
	p.t.Helper()
	path := filepath.Join(p.dir, name)
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		p.t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
		p.t.Fatal(err)
	}
}

func (p *project) load(overrides ...Override) (*Workflow, error) {
	w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), toyRegistry(), overrides)
	if diags.HasErrors() {
		return nil, diags
	}
	return w, nil
}

// run loads and runs the workflow and returns each step's status by address.
func (p *project) run(overrides ...Override) (map[string]string, *Report) {
	p.t.Helper()
	w, err := p.load(overrides...)
	if err != nil {
		p.t.Fatal(err)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		p.t.Fatal(err)
	}
	calls.reset()
	rep, err := Run(context.Background(), w, store, Options{Workers: 2})
	if err != nil {
		p.t.Fatal(err)
	}
	st := map[string]string{}
	for _, o := range rep.Outcomes {
		st[o.Step.Addr] = o.Status
	}
	return st, rep
}

const chain = `
analysis "toy" {
  seed = 7
}

source "a" {
  files = ["data/a.txt"]
}

source "b" {
  files = ["data/b.txt"]
  scale = 2
}

floor "fa" {
  input = source.a
}

combine "sum" {
  inputs = [floor.fa, source.b]
  offset = "12 h"
}
`

func chainProject(t *testing.T) *project {
	return newProject(t, map[string]string{
		"analysis.hcl": chain,
		"data/a.txt":   "1.25\n2.5\n",
		"data/b.txt":   "10\n",
	})
}

func valueOf(t *testing.T, rep *Report, addr string) float64 {
	t.Helper()
	for _, o := range rep.Outcomes {
		if o.Step.Addr == addr {
			if e, ok := o.Artifact.(toyEstimate); ok {
				return e.value
			}
			return float64(o.Artifact.(toyNum))
		}
	}
	t.Fatalf("no step %s", addr)
	return 0
}

func TestRunComputesThenReuses(t *testing.T) {
	p := chainProject(t)
	st, rep := p.run()
	for addr, s := range st {
		if s != StatusComputed {
			t.Errorf("first run: %s %s, want computed", addr, s)
		}
	}
	// floor(3.75) + 2·10 + 0.5 d = 23.5
	if got := valueOf(t, rep, "combine.sum"); got != 23.5 {
		t.Fatalf("combine.sum = %v, want 23.5", got)
	}
	st, _ = p.run()
	for addr, s := range st {
		if s != StatusReused {
			t.Errorf("second run: %s %s, want reused", addr, s)
		}
	}
	if n := calls.reset(); len(n) != 0 {
		t.Errorf("second run called Run: %v", n)
	}
	b, err := os.ReadFile(filepath.Join(p.dir, "results", "results.json"))
	if err != nil || !strings.Contains(string(b), `"schema": "dipline-results/4"`) || !strings.Contains(string(b), `"step_key"`) {
		t.Fatalf("results file missing or incomplete: %v\n%s", err, b)
	}
}

func TestKeysIgnoreFormattingOrderCommentsAndDefaults(t *testing.T) {
	p := chainProject(t)
	before, _ := p.run()
	_ = before
	// Reorder blocks, reformat, comment, write the default scale out, and spell 12 h as 0.5 d.
	p.write("analysis.hcl", `
# the same analysis, rearranged
combine "sum" {
  offset = "0.5 d"     # same quantity
  inputs = [ floor.fa, source.b ]
}
source "b" {
  scale = 2.0
  files = "data/b.txt"
}
floor "fa" { input = source.a }
source "a" {
  files = ["data/a.txt"]
  scale = 1 // the default, written out
}
analysis "toy" { seed = 7 }
`)
	st, _ := p.run()
	for addr, s := range st {
		if s != StatusReused {
			t.Errorf("%s %s after a cosmetic edit, want reused", addr, s)
		}
	}
}

func TestChangeRecomputesOnlyDependants(t *testing.T) {
	p := chainProject(t)
	p.run()
	p.write("analysis.hcl", strings.Replace(chain, "scale = 2", "scale = 3", 1))
	st, rep := p.run()
	want := map[string]string{"source.a": StatusReused, "floor.fa": StatusReused, "source.b": StatusComputed, "combine.sum": StatusComputed}
	for addr, s := range want {
		if st[addr] != s {
			t.Errorf("%s %s, want %s", addr, st[addr], s)
		}
	}
	if got := valueOf(t, rep, "combine.sum"); got != 33.5 {
		t.Errorf("combine.sum = %v, want 33.5", got)
	}
}

func TestEqualUpstreamResultReusesDependants(t *testing.T) {
	p := chainProject(t)
	p.run()
	// 1.25+2.5 = 3.75 → 1.5+2.5 = 4.0: source.a changes, floor gives 3 → 4? keep floor equal:
	p.write("data/a.txt", "1.5\n2.4\n") // 3.9, floor 3 as before
	st, _ := p.run()
	want := map[string]string{"source.a": StatusComputed, "floor.fa": StatusComputed, "source.b": StatusReused, "combine.sum": StatusReused}
	for addr, s := range want {
		if st[addr] != s {
			t.Errorf("%s %s, want %s", addr, st[addr], s)
		}
	}
}

func TestTouchingAFileRecomputesNothing(t *testing.T) {
	p := chainProject(t)
	p.run()
	later := time.Now().Add(time.Hour)
	if err := os.Chtimes(filepath.Join(p.dir, "data", "a.txt"), later, later); err != nil {
		t.Fatal(err)
	}
	st, _ := p.run()
	for addr, s := range st {
		if s != StatusReused {
			t.Errorf("%s %s after touching a file, want reused", addr, s)
		}
	}
}

func TestCorruptResultIsRecomputed(t *testing.T) {
	p := chainProject(t)
	_, rep := p.run()
	w, _ := p.load()
	var rk cache.ResultKey
	for _, o := range rep.Outcomes {
		if o.Step.Addr == "source.b" {
			rk = o.ResultKey
		}
	}
	if err := cache.CorruptForTest(w.StorePath, rk); err != nil {
		t.Fatal(err)
	}
	var warnings []string
	store, _ := cache.Open(w.StorePath)
	rep2, err := Run(context.Background(), w, store, Options{OnEvent: func(ev Event) {
		if ev.Warning != "" {
			warnings = append(warnings, ev.Step+": "+ev.Warning)
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	if len(warnings) != 1 || !strings.Contains(warnings[0], "source.b") || !strings.Contains(warnings[0], "checksum") {
		t.Fatalf("warnings %q, want one about source.b's checksum", warnings)
	}
	if got := valueOf(t, rep2, "combine.sum"); got != 23.5 {
		t.Fatalf("after repair combine.sum = %v", got)
	}
	if _, err := store.Get(rk); err != nil {
		t.Fatalf("result not repaired: %v", err)
	}
}

func TestSeedOnlyInRandomSteps(t *testing.T) {
	p := newProject(t, map[string]string{
		"analysis.hcl": "analysis \"toy\" { seed = 1 }\nsource \"a\" { files = \"x.txt\" }\nnoisy \"n\" { input = source.a }\n",
		"x.txt":        "1\n",
	})
	_, rep1 := p.run()
	p.write("analysis.hcl", "analysis \"toy\" { seed = 2 }\nsource \"a\" { files = \"x.txt\" }\nnoisy \"n\" { input = source.a }\n")
	st, rep2 := p.run()
	if st["source.a"] != StatusReused || st["noisy.n"] != StatusComputed {
		t.Fatalf("after a seed change: %v; want source reused and noisy recomputed", st)
	}
	if valueOf(t, rep1, "noisy.n") == valueOf(t, rep2, "noisy.n") {
		t.Error("a new seed gave the same draw")
	}
}

func TestWorkerCountDoesNotChangeKeys(t *testing.T) {
	p := chainProject(t)
	w, _ := p.load()
	keys := map[int][]string{}
	for _, n := range []int{1, 3} {
		store, _ := cache.Open(filepath.Join(t.TempDir(), "s.db"))
		rep, err := Run(context.Background(), w, store, Options{Workers: n})
		if err != nil {
			t.Fatal(err)
		}
		for _, o := range rep.Outcomes {
			keys[n] = append(keys[n], o.StepKey.String()+o.ResultKey.String())
		}
	}
	if strings.Join(keys[1], ",") != strings.Join(keys[3], ",") {
		t.Fatal("keys differ between 1 and 3 workers")
	}
}

func TestOverrideIsRecorded(t *testing.T) {
	p := chainProject(t)
	p.run()
	o, err := ParseOverride("source.b.scale=5")
	if err != nil {
		t.Fatal(err)
	}
	st, rep := p.run(o)
	if st["source.b"] != StatusComputed || st["source.a"] != StatusReused {
		t.Fatalf("override statuses %v", st)
	}
	if rep.Run.Overrides["source.b.scale"] != "5" {
		t.Fatalf("run record overrides %v", rep.Run.Overrides)
	}
	if got := valueOf(t, rep, "combine.sum"); got != 53.5 {
		t.Fatalf("combine.sum = %v with scale 5, want 53.5", got)
	}
}

// A step that takes another's settings gets that step's configuration, and its key follows
// those settings but not what that step reads: new data for the lender leave the borrower
// reused, a new scale computes it again.
func TestAStepTakesAnothersSettingsNotItsResult(t *testing.T) {
	p := chainProject(t)
	p.write("analysis.hcl", chain+"\nmimic \"m\" {\n  input = source.a\n  like  = source.b\n}\n")
	st, rep := p.run()
	if st["mimic.m"] != StatusComputed || valueOf(t, rep, "mimic.m") != 7.5 { // 3.75 × source.b's scale 2
		t.Fatalf("first run: mimic.m %s, %v; want computed, 7.5", st["mimic.m"], valueOf(t, rep, "mimic.m"))
	}
	w, err := p.load()
	if err != nil {
		t.Fatal(err)
	}
	if got := w.Step("mimic.m").Rendered()["like"]; !strings.HasPrefix(got, "source.b {") || !strings.Contains(got, "scale = 2") {
		t.Errorf("mimic.m's record shows like as %q, want source.b with its settings", got)
	}
	p.write("data/b.txt", "11\n")
	st, _ = p.run()
	if st["source.b"] != StatusComputed || st["mimic.m"] != StatusReused {
		t.Errorf("new data for source.b: source.b %s, mimic.m %s; want computed, reused", st["source.b"], st["mimic.m"])
	}
	p.write("analysis.hcl", strings.Replace(chain, "scale = 2", "scale = 3", 1)+"\nmimic \"m\" {\n  input = source.a\n  like  = source.b\n}\n")
	st, rep = p.run()
	if st["mimic.m"] != StatusComputed || valueOf(t, rep, "mimic.m") != 11.25 {
		t.Errorf("a new scale: mimic.m %s, %v; want computed, 11.25", st["mimic.m"], valueOf(t, rep, "mimic.m"))
	}
}

// A step's finished pieces outlive its result: asking for more pieces computes only the
// new ones and gives what a fresh run gives; a setting every piece depends on computes
// them all again.
func TestMorePiecesReuseTheFinishedOnes(t *testing.T) {
	p := newProject(t, map[string]string{"analysis.hcl": "analysis \"toy\" {\n  seed = 1\n}\ntally \"t\" {\n  count = 3\n}\n"})
	_, rep := p.run()
	if n := calls.reset()["tally-piece"]; n != 3 || valueOf(t, rep, "tally.t") != 3 {
		t.Fatalf("first run: %d pieces computed, sum %v; want 3 and 0+1+2", n, valueOf(t, rep, "tally.t"))
	}
	p.write("analysis.hcl", "analysis \"toy\" {\n  seed = 1\n}\ntally \"t\" {\n  count = 5\n}\n")
	st, rep := p.run()
	if n := calls.reset()["tally-piece"]; n != 2 || st["tally.t"] != StatusComputed || valueOf(t, rep, "tally.t") != 10 {
		t.Errorf("five pieces: %d computed, step %s, sum %v; want 2, computed, 10", n, st["tally.t"], valueOf(t, rep, "tally.t"))
	}
	p.write("analysis.hcl", "analysis \"toy\" {\n  seed = 1\n}\ntally \"t\" {\n  count = 5\n  scale = 2\n}\n")
	_, rep = p.run()
	if n := calls.reset()["tally-piece"]; n != 5 || valueOf(t, rep, "tally.t") != 20 {
		t.Errorf("a new scale: %d pieces computed, sum %v; want 5 and 20", n, valueOf(t, rep, "tally.t"))
	}
}

func TestAnUnquotedQuantityInASetIsAskedForInQuotes(t *testing.T) {
	// A shell strips the quotes a user forgets: -7 g/cm3 would then read as arithmetic.
	_, err := ParseOverride("search.dips.star_density=-7 g/cm3")
	if err == nil || !strings.Contains(err.Error(), `-7 g/cm3 is a quantity with its unit`) ||
		!strings.Contains(err.Error(), `--set 'search.dips.star_density="-7 g/cm3"'`) {
		t.Errorf("error %v; want the quoted form offered", err)
	}
	for _, v := range []string{`"7 g/cm3"`, "5", "true", `["a.csv", "b.csv"]`} {
		if _, err := ParseOverride("search.dips.x=" + v); err != nil {
			t.Errorf("%s refused: %v", v, err)
		}
	}
}
