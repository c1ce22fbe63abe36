package workflow

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"dipline/cache"
	"dipline/steps"
	"dipline/steps/kinds"
)

// The store's bucket names, as documented in cache/store.go; the tests below damage a
// store by hand, as a careless tool or a bad merge might.
var (
	boltSteps      = []byte("steps")
	boltResults    = []byte("results")
	boltProvenance = []byte("provenance")
)

// lightCurveFlow reads an invented light curve, detrends it twice with different windows
// and searches the narrower detrend: photometry → detrend → search, with a second detrend
// whose result is valid but belongs to another step.
const lightCurveFlow = `
analysis "recompute" {
  seed = 11
}

photometry "survey" {
  files     = ["data/lc.csv"]
  time_zero = 2460000
}

detrend "narrow" {
  light_curve = photometry.survey
  span        = "0.5 d"
}

detrend "wide" {
  light_curve = photometry.survey
  span        = "1.5 d"
}

search "dips" {
  light_curve = detrend.narrow
  periods     = ["1 d", "6 d"]
}
`

// inventedLightCurve writes an invented light curve: 20 days at a 30-minute cadence, a
// 2.5-day spot wave of 0.5 %, box-shaped dips of 1,500 ppm lasting 2 h every 3.3 days, and
// white noise of 400 ppm from a seeded stream. Every value is made up.
func inventedLightCurve(seed uint64) string {
	r := rand.New(rand.NewPCG(seed, 0))
	var b strings.Builder
	b.WriteString("# invented for the recompute tests\nBJD_TDB,Flux,Flux_Err\n")
	for i := 0; i < 960; i++ {
		t := 100 + float64(i)/48
		f := 1 + 0.005*math.Sin(2*math.Pi*t/2.5)
		if math.Mod(t-100.7, 3.3) < 2.0/24 {
			f -= 0.0015
		}
		f += 0.0004 * r.NormFloat64()
		fmt.Fprintf(&b, "%.6f,%.7f,0.0004000\n", t, f)
	}
	return b.String()
}

// stored is a project that has run once: its keys by address, as the run gave them.
type stored struct {
	*project
	reg    steps.Registry
	store  *cache.Store
	steps  map[string]cache.StepKey
	result map[string]cache.ResultKey
}

func realRegistry(t *testing.T) steps.Registry {
	t.Helper()
	reg, err := kinds.Registry()
	if err != nil {
		t.Fatal(err)
	}
	return reg
}

// runProject writes the files, runs the workflow once with reg and the overrides, and
// returns it with its keys.
func runProject(t *testing.T, reg steps.Registry, files map[string]string, overrides ...Override) *stored {
	t.Helper()
	p := &stored{project: newProject(t, files), reg: reg, steps: map[string]cache.StepKey{}, result: map[string]cache.ResultKey{}}
	w := p.reload(overrides...)
	store, err := cache.Open(w.StorePath)
	if err != nil {
		t.Fatal(err)
	}
	p.store = store
	rep, err := Run(context.Background(), w, store, Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range rep.Outcomes {
		p.steps[o.Step.Addr], p.result[o.Step.Addr] = o.StepKey, o.ResultKey
	}
	return p
}

func (p *stored) reload(overrides ...Override) *Workflow {
	p.t.Helper()
	w, diags := LoadWith(filepath.Join(p.dir, "analysis.hcl"), p.reg, overrides)
	if diags.HasErrors() {
		p.t.Fatal(diags)
	}
	return w
}

// recompute loads the workflow as it stands now and recomputes the latest run.
func (p *stored) recompute(opt RecomputeOptions, overrides ...Override) *RecomputeReport {
	p.t.Helper()
	rep, err := Recompute(context.Background(), p.reload(overrides...), p.store, opt)
	if err != nil {
		p.t.Fatal(err)
	}
	return rep
}

// surgery changes the store's database file by hand.
func (p *stored) surgery(fn func(tx *bolt.Tx) error) {
	p.t.Helper()
	db, err := bolt.Open(p.store.Path(), 0o644, &bolt.Options{Timeout: time.Second})
	if err != nil {
		p.t.Fatal(err)
	}
	defer db.Close()
	if err := db.Update(fn); err != nil {
		p.t.Fatal(err)
	}
}

// pointAt makes the store map addr's step key to result rk.
func (p *stored) pointAt(addr string, rk cache.ResultKey) {
	sk := p.steps[addr]
	p.surgery(func(tx *bolt.Tx) error { return tx.Bucket(boltSteps).Put(sk[:], rk[:]) })
}

// editProvenance rewrites addr's provenance record.
func (p *stored) editProvenance(addr string, edit func(*Provenance)) {
	sk := p.steps[addr]
	p.surgery(func(tx *bolt.Tx) error {
		b := tx.Bucket(boltProvenance)
		var prov Provenance
		if err := json.Unmarshal(b.Get(sk[:]), &prov); err != nil {
			return err
		}
		edit(&prov)
		return b.Put(sk[:], marshal(prov))
	})
}

func stepOf(t *testing.T, rep *RecomputeReport, addr string) RecomputedStep {
	t.Helper()
	for _, s := range rep.Steps {
		if s.Step == addr {
			return s
		}
	}
	t.Fatalf("the report has no step %s: %+v", addr, rep.Steps)
	return RecomputedStep{}
}

// withoutTimes drops the seconds, the only part of a report that may differ between two
// checks of one store.
func withoutTimes(list []RecomputedStep) []RecomputedStep {
	out := append([]RecomputedStep(nil), list...)
	for i := range out {
		out[i].Seconds = 0
	}
	return out
}

func fileDigest(t *testing.T, path string) [32]byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sha256.Sum256(b)
}

func lightCurveProject(t *testing.T) *stored {
	return runProject(t, realRegistry(t), map[string]string{"analysis.hcl": lightCurveFlow, "data/lc.csv": inventedLightCurve(3)})
}

func TestRecomputingAFreshStoreGivesTheSameBitsOnAnyWorkerCount(t *testing.T) {
	p := lightCurveProject(t)
	before := fileDigest(t, p.store.Path())
	one := p.recompute(RecomputeOptions{Workers: 1})
	three := p.recompute(RecomputeOptions{Workers: 3})

	t.Run("every stored step gives its stored result key again", func(t *testing.T) {
		if one.Stored != 4 || len(one.Steps) != 4 {
			t.Fatalf("stored %d, checked %d steps; want 4 and 4", one.Stored, len(one.Steps))
		}
		for _, s := range one.Steps {
			if s.State != RecomputeSame || s.Recomputed != p.result[s.Step] || s.Stored != p.result[s.Step] {
				t.Errorf("%s: %s (%s); stored %s, recomputed %s, the run gave %s", s.Step, s.State, s.Why,
					s.Stored.Short(), s.Recomputed.Short(), p.result[s.Step].Short())
			}
		}
		if !one.OK() || len(one.Problems) > 0 || one.Runs != 1 || one.Mappings != 4 {
			t.Errorf("OK %v, problems %q, %d runs and %d mappings checked; want true, none, 1 and 4",
				one.OK(), one.Problems, one.Runs, one.Mappings)
		}
	})
	t.Run("one worker and three give the same report", func(t *testing.T) {
		if !reflect.DeepEqual(withoutTimes(one.Steps), withoutTimes(three.Steps)) || !reflect.DeepEqual(one.Problems, three.Problems) {
			t.Errorf("1 worker:\n%+v\n3 workers:\n%+v", one.Steps, three.Steps)
		}
	})
	t.Run("recomputing writes nothing to the store", func(t *testing.T) {
		if fileDigest(t, p.store.Path()) != before {
			t.Error("the store's file changed")
		}
	})
}

func TestRecomputeCatchesAStepKeyPointedAtAnotherResult(t *testing.T) {
	t.Run("a mapping its provenance does not name is caught before anything runs", func(t *testing.T) {
		p := lightCurveProject(t)
		narrow, wide := p.result["detrend.narrow"], p.result["detrend.wide"]
		p.pointAt("detrend.narrow", wide)
		// Re-hashing alone cannot see it: both results are intact.
		if v, err := p.store.Verify(); err != nil || !v.OK() {
			t.Fatalf("the store's own verify: %+v, %v; want it to pass (the damage is not in the bytes)", v, err)
		}
		var order []string
		rep := p.recompute(RecomputeOptions{Workers: 2, OnStep: func(s RecomputedStep) { order = append(order, s.Step) }})
		s := stepOf(t, rep, "detrend.narrow")
		if s.State != RecomputeDisagrees || s.Stored != wide || s.Named != narrow || !s.Recomputed.IsZero() {
			t.Fatalf("detrend.narrow: %s, stored %s, named %s, recomputed %s; want %q, %s, %s and none",
				s.State, s.Stored.Short(), s.Named.Short(), s.Recomputed.Short(), RecomputeDisagrees, wide.Short(), narrow.Short())
		}
		for _, key := range []string{wide.String(), narrow.String(), p.steps["detrend.narrow"].String()} {
			if !strings.Contains(s.Why, key) {
				t.Errorf("the finding does not name %s: %s", key, s.Why)
			}
		}
		if len(order) == 0 || order[0] != "detrend.narrow" {
			t.Errorf("steps reported in the order %v; want detrend.narrow first, before any step ran", order)
		}
		if rep.OK() || len(rep.Problems) > 0 {
			t.Errorf("OK %v, store problems %q; want false and the finding only once, on its step", rep.OK(), rep.Problems)
		}
		for _, addr := range []string{"photometry.survey", "detrend.wide", "search.dips"} {
			if got := stepOf(t, rep, addr).State; got != RecomputeSame {
				t.Errorf("%s: %s, want %s", addr, got, RecomputeSame)
			}
		}
	})
	t.Run("a mapping and its provenance pointed together are caught by running the step again", func(t *testing.T) {
		p := lightCurveProject(t)
		narrow, wide := p.result["detrend.narrow"], p.result["detrend.wide"]
		p.pointAt("detrend.narrow", wide)
		p.editProvenance("detrend.narrow", func(prov *Provenance) { prov.ResultKey = wide.String() })
		rep := p.recompute(RecomputeOptions{})
		s := stepOf(t, rep, "detrend.narrow")
		if s.State != RecomputeDifferent || s.Stored != wide || s.Recomputed != narrow {
			t.Fatalf("detrend.narrow: %s (%s); want %q, stored %s, recomputed %s", s.State, s.Why, RecomputeDifferent, wide.Short(), narrow.Short())
		}
		if !strings.Contains(s.Why, wide.String()) || !strings.Contains(s.Why, narrow.String()) {
			t.Errorf("the finding does not name both result keys: %s", s.Why)
		}
		// The run record still names the result the step gave.
		if len(rep.Problems) != 1 || !strings.Contains(rep.Problems[0], "detrend.narrow gave result "+narrow.String()) {
			t.Errorf("store problems %q; want one, the run record against the provenance", rep.Problems)
		}
	})
}

func TestRecomputeSaysWhenADataFileChanged(t *testing.T) {
	p := lightCurveProject(t)
	lc := inventedLightCurve(3)
	i := strings.Index(lc, "\n100.500000,") + 1
	p.write("data/lc.csv", lc[:i]+"100.500000,0.9990000"+lc[strings.Index(lc[i:], ",0.0004000")+i:])
	rep := p.recompute(RecomputeOptions{})
	s := stepOf(t, rep, "photometry.survey")
	if s.State != RecomputeCannot || !strings.Contains(s.Why, "the file data/lc.csv changed") {
		t.Errorf("photometry.survey: %s (%s); want %q naming the file", s.State, s.Why, RecomputeCannot)
	}
	// The steps below it read stored results, not the file: they recompute.
	for _, addr := range []string{"detrend.narrow", "detrend.wide", "search.dips"} {
		if got := stepOf(t, rep, addr); got.State != RecomputeSame {
			t.Errorf("%s: %s (%s), want %s", addr, got.State, got.Why, RecomputeSame)
		}
	}
	if !rep.OK() {
		t.Errorf("a changed file is not a fault of the store, yet the report is not OK: %+v", rep)
	}
}

func TestASampleIsChosenByItsSeed(t *testing.T) {
	p := lightCurveProject(t)
	chosen := func(n int, seed uint64) []string {
		rep := p.recompute(RecomputeOptions{Sample: n, Seed: seed})
		var addrs []string
		for _, s := range rep.Steps {
			if s.State != RecomputeSame {
				t.Errorf("%s: %s (%s)", s.Step, s.State, s.Why)
			}
			addrs = append(addrs, s.Step)
		}
		if rep.Stored != 4 {
			t.Errorf("stored %d, want 4", rep.Stored)
		}
		return addrs
	}
	t.Run("a sample of two recomputes two steps, the same two for the same seed", func(t *testing.T) {
		a, b := chosen(2, 5), chosen(2, 5)
		if len(a) != 2 || !reflect.DeepEqual(a, b) {
			t.Errorf("seed 5 chose %v, then %v", a, b)
		}
	})
	t.Run("another seed can choose other steps", func(t *testing.T) {
		seen := map[string]bool{}
		for seed := uint64(0); seed < 12; seed++ {
			seen[strings.Join(chosen(2, seed), ",")] = true
		}
		if len(seen) < 2 {
			t.Errorf("12 seeds chose only %v", seen)
		}
	})
	t.Run("a sample as large as the run recomputes every step", func(t *testing.T) {
		if got := chosen(9, 1); len(got) != 4 {
			t.Errorf("chose %v, want all 4", got)
		}
	})
}

// drift gives a new number each time it runs, or fails when driftFails is set: a step that
// no longer gives what it gave.
type drift struct{ toyBase }

var (
	driftRuns  atomic.Int64
	driftFails atomic.Bool
)

func (drift) Name() string          { return "drift" }
func (drift) Doc() string           { return "gives a new number each time" }
func (drift) Check(*oneInput) error { return nil }
func (drift) Run(ctx context.Context, cfg *oneInput, in steps.Inputs, env steps.Env) (steps.Artifact, error) {
	if driftFails.Load() {
		return nil, errors.New("told to fail")
	}
	return toyNum(driftRuns.Add(1)), nil
}

const toyRecomputeFlow = `
analysis "toy" {
  seed = 7
}

catalogue "near" {
  file = "stars.csv"
  id   = "name"
}

source "a" {
  files = ["data/a.txt"]
  scale = 2
}

noisy "n" {
  input = source.a
}

lookup "host" {
  row       = catalogue.near["FW-1"]
  with_teff = true
}

drift "d" {
  input = source.a
}

combine "sum" {
  inputs = [noisy.n, source.a]
}
`

func toyRecomputeRegistry() steps.Registry {
	r, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[oneInput](noisy{}),
		steps.Define[lookupConfig](lookup{}), steps.Define[combineConfig](combine{}), steps.Define[oneInput](drift{}))
	if err != nil {
		panic(err)
	}
	return r
}

func TestRecomputeFromTheRecordedInputs(t *testing.T) {
	setScale := Override{Addr: "source.a", Attr: "scale", Value: "5"}
	cases := []struct {
		name string
		// set is the run's command-line settings; asRun loads the workflow with them for
		// the check.
		set   []Override
		asRun bool
		// change is made after the run.
		change func(p *stored)
		step   string
		state  string
		why    []string
	}{
		{name: "a catalogue row edited since recomputes from the values recorded",
			change: func(p *stored) { p.write("stars.csv", strings.Replace(stars, "FW-1,12.30,3300", "FW-1,14.1,3350", 1)) },
			step:   "lookup.host", state: RecomputeSame},
		{name: "a step that draws random numbers recomputes with its own seed",
			step: "noisy.n", state: RecomputeSame},
		{name: "a changed analysis seed cannot be recomputed, and says so",
			change: func(p *stored) { p.write("analysis.hcl", strings.Replace(toyRecomputeFlow, "seed = 7", "seed = 8", 1)) },
			step:   "noisy.n", state: RecomputeCannot, why: []string{"its seed changed", "is 8 now"}},
		{name: "a changed setting cannot be recomputed, and names it",
			change: func(p *stored) {
				p.write("analysis.hcl", strings.Replace(toyRecomputeFlow, "scale = 2", "scale = 3", 1))
			},
			step: "source.a", state: RecomputeCannot, why: []string{"scale changed: 2 → 3"}},
		{name: "a run made with a command-line setting recomputes when loaded with it",
			set: []Override{setScale}, asRun: true, step: "source.a", state: RecomputeSame},
		{name: "a run made with a command-line setting cannot be recomputed without it",
			set: []Override{setScale}, step: "source.a", state: RecomputeCannot, why: []string{"scale changed: 5 → 2"}},
		{name: "a step that no longer gives its stored result is caught",
			step: "drift.d", state: RecomputeDifferent, why: []string{"the store holds result", "gives result"}},
		{name: "a step that now fails is caught",
			change: func(*stored) { driftFails.Store(true) },
			step:   "drift.d", state: RecomputeFailed, why: []string{"told to fail"}},
		{name: "a step whose input result is gone cannot be recomputed, as damage to the store",
			change: func(p *stored) {
				rk := p.result["source.a"]
				p.surgery(func(tx *bolt.Tx) error { return tx.Bucket(boltResults).Delete(rk[:]) })
			},
			step: "noisy.n", state: RecomputeDamaged, why: []string{"its input source.a", "is missing"}},
		{name: "a step without its provenance record is damage to the store",
			change: func(p *stored) {
				sk := p.steps["combine.sum"]
				p.surgery(func(tx *bolt.Tx) error { return tx.Bucket(boltProvenance).Delete(sk[:]) })
			},
			step: "combine.sum", state: RecomputeDamaged, why: []string{"has no provenance record"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			driftFails.Store(false)
			defer driftFails.Store(false)
			p := runProject(t, toyRecomputeRegistry(), map[string]string{
				"analysis.hcl": toyRecomputeFlow, "stars.csv": stars, "data/a.txt": "1.25\n2.5\n"}, c.set...)
			if c.change != nil {
				c.change(p)
			}
			var load []Override
			if c.asRun {
				run, err := p.store.FindRun(cache.RefLatest)
				if err != nil {
					t.Fatal(err)
				}
				if load, err = RunOverrides(run); err != nil {
					t.Fatal(err)
				}
			}
			rep := p.recompute(RecomputeOptions{Workers: 2}, load...)
			if len(rep.Problems) > 0 {
				t.Errorf("the store check found %q; want nothing beyond the step's own finding", rep.Problems)
			}
			s := stepOf(t, rep, c.step)
			if s.State != c.state {
				t.Fatalf("%s: %s (%s), want %s", c.step, s.State, s.Why, c.state)
			}
			for _, w := range c.why {
				if !strings.Contains(s.Why, w) {
					t.Errorf("%s: %q does not say %q", c.step, s.Why, w)
				}
			}
		})
	}
}

func TestTheStoreCheckFindsWhatNoCheckedStepShows(t *testing.T) {
	p := runProject(t, toyRecomputeRegistry(), map[string]string{
		"analysis.hcl": toyRecomputeFlow, "stars.csv": stars, "data/a.txt": "1.25\n2.5\n"})
	sk := p.steps["combine.sum"]
	p.surgery(func(tx *bolt.Tx) error { return tx.Bucket(boltProvenance).Delete(sk[:]) })
	p.pointAt("lookup.host", p.result["source.a"])
	// A sample of one that is neither of the damaged steps.
	var rep *RecomputeReport
	for seed := uint64(0); ; seed++ {
		rep = p.recompute(RecomputeOptions{Sample: 1, Seed: seed})
		if a := rep.Steps[0].Step; a != "combine.sum" && a != "lookup.host" {
			break
		}
	}
	want := []string{
		"run " + rep.Run + ": combine.sum (step key " + sk.Short() + ") has no provenance record",
		"step key " + sk.String() + " maps to result " + p.result["combine.sum"].String() + " but has no provenance record",
		"the mapping disagrees with the provenance: step key " + p.steps["lookup.host"].String() + " (lookup.host) maps to result " +
			p.result["source.a"].String() + ", but its provenance names result " + p.result["lookup.host"].String(),
	}
	for _, w := range want {
		found := false
		for _, got := range rep.Problems {
			found = found || got == w
		}
		if !found {
			t.Errorf("the store problems lack\n  %s\nthey are:\n  %s", w, strings.Join(rep.Problems, "\n  "))
		}
	}
	if len(rep.Problems) != len(want) || rep.OK() {
		t.Errorf("%d problems, OK %v; want %d and false", len(rep.Problems), rep.OK(), len(want))
	}
}

func TestANamedRunIsRecomputedAsItRan(t *testing.T) {
	set := []Override{{Addr: "source.a", Attr: "scale", Value: "5"}}
	p := runProject(t, toyRecomputeRegistry(), map[string]string{
		"analysis.hcl": toyRecomputeFlow, "stars.csv": stars, "data/a.txt": "1.25\n2.5\n"}, set...)
	first, err := p.store.FindRun(cache.RefLatest)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), p.reload(), p.store, Options{}); err != nil {
		t.Fatal(err)
	}
	load, err := RunOverrides(first)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Recompute(context.Background(), p.reload(load...), p.store, RecomputeOptions{Run: first.ID})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Run != first.ID || rep.Runs != 2 {
		t.Errorf("recomputed run %s, %d runs checked; want %s and 2", rep.Run, rep.Runs, first.ID)
	}
	if s := stepOf(t, rep, "source.a"); s.State != RecomputeSame || s.StepKey != p.steps["source.a"] {
		t.Errorf("source.a: %s (%s), step key %s; want %s with the first run's step key %s",
			s.State, s.Why, s.StepKey.Short(), RecomputeSame, p.steps["source.a"].Short())
	}
}

func TestAnInterruptedCheckSaysSo(t *testing.T) {
	reg, err := steps.NewRegistry(steps.Define[sourceConfig](source{}), steps.Define[troubleConfig](trouble{}))
	if err != nil {
		t.Fatal(err)
	}
	troubleHook = func() {}
	defer func() { troubleHook = nil }()
	p := runProject(t, reg, map[string]string{"analysis.hcl": `
analysis "toy" {
  seed = 7
}

source "a" {
  files = ["data/a.txt"]
}

trouble "t" {
  mode  = "hook"
  after = [source.a]
}
`, "data/a.txt": "1\n"})
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	troubleHook = cancel // the step ends the check while it runs
	rep, err := Recompute(ctx, p.reload(), p.store, RecomputeOptions{Workers: 1})
	if !errors.Is(err, context.Canceled) || rep == nil {
		t.Fatalf("error %v, report %v; want the cancellation and the report so far", err, rep)
	}
	if s := stepOf(t, rep, "trouble.t"); s.State != RecomputeCannot || !strings.Contains(s.Why, "interrupted") {
		t.Errorf("trouble.t: %s (%s); want %q saying the check was interrupted", s.State, s.Why, RecomputeCannot)
	}
}

// The demo's files, from examples/fernwell.
var demoFiles = []string{"analysis.hcl", "data/fw3318.csv", "data/nearby_stars.csv", "data/fw3318_imaging.csv"}

// demoShortFit keeps the demo's fit short, as examples/fernwell/demo_test.go's shortFit.
var demoShortFit = []Override{{Addr: "fit.planets", Attr: "max_steps", Value: "300"}}

// runDemo copies the demo into a fresh folder, runs it once with the overrides, and loads
// it again as the command would: with the settings the latest run was made with. It
// returns the workflow, its store and the run's wall-clock time.
func runDemo(tb testing.TB, overrides ...Override) (*Workflow, *cache.Store, time.Duration) {
	tb.Helper()
	dir := tb.TempDir()
	for _, name := range demoFiles {
		b, err := os.ReadFile(filepath.Join("..", "examples", "fernwell", name))
		if err != nil {
			tb.Fatal(err)
		}
		os.MkdirAll(filepath.Dir(filepath.Join(dir, name)), 0o755)
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			tb.Fatal(err)
		}
	}
	reg, err := kinds.Registry()
	if err != nil {
		tb.Fatal(err)
	}
	w, diags := LoadWith(filepath.Join(dir, "analysis.hcl"), reg, overrides)
	if diags.HasErrors() {
		tb.Fatal(diags)
	}
	store, err := cache.Open(w.StorePath)
	if err != nil {
		tb.Fatal(err)
	}
	t0 := time.Now()
	if _, err := Run(context.Background(), w, store, Options{}); err != nil {
		tb.Fatal(err)
	}
	took := time.Since(t0)
	run, err := store.FindRun(cache.RefLatest)
	if err != nil {
		tb.Fatal(err)
	}
	set, err := RunOverrides(run)
	if err != nil {
		tb.Fatal(err)
	}
	if w, diags = LoadWith(filepath.Join(dir, "analysis.hcl"), reg, set); diags.HasErrors() {
		tb.Fatal(diags)
	}
	return w, store, took
}

func TestTheDemosStoreRecomputesToTheSameBits(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the demo workflow")
	}
	w, store, _ := runDemo(t, demoShortFit...)
	// One worker, where the run had the machine's: the fit's chains must not care.
	rep, err := Recompute(context.Background(), w, store, RecomputeOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Stored != len(w.Steps) || rep.Count(RecomputeSame) != rep.Stored || !rep.OK() {
		for _, s := range rep.Steps {
			t.Logf("%-18s %-16s %s", s.State, s.Step, s.Why)
		}
		t.Fatalf("%d of %d stored steps gave the same bits (%d steps in the workflow); problems %q",
			rep.Count(RecomputeSame), rep.Stored, len(w.Steps), rep.Problems)
	}
}

// BenchmarkRecomputeTheDemo times recomputing the demo's store, every step and a sample of
// three (iteration i samples with seed i, so -benchtime 5x averages five samples), with
// the short fit of the demo's tests and with the fit as the demo writes it (to 50
// autocorrelation times). It logs the run that filled the store and each step's time.
//
//	go test ./workflow -run '^$' -bench RecomputeTheDemo -benchtime 1x -v
func BenchmarkRecomputeTheDemo(b *testing.B) {
	for _, fit := range []struct {
		name string
		set  []Override
	}{{"short fit", demoShortFit}, {"full fit", nil}} {
		b.Run(fit.name, func(b *testing.B) {
			w, store, took := runDemo(b, fit.set...)
			b.Logf("the run that filled the store took %.2f s", took.Seconds())
			for _, c := range []struct {
				name   string
				sample int
			}{{"every step", 0}, {"a sample of three", 3}} {
				b.Run(c.name, func(b *testing.B) {
					for i := 0; i < b.N; i++ {
						rep, err := Recompute(context.Background(), w, store, RecomputeOptions{Sample: c.sample, Seed: uint64(i)})
						if err != nil || !rep.OK() {
							b.Fatalf("%v %+v", err, rep)
						}
						var names []string
						for _, s := range rep.Steps {
							names = append(names, fmt.Sprintf("%s %.2f s", s.Step, s.Seconds))
						}
						b.Logf("seed %d: %s", i, strings.Join(names, ", "))
					}
				})
			}
		})
	}
}
